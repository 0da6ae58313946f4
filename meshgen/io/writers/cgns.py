"""CGNS/HDF5 files (``<stem>.cgns``), written node by node with h5py.

The tree follows the CGNS Standard Interface Data Structures (SIDS) and the CGNS/HDF5
file mapping. Every node is an HDF5 group with the attributes ``name`` and ``label``
(scalar null-terminated ASCII strings of 33 bytes), ``type`` (the data type code, a
3-byte string: MT, C1, I4, I8, R4, R8) and ``flags`` (one int32, 1); a node's data is
the dataset ``" data"`` under it. Groups track link creation order, which the CGNS
library iterates by. The root group also holds ``" format"`` and ``" hdf5version"``.
Array dimensions are stored reversed, so a C-order numpy array of shape (nk, nj, ni)
is the CGNS (Fortran, i fastest) array of dimensions (ni, nj, nk).

Tree written (one zone per block of a structured mesh)::

    CGNSLibraryVersion                      R4 [3.4]
    Base                CGNSBase_t          I4 [cell dim, physical dim]
      DataClass, DimensionalUnits           Dimensional; kg, m, s, K, deg
      <group>           Family_t            FamilyBC = BC type of the group's role
      <block>           Zone_t              I4 (3, index dim): nodes, cells, 0
        ZoneType                            Structured
        GridCoordinates                     CoordinateX, CoordinateY[, CoordinateZ] R8 [m]
        ZoneBC / <group> BC_t               FamilySpecified: PointRange (1-based block-local
                                            nodes), FamilyName = the group's Family_t
        ZoneGridConnectivity / <name>       GridConnectivity1to1_t to the neighbouring
                                            blocks: PointRange, PointRangeDonor, Transform

Zones are named after the blocks (a block named like a group gets ``_zone`` appended,
since families and zones share the base); the CGNS library numbers zones in name order,
so zone 1 is the alphabetically first block, not the upstream one.

A mesh without a structured layout, or any mesh written as ``cgns-single``
(``<stem>.single.cgns``), becomes one unstructured zone: an Elements_t section
of QUAD_4 or HEXA_8 cells, one of BAR_2 (2-D) or QUAD_4 (3-D) facets per group, and one
BC_t per group whose PointRange is that section's element range (GridLocation FaceCenter
in 3-D, EdgeCenter in 2-D). One zone serves readers that do not join multi-zone 1-to-1
interfaces (code_saturne's preprocessor leaves them as ungrouped boundary faces) and SU2,
whose CGNS reader takes a single unstructured zone and names its markers after the
boundary Elements_t sections (SU2 8.1, Common/src/geometry/meshreader/
CCGNSMeshReaderBase.cpp and CCGNSMeshReaderFVM.cpp: one base, one zone, Unstructured;
marker tag = section name; it reads no BC_t).

Every BC_t is ``FamilySpecified`` and names its group's Family_t, whose FamilyBC holds the
physical type (SIDS 9.2 FamilyBC_t, 9.3 BC_t "FamilySpecified"): VTK's CGNS reader
(ParaView's) loads FamilySpecified BCs as patches and skips BC_t nodes typed BCWall,
BCInflow, ... (vtkCGNSReader 9.x: "BC_t type ... not supported yet"), while a reader that
follows the family finds the type there. Types by role (SIDS BCType_t): wall -> BCWall
(the equation set makes it no-slip), inlet -> BCInflow, outlet -> BCOutflow, farfield ->
BCFarfield, symmetry -> BCSymmetryPlane; front/back follow ``domain.span_boundary``
(``meshing.mesh.span_boundary``): symmetry -> BCSymmetryPlane, patch -> UserDefined (the name BCTypeUserDefined has in files)
(the solver set-up decides).

Sources: CGNS SIDS (cgns.github.io, "CGNS/SIDS"); CGNS/HDF5 file mapping
("CGNS/HDF5 - An HPC implementation") and the attribute types as the CGNS library's
HDF5 layer (ADFH) creates them; checked by ``cgnscheck`` (Debian ``cgns-convert``).
"""

from __future__ import annotations

from pathlib import Path

import numpy as np

