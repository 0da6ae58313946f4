"""The domain-size limit of a result: phi(H) = phi_inf + a H^(-q) fitted to a sweep.

With three or more variants of one domain key H (a height factor, an upstream length),
the model phi(H) = phi_inf + a H^(-q) is fitted by least squares: for a given decay order
q the model is linear in (phi_inf, a); with q fitted too, the residual of that linear fit
is minimised over q (variable projection: a log-spaced scan of ``Q_RANGE``, then golden-
section refinement). phi_inf is the value an unbounded domain would give; each variant's
difference from it says how far that domain is from the limit. Three variants fit any
q exactly, so the fit cannot show its own error then; a q at the end of the range means
no power-law decay fits the data, and the fit is marked unreliable.
"""

from __future__ import annotations

import math

import numpy as np

from ..core.errors import InputError

#: Decay orders searched when q is fitted.
Q_RANGE = (0.05, 20.0)
_GOLDEN = (math.sqrt(5.0) - 1.0) / 2.0


def _linear_fit(h: np.ndarray, phi: np.ndarray, q: float) -> tuple[float, float, float]:
    """(phi_inf, a, sum of squared residuals) of the fit with a given q."""
    with np.errstate(all="ignore"):  # H^-q past the float range: no fit at this q
        basis = np.column_stack([np.ones_like(h), h ** (-q)])
        if not np.all(np.isfinite(basis)):
            return math.nan, math.nan, math.inf
        try:
            coef, *_ = np.linalg.lstsq(basis, phi, rcond=None)
        except np.linalg.LinAlgError:
            return math.nan, math.nan, math.inf
        resid = phi - basis @ coef
        ss = float(resid @ resid)
    return float(coef[0]), float(coef[1]), ss if math.isfinite(ss) else math.inf


def fit_power_law(h, phi, q: float | None = None) -> dict:
    """Fit phi(H) = phi_inf + a H^(-q); ``q`` None fits it. Returns phi_inf, a, q, q_fitted,
    rms (of the residuals, in phi's units), reliable and warnings."""
    h = np.asarray(h, dtype=float)
    phi = np.asarray(phi, dtype=float)
    need = 3 if q is None else 2
    if h.size < need or h.size != phi.size:
        raise InputError(f"a fit of phi_inf + a H^-q needs {need} or more variants (got {h.size})")
    if not (np.all(np.isfinite(h)) and np.all(h > 0) and np.all(np.isfinite(phi))):
        raise InputError("the domain key values must be positive numbers and the results finite")
    if q is not None and not (math.isfinite(q) and q > 0):
        raise InputError(f"--fit-order {q}: a positive decay order, e.g. 1")
    # scale H so that H^-q stays near 1 for any q (conditioning); phi_inf does not change
    hs = h / h.max()
    warnings: list[str] = []
    if q is None:
        grid = np.geomspace(*Q_RANGE, 400)
        ss = np.array([_linear_fit(hs, phi, g)[2] for g in grid])  # 400 small fits: a scan
        k = int(np.argmin(ss))
        lo, hi = grid[max(k - 1, 0)], grid[min(k + 1, grid.size - 1)]
        for _ in range(100):  # golden section on the bracket
            a, b = hi - _GOLDEN * (hi - lo), lo + _GOLDEN * (hi - lo)
            if _linear_fit(hs, phi, a)[2] < _linear_fit(hs, phi, b)[2]:
                hi = b
            else:
                lo = a
        q_fit = 0.5 * (lo + hi)
        at_end = k in (0, grid.size - 1)
        if at_end:
            warnings.append(f"the fitted decay order q = {q_fit:.3g} sits at the end of the range searched "
                            f"({Q_RANGE[0]:g} to {Q_RANGE[1]:g}): no power-law decay fits these results")
        if h.size == 3:
            warnings.append("three variants fit phi_inf + a H^-q exactly: the fit cannot show its own error; "
                            "a fourth domain size would")
        q_used, fitted = q_fit, True
    else:
        q_used, fitted, at_end = float(q), False, False
    phi_inf, a_scaled, ss = _linear_fit(hs, phi, q_used)
    with np.errstate(all="ignore"):
        a = a_scaled * h.max() ** q_used  # back to the unscaled H
    if not (math.isfinite(phi_inf) and math.isfinite(a) and math.isfinite(ss)):
        raise InputError(f"the fit phi_inf + a H^-q overflows for key values from {h.min():g} to {h.max():g} "
                         f"(q = {q_used:.3g}); give the key in units that keep it nearer 1")
    rel = (phi - phi_inf) / abs(phi_inf) if phi_inf != 0 else np.full(phi.shape, np.nan)
    return {
        "phi_inf": phi_inf, "a": a, "q": q_used, "q_fitted": fitted,
        "rms": math.sqrt(ss / h.size), "reliable": not at_end,
        "differences": [{"key": float(x), "value": float(v), "diff": float(v - phi_inf),
                         "rel_diff": None if not np.isfinite(r) else float(r)}
                        for x, v, r in zip(h, phi, rel)],
        "warnings": warnings,
    }
