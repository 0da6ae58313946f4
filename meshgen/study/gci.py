"""Grid-convergence uncertainty: Richardson extrapolation and the Grid Convergence Index (GCI).

Three grids follow Celik, Ghia, Roache, Freitas, Coleman and Raad (2008), "Procedure for
Estimation and Reporting of Uncertainty Due to Discretization in CFD Applications",
J. Fluids Eng. 130(7) 078001, doi:10.1115/1.2960953. Two grids use Roache's GCI with an
assumed order (Roache 1994, J. Fluids Eng. 116(3) 405-413): safety factor Fs = 3 for two
grids, 1.25 for three or more.

Notation as in Celik et al.: grid 1 is the finest, h is the representative cell size
(``h_from_cells``), r21 = h2/h1, eps21 = phi2 - phi1. Relative errors and GCIs are
fractions (0.022 means 2.2 %); ``u_fine21`` is the GCI band in the units of phi
(GCI_fine21 |phi1|). Every result is a dict of floats, strings, lists and ``None`` (for a
value that does not exist); ``to_json`` makes it safe for ``json.dumps``.

Sections: the methods (``three_grid``, ``two_grid``, ``study``); reading result tables
(``read_results_csv`` with an optional ``family.json``); reporting (``gci_table``,
``plot_gci``); and the domain-sweep summary (``sweep_summary``).
"""

from __future__ import annotations

import csv
import json
import math
from collections.abc import Mapping, Sequence
from pathlib import Path

import numpy as np

from meshgen.atomic import atomic_file
from meshgen.errors import InputError

FS_THREE_GRID = 1.25  # Roache (1994, 1998); the value Celik et al. (2008) use
FS_TWO_GRID = 3.0  # Roache (1994, 1998) for two-grid studies (memory)
# Celik et al. (2008): "desirable that the grid refinement factor ... be greater than 1.3",
# a value based on experience (quoted from memory).
MIN_RATIO = 1.3
RATIO_MISMATCH = 0.05  # common practice: mention r21 and r32 differing by more than 5 %
P_LOW = 0.5  # below this the apparent order is far from any practical scheme's
P_HIGH_FACTOR = 2.0  # above this multiple of the formal order p is suspect
P_MAX = 50.0  # no apparent order is searched above this: such data fit no power law
METHOD_THREE = "three-grid (Celik et al. 2008)"
METHOD_TWO = "two-grid, assumed order (Roache 1994)"
NAME_COLUMNS = ("mesh", "level")  # optional column naming each mesh
SIZE_COLUMNS = ("cells", "h")  # at least one of them sizes each mesh
MANIFEST_NAME = "family.json"


def h_from_cells(cells, dim: int, size: float):
    """Representative cell size h [m] of meshes with ``cells`` cells.

    h = (area / N)^(1/2) in 2-D and (volume / N)^(1/3) in 3-D (Celik et al. 2008, eq. 1),
    with ``size`` the area [m^2] or volume [m^3] of the domain. Returns a float for a
    scalar ``cells`` and a numpy array otherwise.
    """
    problems = []
    if dim not in (2, 3):
        problems.append(f"dim = {dim!r}: must be 2 (size is an area) or 3 (a volume)")
    if not (isinstance(size, (int, float, np.number)) and math.isfinite(size) and size > 0):
        problems.append(f"size = {size!r}: must be a positive area (2-D) or volume (3-D)")
    n = np.asarray(cells, dtype=float)
    if not np.all(np.isfinite(n) & (n >= 1)):
        problems.append(f"cells = {cells!r}: every count must be a positive number")
    if problems:
        raise InputError(problems)
    h = (size / n) ** (1.0 / dim)
    return float(h) if h.ndim == 0 else h


