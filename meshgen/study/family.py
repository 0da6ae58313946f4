"""Refinement families: the case as given and systematically coarsened copies of it.

Level 0 is the case's own plan; level k is ``meshgen.plan.coarsen(plan, R**k, level=k)``:
every block's cell count divided by R**k, the same index-to-position mappings resampled,
so the levels are geometrically similar. With an integer R that divides the counts the
coarse nodes are exactly every R**k-th fine node; a geometric wall-normal growth g then
becomes g**(R**k) and the first-cell height the sum of the first R**k fine cells. With a
non-integer R (e.g. sqrt(2)) the counts are rounded, so the manifest reports the effective
ratio of each pair from the representative sizes.

Representative size (Celik et al. 2008, "Procedure for Estimation and Reporting of
Uncertainty Due to Discretization in CFD Applications", J. Fluids Eng. 130(7) 078001,
eq. 1): h = (area / N)^(1/2) in 2-D and (volume / N)^(1/3) in 3-D, with the area
(x extent times the domain height) and volume (area times span) of the domain [m]. A
one-layer extrusion (``domain.span_cells = 1``) stays one layer on every level and is a
2-D grid in 3-D cells, so its h is the 2-D one of one layer (``h_dimension`` = 2).

Output: ``DIR/level-0``, ``DIR/level-1``, ... and ``DIR/family.json`` (manifest.py), with
per level: files and SHA-256, cells, h, ratio to the next coarser level, first-cell
height, growth ratio at the wall, the estimated y+ range along the plate and the
wall-normal cells inside delta99.
"""

from __future__ import annotations

import math
from pathlib import Path

from .. import __version__
from ..case import case_to_toml
from ..core.errors import InputError
from ..pipeline.build import planned_outputs
from ..planning.plan import Plan
from .members import Member, Study, load_checked, member_spec, plan_from_spec

#: Ratios at or below this are refused: the levels would differ too little to tell apart.
MIN_RATIO = 1.1
#: Celik et al. (2008): the refinement factor should be greater than 1.3 (a warning below).
CELIK_RATIO = 1.3
#: Fewest cells a level may leave in any streamwise block.
MIN_BLOCK_CELLS = 2
#: Fewest wall-normal cells a level may have.
MIN_WALL_NORMAL_CELLS = 4
#: Fewest spanwise cells of a level in a real 3-D family (span_cells > 1 on level 0).
MIN_SPAN_CELLS = 2
#: Most levels a family may have (level 11 at R = 2 is 2048 times coarser per direction).
MAX_LEVELS = 12


def level_name(level: int) -> str:
    return f"level-{level}"


def representative_size(plan: Plan) -> tuple[float, int]:
    """h [m] of the plan and the dimension it is taken in (2 or 3), Celik et al. (2008) eq. 1."""
    x, y = plan.x, plan.y
    area = float((x[-1] - x[0]) * (y[-1] - y[0]))
    layer_cells = (x.size - 1) * (y.size - 1)
    if plan.z is None or plan.z.size == 2:
        return math.sqrt(area / layer_cells), 2
    return (area * float(plan.z[-1] - plan.z[0]) / plan.cell_count) ** (1.0 / 3.0), 3


def _argument_problems(levels: int, ratio: float) -> tuple[list[str], list[str]]:
    problems, warnings = [], []
    if not 2 <= levels <= MAX_LEVELS:
        problems.append(f"--levels {levels}: must be from 2 to {MAX_LEVELS}")
    if not math.isfinite(ratio) or ratio <= MIN_RATIO:
        problems.append(f"--ratio {ratio}: must be a number above {MIN_RATIO} (e.g. 2, or 1.414 for sqrt(2))")
    elif ratio < CELIK_RATIO:
        warnings.append(
            f"--ratio {ratio:g} is below {CELIK_RATIO}: Celik et al. (2008) recommend r > {CELIK_RATIO} "
            "so that the levels differ by more than the round-off and iteration error"
        )
    return problems, warnings


