"""Plot3D grid (``<stem>.xyz``) plus its boundary groups (``<stem>.p3d.json``).

Plot3D is not self-describing, so here is the exact variant written: multi-block,
whole (not planar) 3-D grid, IEEE double precision little-endian, Fortran unformatted
sequential records with 4-byte little-endian record markers, no iblank; record 1 holds
the number of blocks (int32), record 2 holds ``ni nj nk`` (int32) for every block, then
one record per block holds x, y and z (float64 [m], each ``ni*nj*nk`` values with i
fastest, then j, then k); a 2-D mesh is written as a 3-D grid with ``nk = 1`` and z = 0.
This is the variant Debian's ``plot3d_to_cgns -u -d`` reads (its default multi-block
whole form; that reader always expects three indices per block, so it has no 2-D form).

The companion JSON names every group with its role and, per piece, the 1-based block
number and the 1-based index ranges ``imin..imax, jmin..jmax, kmin..kmax`` of the nodes
it covers in that block, and (only for a mesh with periodic pairs) a ``periodic`` list: each
group whose ``image`` group is it moved by ``translation`` [m]. The grid file ends in ``.xyz`` rather than ``.p3d`` because
ParaView treats ``.p3d`` as its own JSON meta-file (from memory).

Format reference: the PLOT3D User's Manual (NASA TM-101067, Walatka, Buning, Pierce and
Elson, 1990), its data file formats (from memory). The CGNS file ``plot3d_to_cgns``
makes from a 2-D grid keeps ``nk = 1``, which ``cgnscheck`` rejects (fewer than two
points in k); write CGNS with the ``cgns`` format instead.

The block and piece helpers here (``grid_blocks``, ``group_pieces``) are shared with the
CGNS writer: both describe a group as node ranges of the structured blocks.
"""

from __future__ import annotations

from dataclasses import dataclass
from itertools import pairwise
from pathlib import Path

import numpy as np

from ...core.errors import WriteError
from ...core.jsontext import dumps
from ...meshing.mesh import Mesh, grid_planes
from ...planning.layout import Block, Patch
from ..atomic import atomic_file, write_text
from .registry import Format, register

#: Largest Fortran record a 4-byte marker can describe [bytes]. Compilers split longer
#: records into sub-records, which simple readers (plot3d_to_cgns among them) do not undo.
MAX_RECORD_BYTES = 2**31 - 1


@dataclass(frozen=True)
class Piece:
    """The part of one group's patch that lies in one block.

    ``lo`` and ``hi`` are 1-based block-local node indices (i, j, k), inclusive; in 2-D
    k is 1..1. ``cells`` is the number of facets the piece covers.
    """

    group: str
    role: str
    block: int  # 0-based position in grid_blocks()
    side: str
    lo: tuple[int, int, int]
    hi: tuple[int, int, int]
    cells: int


def grid_shape(mesh: Mesh) -> tuple[int, int, int]:
    """Node counts (ni, nj, nk) of a structured mesh; nk = 1 in 2-D."""
    if mesh.shape is None:
        raise WriteError("the mesh has no structured layout (shape is None); a structured format needs one")
    ni, nj = mesh.shape[0], mesh.shape[1]
    nk = mesh.shape[2] if len(mesh.shape) == 3 else 1
    if ni * nj * nk != mesh.n_points:
        raise WriteError(
            f"mesh shape {mesh.shape} implies {ni * nj * nk} nodes, the mesh has {mesh.n_points}"
        )
    return ni, nj, nk


def grid_blocks(mesh: Mesh) -> tuple[Block, ...]:
    """The mesh's blocks, checked to tile the i range 0..ni-1 in order without gaps.

    A structured mesh without blocks is one block named after its cell group.
    """
    ni = grid_shape(mesh)[0]
    blocks = mesh.blocks or (Block(mesh.cell_group, 0, ni - 1),)
    if blocks[0].i0 != 0 or blocks[-1].i1 != ni - 1:
        raise WriteError(
            f"blocks must span i = 0..{ni - 1}; they span {blocks[0].i0}..{blocks[-1].i1}"
        )
    for a, b in pairwise(blocks):
        if a.i1 != b.i0:
            raise WriteError(
                f"block {a.name!r} ends at i = {a.i1} but {b.name!r} starts at i = {b.i0}; they must meet"
            )
    for b in blocks:
        if b.i1 <= b.i0:
            raise WriteError(f"block {b.name!r} has node range {b.i0}..{b.i1}; it needs i1 > i0")
    names = [b.name for b in blocks]
    if len(set(names)) != len(names):
        raise WriteError(f"block names repeat: {names}")
    return blocks


