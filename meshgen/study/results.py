"""Reading grid-convergence results: CSV tables (one row per mesh) and ``family.json``.

A results CSV has a header and one row per mesh: ``cells`` and/or ``h`` (the representative
cell size [m]), optionally ``mesh`` or ``level`` (a name), and one or more quantity columns
(every other numeric column). Blank lines and lines starting with ``#`` are skipped. With
only ``cells``, h comes from the domain area or volume (Celik et al. 2008, eq. 1, see
``meshgen.study.gci.h_from_cells``) or from the levels of a ``family.json`` manifest
(``meshgen family``) beside the CSV. ``study_rows`` runs ``meshgen.study.gci.study`` on
every quantity column.
"""

from __future__ import annotations

import csv
import math
from collections.abc import Mapping, Sequence
from pathlib import Path

import numpy as np

from ..core.errors import InputError
from .gci import h_from_cells, study
from .gci_report import unreliable_because
from .manifest import load_json

NAME_COLUMNS = ("mesh", "level")  # optional column naming each mesh
SIZE_COLUMNS = ("cells", "h")  # at least one of them sizes each mesh
MANIFEST_NAME = "family.json"


def _number(text: str) -> float | None:
    try:
        return float(text)
    except ValueError:
        return None


def read_csv_with_lines(path: str | Path) -> tuple[list[dict], list[int]]:
    """The rows of ``read_csv_rows`` and the line number in the file of each, for messages."""
    path = Path(path)
    try:
        text = path.read_text(encoding="utf-8-sig")
    except FileNotFoundError:
        raise InputError(
            f"{path}: no such file; expected a CSV of results, one row per mesh"
        ) from None
    except OSError as exc:
        raise InputError(f"{path}: cannot be read ({exc.strerror})") from None
    except UnicodeDecodeError:
        raise InputError(f"{path}: not UTF-8 text; expected a CSV file") from None
    numbered = [
        (i, line)
        for i, line in enumerate(text.splitlines(), 1)
        if line.strip() and not line.lstrip().startswith("#")
    ]
    if not numbered:
        raise InputError(
            f"{path}: empty; expected a header (e.g. mesh,cells,cd) and one row per mesh"
        )
    lines = [i for i, _ in numbered]
    records = list(csv.reader(line for _, line in numbered))
    reserved = NAME_COLUMNS + SIZE_COLUMNS
    header = [c.strip().lower() if c.strip().lower() in reserved else c.strip() for c in records[0]]
    problems = [
        f"{path} line {lines[0]}: column {j + 1} has no name" for j, c in enumerate(header) if not c
    ]
    problems += [
        f"{path} line {lines[0]}: column {c!r} appears more than once"
        for c in sorted({c for c in header if c and header.count(c) > 1})
    ]
    body, body_lines = records[1:], lines[1:]
    problems += [
        f"{path} line {ln}: {len(rec)} values, but the header has {len(header)} columns"
        for rec, ln in zip(body, body_lines)
        if len(rec) != len(header)
    ]
    if len(body) < 2:
        problems.append(f"{path}: {len(body)} data row(s); a study needs at least 2 meshes")
    if problems:
        raise InputError(problems)
    parsed = {}
    for j, col in enumerate(header):  # per column: a handful
        texts = [rec[j].strip() for rec in body]
        values = [_number(t) for t in texts]
        # A column with no number in it (notes, solver name) is text; a mixed one is an error.
        if col in NAME_COLUMNS or (col not in SIZE_COLUMNS and all(v is None for v in values)):
            parsed[col] = texts
            continue
        problems += [
            f"{path} line {ln}, column {col!r}: "
            + ("empty; every mesh needs a value" if not t else f"{t!r} is not a finite number")
            for t, v, ln in zip(texts, values, body_lines)
            if v is None or not math.isfinite(v)
        ]
        parsed[col] = values
    if problems:
        raise InputError(problems)
    return [{c: parsed[c][i] for c in header} for i in range(len(body))], body_lines


def read_csv_rows(path: str | Path) -> list[dict]:
    """Rows of a results CSV: one dict per data line, column -> float (str for text columns).

    Blank lines and lines starting with '#' are skipped. The reserved column names cells, h,
    mesh and level are matched in any case and returned in lower case. Raises InputError
    listing every problem: missing file, blank or repeated column names, ragged lines,
    fewer than 2 data rows, non-numeric values in a numeric column (with line and column).
    """
    return read_csv_with_lines(path)[0]


