"""The quality summary of a Mesh as JSON-ready data: metrics, growth, angles, errors, notes.

Per-cell metrics are in cell_metrics.py, growth and angles in structure.py, the
boundary-layer report in boundary_layer.py and report.md in markdown.py.

Cost: an exact z-extrusion with uniform layers (``exact_layers``: the builder's meshes)
is reported from one layer per distinct layer thickness, each value counted for every
layer it stands for (``Parts``); the figures are the same numbers as from every cell.
Other meshes are computed cell by cell in chunks of CHUNK, keeping memory bounded.
"""


from __future__ import annotations

import numpy as np

from ..meshing.mesh import ExtrudedMesh, Mesh, bounds, grid_planes, plane_slab
from ..meshing.verify import is_tensor_grid
from .cell_metrics import (
    EXTRUDED_NOTE,
    VERDICT,
    _chunks,
    cell_metrics,
    quad_metrics,
    swept_centre,
    swept_corner_min,
)
from .structure import _structured_angles, growth_ratios, non_orthogonality, recover_structure

#: Metric -> (unit, acceptable low, acceptable high, source of the range).
LIMITS: dict[str, tuple[str, float | None, float | None, str]] = {
    "area": ("m2", None, None, VERDICT),
    "volume": ("m3", None, None, VERDICT),
    "aspect_ratio": ("-", 1.0, 1.3, VERDICT),
    "edge_ratio": ("-", 1.0, 1.3, VERDICT),
    "skew": ("-", 0.0, 0.5, VERDICT),
    "scaled_jacobian": ("-", 0.3, 1.0, VERDICT),
    "growth_ratio": ("-", 1.0, 1.3, "common practice"),
    "centre_line_angle": ("deg", 0.0, 70.0, "common practice for finite-volume solvers (setting, default 70)"),
}
#: Default limit of the centre-line angle [deg]: above it a finite-volume solver's face
#: gradients need large corrections and lose accuracy (common practice); case key
#: ``output.centre_line_angle_limit``, ``meshgen inspect --angle-limit``.
ANGLE_LIMIT = 70.0
#: Values within this many ulp of a range's end count as inside it (a unit cube's scaled
#: Jacobian comes out as 1 + 1 ulp from the rounding of its corner products).
ULP_SLACK = 4

ANISOTROPY_NOTE = (
    "Aspect and edge ratios far above Verdict's 1 to 1.3 are intended in the wall layers "
    "(thin cells along the plate resolve the wall-normal gradients); that range is meant "
    "for isotropic meshes, so those counts are information, not faults."
)

PERCENTILES = (1, 5, 50, 95, 99)


# --- exact extrusions ------------------------------------------------------------------


