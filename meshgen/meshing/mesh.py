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

from collections.abc import Iterator
from dataclasses import dataclass, field
from functools import cached_property

import numpy as np

from ..planning.layout import Block, Patch

#: Roles a boundary group can play; writers map them to their solver's patch types.
ROLES = ("inlet", "outlet", "wall", "farfield", "symmetry", "front", "back")
#: What the front and back faces of a 3-D mesh are (case key ``domain.span_boundary``),
#: the same in every format that carries a type; "empty" is the one-layer extrusion a
#: writer makes of a 2-D mesh for a solver that runs 2-D as one cell thick.
SPAN_BOUNDARIES = ("symmetry", "patch", "empty", "periodic")


def span_boundary(mesh: Mesh) -> str:
    """The type of ``mesh``'s front and back groups: ``mesh.meta["span_boundary"]``, else
    "symmetry" (a mesh read from a file carries no choice)."""
    kind = mesh.meta.get("span_boundary", "symmetry")
    if kind not in SPAN_BOUNDARIES:
        raise ValueError(f"span boundary {kind!r}; valid: {', '.join(SPAN_BOUNDARIES)}")
    return kind

@dataclass(frozen=True, eq=False)
class Group:
    """A named boundary group: its role and its facets (node ids, outward-ordered)."""

    name: str
    role: str
    facets: np.ndarray
    patches: tuple[Patch, ...] = ()


@dataclass(frozen=True)
class PeriodicPair:
    """Two boundary groups that are periodic images: ``target`` is ``source`` moved by
    ``translation`` [m] (meshgen.meshing.periodic pairs their facets and nodes)."""

    source: str
    target: str
    translation: tuple[float, float, float]


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
    periodic: tuple[PeriodicPair, ...] = ()

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


class ExtrudedMesh(Mesh):
    """A 2-D quad mesh extruded along +z through the node planes ``z`` [m], built lazily.

    It is a :class:`Mesh` of hexahedra (node ``n`` of plane ``k`` has id ``k n2 + n``, cell
    ``c`` of layer ``k`` has id ``k m2 + c``, for a base of n2 nodes and m2 quads) whose
    ``points`` and ``cells`` are only built, and then kept, when first read. Its groups
    are built at once (they are the size of the base, times the layers for the side
    groups). Writers and reports that go block by block (:func:`cell_blocks`,
    :func:`point_blocks`) or layer by layer (``plane_points``, ``layer_cells``) never
    build them, so a 1e8-hexahedron mesh costs the memory of its base and its groups.
    """

    def __new__(cls, base: Mesh | None = None, z: np.ndarray | None = None, groups=None, **fields):
        if fields:  # dataclasses.replace(mesh, ...): the changed mesh is an ordinary, built Mesh
            return Mesh(groups=groups, **fields)
        return super().__new__(cls)

    def __init__(self, base: Mesh, z: np.ndarray, groups: tuple[Group, ...]):
        shape = None if base.shape is None else (*base.shape, z.size)
        for name, value in (("base", base), ("z", z), ("groups", groups), ("shape", shape),
                            ("blocks", base.blocks), ("cell_group", base.cell_group), ("meta", dict(base.meta))):
            object.__setattr__(self, name, value)  # frozen, as every Mesh

    def __repr__(self) -> str:
        return f"ExtrudedMesh({self.base.n_cells} quads x {self.n_layers} layers)"

    @property
    def dim(self) -> int:
        return 3

    @property
    def n_points(self) -> int:
        return self.base.n_points * self.z.size

    @property
    def n_cells(self) -> int:
        return self.base.n_cells * self.n_layers

    @property
    def n_layers(self) -> int:
        return self.z.size - 1

    def plane_points(self, k0: int, k1: int) -> np.ndarray:
        """Nodes of the planes k0 <= k < k1, shape ((k1 - k0) n2, 3) [m]."""
        out = np.empty((k1 - k0, self.base.n_points, 3))
        out[:, :, :2] = self.base.points[None, :, :2]
        out[:, :, 2] = self.z[k0:k1, None]
        return out.reshape(-1, 3)

    def layer_cells(self, k0: int, k1: int) -> np.ndarray:
        """Hexahedra of the cell layers k0 <= k < k1 (global node ids), shape (.., 8)."""
        n2 = self.base.n_points
        layer = (np.arange(k0, k1, dtype=np.int64) * n2)[:, None, None]
        q = self.base.cells[None, :, :]
        out = np.empty((k1 - k0, self.base.n_cells, 8), dtype=np.int64)
        # written in place through broadcasting views: no temporaries of the 3-D size
        np.add(q, layer, out=out[:, :, :4])
        np.add(q, layer + n2, out=out[:, :, 4:])
        return out.reshape(-1, 8)

    def first_layers(self, n: int) -> np.ndarray:
        """``layer_cells(0, n)``, kept for the next call (slabs of a few planes reuse it)."""
        kept = self.__dict__.setdefault("_first_layers", {})
        if n not in kept:
            kept.clear()  # one size at a time: slabs come in one or two sizes
            kept[n] = self.layer_cells(0, n)
        return kept[n]

    @cached_property
    def points(self) -> np.ndarray:  # type: ignore[override]
        return self.plane_points(0, self.z.size)

    @cached_property
    def cells(self) -> np.ndarray:  # type: ignore[override]
        return self.layer_cells(0, self.n_layers)

    def built(self) -> bool:
        """True once ``points`` or ``cells`` has been read (and is kept)."""
        return "points" in self.__dict__ or "cells" in self.__dict__


