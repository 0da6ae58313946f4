"""Per-cell quality metrics of a Mesh (Verdict definitions), computed in chunks.

Quad metrics follow the Verdict Library Reference Manual (Stimpson, Ernst, Knupp, Pebay,
Thompson; Sandia report SAND2007-2853P, 2007). With corners P0..P3 (counter-clockwise),
edges L_k = P_{k+1} - P_k, principal axes X1 = (P1 - P0) + (P2 - P3) and
X2 = (P2 - P1) + (P3 - P0), and corner areas a_k = n . (L_{k-1} x L_k)::

    area            A = (a_0 + a_1 + a_2 + a_3) / 4                     [m2]
    aspect ratio    Lmax (L0 + L1 + L2 + L3) / (4 A)                    [-]  unit square 1
    edge ratio      Lmax / Lmin                                         [-]  unit square 1
    skew            |X1 . X2| / (|X1| |X2|)                             [-]  unit square 0
    scaled Jacobian min_k a_k / (|L_{k-1}| |L_k|), the corner sine      [-]  unit square 1

Verdict takes n as the unit normal at the quad's centre; meshgen fixes it to +z, the
orientation every meshgen quad has (meshgen/mesh.py), so that a clockwise (inverted) cell
gets a negative scaled Jacobian instead of passing as its mirror image. For a correctly
oriented planar quad the two are the same.

3-D meshes: the scaled Jacobian is Verdict's hex definition, the smallest normalised
Jacobian det(e1, e2, e3) / (|e1| |e2| |e3|) over the eight corners and the centre (from
the principal axes; the centre term is recalled from Verdict, not re-read in the manual).
The volume is base area x height for z-extrusions (exact for right prisms) and
meshgen.verify.cell_measures otherwise. Verdict defines no hex aspect ratio, and meshgen's 3-D
meshes are extrusions of the 2-D quads along z whose spanwise thickness is a free choice
(one layer for solvers that need 3-D), so aspect ratio, edge ratio and skew are computed
on each hexahedron's base face 0-1-2-3, which is its 2-D quad. A hex mesh that is not a
z-extrusion gets these three omitted, with a note.
"""

from __future__ import annotations

import numpy as np

from ..meshing.mesh import Mesh
from ..meshing.verify import HEX_CORNER_FRAMES, cell_measures

#: Verdict's stand-ins for zero and infinity (verdict.h, VERDICT_DBL_MIN / _MAX).
DBL_MIN = 1.0e-30
DBL_MAX = 1.0e30

VERDICT = "Verdict Library Reference Manual, Stimpson et al., SAND2007-2853P (2007)"


#: Cells (or faces) per chunk of the per-cell work: the temporaries of a chunk stay in
#: cache and the memory stays bounded (whole-mesh (M, 8, 3) arrays of a 1e7-hexahedron
#: mesh are gigabytes each).
CHUNK = 1 << 16

#: Quad corner k's next and previous corners (counter-clockwise).
NXT, PRV = np.array([1, 2, 3, 0]), np.array([3, 0, 1, 2])


def _chunks(n: int):
    """(start, stop) of consecutive chunks of ``n`` items (a loop over chunks, not items)."""
    return ((s, min(s + CHUNK, n)) for s in range(0, n, CHUNK))


# --- per-cell metrics ---------------------------------------------------------------


def _safe_div(num: np.ndarray, den: np.ndarray, fallback: float) -> np.ndarray:
    ok = np.abs(den) > DBL_MIN
    return np.where(ok, num / np.where(ok, den, 1.0), fallback)


def _sum4(a: np.ndarray) -> np.ndarray:
    """((a[0] + a[1]) + a[2]) + a[3] of rows: the order in which numpy's ``sum(axis=1)``
    adds a row of an (M, 4) array (checked bit for bit), so the values do not change."""
    return ((a[0] + a[1]) + a[2]) + a[3]


def quad_metrics(x: np.ndarray, y: np.ndarray) -> dict[str, np.ndarray]:
    """Verdict quad metrics of corner coordinates ``x``, ``y`` (M, 4) [m], normal +z."""
    # Corner-major rows (4, M): every step below is a contiguous elementwise operation,
    # several times faster than reductions along the short axis of (M, 4) arrays.
    xr, yr = np.ascontiguousarray(x.T), np.ascontiguousarray(y.T)
    ex, ey = xr[NXT] - xr, yr[NXT] - yr  # L_k = P_{k+1} - P_k
    length = np.hypot(ex, ey)
    corner = ex[PRV] * ey - ey[PRV] * ex  # z of L_{k-1} x L_k
    area = _sum4(corner) / 4.0
    lmax = np.maximum(np.maximum(length[0], length[1]), np.maximum(length[2], length[3]))
    lmin = np.minimum(np.minimum(length[0], length[1]), np.minimum(length[2], length[3]))
    x1x, x1y = ex[0] - ex[2], ey[0] - ey[2]  # (P1 - P0) + (P2 - P3)
    x2x, x2y = ex[1] - ex[3], ey[1] - ey[3]  # (P2 - P1) + (P3 - P0)
    sines = _safe_div(corner, length[PRV] * length, 0.0)
    return {
        "area": area,
        # Verdict returns its DBL_MAX for a zero or negative area.
        "aspect_ratio": np.where(area > DBL_MIN, _safe_div(lmax * _sum4(length), 4.0 * area, DBL_MAX),
                                 DBL_MAX),
        "edge_ratio": _safe_div(lmax, lmin, DBL_MAX),
        "skew": np.abs(_safe_div(x1x * x2x + x1y * x2y, np.hypot(x1x, x1y) * np.hypot(x2x, x2y), 0.0)),
        "scaled_jacobian": np.minimum(np.minimum(sines[0], sines[1]), np.minimum(sines[2], sines[3])),
    }


