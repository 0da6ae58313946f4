"""Checks every Mesh must pass before it is written: orientation, closure, tags.

All checks are vectorised; each failure raises ``MeshError`` with what was found.

Faces are matched by their node sets through one sort of integer keys (numpy's sort of
int64 is tens of times faster than ``np.unique`` on structured rows). A structured mesh
whose cells are exactly the tensor-product cells of its ``shape`` has its boundary known in
closed form, so its facets are checked against the grid sides without any sort; anything
that does not pass that exact check goes through the general path, which finds and names
the problem.
"""

from __future__ import annotations

import numpy as np

from ..core.errors import MeshError
from .mesh import ExtrudedMesh, Mesh, extrude

#: Outward-ordered faces of a VTK hexahedron (right-hand normal points out of the cell).
HEX_FACES = np.array(
    [[0, 3, 2, 1], [4, 5, 6, 7], [0, 1, 5, 4], [1, 2, 6, 5], [2, 3, 7, 6], [3, 0, 4, 7]]
)
#: Counter-clockwise edges of a quad (the cell lies to the left of each).
QUAD_EDGES = np.array([[0, 1], [1, 2], [2, 3], [3, 0]])
#: For each hex corner, the three neighbours that form a right-handed frame.
HEX_CORNER_FRAMES = np.array(
    [[0, 1, 3, 4], [1, 2, 0, 5], [2, 3, 1, 6], [3, 0, 2, 7],
     [4, 7, 5, 0], [5, 4, 6, 1], [6, 5, 7, 2], [7, 6, 4, 3]]
)
#: Cells per block of the Jacobian check: the temporaries of a block stay in cache and
#: the memory stays bounded (a 1e7-hexahedron mesh would need gigabytes at once).
JACOBIAN_BLOCK = 1 << 15


def _corner_jacobians(xyz: list[np.ndarray], c: np.ndarray) -> np.ndarray:
    """Signed corner Jacobians of cells ``c`` from coordinate columns ``xyz``."""
    if c.shape[1] == 4:
        x, y = xyz[0][c], xyz[1][c]
        nxt, prev = np.roll(np.arange(4), -1), np.roll(np.arange(4), 1)
        return (x[:, nxt] - x) * (y[:, prev] - y) - (y[:, nxt] - y) * (x[:, prev] - x)
    f = HEX_CORNER_FRAMES
    x, y, z = (a[c] for a in xyz)

    def corner(a, m):  # the m-th node of every corner frame: np.take, faster than a[:, f[:, m]]
        return np.take(a, f[:, m], axis=1)

    # e_m = corner's m-th neighbour minus the corner; Jacobian = e1 . (e2 x e3)
    e = [tuple(corner(a, m) - corner(a, 0) for a in (x, y, z)) for m in (1, 2, 3)]
    (ax, ay, az), (bx, by, bz), (cx, cy, cz) = e
    return ax * (by * cz - bz * cy) + ay * (bz * cx - bx * cz) + az * (bx * cy - by * cx)


def corner_jacobians(mesh: Mesh) -> np.ndarray:
    """Signed corner Jacobians, shape (cells, corners): area [m2] or volume [m3] measures."""
    xyz = [np.ascontiguousarray(mesh.points[:, a]) for a in range(mesh.dim)]
    return _corner_jacobians(xyz, mesh.cells)


def _count_inverted(mesh: Mesh) -> int:
    """Cells with a corner Jacobian <= 0, computed block by block (bounded memory)."""
    xyz = [np.ascontiguousarray(mesh.points[:, a]) for a in range(mesh.dim)]
    bad = 0
    for start in range(0, mesh.n_cells, JACOBIAN_BLOCK):  # blocks of cells, not cells
        jac = _corner_jacobians(xyz, mesh.cells[start : start + JACOBIAN_BLOCK])
        bad += int(np.count_nonzero(jac.min(axis=1) <= 0))
    return bad


#: Grid offsets (di, dj, dk) of the VTK hexahedron's corners and the quad's corners.
HEX_CORNER_IJK = np.array([[0, 0, 0], [1, 0, 0], [1, 1, 0], [0, 1, 0],
                           [0, 0, 1], [1, 0, 1], [1, 1, 1], [0, 1, 1]])
#: Quad corner frames: the corner, the next and the previous corner (counter-clockwise).
QUAD_FRAMES = np.array([[c, (c + 1) % 4, (c - 1) % 4] for c in range(4)])


