"""Cell quality of a Mesh: per-cell metrics, growth and non-orthogonality, a JSON summary.

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

Growth (expansion) ratio needs the structured layout (Mesh.shape or
``recover_structure``): cell size in an index direction is the mean length of the cell's
edges along it; the ratio across each interior face is larger / smaller size.
Non-orthogonality [deg] is the angle between an interior face's normal and the line
joining the two cell centres; a tensor grid (``mesh.shape``) knows its face pairs by
arithmetic, any other mesh pairs them with a sort, so it needs no structure.

Cost: an exact z-extrusion with uniform layers (``exact_layers``: the builder's meshes)
is reported from one layer per distinct layer thickness, each value counted for every
layer it stands for (``Parts``); the figures are the same numbers as from every cell.
Other meshes are computed cell by cell in chunks of CHUNK, keeping memory bounded.
"""

from __future__ import annotations

import numpy as np

from .boundary_layer import CORRELATIONS, DEFAULT_CORRELATION, delta99, reynolds_x, skin_friction, y_plus
from .errors import InputError, MeshError
from .mesh import Mesh
from .verify import HEX_CORNER_FRAMES, HEX_FACES, QUAD_EDGES, cell_faces, cell_measures, is_tensor_grid

#: Verdict's stand-ins for zero and infinity (verdict.h, VERDICT_DBL_MIN / _MAX).
DBL_MIN = 1.0e-30
DBL_MAX = 1.0e30

VERDICT = "Verdict Library Reference Manual, Stimpson et al., SAND2007-2853P (2007)"

#: Metric -> (unit, acceptable low, acceptable high, source of the range).
LIMITS: dict[str, tuple[str, float | None, float | None, str]] = {
    "area": ("m2", None, None, VERDICT),
    "volume": ("m3", None, None, VERDICT),
    "aspect_ratio": ("-", 1.0, 1.3, VERDICT),
    "edge_ratio": ("-", 1.0, 1.3, VERDICT),
    "skew": ("-", 0.0, 0.5, VERDICT),
    "scaled_jacobian": ("-", 0.3, 1.0, VERDICT),
    "growth_ratio": ("-", 1.0, 1.3, "common practice"),
    "non_orthogonality": ("deg", 0.0, 70.0, "common practice"),
}

ANISOTROPY_NOTE = (
    "Aspect and edge ratios far above Verdict's 1 to 1.3 are intended in the wall layers "
    "(thin cells along the plate resolve the wall-normal gradients); that range is meant "
    "for isotropic meshes, so those counts are information, not faults."
)

PERCENTILES = (1, 5, 50, 95, 99)

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


# --- structure ------------------------------------------------------------------------


def _cluster(values: np.ndarray) -> tuple[int, np.ndarray]:
    """Distinct values up to round-off: their count and each value's rank."""
    order = np.argsort(values, kind="stable")
    v = values[order]
    tol = 1e-12 * max(float(np.abs(v).max(initial=0.0)), 1e-300)
    rank_sorted = np.concatenate([[0], np.cumsum(np.diff(v) > tol)])
    rank = np.empty_like(rank_sorted)
    rank[order] = rank_sorted
    return int(rank_sorted[-1]) + 1, rank


def recover_structure(mesh: Mesh) -> Mesh:
    """The same mesh in structured order (node i + ni (j + nj k), cells i fastest) with
    ``shape`` set, when its points form a tensor-product grid whose cells are the grid's
    cells; otherwise ``mesh`` unchanged (check ``result.shape is None``).

    Cell and facet node orders are kept (only renumbered), so an inverted cell stays
    inverted; cells are reordered, facets keep their order within each group.
    """
    if mesh.shape is not None:
        return mesh
    d = mesh.dim
    counts, ranks = zip(*(_cluster(mesh.points[:, a]) for a in range(d)))
    if int(np.prod(counts)) != mesh.n_points or mesh.n_cells != int(np.prod([n - 1 for n in counts])):
        return mesh
    strides = np.cumprod((1,) + counts[:-1])
    new_id = sum(r * s for r, s in zip(ranks, strides))
    if np.unique(new_id).size != mesh.n_points:
        return mesh
    cell_idx = [r[mesh.cells] for r in ranks]
    # Each cell must span exactly one grid step in every direction with distinct nodes.
    if any(np.any(np.ptp(c, axis=1) != 1) for c in cell_idx):
        return mesh
    cells = new_id[mesh.cells]
    if np.any(np.diff(np.sort(cells, axis=1), axis=1) == 0):
        return mesh
    cell_strides = np.cumprod((1,) + tuple(n - 1 for n in counts[:-1]))
    cell_id = sum(c.min(axis=1) * s for c, s in zip(cell_idx, cell_strides))
    order = np.argsort(cell_id)
    points = np.empty_like(mesh.points)
    points[new_id] = mesh.points
    groups = tuple(type(g)(g.name, g.role, new_id[g.facets], g.patches) for g in mesh.groups)
    return Mesh(points=points, cells=cells[order], groups=groups, shape=tuple(counts),
                blocks=mesh.blocks, cell_group=mesh.cell_group,
                meta={**mesh.meta, "structure": "recovered"})


