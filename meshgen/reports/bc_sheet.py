"""The boundary-condition sheet: each group's role and the free-stream values a solver needs.

Turbulence inflow values come from the case's turbulence intensity Tu and viscosity ratio
nu_t / nu (common practice):

    k = 1.5 (Tu U)^2            [m2/s2]
    omega = k / (nu_t)          [1/s],   nu_t = ratio * nu
    epsilon = C_mu k^2 / nu_t   [m2/s3], C_mu = 0.09
    nu_tilde = 3 nu             [m2/s]   (Spalart-Allmaras, NASA TMR: 3 to 5 nu)

and are compared with the published recommendations for the k-omega SST model (Menter
1993, as given on the NASA Turbulence Modeling Resource SST page):
U/L < omega < 10 U/L and 1e-5 U^2/Re_L < k < 0.1 U^2/Re_L.
"""

from __future__ import annotations

import numpy as np

from ..planning.plan import Plan

C_MU = 0.09

#: What each role asks of the solver (plain trade words; the solver's own names differ).
ROLE_CONDITIONS = {
    "inlet": "velocity U along +x, turbulence values below; pressure extrapolated",
    "outlet": "static pressure p = 0 (gauge); velocity and turbulence extrapolated",
    "wall": "no-slip wall (u = 0); k = 0, omega from the wall treatment, nu_tilde = 0",
    "farfield": ("top boundary: streamwise velocity U fixed, vertical velocity free (or a "
                 "far-field / characteristic condition); the default height of 10 delta99 "
                 "assumes this displacement-flow condition"),
    "symmetry": "symmetry plane (slip): ahead of and behind the plate",
    "front": "spanwise face: empty (2-D, one layer) or symmetry / periodic (3-D)",
    "back": "spanwise face: empty (2-D, one layer) or symmetry / periodic (3-D)",
}


def turbulence_values(plan: Plan) -> dict:
    f, c = plan.flow, plan.case.flow
    u, nu, re = f.velocity, f.nu, f.reynolds
    nu_t = c.viscosity_ratio * nu
    k = 1.5 * (c.turbulence_intensity * u) ** 2
    omega = k / nu_t
    eps = C_MU * k**2 / nu_t
    notes = []
    omega_lo, omega_hi = u / f.length, 10 * u / f.length
    k_lo, k_hi = 1e-5 * u**2 / re, 0.1 * u**2 / re
    if k > 0 and not (omega_lo < omega < omega_hi):
        notes.append(f"omega = {omega:.4g} 1/s is outside the SST recommendation {omega_lo:.4g} to {omega_hi:.4g}")
    if not (k_lo < k < k_hi):
        notes.append(f"k = {k:.4g} m2/s2 is outside the SST recommendation {k_lo:.4g} to {k_hi:.4g}")
    if k == 0:
        notes.append("turbulence intensity 0 gives k = 0; most two-equation models need k > 0")
    return {
        "turbulence_intensity": c.turbulence_intensity,
        "viscosity_ratio": c.viscosity_ratio,
        "k": k,
        "omega": omega,
        "epsilon": eps,
        "nu_tilde": 3.0 * nu,
        "nu_t": nu_t,
        "recommended": {
            "omega": [omega_lo, omega_hi],
            "k": [k_lo, k_hi],
            "nu_tilde": [3.0 * nu, 5.0 * nu],
            "sources": {
                "k-omega SST": "Menter (1993), as given on the NASA Turbulence Modeling Resource SST page",
                "Spalart-Allmaras": "NASA Turbulence Modeling Resource, Spalart-Allmaras page",
                "intensity form": "common practice: k = 1.5 (Tu U)^2, omega = k / nu_t",
            },
        },
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
        "groups": [{"name": n, "role": r, "condition": ROLE_CONDITIONS[r]} for n, r in groups],
        "cells": plan.case.names.fluid,
    }


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
    lines += [f"- note: {n}" for n in t["notes"]]
    lines += ["", "These are a-priori free-stream values; check them against your solver's guidance."]
    return "\n".join(lines) + "\n"
