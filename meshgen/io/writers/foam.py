"""OpenFOAM polyMesh folder (``<out_dir>/constant/polyMesh/``), ASCII, built with numpy.

What the files must hold, from the published OpenFOAM description of the polyMesh
(OpenFOAM User Guide, "Mesh description"): ``points`` (vectorField), ``faces`` (faceList,
each face ``n(p0 p1 ...)``), ``owner`` and ``neighbour`` (labelList, one cell per face),
``boundary`` (polyBoundaryMesh: per patch ``type``, ``nFaces``, ``startFace``); each file
opens with a ``FoamFile`` dictionary and holds one list ``N ( ... )``. Rules kept here:

* internal faces first, in upper-triangular order: sorted by owner, then by neighbour;
* owner < neighbour, and the face's right-hand normal points from owner to neighbour;
* boundary faces follow, grouped per patch in the order of ``boundary``, normals out of
  the domain; every point belongs to some face.

Faces come from :func:`meshgen.verify.cell_faces` (outward faces of each hexahedron, in
the HEX_FACES order), so the owner's own face already points the right way. Faces are
paired, and boundary faces matched to their group, by sorting one key per face (see
:func:`_face_keys`) for all of them together: no loop over cells or faces. A structured
mesh (``Mesh.shape`` set and its cells the tensor-product cells) skips the sort: its
faces, pairs and upper-triangular order follow from the grid indices (:func:`_grid_paired`),
with the same arrays as the sort gives.

Patch types follow the group roles: wall -> ``wall``, symmetry -> ``symmetryPlane``,
anything else -> ``patch``; front/back -> ``empty`` on the one-layer extrusion of a 2-D
mesh (OpenFOAM's way to solve 2-D), and on a 3-D mesh what ``domain.span_boundary``
chose (``meshing.mesh.span_boundary``): ``symmetryPlane`` or ``patch``, the same choice
the CGNS writer's families carry.
The groups of a periodic pair become ``cyclic`` patches (``foam_cyclic.py``).

A 2-D Mesh is extruded to one layer first. The span defaults to :func:`extrusion_span`:
1/100 of the domain's streamwise extent, at most 1 m. It depends on the domain only, so
every level of a refinement family gets the same span (and the same reference area for
force coefficients); it is written in the header note of ``points``.
"""

from __future__ import annotations

import re
from dataclasses import dataclass, field, replace
from pathlib import Path

import numpy as np

from ... import __version__
from ...core.errors import MeshError, WriteError
from ...meshing.mesh import Mesh, extrude, span_boundary
from ...meshing.verify import HEX_FACES, cell_faces, is_tensor_grid
from ..atomic import atomic_dir
from .foam_cyclic import cyclic_entries, cyclic_patches
from .registry import Format, register
from .su2 import ascii_blocks

#: OpenFOAM patch type per group role; front/back follow SPAN_PATCH.
PATCH_TYPE = {"wall": "wall", "symmetry": "symmetryPlane"}
#: OpenFOAM patch type of the front and back faces per span boundary.
SPAN_PATCH = {"symmetry": "symmetryPlane", "patch": "patch", "empty": "empty",
              "periodic": "patch"}  # periodic: "cyclic" where the mesh carries the pair (foam_cyclic.py)
#: A patch name OpenFOAM reads as a word (no whitespace, quotes, ; { } ( ) /).
WORD = re.compile(r"[A-Za-z_][A-Za-z0-9_.+-]*")
#: Largest default span of a one-layer extrusion [m].
MAX_SPAN = 1.0


@dataclass(frozen=True, eq=False)
class PolyMesh:
    """The arrays of a polyMesh: faces (F, 4) point ids, owner (F,), neighbour (I,)."""

    points: np.ndarray
    faces: np.ndarray
    owner: np.ndarray
    neighbour: np.ndarray
    patches: tuple[tuple[str, str, int, int], ...]  # (name, type, startFace, nFaces)
    n_cells: int
    cyclic: dict = field(default_factory=dict)  # {patch: (neighbourPatch, separationVector)}