def _piece_cells(lo: tuple[int, ...], hi: tuple[int, ...], dim: int) -> int:
    """Facets in a node range that is flat in one direction: product of the other spans."""
    spans = [b - a for a, b in zip(lo[:dim], hi[:dim], strict=True) if b > a]
    return int(np.prod(spans)) if spans else 0


def _patch_pieces(
    g, p: Patch, blocks: tuple[Block, ...], shape: tuple[int, int, int], dim: int
) -> list[Piece]:
    """Split one patch of group ``g`` into per-block pieces."""
    ni, nj, nk = shape
    if p.side in ("imin", "imax"):
        bi = 0 if p.side == "imin" else len(blocks) - 1
        b = blocks[bi]
        i = 1 if p.side == "imin" else b.i1 - b.i0 + 1
        lo, hi = (i, 1, 1), (i, nj, nk)
        return [Piece(g.name, g.role, bi, p.side, lo, hi, _piece_cells(lo, hi, dim))]
    if p.side in ("kmin", "kmax") and dim == 2:
        raise WriteError(f"group {g.name!r}: side {p.side!r} does not exist in a 2-D mesh")
    if p.side not in ("jmin", "jmax", "kmin", "kmax"):
        raise WriteError(f"group {g.name!r}: unknown side {p.side!r}; valid: imin imax jmin jmax kmin kmax")
    if p.i1 > p.i0:
        a, z = p.i0, p.i1
    elif p.side in ("kmin", "kmax"):
        a, z = 0, ni - 1  # extrude() writes Patch("kmin"): the whole plane
    else:
        raise WriteError(
            f"group {g.name!r}: patch {p.side} i = {p.i0}..{p.i1} covers no facet; it needs i1 > i0"
        )
    pieces = []
    for bi, b in enumerate(blocks):
        lo_i, hi_i = max(a, b.i0) - b.i0 + 1, min(z, b.i1) - b.i0 + 1
        if hi_i <= lo_i:
            continue
        if p.side in ("jmin", "jmax"):
            j = 1 if p.side == "jmin" else nj
            lo, hi = (lo_i, j, 1), (hi_i, j, nk)
        else:
            k = 1 if p.side == "kmin" else nk
            lo, hi = (lo_i, 1, k), (hi_i, nj, k)
        pieces.append(Piece(g.name, g.role, bi, p.side, lo, hi, _piece_cells(lo, hi, dim)))
    return pieces


def _piece_nodes(piece: Piece, blocks: tuple[Block, ...], shape: tuple[int, int, int]) -> np.ndarray:
    """Global node ids covered by a piece (node id i + ni*(j + nj*k))."""
    ni, nj, _ = shape
    i0 = blocks[piece.block].i0
    i = np.arange(piece.lo[0] - 1, piece.hi[0], dtype=np.int64) + i0
    j = np.arange(piece.lo[1] - 1, piece.hi[1], dtype=np.int64)
    k = np.arange(piece.lo[2] - 1, piece.hi[2], dtype=np.int64)
    return (i[None, None, :] + ni * (j[None, :, None] + nj * k[:, None, None])).ravel()


def group_pieces(mesh: Mesh) -> list[Piece]:
    """Every group's patches as per-block node ranges, checked against the group's facets.

    A piece list that does not cover exactly the group's facets (count) and nodes (set)
    raises WriteError: the file would otherwise tag boundaries the mesh does not have.
    """
    blocks = grid_blocks(mesh)
    shape = grid_shape(mesh)
    dim = 3 if len(mesh.shape) == 3 else 2
    pieces: list[Piece] = []
    for g in mesh.groups:
        if not g.patches:
            raise WriteError(f"group {g.name!r} has no structured patches; a structured format needs them")
        mine = [pc for p in g.patches for pc in _patch_pieces(g, p, blocks, shape, dim)]
        n = sum(pc.cells for pc in mine)
        if n != g.facets.shape[0]:
            raise WriteError(
                f"group {g.name!r}: its patches cover {n} facets, the group has {g.facets.shape[0]}"
            )
        # Node masks, not np.unique: O(nodes) and several times faster on large groups.
        want = np.zeros(mesh.n_points, dtype=bool)
        want[g.facets.ravel()] = True
        got = np.zeros(mesh.n_points, dtype=bool)
        for pc in mine:
            got[_piece_nodes(pc, blocks, shape)] = True
        if not np.array_equal(got, want):
            raise WriteError(f"group {g.name!r}: its patches do not cover the nodes of its facets")
        pieces.extend(mine)
    return pieces


