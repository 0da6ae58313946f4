"""The boundary-layer report of a Mesh: cells across delta99, first-cell height and y+ along the plate."""

from __future__ import annotations

import numpy as np

from ..core.errors import InputError
from ..meshing.mesh import Mesh, plane_grid
from ..physics.correlations import (
    CORRELATIONS,
    DEFAULT_CORRELATION,
    delta99,
    reynolds_x,
    skin_friction,
    y_plus,
)
from ..physics.wall import y_plus as wall_y_plus
from .structure import recover_structure

# --- boundary-layer resolution ---------------------------------------------------------

#: Default y+ band around the target, as factors (meshgen's choice, stated in the report).
Y_PLUS_BAND = (0.5, 1.5)


def _check_flow(mesh: Mesh, wall_group: str, velocity: float, nu: float, regime: str,
                correlation: str, y_plus_target: float, stations, band) -> list[str]:
    problems = []
    if wall_group not in [g.name for g in mesh.groups]:
        problems.append(f"wall_group: no group {wall_group!r}; groups: {[g.name for g in mesh.groups]}")
    for name, v in (("velocity", velocity), ("nu", nu), ("y_plus_target", y_plus_target)):
        if not v > 0:
            problems.append(f"{name}: {v!r} must be a positive number")
    if regime not in ("laminar", "turbulent"):
        problems.append(f"regime: {regime!r}; valid: laminar, turbulent (resolve 'auto' first)")
    if correlation not in CORRELATIONS:
        problems.append(f"correlation: {correlation!r}; valid: {', '.join(CORRELATIONS)}")
    if not all(0 < s <= 1 for s in stations):
        problems.append(f"stations: {list(stations)} must be fractions of the plate length in (0, 1]")
    if band is not None and not (len(band) == 2 and 0 <= band[0] < band[1]):
        problems.append(f"band: {band!r} must be (low, high) with 0 <= low < high")
    return problems