def extrusion_span(mesh: Mesh) -> float:
    """Default span [m] of the one-layer extrusion: min(1 m, x-extent / 100)."""
    extent = float(np.ptp(mesh.points[:, 0]))
    if extent <= 0:
        raise WriteError("polymesh: the mesh has no streamwise extent to size the span from")
    return min(MAX_SPAN, extent / 100.0)


def _face_keys(faces: np.ndarray, n_points: int) -> tuple[np.ndarray, np.ndarray]:
    """A sort key and a check key per quad face, the same for both node orders.

    The key is the diagonal (node pair) that holds the face's smallest node; the check
    key is the other diagonal. In a valid mesh a diagonal belongs to one face only (two
    faces through the same diagonal would overlap), so one int64 key identifies a face,
    and comparing the check keys catches a mesh where that fails.
    """
    f0, f1, f2, f3 = faces.T
    lo_a, hi_a = np.minimum(f0, f2), np.maximum(f0, f2)
    lo_b, hi_b = np.minimum(f1, f3), np.maximum(f1, f3)
    diag_a = lo_a * n_points + hi_a
    diag_b = lo_b * n_points + hi_b
    a_first = lo_a < lo_b
    return np.where(a_first, diag_a, diag_b), np.where(a_first, diag_b, diag_a)


#: Internal faces of a grid cell towards its +i, +j and +k neighbours: the cell's
#: HEX_FACES index (imax, jmax, kmax); the owner is the lower cell id, so these point
#: from owner to neighbour.
_GRID_INNER = np.array([3, 4, 1])


def _place_grid_facets(tagged: np.ndarray, shape: tuple[int, ...], first: np.ndarray, local: np.ndarray,
                       cell: np.ndarray, face: np.ndarray, lface: np.ndarray) -> bool:
    """Fill the cell, outward cell face and HEX_FACES id of each grid facet; False if one fits no side.

    A facet is placed by its smallest node (its grid indices) and the spread of its node
    ids (its direction), and must then hold exactly that cell face's nodes, in any order.
    """
    ni, nj, nk = shape
    a, b, c = ni - 1, nj - 1, nk - 1
    lay = ni * nj
    cols = [tagged[:, q] for q in range(4)]  # column by column: far faster than reducing axis 1
    low = np.minimum(np.minimum(cols[0], cols[1]), np.minimum(cols[2], cols[3]))
    spread = np.maximum(np.maximum(cols[0], cols[1]), np.maximum(cols[2], cols[3])) - low
    k = low // lay
    rest = low - k * lay
    j = rest // ni
    i = rest - j * ni
    del rest
    # per face direction: spread of node ids, whether the in-plane indices leave room for a
    # face, the node index along the normal and its last value, the cell face at the low
    # and at the high end, and the cell-id step back from a high-end facet to its cell
    sides = (
        (ni + 1, (i < a) & (j < b), k, c, (0, 1), a * b),
        (lay + 1, (i < a) & (k < c), j, b, (2, 4), a),
        (lay + ni, (j < b) & (k < c), i, a, (5, 3), 1),
    )
    lface[:] = -1
    back = np.zeros(low.size, np.int64)  # cell-id step from a high-side facet's low node to its cell
    for span, inside, index, end, (lo_face, hi_face), step in sides:  # three face directions
        fits = inside & (spread == span)
        at_hi = fits & (index == end)
        lface[fits & (index == 0)] = lo_face
        lface[at_hi] = hi_face
        back[at_hi] = step
    if np.any(lface < 0):
        return False
    np.subtract(i + a * (j + b * k), back, out=cell)
    del i, j, k, back
    np.take(local, lface, axis=0, out=face, mode="clip")
    face += first[cell][:, None]
    # the facet must hold exactly the face's nodes: equal as written (the usual case), or
    # as sorted node sets
    odd = np.flatnonzero((face != tagged).view(np.uint32))  # four bools per row read as one word
    return not odd.size or np.array_equal(np.sort(face[odd], axis=1), np.sort(tagged[odd], axis=1))