def _vector(values, n: int, name: str, positive: bool = False) -> np.ndarray:
    """``values`` as a float array of length ``n``, finite (and positive), else InputError."""
    try:
        a = np.asarray(values, dtype=float).ravel()
    except (TypeError, ValueError):
        raise InputError(f"{name} = {values!r}: expected {n} numbers") from None
    if a.size != n:
        raise InputError(f"{name} = {values!r}: expected {n} numbers, got {a.size}")
    if not np.all(np.isfinite(a)) or (positive and not np.all(a > 0)):
        kind = "positive finite" if positive else "finite"
        raise InputError(f"{name} = {values!r}: every value must be {kind}")
    return a


def _positive_scalar(value, name: str, hint: str) -> float:
    if not (isinstance(value, (int, float, np.number)) and math.isfinite(value) and value > 0):
        raise InputError(f"{name} = {value!r}: {hint}")
    return float(value)


def _ln_rp_minus_s(x: float, s: float) -> float:
    """ln(e^x - s) for x = p ln r > 0, s = +-1, without overflow or cancellation."""
    if s > 0:
        return x + math.log(-math.expm1(-x))
    return x + math.log1p(math.exp(-x))


def _relative(diff: float, ref: float) -> float | None:
    return None if ref == 0 else abs(diff / ref)


def _ratio_warnings(ratios: dict[str, float]) -> list[str]:
    out = [
        f"refinement ratio {k} = {r:.4g} is below {MIN_RATIO} (Celik et al. 2008 advise more): "
        "round-off and iteration error can swamp the difference between the grids"
        for k, r in ratios.items()
        if r < MIN_RATIO
    ]
    if len(ratios) == 2:
        r21, r32 = ratios["r21"], ratios["r32"]
        if abs(r21 / r32 - 1) > RATIO_MISMATCH:
            out.append(
                f"non-uniform refinement (r21 = {r21:.4g}, r32 = {r32:.4g}): the order comes "
                "from an iterated equation and is more sensitive to noise than with equal ratios"
            )
    return out


def _apparent_order(r21: float, r32: float, ln_ratio: float, s: float, tol: float, max_iter: int):
    """Solve p ln r21 = ln|eps32/eps21| + q(p), q(p) = ln((r21^p - s)/(r32^p - s)).

    Returns (p or None, method, fixed-point iterations, message or None). The left minus
    the right side, F(p) = ln(r21^p (r32^p - s)/(r21^p - s)) - ln|eps32/eps21|, rises
    strictly with p for s = +-1, so there is at most one positive root. Celik's fixed-point
    iteration (p -> |ln|eps32/eps21| + q(p)| / ln r21) is tried first; it diverges when
    r32 is much larger than r21, and then bisection on F finds the same root.
    """
    l21, l32 = math.log(r21), math.log(r32)
    if math.isclose(r21, r32, rel_tol=1e-12):
        p = ln_ratio / l21  # q = 0 for equal ratios
        return (p, "closed form (r21 = r32, q = 0)", 0, None) if p > 0 else (None, None, 0, None)

    def q(p: float) -> float:
        return _ln_rp_minus_s(p * l21, s) - _ln_rp_minus_s(p * l32, s)

    p, k, step = abs(ln_ratio) / l21, 0, math.inf
    while k < max_iter and 0 < p < P_MAX:
        k += 1
        p_new = abs(ln_ratio + q(p)) / l21
        # A contraction with factor L leaves an error of about step * L / (1 - L) after a
        # step, which is far more than the step itself when L is near 1.
        last, step = step, abs(p_new - p)
        rate = step / last if 0 < last < math.inf else 1.0
        if step == 0 or (rate < 1 and step * rate / (1 - rate) <= tol * max(1.0, p_new)):
            # The absolute value can hide a negative right side; only a true root counts.
            if p_new > 0 and ln_ratio + q(p_new) > 0:
                return p_new, "fixed-point iteration (Celik et al. 2008)", k, None
            break
        p = p_new
    note = (
        f"the fixed-point iteration for p did not converge ({k} steps, tolerance {tol:g}); "
        "p was found by bisection on the same equation"
    )

    def f(p: float) -> float:
        return p * l21 - q(p) - ln_ratio

    # F(0+) is the limit as p -> 0: ln(ln r32 / ln r21) for s = +1, 0 for s = -1.
    f0 = (math.log(l32 / l21) if s > 0 else 0.0) - ln_ratio
    if f0 >= 0 or f(P_MAX) <= 0:
        return None, None, k, None
    lo, hi = 0.0, P_MAX
    for _ in range(200):  # bisection halves the bracket: 200 steps reach round-off
        mid = 0.5 * (lo + hi)
        if mid in (lo, hi):
            break
        lo, hi = (mid, hi) if f(mid) < 0 else (lo, mid)
    return 0.5 * (lo + hi), "bisection", k, note