def extrude(mesh: Mesh, z: np.ndarray, front: str = "front", back: str = "back") -> ExtrudedMesh:
    """Extrude a 2-D quad mesh along +z through the node planes ``z`` [m] into hexahedra.

    Every 2-D group becomes a group of quads; the planes z[0] and z[-1] form the groups
    ``back`` and ``front``. The 2-D node distributions are kept exactly. The result is
    lazy (:class:`ExtrudedMesh`): its points and cells are built only when read.
    """
    if mesh.dim != 2:
        raise ValueError("only a 2-D mesh can be extruded")
    z = np.array(z, dtype=np.float64)  # a copy: the mesh is immutable
    if z.ndim != 1 or z.size < 2 or np.any(np.diff(z) <= 0):
        raise ValueError("extrusion planes must be at least two, strictly increasing")
    n2, nk = mesh.n_points, z.size
    layer = (np.arange(nk - 1, dtype=np.int64) * n2)[:, None, None]
    groups = []
    for g in mesh.groups:
        a, b = (g.facets[None, :, 0] + layer[:, :, 0]), (g.facets[None, :, 1] + layer[:, :, 0])
        facets = np.stack([a, b, b + n2, a + n2], axis=2).reshape(-1, 4)
        groups.append(Group(g.name, g.role, facets, g.patches))
    base = mesh.cells
    groups.append(Group(back, "back", base[:, [0, 3, 2, 1]].copy(), (Patch("kmin"),)))
    groups.append(Group(front, "front", base + (nk - 1) * n2, (Patch("kmax"),)))
    return ExtrudedMesh(mesh, z, tuple(groups))


#: Rows per block of cell_blocks and point_blocks: a block's arrays stay in cache.
BLOCK = 1 << 16


def cell_blocks(mesh: Mesh, rows: int = BLOCK) -> Iterator[np.ndarray]:
    """The cells in order, in blocks of at most ``rows``.

    A block may be a buffer that the next block overwrites: use it (write it, copy from
    it) before asking for the next. A lazy extrusion builds its hexahedra block by block
    from the base quads and never holds them all.
    """
    if not isinstance(mesh, ExtrudedMesh) or mesh.built():
        yield from (mesh.cells[s:s + rows] for s in range(0, mesh.n_cells, rows))
        return
    base, n2 = mesh.base.cells, mesh.base.n_points
    buf = np.empty((min(rows, base.shape[0]), 8), dtype=np.int64)
    for k in range(mesh.n_layers):  # layers, then blocks of base quads
        for s in range(0, base.shape[0], rows):
            q = base[s:s + rows]
            out = buf[:q.shape[0]]
            np.add(q, k * n2, out=out[:, :4])
            np.add(q, (k + 1) * n2, out=out[:, 4:])
            yield out