def _corner_edges(coords: list[np.ndarray], frame: np.ndarray, edges: dict) -> tuple[int, list]:
    """The edges of a corner frame as (sign, [unsigned edge components]) for a block of cells.

    ``coords`` are the block's node coordinate arrays, shape (nk, nj, ni) in 3-D and
    (nj, ni) in 2-D; ``frame`` lists the corner and its neighbours (offsets in
    HEX_CORNER_IJK). Each neighbour differs from the corner along one axis, so its edge is
    a grid edge taken low to high node, times -1 when the neighbour is the low node.
    Flipping signs is exact in floating point, so the Jacobian is the product of the signs
    and the determinant of the unsigned edges, bit for bit. ``edges`` caches each grid edge:
    the twelve edges of a cell serve its corners twice each.
    """
    shape = coords[0].shape[::-1]  # nodes along (i, j[, k])
    corner = HEX_CORNER_IJK[frame[0]][: len(shape)]
    sign, out = 1, []
    for n in frame[1:]:
        other = HEX_CORNER_IJK[n][: len(shape)]
        axis = int(np.flatnonzero(other != corner)[0])
        low = np.minimum(corner, other)
        key = (axis, *low)
        if key not in edges:
            high = low.copy()
            high[axis] = 1

            def at(off):
                return tuple(slice(off[d], off[d] + shape[d] - 1) for d in reversed(range(len(shape))))

            edges[key] = [c[at(high)] - c[at(low)] for c in coords]
        sign = sign if other[axis] > corner[axis] else -sign
        out.append(edges[key])
    return sign, out