def _coarse_problems(plan: Plan, fine: Plan) -> list[str]:
    """What makes a coarsened level unusable: blocks or directions with too few cells."""
    k, out = plan.level, []
    hint = "use fewer --levels, a smaller --ratio or a finer case"
    for b in plan.blocks:
        if b.i1 - b.i0 < MIN_BLOCK_CELLS:
            out.append(f"--levels: level {k} would leave the {b.name} block with {b.i1 - b.i0} streamwise "
                       f"cell(s) (at least {MIN_BLOCK_CELLS}); {hint}")
    ny = plan.y.size - 1
    if ny < MIN_WALL_NORMAL_CELLS:
        out.append(f"--levels: level {k} would have {ny} wall-normal cells (at least {MIN_WALL_NORMAL_CELLS}); {hint}")
    if fine.z is not None and fine.z.size > 2 and plan.z.size - 1 < MIN_SPAN_CELLS:
        out.append(f"--levels: level {k} would have {plan.z.size - 1} spanwise cell(s) "
                   f"(at least {MIN_SPAN_CELLS}); {hint}")
    return out


def level_records(plans: list[Plan], factors: list[float]) -> list[dict]:
    """Manifest figures of every level; ``ratio_to_next`` = h(k+1) / h(k), None on the last."""
    hs = [representative_size(p)[0] for p in plans]
    records = []
    for k, (p, factor, h) in enumerate(zip(plans, factors, hs)):
        d = p.to_dict()
        records.append({
            "level": k,
            "factor": factor,
            "cells": p.cell_count,
            "nodes": d["nodes"],
            "cells_per_block": d["cells_per_block"],
            "h": h,
            "ratio_to_next": hs[k + 1] / h if k + 1 < len(hs) else None,
            "first_cell_height": p.first_cell_height,
            "growth_ratio": p.growth_ratio,
            "streamwise_first_spacing": d["streamwise_first_spacing"],
            "y_plus_range": d["y_plus_range"],
            "cells_in_delta99": d["cells_in_delta99"],
        })
    return records


def nesting_warnings(fine, ratio: float, levels: int) -> list[str]:
    """With an integer ratio the levels nest only if every count divides by ratio^(levels-1)."""
    if abs(ratio - round(ratio)) > 1e-12:
        return []
    step = round(ratio) ** (levels - 1)
    counts = {f"{b.name} block": b.i1 - b.i0 for b in fine.blocks}
    counts["wall-normal"] = fine.y.size - 1
    if fine.z is not None:
        counts["spanwise"] = fine.z.size - 1
    odd = [f"{k} {n}" for k, n in counts.items() if n % step]
    if not odd:
        return []
    message = (
        f"the coarse levels will not be exact subsets of the fine one: {', '.join(odd)} cells "
        f"do not divide by {step} (ratio {ratio:g} over {levels} levels); set wall.cells, "
        "streamwise.cells or span_cells to multiples of it for a nested family"
    )
    return [message]


def family_study(case_path, overrides: list[str], levels: int, ratio: float,
                 formats: list[str] | None, arguments: list[str]) -> tuple[Study, list[str]]:
    """The family to build, checked (InputError lists every problem), and its warnings."""
    problems, warnings = _argument_problems(levels, ratio)
    case, fmts = load_checked(case_path, overrides, formats, problems)
    base = case.model_dump(mode="json", exclude_unset=True)
    names = [f.name for f in fmts]
    factors = [ratio**k for k in range(levels)]
    specs = [member_spec(base, [], factors[k], k, names) for k in range(levels)]
    plans = [plan_from_spec(s) for s in specs]
    for p in plans[1:]:  # the first level that is too coarse; the coarser ones are too
        problems = _coarse_problems(p, plans[0])
        if problems:
            fit = f"--levels {levels}: at most {p.level} levels fit this case at --ratio {ratio:g}"
            raise InputError([*problems, fit])
    warnings += nesting_warnings(plans[0], ratio, levels)
    outputs = tuple(str(p) for p in planned_outputs(Path(), case.name, fmts))
    members = tuple(
        Member(level_name(k), spec, p, rec, outputs)
        for k, (spec, rec, p) in enumerate(zip(specs, level_records(plans, factors), plans))
    )
    header = {
        "ratio": ratio,
        "h_dimension": representative_size(plans[0])[1],
        "case_toml": case_to_toml(case),
        "case_input": base,
        "arguments": arguments,
        "meshgen_version": __version__,
    }
    return Study("family", "levels", header, members), list(plans[0].warnings) + warnings
