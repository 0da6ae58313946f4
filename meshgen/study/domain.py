"""Domain independence: each sweep variant's result against the largest-domain variant.

A domain sweep (``meshgen sweep``, sweep.py) builds one case with the outer boundaries
moved. After solving every variant, the results go into a CSV with one row per variant:
one or more quantity columns (a drag coefficient, a skin friction at a station, ...) and
the domain size, either as a numeric key column (e.g. ``height_factor``) or as a
``variant`` column holding the variant folder names (``height_factor=15``), whose key
values are then read from the sweep's manifest (``sweep.json``, beside the CSV or named
with ``manifest``). Reading the CSV follows ``meshgen.study.results.read_csv_rows``.

One key at a time: a sweep may vary several keys (the cartesian product), but a change is
attributable to one moved boundary only while the others stay put. So the rows of one
summary must hold every other sweep key at a single value; the key is the one named, or
else the only one that varies among the rows. A multi-key sweep is summarised one slice
at a time (a CSV with the rows of that slice).

The reference is the variant with the largest key value (the largest domain). Each
variant's relative change is rel = (phi - phi_ref) / |phi_ref|, within the tolerance when
|rel| <= tol (a fraction: 0.01 = 1 %, common practice rather than a published criterion).
``within_from`` is the smallest key value from which every larger variant is within the
tolerance: the smallest domain the sweep shows to be large enough. When that is the
reference itself, the sweep has not shown any domain to be large enough.
"""

from __future__ import annotations

import difflib
import math
import re
from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from pathlib import Path

import numpy as np

from ..core.errors import InputError
from .manifest import load_json
from .results import NAME_COLUMNS, quantity_columns, read_csv_with_lines

SWEEP_MANIFEST = "sweep.json"
VARIANT_COLUMN = "variant"  # the variant folder names, as sweep.json lists them
DEFAULT_TOL = 0.01  # common practice: a 1 % change is taken as domain-independent
#: Largest magnitude of a key or a result: products in the relative changes and the fit
#: stay finite in double precision (about 1.8e308) below it.
MAX_MAGNITUDE = 1e100


def _number(text: str) -> float | None:
    try:
        return float(text)
    except ValueError:
        return None


def _row_names(rows: Sequence[Mapping]) -> list[str | None]:
    col = next((c for c in (VARIANT_COLUMN, *NAME_COLUMNS) if c in rows[0]), None)
    return [r[col] for r in rows] if col else [None] * len(rows)


def sweep_summary(
    rows: Sequence[Mapping],
    key_column: str,
    quantities: str | Sequence[str],
    tol: float,
) -> dict:
    """Domain sweep: each variant's relative change against the largest-domain variant.

    ``rows`` one mapping per variant (e.g. ``read_csv_rows``), ``key_column`` the numeric
    column that sizes the domain (a height factor, an upstream length), ``quantities`` the
    result columns, ``tol`` the accepted relative change (0.01 = 1 %). The reference is the
    row with the largest key; rel_change = (phi - phi_ref) / |phi_ref|. Rows are named by
    their ``variant``, ``mesh`` or ``level`` column when there is one. Returns
    {key_column, tol, reference, quantities: {name: {reference_value, variants,
    max_abs_rel_change, all_within}}}.
    """
    qs = [quantities] if isinstance(quantities, str) else list(quantities)
    if not (isinstance(tol, (int, float, np.number)) and math.isfinite(tol) and tol > 0):
        raise InputError(f"tol = {tol!r}: must be a positive relative tolerance, e.g. 0.01 for 1 %")
    tol = float(tol)
    problems = [] if len(rows) >= 2 else [f"{len(rows)} variant(s): a sweep needs at least 2"]
    if not qs:
        problems.append("quantities: name at least one result column")
    cols = [key_column, *qs]
    problems += [
        f"column {c!r}: missing from some rows" for c in cols if any(c not in r for r in rows)
    ]
    if problems:
        raise InputError(problems)
    table = {}
    for c in cols:
        values = [_number(str(r[c])) for r in rows]
        problems += [
            f"row {i + 1}, column {c!r}: {r[c]!r} is not a finite number"
            if v is None or not math.isfinite(v) else
            f"row {i + 1}, column {c!r}: {v:g} is too large a magnitude (above {MAX_MAGNITUDE:g}: its "
            "differences and the fit would overflow); give the column in other units"
            for i, (r, v) in enumerate(zip(rows, values))
            if v is None or not math.isfinite(v) or abs(v) > MAX_MAGNITUDE
        ]
        table[c] = np.array([np.nan if v is None else v for v in values])
    if problems:
        raise InputError(problems)
    key = table[key_column]
    ref = int(np.argmax(key))
    if np.count_nonzero(key == key[ref]) > 1:
        raise InputError(
            f"column {key_column!r}: the largest value {key[ref]:g} appears twice; "
            "the reference variant must be unique"
        )
    names = _row_names(rows)
    out = {
        "key_column": key_column,
        "tol": tol,
        "reference": {key_column: float(key[ref]), "name": names[ref]},
        "quantities": {},
    }
    for q in qs:
        v = table[q]
        if v[ref] == 0:
            problems.append(
                f"column {q!r}: 0 on the reference variant, so a relative change is undefined"
            )
            continue
        with np.errstate(over="ignore"):
            rel = (v - v[ref]) / abs(v[ref])
        if not np.all(np.isfinite(rel)):
            problems.append(f"column {q!r}: the relative changes against the reference value {v[ref]:g} "
                            "overflow; give the column in other units")
            continue
        within = np.abs(rel) <= tol
        out["quantities"][q] = {
            "reference_value": float(v[ref]),
            "variants": [
                {
                    key_column: float(k),
                    "name": n,
                    "value": float(x),
                    "rel_change": float(r),
                    "within_tol": bool(w),
                }
                for k, n, x, r, w in zip(key, names, v, rel, within)
            ],
            "max_abs_rel_change": float(np.max(np.abs(rel))),
            "all_within": bool(np.all(within)),
        }
    if problems:
        raise InputError(problems)
    return out


