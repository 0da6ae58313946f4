"""Range checks of the free stream as resolved, not only as given.

The case model checks each key it is given; the Reynolds number, the speed and the
viscosity that follow from the others (Re_L = U L / nu, a viscosity from CoolProp) pass
through no field, so they are checked here against the same ranges (case/model.py):
without this, U = 1e4 m/s, L = 1e4 m and nu = 1e-300 m2/s meshed Re_L = 1e308 over a
domain 9e-58 m high, and a gas at 1 Pa brought a viscosity of 1.5 m2/s from CoolProp.
A case given by its Reynolds number alone is non-dimensional (U = 1, nu = L / Re_L):
only Re_L is checked there.
"""

from __future__ import annotations

import math

from ..case import Case
from ..case.model import NU_MAX, REYNOLDS_RANGE, VELOCITY_MAX
from ..core.errors import CaseError


def _inside(value: float, low_open: float, high: float) -> bool:
    return math.isfinite(value) and low_open < value <= high


def check_resolved_flow(case: Case, velocity: float, nu: float, re: float, fluid=None) -> None:
    """Raise CaseError (one line per problem) when a derived figure leaves its range;
    ``fluid`` is the FluidState CoolProp gave, if any."""
    f = case.flow
    problems = []
    if fluid is not None:
        where = f"{f.fluid} at T = {f.temperature:g} K, p = {f.pressure:g} Pa"
        if not _inside(fluid.nu, 0.0, NU_MAX):
            problems.append(f"flow.fluid: CoolProp gives {where} a kinematic viscosity of {fluid.nu:.3g} m2/s, "
                            f"outside flow.nu's range (0, {NU_MAX:g}] m2/s; check flow.temperature and "
                            "flow.pressure")
        if not _inside(fluid.density, 0.0, math.inf):
            problems.append(f"flow.fluid: CoolProp gives {where} a density of {fluid.density!r} kg/m3")
    if f.reynolds is not None and f.velocity is not None and not _inside(nu, 0.0, NU_MAX):
        problems.append(f"flow: the kinematic viscosity U L / Re_L = {nu:.3g} m2/s from flow.velocity, "
                        f"flow.length and flow.reynolds is outside flow.nu's range (0, {NU_MAX:g}] m2/s")
    if f.reynolds is not None and (f.nu is not None or f.fluid is not None) and f.velocity is None \
            and f.mach is None and not _inside(velocity, 0.0, VELOCITY_MAX):
        problems.append(f"flow: the free-stream speed Re_L nu / L = {velocity:.3g} m/s from flow.reynolds, "
                        f"the viscosity and flow.length is outside flow.velocity's range (0, {VELOCITY_MAX:g}] m/s")
    lo, hi = REYNOLDS_RANGE
    if f.reynolds is None and not (math.isfinite(re) and lo <= re <= hi):
        problems.append(f"flow: Re_L = U L / nu = {re:.3g} from the speed, flow.length and the viscosity is "
                        f"outside {lo:g} to {hi:.0e} (flow.reynolds's range)")
    if problems:
        raise CaseError(problems)