def _cell_sizes(grid: np.ndarray, axis: int) -> np.ndarray:
    """Mean length of each cell's edges along array ``axis`` of a node grid (…, 3)."""
    # Per coordinate on contiguous copies: the same sums as np.linalg.norm(axis=-1)
    # ((dx dx + dy dy) + dz dz, numpy's order), several times faster than on (…, 3).
    d = [np.diff(np.ascontiguousarray(grid[..., a]), axis=axis) for a in range(3)]
    size = np.sqrt((d[0] * d[0] + d[1] * d[1]) + d[2] * d[2])
    del d
    for other in range(grid.ndim - 1):
        if other != axis:
            n = size.shape[other]
            lo = (slice(None),) * other + (slice(0, n - 1),)
            hi = (slice(None),) * other + (slice(1, n),)
            size = 0.5 * (size[lo] + size[hi])
    return size


def growth_ratios(mesh: Mesh) -> dict[str, np.ndarray]:
    """Larger / smaller cell size across each interior face, per index direction.

    Keys 'i', 'j' (and 'k' in 3-D); structured meshes only (``mesh.shape``).
    """
    grid = mesh.grid()
    out = {}
    for name, axis in zip("ijk", range(mesh.dim - 1, -1, -1)):
        s = _cell_sizes(grid, axis)
        n = s.shape[axis]
        a, b = s.take(np.arange(n - 1), axis=axis), s.take(np.arange(1, n), axis=axis)
        out[name] = (np.maximum(a, b) / np.minimum(a, b)).ravel()
    return out


# --- non-orthogonality ----------------------------------------------------------------


def interior_face_pairs(mesh: Mesh) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Interior faces as directed by their first cell, that cell and the other cell."""
    faces, owner = cell_faces(mesh)
    s = np.sort(faces, axis=1)
    n = np.int64(mesh.n_points)
    if s.shape[1] == 2:
        key = s[:, 0] * n + s[:, 1]
    elif float(mesh.n_points) ** 3 < 2.0**62:
        key = (s[:, 0] * n + s[:, 1]) * n + s[:, 2]  # three smallest nodes name a quad face
    else:
        key = np.unique(np.ascontiguousarray(s).view([("", s.dtype)] * 4).ravel(), return_inverse=True)[1]
    order = np.argsort(key, kind="stable")
    same = key[order][1:] == key[order][:-1]
    if np.any(same[1:] & same[:-1]):
        raise MeshError("some faces are shared by more than two cells")
    first, second = order[:-1][same], order[1:][same]
    if np.any(s[first] != s[second]):
        raise MeshError("two different faces share three nodes")
    return faces[first], owner[first], owner[second]


#: Face of the owner cell (index into QUAD_EDGES / HEX_FACES) shared with its neighbour
#: across +i, +j, +k: the face the sort-based pairing keeps (the lower cell id owns it).
_FACE_TOWARDS = {2: (1, 2), 3: (3, 4, 1)}


def _cell_centres(points: np.ndarray, cells: np.ndarray) -> np.ndarray:
    """Mean of each cell's nodes, (M, 2) in 2-D (x, y) or (M, 3), computed in chunks."""
    d = 2 if cells.shape[1] == 4 else 3
    out = np.empty((cells.shape[0], d))
    if d == 2:
        x, y = (np.ascontiguousarray(points[:, a]) for a in (0, 1))
        for s, e in _chunks(cells.shape[0]):
            out[s:e, 0], out[s:e, 1] = x[cells[s:e]].mean(axis=1), y[cells[s:e]].mean(axis=1)
        return out
    for s, e in _chunks(cells.shape[0]):
        out[s:e] = points[cells[s:e]].mean(axis=1)
    return out


