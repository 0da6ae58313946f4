"""The Plan: node distributions of every block and the figures derived from them.

``make_plan(case)`` resolves the flow (Reynolds number, regime, correlation), sizes the
boundary layer, and builds the 1-D node arrays: one wall-normal array ``y`` shared by all
blocks (so the blocks conform) and one streamwise array ``x`` through the upstream, plate
and wake blocks, with matching spacing at the block interfaces. Coarser members of a
refinement family sample the same mappings (refine.py).
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from ..case import Case
from ..case.model import MIN_SPACING
from ..core.errors import CaseError
from ..physics import compressible as comp
from ..physics import correlations as bl
from ..physics import transition as tr
from ..physics.fluids import fluid_state, sound_properties
from ..physics.resolution import KINDS
from ..physics.treatment import TREATMENTS
from ..physics.wall import WallQuantities, first_cell_height, wall_quantities, y_plus
from . import resolved, sizing
from .flow_ranges import check_resolved_flow
from .layout import Block, Patch
from .spacing import capped_geometric, geometric_nodes, solve_geometric
from .streamwise import edge_cap_notes, streamwise_nodes
from .summary import PlanDisplay
from .wall_units import resolution_figures

#: Stations x/L where the plan counts cells inside delta99.
BL_STATIONS = (0.1, 0.5, 1.0)


@dataclass(frozen=True)
class FlowState:
    """Resolved free stream: U [m/s], nu [m2/s], rho [kg/m3], L [m], Re_L [-]."""

    velocity: float
    nu: float
    density: float
    density_given: bool
    length: float
    reynolds: float
    regime: str  # laminar, turbulent or transitional
    correlation: str  # laminar: blasius; otherwise the turbulent law
    transition_re: float | None = None  # Re_x at transition (transitional)
    mach: float | None = None  # None or 0: incompressible sizing
    temperature: float = 288.15  # free-stream static temperature [K]
    wall_temperature: float | None = None  # None: adiabatic (compressible only)
    gamma: float = comp.AIR_GAMMA
    prandtl: float = comp.AIR_PRANDTL
    mach_estimate: float | None = None  # U / a from the fluid, when known

    def wall(self, x: np.ndarray | float) -> WallQuantities:
        """Wall quantities at the stations ``x`` [m] (meshgen.physics.wall)."""
        return wall_quantities(x, sizing.boundary_layer_flow(self))


@dataclass(frozen=True, eq=False, repr=False)
class Plan(PlanDisplay):
    """The sizing of one mesh: node arrays x, y (z) [m], blocks, free stream and derived
    figures (``to_dict``); ``make_plan(case)`` builds it, ``coarsen`` a family level."""

    case: Case
    flow: FlowState
    x: np.ndarray  # streamwise nodes [m], plate from 0 to L
    y: np.ndarray  # wall-normal nodes [m], 0 to H
    z: np.ndarray | None  # spanwise nodes [m] or None in 2-D
    blocks: tuple[Block, ...]
    delta99_end: float
    domain_height: float
    setup_warnings: tuple[str, ...] = field(default=())  # from the flow and the domain
    level: int = 0  # 0 = the case as given; k = coarsened k times in a family
    resolution: resolved.Sizing | None = None  # scale-resolving targets (None: RANS)

    @property
    def warnings(self) -> tuple[str, ...]:
        """Warnings of the case and of this plan's own resolution (per family level)."""
        xs, yp = self.y_plus_along_plate()
        # a wall-modelled LES sizes its first cell on delta, not on a y+ band
        treatment = self.resolution is None or KINDS[self.resolution.kind].first_y_plus is not None
        out = self.outside_correlation()
        outside = () if out is None else (
            (f"{out['stations']} plate nodes up to x/L = {out['x_over_l_up_to']:.3g} are outside the range of "
             f"the {out['correlation']} correlation (it has no value at Re_x <= {out['re_x_below']:.3g}): no "
             "y+ estimate there; the y+ figures cover the rest of the plate"),)
        return (self.setup_warnings + resolution_warnings(self.y, self.delta99_end) + outside
                + tuple(sizing.physics_warnings(self.case, self.flow, float(yp.min()), float(yp.max()), treatment,
                                                plate_y_plus=(xs, yp))))

    @property
    def dim(self) -> int:
        return 2 if self.z is None else 3

    @property
    def span_boundary(self) -> str:
        """What the spanwise sides are: domain.span_boundary, or by default periodic for a
        scale-resolving plan and symmetry otherwise."""
        d = self.case.domain
        if "span_boundary" in d.model_fields_set or self.resolution is None:
            return d.span_boundary
        return "periodic"

    @property
    def node_count(self) -> int:
        n = self.x.size * self.y.size
        return n if self.z is None else n * self.z.size

    @property
    def cell_count(self) -> int:
        n = (self.x.size - 1) * (self.y.size - 1)
        return n if self.z is None else n * (self.z.size - 1)

    @property
    def first_cell_height(self) -> float:
        return float(self.y[1] - self.y[0])

    @property
    def growth_ratio(self) -> float:
        d = np.diff(self.y)
        return float(d[1] / d[0]) if d.size > 1 else 1.0

    def block_cells(self) -> dict[str, int]:
        ny = self.y.size - 1
        nz = 1 if self.z is None else self.z.size - 1
        return {b.name: (b.i1 - b.i0) * ny * nz for b in self.blocks}

    def group_layout(self) -> list[tuple[str, str, tuple[Patch, ...]]]:
        """(name, role, patches) of every 2-D boundary group, from the blocks present."""
        n = self.case.names
        last = self.x.size - 1
        plate = self.block("plate")
        sym = tuple(
            Patch("jmin", b.i0, b.i1) for b in self.blocks if b.name in ("upstream", "wake")
        )
        groups = [
            (n.inlet, "inlet", (Patch("imin"),)),
            (n.outlet, "outlet", (Patch("imax"),)),
            (n.wall, "wall", (Patch("jmin", plate.i0, plate.i1),)),
            (n.farfield, "farfield", (Patch("jmax", 0, last),)),
        ]
        if sym:
            groups.append((n.symmetry, "symmetry", sym))
        return groups

    def block(self, name: str) -> Block:
        return next(b for b in self.blocks if b.name == name)

    def plate_nodes(self) -> np.ndarray:
        p = self.block("plate")
        return self.x[p.i0 : p.i1 + 1]

    def y_plus_along_plate(self) -> tuple[np.ndarray, np.ndarray]:
        """x [m] (x > 0) and the estimated first-cell y+ there (at the node or the cell
        centre, as wall.y_plus_at says). Plate nodes where the correlation has no value
        are left out (``outside_correlation``)."""
        xs = self.plate_nodes()[1:]
        yp = y_plus(self.first_cell_height, self.flow.wall(xs), self.case.wall.y_plus_at == "centre")
        ok = np.isfinite(yp)
        return xs[ok], yp[ok]

    def outside_correlation(self) -> dict | None:
        """The plate nodes (x > 0) where the skin-friction law has no value, or None."""
        xs = self.plate_nodes()[1:]
        bad = ~np.isfinite(self.flow.wall(xs).cf)
        if not bad.any():
            return None
        corr = bl.CORRELATIONS[self.flow.correlation]
        return {"stations": int(bad.sum()), "x_over_l_up_to": float(xs[bad].max() / self.flow.length),
                "correlation": corr.name, "re_x_below": corr.defined_from}

    def cells_in_delta99(self, stations: tuple[float, ...] = BL_STATIONS) -> dict[str, int]:
        """Wall-normal cells wholly inside delta99 at the plate node nearest each x/L (as the report)."""
        f = self.flow
        plate = self.plate_nodes()
        nearest = plate[np.argmin(np.abs(plate[None, :] - np.asarray(stations)[:, None] * f.length), axis=1)]
        d = np.zeros_like(nearest)  # no layer at the leading edge (a coarse plate's nearest node)
        ahead = nearest > 0
        d[ahead] = f.wall(nearest[ahead]).delta99
        counts = np.searchsorted(self.y, d, side="right") - 1
        return {f"{s:g}": int(c) for s, c in zip(stations, counts)}

    def max_edge_ratio(self) -> float:
        """Largest edge ratio of a cell (the report's; in a tensor grid every dx meets every dy)."""
        dx, dy = np.diff(self.x), np.diff(self.y)
        return float(max(dx.max() / dy.min(), dy.max() / dx.min()))

    def to_dict(self) -> dict:
        """The figures for people and for plan.json (plain JSON types only)."""
        f = self.flow
        xs, yp = self.y_plus_along_plate()
        corr = bl.CORRELATIONS[f.correlation]
        w = self.case.wall
        ref = f.wall(np.array([w.reference_station * f.length]))
        return {
            "case": self.case.name,
            "level": self.level,
            "dimension": self.dim,
            "reynolds": f.reynolds,
            "regime": f.regime,
            "correlation": {"name": corr.name, "formula": corr.formula, "source": corr.source},
            "velocity": f.velocity,
            "nu": f.nu,
            "density": f.density,
            "length": f.length,
            "delta99_end": self.delta99_end,
            "domain_height": self.domain_height,
            "first_cell_height": self.first_cell_height,
            "growth_ratio": self.growth_ratio,
            "y_plus_target": sizing.y_plus_target(w) if sizing.sized_by_y_plus(w) else None,
            "y_plus_at_reference": float(y_plus(self.first_cell_height, ref, w.y_plus_at == "centre")[0]),
            "reference_station": w.reference_station,
            "wall_treatment": w.treatment,
            "y_plus_at": w.y_plus_at,
            "y_plus_band": list(TREATMENTS[w.treatment].band),
            "transition_x": None if f.regime != "transitional" else float(f.transition_re * f.nu / f.velocity),
            "transition_reynolds": f.transition_re,
            "mach": f.mach,
            "mach_estimate": f.mach_estimate,
            "temperature": f.temperature,
            "wall_at_reference": {"T_w": float(ref.t_w[0]), "rho_w": float(ref.rho_w[0]), "nu_w": float(ref.nu_w[0]),
                                  "u_tau": float(ref.u_tau[0]), "cf": float(ref.cf[0])},
            "assumptions": sizing.assumptions(self.case, f),
            "nodes": {"x": int(self.x.size), "y": int(self.y.size),
                      "z": None if self.z is None else int(self.z.size)},
            "cells": self.cell_count,
            "cells_per_block": self.block_cells(),
            "cells_in_delta99": self.cells_in_delta99(),
            "y_plus_range": [float(yp.min()), float(yp.max())],
            "y_plus_outside_correlation": self.outside_correlation(),
            "y_plus_range_stations": [float(xs[np.argmin(yp)] / f.length), float(xs[np.argmax(yp)] / f.length)],
            "max_edge_ratio": self.max_edge_ratio(),
            "streamwise_first_spacing": float(self.plate_nodes()[1] - self.plate_nodes()[0]),
            "extent": {"x": [float(self.x[0]), float(self.x[-1])], "y": [0.0, float(self.y[-1])],
                       "z": None if self.z is None else [0.0, float(self.z[-1])]},
            "groups": [g[0] for g in self.group_layout()]
            + ([] if self.z is None else [self.case.names.back, self.case.names.front]),
            "warnings": list(self.warnings),
        } | ({} if self.resolution is None else resolution_figures(self))