def exact_layers(mesh: Mesh) -> np.ndarray | None:
    """Layer thicknesses dz [m] when ``mesh`` is an exact, uniform z-extrusion, else None.

    Exact: a tensor grid (``mesh.shape``, the grid's own cells) of at least two cell
    layers whose node planes all have bit-for-bit the xy of plane 0 and one z each.
    Uniform: the thicknesses differ by no more than the rounding of the plane
    coordinates (8 ulp of the largest |z|; ``np.linspace`` planes differ by a few).
    Every cell metric, growth ratio and angle of such a mesh depends on its layer only
    through that layer's dz (bit for bit), so one layer per distinct dz stands for all.
    """
    if mesh.dim != 3 or mesh.shape is None or len(mesh.shape) != 3 or mesh.shape[2] < 3:
        return None
    if not is_tensor_grid(mesh):
        return None
    if isinstance(mesh, ExtrudedMesh) and not mesh.built():
        z = mesh.z  # exact by construction: every plane is the base at one z
    else:
        ni, nj, nk = mesh.shape
        planes = mesh.points.reshape(nk, ni * nj, 3)
        z = planes[:, 0, 2].copy()
        base = planes[0, :, :2]
        step = max(1, (1 << 20) // (ni * nj))  # node planes per block
        for k0 in range(0, nk, step):  # blocks of planes, not nodes
            block = planes[k0:k0 + step]
            if not (np.array_equal(block[:, :, :2], np.broadcast_to(base, block[:, :, :2].shape))
                    and np.array_equal(block[:, :, 2], np.broadcast_to(z[k0:k0 + step, None],
                                                                        block[:, :, 2].shape))):
                return None
    dz = np.diff(z)
    if dz.min() <= 0 or dz.max() - dz.min() > 8 * np.finfo(float).eps * np.abs(z).max():
        return None
    return dz


def _layered_values(mesh: Mesh, dz: np.ndarray) -> tuple[dict[str, Parts], list[str]]:
    """The report's metrics of an exact extrusion (``exact_layers``) as ``Parts``: each
    distinct layer thickness computed on its first layer, counted for all its layers.

    The hexahedra's metrics come from layer 0's quads and each distinct layer's z
    (``swept_corner_min``, ``swept_centre``: the same numbers bit for bit), the angles
    from two-plane slabs (``plane_slab``), so the whole mesh's points and hexahedra are
    never needed (a lazy extrusion stays lazy)."""
    ni, nj, nk = mesh.shape
    n2c, n_layers = (ni - 1) * (nj - 1), nk - 1
    thick, first, count = np.unique(dz, return_index=True, return_counts=True)
    # Layer 0's quads and xy are every layer's (an exact extrusion): the base-face metrics
    # come from them once, and each distinct layer's hex Jacobians from them and its z.
    slab = plane_slab(mesh, 0, 2)
    quads = np.ascontiguousarray(slab.cells[:, :4])
    x, y = (np.ascontiguousarray(slab.points[:, a]) for a in (0, 1))
    base = {k: np.empty(n2c) for k in ("area", "aspect_ratio", "edge_ratio", "skew")}
    for s, e in _chunks(n2c):  # chunks of quads, not quads
        q = quads[s:e]
        for key, v in quad_metrics(x[q], y[q]).items():
            if key in base:
                base[key][s:e] = v
    corner_min = swept_corner_min(x, y, quads, thick)
    values: dict[str, Parts] = {"scaled_jacobian": []}  # filled below, first as in cell_metrics
    # base area x dz: the volume of a right prism, as cell_metrics computes it
    values["volume"] = [(base["area"] * d, int(w)) for d, w in zip(thick, count)]
    for key in ("aspect_ratio", "edge_ratio", "skew"):  # the base face's: the same every layer
        values[key] = [(base[key], n_layers)]
    notes = [EXTRUDED_NOTE]
    # The corner Jacobians see a layer only through dz; the centre one also through the
    # z components of its principal axes, sums of the plane z (rounding differs from
    # layer to layer), so it is computed once per distinct (dz, axes' z) of the layers.
    z = grid_planes(mesh, 2, 0, nk)[:, 0, 0]
    b, t = z[:-1], z[1:]
    side = b + b + t + t - b - b - t - t  # z of X1 and of X2: node order of _hex_centre
    key = np.stack([dz, side, t + t + t + t - b - b - b - b], axis=1)
    distinct, count_k = np.unique(key, axis=0, return_counts=True)
    centre = swept_centre(x, y, quads, distinct[:, 1:])
    for (d, sd, tp), w in zip(distinct.tolist(), count_k):  # distinct layer keys: a few tens at most
        values["scaled_jacobian"].append((np.minimum(corner_min[d], centre[(sd, tp)]), int(w)))
    for axis, r in growth_ratios(plane_slab(mesh, 0, 2)).items():
        if axis != "k":
            values[f"growth_ratio_{axis}"] = [(r, n_layers)]
    # Along k every cell of a layer has size dz exactly (its xy edges have zero length).
    values["growth_ratio_k"] = [(np.maximum(dz[1:], dz[:-1]) / np.minimum(dz[1:], dz[:-1]), n2c)]
    angles: Parts = []
    for k, w in zip(first, count):
        for a in _structured_angles(plane_slab(mesh, k, k + 2), 0, n2c, (0, 1)):
            angles.append((a, int(w)))
    # k faces: normal along z from the base xy, centre line along z: the same every layer.
    angles.append((_structured_angles(plane_slab(mesh, 0, 3), 0, n2c, (2,))[0], n_layers - 1))
    values["centre_line_angle"] = angles
    notes.append(f"exact z-extrusion of {n_layers} uniform layers: metrics computed on one layer "
                 f"per distinct layer thickness ({thick.size}, differing only by the rounding of the "
                 f"plane z; the scaled Jacobian on one layer per distinct thickness and plane-z sums, "
                 f"{distinct.shape[0]}) and counted for every layer, instead of on every cell")
    return values, notes


# --- summary --------------------------------------------------------------------------


def _num(x) -> float | None:
    """A plain float for JSON (None for NaN; Verdict's DBL_MAX stays a finite number)."""
    x = float(x)
    return None if np.isnan(x) else x


#: A metric given as pieces with multiplicities: the values of one layer of an exact
#: extrusion, each standing for that many cells.
Parts = list[tuple[np.ndarray, int]]


def _percentiles(v: np.ndarray, cum: np.ndarray | None = None) -> list[float]:
    """PERCENTILES of sorted values ``v`` the way ``np.percentile`` (linear) computes them:
    virtual index (n - 1) q / 100, then numpy's two-sided linear interpolation. With
    ``cum`` (cumulative multiplicities of ``v``) each value counts that many times.

    numpy 2.x sorts several times faster than it partitions around ten ranks, and the
    order statistics are the same, so the numbers equal ``np.percentile``'s.
    """
    n = v.size if cum is None else int(cum[-1])
    if np.isnan(v[-1]):  # np.sort puts NaN last; np.percentile gives NaN then
        return [np.nan] * len(PERCENTILES)
    h = (n - 1) * np.true_divide(PERCENTILES, 100)
    below = np.floor(h)
    t = h - below
    lo = below.astype(np.int64)
    hi = np.minimum(lo + 1, n - 1)
    if cum is not None:  # rank r is the value whose cumulative count first exceeds r
        lo, hi = np.searchsorted(cum, lo, side="right"), np.searchsorted(cum, hi, side="right")
    a, b = v[lo], v[hi]
    d = b - a
    return list(np.where(t >= 0.5, b - d * (1 - t), a + d * t))


def _order_key(v: np.ndarray) -> np.ndarray:
    """int64 keys in the order of the float64 values ``v`` (IEEE bits, negatives flipped)."""
    i = np.asarray(v, dtype=np.float64).view(np.int64)
    return i ^ ((i >> 63) & np.int64(0x7FFFFFFFFFFFFFFF))


def _key_value(key: int) -> float:
    i = np.int64(key)
    return float((i ^ ((i >> 63) & np.int64(0x7FFFFFFFFFFFFFFF))).view(np.float64))


def _weighted_ranks(parts: Parts, ranks: np.ndarray) -> np.ndarray:
    """The values of 0-based ``ranks`` in the sorted multiset where each value of a part
    counts its part's multiplicity, without joining the parts: each part is sorted on its
    own and each rank found by bisection over the float order (at most 64 steps, each a
    binary search per part), so memory stays at the parts' own size."""
    parts = [(np.sort(v), w) for v, w in parts]

    def above(value: float) -> int:  # how many values are <= value
        return sum(w * int(np.searchsorted(v, value, side="right")) for v, w in parts)

    lo0 = int(_order_key(min(v[0] for v, _ in parts)))
    hi0 = int(_order_key(max(v[-1] for v, _ in parts)))
    out = []
    for r in ranks.tolist():  # five percentiles, two ranks each
        lo, hi = lo0, hi0  # the answer's key lies in [lo, hi]
        while lo < hi:
            mid = (lo + hi) // 2
            if above(_key_value(mid)) > r:
                hi = mid
            else:
                lo = mid + 1
        out.append(_key_value(lo))
    return np.array(out)


def _weighted_percentiles(parts: Parts, n: int) -> list[float]:
    """:func:`_percentiles` of ``Parts`` (``n`` values counted with their multiplicities)."""
    if any(np.isnan(v).any() for v, _ in parts):
        return [np.nan] * len(PERCENTILES)
    h = (n - 1) * np.true_divide(PERCENTILES, 100)
    below = np.floor(h)
    t = h - below
    lo = below.astype(np.int64)
    hi = np.minimum(lo + 1, n - 1)
    a, b = np.split(_weighted_ranks(parts, np.concatenate([lo, hi])), 2)
    d = b - a
    return list(np.where(t >= 0.5, b - d * (1 - t), a + d * t))


def summarise(name: str, values: np.ndarray | Parts, limits: tuple | None = None) -> dict:
    """min, max, mean, percentiles and the count outside the acceptable range (each end
    widened by ULP_SLACK ulp, so round-off on a perfect cell is not counted).

    ``values`` is one value per cell (or face), or ``Parts``: (values, multiplicity) pairs,
    summarised part by part (no array of the whole count is made); ``limits`` replaces
    the metric's LIMITS entry.
    """
    unit, lo, hi, source = limits or LIMITS[name]
    if isinstance(values, list):
        parts = [(np.asarray(v, dtype=float).ravel(), int(w)) for v, w in values if np.size(v) and w]
        n = sum(v.size * w for v, w in parts)
    else:
        flat = np.asarray(values, dtype=float)
        n, parts = flat.size, None
    out = {"unit": unit, "count": int(n), "min": None, "max": None, "mean": None}
    if n and parts is None:
        pct = _percentiles(np.sort(flat))
        out.update(min=_num(flat.min()), max=_num(flat.max()), mean=_num(flat.mean()))
    elif n:
        pct = _weighted_percentiles(parts, n)
        out.update(min=_num(np.min([v.min() for v, _ in parts])), max=_num(np.max([v.max() for v, _ in parts])),
                   mean=_num(sum(v.sum() * w for v, w in parts) / n))
    else:
        pct = [np.nan] * len(PERCENTILES)
    out.update({f"p{q}": _num(x) for q, x in zip(PERCENTILES, pct)})
    if lo is not None:
        slack = ULP_SLACK * np.finfo(float).eps
        lo_in, hi_in = lo - slack * max(abs(lo), 1.0), hi + slack * max(abs(hi), 1.0)
        bad = (lambda a: int(np.count_nonzero((a < lo_in) | (a > hi_in))))
        out.update(acceptable=[lo, hi], range_source=source,
                   outside=bad(flat) if parts is None else sum(bad(v) * w for v, w in parts))
    return out


def _streamwise_spacing(mesh: Mesh) -> dict:
    """Node intervals [m] along the first grid row (j = 0, k = 0) and their growth."""
    row = np.stack([grid_planes(mesh, a, 0, 1)[0, 0] for a in range(3)], axis=1)  # (ni, 3)
    dx = np.linalg.norm(np.diff(row, axis=0), axis=1)
    return {"x_m": [float(v) for v in row[:, 0]], "spacing_m": [float(v) for v in dx],
            "growth_ratio": [float(v) for v in np.maximum(dx[1:], dx[:-1]) / np.minimum(dx[1:], dx[:-1])]}


def quality_report(mesh: Mesh, boundary_layer: dict | None = None, angle_limit: float = ANGLE_LIMIT) -> dict:
    """The whole quality summary as plain JSON-ready data (``boundary_layer``, the result
    of ``boundary_layer_report``, is embedded when given; ``angle_limit`` [deg] is the
    largest acceptable centre-line angle)."""
    lo, hi = bounds(mesh)  # NaN or infinite when any node is (min and max propagate NaN)
    if not (np.all(np.isfinite(lo)) and np.all(np.isfinite(hi))):
        return _non_finite_report(mesh, np.isfinite(mesh.points).all(axis=1), boundary_layer, angle_limit)
    notes: list[str] = []
    errors: list[str] = []
    structured = recover_structure(mesh)
    dz = exact_layers(mesh)
    if dz is not None:
        values, more = _layered_values(mesh, dz)
        notes += more
    else:
        values, more = cell_metrics(mesh)
        notes += more
        if mesh.dim == 3:
            notes.append("metrics computed on every cell (not an exact z-extrusion with uniform layers)")
        if structured.shape is not None:
            for axis, r in growth_ratios(structured).items():
                values[f"growth_ratio_{axis}"] = r
        values["centre_line_angle"] = non_orthogonality(mesh)
    if structured.shape is None:
        notes.append("not a tensor-product grid: growth ratios and spacing profiles omitted")
    source = f"common practice for finite-volume solvers (setting, default {ANGLE_LIMIT:g})"
    angle = ("deg", 0.0, float(angle_limit), source)
    metrics = {k: summarise(k if not k.startswith("growth_ratio") else "growth_ratio", v,
                            angle if k == "centre_line_angle" else None)
               for k, v in values.items()}
    sj = values["scaled_jacobian"]
    inverted = int(np.count_nonzero(sj < 0.0) if dz is None else
                   sum(np.count_nonzero(a < 0.0) * w for a, w in sj))
    if inverted:
        errors.append(f"{inverted} inverted cells (negative scaled Jacobian)")
    notes.append(ANISOTROPY_NOTE)
    report = {
        "mesh": {"dim": mesh.dim, "cell_type": mesh.cell_type, "n_points": mesh.n_points,
                 "n_cells": mesh.n_cells, "groups": mesh.group_sizes(),
                 "roles": {g.name: g.role for g in mesh.groups},
                 "shape": None if structured.shape is None else list(structured.shape),
                 "structure": "given" if mesh.shape is not None else
                              ("recovered" if structured.shape is not None else "none"),
                 "bounds_m": [[float(a), float(b)] for a, b in zip(lo, hi)]},
        "sources": _sources(angle_limit),
        "metrics": metrics,
        "inverted_cells": inverted,
        "errors": errors,
        "notes": notes,
    }
    if structured.shape is not None:
        report["streamwise_spacing"] = _streamwise_spacing(structured)
    if boundary_layer is not None:
        report["boundary_layer"] = boundary_layer
    return report


def _sources(angle_limit: float) -> dict:
    return {"metrics": VERDICT, "centre_line_angle": "angle between an interior face's normal "
            "and the line joining the centres of the two cells it separates (0 on a rectangular "
            f"grid); limit {angle_limit:g} deg, a setting (default {ANGLE_LIMIT:g}, common practice "
            "for finite-volume solvers)"}


def _non_finite_report(mesh: Mesh, finite: np.ndarray, boundary_layer: dict | None, angle_limit: float) -> dict:
    """The report of a mesh with NaN or infinite coordinates: that is its error, and no
    metric of it means anything (one bad node spoils its cells and the structure)."""
    n = int((~finite).sum())
    cells = int(np.any(~finite[mesh.cells], axis=1).sum())
    good = mesh.points[finite]
    lo, hi = (good.min(axis=0), good.max(axis=0)) if good.size else (np.zeros(3), np.zeros(3))
    report = {
        "mesh": {"dim": mesh.dim, "cell_type": mesh.cell_type, "n_points": mesh.n_points,
                 "n_cells": mesh.n_cells, "groups": mesh.group_sizes(),
                 "roles": {g.name: g.role for g in mesh.groups}, "shape": None, "structure": "none",
                 "bounds_m": [[float(a), float(b)] for a, b in zip(lo, hi)]},
        "sources": _sources(angle_limit),
        "metrics": {},
        "inverted_cells": None,
        "errors": [(f"{n} node{' has' if n == 1 else 's have'} a non-finite coordinate (NaN or infinity), "
                    f"used by {cells} cell{'' if cells == 1 else 's'}: no metric is computed")],
        "notes": ["bounds are those of the finite nodes"],
    }
    if boundary_layer is not None:
        report["boundary_layer"] = boundary_layer
    return report
