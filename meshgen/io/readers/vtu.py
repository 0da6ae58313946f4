"""VTK XML unstructured-grid (.vtu) reader for meshgen's own VTU files, returning a Mesh.

Format reference: VTK file formats, "XML file formats", UnstructuredGrid and FieldData.
meshgen's VTU files (meshgen/writers/vtu.py) hold the cells and the boundary facets as
cell blocks, an integer cell data array ``group_id`` (0 = the fluid cells, k = the k-th
boundary group) and a FieldData section with one one-value integer array per group name
whose value is its id. meshio 5.3.5 writes no FieldData but its VTU reader does parse it
(ascii and binary DataArrays; checked in tests/test_quality.py), so one meshio read gives
both the arrays and the names. Roles come from the names as in ``readers.msh.role_for``.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np

from ...core.errors import ReadError
from ...meshing.mesh import Mesh
from .msh import FACET_OF, assemble, cell_type_of, meshio_read


def read_vtu(path) -> Mesh:
    """Read a meshgen VTU file into a Mesh (``shape`` None: unstructured order)."""
    path = Path(path)
    m = meshio_read(path, "vtu", "VTU")
    ids = m.cell_data.get("group_id")
    if ids is None:
        raise ReadError(f"{path}: no 'group_id' cell data, so no boundary groups")
    names = {int(np.asarray(v).ravel()[0]): k for k, v in m.field_data.items() if np.asarray(v).size == 1}
    cell = cell_type_of({b.type for b in m.cells}, path)
    facet = FACET_OF[cell]
    cells = np.concatenate([b.data for b in m.cells if b.type == cell]).astype(np.int64)
    blocks = [(b.data, np.asarray(i).ravel()) for b, i in zip(m.cells, ids) if b.type == facet]
    present = sorted({int(k) for _, i in blocks for k in np.unique(i)} - {0})
    unnamed = [k for k in present if k not in names]
    if unnamed:
        raise ReadError(f"{path}: group ids {unnamed} have no name in the file's FieldData "
                        f"(one Int32 array per group name holding its id)")
    facets = {names[k]: np.concatenate([d[i == k] for d, i in blocks]) for k in present}
    return assemble(path, m.points, cells, facets, names.get(0, "fluid"))
