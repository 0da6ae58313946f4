"""Refinement families: the case as given and systematically coarsened copies of it.

Level k is the case's plan resampled with level k's cell counts (``meshgen.planning.refine``):
every block's count divided by R^k on the same index-to-position mappings, so the levels
are geometrically similar. By default the counts are arranged so that the levels nest
(nesting.py): with an integer R the finest level's counts are rounded up to multiples of
R^(levels-1) and every coarse node is a fine node; a geometric wall-normal growth g then
becomes g^(R^k) and the first-cell height the sum of the first R^k fine cells. With
R = sqrt(2) every second level nests. ``keep_counts`` keeps the case's counts exactly (the
levels then nest only where the counts divide). The manifest reports the effective ratio
of each pair from the representative sizes.

Representative size (Celik et al. 2008, "Procedure for Estimation and Reporting of
Uncertainty Due to Discretization in CFD Applications", J. Fluids Eng. 130(7) 078001,
eq. 1): h = (area / N)^(1/2) in 2-D and (volume / N)^(1/3) in 3-D, with the area
(x extent times the domain height) and volume (area times span) of the domain [m]. A
one-layer extrusion (``domain.span_cells = 1``) stays one layer on every level and is a
2-D grid in 3-D cells, so its h is the 2-D one of one layer (``h_dimension`` = 2).

Every level is judged before anything is built (judge.py): the figures and the warnings
of each level go into its record (``judgement``), and the floors and what the nesting
changed into the header (``floors``, ``nesting``).

Output: ``DIR/level-0``, ``DIR/level-1``, ... and ``DIR/family.json`` (manifest.py), with
per level: files and SHA-256, cells, h, ratio to the next coarser level, first-cell
height, growth ratio at the wall, the estimated y+ range along the plate, the
wall-normal cells inside delta99 and the judgement; the header adds ``plate_length`` [m].
"""

from __future__ import annotations

import math
from pathlib import Path

from .. import __version__
from ..case import case_to_toml
from ..core.errors import InputError
from ..pipeline.build import planned_outputs
from ..planning.plan import Plan, make_plan
from ..planning.refine import block_counts, resample_plan
from .judge import Floors, level_figures, level_warnings, treatment_band
from .members import Member, Study, load_checked, member_spec
from .nesting import family_counts, nesting_note

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


def level_records(plans: list[Plan], factors: list[float], floors: Floors | None = None) -> list[dict]:
    """Manifest figures of every level; ``ratio_to_next`` = h(k+1) / h(k), None on the last;
    ``judgement``: the judged figures (judge.py) with the level's ``warnings``."""
    floors = floors or Floors()
    hs = [representative_size(p)[0] for p in plans]
    records = []
    for k, (p, factor, h) in enumerate(zip(plans, factors, hs)):
        d = p.to_dict()
        ratio = hs[k + 1] / h if k + 1 < len(hs) else None
        records.append({
            "level": k,
            "factor": factor,
            "cells": p.cell_count,
            "nodes": d["nodes"],
            "cells_per_block": d["cells_per_block"],
            "h": h,
            "ratio_to_next": ratio,
            "first_cell_height": p.first_cell_height,
            "growth_ratio": p.growth_ratio,
            "streamwise_first_spacing": d["streamwise_first_spacing"],
            "y_plus_range": d["y_plus_range"],
            "cells_in_delta99": d["cells_in_delta99"],
            "judgement": level_figures(p, h, ratio),
        })
    fine = records[0]["judgement"]
    for k, rec in enumerate(records):
        rec["judgement"]["warnings"] = level_warnings(level_name(k), rec["judgement"], fine, plans[0], floors)
    return records


def family_study(case_path, overrides: list[str], levels: int, ratio: float,
                 formats: list[str] | None, arguments: list[str], *, keep_counts: bool = False,
                 floors: Floors | None = None) -> tuple[Study, list[str]]:
    """The family to build, checked (InputError lists every problem), and its warnings.

    The header's ``nesting`` says what was rounded ({count name: [case, finest level]}) and
    which levels nest; every level's record holds its ``judgement``.
    """
    problems, warnings = _argument_problems(levels, ratio)
    case, fmts = load_checked(case_path, overrides, formats, problems)
    floors = floors or Floors(y_plus_band=treatment_band(case))
    base = case.model_dump(mode="json", exclude_unset=True)
    names = [f.name for f in fmts]
    factors = [ratio**k for k in range(levels)]
    case_plan = make_plan(case)
    fine_counts = block_counts(case_plan)
    counts, changed = family_counts(fine_counts, ratio, levels, keep_counts)
    specs = [member_spec(base, [], factors[k], k, names, counts[k]) for k in range(levels)]
    plans = [resample_plan(case_plan, counts[k], level=k) for k in range(levels)]
    for p in plans[1:]:  # the first level that is too coarse; the coarser ones are too
        problems = _coarse_problems(p, plans[0])
        if problems:
            fit = f"--levels {levels}: at most {p.level} levels fit this case at --ratio {ratio:g}"
            raise InputError([*problems, fit])
    notes, nest_warnings = nesting_note(ratio, levels, keep_counts, fine_counts)
    records = level_records(plans, factors, floors)
    outputs = tuple(str(p) for p in planned_outputs(Path(), case.name, fmts))
    members = tuple(
        Member(level_name(k), spec, p, rec, outputs)
        for k, (spec, rec, p) in enumerate(zip(specs, records, plans))
    )
    header = {
        "ratio": ratio,
        "h_dimension": representative_size(plans[0])[1],
        "plate_length": case_plan.flow.length,
        "nesting": {"keep_counts": keep_counts, "rounded": {k: list(v) for k, v in changed.items()},
                    "notes": notes},
        "floors": floors.to_dict(),
        "case_toml": case_to_toml(case),
        "case_input": base,
        "arguments": arguments,
        "meshgen_version": __version__,
    }
    level_warnings_ = [w for rec in records for w in rec["judgement"]["warnings"]]
    return (Study("family", "levels", header, members),
            list(plans[0].warnings) + warnings + nest_warnings + level_warnings_)