def within_from(summary_quantity: Mapping, key_column: str) -> float:
    """The smallest key value from which every larger variant is within the tolerance."""
    variants = sorted(summary_quantity["variants"], key=lambda v: -v[key_column])
    ok = np.logical_and.accumulate([v["within_tol"] for v in variants])
    return float(variants[int(np.flatnonzero(ok)[-1])][key_column])  # the reference is within


# --- reading a sweep's results ------------------------------------------------------------


def full_key(name: str) -> str:
    """``height_factor`` -> ``domain.height_factor``: sweep keys as --vary and --set spell them."""
    return name if name.startswith("domain.") else f"domain.{name}"


def read_sweep_variants(manifest: str | Path) -> dict[str, dict[str, float]]:
    """{variant folder name: {sweep key: value}} from a ``sweep.json`` that meshgen sweep wrote."""
    manifest = Path(manifest)
    data = load_json(manifest, "no such sweep manifest")
    if not isinstance(data, dict) or data.get("kind") != "sweep":
        kind = data.get("kind") if isinstance(data, dict) else None
        raise InputError(
            f"{manifest}: not a sweep manifest (kind {kind!r}); expected the {SWEEP_MANIFEST} "
            "that meshgen sweep writes"
        )
    variants = data.get("variants")
    if not isinstance(variants, list) or not variants:
        raise InputError(f"{manifest}: needs a non-empty 'variants' list of {{name, values}}")
    problems, out = [], {}
    for i, v in enumerate(variants):  # per variant: a handful
        where = f"{manifest} variants[{i}]"
        name = v.get("name") if isinstance(v, dict) else None
        values = v.get("values") if isinstance(v, dict) else None
        if not isinstance(name, str) or not name:
            problems.append(f"{where}: needs a 'name' (the variant's folder)")
        elif not isinstance(values, dict) or not values or not all(
            isinstance(x, (int, float)) and not isinstance(x, bool) and math.isfinite(x)
            for x in values.values()
        ):
            problems.append(f"{where} ({name}): 'values' must map each sweep key to a number")
        else:
            out[name] = {str(k): float(x) for k, x in values.items()}
    if problems:
        raise InputError(problems)
    return out


@dataclass(frozen=True)
class SweepResults:
    """Rows of a sweep's results CSV, ready for ``sweep_summary``."""

    rows: list[dict]  # one per variant, with the key value under ``key``
    key: str  # the key column (a CSV column, or the sweep key from the manifest)
    quantities: list[str]
    held: dict[str, float]  # the other sweep keys and the one value they hold
    manifest: Path | None  # where the key values came from, if not from the CSV


