"""VTK XML unstructured grid (.vtu), written directly with numpy.

The cells and the boundary facets are written as cells of one grid; the integer cell
data ``group_id`` says which group each belongs to (0 is the fluid), and the file's
``FieldData`` holds one Int32 array per group name whose single value is its id, so the
names survive (meshio's VTU writer drops field data; ../shared/pitfalls.md). The big
arrays (points, connectivity, offsets, types, group_id) are appended raw binary, little
endian, each after a UInt64 byte count, in the ``AppendedData`` section (encoding
"raw", opened by ``_``), each DataArray giving its ``offset`` from there; the field data
stay inline base64. Everything is written piece by piece, so a lazy extrusion is written
without building its hexahedra. Format reference: VTK User's Guide, "VTK File Formats",
XML UnstructuredGrid and appended data.
"""

from __future__ import annotations

import base64
from collections.abc import Iterable, Iterator
from pathlib import Path

import numpy as np

from ...meshing.mesh import Mesh, cell_blocks, point_blocks
from ..atomic import atomic_file
from .registry import Format, register

#: VTK cell type ids (vtkCellType.h): line 3, quad 9, hexahedron 12.
VTK_TYPE = {"line": 3, "quad": 9, "hexahedron": 12}


def group_ids(mesh: Mesh) -> dict[str, int]:
    """The id of each group in the ``group_id`` cell data: fluid 0, boundaries 1, 2, ..."""
    ids = {mesh.cell_group: 0}
    ids.update({g.name: k for k, g in enumerate(mesh.groups, start=1)})
    return ids


def _inline(name: str, data: np.ndarray, vtk_type: str) -> bytes:
    """A small DataArray inline, base64 with its UInt64 byte count (the field data)."""
    from xml.sax.saxutils import quoteattr  # here: it loads urllib and email (10 ms of start-up)

    raw = np.ascontiguousarray(data).tobytes()
    payload = base64.b64encode(np.uint64(len(raw)).tobytes() + raw)
    return (f'<DataArray type="{vtk_type}" Name={quoteattr(name)} NumberOfComponents="1" '
            f'format="binary">').encode() + payload + b"</DataArray>\n"


def _counted(size: int, pieces: Iterable[np.ndarray]) -> Iterator[bytes | np.ndarray]:
    """One appended array: its UInt64 byte count, then its bytes piece by piece."""
    yield np.uint64(size).tobytes()
    yield from pieces


def _constant(n: int, value, dtype: str, block: int = 1 << 20) -> Iterator[np.ndarray]:
    """``n`` copies of ``value`` in blocks (one block array reused)."""
    full = np.full(min(n, block), value, dtype=dtype)
    for s in range(0, n, block):
        yield full[: min(block, n - s)]


def _offsets(sizes: list[tuple[int, int]], block: int = 1 << 20) -> Iterator[np.ndarray]:
    """End offsets of every cell's connectivity (Int64) for runs of (count, nodes per cell)."""
    end = 0
    for n, k in sizes:
        for s in range(0, n, block):
            m = min(block, n - s)
            yield end + k * np.arange(1, m + 1, dtype="<i8")
            end += k * m


def vtu_chunks(mesh: Mesh) -> Iterator[bytes | np.ndarray]:
    """The file as byte chunks, the big arrays piece by piece (no Python loop over cells)."""
    ids = group_ids(mesh)
    k, kf = (4, 2) if mesh.dim == 2 else (8, 4)
    runs = [(mesh.n_cells, k)] + [(g.facets.shape[0], kf) for g in mesh.groups]
    n_cells = sum(n for n, _ in runs)
    n_conn = sum(n * m for n, m in runs)
    # (name, type, components, bytes, pieces) of each appended array, in file order
    arrays = [
        ("Points", "Float64", 3, 24 * mesh.n_points, (np.ascontiguousarray(p, "<f8") for p in point_blocks(mesh))),
        ("connectivity", "Int64", 1, 8 * n_conn, _connectivity(mesh)),
        ("offsets", "Int64", 1, 8 * n_cells, _offsets(runs)),
        ("types", "UInt8", 1, n_cells, (t for (n, _), kind in zip(runs, [mesh.cell_type] + [mesh.facet_type] * len(
            mesh.groups)) for t in _constant(n, VTK_TYPE[kind], "u1"))),
        ("group_id", "Int32", 1, 4 * n_cells, (t for (n, _), gid in zip(runs, ids.values())
                                               for t in _constant(n, gid, "<i4"))),
    ]
    offset, tags = 0, {}
    for name, vtk_type, comps, size, _ in arrays:
        tags[name] = (f'<DataArray type="{vtk_type}" Name="{name}" NumberOfComponents="{comps}" '
                      f'format="appended" offset="{offset}"/>\n').encode()
        offset += 8 + size
    yield (b'<?xml version="1.0"?>\n'
           b'<VTKFile type="UnstructuredGrid" version="1.0" byte_order="LittleEndian" header_type="UInt64">\n'
           b"<UnstructuredGrid>\n<FieldData>\n")
    yield b"".join(_inline(name, np.array([i], dtype="<i4"), "Int32") for name, i in ids.items())
    yield f'</FieldData>\n<Piece NumberOfPoints="{mesh.n_points}" NumberOfCells="{n_cells}">\n'.encode()
    yield b"<Points>\n" + tags["Points"] + b"</Points>\n<Cells>\n" + tags["connectivity"] + tags["offsets"]
    yield tags["types"] + b'</Cells>\n<CellData Scalars="group_id">\n' + tags["group_id"]
    yield b'</CellData>\n</Piece>\n</UnstructuredGrid>\n<AppendedData encoding="raw">\n_'
    for _, _, _, size, pieces in arrays:
        yield from _counted(size, pieces)
    yield b"\n</AppendedData>\n</VTKFile>\n"


def _connectivity(mesh: Mesh) -> Iterator[np.ndarray]:
    """Node ids (Int64) of the cells, then of each group's facets."""
    for c in cell_blocks(mesh):
        yield np.ascontiguousarray(c, dtype="<i8")
    for g in mesh.groups:
        yield np.ascontiguousarray(g.facets, dtype="<i8")


def write(mesh: Mesh, out_dir: Path, stem: str) -> list[Path]:
    target = Path(out_dir) / f"{stem}.vtu"
    with atomic_file(target) as tmp, open(tmp, "wb") as fh:
        fh.writelines(vtu_chunks(mesh))
    return [target]


register(
    Format(
        name="vtu",
        description="VTK XML unstructured grid; group ids as cell data, names as field data",
        solvers="ParaView, VisIt, PyVista (viewing and post-processing)",
        outputs=lambda d, s: [Path(d) / f"{s}.vtu"],
        write=write,
    )
)