from ...core.errors import WriteError
from ...meshing.mesh import Mesh, cell_blocks, grid_planes, point_blocks, span_boundary
from ..atomic import atomic_file
from .cgns_periodic import for_writing, periodic_names, zone_connectivity
from .cgns_tree import NAME_LENGTH, PIECE_VALUES, NodeWriter, Pieces, _chars, _check_name
from .plot3d import grid_blocks, grid_shape, group_pieces
from .registry import Format, register

#: BC type of each group role (SIDS BCType_t); front and back follow SPAN_BC.
ROLE_BC = {
    "wall": "BCWall",
    "inlet": "BCInflow",
    "outlet": "BCOutflow",
    "farfield": "BCFarfield",
    "symmetry": "BCSymmetryPlane",
}
#: BC type of the front and back faces per ``domain.span_boundary``.
SPAN_BC = {"symmetry": "BCSymmetryPlane", "patch": "UserDefined", "empty": "UserDefined", "periodic": "UserDefined"}
#: SIDS ElementType_t values (cgnslib.h): BAR_2, QUAD_4, HEXA_8.
ELEMENT_TYPE = {"line": 3, "quad": 7, "hexahedron": 17}
#: The CGNS library version this file claims; readers refuse files newer than themselves.
class _Tree(NodeWriter):
    """The node layer (cgns_tree.py) and the Base of a meshgen Mesh: its units and one
    Family_t per group with the group's physical BC type."""

    def base(self, mesh: Mesh, cell_dim: int, phys_dim: int):
        base = self.int4(self.f, "Base", "CGNSBase_t", [cell_dim, phys_dim])
        self.text(base, "DataClass", "DataClass_t", "Dimensional")
        units = np.full((5, NAME_LENGTH), ord(" "), dtype=np.int8)  # five blank-padded names
        for n, u in enumerate(("Kilogram", "Meter", "Second", "Kelvin", "Degree")):
            units[n, : len(u)] = _chars(u)
        self.node(base, "DimensionalUnits", "DimensionalUnits_t", "C1", units)
        for g in (g for g in mesh.groups if g.name not in periodic_names(mesh)):
            fam = self.node(base, _check_name(g.name, "group name"), "Family_t")
            self.text(fam, "FamilyBC", "FamilyBC_t", _bc_type(g.role, g.name, span_boundary(mesh)))
        return base


def _bc_type(role: str, group: str, span: str = "symmetry") -> str:
    if role in ("front", "back"):
        return SPAN_BC[span]
    try:
        return ROLE_BC[role]
    except KeyError:
        raise WriteError(f"group {group!r} has role {role!r}; valid roles: {', '.join(ROLE_BC)}") from None


def _unique(name: str, taken: set[str]) -> str:
    """``name``, or ``name_2``, ``name_3``... if a sibling already has it (max 32 chars)."""
    out, n = name, 1
    while out in taken:
        n += 1
        suffix = f"_{n}"
        out = name[: NAME_LENGTH - len(suffix)] + suffix
    taken.add(out)
    return out


def _zone_names(mesh: Mesh, blocks) -> list[str]:
    """Block names as zone names; a block named like a group (a Family_t) gets ``_zone``."""
    families = {g.name for g in mesh.groups}
    taken = set(families)
    names = []
    for b in blocks:
        base = _check_name(b.name, "block name")
        names.append(_unique(base if base not in families else base[: NAME_LENGTH - 5] + "_zone", taken))
    return names