def _manifest_values(path: Path, rows: list[dict], lines: list[int], manifest) -> tuple[Path, dict]:
    """{sweep key: value per row}, matching the variant column to sweep.json's folder names."""
    found = Path(manifest) if manifest is not None else path.with_name(SWEEP_MANIFEST)
    if manifest is None and not found.is_file():
        raise InputError(
            f"{path}: the key values come from the {VARIANT_COLUMN!r} column, but there is no "
            f"{SWEEP_MANIFEST} beside the CSV; give --manifest FILE, or a numeric key column"
        )
    variants = read_sweep_variants(found)
    problems, seen, values = [], {}, {}
    for row, ln in zip(rows, lines):  # per variant: a handful
        name = row[VARIANT_COLUMN]
        if name not in variants:
            close = difflib.get_close_matches(name, list(variants), n=1)
            more = f" and {len(variants) - 6} more" if len(variants) > 6 else ""
            hint = f"did you mean {close[0]!r}?" if close else "valid: " + ", ".join(list(variants)[:6]) + more
            problems.append(f"{path} line {ln}: variant {name!r} is not in {found}; {hint}")
        elif name in seen:
            problems.append(f"{path} lines {seen[name]} and {ln}: variant {name!r} given twice")
        else:
            seen[name] = ln
    if problems:
        raise InputError(problems)
    for k in sorted({k for row in rows for k in variants[row[VARIANT_COLUMN]]}):
        col = [variants[row[VARIANT_COLUMN]].get(k) for row in rows]
        if None in col:
            raise InputError(f"{found}: some variants have no value of {k}; it is not one sweep")
        values[k] = col
    return found, values


def _named_values(name: str) -> dict[str, float]:
    """{sweep key: value} that a variant folder name states (``height_factor=15_upstream=1``)."""
    out = {}
    for k, v in re.findall(r"([A-Za-z][A-Za-z_]*)=([^_=]+)", name):
        x = _number(v)
        if x is not None:
            out[full_key(k)] = x
    return out


def _check_variants_agree(path: Path, rows: list[dict], lines: list[int], columns: list[str]) -> None:
    """Refuse rows whose key column contradicts what their ``variant`` says (sweep.json
    beside the CSV when there is one, else the folder name itself)."""
    beside = path.with_name(SWEEP_MANIFEST)
    known = ({n: {full_key(k): x for k, x in v.items()} for n, v in read_sweep_variants(beside).items()}
             if beside.is_file() else None)
    problems = []
    for row, ln in zip(rows, lines):  # per variant: a handful
        name = str(row[VARIANT_COLUMN])
        stated = known.get(name, {}) if known is not None else _named_values(name)
        for c in columns:
            v = stated.get(full_key(c))
            if v is not None and not math.isclose(v, row[c], rel_tol=1e-9, abs_tol=1e-12):
                problems.append(f"{path} line {ln}: {c} = {row[c]:g} but variant {name!r} has {c} = {v:g}; "
                                f"correct the row, or drop the {c} or the {VARIANT_COLUMN} column")
    if problems:
        raise InputError(problems)


def _pick_key(key: str | None, values: dict[str, list]) -> str:
    """The key to summarise: the one named, else the only one that varies among the rows."""
    varying = [k for k, col in values.items() if len(set(col)) > 1]
    if key is not None:
        match = key if key in values else next((k for k in values if full_key(k) == full_key(key)), None)
        if match is None:  # only a manifest's keys can miss: a CSV key is a column already
            raise InputError(f"--key {key}: neither a CSV column nor a key of the sweep ({', '.join(values)})")
        return match
    if len(varying) == 1:
        return varying[0]
    if not varying:
        named = ", ".join(values) or "none"
        raise InputError(
            f"no sweep key varies among the rows (keys: {named}); name the column that sizes "
            "the domain with --key, or give a 'variant' column and the sweep's sweep.json"
        )
    raise InputError(
        f"the rows vary several keys ({', '.join(varying)}); give --key and keep only the rows "
        "with one value of each other key (one CSV per slice of the sweep)"
    )


def read_sweep_results(
    path: str | Path, key: str | None = None, manifest: str | Path | None = None
) -> SweepResults:
    """The rows of a sweep's results CSV with the key value of each (see the module docstring).

    ``key`` names the column (or sweep key) that sizes the domain: a numeric CSV column, else
    a key of ``sweep.json`` looked up through the ``variant`` column (``height_factor`` and
    ``domain.height_factor`` both name it). Raises InputError with one line per problem.
    """
    path = Path(path)
    rows, lines = read_csv_with_lines(path)
    numeric = [c for c, v in rows[0].items() if isinstance(v, float)]
    if VARIANT_COLUMN in numeric:
        raise InputError(
            f"{path}: column {VARIANT_COLUMN!r} holds numbers; it names the variant folders "
            "of sweep.json (e.g. height_factor=15). Name a numeric key column otherwise"
        )
    if key is not None and key in rows[0] and key not in numeric:
        raise InputError(f"--key {key}: column {key!r} of {path} holds text, not numbers")
    from .sweep import SWEEP_KEYS  # the case model: loaded when a summary is made, not for --help

    in_csv = [c for c in numeric if full_key(c) in SWEEP_KEYS]
    if key is not None:
        col = key if key in numeric else next((c for c in in_csv if full_key(c) == full_key(key)), None)
        in_csv = [] if col is None else list(dict.fromkeys([col, *in_csv]))
    if in_csv:
        if manifest is not None:
            raise InputError(
                f"--manifest {manifest}: not used, because {path} has the key column(s) "
                f"{', '.join(in_csv)}; drop the option or those columns"
            )
        values, found = {c: [r[c] for r in rows] for c in in_csv}, None
        if VARIANT_COLUMN in rows[0]:
            _check_variants_agree(path, rows, lines, in_csv)
    elif VARIANT_COLUMN in rows[0]:
        found, values = _manifest_values(path, rows, lines, manifest)
    elif key is not None:
        raise InputError(
            f"--key {key}: no such column in {path} (columns: {', '.join(rows[0])}); name a "
            f"numeric column, or add a {VARIANT_COLUMN!r} column with the variant folder names"
        )
    else:
        raise InputError(
            f"{path}: no column sizes the domain; name one with --key COLUMN (e.g. "
            f"height_factor), or add a {VARIANT_COLUMN!r} column with the variant folder names"
        )
    return _sweep_results(path, rows, lines, values, found, key)


