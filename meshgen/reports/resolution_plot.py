"""resolution.png: what a scale-resolving mesh achieves along the plate, against its targets.

Three panels against x / L (plate cell centres): streamwise spacing dx+, spanwise spacing
dz+ and first-cell y+ for wall-resolved LES and DNS; for wall-modelled LES, cells per
delta99 along x, z and for the first cell. Each panel shades the published (or
common-practice) range of its target, draws the target, and marks the station the grid was
sized at and the reference station where plan.json reports the achieved values.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np

from ..physics.resolution import KINDS
from ..planning.wall_units import along_plate, at_station
from .plots import BAND_COLOUR, INK, RATIO_COLOUR, SIZE_COLOUR, _figure, _save


def _panels(plan) -> list[tuple[str, np.ndarray, float | None, object]]:
    """(label, values along the plate, target, range entry) per panel."""
    s, k, a = plan.resolution, KINDS[plan.resolution.kind], along_plate(plan)
    if k.first_y_plus is None:
        ws_delta = a["delta_over_dx"] * np.diff(plan.plate_nodes())  # delta99 at the cell centres [m]
        dz = float(np.diff(plan.z).max())
        dy1 = float(plan.y[1] - plan.y[0])
        n = s.cells_per_delta
        return [("delta99 / dx", a["delta_over_dx"], n, k.cells_per_delta),
                ("delta99 / dz", ws_delta / dz, n, k.cells_per_delta),
                ("delta99 / first cell", ws_delta / dy1, n, k.cells_per_delta)]
    return [("dx+", a["dx_plus"], s.dx_plus, k.dx_plus), ("dz+", a["dz_plus"], s.dz_plus, k.dz_plus),
            ("first-cell y+", a["dy_plus_wall"], s.y_plus, None)]


def resolution_figure(plan, case_name: str):
    s, length = plan.resolution, plan.flow.length
    xs = along_plate(plan)["x"] / length
    x_ref = plan.case.wall.reference_station
    ref = at_station(plan, x_ref * length)
    fig, axes = _figure(ncols=3)
    for ax, (label, values, target, rng) in zip(axes, _panels(plan), strict=True):  # three panels
        if rng is not None:
            ax.axhspan(rng.low, rng.high, color=BAND_COLOUR, label=f"range {rng.low:g} to {rng.high:g}")
        if target is not None:
            ax.axhline(target, color="#4f8a4c", ls="--", lw=1.5, label=f"target {target:.3g}")
        ax.plot(xs, values, color=SIZE_COLOUR, lw=2.2, label=f"achieved {label}")
        ax.axvline(s.station_x / length, color=RATIO_COLOUR, ls=":", lw=1.5,
                   label=f"sized at x/L = {s.station_x / length:.3g} ({s.station})")
        i = int(np.argmin(np.abs(xs - x_ref)))
        ax.plot([xs[i]], [values[i]], "o", color=RATIO_COLOUR, ms=8, label=f"reference station x/L = {x_ref:.3g}")
        if values.min() > 0 and values.max() / values.min() > 30:
            ax.set_yscale("log")
        ax.set_xlim(0.0, 1.0)
        ax.set_xlabel("x / L", color=INK, fontsize=12)
        ax.set_ylabel(label, color=INK, fontsize=12)
        ax.grid(True, which="major", color="#e3e1db", lw=0.8)
        ax.legend(loc="best", fontsize=10, framealpha=0.95)
    fig.suptitle(f"{case_name}: {s.kind}, Re_L = {plan.flow.reynolds:.3g}; at the reference station dx+ = "
                 f"{ref['dx_plus']:.3g}, dz+ = {ref['dz_plus']:.3g}, y+ = {ref['dy_plus_wall']:.3g}",
                 color=INK, fontsize=15)
    return fig


def write_resolution_picture(plan, case_name: str, out_dir: Path) -> list[Path]:
    """resolution.png for a scale-resolving plan (nothing for RANS)."""
    if plan.resolution is None:
        return []
    return [_save(resolution_figure(plan, case_name), Path(out_dir) / "resolution.png")]