def three_grid(
    h: Sequence[float],
    phi: Sequence[float],
    fs: float = FS_THREE_GRID,
    *,
    formal_order: float = 2.0,
    tol: float = 1e-12,
    max_iter: int = 200,
) -> dict:
    """Celik et al. (2008) three-grid discretisation uncertainty of one quantity.

    ``h`` = [h1, h2, h3] fine to coarse [m], ``phi`` = [phi1, phi2, phi3] the quantity on
    each grid, ``fs`` the safety factor, ``formal_order`` the scheme's order (for the
    plausibility warning), ``tol`` and ``max_iter`` the convergence tolerance (relative, on
    the error of p estimated from successive steps) and the step cap of the fixed-point
    iteration.

    Returned keys: r21, r32, eps21, eps32, R = eps21/eps32, R_scaled, s, kind, p, p_method,
    p_iterations, phi_ext21, phi_ext32, e_a21, e_a32, e_ext21, e_ext32, gci_fine21,
    gci_medium32 (Fs e_a32 / (r32^p - 1)), u_fine21, asymptotic_ratio
    (GCI_32 / (r21^p GCI_21)) and warnings (plain-language sentences).

    ``kind``: oscillatory (R < 0), monotonic, divergent, or indeterminate (eps21 or eps32
    zero). Celik et al. call 0 < R < 1 monotonic and R > 1 divergent; that test assumes
    equal ratios. A positive order exists only when R_scaled = R ln r32 / ln r21 < 1 (the
    limit of the order equation as p -> 0), so monotonic/divergent is decided on R_scaled,
    which equals R when r21 = r32. A divergent set gets no order and no extrapolation.

    With p taken from these same three grids, asymptotic_ratio equals phi1/phi2 exactly
    (three values always fit phi_ext + C h^p); it checks the arithmetic, not the asymptotic
    range. Compare p with the formal order, or the orders of overlapping triplets, for that.
    """
    h = _vector(h, 3, "h", positive=True)
    phi = _vector(phi, 3, "phi")
    fs = _positive_scalar(fs, "fs", "the safety factor must be positive (1.25 for three grids)")
    formal_order = _positive_scalar(formal_order, "formal_order", "must be positive, e.g. 2")
    if not (h[0] < h[1] < h[2]):
        raise InputError(f"h = {h.tolist()}: must be ordered fine to coarse, h1 < h2 < h3")
    r21, r32 = float(h[1] / h[0]), float(h[2] / h[1])
    eps21, eps32 = float(phi[1] - phi[0]), float(phi[2] - phi[1])
    warnings = _ratio_warnings({"r21": r21, "r32": r32})
    res = {
        "method": METHOD_THREE,
        "h": h.tolist(),
        "phi": phi.tolist(),
        "fs": fs,
        "formal_order": formal_order,
        "r21": r21,
        "r32": r32,
        "eps21": eps21,
        "eps32": eps32,
        "R": None,
        "R_scaled": None,
        "s": None,
        "kind": "indeterminate",
        "p": None,
        "p_method": None,
        "p_iterations": 0,
        "phi_ext21": None,
        "phi_ext32": None,
        "e_a21": _relative(eps21, phi[0]),
        "e_a32": _relative(eps32, phi[1]),
        "e_ext21": None,
        "e_ext32": None,
        "gci_fine21": None,
        "gci_medium32": None,
        "u_fine21": None,
        "asymptotic_ratio": None,
        "warnings": warnings,
    }
    # A change within a few ulps of the values is round-off, not a discretisation error.
    tiny = 8 * np.finfo(float).eps * float(np.max(np.abs(phi)))
    if abs(eps21) <= tiny or abs(eps32) <= tiny:
        which = "phi1 = phi2" if abs(eps21) <= tiny else "phi2 = phi3"
        warnings.append(
            f"{which}: a zero change between grids leaves the order undefined; no "
            "extrapolation or GCI. The quantity may be grid-independent, or the two values "
            "may cross by chance: add a grid or use a two-grid estimate with an assumed order"
        )
        return res
    R = eps21 / eps32
    s = 1.0 if R > 0 else -1.0  # sign(eps32/eps21) = sign(R)
    R_scaled = R * math.log(r32) / math.log(r21)
    res.update(R=R, R_scaled=R_scaled, s=s)
    if R < 0:
        res["kind"] = "oscillatory"
        warnings.append(
            f"oscillatory convergence (R = {R:.4g} < 0): the solution swings from grid to grid, "
            "so the apparent order, the extrapolated value and the GCI are unreliable"
        )
    elif R_scaled < 1:
        res["kind"] = "monotonic"
        if R >= 1:
            warnings.append(
                f"R = {R:.4g} >= 1 would read as divergent, but with r21 = {r21:.4g} > "
                f"r32 = {r32:.4g} the scaled R = {R_scaled:.4g} < 1 is monotonic convergence"
            )
    else:
        res["kind"] = "divergent"
        extra = (
            f" (R = {R:.4g} < 1, but with r32 = {r32:.4g} > r21 = {r21:.4g} the changes shrink "
            f"too slowly for any positive order: scaled R = {R_scaled:.4g})"
            if R < 1
            else f" (R = {R:.4g} >= 1)"
        )
        warnings.append(
            "divergent: the change between grids does not shrink as the grid is refined"
            + extra
            + "; no order, extrapolation or GCI. Check iterative convergence and refine further"
        )
        return res

    p, method, iterations, note = _apparent_order(
        r21, r32, math.log(abs(eps32 / eps21)), s, tol, max_iter
    )
    res.update(p_method=method, p_iterations=iterations)
    if note:
        warnings.append(note)
    if p is None:
        warnings.append(
            f"no positive order of accuracy up to {P_MAX:g} fits these three values; "
            "no extrapolation or GCI"
        )
        return res
    res["p"] = p
    if p < P_LOW or p > P_HIGH_FACTOR * formal_order:
        warnings.append(
            f"apparent order p = {p:.3g} is far from the formal order {formal_order:g} "
            f"(expected {P_LOW:g} to {P_HIGH_FACTOR * formal_order:g}): the grids are probably "
            "not in the asymptotic range, so the extrapolation and GCI are doubtful"
        )
    d21, d32 = math.expm1(p * math.log(r21)), math.expm1(p * math.log(r32))  # r^p - 1
    phi_ext21 = float(phi[0]) - eps21 / d21  # = (r21^p phi1 - phi2) / (r21^p - 1)
    phi_ext32 = float(phi[1]) - eps32 / d32
    res.update(
        phi_ext21=phi_ext21,
        phi_ext32=phi_ext32,
        e_ext21=_relative(phi_ext21 - phi[0], phi_ext21),
        e_ext32=_relative(phi_ext32 - phi[1], phi_ext32),
        u_fine21=fs * abs(eps21) / d21,
    )
    if res["e_a21"] is not None and res["e_a32"] is not None:
        gci21, gci32 = fs * res["e_a21"] / d21, fs * res["e_a32"] / d32
        res.update(gci_fine21=gci21, gci_medium32=gci32)
        res["asymptotic_ratio"] = gci32 / ((d21 + 1) * gci21)
    else:
        warnings.append("phi1 or phi2 is 0: relative errors and GCI are undefined; see u_fine21")
    return res