def _record(f, arr: np.ndarray) -> None:
    """One Fortran unformatted sequential record: marker, bytes, marker."""
    arr = np.ascontiguousarray(arr)
    if arr.nbytes > MAX_RECORD_BYTES:
        raise WriteError(
            f"a Plot3D record of {arr.nbytes} bytes exceeds the 4-byte marker limit of {MAX_RECORD_BYTES}; "
            "split the mesh into more blocks"
        )
    marker = np.array([arr.nbytes], dtype="<i4").tobytes()
    f.write(marker)
    f.write(arr.data)
    f.write(marker)


def companion(mesh: Mesh, grid_name: str) -> dict:
    """The content of ``<stem>.p3d.json``: blocks and groups as 1-based index ranges."""
    blocks = grid_blocks(mesh)
    _, nj, nk = grid_shape(mesh)
    groups: dict[str, dict] = {}
    for pc in group_pieces(mesh):
        entry = groups.setdefault(pc.group, {"name": pc.group, "role": pc.role, "pieces": []})
        entry["pieces"].append(
            {
                "block": pc.block + 1,
                "side": pc.side,
                "imin": pc.lo[0], "imax": pc.hi[0],
                "jmin": pc.lo[1], "jmax": pc.hi[1],
                "kmin": pc.lo[2], "kmax": pc.hi[2],
            }
        )
    return {
        "grid_file": grid_name,
        "variant": "multi-block whole 3-D, float64 little-endian, Fortran unformatted with 4-byte "
        "little-endian record markers, no iblank; 2-D meshes as nk = 1, z = 0",
        "index_base": 1,
        "blocks": [
            {"block": n, "name": b.name, "ni": b.i1 - b.i0 + 1, "nj": nj, "nk": nk}
            for n, b in enumerate(blocks, start=1)
        ],
        "groups": list(groups.values()),
    } | ({} if not mesh.periodic else {"periodic": [
        {"group": p.source, "image": p.target, "translation": list(p.translation)} for p in mesh.periodic]})


def _outputs(out_dir: Path, stem: str) -> list[Path]:
    return [Path(out_dir) / f"{stem}.xyz", Path(out_dir) / f"{stem}.p3d.json"]


#: Values per slab of a block's coordinate record: 32 MB of float64.
SLAB_VALUES = 1 << 22


def _block_record(f, mesh: Mesh, b: Block, nj: int, nk: int) -> None:
    """One block's record (x, then y, then z, each i fastest) written by slabs of node
    planes, so that no array of the block's size is held."""
    nib = b.i1 - b.i0 + 1
    size = 3 * nk * nj * nib * 8
    marker = np.array([size], dtype="<i4").tobytes()
    step = max(1, SLAB_VALUES // (nj * nib))
    f.write(marker)
    for axis in range(3):
        for k in range(0, nk, step):  # slabs of planes
            planes = grid_planes(mesh, axis, k, min(k + step, nk), b.i0, b.i1 + 1)
            if mesh.dim == 2 and axis == 2:
                planes = np.zeros_like(planes)  # the documented variant: a 2-D grid lies in z = 0
            f.write(np.ascontiguousarray(planes, dtype="<f8").data)
    f.write(marker)


def write(mesh: Mesh, out_dir: Path, stem: str) -> list[Path]:
    """Write ``<stem>.xyz`` and ``<stem>.p3d.json`` into ``out_dir``; return both paths."""
    _, nj, nk = grid_shape(mesh)
    blocks = grid_blocks(mesh)
    meta = companion(mesh, f"{stem}.xyz")  # checks the groups before anything is written
    dims = np.array([[b.i1 - b.i0 + 1, nj, nk] for b in blocks], dtype="<i4")
    biggest = int(3 * 8 * dims.astype(np.int64).prod(axis=1).max())
    if biggest > MAX_RECORD_BYTES:
        raise WriteError(
            f"a Plot3D record of {biggest} bytes exceeds the 4-byte marker limit of {MAX_RECORD_BYTES}; "
            "split the mesh into more blocks"
        )
    grid_path, json_path = _outputs(out_dir, stem)
    with atomic_file(grid_path) as tmp, open(tmp, "wb") as f:
        _record(f, np.array([len(blocks)], dtype="<i4"))
        _record(f, dims)
        for b in blocks:
            _block_record(f, mesh, b, nj, nk)
    write_text(json_path, dumps(meta, indent=1, what=str(json_path)) + "\n")
    return [grid_path, json_path]


register(
    Format(
        name="plot3d",
        description="Plot3D multi-block whole grid, float64, Fortran records; groups in a JSON companion",
        solvers="structured-grid solvers with a Plot3D import (e.g. OVERFLOW, CFL3D); Tecplot, ParaView",
        outputs=_outputs,
        write=write,
    )
)
