"""Read an OpenFOAM polyMesh folder (ASCII) into numpy arrays.

Follows the published OpenFOAM description of the polyMesh (OpenFOAM User Guide, "Mesh
description"; file syntax: "OpenFOAM file syntax" there): each of ``points``, ``faces``,
``owner``, ``neighbour`` opens with a ``FoamFile`` dictionary, then holds one list
``N ( ... )``; ``boundary`` lists the patches with ``type``, ``nFaces``, ``startFace``.
C and C++ comments are skipped. Only ASCII files whose faces all have the same number of
points are read (every face of a hexahedral mesh has four); binary files are refused
with a ReadError.
"""

from __future__ import annotations

import re
import warnings
from pathlib import Path

import numpy as np

from ...core.errors import ReadError
from ...meshing.mesh import ROLES, Group, Mesh

_COMMENTS = re.compile(rb"//[^\n]*|/\*.*?\*/", re.DOTALL)
_FOAMFILE = re.compile(rb"FoamFile\s*\{(.*?)\}", re.DOTALL)
_COUNT = re.compile(rb"(\d+)\s*\(")
_PATCH = re.compile(r"([^\s{}();]+)\s*\{([^{}]*)\}")
_ENTRY = re.compile(r"(\w+)\s+([^;]+);")
#: Characters that become spaces before numbers are parsed (list and face brackets).
_BRACKETS = bytes.maketrans(b"()", b"  ")


def _body(path: Path) -> tuple[bytes, int]:
    """The text inside the file's outer list and its declared length."""
    try:
        text = path.read_bytes()
    except OSError as exc:
        raise ReadError(f"{path}: cannot read ({exc.strerror})") from None
    head = _FOAMFILE.search(text[:4096])
    if head is None:
        raise ReadError(f"{path}: no FoamFile header; not an OpenFOAM file")
    if re.search(rb"format\s+binary", head.group(1)):
        raise ReadError(f"{path}: binary format; only ascii polyMesh files are read")
    # Comments sit around the list, not inside it: strip them from both ends only.
    rest = text[head.end() :]
    if len(rest) > 8192:
        rest = _COMMENTS.sub(b" ", rest[:4096]) + rest[4096:-4096] + _COMMENTS.sub(b" ", rest[-4096:])
    else:
        rest = _COMMENTS.sub(b" ", rest)
    count = _COUNT.search(rest)
    close = rest.rfind(b")")
    if count is None or close < count.end():
        raise ReadError(f"{path}: no list 'N ( ... )' after the header")
    return rest[count.end() : close], int(count.group(1))


def _numbers(body: bytes, dtype, path: Path) -> np.ndarray:
    with warnings.catch_warnings():
        warnings.simplefilter("error", DeprecationWarning)  # numpy's signal of bad text
        try:
            return np.fromstring(body.translate(_BRACKETS), dtype=dtype, sep=" ")
        except (ValueError, DeprecationWarning):
            raise ReadError(f"{path}: the list holds something that is not a number") from None


def read_points(path: Path) -> np.ndarray:
    body, n = _body(path)
    flat = _numbers(body, np.float64, path)
    if flat.size != 3 * n:
        raise ReadError(f"{path}: {n} points declared, {flat.size} numbers found (need {3 * n})")
    return flat.reshape(n, 3)


def read_faces(path: Path) -> np.ndarray:
    """Faces as an (F, k) array of point ids; all faces must have the same size k."""
    body, n = _body(path)
    flat = _numbers(body, np.int64, path)
    if n == 0:
        return np.zeros((0, 4), np.int64)
    k = int(flat[0]) if flat.size else 0
    if k < 3 or flat.size != n * (k + 1) or np.any(flat[:: k + 1] != k):
        raise ReadError(f"{path}: faces of different sizes or a short list; only one face size is read")
    return flat.reshape(n, k + 1)[:, 1:].copy()


def read_labels(path: Path) -> np.ndarray:
    body, n = _body(path)
    flat = _numbers(body, np.int64, path)
    if flat.size != n:
        raise ReadError(f"{path}: {n} labels declared, {flat.size} found")
    return flat