def _det3(a: tuple, b: tuple, c: tuple) -> np.ndarray:
    """a . (b x c) from component arrays (a faster np.cross for large arrays)."""
    return (a[0] * (b[1] * c[2] - b[2] * c[1]) + a[1] * (b[2] * c[0] - b[0] * c[2])
            + a[2] * (b[0] * c[1] - b[1] * c[0]))


def _norm3(a: tuple) -> np.ndarray:
    return np.sqrt(a[0] ** 2 + a[1] ** 2 + a[2] ** 2)


def hex_scaled_jacobian(points: np.ndarray, cells: np.ndarray) -> np.ndarray:
    """Verdict hex scaled Jacobian of hexahedra ``cells`` (M, 8): corners and centre."""
    comp = [np.ascontiguousarray(points[:, a]) for a in range(3)]
    out = np.empty(cells.shape[0])
    for s, e in _chunks(cells.shape[0]):  # chunks of cells, not cells
        out[s:e] = _hex_scaled_jacobian(comp, cells[s:e])
    return out


def _hex_corner_min(comp: list[np.ndarray], cells: np.ndarray) -> np.ndarray:
    """Smallest normalised corner Jacobian of each hexahedron (coordinate columns ``comp``)."""
    f = HEX_CORNER_FRAMES
    corner = [np.take(cells, f[:, m], axis=1) for m in range(4)]  # (M, 8) node ids per frame member
    base = [c[corner[0]] for c in comp]
    e1, e2, e3 = (tuple(c[corner[m]] - b for c, b in zip(comp, base)) for m in (1, 2, 3))
    return _safe_div(_det3(e1, e2, e3), _norm3(e1) * _norm3(e2) * _norm3(e3), 0.0).min(axis=1)


def _hex_centre(comp: list[np.ndarray], cells: np.ndarray) -> np.ndarray:
    """Normalised Jacobian of each hexahedron at its centre, from the principal axes."""
    node = [[c[cells[:, k]] for k in range(8)] for c in comp]  # node[axis][corner] -> (M,)
    x1 = tuple(n[1] + n[2] + n[5] + n[6] - n[0] - n[3] - n[4] - n[7] for n in node)
    x2 = tuple(n[3] + n[2] + n[7] + n[6] - n[0] - n[1] - n[4] - n[5] for n in node)
    x3 = tuple(n[4] + n[5] + n[6] + n[7] - n[0] - n[1] - n[2] - n[3] for n in node)
    return _safe_div(_det3(x1, x2, x3), _norm3(x1) * _norm3(x2) * _norm3(x3), 0.0)


def _hex_scaled_jacobian(comp: list[np.ndarray], cells: np.ndarray) -> np.ndarray:
    return np.minimum(_hex_corner_min(comp, cells), _hex_centre(comp, cells))


def _z_extrusion_extents(z: np.ndarray, xy: tuple, cells: np.ndarray) -> tuple[float, float, float]:
    """Largest |side-edge z|, base-face z range and side-edge xy of hexahedra ``cells``."""
    side_z = z[cells[:, 4:8]] - z[cells[:, 0:4]]
    flat = np.ptp(z[cells[:, 0:4]], axis=1).max(initial=0.0)
    lean = max(float(np.abs(c[cells[:, 4:8]] - c[cells[:, 0:4]]).max(initial=0.0)) for c in xy)
    return float(np.abs(side_z).max(initial=0.0)), float(flat), lean


def _is_z_extrusion(extents: list[tuple[float, float, float]]) -> bool:
    """True when every hex has a base face at one z and side edges 0-4 ... 3-7 along z
    (from the per-chunk extents of ``_z_extrusion_extents``)."""
    side, flat, lean = (max((e[m] for e in extents), default=0.0) for m in range(3))
    scale = side if extents else 1.0
    return bool(flat <= 1e-9 * scale and lean <= 1e-9 * scale)


QUAD_KEYS = ("area", "aspect_ratio", "edge_ratio", "skew", "scaled_jacobian")