def _grid_paired(mesh: Mesh) -> tuple[np.ndarray, ...] | None:
    """:func:`_sort_paired` for a tensor grid, by arithmetic on grid indices; None if it is not one.

    Grid cell ``(i, j, k)`` shares its +i, +j and +k faces with cells ``c + 1``,
    ``c + (ni - 1)`` and ``c + (ni - 1) (nj - 1)``; listing them cell by cell, in that order,
    is already the upper-triangular order (owner, then neighbour ascending). A group facet
    is placed by its smallest node and the spread of its node ids, which tell the grid
    side and the cell; it must then hold exactly that cell face's nodes, in any order (as
    the general path matches them). Anything that does not fit (a facet off the grid
    sides, a side face tagged twice or never) returns None, and the general path then
    finds and names the problem.
    """
    if mesh.shape is None or len(mesh.shape) != 3 or not is_tensor_grid(mesh):
        return None
    if any(g.facets.ndim != 2 or g.facets.shape[1] != 4 for g in mesh.groups):
        return None
    ni, nj, nk = mesh.shape
    a, b, c = ni - 1, nj - 1, nk - 1
    lay = ni * nj
    corners = np.array([0, 1, 1 + ni, ni, lay, lay + 1, lay + 1 + ni, lay + ni])
    local = corners[HEX_FACES]  # (6, 4) node offsets of each cell face from the cell's first node
    first = mesh.cells[:, 0]  # i + ni (j + nj k), the grid's node id of cell (i, j, k)

    # Each cell's three candidate faces in (cell, direction) order; those on the grid's
    # high sides have no neighbour and are dropped.
    has = np.zeros((c, b, a, 3), bool)
    has[:, :, :-1, 0] = True
    has[:, :-1, :, 1] = True
    has[:-1, :, :, 2] = True
    has = has.reshape(-1, 3)
    n_inner = int(np.count_nonzero(has))
    n_faces = n_inner + 2 * (a * b + b * c + a * c)
    if sum(g.facets.shape[0] for g in mesh.groups) != n_faces - n_inner:
        return None
    # the whole face list and owner list, filled in place: no concatenation of big arrays
    faces = np.empty((n_faces, 4), np.int64)
    owner = np.empty(n_faces, np.int64)
    own = owner[:n_inner]
    own[:] = np.broadcast_to(np.arange(mesh.n_cells, dtype=np.int64)[:, None], has.shape)[has]
    side = np.broadcast_to(np.arange(3, dtype=np.intp), has.shape)[has]
    del has
    nei = own + np.take(np.array([1, a, a * b], dtype=np.int64), side)
    inner = faces[:n_inner]
    np.take(local[_GRID_INNER], side, axis=0, out=inner, mode="clip")
    inner += first[own][:, None]
    del side

    lface = np.empty(n_faces - n_inner, np.int64)
    start = n_inner
    for g in mesh.groups:  # a loop over the handful of boundary groups
        stop = start + g.facets.shape[0]
        if not _place_grid_facets(g.facets, mesh.shape, first, local, owner[start:stop], faces[start:stop],
                                  lface[start - n_inner : stop - n_inner]):
            return None
        start = stop
    seen = np.zeros(6 * mesh.n_cells, bool)
    seen[owner[n_inner:] * 6 + lface] = True
    if np.count_nonzero(seen) != lface.size:  # some side face is tagged twice, another never
        return None
    return faces, owner, nei