def point_blocks(mesh: Mesh, rows: int = BLOCK) -> Iterator[np.ndarray]:
    """The points in order, in (at most ``rows``, 3) float64 blocks; the same reuse rule as
    :func:`cell_blocks`."""
    if not isinstance(mesh, ExtrudedMesh) or mesh.built():
        yield from (mesh.points[s:s + rows] for s in range(0, mesh.n_points, rows))
        return
    xy = mesh.base.points[:, :2]
    buf = np.empty((min(rows, xy.shape[0]), 3))
    for zk in mesh.z.tolist():  # planes, then blocks of base nodes
        for s in range(0, xy.shape[0], rows):
            out = buf[:min(rows, xy.shape[0] - s)]
            out[:, :2] = xy[s:s + rows]
            out[:, 2] = zk
            yield out


def node_coordinates(mesh: Mesh, ids: np.ndarray) -> np.ndarray:
    """Coordinates (ids.shape + (3,)) [m] of the nodes ``ids``; a lazy extrusion computes
    them from its base and planes without building its points."""
    if not isinstance(mesh, ExtrudedMesh) or mesh.built():
        return mesh.points[ids]
    k, n = np.divmod(ids, mesh.base.n_points)
    out = np.empty(np.shape(ids) + (3,))
    out[..., :2] = mesh.base.points[n, :2]
    out[..., 2] = mesh.z[k]
    return out


def bounds(mesh: Mesh) -> tuple[np.ndarray, np.ndarray]:
    """Smallest and largest x, y, z [m] of the nodes."""
    if isinstance(mesh, ExtrudedMesh) and not mesh.built():
        xy = mesh.base.points[:, :2]
        return (np.append(xy.min(axis=0), mesh.z.min()), np.append(xy.max(axis=0), mesh.z.max()))
    return mesh.points.min(axis=0), mesh.points.max(axis=0)


def grid_planes(mesh: Mesh, axis: int, k0: int, k1: int, i0: int = 0, i1: int | None = None) -> np.ndarray:
    """Coordinate ``axis`` (0 x, 1 y, 2 z) [m] of the nodes of planes k0 <= k < k1 and
    columns i0 <= i < i1 of a structured mesh, shape (k1 - k0, nj, i1 - i0); a 2-D mesh
    is its one plane k = 0. A view of the points, or for a lazy extrusion a broadcast of
    its base or planes: nothing of the 3-D size is built (copy it to write it)."""
    ni, nj = mesh.shape[0], mesh.shape[1]
    i1 = ni if i1 is None else i1
    if not isinstance(mesh, ExtrudedMesh) or mesh.built():
        nk = mesh.shape[2] if len(mesh.shape) == 3 else 1
        return mesh.points.reshape(nk, nj, ni, 3)[k0:k1, :, i0:i1, axis]
    shape = (k1 - k0, nj, i1 - i0)
    if axis == 2:
        return np.broadcast_to(mesh.z[k0:k1, None, None], shape)
    return np.broadcast_to(mesh.base.points.reshape(nj, ni, 3)[None, :, i0:i1, axis], shape)


def plane_grid(mesh: Mesh, k: int = 0) -> np.ndarray:
    """The nodes of plane ``k`` of a structured mesh as a (nj, ni, 3) array [m] (a copy)."""
    return np.stack([grid_planes(mesh, a, k, k + 1)[0] for a in range(3)], axis=-1)


def plane_slab(mesh: Mesh, k0: int, k1: int) -> Mesh:
    """Node planes k0 <= k < k1 (k1 - k0 >= 2) of a structured 3-D tensor grid and the cell
    layers between them as a Mesh of their own (nodes and cells renumbered from 0, shape
    (ni, nj, k1 - k0), no groups): the same coordinates and corners, so every per-cell
    figure computed on it is bit for bit the one of the whole mesh."""
    ni, nj = mesh.shape[0], mesh.shape[1]
    n2, m2 = ni * nj, (ni - 1) * (nj - 1)
    if isinstance(mesh, ExtrudedMesh) and not mesh.built():
        points, cells = mesh.plane_points(k0, k1), mesh.first_layers(k1 - k0 - 1)
    else:
        points, cells = mesh.points[k0 * n2:k1 * n2], mesh.cells[k0 * m2:(k1 - 1) * m2] - k0 * n2
    return Mesh(points, cells, (), shape=(ni, nj, k1 - k0), blocks=mesh.blocks, cell_group=mesh.cell_group)