def _write_structured(tree: _Tree, mesh: Mesh) -> None:
    _, nj, nk = grid_shape(mesh)
    dim = mesh.dim
    blocks = grid_blocks(mesh)
    pieces = group_pieces(mesh)
    base = tree.base(mesh, dim, dim)
    zones = _zone_names(mesh, blocks)
    axes = ("CoordinateX", "CoordinateY", "CoordinateZ")[:dim]
    for bi, (b, zname) in enumerate(zip(blocks, zones, strict=True)):
        nib = b.i1 - b.i0 + 1
        nodes = [nib, nj, nk][:dim]
        zone = tree.ints(base, zname, "Zone_t", [nodes, [n - 1 for n in nodes], [0] * dim])
        tree.text(zone, "ZoneType", "ZoneType_t", "Structured")
        tree.coordinates(zone, {name: _block_coordinate(mesh, c, b) for c, name in enumerate(axes)})
        zbc = tree.node(zone, "ZoneBC", "ZoneBC_t")
        taken: set[str] = set()
        for pc in (p for p in pieces if p.block == bi and p.group not in periodic_names(mesh)):
            tree.bc(zbc, _unique(pc.group, taken), pc.group, pc.lo[:dim], pc.hi[:dim])
        zgc = zone_connectivity(tree, zone, zname, bi, pieces, mesh, len(blocks) > 1)  # periodic pairs too
        if len(blocks) > 1:
            full = [nj, nk][: dim - 1]
            for side, other in (("imin", bi - 1), ("imax", bi + 1)):
                if not 0 <= other < len(blocks):
                    continue
                here = 1 if side == "imin" else nib
                there = blocks[other].i1 - blocks[other].i0 + 1 if side == "imin" else 1
                cname = f"{side}_{zones[other]}"[:NAME_LENGTH]
                conn = tree.text(zgc, cname, "GridConnectivity1to1_t", zones[other])
                ones = [1] * (dim - 1)
                tree.ints(conn, "PointRange", "IndexRange_t", [[here, *ones], [here, *full]])
                tree.ints(conn, "PointRangeDonor", "IndexRange_t", [[there, *ones], [there, *full]])
                # Same index directions on both sides: the blocks share one global grid.
                tree.int4(conn, "Transform", '"int[IndexDimension]"', list(range(1, dim + 1)))


