"""Gmsh MSH files, written by gmsh itself from the Mesh arrays.

The Mesh is loaded into a discrete gmsh model: one entity for the cells (physical group
``fluid``) and one entity per boundary group (a physical group of the group's name), so
that every element is in exactly one group (../shared/pitfalls.md). ``msh`` writes
MSH 4.1 binary, ``msh2`` MSH 2.2 ASCII; format reference: gmsh reference manual,
section "MSH file format".
"""

from __future__ import annotations

from pathlib import Path

import numpy as np

from ...meshing.gmsh_session import gmsh_session
from ...meshing.mesh import Mesh
from ..atomic import atomic_file
from .registry import Format, register

#: gmsh element type ids: 2-node line, 4-node quad, 8-node hexahedron.
GMSH_TYPE = {"line": 1, "quad": 3, "hexahedron": 5}
#: Nodes or elements handed to gmsh per call. gmsh's API copies every input array into a
#: vector of its own before building its mesh objects, so passing a whole 1e7-cell mesh
#: at once would hold two extra copies of the connectivity; chunks keep that small. The
#: chunks append in order, so the model and the file are the same as with one call.
CHUNK = 1 << 18


def _one_based(ids: np.ndarray) -> np.ndarray:
    """0-based node ids as gmsh's 1-based unsigned tags, flattened (one copy)."""
    out = ids.astype(np.uint64)
    out += 1
    return out.ravel()


def load_into_gmsh(gmsh, mesh: Mesh) -> None:
    """Create discrete entities, nodes, elements and physical groups for ``mesh``."""
    d = mesh.dim
    gmsh.model.addDiscreteEntity(d, 1)
    for s in range(0, mesh.n_points, CHUNK):  # chunks of nodes, not nodes
        e = min(s + CHUNK, mesh.n_points)
        gmsh.model.mesh.addNodes(d, 1, np.arange(s + 1, e + 1, dtype=np.uint64), mesh.points[s:e].ravel())
    for s in range(0, mesh.n_cells, CHUNK):  # chunks of cells
        e = min(s + CHUNK, mesh.n_cells)
        gmsh.model.mesh.addElementsByType(
            1, GMSH_TYPE[mesh.cell_type], np.arange(s + 1, e + 1, dtype=np.uint64), _one_based(mesh.cells[s:e])
        )
    first = mesh.n_cells + 1
    gmsh.model.addPhysicalGroup(d, [1], 1, name=mesh.cell_group)
    for k, g in enumerate(mesh.groups, start=1):
        gmsh.model.addDiscreteEntity(d - 1, k)
        n = g.facets.shape[0]
        tags = np.arange(first, first + n, dtype=np.uint64)
        gmsh.model.mesh.addElementsByType(k, GMSH_TYPE[mesh.facet_type], tags, _one_based(g.facets))
        gmsh.model.addPhysicalGroup(d - 1, [k], k + 1, name=g.name)
        first += n


def _writer(version: float, binary: bool):
    def write(mesh: Mesh, out_dir: Path, stem: str) -> list[Path]:
        target = Path(out_dir) / f"{stem}.msh" if version > 3 else Path(out_dir) / f"{stem}.v2.msh"
        with gmsh_session() as gmsh, atomic_file(target) as tmp:
            load_into_gmsh(gmsh, mesh)
            gmsh.option.setNumber("Mesh.MshFileVersion", version)
            gmsh.option.setNumber("Mesh.Binary", 1 if binary else 0)
            gmsh.option.setNumber("Mesh.SaveAll", 0)
            gmsh.write(str(tmp))
        return [target]

    return write


register(
    Format(
        name="msh",
        description="Gmsh MSH 4.1, binary, physical groups by name",
        solvers="gmsh, meshio; solvers with a Gmsh import (e.g. OpenFOAM's gmshToFoam, Code_Saturne)",
        outputs=lambda d, s: [Path(d) / f"{s}.msh"],
        write=_writer(4.1, True),
    )
)
register(
    Format(
        name="msh2",
        description="Gmsh MSH 2.2, ASCII, physical names in $PhysicalNames",
        solvers="older Gmsh readers; many solvers' legacy import paths",
        outputs=lambda d, s: [Path(d) / f"{s}.v2.msh"],
        write=_writer(2.2, False),
    )
)