def read_boundary(path: Path) -> dict[str, tuple[str, int, int]]:
    """Patches in file order: {name: (type, startFace, nFaces)}."""
    body, n = _body(path)
    patches = {}
    for name, entries in _PATCH.findall(body.decode("ascii", "replace")):  # one per patch
        fields = dict(_ENTRY.findall(entries))
        try:
            patches[name] = (fields["type"].strip(), int(fields["startFace"]), int(fields["nFaces"]))
        except (KeyError, ValueError):
            raise ReadError(f"{path}: patch {name!r} needs type, startFace and nFaces") from None
    if len(patches) != n:
        raise ReadError(f"{path}: {n} patches declared, {len(patches)} found")
    return patches


def read_polymesh(case_dir: Path) -> dict:
    """Read ``<case_dir>/constant/polyMesh`` (or a polyMesh folder itself).

    Returns ``points`` (N, 3) [m], ``faces`` (F, 4) point ids, ``owner`` (F,),
    ``neighbour`` (I,), ``patches`` {name: (type, startFace, nFaces)} in file order,
    ``n_cells`` and ``n_internal_faces``.
    """
    folder = Path(case_dir)
    if not (folder / "faces").exists():
        folder = folder / "constant" / "polyMesh"
    if not folder.is_dir():
        raise ReadError(f"{case_dir}: no constant/polyMesh folder")
    mesh = {
        "points": read_points(folder / "points"),
        "faces": read_faces(folder / "faces"),
        "owner": read_labels(folder / "owner"),
        "neighbour": read_labels(folder / "neighbour"),
        "patches": read_boundary(folder / "boundary"),
    }
    nf = mesh["faces"].shape[0]
    if mesh["owner"].size != nf or mesh["neighbour"].size > nf:
        raise ReadError(
            f"{folder}: {nf} faces, {mesh['owner'].size} owners, {mesh['neighbour'].size} neighbours"
        )
    if nf and (mesh["faces"].min() < 0 or mesh["faces"].max() >= mesh["points"].shape[0]):
        raise ReadError(f"{folder}: face point ids must lie in 0..{mesh['points'].shape[0] - 1}")
    cells = [mesh["owner"].max(initial=-1), mesh["neighbour"].max(initial=-1)]
    mesh["n_cells"] = int(max(cells)) + 1
    mesh["n_internal_faces"] = int(mesh["neighbour"].size)
    return mesh


def _patch_role(name: str, kind: str) -> str:
    if kind == "wall":
        return "wall"
    if kind in ("symmetryPlane", "symmetry"):
        return "symmetry"
    if name in ROLES:
        return name
    if kind == "empty":
        return "back" if "back" in name else "front"
    return "farfield"


def polymesh_to_mesh(case_dir: Path) -> Mesh:
    """A hexahedral Mesh from a polyMesh of quad faces, six per cell (vectorised).

    Each cell gathers its faces outward (owner faces as stored, neighbour faces reversed);
    its first face, read outward, is the VTK base face (0, 3, 2, 1), and each base node's
    partner across the cell is the node it shares an edge with off the base.
    """
    pm = read_polymesh(case_dir)
    faces, owner, neighbour = pm["faces"], pm["owner"], pm["neighbour"]
    n_cells, n_int = pm["n_cells"], pm["n_internal_faces"]
    cell_of = np.concatenate([owner, neighbour])
    oriented = np.concatenate([faces, faces[:n_int, ::-1]])
    counts = np.bincount(cell_of, minlength=n_cells)
    if faces.shape[1] != 4 or np.any(counts != 6):
        raise ReadError(f"{case_dir}: only hexahedral polyMeshes (six quad faces per cell) can be inspected")
    per_cell = oriented[np.argsort(cell_of, kind="stable")].reshape(n_cells, 6, 4)
    base = per_cell[:, 0, :]
    bottom = base[:, [0, 3, 2, 1]]
    edges = np.stack([per_cell, np.roll(per_cell, -1, axis=2)], axis=3).reshape(n_cells, 24, 2)
    off_base = ~np.any(edges[:, :, 1, None] == base[:, None, :], axis=2)
    match = (edges[:, None, :, 0] == bottom[:, :, None]) & off_base[:, None, :]
    if not np.all(match.any(axis=2)):
        raise ReadError(f"{case_dir}: a cell is not a hexahedron")
    top = np.take_along_axis(edges[:, :, 1], np.argmax(match, axis=2), axis=1)
    cells = np.concatenate([bottom, top], axis=1).astype(np.int64)
    groups = tuple(
        Group(name, _patch_role(name, kind), faces[start : start + n].astype(np.int64))
        for name, (kind, start, n) in pm["patches"].items()
    )
    return Mesh(points=pm["points"], cells=cells, groups=groups)
