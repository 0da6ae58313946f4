"""Domain sweeps: the same case with the outer boundaries moved, one mesh per combination.

``--vary KEY=V1,V2,...`` (repeatable) takes keys from ``SWEEP_KEYS``; the variants are the
cartesian product of the values, in the order given. Each variant is the case with
``--set KEY=value`` overrides, built into ``DIR/<key>=<value>_<key>=<value>...`` (keys
without their ``domain.`` prefix, values with up to 12 significant digits, any other
character replaced by ``-``), with ``DIR/sweep.json`` listing every variant (manifest.py):
its ``values`` ({key: value}), files and SHA-256, cells, ``extent`` (x, y, z ranges [m]),
``domain_height`` [m] and first-cell height [m]; the header adds ``vary`` (the values of
each key) and ``near_wall_nodes`` (how many wall-normal nodes are checked to be shared).

Only the domain may change. With the default wall-normal distribution (geometric growth
from the first cell up to the cap ``wall.max_spacing``, then uniform) the cells near the
wall do not depend on the domain height, and the streamwise plate nodes do not depend on
the upstream and wake lengths. The sweep checks this before building: the wall-normal
nodes inside delta99 at the plate end and the plate's streamwise nodes must be the same
in every variant. A case with ``wall.cells`` solves its growth ratio (or first cell) from
the domain height, so varying ``domain.height_factor`` with it is refused.
"""

from __future__ import annotations

import difflib
import itertools
import math
import re
from pathlib import Path

import numpy as np

from .. import __version__
from ..case import case_to_toml
from ..core.errors import InputError
from ..pipeline.build import planned_outputs
from ..planning.plan import Plan
from .members import Member, Study, load_checked, member_spec, plan_from_spec

SWEEP_KEYS = ("domain.height_factor", "domain.upstream", "domain.downstream", "domain.span")
#: Relative tolerance on the near-wall and plate nodes shared by all variants.
SAME_NODES_RTOL = 1e-12


def _format(value: float) -> str:
    return f"{value:.12g}"


def parse_vary(items: list[str]) -> list[tuple[str, list[float]]]:
    """[(key, values)] from ``--vary KEY=V1,V2,...`` strings; InputError names every problem."""
    problems, out, seen = [], [], set()
    valid = ", ".join(SWEEP_KEYS)
    if not items:
        problems.append(f"--vary: give at least one KEY=V1,V2,... (keys: {valid})")
    for item in items:
        key, sep, raw = item.partition("=")
        key = key.strip()
        if not sep or not raw.strip():
            problems.append(f"--vary {item!r}: expected KEY=V1,V2,... with KEY one of {valid}")
            continue
        if key not in SWEEP_KEYS:
            close = difflib.get_close_matches(key, list(SWEEP_KEYS), n=1)
            hint = f"did you mean {close[0]!r}? " if close else ""
            problems.append(f"--vary {key}: not a domain key a sweep can vary; {hint}valid keys: {valid}")
            continue
        if key in seen:
            problems.append(f"--vary {key}: given twice; list all its values in one --vary")
            continue
        seen.add(key)
        values = []
        for text in raw.split(","):
            try:
                v = float(text)
            except ValueError:
                v = math.nan
            if not math.isfinite(v):
                problems.append(f"--vary {key}: {text.strip()!r} is not a finite number")
            elif _format(v) in {_format(u) for u in values}:
                problems.append(f"--vary {key}: value {text.strip()} given twice")
            else:
                values.append(v)
        out.append((key, values))
    if problems:
        raise InputError(problems)
    return out


def variant_name(assignment: list[tuple[str, float]]) -> str:
    """Folder name of a variant, e.g. ``height_factor=15_upstream=1``."""
    name = "_".join(f"{key.split('.', 1)[1]}={_format(v)}" for key, v in assignment)
    return re.sub(r"[^A-Za-z0-9._=+-]", "-", name)


