"""Checks every Mesh must pass before it is written: orientation, closure, tags.

All checks are vectorised; each failure raises ``MeshError`` with what was found.
"""

from __future__ import annotations

import numpy as np

from .errors import MeshError
from .mesh import Mesh

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


def corner_jacobians(mesh: Mesh) -> np.ndarray:
    """Signed corner Jacobians, shape (cells, corners): area [m2] or volume [m3] measures."""
    p = mesh.points
    c = mesh.cells
    if mesh.dim == 2:
        prev = np.roll(np.arange(4), 1)
        nxt = np.roll(np.arange(4), -1)
        e1 = p[c[:, nxt], :2] - p[c, :2]
        e2 = p[c[:, prev], :2] - p[c, :2]
        return e1[..., 0] * e2[..., 1] - e1[..., 1] * e2[..., 0]
    f = HEX_CORNER_FRAMES
    o = p[c[:, f[:, 0]]]
    e1, e2, e3 = (p[c[:, f[:, m]]] - o for m in (1, 2, 3))
    return np.einsum("ckx,ckx->ck", e1, np.cross(e2, e3))


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
    faces = mesh.cells[:, table].reshape(-1, table.shape[1])
    owner = np.repeat(np.arange(mesh.n_cells, dtype=np.int64), table.shape[0])
    return faces, owner


def _keys(faces: np.ndarray) -> np.ndarray:
    """Structured keys of faces regardless of direction (sorted node ids)."""
    s = np.sort(faces, axis=1)
    return np.ascontiguousarray(s).view([("", s.dtype)] * s.shape[1]).ravel()


def boundary_faces(mesh: Mesh) -> tuple[np.ndarray, np.ndarray]:
    """The faces that belong to one cell only, outward-directed, and their cells."""
    faces, owner = cell_faces(mesh)
    keys = _keys(faces)
    _, inverse, counts = np.unique(keys, return_inverse=True, return_counts=True)
    if np.any(counts > 2):
        raise MeshError(f"{int(np.sum(counts > 2))} faces are shared by more than two cells")
    once = counts[inverse] == 1
    return faces[once], owner[once]


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
    if not np.all(np.isfinite(mesh.points)):
        raise MeshError("mesh has non-finite node coordinates")
    jac = corner_jacobians(mesh)
    bad = np.count_nonzero(np.min(jac, axis=1) <= 0)
    if bad:
        raise MeshError(f"{bad} cells are inverted or degenerate (corner Jacobian <= 0)")
    used = np.zeros(mesh.n_points, dtype=bool)
    used[mesh.cells.ravel()] = True
    if not used.all():
        raise MeshError(f"{int(np.count_nonzero(~used))} nodes belong to no cell")
    bfaces, _ = boundary_faces(mesh)
    tagged = [g.facets for g in mesh.groups]
    if not tagged:
        raise MeshError("mesh has no boundary groups")
    names = [g.name for g in mesh.groups]
    if len(set(names)) != len(names):
        raise MeshError(f"boundary group names repeat: {names}")
    allf = np.concatenate(tagged)
    if allf.shape[1] != bfaces.shape[1]:
        raise MeshError("group facets do not match the cell type")
    akeys = _keys(allf)
    uniq, counts = np.unique(akeys, return_counts=True)
    if np.any(counts > 1):
        raise MeshError(f"{int(np.sum(counts > 1))} boundary facets are tagged more than once")
    bkeys = _keys(bfaces)
    untagged = np.setdiff1d(bkeys, akeys)
    if untagged.size:
        raise MeshError(f"{untagged.size} boundary facets belong to no group")
    inner = np.setdiff1d(akeys, bkeys)
    if inner.size:
        raise MeshError(f"{inner.size} group facets are not on the boundary")
    # Orientation: each tagged facet must equal the outward face of its cell.
    directed = _canonical(bfaces)
    dkeys = np.ascontiguousarray(directed).view([("", directed.dtype)] * directed.shape[1]).ravel()
    tag_dir = _canonical(allf)
    tkeys = np.ascontiguousarray(tag_dir).view([("", tag_dir.dtype)] * tag_dir.shape[1]).ravel()
    wrong = np.setdiff1d(tkeys, dkeys)
    if wrong.size:
        raise MeshError(f"{wrong.size} boundary facets point into the domain")
