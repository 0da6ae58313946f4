"""VTK XML unstructured grid (.vtu), written directly with numpy.

The cells and the boundary facets are written as cells of one grid; the integer cell
data ``group_id`` says which group each belongs to (0 is the fluid), and the file's
``FieldData`` holds one Int32 array per group name whose single value is its id, so the
names survive (meshio's VTU writer drops field data; ../shared/pitfalls.md). Data arrays
are inline base64 with a UInt64 byte-count header, little endian. Format reference: VTK
User's Guide, "VTK File Formats", XML UnstructuredGrid.
"""

from __future__ import annotations

import base64
from pathlib import Path
from xml.sax.saxutils import quoteattr

import numpy as np

from ...meshing.mesh import Mesh
from ..atomic import atomic_file
from .registry import Format, register

#: VTK cell type ids (vtkCellType.h): line 3, quad 9, hexahedron 12.
VTK_TYPE = {"line": 3, "quad": 9, "hexahedron": 12}


def group_ids(mesh: Mesh) -> dict[str, int]:
    """The id of each group in the ``group_id`` cell data: fluid 0, boundaries 1, 2, ..."""
    ids = {mesh.cell_group: 0}
    ids.update({g.name: k for k, g in enumerate(mesh.groups, start=1)})
    return ids


def _array(name: str, data: np.ndarray, vtk_type: str, components: int = 1) -> bytes:
    raw = np.ascontiguousarray(data).tobytes()
    payload = base64.b64encode(np.uint64(len(raw)).tobytes() + raw)
    head = (f'<DataArray type="{vtk_type}" Name={quoteattr(name)} '
            f'NumberOfComponents="{components}" format="binary">')
    return head.encode() + payload + b"</DataArray>\n"


def vtu_bytes(mesh: Mesh) -> list[bytes]:
    """The file as a list of byte chunks (no Python loop over cells)."""
    ids = group_ids(mesh)
    blocks = [mesh.cells] + [g.facets for g in mesh.groups]
    kinds = [mesh.cell_type] + [mesh.facet_type] * len(mesh.groups)
    conn = np.concatenate([b.ravel() for b in blocks]).astype("<i8")
    sizes = np.concatenate([np.full(b.shape[0], b.shape[1], dtype="<i8") for b in blocks])
    types = np.concatenate([np.full(b.shape[0], VTK_TYPE[k], dtype=np.uint8) for b, k in zip(blocks, kinds)])
    gid = np.concatenate(
        [np.zeros(mesh.n_cells, dtype="<i4")]
        + [np.full(g.facets.shape[0], ids[g.name], dtype="<i4") for g in mesh.groups]
    )
    n_cells = int(sizes.size)
    out = [
        (b'<?xml version="1.0"?>\n'
        b'<VTKFile type="UnstructuredGrid" version="1.0" byte_order="LittleEndian" header_type="UInt64">\n'
        b"<UnstructuredGrid>\n<FieldData>\n")
    ]
    out += [_array(name, np.array([i], dtype="<i4"), "Int32") for name, i in ids.items()]
    out.append(f'</FieldData>\n<Piece NumberOfPoints="{mesh.n_points}" NumberOfCells="{n_cells}">\n'.encode())
    out.append(b"<Points>\n")
    out.append(_array("Points", mesh.points.astype("<f8"), "Float64", 3))
    out.append(b"</Points>\n<Cells>\n")
    out.append(_array("connectivity", conn, "Int64"))
    out.append(_array("offsets", np.cumsum(sizes), "Int64"))
    out.append(_array("types", types, "UInt8"))
    out.append(b'</Cells>\n<CellData Scalars="group_id">\n')
    out.append(_array("group_id", gid, "Int32"))
    out.append(b"</CellData>\n</Piece>\n</UnstructuredGrid>\n</VTKFile>\n")
    return out


def write(mesh: Mesh, out_dir: Path, stem: str) -> list[Path]:
    target = Path(out_dir) / f"{stem}.vtu"
    with atomic_file(target) as tmp, open(tmp, "wb") as fh:
        fh.writelines(vtu_bytes(mesh))
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
