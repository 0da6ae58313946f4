"""The boundary-condition sheet: each group's role and the free-stream values a solver needs.

Turbulence inflow values come from the case's turbulence intensity Tu and viscosity ratio
r = nu_t / nu (common practice):

    k = 1.5 (Tu U)^2            [m2/s2]
    omega = k / nu_t            [1/s],   nu_t = r nu
    epsilon = C_mu k^2 / nu_t   [m2/s3], C_mu = 0.09
    nu_tilde = chi nu           [m2/s],  chi from nu_t = nu_tilde fv1(chi),
                                         fv1 = chi^3 / (chi^3 + cv1^3), cv1 = 7.1

(the last is the Spalart-Allmaras eddy viscosity, Spalart & Allmaras 1992/1994, inverted
so that nu_tilde gives the case's viscosity ratio). Each model's values are compared with
the published free-stream recommendations (NASA Turbulence Modeling Resource, TMR):
k-omega SST (Menter 1993, TMR SST page) U/L < omega < 10 U/L and 1e-5 U^2/Re_L < k <
0.1 U^2/Re_L; Spalart-Allmaras (TMR SA page) 3 nu <= nu_tilde <= 5 nu. Where a model's
values fall outside, the sheet proposes the nearest values inside, with the reason: the
ranges describe a quiet free stream whose turbulence neither decays much nor feeds the
boundary layer (what a flat-plate verification wants); a case that means real free-stream
turbulence (wind, a rough tunnel) keeps its own values and is told so. One viscosity ratio
cannot meet both models' ranges (SST's imply r below 0.1, SA's r of 0.21 to 1.3), so a
case usually sits in one and gets a proposal for the other.
"""

from __future__ import annotations

import numpy as np

from ..planning.plan import Plan
from .span_sheet import span_markdown, span_sheet

C_MU = 0.09
#: Spalart-Allmaras constant in fv1 = chi^3 / (chi^3 + cv1^3) (Spalart & Allmaras 1994).
CV1 = 7.1
#: Factor kept between a proposed value and the edge of its range (inside, not on it).
MARGIN = {"k": 2.0, "omega": 1.25}

#: What each role asks of the solver (plain trade words; the solver's own names differ).
ROLE_CONDITIONS = {
    "inlet": "velocity U along +x, turbulence values below; pressure extrapolated",
    "outlet": "static pressure p = 0 (gauge); velocity and turbulence extrapolated",
    "wall": "no-slip wall (u = 0); k = 0, omega from the wall treatment, nu_tilde = 0",
    "farfield": ("top boundary: streamwise velocity U fixed, vertical velocity free (or a "
                 "far-field / characteristic condition); the default height of 10 delta99 "
                 "assumes this displacement-flow condition"),
    "symmetry": "symmetry plane (slip): ahead of and behind the plate",
}
#: The spanwise faces of a 3-D mesh, per domain.span_boundary.
SPAN_CONDITIONS = {
    "symmetry": "spanwise face: symmetry plane (domain.span_boundary = symmetry), the same type in every format",
    "patch": "spanwise face: plain patch (domain.span_boundary = patch); your solver set-up gives its condition",
    "periodic": "spanwise face: periodic with the opposite one (domain.span_boundary = periodic; see Periodic span)",
}


def sa_chi(ratio: float) -> float:
    """chi = nu_tilde / nu whose Spalart-Allmaras eddy viscosity is ``ratio`` nu: the one
    positive root of chi^4 - r chi^3 - r cv1^3 = 0 (nu_t = nu_tilde fv1)."""
    roots = np.roots([1.0, -ratio, 0.0, 0.0, -ratio * CV1**3])
    real = roots[(np.abs(roots.imag) < 1e-9 * np.abs(roots).max()) & (roots.real > 0)].real
    return float(real.max())


def _clip(value: float, lo: float, hi: float, margin: float) -> float:
    return float(min(max(value, lo * margin), hi / margin))