def _grid_blocks(shape: tuple[int, ...]):
    """(k0, k1, j0, j1) node ranges of blocks of about JACOBIAN_BLOCK cells of a grid."""
    ni, nj = shape[0], shape[1]
    nk = shape[2] if len(shape) == 3 else 2
    layer = (ni - 1) * (nj - 1)
    if layer >= JACOBIAN_BLOCK:
        rows = max(1, JACOBIAN_BLOCK // (ni - 1))
        return [(k, k + 1, j, min(j + rows, nj - 1)) for k in range(nk - 1) for j in range(0, nj - 1, rows)]
    layers = JACOBIAN_BLOCK // layer
    return [(k, min(k + layers, nk - 1), 0, nj - 1) for k in range(0, nk - 1, layers)]


def _count_inverted_grid(mesh: Mesh) -> int:
    """``_count_inverted`` for a tensor grid, from node-grid slices instead of gathers.

    The corner frames are those of HEX_CORNER_FRAMES (quads: next and previous corner),
    and each edge is the same difference of the same two coordinates, so the Jacobians
    are identical to ``corner_jacobians``; blocks of cells small enough to stay in cache.
    """
    shape = mesh.shape
    ni, nj = shape[0], shape[1]
    nk = shape[2] if len(shape) == 3 else 1
    grid = mesh.points.reshape(nk, nj, ni, 3)
    frames = QUAD_FRAMES if mesh.dim == 2 else HEX_CORNER_FRAMES
    bad = 0
    for k0, k1, j0, j1 in _grid_blocks(shape):  # blocks of cells, not cells
        if mesh.dim == 2:
            coords = [np.ascontiguousarray(grid[0, j0 : j1 + 1, :, a]) for a in range(2)]
        else:
            coords = [np.ascontiguousarray(grid[k0 : k1 + 1, j0 : j1 + 1, :, a]) for a in range(3)]
        edges: dict = {}
        low = None
        for frame in frames:  # four or eight corners, a fixed table
            sign, e = _corner_edges(coords, frame, edges)
            if mesh.dim == 2:
                (ax, ay), (bx, by) = e
                jac = ax * by - ay * bx
            else:
                (ax, ay, az), (bx, by, bz), (cx, cy, cz) = e
                jac = ax * (by * cz - bz * cy) + ay * (bz * cx - bx * cz) + az * (bx * cy - by * cx)
            if sign < 0:
                np.negative(jac, out=jac)
            low = jac if low is None else np.minimum(low, jac, out=low)
        bad += int(np.count_nonzero(low <= 0))
    return bad


def cell_measures(mesh: Mesh) -> np.ndarray:
    """Cell areas [m2] (shoelace) or volumes [m3] (six-pyramid decomposition)."""
    p = mesh.points
    c = mesh.cells
    if mesh.dim == 2:
        x = p[c, 0]
        y = p[c, 1]
        return 0.5 * np.sum(x * np.roll(y, -1, axis=1) - np.roll(x, -1, axis=1) * y, axis=1)
    centre = p[c].mean(axis=1)
    vol = np.zeros(c.shape[0])
    for face in HEX_FACES:  # six faces, not cells: the loop is over a fixed table
        q = p[c[:, face]]
        fc = q.mean(axis=1)
        for a in range(4):
            b = (a + 1) % 4
            vol += np.einsum("cx,cx->c", q[:, a] - centre, np.cross(q[:, b] - centre, fc - centre)) / 6.0
    return vol


def _canonical(faces: np.ndarray) -> np.ndarray:
    """Rotate each directed face so its smallest node comes first (order kept)."""
    n = faces.shape[1]
    if n == 2:
        return faces
    start = np.argmin(faces, axis=1)
    idx = (start[:, None] + np.arange(n)[None, :]) % n
    return np.take_along_axis(faces, idx, axis=1)


def cell_faces(mesh: Mesh) -> tuple[np.ndarray, np.ndarray]:
    """All outward-directed faces of all cells, and the cell each belongs to."""
    table = QUAD_EDGES if mesh.dim == 2 else HEX_FACES
    # np.take along the short axis is several times faster than fancy indexing cells[:, table]
    faces = np.take(mesh.cells, table.ravel(), axis=1).reshape(-1, table.shape[1])
    owner = np.repeat(np.arange(mesh.n_cells, dtype=np.int64), table.shape[0])
    return faces, owner


def _face_runs(faces: np.ndarray, n_points: int) -> tuple[np.ndarray, int]:
    """The id of each face's node set (equal ids for equal sets, in any order), and how many.

    One int64 key per pair of sorted node ids (exact while ``n_points`` < 2**31); lines
    need one key and one argsort, quads two keys and one lexsort.
    """
    s = np.sort(faces, axis=1).astype(np.int64, copy=False)
    if n_points < 2**31:
        keys = [s[:, k] * n_points + s[:, k + 1] for k in range(s.shape[1] - 2, -1, -2)]
    else:
        keys = [s[:, k] for k in range(s.shape[1] - 1, -1, -1)]
    del s
    order = np.argsort(keys[0]) if len(keys) == 1 else np.lexsort(keys)
    new = np.zeros(order.size, dtype=bool)
    new[:1] = True
    for k in keys:  # two keys at most
        ks = k[order]
        new[1:] |= ks[1:] != ks[:-1]
    run = np.empty(order.size, dtype=np.int64)
    run[order] = np.cumsum(new) - 1
    return run, int(np.count_nonzero(new))


def boundary_faces(mesh: Mesh) -> tuple[np.ndarray, np.ndarray]:
    """The faces that belong to one cell only, outward-directed, and their cells."""
    faces, owner = cell_faces(mesh)
    run, n = _face_runs(faces, mesh.n_points)
    counts = np.bincount(run, minlength=n)
    if np.any(counts > 2):
        raise MeshError(f"{int(np.sum(counts > 2))} faces are shared by more than two cells")
    once = counts[run] == 1
    return faces[once], owner[once]


def _structured_offsets(shape: tuple[int, ...]) -> np.ndarray:
    """Node-id offsets of a cell's corners from its first node, in the cell node order."""
    ni = shape[0]
    quad = np.array([0, 1, 1 + ni, ni], dtype=np.int64)
    return quad if len(shape) == 2 else np.concatenate([quad, quad + ni * shape[1]])


def is_tensor_grid(mesh: Mesh) -> bool:
    """True when the cells are exactly the tensor-product cells of ``mesh.shape``.

    A lazy extrusion is one exactly when its base is (layer k's cells are the base's
    shifted by k planes), so its hexahedra are not built for this."""
    if isinstance(mesh, ExtrudedMesh) and not mesh.built():
        return mesh.shape is not None and min(mesh.shape) >= 2 and is_tensor_grid(mesh.base)
    shape = mesh.shape
    if shape is None or len(shape) != mesh.dim or min(shape) < 2:
        return False
    if int(np.prod(shape)) != mesh.n_points or int(np.prod([n - 1 for n in shape])) != mesh.n_cells:
        return False
    ni, nj = shape[0], shape[1]
    nk = shape[2] if len(shape) == 3 else 2
    i = np.arange(ni - 1, dtype=np.int64)
    j = np.arange(nj - 1, dtype=np.int64)
    k = np.arange(nk - 1, dtype=np.int64)
    first = (i[None, None, :] + ni * (j[None, :, None] + nj * k[:, None, None])).ravel()
    off = _structured_offsets(shape)[None, :]
    # Blocks of whole rows: each row of ``cells`` is read once, while it is in cache.
    return all(np.array_equal(mesh.cells[s : s + JACOBIAN_BLOCK], first[s : s + JACOBIAN_BLOCK, None] + off)
               for s in range(0, mesh.n_cells, JACOBIAN_BLOCK))  # blocks of cells, not cells


def _grid_sides(shape: tuple[int, ...]) -> list[tuple[tuple[int, ...], dict[int, tuple[int, int]]]]:
    """Outward boundary faces of a tensor grid, side by side, in canonical form.

    Each side: the offsets of a face's other nodes from its first (smallest) node, and the
    index range (lo, hi inclusive) of that first node along each axis (0 = i, 1 = j, 2 = k).
    The offsets follow QUAD_EDGES and HEX_FACES applied to the cells at the side.
    """
    ni, nj = shape[0], shape[1]
    if len(shape) == 2:
        return [
            ((1,), {0: (0, ni - 2), 1: (0, 0)}),  # jmin, walking +x
            ((ni,), {0: (ni - 1, ni - 1), 1: (0, nj - 2)}),  # imax, walking +y
            ((-1,), {0: (1, ni - 1), 1: (nj - 1, nj - 1)}),  # jmax, walking -x
            ((-ni,), {0: (0, 0), 1: (1, nj - 1)}),  # imin, walking -y
        ]
    nk, lay = shape[2], ni * nj
    return [
        ((ni, ni + 1, 1), {0: (0, ni - 2), 1: (0, nj - 2), 2: (0, 0)}),  # kmin
        ((1, 1 + ni, ni), {0: (0, ni - 2), 1: (0, nj - 2), 2: (nk - 1, nk - 1)}),  # kmax
        ((1, 1 + lay, lay), {0: (0, ni - 2), 1: (0, 0), 2: (0, nk - 2)}),  # jmin
        ((lay, lay + 1, 1), {0: (0, ni - 2), 1: (nj - 1, nj - 1), 2: (0, nk - 2)}),  # jmax
        ((lay, lay + ni, ni), {0: (0, 0), 1: (0, nj - 2), 2: (0, nk - 2)}),  # imin
        ((ni, ni + lay, lay), {0: (ni - 1, ni - 1), 1: (0, nj - 2), 2: (0, nk - 2)}),  # imax
    ]


def _tags_cover_grid_sides(mesh: Mesh) -> bool:
    """True when the group facets are exactly the outward boundary faces, each once.

    Only for a mesh that passed ``is_tensor_grid``: every facet is mapped to its place on
    a grid side by arithmetic on its node ids; any facet that maps nowhere, or a side face
    hit twice or never, returns False (the general check then names the problem).
    """
    names = [g.name for g in mesh.groups]
    if not names or len(set(names)) != len(names):
        return False
    tagged = np.concatenate([g.facets for g in mesh.groups])
    if tagged.ndim != 2 or tagged.shape[1] != (2 if mesh.dim == 2 else 4):
        return False
    f = _canonical(tagged.astype(np.int64, copy=False))
    first = f[:, 0]
    shape = mesh.shape
    ijk = [first % shape[0], (first // shape[0]) % shape[1]]
    if len(shape) == 3:
        ijk.append(first // (shape[0] * shape[1]))
    ids = np.full(first.size, -1, dtype=np.int64)
    start = 0
    for offsets, ranges in _grid_sides(shape):  # four or six sides
        hit = np.ones(first.size, dtype=bool)
        for c, off in enumerate(offsets, start=1):
            hit &= f[:, c] - first == off
        local, size = np.zeros(first.size, dtype=np.int64), 1
        for axis, (lo, hi) in ranges.items():
            hit &= (ijk[axis] >= lo) & (ijk[axis] <= hi)
            local += (ijk[axis] - lo) * size
            size *= hi - lo + 1
        ids[hit] = start + local[hit]
        start += size
    if first.size != start or np.any(ids < 0):
        return False
    return bool(np.all(np.bincount(ids, minlength=start) == 1))


def verify_mesh(mesh: Mesh, expected_points: int | None = None, expected_cells: int | None = None) -> None:
    """Raise MeshError unless the mesh is valid.

    Checks: counts (when given), every corner Jacobian positive (no inverted or
    degenerate cell, counter-clockwise quads, right-handed hexahedra), no unused point,
    every boundary face tagged by exactly one group, with outward orientation, and no
    group facet that is not on the boundary.
    """
    if expected_points is not None and mesh.n_points != expected_points:
        raise MeshError(f"mesh has {mesh.n_points} nodes, the plan has {expected_points}")
    if expected_cells is not None and mesh.n_cells != expected_cells:
        raise MeshError(f"mesh has {mesh.n_cells} cells, the plan has {expected_cells}")
    if isinstance(mesh, ExtrudedMesh) and not mesh.built():
        _verify_extrusion(mesh)
        return
    if not np.all(np.isfinite(mesh.points)):
        raise MeshError("mesh has non-finite node coordinates")
    grid = is_tensor_grid(mesh)
    bad = _count_inverted_grid(mesh) if grid else _count_inverted(mesh)
    if bad:
        raise MeshError(f"{bad} cells are inverted or degenerate (corner Jacobian <= 0)")
    if grid and _tags_cover_grid_sides(mesh):
        return  # every node is used and every face is closed by construction of the grid
    _verify_faces(mesh)


def _verify_extrusion(mesh: ExtrudedMesh) -> None:
    """verify_mesh for a lazy extrusion, without building its hexahedra.

    A hexahedron of layer k has the corner Jacobians of its base quad's corners times
    the layer thickness, so with strictly increasing finite planes it is right-handed
    and valid exactly when its quad is; its faces are the quad's edges swept through the
    layer and the two planes. So the mesh passes when its base passes and its groups are
    the base groups swept through the layers plus the first (back) and last (front)
    planes, which is checked array by array.
    """
    z = mesh.z
    if not (np.all(np.isfinite(z)) and np.all(np.diff(z) > 0)):
        raise MeshError("the extrusion planes must be finite and strictly increasing")
    verify_mesh(mesh.base)
    roles = [g.role for g in mesh.groups]
    if roles[-2:] != ["back", "front"] or len(mesh.groups) != len(mesh.base.groups) + 2:
        raise MeshError("an extruded mesh must hold its base's groups, then back and front")
    want = extrude(mesh.base, z, front=mesh.groups[-1].name, back=mesh.groups[-2].name).groups
    for g, w in zip(mesh.groups, want, strict=True):
        if g.name != w.name or not np.array_equal(g.facets, w.facets):
            raise MeshError(f"group {g.name!r} is not its base group swept through the layers")


def _verify_faces(mesh: Mesh) -> None:
    """The general checks of verify_mesh after the Jacobians: any cells, any numbering."""
    used = np.zeros(mesh.n_points, dtype=bool)
    used[mesh.cells.ravel()] = True
    if not used.all():
        raise MeshError(f"{int(np.count_nonzero(~used))} nodes belong to no cell")
    faces, _ = cell_faces(mesh)
    tagged = [g.facets for g in mesh.groups]
    allf = np.concatenate(tagged) if tagged else faces[:0]
    joinable = allf.ndim == 2 and allf.shape[1] == faces.shape[1]
    # Cell faces and group facets in one sort: a run id per node set, then counts per run.
    run, n = _face_runs(np.concatenate([faces, allf]) if joinable else faces, mesh.n_points)
    nf = faces.shape[0]
    n_cell = np.bincount(run[:nf], minlength=n)
    if np.any(n_cell > 2):
        raise MeshError(f"{int(np.sum(n_cell > 2))} faces are shared by more than two cells")
    if not tagged:
        raise MeshError("mesh has no boundary groups")
    names = [g.name for g in mesh.groups]
    if len(set(names)) != len(names):
        raise MeshError(f"boundary group names repeat: {names}")
    if not joinable:
        raise MeshError("group facets do not match the cell type")
    n_tag = np.bincount(run[nf:], minlength=n)
    if np.any(n_tag > 1):
        raise MeshError(f"{int(np.sum(n_tag > 1))} boundary facets are tagged more than once")
    untagged = int(np.count_nonzero((n_cell == 1) & (n_tag == 0)))
    if untagged:
        raise MeshError(f"{untagged} boundary facets belong to no group")
    inner = int(np.count_nonzero((n_tag > 0) & (n_cell != 1)))
    if inner:
        raise MeshError(f"{inner} group facets are not on the boundary")
    # Orientation: each tagged facet must equal (up to rotation) its cell's outward face,
    # the one boundary face with the same node set.
    face_of_run = np.full(n, -1, dtype=np.int64)
    face_of_run[run[:nf]] = np.arange(nf)
    own = faces[face_of_run[run[nf:]]]
    wrong = int(np.count_nonzero(np.any(_canonical(allf) != _canonical(own), axis=1)))
    if wrong:
        raise MeshError(f"{wrong} boundary facets point into the domain")