def resolve_flow(case: Case) -> tuple[FlowState, list[str]]:
    """Velocity, viscosity, density and Reynolds number from whichever inputs were given."""
    f = case.flow
    density, density_given = f.density, f.density is not None
    nu = f.nu
    sound = state = None
    if f.fluid is not None:
        state = fluid_state(f.fluid, f.temperature, f.pressure)
        nu = state.nu
        if density is None:
            density, density_given = state.density, True
        sound = sound_properties(f.fluid, f.temperature, f.pressure)
    if f.mach is not None and sound is not None:
        if f.velocity is not None or f.reynolds is not None:
            raise CaseError("flow: flow.mach with flow.fluid fixes the velocity (M times the speed of sound); "
                            "drop flow.velocity and flow.reynolds, or drop flow.fluid")
        velocity = f.mach * sound[0]
        re = velocity * f.length / nu
    elif f.reynolds is not None:
        re = f.reynolds
        if f.velocity is not None:
            velocity = f.velocity
            nu = velocity * f.length / re
        elif nu is not None:
            velocity = re * nu / f.length
        else:  # non-dimensional: unit speed, viscosity from Re
            velocity = 1.0
            nu = f.length / re
    else:
        velocity = f.velocity
        re = velocity * f.length / nu
    check_resolved_flow(case, velocity, nu, re, state)
    regime, warnings = (f.regime, []) if f.regime == "transitional" else bl.regime_for(re, f.regime)
    if regime != "laminar" and re < bl.TURBULENT_MIN_RE:
        raise CaseError(
            f"flow.regime: turbulent at Re_L = {re:.3g}; the turbulent correlations need "
            f"Re_L >= {bl.TURBULENT_MIN_RE:.0e} (use laminar or auto)"
        )
    law = "turbulent" if regime == "transitional" else regime
    corr = f.correlation or bl.DEFAULT_CORRELATION[law]
    if bl.CORRELATIONS[corr].regime != law:
        raise CaseError(
            f"flow.correlation: {corr!r} is a {bl.CORRELATIONS[corr].regime} correlation but the "
            f"regime is {regime}; valid for {regime}: "
            + ", ".join(c.name for c in bl.CORRELATIONS.values() if c.regime == law)
        )
    _, hi = bl.CORRELATIONS[corr].re_range
    if re > hi:
        warnings.append(f"Re_L = {re:.3g} is above the stated range of the {corr} correlation (up to {hi:.0e})")
    re_tr = None
    if regime == "transitional":
        re_tr = (f.transition_reynolds if f.transition_onset == "reynolds"
                 else float(tr.transition_re_from_intensity(f.turbulence_intensity, f.transition_onset)))
        if re_tr >= re:
            warnings.append(f"transition at Re_x = {re_tr:.3g} lies beyond the plate end (Re_L = {re:.3g}): "
                            "the whole plate is laminar")
    gamma, prandtl = (sound[1], sound[2]) if sound is not None else (comp.AIR_GAMMA, comp.AIR_PRANDTL)
    mach_estimate = f.mach if f.mach is not None else (velocity / sound[0] if sound is not None else None)
    return (
        FlowState(velocity, nu, 1.0 if density is None else density, density_given, f.length, re, regime, corr,
                  re_tr, f.mach, f.temperature, case.wall.temperature, gamma, prandtl, mach_estimate),
        warnings,
    )


