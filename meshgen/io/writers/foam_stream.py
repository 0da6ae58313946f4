"""The polyMesh files piece by piece, ASCII or OpenFOAM's binary format; a lazy
tensor-grid extrusion layer by layer.

ASCII: the same files as ``foam.file_chunks`` (byte for byte; tests/io/test_streamed.py).
Binary (format ``polymesh-binary``): OpenFOAM's binary FoamFile (header ``format binary``,
``arch "LSB;label=32;scalar=64"``; each list ``N`` then ``(`` raw numbers ``)``; faces as a
faceCompactList), from the OpenFOAM User Guide's description of the polyMesh and its file
format (from memory) and read back by foamlib in the tests. Streaming applies to an
``ExtrudedMesh`` whose base is a tensor grid and which has no periodic pair, without any
array of the whole mesh's size. Internal faces are listed cell by cell (+i, +j, +k faces
of each cell, ``foam._grid_paired``'s upper-triangular order), so the faces owned by one
layer of cells are one template shifted by the layer: node ids by ``k n2``, cells by
``k m2`` (base nodes n2, base quads m2); the last layer has no +k faces. Boundary faces
are placed from the groups (which a lazy extrusion holds) by ``foam._place_grid_facets``
with each cell's first node computed from its id.
"""

from __future__ import annotations

from collections.abc import Callable, Iterator
from dataclasses import dataclass
from pathlib import Path

import numpy as np

