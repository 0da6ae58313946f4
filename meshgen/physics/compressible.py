"""Compressible flat-plate boundary layer: wall temperature, skin friction, thickness.

Pure functions of numbers (numpy arrays in, arrays out). Temperatures [K], viscosities
[Pa s]; Reynolds numbers are based on the free-stream (edge) values, Re_x = rho_e U x / mu_e,
and Cf = tau_w / (0.5 rho_e U^2). The pressure is constant across the layer, so for an
ideal gas rho_w / rho_e = T_e / T_w.

Sources
-------
- Sutherland's law for air, mu = 1.458e-6 T^1.5 / (T + 110.4): U.S. Standard Atmosphere (1976).
- Recovery factor r = Pr^(1/2) laminar, Pr^(1/3) turbulent, T_aw = T_e (1 + r (gamma - 1)/2 M^2):
  Hirschel, Basics of Aerothermodynamics (2005) eq. 3.7 and the text beside it; White,
  Viscous Fluid Flow (from memory).
- Eckert's reference temperature T* = 0.28 T_e + 0.5 T_w + 0.22 T_aw (Eckert 1955, J.
  Aeronaut. Sci. 22, 585), as given by Hirschel (2005) eq. 7.62; the incompressible
  laminar laws are evaluated with the properties at T*.
- van Driest II (van Driest 1956, J. Aeronaut. Sci. 23, 1007), in the form of the NASA
  Turbulence Modeling Resource (TMR) high-Mach flat-plate validation page (which cites White,
  Viscous Fluid Flow, 1974, pp. 632 ff): Cf = Cf_inc(Re_theta F_Rtheta) / F_c with
  F_c = (T_aw/T_e - 1) / (asin A + asin B)^2, A = (2a^2 - b) / sqrt(b^2 + 4a^2),
  B = b / sqrt(b^2 + 4a^2), a = sqrt(r (gamma-1)/2 M^2 T_e/T_w), b = T_aw/T_w - 1,
  F_Rtheta = mu_e / mu_w. In terms of Re_x, F_Rx = F_Rtheta / F_c (the momentum integral
  dRe_theta/dRe_x = Cf/2 carries one into the other). Spalding & Chi (1964), J. Fluid Mech.
  18(1) 117-143, found it the most accurate of twenty theories (rms error 11 %).
- Compressible thickness by the reference-temperature method: the incompressible thickness
  law evaluated at Re_x* = Re_x (rho*/rho_e)(mu_e/mu*) (Hirschel 2005, eqs. 7.100 and
  7.104, there with mu ~ T^omega: delta_lam = delta_lam,inc (T*/T_e)^((1+omega)/2),
  delta_turb = delta_turb,inc (T*/T_e)^((1+omega)/5)).
"""

from __future__ import annotations

import numpy as np

ArrayLike = np.ndarray | float

#: Sutherland's law for air (U.S. Standard Atmosphere 1976): beta [kg/(m s K^0.5)], S [K].
SUTHERLAND_BETA = 1.458e-6
SUTHERLAND_S = 110.4
#: Air as an ideal gas near room temperature (common practice values).
AIR_GAMMA = 1.4
AIR_PRANDTL = 0.72


def sutherland_viscosity(t: ArrayLike) -> np.ndarray:
    """Dynamic viscosity of air [Pa s] at temperature ``t`` [K] (Sutherland's law)."""
    t = np.asarray(t, dtype=float)
    return SUTHERLAND_BETA * t**1.5 / (t + SUTHERLAND_S)


def recovery_factor(prandtl: float, turbulent: ArrayLike) -> np.ndarray:
    """r = Pr^(1/3) where ``turbulent`` is true, Pr^(1/2) where it is false [-]."""
    return np.where(np.asarray(turbulent, dtype=bool), prandtl ** (1.0 / 3.0), prandtl**0.5)


