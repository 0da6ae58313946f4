"""Wall quantities along the plate for any regime and Mach number: one function for all.

``wall_quantities(x, flow)`` gives Cf, tau_w, u_tau, T_w, rho_w, nu_w and delta99 at the
stations ``x`` [m] for a ``BoundaryLayerFlow`` (laminar, turbulent from the leading edge,
or transitional; incompressible or compressible). The plan, the y+ report, the pictures,
the boundary-condition sheet and scale-resolving sizing all read it, so every figure
follows the same composite layer.

Definitions: Re_x = U x / nu_e; Cf = tau_w / (0.5 rho_e U^2); u_tau = sqrt(tau_w / rho_w);
y+ = y u_tau / nu_w (wall density and viscosity, NASA TMR flat-plate pages). At Mach 0 the
wall state equals the free stream and every figure reduces exactly to the incompressible
formulas (tests/physics/test_wall.py checks equality, not closeness).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from . import compressible as comp
from . import transition as tr

#: Blasius delta99 coefficient (Howarth 1938 via Schlichting) and the 1/7-law coefficient.
LAMINAR_DELTA = 4.91
TURBULENT_DELTA = 0.37


@dataclass(frozen=True)
class BoundaryLayerFlow:
    """Free stream and wall condition: U [m/s], nu_e [m2/s], rho_e [kg/m3], T_e [K].

    ``regime`` is 'laminar', 'turbulent' (from the leading edge) or 'transitional' (laminar
    up to Re_x = ``transition_re``); ``cf_inc`` the incompressible turbulent law Cf(Re_x)
    and ``theta_inc`` its Re_theta(Re_x) (needed for the transitional virtual origin).
    ``mach`` 0 sizes incompressible; above, ``wall_temperature`` None means adiabatic.
    Viscosity varies with temperature by Sutherland's law for air.
    """

    velocity: float
    nu: float
    density: float
    regime: str
    cf_inc: object  # Callable[[np.ndarray], np.ndarray]
    theta_inc: object | None = None
    transition_re: float | None = None
    mach: float = 0.0
    temperature: float = 288.15
    wall_temperature: float | None = None
    gamma: float = comp.AIR_GAMMA
    prandtl: float = comp.AIR_PRANDTL


@dataclass(frozen=True, eq=False)
class WallQuantities:
    """Arrays along the wall (same shape as ``x``); SI units."""

    x: np.ndarray
    re_x: np.ndarray
    turbulent: np.ndarray  # bool: the station lies in the turbulent part
    cf: np.ndarray
    tau_w: np.ndarray  # [Pa] (rho_e as given; rho_e = 1 for kinematic cases)
    u_tau: np.ndarray  # [m/s]
    t_w: np.ndarray  # [K]
    rho_w: np.ndarray  # [kg/m3]
    nu_w: np.ndarray  # [m2/s]
    delta99: np.ndarray  # [m]
    transition_x: float | None  # [m], transitional only
    virtual_origin_x: float | None  # [m], transitional only


@dataclass(frozen=True)
class _Regime:
    """Per-regime constants of the compressible mapping (all 1 at Mach 0)."""

    t_w: float
    re_star: float  # Re_x* / Re_x at the reference temperature (thickness, laminar Cf)
    cf_scale: float  # laminar: T_e/T*; turbulent: 1 / F_c
    re_scale: float  # turbulent: F_Rx = F_Rtheta / F_c; laminar: Re_x* / Re_x
    theta_scale: float  # Re_theta multiplier: laminar T_e/T* / sqrt(Re*/Re); turbulent 1/F_Rtheta


def _regime_constants(flow: BoundaryLayerFlow, turbulent: bool) -> _Regime:
    if flow.mach == 0:
        return _Regime(flow.temperature, 1.0, 1.0, 1.0, 1.0)
    t_e = flow.temperature
    r = float(comp.recovery_factor(flow.prandtl, turbulent))
    t_aw = float(comp.adiabatic_wall_temperature(t_e, flow.mach, r, flow.gamma))
    t_w = t_aw if flow.wall_temperature is None else flow.wall_temperature
    t_ref = float(comp.eckert_reference_temperature(t_e, t_w, t_aw))
    mu_e = comp.sutherland_viscosity(t_e)
    re_star = float(comp.reference_reynolds_factor(t_e, t_ref, mu_e, comp.sutherland_viscosity(t_ref)))
    if not turbulent:
        c = t_e / t_ref
        return _Regime(t_w, re_star, c, re_star, c / np.sqrt(re_star))
    f_c, f_rt = comp.van_driest_ii_factors(flow.mach, t_e, t_w, r, mu_e / comp.sutherland_viscosity(t_w), flow.gamma)
    f_c, f_rt = float(f_c), float(f_rt)
    return _Regime(t_w, re_star, 1.0 / f_c, f_rt / f_c, 1.0 / f_rt)


def _laminar(flow: BoundaryLayerFlow, k: _Regime):
    def cf(re):
        return 0.664 / np.sqrt(re * k.re_scale) * k.cf_scale

    def theta(re):  # 0.5 * integral of cf: exact for the Blasius form
        return tr.BLASIUS_THETA * np.sqrt(re) * k.theta_scale

    def delta(xs, re):  # same operation order as the incompressible sizing: exact at Mach 0
        return LAMINAR_DELTA * xs / np.sqrt(re * k.re_star)

    return cf, theta, delta


def _turbulent(flow: BoundaryLayerFlow, k: _Regime):
    def cf(re):
        return flow.cf_inc(re * k.re_scale) * k.cf_scale

    def theta(re):  # Re_theta = Re_theta,inc(Re_x F_Rx) / F_Rtheta
        return flow.theta_inc(re * k.re_scale) * k.theta_scale

    def delta(xs, re):
        return TURBULENT_DELTA * xs * (re * k.re_star) ** -0.2

    return cf, theta, delta


def wall_quantities(x: np.ndarray | float, flow: BoundaryLayerFlow) -> WallQuantities:
    """Wall quantities at the stations ``x`` [m] (x > 0; Cf is singular at the leading edge)."""
    x = np.asarray(x, dtype=float)
    u, nu = flow.velocity, flow.nu
    re = x * u / nu
    lam_k = _regime_constants(flow, turbulent=False)
    turb_k = _regime_constants(flow, turbulent=True)
    x_tr = x0 = None
    if flow.regime == "laminar":
        turbulent = np.zeros(x.shape, dtype=bool)
        cf_l, _, d_l = _laminar(flow, lam_k)
        cf, delta = cf_l(re), d_l(x, re)
    elif flow.regime == "turbulent":
        turbulent = np.ones(x.shape, dtype=bool)
        cf_t, _, d_t = _turbulent(flow, turb_k)
        cf, delta = cf_t(re), d_t(x, re)
    elif flow.regime == "transitional":
        if flow.transition_re is None or flow.theta_inc is None:
            raise ValueError("a transitional flow needs transition_re and theta_inc")
        cf_l, th_l, d_l = _laminar(flow, lam_k)
        cf_t, th_t, d_t = _turbulent(flow, turb_k)
        re_tr = flow.transition_re
        re0 = float(tr.virtual_origin(re_tr, th_l, th_t))
        x_tr, x0 = re_tr * nu / u, re0 * nu / u
        turbulent = re >= re_tr
        cf = tr.composite(re, re_tr, re0, cf_l, cf_t)
        # after transition: the turbulent thickness law in the virtual-origin coordinate x - x0
        re_t = np.where(turbulent, re - re0, re_tr - re0)
        x_t = np.where(turbulent, x - x0, x_tr - x0)
        delta = np.where(turbulent, d_t(x_t, re_t), d_l(x, re))
    else:
        raise ValueError(f"regime must be laminar, turbulent or transitional, not {flow.regime!r}")
    t_w = np.where(turbulent, turb_k.t_w, lam_k.t_w)
    rho_ratio = t_w / flow.temperature  # rho_e / rho_w (ideal gas, constant pressure): 1 at Mach 0
    mu_ratio = comp.sutherland_viscosity(t_w) / comp.sutherland_viscosity(flow.temperature)  # mu_w / mu_e
    u_tau = u * np.sqrt(cf / 2.0 * rho_ratio)
    return WallQuantities(
        x=x, re_x=re, turbulent=turbulent, cf=cf, tau_w=0.5 * flow.density * u**2 * cf, u_tau=u_tau,
        t_w=t_w, rho_w=flow.density / rho_ratio, nu_w=nu * mu_ratio * rho_ratio, delta99=delta,
        transition_x=x_tr, virtual_origin_x=x0,
    )


def first_cell_height(y_plus: float, wq: WallQuantities, at_centre: bool = False) -> np.ndarray:
    """Wall spacing dy1 [m] giving ``y_plus`` where ``wq`` was evaluated: at the first node
    (y = dy1) or, ``at_centre``, at the first cell centre (y = dy1 / 2)."""
    dy = y_plus * wq.nu_w / wq.u_tau
    return 2.0 * dy if at_centre else dy


def y_plus(first_cell: np.ndarray | float, wq: WallQuantities, at_centre: bool = False) -> np.ndarray:
    """y+ of a first cell of height ``first_cell`` [m] at its first node or its centre."""
    y = np.asarray(first_cell, dtype=float) * (0.5 if at_centre else 1.0)
    return y * wq.u_tau / wq.nu_w
