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

from ..atomic import atomic_file
from ..gmsh_session import gmsh_session
from ..mesh import Mesh
from .registry import Format, register

#: gmsh element type ids: 2-node line, 4-node quad, 8-node hexahedron.
GMSH_TYPE = {"line": 1, "quad": 3, "hexahedron": 5}


def load_into_gmsh(gmsh, mesh: Mesh) -> None:
    """Create discrete entities, nodes, elements and physical groups for ``mesh``."""
    d = mesh.dim
    gmsh.model.addDiscreteEntity(d, 1)
    node_tags = np.arange(1, mesh.n_points + 1, dtype=np.uint64)
    gmsh.model.mesh.addNodes(d, 1, node_tags, mesh.points.ravel())
    first = mesh.n_cells + 1
    gmsh.model.mesh.addElementsByType(
        1, GMSH_TYPE[mesh.cell_type], np.arange(1, first, dtype=np.uint64), (mesh.cells + 1).ravel()
    )
    gmsh.model.addPhysicalGroup(d, [1], 1, name=mesh.cell_group)
    for k, g in enumerate(mesh.groups, start=1):
        gmsh.model.addDiscreteEntity(d - 1, k)
        n = g.facets.shape[0]
        tags = np.arange(first, first + n, dtype=np.uint64)
        gmsh.model.mesh.addElementsByType(k, GMSH_TYPE[mesh.facet_type], tags, (g.facets + 1).ravel())
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