def _sort_paired(mesh: Mesh) -> tuple[np.ndarray, ...]:
    """Faces, owner and neighbour of any hexahedral mesh, by one sort of face keys.

    Internal faces first (the owner's outward face, upper-triangular order), then each
    group facet's own cell face (outward) and cell, in group order.
    """
    faces, cell = cell_faces(mesh)
    tagged = np.concatenate([g.facets for g in mesh.groups])
    keys = [_face_keys(f, mesh.n_points) for f in (faces, tagged)]
    key = np.concatenate([keys[0][0], keys[1][0]])
    check = np.concatenate([keys[0][1], keys[1][1]])
    order = np.argsort(key, kind="stable")  # stable: the same file for the same mesh
    key, check = key[order], check[order]
    new = np.ones(order.size, bool)
    new[1:] = key[1:] != key[:-1]
    if np.any(~new[1:] & (check[1:] != check[:-1])):
        raise MeshError("polymesh: faces that share a diagonal but not all their nodes (overlapping cells)")
    run = np.empty(order.size, np.int64)
    run[order] = np.cumsum(new) - 1  # id of each distinct face, per row
    nf = faces.shape[0]
    n_runs = int(run.max()) + 1
    n_cell = np.bincount(run[:nf], minlength=n_runs)
    n_tag = np.bincount(run[nf:], minlength=n_runs)
    problems = {
        "faces are shared by more than two cells": n_cell > 2,
        "boundary faces belong to more than one group": n_tag > 1,
        "group faces lie inside the domain": (n_cell == 2) & (n_tag > 0),
        "boundary faces belong to no group": (n_cell == 1) & (n_tag == 0),
        "group faces are faces of no cell": n_cell == 0,
    }
    for what, bad in problems.items():
        if bad.any():
            raise MeshError(f"polymesh: {int(bad.sum())} {what}")

    # Internal faces: the two rows of a pair are adjacent in sorted order.
    first = np.flatnonzero(new & (n_cell[run[order]] == 2))
    a, b = order[first], order[first + 1]
    ca, cb = cell[a], cell[b]
    if np.any(ca == cb):
        raise MeshError(f"polymesh: {int(np.sum(ca == cb))} cells hold the same face twice")
    own = np.minimum(ca, cb)
    nei = np.maximum(ca, cb)
    inner = faces[np.where(ca < cb, a, b)]  # the owner's outward face
    upper = np.lexsort((nei, own))

    # Boundary faces, in group order: each group facet's own cell face (outward).
    row_of_run = np.full(n_runs, -1, np.int64)
    row_of_run[run[:nf]] = np.arange(nf)
    rows = row_of_run[run[nf:]]
    return np.concatenate([inner[upper], faces[rows]]), np.concatenate([own[upper], cell[rows]]), nei[upper]


def polymesh(mesh: Mesh) -> PolyMesh:
    """Faces, owner, neighbour and patches of a 3-D hexahedral Mesh (one patch per group)."""
    if mesh.dim != 3:
        raise MeshError("polymesh() needs a 3-D mesh; extrude a 2-D one first")
    if not mesh.groups:
        raise MeshError("polymesh: the mesh has no boundary groups")
    paired = _grid_paired(mesh)
    faces, owner, nei = _sort_paired(mesh) if paired is None else paired
    span = span_boundary(mesh)
    patches = []
    start = nei.size
    for g in mesh.groups:  # a loop over the handful of boundary groups
        n = g.facets.shape[0]
        kind = SPAN_PATCH[span] if g.role in ("front", "back") else PATCH_TYPE.get(g.role, "patch")
        patches.append((g.name, kind, start, n))
        start += n
    cyclic = cyclic_patches(mesh, faces, owner, patches)
    patches = [(name, "cyclic" if name in cyclic else kind, s, n) for name, kind, s, n in patches]
    return PolyMesh(
        points=mesh.points,
        faces=faces,
        owner=owner,
        neighbour=nei,
        patches=tuple(patches),
        n_cells=mesh.n_cells,
        cyclic=cyclic,
    )


def _header(cls: str, obj: str, note: str | None = None) -> bytes:
    lines = [
        f"// written by meshgen {__version__}",
        "FoamFile",
        "{",
        "    version     2.0;",
        "    format      ascii;",
        f"    class       {cls};",
    ]
    if note:
        lines.append(f'    note        "{note}";')
    lines += ['    location    "constant/polyMesh";', f"    object      {obj};", "}", "", ""]
    return "\n".join(lines).encode()


def _list(n: int, body: list[np.ndarray]) -> list[bytes | np.ndarray]:
    return [f"{n}\n(\n".encode(), *body, b")\n"]


def _boundary(pm: PolyMesh) -> bytes:
    entries = [f"{len(pm.patches)}\n("]
    for name, kind, start, n in pm.patches:
        entries += [
            f"    {name}",
            "    {",
            f"        type            {kind};",
            f"        nFaces          {n};",
            f"        startFace       {start};",
            *([] if name not in pm.cyclic else cyclic_entries(*pm.cyclic[name])),
            "    }",
        ]
    return ("\n".join(entries) + "\n)\n").encode()


