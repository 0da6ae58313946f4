"""Wall treatments: the default first-cell y+ target and the band it should stay in.

Common practice, no single source: a wall-resolved (low-Reynolds) treatment wants the first
cell at y+ of about 1 or below (the NASA Turbulence Modeling Resource states this
"conventional wisdom" for RANS); wall functions want the first cell in the log layer,
about 30 < y+ < 300; blended (any-y+) treatments switch between the two and accept
either, though they are most accurate at the ends of that range. The buffer layer,
about 5 < y+ < 30, is where neither the viscous sublayer nor the log law holds.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

#: The buffer layer between the viscous sublayer and the log layer (common practice).
BUFFER_LAYER = (5.0, 30.0)


@dataclass(frozen=True)
class WallTreatment:
    name: str
    default_y_plus: float
    band: tuple[float, float]  # y+ range the first cell should stay in
    description: str


TREATMENTS: dict[str, WallTreatment] = {
    t.name: t
    for t in (
        WallTreatment("resolved", 1.0, (0.0, 1.0),
                      "wall-resolved (low-Re) treatment: first cell at y+ <= 1 (common practice; NASA TMR)"),
        WallTreatment("wall-functions", 50.0, (30.0, 300.0),
                      "wall functions: first cell in the log layer, 30 < y+ < 300 (common practice)"),
        WallTreatment("blended", 1.0, (0.0, 300.0),
                      "blended (any-y+) treatment: any y+, best below 1 or in 30-300 (common practice)"),
    )
}


def treatment_warnings(name: str, y_plus_min: float, y_plus_max: float, target: float | None,
                       laminar: bool = False) -> list[str]:
    """Warnings for a first cell whose estimated y+ along the plate spans [min, max]
    (``laminar``: a laminar layer has no buffer layer to fall in)."""
    t = TREATMENTS[name]
    out = []
    lo, hi = BUFFER_LAYER
    if name != "blended" and not laminar and y_plus_max > lo and y_plus_min < hi:
        out.append(
            f"part of the plate's first cell lies in the buffer layer ({lo:g} < y+ < {hi:g}; estimated y+ "
            f"{y_plus_min:.3g} to {y_plus_max:.3g}), where the {name} treatment is least accurate "
            "(common practice)"
        )
    if name == "resolved" and target is not None and target > 1.0:
        out.append(f"wall.y_plus = {target:g} is above about 1, the usual limit of a wall-resolved treatment "
                   "(common practice; NASA TMR); set wall.treatment or lower wall.y_plus")
    if name == "wall-functions" and y_plus_min < t.band[0]:
        out.append(f"estimated y+ falls to {y_plus_min:.3g}, below the wall-function range {t.band[0]:g} to "
                   f"{t.band[1]:g} (common practice)")
    return out


def plate_band_warnings(name: str, x, y_plus, target: float | None, reference_station: float) -> list[str]:
    """A wall-resolved first cell whose length-weighted mean y+ along a turbulent plate is
    above the band (NASA TMR's "conventional wisdom" for wall-resolved RANS: an average
    minimum y+ below 1).

    The target holds at the reference station only; the wall shear, and so y+, grows
    towards the leading edge. ``x`` [m] and ``y_plus`` are the estimate along the plate;
    each node interval counts with its mean y+. The warning says what would clear it.
    """
    hi = TREATMENTS[name].band[1]
    x, y_plus = np.asarray(x, dtype=float), np.asarray(y_plus, dtype=float)
    if name != "resolved" or target is None or x.size < 2:
        return []
    seg = np.diff(x)
    mid = 0.5 * (y_plus[1:] + y_plus[:-1])
    mean = float((seg * mid).sum() / seg.sum())
    if mean <= hi * (1 + 1e-9):
        return []
    share = float(seg[mid > hi * (1 + 1e-9)].sum() / seg.sum())
    peak = float(y_plus.max())
    return [(f"the first cell's estimated y+ averages {mean:.3g} along the plate (above {hi:g} over "
             f"{100 * share:.3g} % of it, up to {peak:.3g} towards the leading edge): wall.y_plus = {target:g} "
             f"holds at the reference station (x/L = {reference_station:g}) only; for an average below {hi:g} "
             f"lower wall.y_plus to about {target * hi / mean:.2g} (or to {target * hi / peak:.2g} for y+ <= {hi:g} "
             "everywhere) or move wall.reference_station towards the leading edge (NASA TMR: an average y+ "
             "below 1 for wall-resolved RANS)")]
