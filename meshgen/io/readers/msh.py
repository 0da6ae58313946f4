"""Gmsh MSH reader (versions 4.1 and 2.2, ASCII or binary) returning a Mesh, via meshio.

Format reference: gmsh reference manual, section "MSH file format". meshio reads both
versions with ``file_format="gmsh"`` (``.msh`` alone would pick another format) but
presents the groups differently (../shared/pitfalls.md):

- 4.1: one cell block per entity and ``cell_sets`` named after the physical groups,
  plus a ``gmsh:bounding_entities`` set that is not a group;
- 2.2: blocks merged by element type; names only in ``field_data`` (name -> [tag, dim])
  with each element's physical tag in the ``gmsh:physical`` cell data.

Cells are quadrilaterals (2-D) or hexahedra (3-D); physical groups one dimension lower
become the boundary groups. A group's role is its name when that is one of
``meshgen.mesh.ROLES`` and 'farfield' otherwise (MSH carries names, not roles).
"""

from __future__ import annotations

from pathlib import Path

import numpy as np

from ...core.errors import ReadError
from ...meshing.mesh import ROLES, Group, Mesh

#: Cell type -> its boundary facet type, for the cell types a Mesh holds.
FACET_OF = {"hexahedron": "quad", "quad": "line"}
#: Element types of each dimension that a Mesh cannot hold.
FOREIGN = {"quad": {"triangle", "triangle6", "quad8", "quad9"},
           "hexahedron": {"tetra", "wedge", "pyramid", "tetra10", "hexahedron20", "hexahedron27"}}


def role_for(name: str) -> str:
    """The role a group name implies: the name itself if it is a role, else 'farfield'."""
    return name if name in ROLES else "farfield"


def cell_type_of(types: set[str], path: Path) -> str:
    """'hexahedron' or 'quad', or ReadError when the file holds neither or mixes in others."""
    cell = "hexahedron" if "hexahedron" in types else "quad" if "quad" in types else None
    if cell is None or types & FOREIGN[cell]:
        raise ReadError(f"{path}: meshgen reads quad (2-D) or hexahedron (3-D) meshes; "
                        f"found element types {sorted(types)}")
    return cell


def assemble(path: Path, points: np.ndarray, cells: np.ndarray, facets: dict[str, np.ndarray],
             cell_group: str) -> Mesh:
    """A Mesh from read arrays: unused points dropped (renumbered), roles from names."""
    facets = {k: v for k, v in facets.items() if v.shape[0]}
    if not facets:
        raise ReadError(f"{path}: no boundary groups (named groups of boundary facets) found")
    pts = np.asarray(points, dtype=np.float64)
    if pts.shape[1] == 2:
        pts = np.hstack([pts, np.zeros((pts.shape[0], 1))])
    used = np.zeros(pts.shape[0], dtype=bool)
    used[cells.ravel()] = True
    new_id = np.cumsum(used) - 1
    for name, f in facets.items():
        if not used[f.ravel()].all():
            raise ReadError(f"{path}: group {name!r} has facets whose nodes belong to no cell")
    groups = tuple(Group(n, role_for(n), new_id[f].astype(np.int64)) for n, f in facets.items())
    return Mesh(points=pts[used], cells=new_id[cells].astype(np.int64), groups=groups,
                cell_group=cell_group, meta={"source": str(path)})


def _groups_from_sets(m, facet: str, cell: str) -> tuple[dict[str, np.ndarray], str | None]:
    """MSH 4.1: facets of each named cell set, and the name of the set holding cells."""
    facets, cell_group = {}, None
    for name, per_block in m.cell_sets.items():
        if name.startswith("gmsh:"):
            continue
        picked = [b.data[idx] for b, idx in zip(m.cells, per_block)
                  if idx is not None and len(idx) and b.type == facet]
        if picked:
            facets[name] = np.concatenate(picked)
        elif any(idx is not None and len(idx) and b.type == cell for b, idx in zip(m.cells, per_block)):
            cell_group = cell_group or name
    return facets, cell_group


def _groups_from_tags(m, facet: str, cell: str) -> tuple[dict[str, np.ndarray], str | None]:
    """MSH 2.2: facets by physical tag, names from field_data (name -> [tag, dim])."""
    tags = m.cell_data.get("gmsh:physical")
    if tags is None:
        return {}, None
    dim = 3 if cell == "hexahedron" else 2
    facets, cell_group = {}, None
    for name, (tag, d) in ((k, np.asarray(v).ravel()[:2]) for k, v in m.field_data.items()):
        if d == dim - 1:
            picked = [b.data[t == tag] for b, t in zip(m.cells, tags) if b.type == facet]
            if picked:
                facets[name] = np.concatenate(picked)
        elif d == dim:
            cell_group = cell_group or name
    return facets, cell_group


def meshio_read(path: Path, module: str, what: str):
    """Read with one of meshio's format modules, any failure as a one-line ReadError.

    The format's own reader is called because meshio.read prints and calls sys.exit on a
    file no reader accepts.
    """
    import importlib

    try:
        if not path.is_file():
            raise FileNotFoundError("no such file")
        return importlib.import_module(f"meshio.{module}").read(str(path))
    except Exception as exc:  # noqa: BLE001  (meshio raises many types on bad input; one line is enough)
        reason = (str(exc).strip().splitlines() or [type(exc).__name__])[0]
        raise ReadError(f"{path}: not a readable {what} file ({reason})") from None


def read_msh(path) -> Mesh:
    """Read a Gmsh MSH 4.1 or 2.2 file into a Mesh (``shape`` None: unstructured order)."""
    path = Path(path)
    m = meshio_read(path, "gmsh", "Gmsh MSH")
    cell = cell_type_of({b.type for b in m.cells}, path)
    facet = FACET_OF[cell]
    cells = np.concatenate([b.data for b in m.cells if b.type == cell]).astype(np.int64)
    pick = _groups_from_sets if any(not k.startswith("gmsh:") for k in m.cell_sets) else _groups_from_tags
    facets, cell_group = pick(m, facet, cell)
    return assemble(path, m.points, cells, facets, cell_group or "fluid")