def _face_angles(points: np.ndarray, centres: np.ndarray, faces: np.ndarray, own: np.ndarray,
                 nbr: np.ndarray) -> np.ndarray:
    """Non-orthogonality [deg] of interior faces directed by their owner; ``own``, ``nbr``
    index ``centres``."""
    p = points
    if faces.shape[1] == 2:
        x, y = p[:, 0], p[:, 1]
        cx, cy = centres[:, 0], centres[:, 1]
        nx, ny = y[faces[:, 1]] - y[faces[:, 0]], x[faces[:, 0]] - x[faces[:, 1]]  # outward from the owner
        lx, ly = cx[nbr] - cx[own], cy[nbr] - cy[own]
        cos = (nx * lx + ny * ly) / (np.hypot(nx, ny) * np.hypot(lx, ly))
        return np.degrees(np.arccos(np.clip(cos, -1.0, 1.0)))
    normal = np.cross(p[faces[:, 2]] - p[faces[:, 0]], p[faces[:, 3]] - p[faces[:, 1]])
    link = centres[nbr] - centres[own]
    scale = np.linalg.norm(normal, axis=1) * np.linalg.norm(link, axis=1)
    cos = np.einsum("fx,fx->f", normal, link) / scale
    return np.degrees(np.arccos(np.clip(cos, -1.0, 1.0)))


