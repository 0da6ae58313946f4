"""Laminar-turbulent transition on a flat plate at zero pressure gradient.

Pure functions of Reynolds numbers (numpy arrays in, arrays out). Lengths enter only as
Reynolds numbers Re_x = U x / nu, so a caller multiplies by nu / U to get metres.

The composite layer used for sizing: laminar (Blasius) up to Re_x,tr; after it a turbulent
layer that starts from a virtual origin Re_x0 chosen so that its momentum thickness at the
transition point equals the laminar one (the textbook construction, e.g. White, Viscous
Fluid Flow; from memory). Downstream the turbulent laws are evaluated at Re_(x - x0).

Sources
-------
- Blasius momentum thickness theta = 0.664 x / sqrt(Re_x): Howarth (1938), as tabulated in
  Schlichting, Boundary-Layer Theory (0.66411; 0.664 keeps it the exact integral of the
  sizing's Cf = 0.664 / sqrt(Re_x)).
- Transition onset from the free-stream turbulence intensity Tu (zero pressure gradient):
  Abu-Ghannam & Shaw (1980), J. Mech. Eng. Sci. 22(5) 213-228: Re_theta,s = 163 +
  exp(F(lambda) - F(lambda) Tu / 6.91) with F(0) = 6.91, so 163 + exp(6.91 - Tu[%]). The
  paper itself was not read here; the zero-gradient form agrees with independent
  reproductions of it. Mayle (1991), J. Turbomach. 113(4) 509-537: Re_theta,s =
  400 Tu[%]^(-5/8) (from memory).
- Engineering default Re_x,tr = 5e5 (convention, e.g. Incropera; from memory).
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass

import numpy as np

#: Blasius momentum-thickness coefficient: Re_theta = 0.664 sqrt(Re_x).
BLASIUS_THETA = 0.664
#: Engineering convention for the end of laminar flow on a smooth plate [-].
DEFAULT_TRANSITION_RE = 5.0e5
#: Range of transition Reynolds numbers the construction is used for [-].
TRANSITION_RE_RANGE = (1.0e4, 1.0e8)

ArrayLike = np.ndarray | float


def laminar_re_theta(re_x: ArrayLike) -> np.ndarray:
    """Momentum-thickness Reynolds number of the Blasius layer, 0.664 sqrt(Re_x) [-]."""
    return BLASIUS_THETA * np.sqrt(np.asarray(re_x, dtype=float))


def abu_ghannam_shaw(tu_percent: ArrayLike) -> np.ndarray:
    """Re_theta at the start of transition, zero pressure gradient: 163 + exp(6.91 - Tu[%])."""
    return 163.0 + np.exp(6.91 - np.asarray(tu_percent, dtype=float))


def mayle(tu_percent: ArrayLike) -> np.ndarray:
    """Re_theta at the start of transition (bypass): 400 Tu[%]^(-5/8) (Mayle 1991)."""
    return 400.0 * np.asarray(tu_percent, dtype=float) ** -0.625


@dataclass(frozen=True)
class OnsetCorrelation:
    name: str
    formula: str
    re_theta: Callable[[np.ndarray], np.ndarray]
    tu_range: tuple[float, float]  # Tu [%] the correlation was fitted over
    source: str


ONSET_CORRELATIONS: dict[str, OnsetCorrelation] = {
    c.name: c
    for c in (
        OnsetCorrelation(
            "abu-ghannam-shaw", "Re_theta = 163 + exp(6.91 - Tu[%])", abu_ghannam_shaw, (0.0, 10.0),
            "Abu-Ghannam & Shaw (1980), J. Mech. Eng. Sci. 22(5) 213-228, zero pressure gradient",
        ),
        OnsetCorrelation(
            "mayle", "Re_theta = 400 Tu[%]^-5/8", mayle, (0.5, 10.0),
            "Mayle (1991), J. Turbomach. 113(4) 509-537 (from memory)",
        ),
    )
}


def transition_re_from_intensity(tu: ArrayLike, correlation: str = "abu-ghannam-shaw") -> np.ndarray:
    """Re_x at the start of transition from the free-stream turbulence intensity ``tu``
    (a fraction, 0.01 = 1 %): the onset Re_theta of the correlation, converted to Re_x
    through the Blasius momentum thickness, Re_x = (Re_theta / 0.664)^2."""
    re_theta = ONSET_CORRELATIONS[correlation].re_theta(100.0 * np.asarray(tu, dtype=float))
    return (re_theta / BLASIUS_THETA) ** 2


#: Where the turbulent momentum thickness is anchored: Re_x = 1e4, where every turbulent
#: law in the table is finite and positive.
THETA_ANCHOR_RE = 1.0e4
_GAUSS_S, _GAUSS_W = np.polynomial.legendre.leggauss(64)


def turbulent_re_theta(cf: Callable[[np.ndarray], np.ndarray]) -> Callable[[np.ndarray], np.ndarray]:
    """Re_theta(Re_x) of a layer turbulent from its origin under the local law ``cf``.

    The momentum integral at zero pressure gradient, d Re_theta / d Re_x = Cf / 2, is
    integrated exactly (64-point Gauss-Legendre in ln Re_x) from the anchor Re_x = 1e4,
    where the layer is given Prandtl's momentum thickness 0.037 Re_x^0.8 (the integral of
    0.0592 Re_x^-0.2 from the origin: the logarithmic laws are singular near Re_x = 0, so
    their own integral from the origin does not exist). The anchor only shifts a virtual
    origin; for Prandtl's law the result is its closed form.
    """

    def re_theta(re_x: np.ndarray) -> np.ndarray:
        re_x = np.asarray(re_x, dtype=float)
        a, b = np.log(THETA_ANCHOR_RE), np.log(re_x)[..., None]
        s = 0.5 * (b - a) * _GAUSS_S + 0.5 * (b + a)
        integral = 0.5 * (b[..., 0] - a) * np.sum(_GAUSS_W * cf(np.exp(s)) * np.exp(s), axis=-1)
        return 0.037 * THETA_ANCHOR_RE**0.8 + 0.5 * integral

    return re_theta


def virtual_origin(re_tr: ArrayLike, laminar_theta: Callable[[np.ndarray], np.ndarray],
                   turbulent_theta: Callable[[np.ndarray], np.ndarray]) -> np.ndarray:
    """Re_x0 of the turbulent layer's virtual origin behind a transition at ``re_tr``.

    Solves turbulent_theta(re_tr - re_x0) = laminar_theta(re_tr) for re_x0 (both functions
    give Re_theta of a layer from its own origin and increase with Re_x) by bisection in
    log space, vectorised over ``re_tr``. Raises ValueError when no solution lies in
    (1e3, 1e3 re_tr).
    """
    re_tr = np.asarray(re_tr, dtype=float)
    target = laminar_theta(re_tr)
    lo = np.full_like(re_tr, np.log(1e3))
    hi = np.log(1e3 * re_tr)
    with np.errstate(invalid="ignore", divide="ignore"):
        if np.any(~(turbulent_theta(np.exp(lo)) < target)) or np.any(~(turbulent_theta(np.exp(hi)) > target)):
            raise ValueError(f"no virtual origin for Re_x,tr = {re_tr}: the turbulent law does not bracket "
                             "the laminar momentum thickness")
        for _ in range(200):  # interval halves each pass: 200 passes reach double precision
            mid = 0.5 * (lo + hi)
            below = turbulent_theta(np.exp(mid)) < target
            lo = np.where(below, mid, lo)
            hi = np.where(below, hi, mid)
    return re_tr - np.exp(0.5 * (lo + hi))


def composite(re_x: ArrayLike, re_tr: float, re_x0: float,
              laminar: Callable[[np.ndarray], np.ndarray],
              turbulent: Callable[[np.ndarray], np.ndarray]) -> np.ndarray:
    """A quantity of the composite layer: ``laminar(Re_x)`` below ``re_tr``, and
    ``turbulent(Re_x - re_x0)`` at and after it."""
    re_x = np.asarray(re_x, dtype=float)
    flat = re_x.reshape(-1)
    lam = flat < re_tr
    out = np.empty_like(flat)
    out[lam] = laminar(flat[lam])
    out[~lam] = turbulent(flat[~lam] - re_x0)
    return out.reshape(re_x.shape)