def _proposals(k: float, omega: float, nu_tilde: float, u: float, nu: float, rec: dict) -> dict:
    """In-range values for each model whose case values fall outside its range, with why."""
    out = {}
    (k_lo, k_hi), (o_lo, o_hi), (n_lo, n_hi) = rec["k"], rec["omega"], rec["nu_tilde"]
    quiet = ("the TMR ranges describe a quiet free stream, whose turbulence neither decays much nor "
             "feeds the boundary layer (a flat-plate verification); keep the case's own values only "
             "if you mean real free-stream turbulence (wind, a rough tunnel)")
    if not (k_lo < k < k_hi and o_lo < omega < o_hi):
        kp = _clip(k, k_lo, k_hi, MARGIN["k"])
        op = _clip(omega, o_lo, o_hi, MARGIN["omega"])
        out["k-omega SST"] = {
            "k": kp, "omega": op, "turbulence_intensity": float(np.sqrt(kp / 1.5) / u),
            "viscosity_ratio": kp / (op * nu),
            "reason": (f"the case's Tu and nu_t/nu give k = {k:.4g} m2/s2 and omega = {omega:.4g} 1/s, not "
                       f"inside k {k_lo:.4g} to {k_hi:.4g} and omega {o_lo:.4g} to {o_hi:.4g} "
                       f"(Menter 1993, NASA TMR SST page); {quiet}"),
        }
    if not (n_lo <= nu_tilde * (1 + 1e-12) and nu_tilde <= n_hi * (1 + 1e-12)):
        npr = float(min(max(nu_tilde, n_lo), n_hi))
        out["Spalart-Allmaras"] = {
            "nu_tilde": npr, "viscosity_ratio": npr / nu * (npr / nu) ** 3 / ((npr / nu) ** 3 + CV1**3),
            "reason": (f"the case's nu_t/nu gives nu_tilde = {nu_tilde / nu:.3g} nu, outside 3 to 5 nu "
                       "(NASA TMR SA page, for a fully turbulent run); SA's usual free stream is "
                       "nu_tilde = 3 nu, i.e. nu_t/nu = 0.21"),
        }
    return out


def turbulence_values(plan: Plan) -> dict:
    f, c = plan.flow, plan.case.flow
    u, nu, re = f.velocity, f.nu, f.reynolds
    nu_t = c.viscosity_ratio * nu
    k = 1.5 * (c.turbulence_intensity * u) ** 2
    omega = k / nu_t
    eps = C_MU * k**2 / nu_t
    nu_tilde = sa_chi(c.viscosity_ratio) * nu
    notes = []
    rec = {"omega": [u / f.length, 10 * u / f.length], "k": [1e-5 * u**2 / re, 0.1 * u**2 / re],
           "nu_tilde": [3.0 * nu, 5.0 * nu]}
    if k == 0:
        notes.append("turbulence intensity 0 gives k = 0; most two-equation models need k > 0")
    return {
        "turbulence_intensity": c.turbulence_intensity,
        "viscosity_ratio": c.viscosity_ratio,
        "k": k,
        "omega": omega,
        "epsilon": eps,
        "nu_tilde": nu_tilde,
        "nu_t": nu_t,
        "recommended": {
            **rec,
            "sources": {
                "k-omega SST": "Menter (1993), as given on the NASA Turbulence Modeling Resource SST page",
                "Spalart-Allmaras": "NASA Turbulence Modeling Resource, Spalart-Allmaras page",
                "intensity form": "common practice: k = 1.5 (Tu U)^2, omega = k / nu_t",
                "nu_tilde": "Spalart & Allmaras (1994): nu_t = nu_tilde fv1, fv1 = chi^3 / (chi^3 + 7.1^3)",
            },
        },
        "proposed": {} if k == 0 else _proposals(k, omega, nu_tilde, u, nu, rec),
        "notes": notes,
    }


def wall_condition(plan: Plan) -> dict:
    """The wall's thermal condition, treatment and the layer the mesh was sized for."""
    f, w = plan.flow, plan.case.wall
    ref = f.wall(np.array([w.reference_station * f.length]))
    thermal = ("adiabatic (zero heat flux)" if w.temperature is None or not f.mach
               else f"isothermal, T_w = {w.temperature:g} K")
    return {
        "thermal": thermal if f.mach else "not needed (incompressible sizing)",
        "treatment": w.treatment,
        "regime": f.regime,
        "transition_x": None if f.transition_re is None else f.transition_re * f.nu / f.velocity,
        "mach": f.mach,
        "T_w": float(ref.t_w[0]), "rho_w": float(ref.rho_w[0]), "nu_w": float(ref.nu_w[0]),
        "u_tau": float(ref.u_tau[0]),
        "note": ("a transitional sizing needs a transition model or a laminar zone up to transition_x in the "
                 "solver; a fully turbulent RANS run does not reproduce it") if f.regime == "transitional" else None,
    }


