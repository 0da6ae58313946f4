"""Gmsh MSH files (4.1 binary and 2.2 ASCII), written from the Mesh arrays with numpy.

Each file holds what gmsh itself writes for the Mesh loaded as a discrete model: one
entity for the cells with the physical group ``fluid`` (tag 1), one entity per boundary
group ``k = 1, 2, ...`` with a physical group of the group's name (tag k + 1), so that
every element is in exactly one group (../shared/pitfalls.md); element tags are the
cells 1..M, then each group's facets in group order. Format reference: gmsh reference
manual, section "MSH file format" (versions 4.1 and 2.2). The tests hold the files
against gmsh's own output of the same Mesh (tests/io/test_msh.py).

``msh``, MSH 4.1 binary (little endian, ``size_t`` of 8 bytes)::

    $MeshFormat     "4.1 1 8", int 1 (tells the byte order), $EndMeshFormat
    $PhysicalNames  ASCII: count, then `dim tag "name"` in (dim, tag) order
    $Entities       size_t counts of points, curves, surfaces, volumes; per entity: int tag,
                    double bounding box (min x y z, max x y z), size_t 1, int physical
                    tag, size_t 0 bounding entities
    $Nodes          size_t entity blocks, nodes, min and max node tag; per entity (every
                    one, boundary entities first): int dim, tag, 0 (not parametric),
                    size_t count, the size_t node tags, then x y z doubles per node. All
                    nodes sit on the cell entity; boundary entities hold none.
    $Elements       size_t entity blocks, elements, min and max element tag; per entity
                    (boundary entities first): int dim, tag, element type, size_t count,
                    then per element size_t tag and its (1-based) node tags

The bounding boxes are the exact coordinate ranges of each entity's nodes; gmsh's own
are sampled from its discrete curves' parametrisation and may differ in the last bits
(readers do not build anything from them).

``msh2``, MSH 2.2 ASCII: the same ``$PhysicalNames``; ``$Nodes`` as ``tag x y z`` with
the coordinates in C's ``%.16g`` (as gmsh prints them); ``$Elements`` as ``tag type 2
physical entity nodes...``, numbered 1.. in file order (the facets, group by group, then
the cells), as gmsh renumbers them in this version.

A periodic pair of groups (``Mesh.periodic``) adds a ``$Periodic`` section after the
elements (both versions): the target group's entity is the image of the source's under the
translation, with every node pair (:func:`periodic41`, :func:`periodic22`).

Arrays are converted and written a block of CHUNK rows at a time, so the temporaries stay
small whatever the mesh size; a lazy extrusion (``ExtrudedMesh``) is written from its
base and planes block by block, without building its points or hexahedra.
"""

from __future__ import annotations

from collections.abc import Iterable, Iterator
from pathlib import Path

import numpy as np

from ...meshing.mesh import Mesh, bounds, cell_blocks, node_coordinates, point_blocks
from ...meshing.periodic import node_pairs
from ..atomic import atomic_file
from .registry import Format, register
from .su2 import ascii_blocks

#: gmsh element type ids: 2-node line, 4-node quad, 8-node hexahedron.
GMSH_TYPE = {"line": 1, "quad": 3, "hexahedron": 5}
#: Rows (nodes or elements) converted per step: a step's tables stay a few MB.
CHUNK = 1 << 16
#: How gmsh prints a coordinate in MSH 2.2 (C's printf).
MSH2_FLOAT = "%.16g"


def _sizes(*values: int) -> bytes:
    return np.array(values, dtype="<u8").tobytes()


def _ints(*values: int) -> bytes:
    return np.array(values, dtype="<i4").tobytes()


def _rows(a: np.ndarray) -> Iterator[np.ndarray]:
    """``a`` in blocks of CHUNK rows (views)."""
    return (a[s:s + CHUNK] for s in range(0, a.shape[0], CHUNK))


def physical_names(mesh: Mesh) -> bytes:
    """The ``$PhysicalNames`` section: groups (dim - 1, tags 2..), then the cells (dim, 1)."""
    d = mesh.dim
    rows = [f'{d - 1} {k} "{g.name}"' for k, g in enumerate(mesh.groups, start=2)]
    rows.append(f'{d} 1 "{mesh.cell_group}"')
    return f"$PhysicalNames\n{len(rows)}\n" + "\n".join(rows) + "\n$EndPhysicalNames\n"