from ...meshing.mesh import ExtrudedMesh, Mesh, point_blocks, span_boundary
from ...meshing.verify import HEX_FACES, is_tensor_grid
from .foam import _GRID_INNER, PATCH_TYPE, SPAN_PATCH, PolyMesh, _boundary, _header, _place_grid_facets
from .registry import Format, register
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
        self.buffers: dict[int, np.ndarray] = {}
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
        owned by layer k: a buffer that the next call overwrites (write it first)."""
        template = self.templates[k == self.c - 1][part]
        if k == 0:
            return template
        buf = self.buffers.get(part)
        if buf is None or buf.shape[0] < template.shape[0]:
            buf = self.buffers[part] = np.empty_like(template)
        out = buf[:template.shape[0]]
        np.add(template, k * (self.n2 if part == 0 else self.m2), out=out)
        return out


@dataclass(frozen=True)
class Parts:
    """A polyMesh as counts, the boundary file's patches and the big lists piece by piece:
    each of ``points``, ``faces``, ``owner``, ``neighbour`` returns a fresh iterator of arrays."""

    n_points: int
    n_cells: int
    n_faces: int
    n_inner: int
    boundary: PolyMesh  # only its patches (and cyclic pairs) are used
    points: Callable[[], Iterator[np.ndarray]]
    faces: Callable[[], Iterator[np.ndarray]]
    owner: Callable[[], Iterator[np.ndarray]]
    neighbour: Callable[[], Iterator[np.ndarray]]


def streamed_parts(mesh: ExtrudedMesh) -> Parts:
    """The Parts of a :func:`streamable` mesh, layer by layer; ValueError when its groups do
    not fit the grid (the general path then names the problem)."""
    lay = _Layers(mesh)
    nk = mesh.shape[2]
    span = span_boundary(mesh)
    patches, start = [], lay.n_inner
    for g in mesh.groups:  # a loop over the handful of boundary groups
        kind = SPAN_PATCH[span] if g.role in ("front", "back") else PATCH_TYPE.get(g.role, "patch")
        patches.append((g.name, kind, start, g.facets.shape[0]))
        start += g.facets.shape[0]
    empty = np.empty(0, np.int64)
    pm = PolyMesh(points=np.empty((0, 3)), faces=np.empty((0, 4), np.int64), owner=empty, neighbour=empty,
                  patches=tuple(patches), n_cells=mesh.n_cells)

    def column(part: int, tail: np.ndarray | None):
        def pieces():
            for k in range(nk - 1):  # layers
                yield lay.layer(k, part)
            if tail is not None:
                yield tail
        return pieces

    return Parts(mesh.n_points, mesh.n_cells, lay.n_inner + lay.faces.shape[0], lay.n_inner, pm,
                 lambda: point_blocks(mesh, 1 << 18), column(0, lay.faces), column(1, lay.owner), column(2, None))


def whole_parts(pm: PolyMesh) -> Parts:
    """The Parts of a PolyMesh held whole (the general path), one piece each."""
    return Parts(pm.points.shape[0], pm.n_cells, pm.faces.shape[0], pm.neighbour.size, pm,
                 lambda: iter([pm.points]), lambda: iter([pm.faces]), lambda: iter([pm.owner]),
                 lambda: iter([pm.neighbour]))


def _counts(parts: Parts) -> str:
    return (f"nPoints:{parts.n_points}  nCells:{parts.n_cells}  nFaces:{parts.n_faces}  "
            f"nInternalFaces:{parts.n_inner}")


def text_chunks(parts: Parts, points_note: str | None = None) -> dict[str, Iterator[bytes | np.ndarray]]:
    """The five ASCII files as byte-chunk iterators (``foam.file_chunks``' bytes)."""
    quad = [b"4(", b" ", b" ", b" ", b")\n"]

    def listed(head: bytes, n: int, pieces, columns: int, seps):
        yield head + f"{n}\n(\n".encode()
        for a in pieces():
            yield from ascii_blocks([a[:, q] for q in range(columns)] if columns else [a], seps)
        yield b")\n"

    counts = _counts(parts)
    return {
        "points": listed(_header("vectorField", "points", points_note), parts.n_points, parts.points, 3,
                         [b"(", b" ", b" ", b")\n"]),
        "faces": listed(_header("faceList", "faces"), parts.n_faces, parts.faces, 4, quad),
        "owner": listed(_header("labelList", "owner", counts), parts.n_faces, parts.owner, 0, [b"", b"\n"]),
        "neighbour": listed(_header("labelList", "neighbour", counts), parts.n_inner, parts.neighbour, 0,
                            [b"", b"\n"]),
        "boundary": iter([_header("polyBoundaryMesh", "boundary"), _boundary(parts.boundary)]),
    }


#: How a binary file says what its numbers are (OpenFOAM's FoamFile ``arch`` entry).
ARCH = "LSB;label=32;scalar=64"


def _binary_header(cls: str, obj: str, note: str | None = None) -> bytes:
    text = _header(cls, obj, note).decode()
    return text.replace("    format      ascii;\n", f'    format      binary;\n    arch        "{ARCH}";\n').encode()


def _labels(a: np.ndarray) -> np.ndarray:
    if a.size and int(a.max()) >= 2**31:
        raise ValueError(f"label {int(a.max())} does not fit OpenFOAM's 32-bit labels")
    return np.ascontiguousarray(a, dtype="<i4")


def binary_chunks(parts: Parts, points_note: str | None = None) -> dict[str, Iterator[bytes | np.ndarray]]:
    """The five files in OpenFOAM's binary format: each list ``N`` then ``(`` raw
    little-endian numbers ``)`` (labels int32, scalars float64); the faces as a
    faceCompactList: the N + 1 offsets into the node labels, then the labels."""

    def listed(head: bytes, n: int, pieces, convert):
        yield head + f"{n}\n(".encode()
        for a in pieces():
            yield convert(a)
        yield b")\n"

    def offsets():
        step = 1 << 20
        for s in range(0, parts.n_faces + 1, step):  # blocks of offsets: 4 nodes per face
            yield 4 * np.arange(s, min(s + step, parts.n_faces + 1), dtype=np.int64)

    def faces():
        yield from listed(_binary_header("faceCompactList", "faces"), parts.n_faces + 1, offsets, _labels)
        yield from listed(b"\n\n", 4 * parts.n_faces, parts.faces, _labels)

    counts = _counts(parts)
    if 4 * parts.n_faces >= 2**31:
        raise ValueError(f"{4 * parts.n_faces} face nodes do not fit OpenFOAM's 32-bit labels")
    return {
        "points": listed(_binary_header("vectorField", "points", points_note), parts.n_points, parts.points,
                         lambda a: np.ascontiguousarray(a, dtype="<f8")),
        "faces": faces(),
        "owner": listed(_binary_header("labelList", "owner", counts), parts.n_faces, parts.owner, _labels),
        "neighbour": listed(_binary_header("labelList", "neighbour", counts), parts.n_inner, parts.neighbour,
                            _labels),
        "boundary": iter([_binary_header("polyBoundaryMesh", "boundary"), _boundary(parts.boundary)]),
    }


def polymesh_files(mesh: Mesh, note: str | None, binary: bool) -> dict[str, Iterator[bytes | np.ndarray]]:
    """The files of ``mesh`` (3-D), streamed layer by layer when it is :func:`streamable`."""
    from .foam import polymesh

    parts = None
    if streamable(mesh):
        try:
            parts = streamed_parts(mesh)
        except ValueError:
            parts = None  # groups off the grid: the general path names the problem
    if parts is None:
        parts = whole_parts(polymesh(mesh))
    return (binary_chunks if binary else text_chunks)(parts, note)


def write_binary(mesh: Mesh, out_dir: Path, stem: str) -> list[Path]:
    """Registry entry of ``polymesh-binary`` (the folder layout is OpenFOAM's own)."""
    from .foam import write_polymesh

    return [write_polymesh(mesh, out_dir, binary=True)]


register(
    Format(
        name="polymesh-binary",
        description="OpenFOAM polyMesh folder constant/polyMesh in OpenFOAM's binary format (the same "
                    "folder as polymesh: choose one)",
        solvers="OpenFOAM (any recent release)",
        outputs=lambda d, s: [Path(d) / "constant" / "polyMesh"],
        write=write_binary,
    )
)