def two_grid(
    h: Sequence[float],
    phi: Sequence[float],
    p: float,
    fs: float = FS_TWO_GRID,
) -> dict:
    """Roache's two-grid GCI with an assumed order ``p``.

    ``h`` = [h1, h2] fine then coarse [m], ``phi`` = [phi1, phi2]. GCI_fine21 =
    Fs e_a21 / (r21^p - 1), e_a21 = |(phi1 - phi2) / phi1|, phi_ext21 =
    (r21^p phi1 - phi2) / (r21^p - 1). Fs defaults to 3 (Roache: two grids); the NPARC
    Alliance example uses 1.25 because its order came from a third grid. Keys as in
    ``three_grid`` (the 32 entries absent).
    """
    h = _vector(h, 2, "h", positive=True)
    phi = _vector(phi, 2, "phi")
    p = _positive_scalar(p, "p", "the assumed order must be positive, e.g. the formal order 2")
    fs = _positive_scalar(fs, "fs", "the safety factor must be positive (3 for two grids)")
    if not h[0] < h[1]:
        raise InputError(f"h = {h.tolist()}: must be ordered fine to coarse, h1 < h2")
    r21, eps21 = float(h[1] / h[0]), float(phi[1] - phi[0])
    warnings = _ratio_warnings({"r21": r21})
    warnings.append(
        f"two grids cannot show the order of accuracy: p = {p:g} is assumed, not observed"
    )
    if fs < FS_TWO_GRID:
        warnings.append(f"Fs = {fs:g} is below the {FS_TWO_GRID:g} Roache recommends for two grids")
    if eps21 == 0:
        warnings.append("phi1 = phi2: a zero GCI here does not show grid independence")
    d21 = math.expm1(p * math.log(r21))
    phi_ext21 = float(phi[0]) - eps21 / d21
    e_a21 = _relative(eps21, phi[0])
    if e_a21 is None:
        warnings.append("phi1 is 0: relative errors and GCI are undefined; see u_fine21")
    return {
        "method": METHOD_TWO,
        "h": h.tolist(),
        "phi": phi.tolist(),
        "fs": fs,
        "r21": r21,
        "eps21": eps21,
        "kind": "unknown (two grids)",
        "p": p,
        "p_method": "assumed",
        "phi_ext21": phi_ext21,
        "e_a21": e_a21,
        "e_ext21": _relative(phi_ext21 - phi[0], phi_ext21),
        "gci_fine21": None if e_a21 is None else fs * e_a21 / d21,
        "u_fine21": fs * abs(eps21) / d21,
        "warnings": warnings,
    }