def _box(mesh: Mesh, ids: np.ndarray | None = None) -> bytes:
    """(min x, y, z, max x, y, z) of the nodes ``ids`` (all nodes if None) as doubles."""
    if ids is None:
        return np.concatenate(bounds(mesh)).astype("<f8").tobytes()
    lo, hi = np.full(3, np.inf), np.full(3, -np.inf)
    flat = ids.ravel()
    for s in range(0, flat.size, CHUNK):  # chunks of node ids
        p = node_coordinates(mesh, flat[s:s + CHUNK])
        lo, hi = np.minimum(lo, p.min(axis=0)), np.maximum(hi, p.max(axis=0))
    return np.concatenate([lo, hi]).astype("<f8").tobytes()


def _element_tables(first: int, blocks: Iterable[np.ndarray]) -> Iterator[np.ndarray]:
    """Rows (tag, node tags) as uint64 for node-id blocks, tags counting from ``first``.

    One table is reused: each must be written before the next is asked for.
    """
    table = np.empty((0, 0), dtype="<u8")
    tag = first
    for nodes in blocks:
        n, k = nodes.shape
        if table.shape[0] < n or table.shape[1] != k + 1:
            table = np.empty((n, k + 1), dtype="<u8")
        t = table[:n]
        t[:, 0] = np.arange(tag, tag + n, dtype=np.uint64)
        np.add(nodes, 1, out=t[:, 1:], casting="unsafe")
        tag += n
        yield t


def msh41_chunks(mesh: Mesh) -> Iterator[bytes | np.ndarray]:
    """The MSH 4.1 binary file as byte chunks (bytes or arrays), in file order."""
    d, groups, n, m = mesh.dim, mesh.groups, mesh.n_points, mesh.n_cells
    yield b"$MeshFormat\n4.1 1 8\n" + _ints(1) + b"\n$EndMeshFormat\n"
    yield physical_names(mesh).encode()
    counts = [0, 0, 0, 0]
    counts[d - 1], counts[d] = len(groups), 1
    entities = [_sizes(*counts)]
    for k, g in enumerate(groups, start=1):  # a handful of groups
        entities += [_ints(k), _box(mesh, g.facets), _sizes(1), _ints(k + 1), _sizes(0)]
    entities += [_ints(1), _box(mesh), _sizes(1), _ints(1), _sizes(0)]
    yield b"$Entities\n" + b"".join(entities) + b"\n$EndEntities\n"

    yield b"$Nodes\n" + _sizes(len(groups) + 1, n, 1, n)
    yield b"".join(_ints(d - 1, k, 0) + _sizes(0) for k in range(1, len(groups) + 1))
    yield _ints(d, 1, 0) + _sizes(n)
    for s in range(0, n, CHUNK):  # chunks of node tags
        yield np.arange(s + 1, min(s + CHUNK, n) + 1, dtype="<u8")
    for p in point_blocks(mesh, CHUNK):
        yield np.ascontiguousarray(p, dtype="<f8")
    yield b"\n$EndNodes\n"

    total = m + sum(g.facets.shape[0] for g in groups)
    yield b"$Elements\n" + _sizes(len(groups) + 1, total, 1, total)
    first = m + 1
    for k, g in enumerate(groups, start=1):
        yield _ints(d - 1, k, GMSH_TYPE[mesh.facet_type]) + _sizes(g.facets.shape[0])
        yield from _element_tables(first, _rows(g.facets))
        first += g.facets.shape[0]
    yield _ints(d, 1, GMSH_TYPE[mesh.cell_type]) + _sizes(m)
    yield from _element_tables(1, cell_blocks(mesh, CHUNK))
    yield b"\n$EndElements\n"
    yield from periodic41(mesh)