def cell_metrics(mesh: Mesh) -> tuple[dict[str, np.ndarray], list[str]]:
    """Per-cell metrics (one value per cell, cell order) and notes on what was omitted."""
    x, y, z = (np.ascontiguousarray(mesh.points[:, a]) for a in range(3))
    n = mesh.n_cells
    if mesh.dim == 2:
        out = {k: np.empty(n) for k in QUAD_KEYS}
        for s, e in _chunks(n):  # chunks of cells, not cells
            c = mesh.cells[s:e]
            for k, v in quad_metrics(x[c], y[c]).items():
                out[k][s:e] = v
        return out, []
    out = {k: np.empty(n) for k in ("scaled_jacobian", "volume", "aspect_ratio", "edge_ratio", "skew")}
    extents = []
    for s, e in _chunks(n):
        c = mesh.cells[s:e]
        out["scaled_jacobian"][s:e] = _hex_scaled_jacobian([x, y, z], c)
        extents.append(_z_extrusion_extents(z, (x, y), c))
        b = c[:, :4]
        base = quad_metrics(x[b], y[b])
        # A z-extruded hex is a right prism: its volume is base area times height, exactly.
        out["volume"][s:e] = base["area"] * (z[c[:, 4]] - z[c[:, 0]])
        for k in ("aspect_ratio", "edge_ratio", "skew"):
            out[k][s:e] = base[k]
    if not _is_z_extrusion(extents):
        for k in ("aspect_ratio", "edge_ratio", "skew"):
            del out[k]
        for s, e in _chunks(n):
            out["volume"][s:e] = cell_measures(Mesh(mesh.points, mesh.cells[s:e], ()))
        return out, [("the hexahedra are not an extrusion along z: aspect ratio, edge ratio "
                     "and skew (computed on the base face of extruded meshes) are omitted")]
    return out, [EXTRUDED_NOTE]


EXTRUDED_NOTE = ("3-D: aspect ratio, edge ratio and skew are those of each hexahedron's base "
                 "face (the extruded 2-D quad); the scaled Jacobian is Verdict's hex one and the "
                 "volume base area x height (exact for these right prisms)")


# --- hexahedra swept from quads -------------------------------------------------------


def swept_corner_min(x: np.ndarray, y: np.ndarray, quads: np.ndarray, thicknesses) -> dict[float, np.ndarray]:
    """``_hex_corner_min`` of the hexahedra that sweep ``quads`` (node ids into ``x``, ``y``
    [m]) through one layer of each thickness [m], from the quads alone.

    In such a hexahedron a corner's two in-plane edges are the quad's edges (z part exactly
    0) and its third edge is exactly (0, 0, +dz) from a bottom corner, (0, 0, -dz) from a
    top one, so the same formulas on the same numbers give the same values bit for bit;
    the in-plane edges are gathered once for every thickness.
    """
    f = HEX_CORNER_FRAMES % 4  # the quad node under each frame member
    up = np.where(HEX_CORNER_FRAMES[:, 0] < 4, 1.0, -1.0)
    out = {float(d): np.empty(quads.shape[0]) for d in thicknesses}
    for s, e in _chunks(quads.shape[0]):  # chunks of quads, not quads
        corner = [np.take(quads[s:e], f[:, m], axis=1) for m in range(3)]  # (M, 8) node ids
        bx, by = x[corner[0]], y[corner[0]]
        e1 = (x[corner[1]] - bx, y[corner[1]] - by, 0.0)
        e2 = (x[corner[2]] - bx, y[corner[2]] - by, 0.0)
        n12 = _norm3(e1) * _norm3(e2)
        for d, o in out.items():  # a few distinct thicknesses
            e3 = (0.0, 0.0, up * d)
            o[s:e] = _safe_div(_det3(e1, e2, e3), n12 * _norm3(e3), 0.0).min(axis=1)
    return out


def swept_centre(x: np.ndarray, y: np.ndarray, quads: np.ndarray, axes_z) -> dict[tuple, np.ndarray]:
    """``_hex_centre`` of the hexahedra swept from ``quads`` through layers whose principal
    axes have the z parts (side, top) in ``axes_z`` (side for X1 and X2, top for X3; sums of
    the plane z in ``_hex_centre``'s node order). The x and y parts are the same in every
    layer (the top nodes sit above the bottom ones), so they are summed once."""
    out = {(float(a), float(b)): np.empty(quads.shape[0]) for a, b in axes_z}
    for s, e in _chunks(quads.shape[0]):
        q = quads[s:e]
        parts = []
        for c in (x, y):
            n = [c[q[:, k % 4]] for k in range(8)]  # nodes 4..7 sit above 0..3
            parts.append((n[1] + n[2] + n[5] + n[6] - n[0] - n[3] - n[4] - n[7],
                          n[3] + n[2] + n[7] + n[6] - n[0] - n[1] - n[4] - n[5],
                          n[4] + n[5] + n[6] + n[7] - n[0] - n[1] - n[2] - n[3]))
        (x1x, x2x, x3x), (x1y, x2y, x3y) = parts
        for (side, top), o in out.items():  # a few tens of distinct layers
            x1, x2, x3 = (x1x, x1y, side), (x2x, x2y, side), (x3x, x3y, top)
            o[s:e] = _safe_div(_det3(x1, x2, x3), _norm3(x1) * _norm3(x2) * _norm3(x3), 0.0)
    return out