def _block_coordinate(mesh: Mesh, axis: int, b) -> Pieces:
    """One coordinate of a block, (nk, nj, nib) in 3-D (reversed CGNS dimensions (nib, nj,
    nk)), (nj, nib) in 2-D, in pieces of whole node planes."""
    _, nj, nk = grid_shape(mesh)
    nib = b.i1 - b.i0 + 1
    if mesh.dim == 2:
        return Pieces((nj, nib), "<f8", [(Ellipsis, grid_planes(mesh, axis, 0, 1, b.i0, b.i1 + 1)[0])])
    step = max(1, PIECE_VALUES // (nj * nib))
    return Pieces((nk, nj, nib), "<f8", ((slice(k, min(k + step, nk)),
                                         grid_planes(mesh, axis, k, min(k + step, nk), b.i0, b.i1 + 1))
                                        for k in range(0, nk, step)))  # slabs of planes


def _point_coordinate(mesh: Mesh, axis: int) -> Pieces:
    """Coordinate ``axis`` of every node, in node order, block by block."""
    step = max(1, PIECE_VALUES // 3)

    def pieces():  # a lazy extrusion's blocks end at each node plane: place each by its own length
        s = 0
        for p in point_blocks(mesh, step):
            yield slice(s, s := s + p.shape[0]), p[:, axis]

    return Pieces((mesh.n_points,), "<f8", pieces())


def _connectivity(mesh: Mesh) -> Pieces:
    """The cells' 1-based node ids, flat, I4 when they fit (as ``_ints``), block by block."""
    dtype = "<i4" if mesh.n_points < 2**31 else "<i8"
    k = 4 if mesh.dim == 2 else 8
    step = max(1, PIECE_VALUES // k)

    def pieces():
        start = 0
        for c in cell_blocks(mesh, step):
            yield slice(start, start + c.size), (c + 1).ravel()
            start += c.size

    return Pieces((mesh.n_cells * k,), dtype, pieces())


def _write_unstructured(tree: _Tree, mesh: Mesh) -> None:
    dim = mesh.dim
    base = tree.base(mesh, dim, dim)
    zname = _unique(_check_name(mesh.cell_group, "cell group name"), {g.name for g in mesh.groups})
    zone = tree.ints(base, zname, "Zone_t", [[mesh.n_points], [mesh.n_cells], [0]])
    tree.text(zone, "ZoneType", "ZoneType_t", "Unstructured")
    axes = ("CoordinateX", "CoordinateY", "CoordinateZ")[:dim]
    tree.coordinates(zone, {name: _point_coordinate(mesh, c) for c, name in enumerate(axes)})
    sections = [(mesh.cell_group, mesh.cell_type, None)]
    sections += [(g.name, mesh.facet_type, g.facets) for g in mesh.groups]
    taken: set[str] = set()
    first = 1
    ranges = []
    for name, kind, conn in sections:  # elements numbered 1.. across sections, cells first
        last = first + (mesh.n_cells if conn is None else conn.shape[0]) - 1
        sec = tree.int4(zone, _unique(name, taken), "Elements_t", [ELEMENT_TYPE[kind], 0])
        tree.ints(sec, "ElementRange", "IndexRange_t", [first, last])
        if conn is None:  # the cells, block by block
            code = "I4" if mesh.n_points < 2**31 else "I8"
            tree.node(sec, "ElementConnectivity", "DataArray_t", code, _connectivity(mesh))
        else:
            tree.ints(sec, "ElementConnectivity", "DataArray_t", (conn + 1).ravel())
        ranges.append((first, last))
        first = last + 1
    zbc = tree.node(zone, "ZoneBC", "ZoneBC_t")
    # A BC on boundary elements: faces in 3-D, edges in 2-D (SIDS GridLocation_t).
    location = "FaceCenter" if dim == 3 else "EdgeCenter"
    for g, (lo, hi) in zip(mesh.groups, ranges[1:], strict=True):
        tree.bc(zbc, g.name, g.name, [lo], [hi], location)


def _outputs(out_dir: Path, stem: str) -> list[Path]:
    return [Path(out_dir) / f"{stem}.cgns"]


def _single_outputs(out_dir: Path, stem: str) -> list[Path]:
    return [Path(out_dir) / f"{stem}.single.cgns"]


def write(mesh: Mesh, out_dir: Path, stem: str) -> list[Path]:
    """Write ``<stem>.cgns`` into ``out_dir``; structured zones when the mesh has a layout."""
    return _write(mesh, _outputs(out_dir, stem)[0], single=False)


def write_single(mesh: Mesh, out_dir: Path, stem: str) -> list[Path]:
    """Write ``<stem>.single.cgns``: the whole mesh as one unstructured zone."""
    return _write(mesh, _single_outputs(out_dir, stem)[0], single=True)


def _write(mesh: Mesh, target: Path, single: bool) -> list[Path]:
    import h5py

    mesh = for_writing(mesh, single)  # periodic pairs: structured zones only, plain groups in one zone
    for g in mesh.groups:  # fail before a file exists
        _bc_type(g.role, g.name)
        _check_name(g.name, "group name")
        if g.facets.shape[0] == 0:
            raise WriteError(f"group {g.name!r} has no facets; a CGNS boundary condition needs at least one")
    # HDF5 1.8 object formats, as the CGNS library itself writes (its V18 bounds), so
    # that readers built on older HDF5 releases open the file. HDF5 writes through a Python
    # file object: with a path, a short write (EFBIG, ENOSPC) surfaced in h5py's object
    # deallocation and the process died with SIGSEGV (h5py 3.16, HDF5 2.0, ulimit -f).
    with atomic_file(target) as tmp, open(tmp, "w+b") as fh, \
            h5py.File(fh, "w", libver=("v108", "v108"), track_order=True) as f:
        tree = _Tree(h5py, f)
        tree.root()
        if mesh.shape is None or single:
            _write_unstructured(tree, mesh)
        else:
            _write_structured(tree, mesh)
    return [target]


register(
    Format(
        name="cgns",
        description="CGNS/HDF5: structured zones per block with BCs, families and 1-to-1 interfaces",
        solvers="structured CGNS readers: CFL3D, FUN3D, ParaView, VisIt",
        outputs=_outputs,
        write=write,
    )
)
register(
    Format(
        name="cgns-single",
        description="CGNS/HDF5: the whole mesh as one unstructured zone, one element section and family per group",
        solvers="SU2 (its CGNS reader takes one unstructured zone), code_saturne, ParaView",
        outputs=_single_outputs,
        write=write_single,
    )
)