def msh22_chunks(mesh: Mesh) -> Iterator[bytes | np.ndarray]:
    """The MSH 2.2 ASCII file as byte chunks, in file order."""
    yield b"$MeshFormat\n2.2 0 8\n$EndMeshFormat\n" + physical_names(mesh).encode()
    yield f"$Nodes\n{mesh.n_points}\n".encode()
    tag = 1
    for p in point_blocks(mesh, CHUNK):
        cols = [np.arange(tag, tag + p.shape[0], dtype=np.int64), p[:, 0], p[:, 1], p[:, 2]]
        yield from ascii_blocks(cols, [b"", b" ", b" ", b" ", b"\n"], float_format=MSH2_FLOAT)
        tag += p.shape[0]
    total = mesh.n_cells + sum(g.facets.shape[0] for g in mesh.groups)
    yield f"$EndNodes\n$Elements\n{total}\n".encode()
    parts = [(g.facets, GMSH_TYPE[mesh.facet_type], k + 1, k) for k, g in enumerate(mesh.groups, start=1)]
    parts.append((None, GMSH_TYPE[mesh.cell_type], 1, 1))
    tag = 1
    for nodes, kind, physical, entity in parts:  # the groups, then the cells
        for b in cell_blocks(mesh, CHUNK) if nodes is None else _rows(nodes):
            n = b.shape[0]
            cols = [np.arange(tag, tag + n, dtype=np.int64)]
            cols += [np.full(n, v, np.int64) for v in (kind, 2, physical, entity)]
            cols += [b[:, c] + 1 for c in range(b.shape[1])]
            yield from ascii_blocks(cols, [b""] + [b" "] * (len(cols) - 1) + [b"\n"])
            tag += n
    yield b"$EndElements\n"
    yield from periodic22(mesh)


def _periodic_links(mesh: Mesh) -> Iterator[tuple[int, int, np.ndarray, np.ndarray]]:
    """Per periodic pair: slave entity (the target group's), master entity (the source's),
    the 4 x 4 affine map master -> slave by rows, and (slave, master) node tags."""
    entity = {g.name: k for k, g in enumerate(mesh.groups, start=1)}
    for p in mesh.periodic:  # a loop over the periodic pairs
        tx, ty, tz = p.translation
        affine = np.array([1, 0, 0, tx, 0, 1, 0, ty, 0, 0, 1, tz, 0, 0, 0, 1], dtype="<f8")
        master, slave = node_pairs(mesh, p)
        yield entity[p.target], entity[p.source], affine, np.stack([slave + 1, master + 1], axis=1)


def periodic41(mesh: Mesh) -> Iterator[bytes]:
    """The MSH 4.1 ``$Periodic`` section (binary), none without periodic pairs::

        size_t links; per link: int dim, slave entity, master entity; size_t 16, 16 doubles
        (the affine map, by rows); size_t node pairs, then (slave tag, master tag) size_t pairs

    The nodes stay on the cell entity: gmsh reads the pairs back all the same (tested).
    """
    if not mesh.periodic:
        return
    yield b"$Periodic\n" + _sizes(len(mesh.periodic))
    for slave, master, affine, pairs in _periodic_links(mesh):
        yield _ints(mesh.dim - 1, slave, master) + _sizes(16) + affine.tobytes() + _sizes(pairs.shape[0])
        yield np.ascontiguousarray(pairs, dtype="<u8")
    yield b"\n$EndPeriodic\n"


def periodic22(mesh: Mesh) -> Iterator[bytes]:
    """The MSH 2.2 ``$Periodic`` section (ASCII), as gmsh writes it: ``dim slave master``,
    ``Affine`` and 16 numbers, the pair count, then ``slave master`` per line."""
    if not mesh.periodic:
        return
    yield f"$Periodic\n{len(mesh.periodic)}\n".encode()
    for slave, master, affine, pairs in _periodic_links(mesh):
        head = " ".join(f"{v:.16g}" for v in affine)
        yield f"{mesh.dim - 1} {slave} {master}\nAffine {head}\n{pairs.shape[0]}\n".encode()
        yield from ascii_blocks([pairs[:, 0], pairs[:, 1]], [b"", b" ", b"\n"])
    yield b"$EndPeriodic\n"


def _writer(chunks, suffix: str):
    def write(mesh: Mesh, out_dir: Path, stem: str) -> list[Path]:
        target = Path(out_dir) / f"{stem}{suffix}"
        with atomic_file(target) as tmp, open(tmp, "wb") as fh:
            fh.writelines(chunks(mesh))
        return [target]

    return write


register(
    Format(
        name="msh",
        description="Gmsh MSH 4.1, binary, physical groups by name",
        solvers="gmsh, meshio; solvers with a Gmsh import (e.g. OpenFOAM's gmshToFoam, Code_Saturne)",
        outputs=lambda d, s: [Path(d) / f"{s}.msh"],
        write=_writer(msh41_chunks, ".msh"),
    )
)
register(
    Format(
        name="msh2",
        description="Gmsh MSH 2.2, ASCII, physical names in $PhysicalNames",
        solvers="older Gmsh readers; many solvers' legacy import paths",
        outputs=lambda d, s: [Path(d) / f"{s}.v2.msh"],
        write=_writer(msh22_chunks, ".v2.msh"),
    )
)
