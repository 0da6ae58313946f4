"""The polyMesh files of a lazy tensor-grid extrusion, written layer by layer.

The same files as ``foam.py`` writes (byte for byte; tests/io/test_streamed.py), for an
``ExtrudedMesh`` whose base is a tensor grid and which has no periodic pair, without any
array of the whole mesh's size. Internal faces are listed cell by cell (+i, +j, +k faces
of each cell, ``foam._grid_paired``'s upper-triangular order), so the faces owned by one
layer of cells are one template shifted by the layer: node ids by ``k n2``, cells by
``k m2`` (base nodes n2, base quads m2); the last layer has no +k faces. Boundary faces
are placed from the groups (which a lazy extrusion holds) by ``foam._place_grid_facets``
with each cell's first node computed from its id.
"""

from __future__ import annotations

from collections.abc import Iterator

import numpy as np

from ...meshing.mesh import ExtrudedMesh, Mesh, point_blocks, span_boundary
from ...meshing.verify import HEX_FACES, is_tensor_grid
from .foam import _GRID_INNER, PATCH_TYPE, SPAN_PATCH, PolyMesh, _boundary, _header, _place_grid_facets
from .su2 import ascii_blocks


class _FirstNode:
    """``first[cell]``: the grid node id (i + ni (j + nj k)) of hexahedron ``cell``'s node 0."""

    def __init__(self, ni: int, nj: int):
        self.ni, self.nj, self.a, self.b = ni, nj, ni - 1, nj - 1

    def __getitem__(self, cell: np.ndarray) -> np.ndarray:
        rest, i = np.divmod(cell, self.a)
        k, j = np.divmod(rest, self.b)
        return i + self.ni * (j + self.nj * k)


def streamable(mesh: Mesh) -> bool:
    """True for a lazy, unbuilt extrusion of a tensor grid with no periodic pair."""
    return (isinstance(mesh, ExtrudedMesh) and not mesh.built() and not mesh.periodic
            and mesh.shape is not None and is_tensor_grid(mesh)
            and all(g.facets.ndim == 2 and g.facets.shape[1] == 4 for g in mesh.groups))


class _Layers:
    """The internal faces of one cell layer as a template, and the boundary faces."""

    def __init__(self, mesh: ExtrudedMesh):
        ni, nj, nk = mesh.shape
        a, b, c = ni - 1, nj - 1, nk - 1
        self.n2, self.m2, self.c = ni * nj, a * b, c
        lay = ni * nj
        corners = np.array([0, 1, 1 + ni, ni, lay, lay + 1, lay + 1 + ni, lay + ni])
        local = corners[HEX_FACES]  # (6, 4) node offsets of each cell face from the cell's first node
        first = mesh.base.cells[:, 0]  # node 0 of each layer-0 hexahedron (its quad's node 0)
        self.templates = {}
        for last in (False, True):  # every layer but the last, and the last
            has = np.zeros((b, a, 3), bool)
            has[:, :-1, 0] = True
            has[:-1, :, 1] = True
            has[:, :, 2] = not last
            has = has.reshape(-1, 3)
            own = np.broadcast_to(np.arange(self.m2, dtype=np.int64)[:, None], has.shape)[has]
            side = np.broadcast_to(np.arange(3, dtype=np.intp), has.shape)[has]
            faces = local[_GRID_INNER][side] + first[own][:, None]
            self.templates[last] = (faces, own, own + np.array([1, a, a * b], dtype=np.int64)[side])
        self.n_inner = (a - 1) * b * c + a * (b - 1) * c + a * b * (c - 1)
        n_boundary = 2 * (a * b + b * c + a * c)
        if sum(g.facets.shape[0] for g in mesh.groups) != n_boundary:
            raise ValueError("the groups do not cover the grid's sides once")
        self.faces = np.empty((n_boundary, 4), np.int64)
        self.owner = np.empty(n_boundary, np.int64)
        lface = np.empty(n_boundary, np.int64)
        start = 0
        for g in mesh.groups:  # a loop over the handful of boundary groups
            stop = start + g.facets.shape[0]
            if not _place_grid_facets(g.facets, mesh.shape, _FirstNode(ni, nj), local, self.owner[start:stop],
                                      self.faces[start:stop], lface[start:stop]):
                raise ValueError(f"group {g.name!r} is not on the grid's sides")
            start = stop
        key = np.sort(self.owner * 6 + lface)
        if np.any(key[1:] == key[:-1]):  # as many facets as side faces, so each once
            raise ValueError("a side face is tagged twice")

    def layer(self, k: int, part: int) -> np.ndarray:
        """Faces (part 0, node ids), owners (1) or neighbours (2) of the internal faces
        owned by layer k."""
        return self.templates[k == self.c - 1][part] + k * (self.n2 if part == 0 else self.m2)


def file_chunks(mesh: ExtrudedMesh, points_note: str | None = None) -> dict[str, Iterator[bytes | np.ndarray]]:
    """The five files as byte-chunk iterators, by file name (``foam.file_chunks``' bytes).

    Raises ValueError when the groups do not fit the grid (the caller then takes the
    general path, which names the problem)."""
    lay = _Layers(mesh)
    nk = mesh.shape[2]
    n_faces = lay.n_inner + lay.faces.shape[0]
    counts = f"nPoints:{mesh.n_points}  nCells:{mesh.n_cells}  nFaces:{n_faces}  nInternalFaces:{lay.n_inner}"
    span = span_boundary(mesh)
    patches, start = [], lay.n_inner
    for g in mesh.groups:  # a loop over the handful of boundary groups
        kind = SPAN_PATCH[span] if g.role in ("front", "back") else PATCH_TYPE.get(g.role, "patch")
        patches.append((g.name, kind, start, g.facets.shape[0]))
        start += g.facets.shape[0]
    empty = np.empty(0, np.int64)
    pm = PolyMesh(points=np.empty((0, 3)), faces=np.empty((0, 4), np.int64), owner=empty, neighbour=empty,
                  patches=tuple(patches), n_cells=mesh.n_cells)
    quad = [b"4(", b" ", b" ", b" ", b")\n"]

    def points():
        yield _header("vectorField", "points", points_note) + f"{mesh.n_points}\n(\n".encode()
        for p in point_blocks(mesh, 1 << 18):
            yield from ascii_blocks([p[:, 0], p[:, 1], p[:, 2]], [b"(", b" ", b" ", b")\n"])
        yield b")\n"

    def faces():
        yield _header("faceList", "faces") + f"{n_faces}\n(\n".encode()
        for k in range(nk - 1):  # layers
            f = lay.layer(k, 0)
            yield from ascii_blocks([f[:, q] for q in range(4)], quad)
        yield from ascii_blocks([lay.faces[:, q] for q in range(4)], quad)
        yield b")\n"

    def labels(name: str, n: int, column: int, boundary: np.ndarray | None):
        yield _header("labelList", name, counts) + f"{n}\n(\n".encode()
        for k in range(nk - 1):
            yield from ascii_blocks([lay.layer(k, column)], [b"", b"\n"])
        if boundary is not None:
            yield from ascii_blocks([boundary], [b"", b"\n"])
        yield b")\n"

    return {
        "points": points(),
        "faces": faces(),
        "owner": labels("owner", n_faces, 1, lay.owner),
        "neighbour": labels("neighbour", lay.n_inner, 2, None),
        "boundary": iter([_header("polyBoundaryMesh", "boundary"), _boundary(pm)]),
    }