def name_column(rows: Sequence[Mapping]) -> str | None:
    """The column naming each mesh (``mesh``, else ``level``), or None when there is none."""
    return next((c for c in NAME_COLUMNS if c in rows[0]), None)


def quantity_columns(rows: Sequence[Mapping]) -> list[str]:
    """Names of the result columns: numeric columns other than cells, h, mesh and level."""
    return [
        c
        for c, v in rows[0].items()
        if c not in SIZE_COLUMNS and isinstance(v, float)  # name columns hold str
    ]


def read_family_levels(manifest: str | Path) -> list[dict]:
    """Levels of a family manifest: {"levels": [{"name": str, "cells": int, "h": float}, ...]}.

    Every level needs a positive ``h`` [m] and a ``name`` or ``cells`` to be matched by.
    """
    manifest = Path(manifest)
    data = load_json(manifest, "no such manifest")
    levels = data.get("levels") if isinstance(data, dict) else None
    if not isinstance(levels, list) or not levels:
        raise InputError(f"{manifest}: needs a non-empty 'levels' list of {{name, cells, h}}")
    problems = []
    for i, lv in enumerate(levels):
        where = f"{manifest} levels[{i}]"
        if not isinstance(lv, dict):
            problems.append(f"{where}: expected an object with name, cells and h")
            continue
        h = lv.get("h")
        if not (
            isinstance(h, (int, float)) and not isinstance(h, bool) and math.isfinite(h) and h > 0
        ):
            problems.append(f"{where}.h = {h!r}: must be a positive number")
        cells = lv.get("cells")
        if cells is not None and not (
            isinstance(cells, int) and not isinstance(cells, bool) and cells > 0
        ):
            problems.append(f"{where}.cells = {cells!r}: must be a positive whole number")
        if "name" not in lv and cells is None:
            problems.append(f"{where}: has neither 'name' nor 'cells' to match a CSV row by")
    if problems:
        raise InputError(problems)
    return levels


def _h_from_manifest(manifest: Path, rows: list[dict], lines: list[int], path: Path) -> list[float]:
    """h of each row, matching the mesh/level column to level names, else cells to cells.
    Rows without a ``cells`` column (keyed by member names alone) take the level's cells."""
    levels = read_family_levels(manifest)
    by_name = {str(lv["name"]): lv for lv in levels if "name" in lv}
    counts = [lv.get("cells") for lv in levels]
    by_cells = {c: lv for c, lv in zip(counts, levels) if c is not None and counts.count(c) == 1}
    name_col = name_column(rows)
    problems, hs = [], []
    for row, ln in zip(rows, lines):  # per mesh: a handful
        name = row[name_col] if name_col else None
        if "cells" not in row:
            lv = by_name.get(name)
            if lv is None:
                problems.append(f"{path} line {ln}: no level named {name!r} in {manifest} "
                                f"(levels: {', '.join(by_name)})")
            else:
                row["cells"] = lv.get("cells")
                hs.append(float(lv["h"]))
            continue
        lv = by_name.get(name) or by_cells.get(row["cells"])
        if lv is None:
            label = f"named {name!r} or " if name else ""
            problems.append(
                f"{path} line {ln}: no level in {manifest} {label}with {row['cells']} cells"
            )
        elif lv.get("cells") not in (None, row["cells"]):
            problems.append(
                f"{path} line {ln}: {row['cells']} cells, but level {lv.get('name')!r} "
                f"in {manifest} has {lv['cells']}"
            )
        else:
            hs.append(float(lv["h"]))
    if problems:
        raise InputError(problems)
    return hs