def _structured_angles(mesh: Mesh, c0: int, c1: int, directions: tuple[int, ...]) -> list[np.ndarray]:
    """Non-orthogonality [deg] of the interior faces owned by cells c0 <= c < c1 of a tensor
    grid (``is_tensor_grid``), one array per index direction in ``directions`` (0 = i).

    With cell id i + (ni-1) (j + (nj-1) k), the neighbour across +i, +j, +k is the cell
    1, ni-1, (ni-1)(nj-1) ids further on, so the pairs are known without a sort; each face
    is the owner's, as in ``interior_face_pairs``, so the angles are the same numbers.
    """
    counts = [n - 1 for n in mesh.shape]
    strides = np.cumprod([1] + counts[:-1])
    reach = c1 + max(int(strides[d]) for d in directions)
    points = np.ascontiguousarray(mesh.points[:, :2]) if mesh.dim == 2 else mesh.points
    centres = _cell_centres(points, mesh.cells[c0:min(reach, mesh.n_cells)])
    table = QUAD_EDGES if mesh.dim == 2 else HEX_FACES
    parts: list[list[np.ndarray]] = [[] for _ in directions]
    for s, e in _chunks(c1 - c0):  # chunks of cells, not cells
        own = np.arange(c0 + s, c0 + e, dtype=np.int64)
        for out, d in zip(parts, directions):
            o = own[(own // strides[d]) % counts[d] < counts[d] - 1]
            faces = np.take(mesh.cells[o[0]:o[-1] + 1] if o.size else mesh.cells[:0],
                            table[_FACE_TOWARDS[mesh.dim][d]], axis=1)
            faces = faces[o - o[0]] if o.size else faces
            out.append(_face_angles(points, centres, faces, o - c0, o + strides[d] - c0))
    return [np.concatenate(p) if p else np.empty(0) for p in parts]


def _grid_angles_2d(mesh: Mesh) -> np.ndarray:
    """Non-orthogonality [deg] of a 2-D tensor grid from slices of its node grid: the
    same formulas on the same numbers as ``_face_angles`` (i faces, then j faces), with
    no gathers. Cell centres are ((P0 + P1) + P2) + P3) / 4, numpy's ``mean`` order."""
    ni, nj = mesh.shape
    g = mesh.grid()
    rows = max(1, CHUNK // ni)  # cell rows per chunk
    out_i, out_j = [], []

    def angle(nx, ny, lx, ly):
        cos = (nx * lx + ny * ly) / (np.hypot(nx, ny) * np.hypot(lx, ly))
        return np.degrees(np.arccos(np.clip(cos, -1.0, 1.0))).ravel()

    for j0 in range(0, nj - 1, rows):  # chunks of cell rows, not cells
        j1 = min(j0 + rows, nj - 1)
        top = min(j1 + 1, nj - 1)  # one more cell row for the j faces of row j1 - 1
        X, Y = g[j0:top + 1, :, 0], g[j0:top + 1, :, 1]
        cx = (((X[:-1, :-1] + X[:-1, 1:]) + X[1:, 1:]) + X[1:, :-1]) / 4
        cy = (((Y[:-1, :-1] + Y[:-1, 1:]) + Y[1:, 1:]) + Y[1:, :-1]) / 4
        m = j1 - j0  # cell rows owned by this chunk
        # +i face of cell (i, j): nodes (i+1, j) -> (i+1, j+1)
        out_i.append(angle(Y[1:m + 1, 1:-1] - Y[:m, 1:-1], X[:m, 1:-1] - X[1:m + 1, 1:-1],
                           cx[:m, 1:] - cx[:m, :-1], cy[:m, 1:] - cy[:m, :-1]))
        k = min(m, cx.shape[0] - 1)  # owners with a +j neighbour
        # +j face of cell (i, j): nodes (i+1, j+1) -> (i, j+1)
        out_j.append(angle(Y[1:k + 1, :-1] - Y[1:k + 1, 1:], X[1:k + 1, 1:] - X[1:k + 1, :-1],
                           cx[1:k + 1] - cx[:k], cy[1:k + 1] - cy[:k]))
    return np.concatenate(out_i + out_j)


def non_orthogonality(mesh: Mesh) -> np.ndarray:
    """Angle [deg] between each interior face's normal and the owner-to-neighbour line.

    Tensor grids (``mesh.shape`` with the grid's own cells) pair faces by arithmetic,
    i faces first, then j (then k); other meshes pair them by a sort, in key order.
    """
    if is_tensor_grid(mesh):
        if mesh.dim == 2:
            return _grid_angles_2d(mesh)
        return np.concatenate(_structured_angles(mesh, 0, mesh.n_cells, tuple(range(mesh.dim))))
    faces, own, nbr = interior_face_pairs(mesh)
    points = np.ascontiguousarray(mesh.points[:, :2]) if mesh.dim == 2 else mesh.points
    centres = _cell_centres(points, mesh.cells)
    out = np.empty(own.size)
    for s, e in _chunks(own.size):  # chunks of faces, not faces
        out[s:e] = _face_angles(points, centres, faces[s:e], own[s:e], nbr[s:e])
    return out


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
    ni, nj, nk = mesh.shape
    planes = mesh.points.reshape(nk, ni * nj, 3)
    z = planes[:, 0, 2].copy()
    base = planes[0, :, :2]
    step = max(1, (1 << 20) // (ni * nj))  # node planes per block
    for k0 in range(0, nk, step):  # blocks of planes, not nodes
        block = planes[k0:k0 + step]
        if not (np.array_equal(block[:, :, :2], np.broadcast_to(base, block[:, :, :2].shape))
                and np.array_equal(block[:, :, 2], np.broadcast_to(z[k0:k0 + step, None], block[:, :, 2].shape))):
            return None
    dz = np.diff(z)
    if dz.min() <= 0 or dz.max() - dz.min() > 8 * np.finfo(float).eps * np.abs(z).max():
        return None
    return dz


def _layered_values(mesh: Mesh, dz: np.ndarray) -> tuple[dict[str, Parts], list[str]]:
    """The report's metrics of an exact extrusion (``exact_layers``) as ``Parts``: each
    distinct layer thickness computed on its first layer, counted for all its layers."""
    ni, nj, nk = mesh.shape
    n2c, n_layers = (ni - 1) * (nj - 1), nk - 1
    thick, first, count = np.unique(dz, return_index=True, return_counts=True)
    values: dict[str, Parts] = {"scaled_jacobian": []}  # filled below, first as in cell_metrics
    notes: list[str] = []
    comp = [np.ascontiguousarray(mesh.points[:, a]) for a in range(3)]
    corner_min = {}
    for k, w in zip(first, count):  # distinct thicknesses: a few (rounding of linspace)
        cells = mesh.cells[k * n2c:(k + 1) * n2c]
        v, notes = cell_metrics(Mesh(mesh.points, cells, ()))
        corner_min[dz[k]] = np.concatenate([_hex_corner_min(comp, cells[s:e]) for s, e in _chunks(n2c)])
        values.setdefault("volume", []).append((v["volume"], int(w)))  # base area x dz
        for key in ("aspect_ratio", "edge_ratio", "skew"):  # the base face's: the same every layer
            if key in v and key not in values:
                values[key] = [(v[key], n_layers)]
    # The corner Jacobians see a layer only through dz; the centre one also through the
    # z components of its principal axes, sums of the plane z (rounding differs from
    # layer to layer), so it is computed once per distinct (dz, axes' z) of the layers.
    z = mesh.points[::ni * nj, 2]
    b, t = z[:-1], z[1:]
    side = b + b + t + t - b - b - t - t  # z of X1 and of X2: node order of _hex_centre
    key = np.stack([dz, side, t + t + t + t - b - b - b - b], axis=1)
    _, first_k, count_k = np.unique(key, axis=0, return_index=True, return_counts=True)
    for k, w in zip(first_k, count_k):  # distinct layer keys: a few tens at most
        cells = mesh.cells[k * n2c:(k + 1) * n2c]
        centre = np.concatenate([_hex_centre(comp, cells[s:e]) for s, e in _chunks(n2c)])
        values["scaled_jacobian"].append((np.minimum(corner_min[dz[k]], centre), int(w)))
    two = Mesh(mesh.points[:2 * ni * nj], mesh.cells[:n2c], (), shape=(ni, nj, 2))
    for axis, r in growth_ratios(two).items():
        if axis != "k":
            values[f"growth_ratio_{axis}"] = [(r, n_layers)]
    # Along k every cell of a layer has size dz exactly (its xy edges have zero length).
    values["growth_ratio_k"] = [(np.maximum(dz[1:], dz[:-1]) / np.minimum(dz[1:], dz[:-1]), n2c)]
    angles: Parts = []
    for k, w in zip(first, count):
        for a in _structured_angles(mesh, k * n2c, (k + 1) * n2c, (0, 1)):
            angles.append((a, int(w)))
    # k faces: normal along z from the base xy, centre line along z: the same every layer.
    angles.append((_structured_angles(mesh, 0, n2c, (2,))[0], n_layers - 1))
    values["non_orthogonality"] = angles
    notes.append(f"exact z-extrusion of {n_layers} uniform layers: metrics computed on one layer "
                 f"per distinct layer thickness ({thick.size}, differing only by the rounding of the "
                 f"plane z; the scaled Jacobian on one layer per distinct thickness and plane-z sums, "
                 f"{first_k.size}) and counted for every layer, instead of on every cell")
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


def summarise(name: str, values: np.ndarray | Parts) -> dict:
    """min, max, mean, percentiles and the count outside the acceptable range.

    ``values`` is one value per cell (or face), or ``Parts``: (values, multiplicity) pairs.
    """
    unit, lo, hi, source = LIMITS[name]
    if isinstance(values, list):
        parts = [(np.asarray(v, dtype=float), int(w)) for v, w in values if np.size(v) and w]
        n = sum(v.size * w for v, w in parts)
        flat = np.concatenate([v for v, _ in parts]) if parts else np.empty(0)
        weight = np.concatenate([np.full(v.size, w, dtype=np.int64) for v, w in parts]) if parts else None
    else:
        flat = np.asarray(values, dtype=float)
        n, parts, weight = flat.size, None, None
    out = {"unit": unit, "count": int(n), "min": None, "max": None, "mean": None}
    if n:
        order = np.argsort(flat, kind="stable") if weight is not None else None
        v = flat[order] if order is not None else np.sort(flat)
        pct = _percentiles(v, None if order is None else np.cumsum(weight[order]))
        mean = flat.mean() if parts is None else sum(p.sum() * w for p, w in parts) / n
        out.update(min=_num(flat.min()), max=_num(flat.max()), mean=_num(mean))
    else:
        pct = [np.nan] * len(PERCENTILES)
    out.update({f"p{q}": _num(x) for q, x in zip(PERCENTILES, pct)})
    if lo is not None:
        bad = (lambda a: int(np.count_nonzero((a < lo) | (a > hi))))
        out.update(acceptable=[lo, hi], range_source=source,
                   outside=bad(flat) if parts is None else sum(bad(p) * w for p, w in parts))
    return out


def _streamwise_spacing(mesh: Mesh) -> dict:
    """Node intervals [m] along the first grid row (j = 0, k = 0) and their growth."""
    row = mesh.grid()[(0,) * (mesh.dim - 1)]  # (ni, 3)
    dx = np.linalg.norm(np.diff(row, axis=0), axis=1)
    return {"x_m": [float(v) for v in row[:, 0]], "spacing_m": [float(v) for v in dx],
            "growth_ratio": [float(v) for v in np.maximum(dx[1:], dx[:-1]) / np.minimum(dx[1:], dx[:-1])]}


def quality_report(mesh: Mesh, boundary_layer: dict | None = None) -> dict:
    """The whole quality summary as plain JSON-ready data (``boundary_layer``, the result
    of ``boundary_layer_report``, is embedded when given)."""
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
        values["non_orthogonality"] = non_orthogonality(mesh)
    if structured.shape is None:
        notes.append("not a tensor-product grid: growth ratios and spacing profiles omitted")
    metrics = {k: summarise(k if not k.startswith("growth_ratio") else "growth_ratio", v)
               for k, v in values.items()}
    sj = values["scaled_jacobian"]
    inverted = int(np.count_nonzero(sj < 0.0) if dz is None else
                   sum(np.count_nonzero(a < 0.0) * w for a, w in sj))
    if inverted:
        errors.append(f"{inverted} inverted cells (negative scaled Jacobian)")
    notes.append(ANISOTROPY_NOTE)
    lo, hi = np.min(mesh.points, axis=0), np.max(mesh.points, axis=0)
    report = {
        "mesh": {"dim": mesh.dim, "cell_type": mesh.cell_type, "n_points": mesh.n_points,
                 "n_cells": mesh.n_cells, "groups": mesh.group_sizes(),
                 "roles": {g.name: g.role for g in mesh.groups},
                 "shape": None if structured.shape is None else list(structured.shape),
                 "structure": "given" if mesh.shape is not None else
                              ("recovered" if structured.shape is not None else "none"),
                 "bounds_m": [[float(a), float(b)] for a, b in zip(lo, hi)]},
        "sources": {"metrics": VERDICT, "non_orthogonality": "angle between face normal and "
                    "centre-to-centre line; 70 deg limit is common practice"},
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
    grid = mesh.grid()
    grid = grid[0] if mesh.dim == 3 else grid
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
                          band: tuple[float, float] | None = None) -> dict:
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

    def at(xs: float) -> dict:
        col = int(np.argmin(np.abs(x - xs)))
        re = float(reynolds_x(x[col], velocity, nu))
        d99 = float(delta99(x[col], re, regime)) if re > 0 else 0.0
        yp = float(y_plus(h1[col], velocity, nu, skin_friction(re, correlation))) if re > 0 else None
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
    re = reynolds_x(x[on], velocity, nu)
    yp = y_plus(h1[on], velocity, nu, skin_friction(re, correlation))
    edges = np.concatenate([[x[0]], 0.5 * (x[1:] + x[:-1]), [x[-1]]])
    weight = np.diff(edges)[on]
    total = float(weight.sum())
    c = CORRELATIONS[correlation]
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
            "band_rule": "given" if band is not None
                         else f"{Y_PLUS_BAND[0]} to {Y_PLUS_BAND[1]} x target, meshgen's choice",
            "fraction_below": float(weight[yp < lo].sum() / total),
            "fraction_in_band": float(weight[(yp >= lo) & (yp <= hi)].sum() / total),
            "fraction_above": float(weight[yp > hi].sum() / total),
        },
        "notes": notes,
    }


# --- report.md ---------------------------------------------------------------------------


def _fmt(v) -> str:
    if v is None:
        return "-"
    if isinstance(v, (int, np.integer)) and not isinstance(v, bool):
        return str(v)
    return "inf" if abs(v) >= DBL_MAX else f"{v:.4g}"


def _table(head: list[str], rows: list[list]) -> list[str]:
    return ["| " + " | ".join(head) + " |", "|" + "---|" * len(head)] + [
        "| " + " | ".join(c if isinstance(c, str) else _fmt(c) for c in r) + " |" for r in rows]


def _bl_markdown(bl: dict) -> list[str]:
    if "omitted" in bl:
        return ["## Boundary layer", "", f"Omitted: {bl['omitted']}.", ""]
    yp, ref = bl["y_plus"], bl["reference"]
    out = ["## Boundary layer", "",
           (f"{bl['regime']} flow, U = {_fmt(bl['velocity_m_s'])} m/s, nu = {_fmt(bl['nu_m2_s'])} m2/s, "
           f"plate length {_fmt(bl['plate_length_m'])} m (Re_L = {_fmt(bl['re_l'])}); skin friction "
           f"{bl['formula']} ({bl['correlation_source']}). Cells in delta99: "
           f"{bl['definitions']['cells_in_delta99']}."), ""]
    out += _table(["x/L", "nearest wall node x [m]", "Re_x", "delta99 [m]", "cells in delta99",
                   "first cell [m]", "y+"],
                  [[r["fraction"], r["x_m"], r["re_x"], r["delta99_m"], r["cells_in_delta99"],
                    r["first_cell_height_m"], r["y_plus"]] for r in bl["stations"]])
    out += ["", (f"Reference station x = {_fmt(ref['x_m'])} m: first cell "
                 f"{_fmt(ref['first_cell_height_m'])} m, "
            f"y+ {_fmt(ref['y_plus'])} (target {_fmt(bl['y_plus_target'])}), largest wall-normal growth "
            f"ratio {_fmt(ref['max_growth_ratio'])}."), "",
            (f"Estimated first-cell y+ along the plate: min {_fmt(yp['min'])}, length-weighted mean "
            f"{_fmt(yp['mean'])}, max {_fmt(yp['max'])}. Band {_fmt(yp['band'][0])} to {_fmt(yp['band'][1])} "
            f"({yp['band_rule']}): {100 * yp['fraction_in_band']:.1f} % of the plate inside, "
            f"{100 * yp['fraction_below']:.1f} % below, {100 * yp['fraction_above']:.1f} % above."), ""]
    return out


def quality_markdown(report: dict, case_name: str, pictures=()) -> str:
    """report.md text: tables of ``report`` and the pictures as relative links.

    ``pictures`` are paths; an absolute path is linked by its file name (report.md is
    written beside the pictures), a relative one as given.
    """
    from pathlib import Path

    m = report["mesh"]
    out = [f"# Mesh quality: {case_name}", "",
           f"{m['n_cells']} {m['cell_type']} cells, {m['n_points']} nodes, {m['dim']}-D; structured layout: "
           f"{m['structure']}" + (f" ({' x '.join(map(str, m['shape']))} nodes)." if m["shape"] else "."), ""]
    out += _table(["group", "role", "facets"], [[k, m["roles"][k], v] for k, v in m["groups"].items()])
    out += ["", "## Errors", ""] + ([f"- **{e}**" for e in report["errors"]] or ["None."]) + [""]
    rows = []
    for name, s in report["metrics"].items():
        acc = "-" if "acceptable" not in s else f"{_fmt(s['acceptable'][0])} to {_fmt(s['acceptable'][1])}"
        rows.append([name.replace("_", " "), s["unit"], s["min"], s["p5"], s["p50"], s["p95"], s["max"],
                     acc, s.get("outside", "-") if "outside" in s else "-"])
    out += ["## Cell metrics", "", (f"Definitions: {report['sources']['metrics']}; non-orthogonality: "
            f"{report['sources']['non_orthogonality']}."), ""]
    out += _table(["metric", "unit", "min", "p5", "median", "p95", "max", "acceptable", "outside"], rows)
    out.append("")
    if "boundary_layer" in report:
        out += _bl_markdown(report["boundary_layer"])
    notes = report["notes"] + report.get("boundary_layer", {}).get("notes", [])
    out += ["## Notes", ""] + [f"- {n}" for n in notes] + [""]
    if pictures:
        out += ["## Pictures", ""]
        for p in pictures:
            p = Path(p)
            link = p.name if p.is_absolute() else p.as_posix()
            out += [f"![{p.stem.replace('_', ' ')}]({link})", ""]
    return "\n".join(out)
