"""From a case's resolved flow to the physics: the wall-quantities flow, the y+ target and
definition, the statements of what the sizing assumes, and the physics warnings.

Everything that sizes or reports the wall (plan, y+ report, pictures, BC sheet) goes
through ``boundary_layer_flow`` and ``meshgen.physics.wall.wall_quantities``.
"""

from __future__ import annotations

from functools import partial

from ..physics import correlations as bl
from ..physics import transition as tr
from ..physics.treatment import TREATMENTS, plate_band_warnings, treatment_warnings
from ..physics.wall import BoundaryLayerFlow

#: Above this free-stream Mach number an incompressible sizing is questionable (common
#: practice: density changes reach about 5 % near M = 0.3).
INCOMPRESSIBLE_MACH = 0.3


def boundary_layer_flow(flow) -> BoundaryLayerFlow:
    """The physics description of a resolved ``FlowState``."""
    corr = bl.CORRELATIONS[flow.correlation]
    turbulent_law = flow.regime in ("turbulent", "transitional")
    return BoundaryLayerFlow(
        velocity=flow.velocity, nu=flow.nu, density=flow.density, regime=flow.regime,
        cf_inc=partial(bl.skin_friction, correlation=corr.name), theta_inc=tr.turbulent_re_theta(corr.cf) if turbulent_law else None,
        transition_re=flow.transition_re, mach=flow.mach or 0.0, temperature=flow.temperature,
        wall_temperature=flow.wall_temperature, gamma=flow.gamma, prandtl=flow.prandtl,
    )


def sized_by_y_plus(wall) -> bool:
    """Whether the first-cell height comes from a y+ target: not given as a height, nor
    solved from wall.cells with wall.growth_ratio (plan.wall_normal_nodes)."""
    if wall.first_cell_height is not None:
        return False
    given = wall.model_fields_set
    return not (wall.cells is not None and "growth_ratio" in given and "y_plus" not in given)


def y_plus_target(wall) -> float:
    """wall.y_plus, or the treatment's default target."""
    return wall.y_plus if wall.y_plus is not None else TREATMENTS[wall.treatment].default_y_plus


def assumptions(case, flow) -> list[str]:
    """What the sizing assumes, in words, for the plan and plan.json."""
    f, w = case.flow, case.wall
    out = []
    if flow.regime == "transitional":
        how = ("transition_reynolds" if f.transition_onset == "reynolds"
               else f"{f.transition_onset} from Tu = {f.turbulence_intensity:g} "
               f"({tr.ONSET_CORRELATIONS[f.transition_onset].source})")
        out.append(f"transitional: Blasius up to Re_x = {flow.transition_re:.4g} ({how}), then turbulent from a "
                   "virtual origin that keeps the momentum thickness continuous")
    elif flow.regime == "turbulent":
        out.append("turbulent from the leading edge, as a RANS model without a transition model computes"
                   + ("; flow.regime = \"auto\" chose it at Re_L >= 5e5" if f.regime == "auto" else "")
                   + "; flow.regime = \"transitional\" sizes a laminar run first")
    else:
        out.append("laminar (Blasius) over the whole plate"
                   + ("; flow.regime = \"auto\" chose it below Re_L = 5e5" if f.regime == "auto" else ""))
    if flow.mach:
        wall_t = "adiabatic wall" if flow.wall_temperature is None else f"wall at {flow.wall_temperature:g} K"
        out.append(f"compressible, M = {flow.mach:.3g}, T = {flow.temperature:g} K, {wall_t}: turbulent Cf by "
                   "van Driest II, laminar by Eckert's reference temperature, thickness by the reference "
                   "temperature method, viscosity by Sutherland's law for air, ideal gas")
    else:
        out.append("incompressible (set flow.mach to size a compressible layer)")
    t = TREATMENTS[w.treatment]
    where = "first node (y = first-cell height)" if w.y_plus_at == "node" else "first cell centre (y = half the first-cell height)"
    out.append(f"{t.description}; y+ measured at the {where}")
    return out


def physics_warnings(case, flow, y_plus_min: float, y_plus_max: float, treatment: bool = True,
                     plate_y_plus: tuple | None = None) -> list[str]:
    """Warnings of the flow and, when ``treatment``, of the first cell against the wall treatment's band
    (``plate_y_plus``: the estimated y+ along the plate as (x [m], y+), for the share above the band)."""
    out = []
    if not flow.mach and flow.mach_estimate is not None and flow.mach_estimate > INCOMPRESSIBLE_MACH:
        out.append(f"free-stream Mach number {flow.mach_estimate:.2f} is above {INCOMPRESSIBLE_MACH} but the case is "
                   f"sized as incompressible; set flow.mach = {flow.mach_estimate:.2f} to size it compressible")
    if flow.mach and case.flow.fluid not in (None, "Air", "air"):
        out.append("the compressible sizing uses Sutherland's law for air for the wall viscosity")
    if not flow.mach and case.wall.temperature is not None:
        out.append("wall.temperature is used only by a compressible sizing (flow.mach > 0); ignored")
    w = case.wall
    target = y_plus_target(w) if sized_by_y_plus(w) else None
    if treatment:
        laminar = flow.regime == "laminar"
        out += treatment_warnings(w.treatment, y_plus_min, y_plus_max, target, laminar=laminar)
        if plate_y_plus is not None and not laminar:
            out += plate_band_warnings(w.treatment, *plate_y_plus, target, w.reference_station)
    return out
