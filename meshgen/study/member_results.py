"""Results in the member folders of a family or a sweep: ``results.json`` per member.

The results-folder convention: a solver pipeline writes, into each member's folder
(``DIR/level-0``, ``DIR/height_factor=15``, ...),

- ``results.json``: one JSON object of named numbers, e.g. ``{"cd": 0.00331, "cf_mid": 0.00298}``
  (scalars; any names; finite numbers only);
- optionally wall distributions: a CSV whose first column is ``x`` [m] along the wall and
  whose other columns are named quantities (``cf``, ``tau_w``, ``y_plus``, ...), read by
  wall_data.py.

``family_rows`` turns a family folder into the rows ``meshgen.study.results.study_rows``
takes (name, cells and h from ``family.json``, the quantities from each level's
results.json); ``sweep_rows`` does the same for a sweep (the variant names and values from
``sweep.json``). Members without results are left out with a warning while at least two
remain; a quantity that some member lacks is left out with a warning.
"""

from __future__ import annotations

import json
import math
from pathlib import Path

from ..core.errors import InputError

RESULTS_NAME = "results.json"
FAMILY_MANIFEST = "family.json"
SWEEP_MANIFEST = "sweep.json"


def read_member_results(path: str | Path) -> dict[str, float]:
    """The named numbers of one ``results.json``; InputError names the file and every problem."""
    path = Path(path)
    try:
        data = json.loads(path.read_text(encoding="utf-8"))
    except FileNotFoundError:
        raise InputError(f"{path}: no such file") from None
    except (OSError, UnicodeDecodeError, json.JSONDecodeError) as exc:
        raise InputError(f"{path}: not readable JSON ({exc})") from None
    if not isinstance(data, dict) or not data:
        raise InputError(f"{path}: expected a JSON object of named numbers, e.g. {{\"cd\": 0.00331}}")
    bad = [f"{path}: {k!r} = {v!r} is not a finite number" for k, v in data.items()
           if isinstance(v, bool) or not isinstance(v, (int, float)) or not math.isfinite(v)]
    if bad:
        raise InputError(bad)
    return {str(k): float(v) for k, v in data.items()}


def _collect(root: Path, names: list[str], what: str) -> tuple[dict[str, dict[str, float]], list[str], list[str]]:
    """({member: results}, common quantities, warnings) of the members that have results."""
    found = {n: root / n / RESULTS_NAME for n in names}
    have = {n: read_member_results(p) for n, p in found.items() if p.is_file()}
    missing = [n for n in names if n not in have]
    if len(have) < 2:
        raise InputError(
            f"{root}: {len(have)} of {len(names)} {what} have a {RESULTS_NAME} (missing: "
            f"{', '.join(missing) or 'none'}); a study needs at least 2. Write each member's "
            f"results as DIR/<member>/{RESULTS_NAME}, an object of named numbers"
        )
    warnings = [f"{root}: no {RESULTS_NAME} in {', '.join(missing)}; left out"] if missing else []
    keys = [set(r) for r in have.values()]
    common = [q for q in next(iter(have.values())) if all(q in k for k in keys)]
    partial = sorted(set().union(*keys) - set(common))
    if partial:
        warnings.append(f"{root}: {', '.join(partial)} missing from some {what}; left out")
    if not common:
        raise InputError(f"{root}: no quantity is in every {what}'s {RESULTS_NAME}")
    return have, common, warnings


def family_rows(family_dir: str | Path) -> tuple[list[dict], list[str]]:
    """Rows (mesh, cells, h and the quantities) of a family folder, fine to coarse, and warnings."""
    from .results import read_family_levels

    root = Path(family_dir)
    manifest = root / FAMILY_MANIFEST
    if not manifest.is_file():
        raise InputError(f"{root}: no {FAMILY_MANIFEST}; give the folder meshgen family wrote")
    levels = read_family_levels(manifest)
    names = [str(lv.get("name")) for lv in levels]
    have, common, warnings = _collect(root, names, "levels")
    rows = [{"mesh": str(lv["name"]), "cells": lv.get("cells"), "h": float(lv["h"]),
             **{q: have[str(lv["name"])][q] for q in common}}
            for lv in levels if str(lv.get("name")) in have]
    rows.sort(key=lambda r: r["h"])
    if any(r["cells"] is None for r in rows):
        for r in rows:
            r.pop("cells")
    return rows, warnings


def sweep_rows(sweep_dir: str | Path) -> tuple[list[dict], dict[str, list[float]], Path, list[str]]:
    """Rows (variant and the quantities) of a sweep folder, the sweep keys' values per row,
    the manifest's path and warnings."""
    from .domain import read_sweep_variants

    root = Path(sweep_dir)
    manifest = root / SWEEP_MANIFEST
    if not manifest.is_file():
        raise InputError(f"{root}: no {SWEEP_MANIFEST}; give the folder meshgen sweep wrote")
    variants = read_sweep_variants(manifest)
    have, common, warnings = _collect(root, list(variants), "variants")
    names = [n for n in variants if n in have]
    rows = [{"variant": n, **{q: have[n][q] for q in common}} for n in names]
    keys = sorted({k for n in names for k in variants[n]})
    if any(k not in variants[n] for k in keys for n in names):
        raise InputError(f"{manifest}: some variants have no value of a sweep key; it is not one sweep")
    values = {k: [variants[n][k] for n in names] for k in keys}
    return rows, values, manifest, warnings