def bc_sheet(plan: Plan) -> dict:
    """The sheet as plain JSON types: free stream, turbulence, one entry per group."""
    f = plan.flow
    groups = [(name, role) for name, role, _ in plan.group_layout()]
    if plan.z is not None:
        groups += [(plan.case.names.back, "back"), (plan.case.names.front, "front")]
    return {
        "case": plan.case.name,
        "free_stream": {
            "U": f.velocity, "p_gauge": 0.0, "rho": f.density, "nu": f.nu, "mu": f.density * f.nu,
            "Re_L": f.reynolds, "L": f.length,
            "rho_note": None if f.density_given else "no fluid or density given: rho = 1 (kinematic form)",
        },
        "turbulence": turbulence_values(plan),
        "wall": wall_condition(plan),
        "groups": [{"name": n, "role": r, "condition": ROLE_CONDITIONS.get(r) or
                    SPAN_CONDITIONS[plan.span_boundary]} for n, r in groups],
        "cells": plan.case.names.fluid,
    } | span_sheet(plan)


def bc_markdown(sheet: dict) -> str:
    fs, t = sheet["free_stream"], sheet["turbulence"]
    lines = [
        f"# Boundary conditions: {sheet['case']}",
        "",
        "| quantity | value |",
        "|---|---|",
        f"| U | {fs['U']:.6g} m/s |",
        f"| p (gauge) | {fs['p_gauge']:g} Pa |",
        f"| rho | {fs['rho']:.6g} kg/m3{' (' + fs['rho_note'] + ')' if fs['rho_note'] else ''} |",
        f"| nu | {fs['nu']:.6g} m2/s |",
        f"| Re_L | {fs['Re_L']:.6g} (L = {fs['L']:g} m) |",
        f"| Tu, nu_t/nu | {t['turbulence_intensity']:g}, {t['viscosity_ratio']:g} |",
        f"| k | {t['k']:.6g} m2/s2 |",
        f"| omega | {t['omega']:.6g} 1/s |",
        f"| epsilon | {t['epsilon']:.6g} m2/s3 |",
        f"| nu_tilde | {t['nu_tilde']:.6g} m2/s |",
        "",
        "| group | role | condition |",
        "|---|---|---|",
    ]
    lines += [f"| {g['name']} | {g['role']} | {g['condition']} |" for g in sheet["groups"]]
    wc = sheet["wall"]
    lines += ["", (f"Wall: {wc['treatment']} treatment, {wc['regime']} layer"
                   + (f" (transition at x = {wc['transition_x']:.4g} m)" if wc["transition_x"] is not None else "")
                   + f"; thermal condition: {wc['thermal']}; at the reference station T_w = {wc['T_w']:.5g} K, "
                   f"rho_w = {wc['rho_w']:.5g} kg/m3, nu_w = {wc['nu_w']:.5g} m2/s, u_tau = {wc['u_tau']:.5g} m/s.")]
    if wc["note"]:
        lines.append(f"- note: {wc['note']}")
    rec = t["recommended"]
    lines += [
        "",
        (f"Recommended ranges: omega {rec['omega'][0]:.4g} to {rec['omega'][1]:.4g} 1/s and "
        f"k {rec['k'][0]:.4g} to {rec['k'][1]:.4g} m2/s2 ({rec['sources']['k-omega SST']}); "
        f"nu_tilde 3 to 5 nu ({rec['sources']['Spalart-Allmaras']})."),
    ]
    for model, p in t.get("proposed", {}).items():
        values = ", ".join(f"{key} = {p[key]:.4g}" for key in ("k", "omega", "nu_tilde", "turbulence_intensity",
                                                              "viscosity_ratio") if key in p)
        lines.append(f"- proposed for {model}: {values}; {p['reason']}.")
    lines += [f"- note: {n}" for n in t["notes"]]
    lines += ["", "These are a-priori free-stream values; check them against your solver's guidance."]
    lines += span_markdown(sheet)
    return "\n".join(lines) + "\n"
