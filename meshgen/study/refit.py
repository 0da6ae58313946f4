"""The first cell re-fitted from a solver's wall distribution.

The solver reports, along the wall, one of y+ (``y_plus``), the friction velocity
(``u_tau`` [m/s]), the wall shear stress (``tau_w`` [Pa]) or the skin friction (``cf``)
(wall_data.py). With the first-cell height h_s of the mesh it ran on, that gives the
solver's y+ along the plate:

    y+ = d u_tau / nu_w,  u_tau = sqrt(tau_w / rho_w),  tau_w = 0.5 rho_e U^2 Cf,

with d = h_s at the first node or h_s / 2 at the first cell centre (``wall.y_plus_at``:
cell-centred finite-volume codes report the centre), nu_w and rho_w the wall viscosity
and density of the case (meshgen.physics.wall; the free stream's at Mach 0). For a given
flow, u_tau does not depend on the first cell, so y+ scales with d, and the height that
puts the solver's y+ at the target is

    h_new = h_s * target / y+_s,

with y+_s the solver's y+ at the reference station (``wall.reference_station``, by
default), or its largest or mean value over the judged stretch of the plate (x/L from
``OVER`` by default). The new case is the old one with ``wall.first_cell_height = h_new``
(and ``wall.y_plus`` unset); everything else is unchanged.
"""

from __future__ import annotations

from typing import TYPE_CHECKING

import numpy as np

from ..core.errors import InputError
from ..physics.treatment import TREATMENTS
from .wall_data import WallData

if TYPE_CHECKING:  # the command line reads OVER and WHERE without loading the planner
    from ..planning.plan import Plan

#: Where along the plate (x/L) the largest or mean y+ is taken: past the leading edge,
#: whose singularity the correlations and many solvers share, up to the trailing edge.
OVER = (0.1, 1.0)
#: Which field of the wall file is used when it has several.
PREFERENCE = ("y_plus", "u_tau", "tau_w", "cf")
WHERE = ("reference", "max", "mean")


def solver_y_plus(plan: Plan, wall: WallData, solved_height: float) -> tuple[np.ndarray, np.ndarray, str, list[str]]:
    """(x [m], the solver's y+ there, the field used, warnings) on the plate (0 < x <= L)."""
    f = plan.flow
    on = (wall.x > 0) & (wall.x <= f.length * (1 + 1e-9))
    if np.count_nonzero(on) < 2:
        raise InputError(f"{wall.source}: fewer than two stations on the plate (0 < x <= {f.length:g} m); "
                         "x is in metres from the leading edge")
    field = next((k for k in PREFERENCE if k in wall.columns), None)
    if field is None:
        raise InputError(f"{wall.source}: no y_plus, u_tau, tau_w or cf column (has: {', '.join(wall.columns)})")
    x, v = wall.x[on], wall.columns[field][on]
    centre = plan.case.wall.y_plus_at == "centre"
    wq = f.wall(x)
    warnings = []
    if field == "y_plus":
        return x, v, field, warnings
    if np.any(v < 0):
        warnings.append(f"{wall.source}: negative {field} at {np.count_nonzero(v < 0)} station(s) "
                        "(separated flow?); its magnitude is used")
        v = np.abs(v)
    if field == "u_tau":
        u_tau = v
    elif field == "tau_w":
        if not f.density_given:
            warnings.append("the case gives no density (flow.density or flow.fluid): tau_w is taken as "
                            "kinematic (density 1)")
        u_tau = np.sqrt(v / wq.rho_w)
    else:  # cf = tau_w / (0.5 rho_e U^2)
        u_tau = np.sqrt(0.5 * f.density * f.velocity**2 * v / wq.rho_w)
    return x, solved_height * (0.5 if centre else 1.0) * u_tau / wq.nu_w, field, warnings


def refit(plan: Plan, wall: WallData, *, where: str = "reference", target: float | None = None,
          solved_height: float | None = None, over: tuple[float, float] = OVER) -> dict:
    """The new first-cell height from the solver's y+ (see the module docstring).

    ``plan`` is the case's plan; ``solved_height`` the first-cell height [m] of the mesh
    the solver ran on (default: the plan's); ``target`` the y+ wanted (default: the case's
    target, else its wall treatment's). Returns the figures for the report and the plot.
    """
    if where not in WHERE:
        raise InputError(f"--at {where}: one of {', '.join(WHERE)}")
    w, f = plan.case.wall, plan.flow
    h_s = plan.first_cell_height if solved_height is None else float(solved_height)
    if target is None:
        from ..planning import sizing

        target = sizing.y_plus_target(w)
    if not (h_s > 0 and target > 0):
        raise InputError("the solved first-cell height and the target y+ must be positive")
    x, yp, field, warnings = solver_y_plus(plan, wall, h_s)
    s = x / f.length
    stretch = (s >= over[0] * (1 - 1e-12)) & (s <= over[1] * (1 + 1e-12))
    if not stretch.any():
        raise InputError(f"{wall.source}: no station in x/L = {over[0]:g} to {over[1]:g}")
    x_ref = w.reference_station * f.length
    if where == "reference":
        if not x[0] <= x_ref <= x[-1]:
            raise InputError(f"{wall.source}: covers x/L = {s[0]:.4g} to {s[-1]:.4g}, not the reference station "
                             f"x/L = {w.reference_station:g}; use --at max or --at mean")
        at = float(np.interp(x_ref, x, yp))
    else:
        at = float(yp[stretch].max() if where == "max" else yp[stretch].mean())
    h_new = h_s * target / at
    centre = w.y_plus_at == "centre"
    wq = plan.flow.wall(x)
    estimate = wq.u_tau / wq.nu_w * h_s * (0.5 if centre else 1.0)  # the a-priori y+ of the solved mesh
    ratio = yp / estimate
    return {
        "field": field, "y_plus_at": w.y_plus_at, "where": where, "target": float(target),
        "reference_station": w.reference_station, "over": list(over),
        "solved_first_cell_height": h_s, "first_cell_height": h_new, "case_first_cell_height": plan.first_cell_height,
        "y_plus_used": at,
        "x": x.tolist(), "y_plus_solver": yp.tolist(), "y_plus_estimate": estimate.tolist(),
        "y_plus_predicted": (yp * h_new / h_s).tolist(),
        "solver_over_estimate": [float(ratio[stretch].min()), float(ratio[stretch].max())],
        "predicted_range": [float((yp * h_new / h_s)[stretch].min()), float((yp * h_new / h_s)[stretch].max())],
        "band": list(TREATMENTS[w.treatment].band), "treatment": w.treatment,
        "warnings": warnings,
    }


def refitted_case_data(case, first_cell_height: float) -> tuple[dict, list[str]]:
    """The case's own values with ``wall.first_cell_height`` replaced; notes on what else had to go."""
    data = case.model_dump(mode="json", exclude_unset=True)
    wall = data.setdefault("wall", {})
    notes = []
    if wall.pop("y_plus", None) is not None:
        notes.append("wall.y_plus removed (the first-cell height replaces it)")
    wall["first_cell_height"] = float(f"{first_cell_height:.6g}")
    if "cells" in wall and "growth_ratio" in wall:
        wall.pop("growth_ratio")
        notes.append(f"wall.growth_ratio removed: with wall.cells = {wall['cells']} and the first-cell "
                     "height it is solved")
    return data, notes