def adiabatic_wall_temperature(t_e: ArrayLike, mach: ArrayLike, r: ArrayLike,
                               gamma: float = AIR_GAMMA) -> np.ndarray:
    """T_aw = T_e (1 + r (gamma - 1)/2 M^2) [K]."""
    return np.asarray(t_e, dtype=float) * (1.0 + np.asarray(r) * 0.5 * (gamma - 1.0) * np.asarray(mach) ** 2)


def eckert_reference_temperature(t_e: ArrayLike, t_w: ArrayLike, t_aw: ArrayLike) -> np.ndarray:
    """Eckert's reference temperature T* = 0.28 T_e + 0.5 T_w + 0.22 T_aw [K]."""
    return 0.28 * np.asarray(t_e, dtype=float) + 0.5 * np.asarray(t_w) + 0.22 * np.asarray(t_aw)


def reference_reynolds_factor(t_e: ArrayLike, t_ref: ArrayLike, mu_e: ArrayLike, mu_ref: ArrayLike) -> np.ndarray:
    """Re_x* / Re_x = (rho*/rho_e)(mu_e/mu*) = (T_e/T*)(mu_e/mu*) [-] (ideal gas, same pressure)."""
    return np.asarray(t_e, dtype=float) / np.asarray(t_ref) * np.asarray(mu_e) / np.asarray(mu_ref)


def laminar_cf_reference(re_x: ArrayLike, re_factor: ArrayLike, t_e: ArrayLike, t_ref: ArrayLike) -> np.ndarray:
    """Edge-based laminar Cf by the reference-temperature method [-].

    The Blasius law at the reference state, Cf* = 0.664 / sqrt(Re_x*), converted to the
    edge dynamic pressure: Cf = Cf* rho*/rho_e = Cf* T_e / T*.
    """
    re_star = np.asarray(re_x, dtype=float) * np.asarray(re_factor)
    return 0.664 / np.sqrt(re_star) * np.asarray(t_e) / np.asarray(t_ref)


def van_driest_ii_factors(mach: ArrayLike, t_e: ArrayLike, t_w: ArrayLike, r: ArrayLike,
                          mu_e_over_mu_w: ArrayLike, gamma: float = AIR_GAMMA) -> tuple[np.ndarray, np.ndarray]:
    """(F_c, F_Rtheta) of the van Driest II transformation [-].

    Cf = Cf_inc(Re_theta F_Rtheta) / F_c = Cf_inc(Re_x F_Rx) / F_c with F_Rx = F_Rtheta / F_c.
    At M = 0 the transformation is the identity only for T_w = T_e; there F_c = 1 and
    F_Rtheta = mu_e / mu_w are returned (the limit M -> 0 of the adiabatic wall).
    """
    mach = np.asarray(mach, dtype=float)
    t_e = np.asarray(t_e, dtype=float)
    t_w = np.asarray(t_w, dtype=float)
    t_aw = adiabatic_wall_temperature(t_e, mach, r, gamma)
    a2 = np.asarray(r) * 0.5 * (gamma - 1.0) * mach**2 * t_e / t_w
    b = t_aw / t_w - 1.0
    q = np.sqrt(b**2 + 4.0 * a2)
    moving = mach > 0
    with np.errstate(invalid="ignore", divide="ignore"):
        big_a = np.where(moving, (2.0 * a2 - b) / q, 0.0)
        big_b = np.where(moving, b / q, 0.0)
        f_c = np.where(moving, (t_aw / t_e - 1.0) / (np.arcsin(big_a) + np.arcsin(big_b)) ** 2, 1.0)
    f_rtheta = np.asarray(mu_e_over_mu_w, dtype=float) * np.ones_like(f_c)
    return f_c, f_rtheta


def reference_thickness_factor(re_factor: ArrayLike, exponent: float) -> np.ndarray:
    """delta_comp / delta_inc = (Re_x / Re_x*)^exponent for a thickness law delta/x ~
    Re_x^-exponent (1/2 laminar, 1/5 turbulent) evaluated at Re_x* [-]."""
    return np.asarray(re_factor, dtype=float) ** -exponent