def wall_normal_nodes(case: Case, flow: FlowState, height: float, delta_end: float) -> np.ndarray:
    """Nodes from the wall to H: two of (first spacing, ratio, count) fix the third."""
    w = case.wall
    wq = flow.wall(np.array([w.reference_station * flow.length]))
    if not np.isfinite(wq.cf[0]):
        raise CaseError(
            f"wall.reference_station = {w.reference_station!r}: Re_x = {wq.re_x[0]:.3g} there is outside the "
            f"range of the {flow.correlation} correlation (it has no value at Re_x <= "
            f"{bl.CORRELATIONS[flow.correlation].defined_from:.3g}); move the station downstream"
        )
    if w.first_cell_height is not None:
        first = w.first_cell_height
    else:
        first = float(first_cell_height(sizing.y_plus_target(w), wq, w.y_plus_at == "centre")[0])
    floor = MIN_SPACING * flow.length
    if not np.isfinite(first):
        raise CaseError(f"wall: no first-cell height can be sized at wall.reference_station = "
                        f"{w.reference_station!r}: the wall quantities there are not finite numbers")
    if first < floor:
        given = (f"wall.first_cell_height = {first!r} m" if w.first_cell_height is not None else
                 f"wall.reference_station = {w.reference_station!r}: the first-cell height {first:.3g} m there")
        raise CaseError(f"{given} is below {MIN_SPACING:g} of the plate length ({floor:.3g} m), meshgen's "
                        "limit: past it double-precision coordinates keep too few digits across the cell")
    if first >= height:
        raise CaseError(
            f"wall: first-cell height {first:.4g} m is not smaller than the domain height "
            f"{height:.4g} m; lower wall.y_plus or raise domain.height_factor"
        )
    if w.cells is None:
        return capped_geometric(height, first, w.growth_ratio, w.max_spacing * delta_end, "wall")
    spacing_given = w.first_cell_height is not None or "y_plus" in w.model_fields_set
    if "growth_ratio" in w.model_fields_set and not spacing_given:
        first, ratio, count = solve_geometric(height, ratio=w.growth_ratio, count=w.cells)
    else:
        first, ratio, count = solve_geometric(height, first=first, count=w.cells)
    if ratio > 2.0:
        raise CaseError(
            f"wall.cells = {w.cells}: from a first cell of {first:.3g} m this needs a growth "
            f"ratio of {ratio:.3g} (valid up to 2); raise wall.cells"
        )
    nodes = geometric_nodes(first, ratio, count)
    nodes[-1] = height
    return nodes


