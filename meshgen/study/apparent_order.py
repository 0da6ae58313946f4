"""The apparent order of accuracy p of three grids (Celik et al. 2008).

Celik, Ghia, Roache, Freitas, Coleman and Raad (2008), "Procedure for Estimation and
Reporting of Uncertainty Due to Discretization in CFD Applications", J. Fluids Eng. 130(7)
078001: p ln r21 = |ln|eps32/eps21| + q(p)|, q(p) = ln((r21^p - s)/(r32^p - s)),
s = sign(eps32/eps21), solved by fixed-point iteration, with bisection on the same equation
when the iteration does not converge. ``meshgen.study.gci.three_grid`` is the caller.
"""

from __future__ import annotations

import math

P_MAX = 50.0  # no apparent order is searched above this: such data fit no power law


def _ln_rp_minus_s(x: float, s: float) -> float:
    """ln(e^x - s) for x = p ln r > 0, s = +-1, without overflow or cancellation."""
    if s > 0:
        return x + math.log(-math.expm1(-x))
    return x + math.log1p(math.exp(-x))


def apparent_order(r21: float, r32: float, ln_ratio: float, s: float, tol: float, max_iter: int):
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

