"""Fluid properties by name through CoolProp (no hand-written property tables).

CoolProp: Bell, Wronski, Quoilin, Lemort (2014), Ind. Eng. Chem. Res. 53(6) 2498-2508.
"""

from __future__ import annotations

import difflib
from dataclasses import dataclass

from ..core.errors import CaseError


@dataclass(frozen=True)
class FluidState:
    name: str
    temperature: float  # [K]
    pressure: float  # [Pa]
    density: float  # [kg/m3]
    viscosity: float  # dynamic [Pa s]

    @property
    def nu(self) -> float:
        """Kinematic viscosity [m2/s]."""
        return self.viscosity / self.density


def known_fluids() -> list[str]:
    from CoolProp.CoolProp import get_global_param_string

    return sorted(get_global_param_string("FluidsList").split(","))


def fluid_state(name: str, temperature: float, pressure: float) -> FluidState:
    """Density and viscosity of a pure fluid or CoolProp mixture name at T [K], p [Pa]."""
    from CoolProp.CoolProp import PropsSI

    try:
        rho = PropsSI("D", "T", temperature, "P", pressure, name)
        mu = PropsSI("V", "T", temperature, "P", pressure, name)
    except ValueError as exc:
        names = known_fluids()
        close = difflib.get_close_matches(name, names + [n.lower() for n in names], n=3)
        if any(n.lower() == name.lower() for n in names):
            raise CaseError(
                f"flow.fluid: CoolProp has no state for {name!r} at T = {temperature} K, "
                f"p = {pressure} Pa ({str(exc).splitlines()[0][:120]})"
            ) from None
        hint = f"; did you mean {', '.join(repr(c) for c in close)}?" if close else ""
        raise CaseError(
            f"flow.fluid: unknown fluid {name!r}{hint} (CoolProp names such as 'Air', 'Water', 'Nitrogen')"
        ) from None
    return FluidState(name, temperature, pressure, float(rho), float(mu))


def sound_properties(name: str, temperature: float, pressure: float) -> tuple[float, float, float]:
    """Speed of sound [m/s], ratio of specific heats [-] and Prandtl number [-] of a fluid
    (CoolProp), for the Mach number of a case given by fluid and velocity."""
    from CoolProp.CoolProp import PropsSI

    fluid_state(name, temperature, pressure)  # the same checks and messages for a bad name
    a = PropsSI("A", "T", temperature, "P", pressure, name)
    gamma = PropsSI("Cpmass", "T", temperature, "P", pressure, name) / PropsSI("Cvmass", "T", temperature, "P", pressure, name)
    pr = PropsSI("Prandtl", "T", temperature, "P", pressure, name)
    return float(a), float(gamma), float(pr)