def near_wall_nodes(plan: Plan) -> int:
    """How many wall-normal nodes lie inside delta99 at the plate end (the wall, included)."""
    return int(np.searchsorted(plan.y, plan.delta99_end, side="right"))


def _same_nodes(a: np.ndarray, b: np.ndarray) -> bool:
    return a.shape == b.shape and bool(np.allclose(a, b, rtol=SAME_NODES_RTOL, atol=0.0))


def domain_only_problems(names: list[str], plans: list[Plan]) -> list[str]:
    """Variants whose near-wall or plate nodes differ from those of the tallest domain."""
    k = int(np.argmax([p.domain_height for p in plans]))
    ref, n = plans[k], near_wall_nodes(plans[k])
    out = []
    for name, p in zip(names, plans):
        if p.y.size <= n or not _same_nodes(p.y[:n], ref.y[:n]):
            out.append(
                f"--vary: variant {name} changes the {n} wall-normal nodes inside delta99 at the plate "
                f"end (compared with variant {names[k]}): the growth from the wall does not fit below "
                "its top; raise domain.height_factor or lower wall.max_spacing"
            )
        if not _same_nodes(p.plate_nodes(), ref.plate_nodes()):
            out.append(f"--vary: variant {name} changes the streamwise nodes on the plate "
                       f"(compared with variant {names[k]})")
    return out


def _variant_record(values: dict[str, float], p: Plan) -> dict:
    d = p.to_dict()
    return {
        "values": values,
        "cells": p.cell_count,
        "nodes": d["nodes"],
        "extent": d["extent"],
        "domain_height": p.domain_height,
        "first_cell_height": p.first_cell_height,
        "growth_ratio": p.growth_ratio,
        "cells_in_delta99": d["cells_in_delta99"],
        "y_plus_range": d["y_plus_range"],
    }


def sweep_study(case_path, overrides: list[str], vary: list[str], formats: list[str] | None,
                arguments: list[str]) -> tuple[Study, list[str]]:
    """The sweep to build, checked (InputError lists every problem), and its warnings."""
    problems: list[str] = []
    try:
        varies = parse_vary(vary)
    except InputError as exc:
        problems, varies = exc.problems, []
    case, fmts = load_checked(case_path, overrides, formats, problems)
    keys = [k for k, _ in varies]
    if case.wall.cells is not None and "domain.height_factor" in keys:
        raise InputError(
            f"--vary domain.height_factor: the case sets wall.cells = {case.wall.cells}, so the "
            "wall-normal growth is solved from the domain height and the cells near the wall would "
            "differ between variants; unset it (--set wall.cells=) to grow the cells from the "
            "first-cell height up to wall.max_spacing"
        )
    base = case.model_dump(mode="json", exclude_unset=True)
    names_fmt = [f.name for f in fmts]
    combos = [list(zip(keys, vs)) for vs in itertools.product(*(v for _, v in varies))]
    names, specs, plans = [], [], []
    for combo in combos:  # a handful of variants
        name = variant_name(combo)
        spec = member_spec(base, [f"{k}={v!r}" for k, v in combo], 1.0, 0, names_fmt)
        try:
            plans.append(plan_from_spec(spec))
        except InputError as exc:
            problems += [f"variant {name}: {line}" for line in exc.problems]
            continue
        names.append(name)
        specs.append(spec)
    if problems:
        raise InputError(problems)
    problems = domain_only_problems(names, plans)
    if problems:
        raise InputError(problems)
    outputs = tuple(str(p) for p in planned_outputs(Path(), case.name, fmts))
    members = tuple(
        Member(name, spec, p, _variant_record(dict(combo), p), outputs)
        for name, spec, p, combo in zip(names, specs, plans, combos)
    )
    header = {
        "vary": {k: v for k, v in varies},
        "near_wall_nodes": near_wall_nodes(plans[0]),
        "case_toml": case_to_toml(case),
        "case_input": base,
        "arguments": arguments,
        "meshgen_version": __version__,
    }
    warnings = sorted({w for p in plans for w in p.warnings})
    return Study("sweep", "variants", header, members), warnings