def _wall_columns(mesh: Mesh, wall_group: str) -> tuple[np.ndarray, np.ndarray] | str:
    """Node grid of the first z layer (nj, ni, 3) and the wall's i indices, or why not."""
    grid = plane_grid(mesh)
    nj, ni = grid.shape[:2]
    nodes = np.unique(mesh.group(wall_group).facets)
    nodes = nodes[nodes < ni * nj]  # the k = 0 layer
    if nodes.size < 2 or np.any(nodes // ni != 0):
        return f"wall group {wall_group!r} is not on the j = 0 side of the grid"
    return grid, np.sort(nodes % ni)


def boundary_layer_report(mesh: Mesh, wall_group: str, velocity: float, nu: float, regime: str,
                          correlation: str | None, y_plus_target: float,
                          stations: tuple[float, ...] = (0.1, 0.25, 0.5, 0.75, 1.0), *,
                          plate_length: float | None = None, x_ref: float | None = None,
                          band: tuple[float, float] | None = None, wall=None, at_centre: bool = False,
                          band_rule: str | None = None) -> dict:
    """Boundary-layer resolution of a structured flat-plate mesh, as plain JSON-ready data.

    ``velocity`` [m/s], ``nu`` [m2/s], ``regime`` 'laminar' or 'turbulent', ``correlation``
    a key of ``meshgen.boundary_layer.CORRELATIONS`` (None: the regime's default).
    x is measured from the leading edge (the wall's smallest x); ``plate_length`` [m]
    defaults to the wall's extent, ``x_ref`` [m] (the station the first cell was sized
    at) to the plate length; ``stations`` are fractions of the plate length.

    Definitions: at each wall node, the node line j = 0 .. nj-1 above it (first z layer);
    the first-cell height is the wall-normal distance (y - y_wall, the wall being flat
    along x) of the first off-wall node; "cells in delta99" counts the node intervals of
    that line lying wholly inside delta99(x) (top node at or below it, as in the Plan).
    y+ = h1 u_tau / nu with Cf from the correlation at Re_x = U x / nu, at every wall node
    with x > 0 (Cf is singular at 0).
    The y+ band is ``band`` or Y_PLUS_BAND times the target; fractions are of the plate
    length (each wall node weighted by half its two neighbouring intervals).
    Unstructured meshes get {'omitted': reason}.

    ``wall`` (a function x [m] -> ``meshgen.physics.wall.WallQuantities``, e.g.
    ``FlowState.wall``) replaces the single-correlation estimate: transitional and
    compressible layers then give Cf, u_tau, nu_w and delta99; ``at_centre`` measures y+ at
    the first cell centre (half the first-cell height) instead of the first node.
    """
    correlation = correlation or DEFAULT_CORRELATION.get(regime, "")
    problems = _check_flow(mesh, wall_group, velocity, nu, regime, correlation, y_plus_target, stations, band)
    if problems:
        raise InputError(problems)
    s = recover_structure(mesh)
    if s.shape is None:
        return {"omitted": "not a tensor-product grid: the boundary-layer report needs the structured layout"}
    found = _wall_columns(s, wall_group)
    if isinstance(found, str):
        return {"omitted": found}
    grid, iw = found
    x_wall = grid[0, iw, 0]
    x = x_wall - x_wall.min()
    length = float(plate_length) if plate_length is not None else float(x.max())
    x_ref = length if x_ref is None else float(x_ref)
    height = grid[:, iw, 1] - grid[0, iw, 1]  # (nj, n_wall): wall-normal distances
    h1 = height[1]
    lo, hi = (band if band is not None else (Y_PLUS_BAND[0] * y_plus_target, Y_PLUS_BAND[1] * y_plus_target))
    notes: list[str] = []

    def _estimate(xs: np.ndarray, h: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        """(delta99, y+) at stations xs > 0 with first-cell heights h."""
        if wall is not None:
            wq = wall(xs)
            return wq.delta99, wall_y_plus(h, wq, at_centre)
        re = reynolds_x(xs, velocity, nu)
        yp = y_plus(h, velocity, nu, skin_friction(re, correlation)) * (0.5 if at_centre else 1.0)
        return delta99(xs, re, regime), yp

    def at(xs: float) -> dict:
        col = int(np.argmin(np.abs(x - xs)))
        re = float(reynolds_x(x[col], velocity, nu))
        d99, yp = (float(v[0]) for v in _estimate(x[col : col + 1], h1[col : col + 1])) if re > 0 else (0.0, None)
        yp = yp if yp is not None and np.isfinite(yp) else None  # None: outside the correlation's range
        return {"x_m": float(x[col]), "re_x": re, "delta99_m": d99, "first_cell_height_m": float(h1[col]),
                "y_plus": yp, "cells_in_delta99": int(np.count_nonzero(height[1:, col] <= d99)), "_col": col}

    table = []
    for frac in stations:
        row = at(frac * length)
        row.pop("_col")
        table.append({"fraction": float(frac), "x_station_m": float(frac * length), **row})
    ref = at(x_ref)
    dy = np.diff(height[:, ref.pop("_col")])
    ref.update(x_requested_m=x_ref, spacing_m=[float(v) for v in dy],
               growth_ratio=[float(v) for v in dy[1:] / dy[:-1]],
               max_growth_ratio=float(np.max(np.maximum(dy[1:], dy[:-1]) / np.minimum(dy[1:], dy[:-1])))
               if dy.size > 1 else None)

    on = (x > 0) & (x <= length * (1 + 1e-12))
    yp_all = _estimate(x[on], h1[on])[1]
    defined = np.isfinite(yp_all)  # no value where the correlation's formula ends
    c = CORRELATIONS[correlation]
    if not defined.all():
        notes.append(f"{int((~defined).sum())} wall nodes up to x = {float(x[on][~defined].max()):.3g} m are outside "
                     f"the range of the {c.name} correlation (it has no value at Re_x <= {c.defined_from:.3g}): "
                     "left out of the y+ figures")
    on[on] = defined
    yp = yp_all[defined]
    re = reynolds_x(x[on], velocity, nu)
    edges = np.concatenate([[x[0]], 0.5 * (x[1:] + x[:-1]), [x[-1]]])
    weight = np.diff(edges)[on]
    total = float(weight.sum())
    outside = int(np.count_nonzero((re < c.re_range[0]) | (re > c.re_range[1])))
    if outside:
        notes.append(f"{outside} wall nodes have Re_x outside the {c.name} correlation's range "
                     f"{c.re_range[0]:.3g} to {c.re_range[1]:.3g}")
    return {
        "wall_group": wall_group, "regime": regime, "correlation": c.name, "formula": c.formula,
        "correlation_source": c.source, "velocity_m_s": float(velocity), "nu_m2_s": float(nu),
        "plate_length_m": length, "re_l": float(velocity * length / nu),
        "y_plus_target": float(y_plus_target),
        "definitions": {
            "first_cell_height": "wall-normal distance of the first off-wall node, at each wall node",
            "cells_in_delta99": "node intervals above the wall node nearest the station lying wholly "
                                "inside delta99(x) (top node at or below delta99)",
            "y_plus_fraction": "share of the plate length (x > 0) whose wall-node y+ lies below, "
                               "inside or above the band",
        },
        "stations": table,
        "reference": ref,
        "y_plus": {
            "x_m": [float(v) for v in x[on]], "y_plus": [float(v) for v in yp],
            "min": float(yp.min()), "mean": float(np.sum(yp * weight) / total), "max": float(yp.max()),
            "band": [float(lo), float(hi)],
            "band_rule": band_rule or ("given" if band is not None
                                       else f"{Y_PLUS_BAND[0]} to {Y_PLUS_BAND[1]} x target, meshgen's choice"),
            "measured_at": "first cell centre" if at_centre else "first node",
            "fraction_below": float(weight[yp < lo].sum() / total),
            "fraction_in_band": float(weight[(yp >= lo) & (yp <= hi)].sum() / total),
            "fraction_above": float(weight[yp > hi].sum() / total),
        },
        "notes": notes,
    }
