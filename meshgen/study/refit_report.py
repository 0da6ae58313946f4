"""Reporting a re-fit: the lines printed and the picture of estimated against reported y+.

Both take what ``meshgen.study.refit.refit`` returns.
"""

from __future__ import annotations

from collections.abc import Mapping
from pathlib import Path

import numpy as np

from ..io.atomic import atomic_file

# Colours of our own choosing: solver y+ in ink blue, the a-priori estimate in dusty
# orange, the prediction with the new height in moss green, the target in dark red.
SOLVER, ESTIMATE, PREDICTED, TARGET, BAND = "#1f3a5f", "#d08c4a", "#5b7f3a", "#8e1b1b", "#e7efd9"

WHERE_TEXT = {"reference": "at the reference station x/L = {ref:g}", "max": "largest over x/L = {lo:g} to {hi:g}",
              "mean": "mean over x/L = {lo:g} to {hi:g}"}


def refit_lines(res: Mapping) -> list[str]:
    where = WHERE_TEXT[res["where"]].format(ref=res["reference_station"], lo=res["over"][0], hi=res["over"][1])
    at = "first cell centre (half the height)" if res["y_plus_at"] == "centre" else "first node (the height)"
    lo, hi = res["solver_over_estimate"]
    plo, phi = res["predicted_range"]
    return [
        f"solver y+ from {res['field']}, measured at the {at} (wall.y_plus_at = \"{res['y_plus_at']}\")",
        (f"solver y+ against the a-priori estimate over x/L = {res['over'][0]:g} to {res['over'][1]:g}: "
        f"{lo:.3g} to {hi:.3g} times"),
        f"solver y+ {where}: {res['y_plus_used']:.4g} on the solved first cell of {res['solved_first_cell_height']:.6g} m",
        (f"first-cell height: old {res['solved_first_cell_height']:.6g} m -> new {res['first_cell_height']:.6g} m "
        f"(target y+ {res['target']:g} {where})"),
        (f"predicted y+ with the new height over x/L = {res['over'][0]:g} to {res['over'][1]:g}: {plo:.3g} to {phi:.3g} "
        f"({res['treatment']} band {res['band'][0]:g} to {res['band'][1]:g})"),
    ] + [f"warning: {w}" for w in res["warnings"]]


def plot_refit(res: Mapping, length: float, path: str | Path) -> Path:
    """PNG of y+ along the plate: the solver's, the a-priori estimate on the same mesh, the
    prediction with the new height, the target and the treatment's band. Written atomically."""
    from matplotlib.backends.backend_agg import FigureCanvasAgg
    from matplotlib.figure import Figure

    s = np.asarray(res["x"]) / length
    fig = Figure(figsize=(8.0, 4.5), layout="constrained")
    FigureCanvasAgg(fig)  # Agg canvas on this figure only: no pyplot state, no display
    ax = fig.subplots()
    lo, hi = res["band"]
    ax.axhspan(lo, hi, color=BAND, lw=0, label=f"{res['treatment']} band {lo:g} to {hi:g}")
    ax.plot(s, res["y_plus_solver"], "-", color=SOLVER, lw=1.5,
            label=f"solver (first cell {res['solved_first_cell_height']:.3g} m)")
    ax.plot(s, res["y_plus_estimate"], "--", color=ESTIMATE, lw=1.3, label="a-priori estimate, same mesh")
    ax.plot(s, res["y_plus_predicted"], "-", color=PREDICTED, lw=1.3,
            label=f"predicted with the new first cell {res['first_cell_height']:.3g} m")
    ax.axhline(res["target"], color=TARGET, lw=1.0, ls=":", label=f"target y+ = {res['target']:g}")
    if res["where"] == "reference":
        ax.axvline(res["reference_station"], color=TARGET, lw=0.8, ls="-.", label="reference station")
    top = max(max(res["y_plus_solver"][len(s) // 10:] or res["y_plus_solver"]), res["target"]) * 1.6
    ax.set_ylim(0.0, top)
    ax.set_xlim(0.0, 1.0)
    ax.set_xlabel("x / L along the plate")
    ax.set_ylabel(f"first-cell y+ (at the {'cell centre' if res['y_plus_at'] == 'centre' else 'first node'})")
    ax.set_title("y+ reported by the solver against the estimate, and the re-fitted first cell")
    ax.grid(alpha=0.3)
    ax.legend(fontsize="small", loc="best", framealpha=0.9)
    path = Path(path)
    with atomic_file(path) as tmp:
        fig.savefig(tmp, format="png", dpi=110)
    return path
