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

This module holds the methods only (``three_grid``, ``two_grid``, ``study``); the apparent
order is solved in ``apparent_order``, result tables are read by ``results`` and reported
by ``gci_report``.
"""

from __future__ import annotations

import math
from collections.abc import Sequence

import numpy as np

from ..core.errors import InputError
from .apparent_order import P_MAX, apparent_order

FS_THREE_GRID = 1.25  # Roache (1994, 1998); the value Celik et al. (2008) use
FS_TWO_GRID = 3.0  # Roache (1994, 1998) for two-grid studies (memory)
# Celik et al. (2008): "desirable that the grid refinement factor ... be greater than 1.3",
# a value based on experience (quoted from memory).
MIN_RATIO = 1.3
RATIO_MISMATCH = 0.05  # common practice: mention r21 and r32 differing by more than 5 %
P_LOW = 0.5  # below this the apparent order is far from any practical scheme's
P_HIGH_FACTOR = 2.0  # above this multiple of the formal order p is suspect
METHOD_THREE = "three-grid (Celik et al. 2008)"
METHOD_TWO = "two-grid, assumed order (Roache 1994)"


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

    p, method, iterations, note = apparent_order(
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

