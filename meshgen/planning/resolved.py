"""Scale-resolving sizing: the grid of a wall-resolved LES, a wall-modelled LES or a DNS.

For ``resolution.kind`` other than ``rans`` the plan sizes all three directions from the
wall quantities along the plate (``wall_scales``: u_tau(x), nu_w(x), delta99(x)) at one
station x_s, the reference station (``wall.reference_station``) or the strictest station
(smallest length scale on the plate from ``resolution.strictest_from``, in the turbulent
part of a transitional layer):

* wall-resolved LES and DNS, in wall units l_v = nu_w / u_tau(x_s):
  first cell dy1 = y+ l_v (``wall.y_plus``), plate spacing dx = dx+ l_v, span spacing
  dz = dz+ l_v; wall-normal cells grow from dy1 (``wall.growth_ratio``) to a cap inside the
  layer: delta99(x_s) / cells_per_delta (LES) or dz (DNS, every scale in wall units);
* wall-modelled LES, in boundary-layer thicknesses: dx = dz = dy1 = delta99(x_s) / n with
  n = ``cells_per_delta``, uniform through the layer down to the wall.

The cap holds up to delta99 at the plate end (the thickest layer on the plate); above it
the cells grow again to ``wall.max_spacing`` delta99(L) and stay uniform to the top. The
plate is uniform in x (dx rounded down to a whole number of cells), the upstream and wake
blocks grow from it (``streamwise.growth_ratio`` up to ``streamwise.far_spacing``), and the
span of ``resolution.span_deltas`` delta99(L) (or ``domain.span`` plate lengths) is
uniform in z. Rounding only refines: the achieved spacings are at or below the targets.

A single structured block has one spacing along the span and through the height, so the
station matters: at the reference station the plate upstream of it is coarser in wall
units than the target (u_tau grows towards the leading edge); the strictest station makes
the targets hold everywhere downstream of ``strictest_from`` at a higher cell count. The
plan's figures (``meshgen.planning.wall_units``) show the achieved values along the plate.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from ..core.errors import CaseError
from ..physics.resolution import DEFAULT_SPAN_DELTAS, KINDS, ResolutionKind
from .layout import Block
from .sizing import y_plus_target
from .spacing import capped_geometric
from .streamwise import _outer_block as outer_block

#: Stations sampled on the plate when the strictest one is searched (geometric in x).
STRICTEST_SAMPLES = 2001


@dataclass(frozen=True, eq=False)
class WallScales:
    """Wall quantities at the stations ``x`` [m]: u_tau [m/s], nu_w [m2/s], delta99 [m], and
    whether each station lies in the turbulent part of the layer."""

    x: np.ndarray
    u_tau: np.ndarray
    nu_w: np.ndarray
    delta99: np.ndarray
    turbulent: np.ndarray

    @property
    def viscous_length(self) -> np.ndarray:
        """l_v = nu_w / u_tau [m]: one wall unit."""
        return self.nu_w / self.u_tau


def wall_scales(flow, x: np.ndarray | float) -> WallScales:
    """The wall quantities this sizing reads, at ``x`` [m] (x > 0), for a resolved ``FlowState``.

    The one place the scale-resolving sizing meets the physics: ``FlowState.wall``
    (meshgen.physics.wall.wall_quantities), so transitional and compressible cases size
    their wall units with the wall viscosity and density (nu_w, u_tau = sqrt(tau_w / rho_w)).
    """
    x = np.asarray(x, dtype=float)
    wq = flow.wall(np.atleast_1d(x))
    return WallScales(x, wq.u_tau.reshape(x.shape), wq.nu_w.reshape(x.shape), wq.delta99.reshape(x.shape),
                      wq.turbulent.reshape(x.shape))


@dataclass(frozen=True)
class Sizing:
    """The targets of a scale-resolving plan, in metres, and where they were sized."""

    kind: str
    station: str  # "reference" or "strictest"
    station_x: float  # x_s [m]
    first: float  # first-cell height [m]
    dx: float  # target plate spacing [m]
    dz: float  # target spanwise spacing [m]
    cap: float  # largest wall-normal cell inside the layer [m]
    layer_top: float  # delta99 at the plate end [m]: the cap holds up to here
    span: float  # spanwise extent [m]
    dx_plus: float | None
    dz_plus: float | None
    cells_per_delta: float | None
    y_plus: float | None  # first-cell target (None: sized on delta)


def _set(section, key: str) -> bool:
    return key in section.model_fields_set


def case_problems(case) -> list[str]:
    """Keys that contradict the resolution kind, one line each (empty: the case is consistent)."""
    r, d, s, w = case.resolution, case.domain, case.streamwise, case.wall
    problems = []
    scale_resolving = r.kind != "rans"
    three_d = d.span > 0 or scale_resolving
    if d.span_boundary == "periodic" and not three_d:
        problems.append("domain.span_boundary = 'periodic' needs a 3-D mesh: set domain.span > 0 "
                        "(or a scale-resolving resolution.kind)")
    if not scale_resolving:
        return problems
    what = "resolution.cells_per_delta" if r.kind == "wall-modelled-les" else "resolution.dx_plus"
    for key in ("leading_edge_spacing", "trailing_edge_spacing", "max_spacing", "cells"):
        if _set(s, key):
            problems.append(f"streamwise.{key}: not used with resolution.kind = {r.kind!r}; the plate spacing "
                            f"follows {what} (streamwise.growth_ratio and far_spacing size the upstream and "
                            "wake blocks)")
    for which, key in (("upstream", "upstream"), ("wake", "downstream")):
        if getattr(s, f"{which}_cells") is not None and getattr(d, key) == 0:
            problems.append(f"streamwise.{which}_cells: there is no {which} block (domain.{key} = 0)")
    if _set(w, "cells"):
        problems.append(f"wall.cells: not used with resolution.kind = {r.kind!r}; the wall-normal cells follow "
                        "the first cell, wall.growth_ratio and the resolution targets")
    if r.kind == "wall-modelled-les" and w.first_cell_height is not None:
        problems.append("wall.first_cell_height: not used with resolution.kind = 'wall-modelled-les'; the first "
                        "cell is delta99 / resolution.cells_per_delta")
    if _set(d, "span_cells"):
        problems.append(f"domain.span_cells: derived with resolution.kind = {r.kind!r} (from the spanwise "
                        "target); leave it out")
    if _set(d, "span") and r.span_deltas is not None:
        problems.append("domain.span and resolution.span_deltas both set the span; give one")
    if _set(d, "span") and d.span == 0:
        problems.append(f"domain.span = 0: resolution.kind = {r.kind!r} needs a 3-D mesh; leave domain.span "
                        "out (the span is resolution.span_deltas delta99) or give a positive length")
    return problems


def _target(value: float | None, entry) -> float | None:
    return None if entry is None else (entry.default if value is None else value)


def sizing_station(case, flow, k: ResolutionKind) -> tuple[str, float]:
    """(station name, x_s [m]): the reference station, or the one with the smallest length scale."""
    r, length = case.resolution, flow.length
    if r.station == "reference":
        return "reference", case.wall.reference_station * length
    xs = np.geomspace(r.strictest_from * length, length, STRICTEST_SAMPLES)
    ws = wall_scales(flow, xs)
    scale = ws.delta99 if k.first_y_plus is None else ws.viscous_length
    # a transitional layer: the scale-resolving targets are for its turbulent part
    scale = np.where(ws.turbulent | ~ws.turbulent.any(), scale, np.inf)
    return "strictest", float(xs[np.argmin(scale)])


def sizing(case, flow) -> Sizing:
    """The targets in metres at the sizing station (a scale-resolving case)."""
    r, w = case.resolution, case.wall
    k = KINDS[r.kind]
    station, x_s = sizing_station(case, flow, k)
    ws = wall_scales(flow, x_s)
    lv, delta_s = float(ws.viscous_length), float(ws.delta99)
    delta_end = float(wall_scales(flow, flow.length).delta99)
    dx_plus, dz_plus = _target(r.dx_plus, k.dx_plus), _target(r.dz_plus, k.dz_plus)
    n = _target(r.cells_per_delta, k.cells_per_delta)
    if k.first_y_plus is None:  # wall-modelled: every direction on delta
        y_plus = None
        first = dx = dz = cap = delta_s / n
    else:
        y_plus = None if w.first_cell_height is not None else y_plus_target(w)
        # y+ at the first node (y = dy1) or at the first cell centre (y = dy1 / 2): wall.y_plus_at
        at = 2.0 if w.y_plus_at == "centre" else 1.0
        first = w.first_cell_height if w.first_cell_height is not None else at * y_plus * lv
        dx, dz = dx_plus * lv, dz_plus * lv
        cap = dz if n is None else delta_s / n
    if _set(case.domain, "span"):
        span = case.domain.span * flow.length
    else:
        span = (DEFAULT_SPAN_DELTAS if r.span_deltas is None else r.span_deltas) * delta_end
    return Sizing(r.kind, station, x_s, float(first), float(dx), float(dz), float(max(cap, first)),
                  delta_end, float(span), dx_plus, dz_plus, n, y_plus)


def _cells(length: float, spacing: float) -> int:
    """Whole cells of at most ``spacing`` over ``length`` (rounding refines)."""
    return max(1, math.ceil(length / spacing - 1e-9))


def _layer(length: float, first: float, ratio: float, cap: float) -> np.ndarray:
    """Nodes on [0, length]: cells grow from ``first`` by ``ratio`` while at or below ``cap``,
    then equal cells of at most ``cap`` that are no smaller than the last grown one.

    Unlike :func:`meshgen.planning.spacing.capped_geometric` (whose equal cells may exceed
    the cap by a fraction), the count of equal cells is rounded up: a cap here is a
    resolution target, which rounding must not coarsen.
    """
    m = 1 if ratio <= 1.0 + 1e-12 else math.floor(math.log(cap / first) / math.log(ratio) + 1e-9) + 1
    grown = first * ratio ** np.arange(m, dtype=np.float64)
    edges = np.concatenate([[0.0], np.cumsum(grown)])
    while m > 1:  # a loop over the few cells of the growth layer, not over the grid
        rest = length - edges[m]
        n = _cells(rest, cap) if rest > 0 else 0
        if n and rest / n >= grown[m - 1] * (1 - 1e-12):
            break
        m -= 1
    rest = length - edges[m]
    n = _cells(rest, cap)
    nodes = np.concatenate([edges[: m + 1], edges[m] + np.arange(1, n + 1) * (rest / n)])
    nodes[-1] = length
    return nodes


def wall_normal_nodes(case, s: Sizing, height: float) -> np.ndarray:
    """From the wall: growth to the cap up to delta99(L), then growth to the far cap, to H."""
    g = case.wall.growth_ratio
    if s.first >= min(s.layer_top, height):
        raise CaseError(f"wall: first-cell height {s.first:.4g} m is not below delta99 at the plate end "
                        f"({s.layer_top:.4g} m); lower wall.y_plus or check the flow")
    top = min(s.layer_top, height)
    inner = _layer(top, s.first, g, s.cap)
    if height - top <= 1e-12 * height:
        return inner
    last = float(inner[-1] - inner[-2])
    far = max(case.wall.max_spacing * s.layer_top, last)
    start = min(last * g, far)
    if start >= height - top:
        return np.concatenate([inner, [height]])
    outer = capped_geometric(height - top, start, g, far, "wall (above the boundary layer)")
    return np.concatenate([inner, top + outer[1:]])


def streamwise_nodes(case, s: Sizing, length: float) -> tuple[np.ndarray, tuple[Block, ...]]:
    """A uniform plate of at most dx, with upstream and wake blocks growing away from it (or
    with ``streamwise.upstream_cells`` / ``wake_cells``, as in a RANS plan)."""
    d = case.domain
    n = _cells(length, s.dx)
    h = length / n
    plate = np.linspace(0.0, length, n + 1)
    parts, blocks, start = [], [], 0
    if d.upstream > 0:
        up = outer_block(case, "upstream", d.upstream * length, h)
        parts.append(-up[::-1])
        blocks.append(Block("upstream", 0, up.size - 1))
        start = up.size - 1
    parts.append(plate if not parts else plate[1:])
    blocks.append(Block("plate", start, start + n))
    start += n
    if d.downstream > 0:
        wake = outer_block(case, "wake", d.downstream * length, h)
        parts.append(length + wake[1:])
        blocks.append(Block("wake", start, start + wake.size - 1))
    return np.concatenate(parts), tuple(blocks)


def span_nodes(s: Sizing) -> np.ndarray:
    return np.linspace(0.0, s.span, _cells(s.span, s.dz) + 1)


def _far_cells(case, s: Sizing, length: float) -> int:
    """Cells of the upstream and wake blocks (small arrays)."""
    d, n = case.domain, 0
    h = length / _cells(length, s.dx)
    for which, extent in (("upstream", d.upstream), ("wake", d.downstream)):
        if extent > 0:
            n += outer_block(case, which, extent * length, h).size - 1
    return n


def cell_counts(case, flow, height: float | None = None) -> tuple[int, int, int]:
    """Cells along x, y and z of the scale-resolving grid, without building the plate or span arrays.

    ``height`` defaults to domain.height_factor delta99(L) (the plan's own domain height).
    """
    s = sizing(case, flow)
    height = case.domain.height_factor * s.layer_top if height is None else height
    nx = _cells(flow.length, s.dx) + _far_cells(case, s, flow.length)
    ny = wall_normal_nodes(case, s, height).size - 1
    return nx, ny, _cells(s.span, s.dz)


def grid(case, flow, height: float) -> tuple[np.ndarray, tuple[Block, ...], np.ndarray, np.ndarray, Sizing]:
    """x nodes with their blocks, y and z nodes, and the sizing (check the count first)."""
    s = sizing(case, flow)
    x, blocks = streamwise_nodes(case, s, flow.length)
    return x, blocks, wall_normal_nodes(case, s, height), span_nodes(s), s


def warnings(case, flow, s: Sizing) -> list[str]:
    """What the user should know about a scale-resolving plan (the first-cell y+ warnings
    of the wall treatment come from meshgen.planning.sizing)."""
    k = KINDS[s.kind]
    out = []
    if k.first_y_plus is not None and case.wall.treatment != "resolved":
        out.append(f"wall.treatment = {case.wall.treatment!r} with resolution.kind = {s.kind!r}: a "
                   f"{k.description.split(':')[0]} resolves the viscous sublayer (wall.treatment = 'resolved')")
    if k.first_y_plus is None:
        lv = float(wall_scales(flow, s.station_x).viscous_length)
        wall_resolved = KINDS["wall-resolved-les"].dx_plus.default
        if s.dx / lv < wall_resolved:
            out.append(f"wall-modelled cells of delta99/{s.cells_per_delta:g} are {s.dx / lv:.3g} wall units here, "
                       f"finer than the streamwise spacing of a wall-resolved LES (dx+ = {wall_resolved:g}): wall "
                       "modelling pays off only at higher Reynolds numbers (common practice)")
    if flow.regime == "laminar":
        out.append(f"resolution.kind = {s.kind!r} on a laminar boundary layer: the wall units follow "
                   "Blasius; set flow.regime for a turbulent or transitional layer")
    return out
