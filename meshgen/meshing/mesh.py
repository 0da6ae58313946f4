"""The Mesh: numpy arrays extracted once, read by every writer and by the quality report.

Node, cell and facet conventions (all indices 0-based)::

    2-D quad, counter-clockwise        3-D hexahedron (VTK order, right-handed)

      3 ------ 2                            7 ------ 6
      |        |        y                  /|       /|
      |  cell  |        ^                 4 ------ 5 |      y  z
      |        |        |                 | 3 -----|-2      | /
      0 ------ 1        +--> x            |/       |/       |/
                                          0 ------ 1        +--> x

A structured mesh is one tensor-product grid of ``ni x nj (x nk)`` nodes, with node id
``i + ni * (j + nj * k)`` and cell id ``i + (ni - 1) * (j + (nj - 1) * k)``; the blocks
(upstream, plate, wake) are ranges of ``i``. Boundary facets are lines (2-D) or quads
(3-D) ordered so that the right-hand normal points out of the domain: in 2-D the domain
lies to the left of each facet, exactly as for the edges of a counter-clockwise cell.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from ..planning.layout import Block, Patch

#: Roles a boundary group can play; writers map them to their solver's patch types.
ROLES = ("inlet", "outlet", "wall", "farfield", "symmetry", "front", "back")

@dataclass(frozen=True, eq=False)
class Group:
    """A named boundary group: its role and its facets (node ids, outward-ordered)."""

    name: str
    role: str
    facets: np.ndarray
    patches: tuple[Patch, ...] = ()


@dataclass(frozen=True, eq=False)
class Mesh:
    """Points [m], cells, named boundary groups and, when structured, the grid layout."""

    points: np.ndarray  # (N, 3) float64
    cells: np.ndarray  # (M, 4) quads or (M, 8) hexahedra, int64
    groups: tuple[Group, ...]
    shape: tuple[int, ...] | None = None  # node counts (ni, nj) or (ni, nj, nk)
    blocks: tuple[Block, ...] = ()
    cell_group: str = "fluid"
    meta: dict = field(default_factory=dict)

    @property
    def dim(self) -> int:
        return 2 if self.cells.shape[1] == 4 else 3

    @property
    def cell_type(self) -> str:
        return "quad" if self.dim == 2 else "hexahedron"

    @property
    def facet_type(self) -> str:
        return "line" if self.dim == 2 else "quad"

    @property
    def n_points(self) -> int:
        return int(self.points.shape[0])

    @property
    def n_cells(self) -> int:
        return int(self.cells.shape[0])

    def __repr__(self) -> str:
        return (f"<Mesh {self.dim}-D: {self.n_cells:,} {self.cell_type} cells, {self.n_points:,} nodes, "
                f"groups {', '.join(self.group_sizes())}>")

    def group(self, name: str) -> Group:
        for g in self.groups:
            if g.name == name:
                return g
        raise KeyError(f"no boundary group named {name!r}; groups: {[g.name for g in self.groups]}")

    def group_sizes(self) -> dict[str, int]:
        return {g.name: int(g.facets.shape[0]) for g in self.groups}

    def grid(self) -> np.ndarray:
        """Points as an array of shape (nk, nj, ni, 3) or (nj, ni, 3) (structured only)."""
        if self.shape is None:
            raise ValueError("mesh has no structured layout")
        return self.points.reshape(tuple(reversed(self.shape)) + (3,))


def _side_facets(shape2: tuple[int, int], patch: Patch) -> np.ndarray:
    """Outward-ordered line facets of one 2-D patch (node ids of the global grid)."""
    ni, nj = shape2
    if patch.side in ("jmin", "jmax"):
        i = np.arange(patch.i0, patch.i1, dtype=np.int64)
        if patch.side == "jmin":  # domain above: walk +x
            return np.stack([i, i + 1], axis=1)
        top = (nj - 1) * ni
        return np.stack([top + i + 1, top + i], axis=1)  # domain below: walk -x
    j = np.arange(nj - 1, dtype=np.int64)
    if patch.side == "imin":  # domain to the right: walk -y
        return np.stack([(j + 1) * ni, j * ni], axis=1)
    if patch.side == "imax":  # domain to the left: walk +y
        return np.stack([j * ni + ni - 1, (j + 1) * ni + ni - 1], axis=1)
    raise ValueError(f"not a 2-D side: {patch.side!r}")


def structured_mesh(
    x: np.ndarray,
    y: np.ndarray,
    blocks: tuple[Block, ...],
    groups: list[tuple[str, str, tuple[Patch, ...]]],
    points: np.ndarray | None = None,
) -> Mesh:
    """Build a 2-D structured quad Mesh from 1-D node coordinates.

    ``groups`` lists (name, role, patches). ``points`` may replace the tensor product of
    ``x`` and ``y`` (the builder passes gmsh's coordinates, already in grid order).
    """
    x = np.asarray(x, dtype=np.float64)
    y = np.asarray(y, dtype=np.float64)
    ni, nj = x.size, y.size
    if points is None:
        xx, yy = np.meshgrid(x, y)  # shape (nj, ni): i fastest
        points = np.stack([xx.ravel(), yy.ravel(), np.zeros(ni * nj)], axis=1)
    i, j = np.meshgrid(np.arange(ni - 1, dtype=np.int64), np.arange(nj - 1, dtype=np.int64))
    n0 = (j * ni + i).ravel()
    cells = np.stack([n0, n0 + 1, n0 + 1 + ni, n0 + ni], axis=1)
    built = tuple(
        Group(name, role, np.concatenate([_side_facets((ni, nj), p) for p in patches]), patches)
        for name, role, patches in groups
    )
    return Mesh(points=points, cells=cells, groups=built, shape=(ni, nj), blocks=blocks)


def extrude(mesh: Mesh, z: np.ndarray, front: str = "front", back: str = "back") -> Mesh:
    """Extrude a 2-D quad mesh along +z through the node planes ``z`` [m] into hexahedra.

    Every 2-D group becomes a group of quads; the planes z[0] and z[-1] form the groups
    ``back`` and ``front``. The 2-D node distributions are kept exactly.
    """
    if mesh.dim != 2:
        raise ValueError("only a 2-D mesh can be extruded")
    z = np.asarray(z, dtype=np.float64)
    if z.size < 2 or np.any(np.diff(z) <= 0):
        raise ValueError("extrusion planes must be at least two, strictly increasing")
    n2, nk = mesh.n_points, z.size
    # Written in place through broadcasting views: no temporaries of the 3-D size.
    points = np.empty((nk, n2, 3))
    points[:, :, :2] = mesh.points[None, :, :2]
    points[:, :, 2] = z[:, None]
    points = points.reshape(-1, 3)
    layer = (np.arange(nk - 1, dtype=np.int64) * n2)[:, None, None]
    q = mesh.cells[None, :, :]
    cells = np.empty((nk - 1, mesh.n_cells, 8), dtype=np.int64)
    np.add(q, layer, out=cells[:, :, :4])
    np.add(q, layer + n2, out=cells[:, :, 4:])
    cells = cells.reshape(-1, 8)
    groups = []
    for g in mesh.groups:
        a, b = (g.facets[None, :, 0] + layer[:, :, 0]), (g.facets[None, :, 1] + layer[:, :, 0])
        facets = np.stack([a, b, b + n2, a + n2], axis=2).reshape(-1, 4)
        groups.append(Group(g.name, g.role, facets, g.patches))
    base = mesh.cells
    groups.append(Group(back, "back", base[:, [0, 3, 2, 1]].copy(), (Patch("kmin"),)))
    groups.append(Group(front, "front", base + (nk - 1) * n2, (Patch("kmax"),)))
    shape = None if mesh.shape is None else (*mesh.shape, nk)
    return Mesh(
        points=points,
        cells=cells,
        groups=tuple(groups),
        shape=shape,
        blocks=mesh.blocks,
        cell_group=mesh.cell_group,
        meta=dict(mesh.meta),
    )