def study(
    phi: Sequence[float],
    *,
    h: Sequence[float] | None = None,
    cells: Sequence[float] | None = None,
    dim: int | None = None,
    size: float | None = None,
    names: Sequence[str] | None = None,
    quantity: str = "phi",
    fs: float | None = None,
    assumed_order: float = 2.0,
    formal_order: float = 2.0,
) -> dict:
    """Grid-convergence study of one quantity over N >= 2 meshes, in any order.

    Give ``h`` [m], or ``cells`` with ``dim`` and ``size`` (area [m^2] or volume [m^3],
    see ``h_from_cells``); with ``h`` given, ``cells`` is only recorded. Meshes are sorted
    fine to coarse; N >= 3 gives a ``three_grid`` result for every consecutive triplet
    (fs default 1.25), N = 2 a ``two_grid`` result with ``assumed_order`` (fs default 3).
    Returns {"quantity", "levels": [{"name", "cells", "h", "phi"}], "results": [...]}.
    """
    n = len(phi)
    if n < 2:
        raise InputError(
            f"{quantity}: {n} value(s); a grid-convergence study needs 2 or more meshes"
        )
    if h is None:
        if cells is None or dim is None or size is None:
            raise InputError(
                f"{quantity}: give h, or cells together with dim and size (area or volume)"
            )
        h = h_from_cells(_vector(cells, n, "cells", positive=True), dim, size)
    h = _vector(h, n, "h", positive=True)
    phi = _vector(phi, n, quantity)
    cells = (
        [None] * n if cells is None else [int(c) for c in _vector(cells, n, "cells", positive=True)]
    )
    order = np.argsort(h, kind="stable")
    # Default names follow Celik's numbering: grid1 is the finest.
    names = [None] * n if names is None else [str(x) for x in names]
    if len(names) != n:
        raise InputError(f"names = {names!r}: expected {n} names, one per mesh")
    for rank, j in enumerate(order):
        names[j] = f"grid{rank + 1}" if names[j] is None else names[j]
    h, phi = h[order], phi[order]
    same = np.flatnonzero(np.isclose(h[1:], h[:-1], rtol=1e-9, atol=0))
    if same.size:
        raise InputError(
            [
                f"meshes {names[order[i]]!r} and {names[order[i + 1]]!r} have the same "
                f"h = {h[i]:.6g}; each mesh in a study must have a different size"
                for i in same
            ]
        )
    levels = [
        {"name": names[j], "cells": cells[j], "h": float(hi), "phi": float(v)}
        for j, hi, v in zip(order, h, phi)
    ]
    if n == 2:
        res = two_grid(h, phi, assumed_order, FS_TWO_GRID if fs is None else fs)
        res["levels"] = [lv["name"] for lv in levels]
        results = [res]
    else:
        results = []
        for i in range(n - 2):  # one entry per consecutive triplet: a handful, not per cell
            res = three_grid(
                h[i : i + 3],
                phi[i : i + 3],
                FS_THREE_GRID if fs is None else fs,
                formal_order=formal_order,
            )
            res["levels"] = [lv["name"] for lv in levels[i : i + 3]]
            results.append(res)
    return {"quantity": quantity, "levels": levels, "results": results}


