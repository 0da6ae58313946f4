"""Judging every level of a family before anything is built: figures, floors, warnings.

Each level's figures (``level_figures``): cells, h [m], the ratio h(next) / h to the next
coarser level, the first-cell height [m], the estimated first-cell y+ at the reference
station and its range over the judged stretch of the plate (x/L >= ``JUDGED_FROM``; the
correlations are singular at the leading edge), the largest wall-normal and streamwise
growth ratios (cell to neighbour, either way) and the wall-normal cells across delta99 at
x/L = 0.1, 0.5 and 1.

Floors (``Floors``), all common practice rather than published criteria, and settable:

- at least 10 wall-normal cells across delta99 at mid-plate (a level with 4-5 cells was
  seen to diverge, or to give negative skin friction, with a real solver on this project's
  meshes at Re_L = 1e5: ../shared/design.md);
- growth ratios of at most 1.3 between neighbouring cells;
- the first-cell y+ at the reference station inside the wall treatment's band (wall-resolved:
  y+ <= 1, wall functions: 30 to 300). Each coarser level multiplies the first cell, and so
  y+, by about the ratio, so a wall-resolved finest level gives coarse levels that are not.

A level below a floor gets a warning naming the level and what to change.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import TYPE_CHECKING

import numpy as np

from ..physics.treatment import TREATMENTS

if TYPE_CHECKING:  # the command line builds its options from Floors without loading the planner
    from ..planning.plan import Plan

#: Stations x/L < this are left out of the judged y+ range (singular at the leading edge).
JUDGED_FROM = 0.1
#: The station x/L whose cells across delta99 are held to the floor.
MID_PLATE = "0.5"
#: Relative slack before a figure counts as beyond a floor (round-off of y+ = 1 targets).
SLACK = 1e-6


@dataclass(frozen=True)
class Floors:
    """The floors every level is held to (common practice; see the module docstring)."""

    min_cells_delta99: int = 10  # wall-normal cells across delta99 at x/L = 0.5
    max_growth: float = 1.3  # largest cell-to-neighbour ratio, wall-normal and streamwise
    y_plus_band: tuple[float, float] = (0.0, 1.0)  # first-cell y+ at the reference station

    def to_dict(self) -> dict:
        return {"min_cells_delta99": self.min_cells_delta99, "max_growth": self.max_growth,
                "y_plus_band": list(self.y_plus_band)}


def treatment_band(case) -> tuple[float, float]:
    """The first-cell y+ band of the case's wall treatment (meshgen.physics.treatment);
    the wall-resolved band when there is no case (it failed to load: that error comes later)."""
    if case is None:
        return Floors().y_plus_band
    return tuple(float(v) for v in TREATMENTS[case.wall.treatment].band)


def _bl_stations():
    from ..planning.plan import BL_STATIONS

    return BL_STATIONS


def max_growth(nodes: np.ndarray) -> float:
    """Largest ratio of neighbouring cells along ``nodes``, taken either way (>= 1)."""
    d = np.diff(nodes)
    if d.size < 2:
        return 1.0
    g = d[1:] / d[:-1]
    return float(max(g.max(), 1.0 / g.min()))


def level_figures(plan: Plan, h: float, ratio_to_next: float | None) -> dict:
    """The judged figures of one level (see the module docstring); plain JSON types."""
    xs, yp = plan.y_plus_along_plate()
    f = plan.flow
    x_ref = plan.case.wall.reference_station * f.length
    judged = yp[xs >= JUDGED_FROM * f.length * (1 - 1e-12)]
    return {
        "cells": plan.cell_count,
        "h": h,
        "ratio_to_next": ratio_to_next,
        "first_cell_height": plan.first_cell_height,
        "y_plus_at_reference": float(np.interp(x_ref, xs, yp)),
        "reference_station": plan.case.wall.reference_station,
        "y_plus_judged_range": [float(judged.min()), float(judged.max())],
        "max_growth_wall_normal": max_growth(plan.y),
        "max_growth_streamwise": max_growth(plan.x),
        "cells_in_delta99": plan.cells_in_delta99(_bl_stations()),
        "cells_wall_normal": int(plan.y.size - 1),
        "cells_streamwise": int(plan.x.size - 1),
    }


def _down(value: float, digits: int = 2) -> str:
    """``value`` rounded down to ``digits`` significant digits: advice that errs on the safe side."""
    scale = 10.0 ** (np.floor(np.log10(value)) - digits + 1)
    return f"{np.floor(value / scale * (1 + 1e-12)) * scale:.{digits}g}"


def _up(value: float, digits: int = 2) -> str:
    scale = 10.0 ** (np.floor(np.log10(value)) - digits + 1)
    return f"{np.ceil(value / scale * (1 - 1e-12)) * scale:.{digits}g}"


def _first_cell_hint(plan: Plan, fine: dict, scale: float) -> str:
    """The setting that makes the finest level's first cell ``scale`` times what it is now
    (what the plan has, after any rounding of the counts), rounded the safe way."""
    if plan.case.wall.first_cell_height is not None:
        key, now = "wall.first_cell_height", fine["first_cell_height"]
    else:
        key, now = "wall.y_plus", fine["y_plus_at_reference"]
    return f"{key} = {(_down if scale < 1 else _up)(now * scale)}"


def level_warnings(name: str, fig: dict, fine: dict, fine_plan: Plan, floors: Floors) -> list[str]:
    """Warnings for one level whose figures ``fig`` break a floor; ``fine``: the finest level's.

    The advice errs on the safe side: a nested level samples every R^k-th node, so a finest
    growth ratio g becomes g^(R^k) there; the power used is the larger of the count ratio and
    the one observed, and the advised values are rounded towards the floor's side.
    """
    out = []
    other = "a smaller --ratio or fewer --levels"
    n = fig["cells_in_delta99"][MID_PLATE]
    if n < floors.min_cells_delta99:
        out.append(
            f"{name}: {n} wall-normal cells across delta99 at x/L = 0.5, below {floors.min_cells_delta99} "
            f"(common practice; 4-5 cells were seen to diverge); use {other}, or a finer finest level "
            "(lower wall.growth_ratio or wall.max_spacing, or raise wall.cells)"
        )
    for key, label, setting, more in (
        ("wall_normal", "wall-normal", "wall.growth_ratio", ""),
        ("streamwise", "streamwise", "streamwise.growth_ratio",
         " (or raise streamwise.cells, streamwise.upstream_cells, streamwise.wake_cells)"),
    ):
        g, g0 = fig[f"max_growth_{key}"], fine[f"max_growth_{key}"]
        if g > floors.max_growth * (1 + SLACK):
            power = max(fine[f"cells_{key}"] / fig[f"cells_{key}"], np.log(g) / np.log(g0) if g0 > 1 + 1e-9 else 1.0)
            hint = f"lower {setting} to about {_down(floors.max_growth ** (1 / power), 3)} on the finest level{more}"
            out.append(f"{name}: largest {label} growth ratio {g:.3g}, above {floors.max_growth:g} "
                       f"(common practice); use {other}, or {hint}")
    lo, hi = floors.y_plus_band
    y = fig["y_plus_at_reference"]
    at = f"x/L = {fig['reference_station']:g}"
    if y > hi * (1 + SLACK):
        out.append(
            f"{name}: first-cell y+ {y:.3g} at {at} is above the band {lo:g} to {hi:g} of the wall "
            f"treatment (common practice); use {other}, or a smaller first cell on the finest level "
            f"({_first_cell_hint(fine_plan, fine, hi / y)} or less)"
        )
    elif y < lo * (1 - SLACK):
        out.append(
            f"{name}: first-cell y+ {y:.3g} at {at} is below the band {lo:g} to {hi:g} of the wall "
            f"treatment (common practice); raise the first cell "
            f"({_first_cell_hint(fine_plan, fine, lo / y)} or more), or use fewer --levels"
        )
    return out


def _cell(fig: dict) -> list[str]:
    lo, hi = fig["y_plus_judged_range"]
    d = fig["cells_in_delta99"]
    ratio = "-" if fig["ratio_to_next"] is None else f"{fig['ratio_to_next']:.3f}"
    return [f"{fig['cells']:,}", f"{fig['h']:.4g}", ratio, f"{fig['first_cell_height']:.4g}",
            f"{fig['y_plus_at_reference']:.3g}", f"{lo:.3g}-{hi:.3g}", f"{fig['max_growth_wall_normal']:.3g}",
            f"{fig['max_growth_streamwise']:.3g}", "/".join(str(d[k]) for k in d)]


def judgement_table(names: list[str], figures: list[dict], floors: Floors) -> str:
    """The figures of every level as one aligned table, with the floors stated below it."""
    ref = figures[0]["reference_station"]
    head = ["level", "cells", "h [m]", "ratio", "first cell [m]", f"y+ x/L={ref:g}",
            f"y+ x/L>={JUDGED_FROM:g}", "growth y", "growth x",
            "cells in delta99 x/L=" + "/".join(figures[0]["cells_in_delta99"])]
    rows = [head] + [[n, *_cell(f)] for n, f in zip(names, figures)]
    widths = [max(len(r[j]) for r in rows) for j in range(len(head))]
    lines = ["  ".join(c.ljust(w) if j == 0 else c.rjust(w) for j, (c, w) in enumerate(zip(r, widths)))
             for r in rows]
    lo, hi = floors.y_plus_band
    lines.append(
        f"floors (common practice): >= {floors.min_cells_delta99} cells across delta99 at x/L = 0.5, "
        f"growth ratios <= {floors.max_growth:g}, first-cell y+ at x/L = {ref:g} within {lo:g} to {hi:g}"
    )
    return "\n".join(lines)