def _check_cell_limit(case: Case, cells: int) -> None:
    if cells > case.output.max_cells:
        raise CaseError(
            f"output.max_cells: the plan needs {cells:,} cells, above the limit of "
            f"{case.output.max_cells:,}; raise output.max_cells or coarsen the case"
        )


def make_plan(case: Case) -> Plan:
    problems = resolved.case_problems(case)
    if problems:
        raise CaseError(problems)
    flow, warnings = resolve_flow(case)
    xl = flow.length
    delta_end = float(flow.wall(np.array([xl])).delta99[0])
    height = case.domain.height_factor * delta_end
    if case.resolution.kind != "rans":
        return _resolved_plan(case, flow, warnings, delta_end, height)
    # Estimate the counts before allocating anything big.
    x, blocks = streamwise_nodes(case, xl)
    warnings += edge_cap_notes(case)
    y = wall_normal_nodes(case, flow, height, delta_end)
    z = None
    nz = 1
    if case.domain.span > 0:
        nz = case.domain.span_cells
        z = np.linspace(0.0, case.domain.span * xl, nz + 1)
    _check_cell_limit(case, (x.size - 1) * (y.size - 1) * nz)
    if case.domain.height_factor < 10:
        warnings.append("domain.height_factor below 10: the top boundary may affect the boundary layer")
    return Plan(case, flow, x, y, z, blocks, delta_end, height, tuple(warnings))