def to_json(value):
    """A copy of ``value`` (results, nested dicts, lists, numpy values) safe for json.dumps.

    Numpy scalars and arrays become Python numbers and lists; NaN and infinity become None.
    """
    if isinstance(value, dict):
        return {str(k): to_json(v) for k, v in value.items()}
    if isinstance(value, (list, tuple, np.ndarray)):
        return [to_json(v) for v in value]
    if isinstance(value, np.generic):
        value = value.item()
    if isinstance(value, float) and not math.isfinite(value):
        return None
    return value


# --- reading result tables --------------------------------------------------------------


def _number(text: str) -> float | None:
    try:
        return float(text)
    except ValueError:
        return None


def _parse_csv(path: Path) -> tuple[list[dict], list[int]]:
    """Rows of a CSV file (column -> float, or str for text columns) and their line numbers."""
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
    return _parse_csv(Path(path))[0]


def _name_column(rows: Sequence[Mapping]) -> str | None:
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
    try:
        data = json.loads(manifest.read_text(encoding="utf-8"))
    except FileNotFoundError:
        raise InputError(f"{manifest}: no such manifest") from None
    except (OSError, UnicodeDecodeError, json.JSONDecodeError) as exc:
        raise InputError(f"{manifest}: not a readable JSON manifest ({exc})") from None
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
    """h of each row, matching the mesh/level column to level names, else cells to cells."""
    levels = read_family_levels(manifest)
    by_name = {str(lv["name"]): lv for lv in levels if "name" in lv}
    counts = [lv.get("cells") for lv in levels]
    by_cells = {c: lv for c, lv in zip(counts, levels) if c is not None and counts.count(c) == 1}
    name_col = _name_column(rows)
    problems, hs = [], []
    for row, ln in zip(rows, lines):  # per mesh: a handful
        name = row[name_col] if name_col else None
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
    rows, lines = _parse_csv(path)
    cols = list(rows[0])
    problems = []
    if "h" not in cols and "cells" not in cols:
        problems.append(
            f"{path}: no 'cells' or 'h' column to size each mesh (columns: {', '.join(cols)})"
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
            found = Path(manifest) if manifest is not None else path.with_name(MANIFEST_NAME)
            if manifest is None and not found.is_file():
                raise InputError(
                    f"{path}: only 'cells' is given, so h needs the domain size: give the "
                    f"dimension and area (2-D) or volume (3-D), or put a {MANIFEST_NAME} "
                    "with each level's h beside the CSV"
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
    name_col = _name_column(rows)
    common = {
        "h": [r["h"] for r in rows],
        "cells": [r["cells"] for r in rows] if "cells" in rows[0] else None,
        "names": [r[name_col] for r in rows] if name_col else None,
        "fs": fs,
        "assumed_order": assumed_order,
        "formal_order": formal_order,
    }
    return {"quantities": {q: study([r[q] for r in rows], quantity=q, **common) for q in qs}}


# --- reporting --------------------------------------------------------------------------


def _by_quantity(results: Mapping) -> dict:
    if "quantities" in results:
        return dict(results["quantities"])
    if "quantity" in results and "results" in results:
        return {results["quantity"]: results}
    raise InputError("results: expected what study() or study_rows() returns")


def _num(x) -> str:
    return "-" if x is None else f"{x:.6g}"


def _pct(x) -> str:
    return "-" if x is None else f"{100 * x:.4g} %"


def _result_lines(res: dict) -> list[str]:
    out = [f"  {' / '.join(res['levels'])}: {res['method']}, Fs = {res['fs']:g}"]
    ratios = f"r21 = {res['r21']:.4g}" + (f", r32 = {res['r32']:.4g}" if "r32" in res else "")
    steps = f", {res['p_iterations']} steps" if res.get("p_iterations") else ""
    conv = res["kind"] + (f" (R = {res['R']:.4g})" if res.get("R") is not None else "")
    out += [
        f"    refinement ratios   {ratios}",
        f"    convergence         {conv}",
        f"    order               p = {_num(res['p'])}"
        + (f" ({res['p_method']}{steps})" if res["p_method"] else ""),
        f"    extrapolated        phi_ext21 = {_num(res['phi_ext21'])}"
        + (f", phi_ext32 = {_num(res['phi_ext32'])}" if "phi_ext32" in res else ""),
        f"    relative errors     e_a21 = {_pct(res['e_a21'])}, e_ext21 = {_pct(res['e_ext21'])}",
        f"    GCI                 fine21 = {_pct(res['gci_fine21'])}"
        + ("" if res["u_fine21"] is None else f" (band +/-{res['u_fine21']:.6g})")
        + (
            f", medium32 = {_pct(res['gci_medium32'])}, "
            f"asymptotic ratio = {_num(res['asymptotic_ratio'])}"
            if "gci_medium32" in res
            else ""
        ),
    ]
    return out + [f"    warning: {w}" for w in res["warnings"]]


def gci_table(results: Mapping) -> str:
    """A plain-text report of ``study``/``study_rows`` results, one section per quantity."""
    out = []
    for q, st in _by_quantity(results).items():
        out += [
            f"{q}: grid convergence (grid 1 finest; GCI in % of the fine-grid value)",
            f"  {'mesh':<14}{'cells':>12}{'h':>14}{q:>16}",
        ]
        out += [
            f"  {lv['name']:<14}{'-' if lv['cells'] is None else lv['cells']:>12}"
            f"{lv['h']:>14.6g}{lv['phi']:>16.8g}"
            for lv in st["levels"]
        ]
        for res in st["results"]:
            out += _result_lines(res)
        out.append("")
    return "\n".join(out)


# Colours of our own choosing: deep teal data, brick-red extrapolation, sand band.
DATA_COLOUR, FIT_COLOUR, EXT_COLOUR, BAND_COLOUR = "#1d5c63", "#7a7a7a", "#b23a2e", "#e9c46a"


def _plot_one(ax, quantity: str, st: dict) -> None:
    h = np.array([lv["h"] for lv in st["levels"]])
    phi = np.array([lv["phi"] for lv in st["levels"]])
    ax.plot(h, phi, "o-", color=DATA_COLOUR, lw=1.2, ms=6, label="solutions", zorder=3)
    for lv in st["levels"]:
        ax.annotate(
            lv["name"],
            (lv["h"], lv["phi"]),
            textcoords="offset points",
            xytext=(4, 6),
            fontsize="small",
            color=DATA_COLOUR,
        )
    res = st["results"][0]  # the finest triplet (or pair) sets the extrapolation
    ext, u, p = res["phi_ext21"], res["u_fine21"], res["p"]
    if ext is not None and res["kind"] != "oscillatory":
        hh = np.linspace(0.0, h.max(), 200)
        ax.plot(
            hh,
            ext + (phi[0] - ext) * (hh / h[0]) ** p,
            "--",
            color=FIT_COLOUR,
            lw=1,
            label=f"phi_ext + C h^p, p = {p:.3g}",
        )
    if ext is not None:
        ax.fill_between(
            [0.0, h[0]],
            ext - u,
            ext + u,
            color=BAND_COLOUR,
            alpha=0.35,
            lw=0,
            label="GCI band (Fs |phi_ext21 - phi1|)",
        )
        ax.errorbar(
            [0.0],
            [ext],
            yerr=[[u], [u]],
            fmt="D",
            color=EXT_COLOUR,
            capsize=6,
            zorder=4,
            clip_on=False,  # the marker sits on the axis at h = 0
            label=f"extrapolated {ext:.6g} \u00b1 {u:.3g} (GCI_fine21 = {_pct(res['gci_fine21'])})",
        )
    ax.set_xlim(0.0, 1.08 * h.max())
    ax.set_xlabel("representative cell size h (h = 0: extrapolated)")
    ax.set_ylabel(quantity)
    kind = f"two grids, assumed p = {p:g}" if res["method"] == METHOD_TWO else res["kind"]
    ax.set_title(
        f"{quantity}: grid convergence ({kind}" + (", no extrapolation)" if ext is None else ")")
    )
    ax.grid(alpha=0.3)
    ax.legend(fontsize="small", loc="best")


def plot_gci(results: Mapping, path: str | Path) -> Path:
    """PNG of phi against h, one subplot per quantity, with the extrapolated value at h = 0.

    The band drawn at h = 0 is phi_ext21 +- u_fine21 (u = GCI_fine21 |phi1|), which covers
    the fine-grid value. Written atomically; returns the path.
    """
    from matplotlib.backends.backend_agg import FigureCanvasAgg
    from matplotlib.figure import Figure

    studies = _by_quantity(results)
    fig = Figure(figsize=(7.5, 4.0 * len(studies)), layout="constrained")
    FigureCanvasAgg(fig)  # Agg canvas on this figure only: no pyplot state, no display
    axes = fig.subplots(len(studies), 1, squeeze=False)[:, 0]
    for ax, (q, st) in zip(axes, studies.items()):
        _plot_one(ax, q, st)
    path = Path(path)
    with atomic_file(path) as tmp:
        fig.savefig(tmp, format="png", dpi=110)
    return path


# --- domain sweep -----------------------------------------------------------------------


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
    row with the largest key; rel_change = (phi - phi_ref) / |phi_ref|. Returns {key_column,
    tol, reference, quantities: {name: {reference_value, variants, max_abs_rel_change,
    all_within}}}.
    """
    qs = [quantities] if isinstance(quantities, str) else list(quantities)
    tol = _positive_scalar(tol, "tol", "must be a positive relative tolerance, e.g. 0.01 for 1 %")
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
            for i, (r, v) in enumerate(zip(rows, values))
            if v is None or not math.isfinite(v)
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
    name_col = _name_column(rows)
    names = [r[name_col] for r in rows] if name_col else [None] * len(rows)
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
        rel = (v - v[ref]) / abs(v[ref])
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