def read_results_csv(
    path: str | Path,
    *,
    dim: int | None = None,
    size: float | None = None,
    manifest: str | Path | None = None,
) -> list[dict]:
    """Rows of a grid-convergence results CSV, sorted fine to coarse, each with ``h`` [m].

    Columns: ``cells`` and/or ``h``, optionally ``mesh`` or ``level`` (a name), and one or
    more quantity columns (every other numeric column; see ``quantity_columns``). An ``h``
    column is used as given. With only ``cells``, h comes from ``dim`` and ``size`` (area
    [m^2] in 2-D, volume [m^3] in 3-D; ``h_from_cells``), else from ``manifest`` or a
    ``family.json`` beside the CSV (``read_family_levels``), matching rows by name, then by
    cell count. Cells come back as int. Raises InputError with one line per problem.
    """
    path = Path(path)
    rows, lines = read_csv_with_lines(path)
    cols = list(rows[0])
    problems = []
    found = Path(manifest) if manifest is not None else path.with_name(MANIFEST_NAME)
    by_name = name_column(rows) is not None and found.is_file()
    if "h" not in cols and "cells" not in cols and not by_name:
        problems.append(
            f"{path}: no 'cells' or 'h' column to size each mesh (columns: {', '.join(cols)}); "
            f"or name each mesh in a 'mesh' column with a {MANIFEST_NAME} beside the CSV or given"
        )
    if not quantity_columns(rows):
        problems.append(
            f"{path}: no quantity column; add numeric result columns besides cells, h, mesh, level"
        )
    for col, whole in (("cells", True), ("h", False)):
        if col in cols:
            problems += [
                f"{path} line {ln}, column {col!r}: {r[col]:g} is not a positive "
                + ("whole number of cells" if whole else "cell size")
                for r, ln in zip(rows, lines)
                if r[col] <= 0 or (whole and r[col] != int(r[col]))
            ]
    if problems:
        raise InputError(problems)
    if "cells" in cols:
        for r in rows:
            r["cells"] = int(r["cells"])
    elif "h" not in cols:  # keyed by member names alone: cells and h from the manifest
        hs = _h_from_manifest(found, rows, lines, path)
        for r, h in zip(rows, hs):
            r["h"] = h
        if any(r["cells"] is None for r in rows):
            for r in rows:
                r.pop("cells")
        cols = list(rows[0])
    if "h" not in cols:
        if manifest is not None and (dim is not None or size is not None):
            raise InputError(
                "give either a family manifest or dim and size (area or volume), not both"
            )
        if dim is not None or size is not None:
            if dim is None or size is None:
                raise InputError(f"dim = {dim!r}, size = {size!r}: h from cells needs both")
            hs = h_from_cells([r["cells"] for r in rows], dim, size).tolist()
        else:
            if manifest is None and not found.is_file():
                raise InputError(
                    f"{path}: only 'cells' is given, so h needs the domain size: give --area "
                    f"(2-D) or --volume (3-D) (dim and size in the API), or put a {MANIFEST_NAME} "
                    "with each level's h beside the CSV (or name one with --manifest)"
                )
            hs = _h_from_manifest(found, rows, lines, path)
        for r, h in zip(rows, hs):
            r["h"] = h
    h = np.array([r["h"] for r in rows])
    order = np.argsort(h, kind="stable")
    same = np.flatnonzero(np.isclose(h[order][1:], h[order][:-1], rtol=1e-9, atol=0))
    if same.size:
        raise InputError(
            [
                f"{path} lines {lines[order[i]]} and {lines[order[i + 1]]}: the same h = "
                f"{h[order[i]]:.6g}; each mesh in a study must have a different size"
                for i in same
            ]
        )
    return [rows[i] for i in order]


def study_rows(
    rows: Sequence[Mapping],
    quantities: Sequence[str] | None = None,
    *,
    fs: float | None = None,
    assumed_order: float = 2.0,
    formal_order: float = 2.0,
) -> dict:
    """``study`` of every quantity column of ``rows`` (from ``read_results_csv``).

    Returns {"quantities": {name: study result}}, the input of ``gci_table``, ``plot_gci``
    and ``to_json``.
    """
    if not rows or "h" not in rows[0]:
        raise InputError("rows: expected the rows of read_results_csv, each with an 'h'")
    qs = quantity_columns(rows) if quantities is None else list(quantities)
    missing = [q for q in qs if q not in rows[0]]
    if missing or not qs:
        raise InputError(f"quantities {missing or qs!r}: choose from {quantity_columns(rows)}")
    name_col = name_column(rows)
    common = {
        "h": [r["h"] for r in rows],
        "cells": [r["cells"] for r in rows] if "cells" in rows[0] else None,
        "names": [r[name_col] for r in rows] if name_col else None,
        "fs": fs,
        "assumed_order": assumed_order,
        "formal_order": formal_order,
    }
    out = {"quantities": {q: study([r[q] for r in rows], quantity=q, **common) for q in qs}}
    for st in out["quantities"].values():
        for res in st["results"]:
            res["unreliable_because"] = unreliable_because(res)
            res["reliable"] = res["unreliable_because"] is None
    return out