def _resolved_plan(case: Case, flow: FlowState, warnings: list[str], delta_end: float, height: float) -> Plan:
    """A scale-resolving plan (meshgen.planning.resolved): counted before anything is allocated."""
    nx, ny, nz = resolved.cell_counts(case, flow, height)
    _check_cell_limit(case, nx * ny * nz)
    x, blocks, y, z, targets = resolved.grid(case, flow, height)
    warnings += resolved.warnings(case, flow, targets)
    if case.domain.height_factor < 10:
        warnings.append("domain.height_factor below 10: the top boundary may affect the boundary layer")
    return Plan(case, flow, x, y, z, blocks, delta_end, height, tuple(warnings), resolution=targets)


def resolution_warnings(y: np.ndarray, delta_end: float) -> tuple[str, ...]:
    cells = int(np.searchsorted(y, delta_end, side="right") - 1)
    if cells >= 10:
        return ()
    return (
        (f"only {cells} wall-normal cells inside delta99 at the plate end; lower "
        "wall.growth_ratio or wall.max_spacing (common practice wants 20 or more)"),
    )


def spacing_summary(nodes: np.ndarray) -> dict[str, float]:
    d = np.diff(nodes)
    g = d[1:] / d[:-1] if d.size > 1 else np.ones(1)
    return {"first": float(d[0]), "last": float(d[-1]), "min": float(d.min()), "max": float(d.max()),
            "max_growth": float(max(g.max(), 1.0 / g.min()))}


__all__ = ["FlowState", "Plan", "make_plan", "resolve_flow", "spacing_summary"]
