"""Structure of a Mesh: tensor-grid recovery, growth ratios, interior face pairs, non-orthogonality.

Growth (expansion) ratio needs the structured layout (Mesh.shape or
``recover_structure``): cell size in an index direction is the mean length of the cell's
edges along it; the ratio across each interior face is larger / smaller size.
Non-orthogonality [deg] is the angle between an interior face's normal and the line
joining the two cell centres; a tensor grid (``mesh.shape``) knows its face pairs by
arithmetic, any other mesh pairs them with a sort, so it needs no structure.
"""

from __future__ import annotations

import numpy as np

from ..core.errors import MeshError
from ..meshing.mesh import Mesh
from ..meshing.verify import HEX_FACES, QUAD_EDGES, cell_faces, is_tensor_grid
from .cell_metrics import CHUNK, _chunks

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