def _sweep_results(path: Path, rows: list[dict], lines: list[int], values: dict, found: Path | None,
                   key: str | None) -> SweepResults:
    """The rows with the chosen key's value each, checked: one key varies, the others hold."""
    chosen = _pick_key(key, values)
    problems = [
        f"{k} takes {len(set(col))} values among the rows ({', '.join(f'{x:g}' for x in sorted(set(col)))}): "
        f"a summary moves one boundary at a time; keep only the rows with one {k} value"
        for k, col in values.items()
        if k != chosen and len(set(col)) > 1
    ]
    first: dict[float, int] = {}
    for x, ln in zip(values[chosen], lines if not problems else []):  # repeats follow from the above
        if x in first:
            problems.append(f"{path} lines {first[x]} and {ln}: the same {chosen} = {x:g}; give each variant once")
        first.setdefault(x, ln)
    from .sweep import SWEEP_KEYS

    quantities = [c for c in quantity_columns(rows) if c not in values and full_key(c) not in SWEEP_KEYS]
    if not quantities:
        problems.append(
            f"{path}: no quantity column; add numeric result columns besides {chosen}, cells and h"
        )
    if problems:
        raise InputError(problems)
    out = [{**r, chosen: x} for r, x in zip(rows, values[chosen])]
    held = {k: col[0] for k, col in values.items() if k != chosen}
    return SweepResults(out, chosen, quantities, held, found)


def read_sweep_folder(sweep_dir: str | Path, key: str | None = None) -> tuple[SweepResults, list[str]]:
    """The rows of a sweep folder's ``results.json`` files (member_results.py), ready for
    ``sweep_summary``, and warnings (members left out)."""
    from .member_results import sweep_rows

    rows, values, manifest, warnings = sweep_rows(sweep_dir)
    return _sweep_results(manifest, rows, list(range(1, len(rows) + 1)), values, manifest, key), warnings


def domain_summary(
    path: str | Path, key: str | None = None, tol: float = DEFAULT_TOL,
    manifest: str | Path | None = None, fit_order: float | None = None,
) -> dict:
    """``sweep_summary`` of a sweep's results CSV, or of a sweep folder's results.json files,
    with per quantity ``within_from`` and, from three variants on, ``fit`` (domain_fit.py:
    phi_inf + a H^-q, q fitted or ``fit_order``); at the top ``all_within``, ``held`` (the
    other keys' values), ``csv`` (or the folder), ``manifest`` and ``warnings``."""
    from .domain_fit import fit_power_law

    warnings: list[str] = []
    if Path(path).is_dir():
        if manifest is not None:
            raise InputError(f"--manifest {manifest}: a sweep folder has its own sweep.json; drop the option")
        res, warnings = read_sweep_folder(path, key)
    else:
        res = read_sweep_results(path, key, manifest)
    out = sweep_summary(res.rows, res.key, res.quantities, tol)
    for q, st in out["quantities"].items():
        vs = st["variants"]
        if len(vs) >= 3 or (fit_order is not None and len(vs) >= 2):
            st["fit"] = fit_power_law([v[res.key] for v in vs], [v["value"] for v in vs], fit_order)
            warnings += [f"{q}: {w}" for w in st["fit"]["warnings"]]
    out["warnings"] = warnings
    for q in out["quantities"].values():
        q["within_from"] = within_from(q, res.key)
    out["all_within"] = all(q["all_within"] for q in out["quantities"].values())
    out["held"] = res.held
    out["csv"] = str(path)
    out["manifest"] = None if res.manifest is None else str(res.manifest)
    return out