def file_chunks(pm: PolyMesh, points_note: str | None = None) -> dict[str, list[bytes | np.ndarray]]:
    """The five files of a polyMesh folder as byte chunks (bytes or uint8 arrays), by file name."""
    counts = (
        f"nPoints:{pm.points.shape[0]}  nCells:{pm.n_cells}  "
        f"nFaces:{pm.faces.shape[0]}  nInternalFaces:{pm.neighbour.size}"
    )
    p, f = pm.points, pm.faces
    return {
        "points": [_header("vectorField", "points", points_note)]
        + _list(p.shape[0], ascii_blocks([p[:, 0], p[:, 1], p[:, 2]], [b"(", b" ", b" ", b")\n"])),
        "faces": [_header("faceList", "faces")]
        + _list(f.shape[0], ascii_blocks([f[:, k] for k in range(4)], [b"4(", b" ", b" ", b" ", b")\n"])),
        "owner": [_header("labelList", "owner", counts)]
        + _list(pm.owner.size, ascii_blocks([pm.owner], [b"", b"\n"])),
        "neighbour": [_header("labelList", "neighbour", counts)]
        + _list(pm.neighbour.size, ascii_blocks([pm.neighbour], [b"", b"\n"])),
        "boundary": [_header("polyBoundaryMesh", "boundary"), _boundary(pm)],
    }


def _check_names(mesh: Mesh) -> None:
    names = [g.name for g in mesh.groups]
    bad = [n for n in names if not WORD.fullmatch(n)]
    if bad:
        raise WriteError(
            f"polymesh: patch names {bad} are not valid; start with a letter or _, "
            "then letters, digits and _ . + - only"
        )
    if len(set(names)) != len(names):
        raise WriteError(f"polymesh: patch names repeat: {names}; each group needs its own name")


def write_polymesh(mesh: Mesh, out_dir: Path, span: float | None = None, binary: bool = False) -> Path:
    """Write ``<out_dir>/constant/polyMesh/`` atomically and return that folder.

    ``span`` [m] is the extrusion depth of a 2-D mesh (default :func:`extrusion_span`);
    a 3-D mesh is written as it is and takes no span. ``binary``: OpenFOAM's binary format.
    """
    note = None
    if mesh.dim == 2:
        span = extrusion_span(mesh) if span is None else float(span)
        if not span > 0:
            raise WriteError(f"polymesh: span {span} m; valid: a positive length")
        taken = {"front", "back"} & {g.name for g in mesh.groups}
        if taken:
            raise WriteError(f"polymesh: group names {sorted(taken)} are needed for the extrusion's faces")
        # set on the 2-D mesh: the extrusion copies it and stays lazy
        mesh = extrude(replace(mesh, meta={**mesh.meta, "span_boundary": "empty"}), np.array([0.0, span]))
        note = f"2-D mesh extruded to one layer, span {span!r} m"
    elif span is not None:
        raise WriteError(f"polymesh: span {span} m given for a 3-D mesh; it applies to 2-D meshes only")
    _check_names(mesh)
    from .foam_stream import polymesh_files  # piece by piece, a lazy grid layer by layer

    target = Path(out_dir) / "constant" / "polyMesh"
    try:
        files = polymesh_files(mesh, note, binary)
        with atomic_dir(target) as tmp:
            for name, chunks in files.items():
                with open(tmp / name, "wb") as fh:
                    fh.writelines(chunks)
    except ValueError as exc:  # the text formatter's refusals (non-finite coordinates)
        raise WriteError(f"{target}: {exc}") from exc
    return target


def write(mesh: Mesh, out_dir: Path, stem: str) -> list[Path]:
    """Registry entry: the folder layout is OpenFOAM's own, so ``stem`` is not used."""
    return [write_polymesh(mesh, out_dir)]


register(
    Format(
        name="polymesh",
        description="OpenFOAM polyMesh folder constant/polyMesh, ASCII; 2-D extruded to one empty layer",
        solvers="OpenFOAM (any recent release; also read by ParaView's OpenFOAM reader)",
        outputs=lambda d, s: [Path(d) / "constant" / "polyMesh"],
        write=write,
    )
)
