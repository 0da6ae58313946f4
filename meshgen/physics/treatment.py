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


def treatment_warnings(name: str, y_plus_min: float, y_plus_max: float, target: float | None) -> list[str]:
    """Warnings for a first cell whose estimated y+ along the plate spans [min, max]."""
    t = TREATMENTS[name]
    out = []
    lo, hi = BUFFER_LAYER
    if name != "blended" and y_plus_max > lo and y_plus_min < hi:
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
