"""Read an SU2 native mesh file (.su2, ASCII) into a Mesh.

Follows the published SU2 description ("Mesh File", SU2 documentation, section "SU2
Native Format"): ``NDIME=``, ``NPOIN=`` (coordinates, optionally followed by legacy index
columns), ``NELEM=`` (VTK type id, node ids, optional element index), ``NMARK=`` and per
marker ``MARKER_TAG=`` / ``MARKER_ELEMS=``. Sections may come in any order; text between
sections (``%`` comments) is skipped. Only meshes of one volume type the Mesh can hold are
read: quads with line markers (2-D) or hexahedra with quad markers (3-D).

Marker roles: a comment ``% role of marker <tag>: <role>`` (as meshgen's writer puts at the
top) gives a marker's role; otherwise :func:`guess_role` derives it from the tag.
"""

from __future__ import annotations

import re
import warnings
from pathlib import Path

import numpy as np

from ...core.errors import ReadError
from ...meshing.mesh import ROLES, Group, Mesh

#: Nodes per VTK cell type id (SU2 "Mesh File" page, element type table).
NODES = {3: 2, 5: 3, 9: 4, 10: 4, 12: 8, 13: 6, 14: 5}
#: The volume and marker type ids a Mesh can hold, per dimension.
ALLOWED = {2: (9, 3), 3: (12, 9)}

_ROLE_NOTE = re.compile(r"%\s*role of marker\s+(\S+)\s*:\s*(\S+)")


def guess_role(tag: str) -> str:
    """The role of a marker without a role comment.

    The tag itself when it is one of ``meshgen.mesh.ROLES``; else the first role whose
    name occurs in the lower-cased tag (``plate_wall`` -> wall, ``symmetry_up`` ->
    symmetry); else ``farfield``, the neutral open boundary, so that nothing is taken
    for a wall by accident.
    """
    low = tag.lower()
    if low in ROLES:
        return low
    for role in ROLES:
        if role in low:
            return role
    return "farfield"


def _role(tag: str, noted: dict[str, str]) -> str:
    """The role a comment gave the marker, when it is a known role; else the guess."""
    role = noted.get(tag)
    return role if role in ROLES else guess_role(tag)


def _numbers(lines: list[bytes], dtype, path: Path, what: str) -> np.ndarray:
    """Parse a block of lines of whitespace-separated numbers into a 2-D array."""
    if not lines:
        return np.zeros((0, 0), dtype)
    ncol = len(lines[0].split())
    with warnings.catch_warnings():
        # numpy only warns (and stops early) on text it cannot parse: make that an error
        warnings.simplefilter("error", DeprecationWarning)
        try:
            flat = np.fromstring(b"\n".join(lines), dtype=dtype, sep=" ")
        except (ValueError, DeprecationWarning) as exc:
            raise ReadError(f"{path}: {what}: unreadable number ({exc})") from None
    if ncol == 0 or flat.size != ncol * len(lines):
        raise ReadError(
            f"{path}: {what}: lines have different numbers of entries (the first has "
            f"{ncol}); one element type per section and no blank lines inside it"
        )
    return flat.reshape(len(lines), ncol)


def _elements(rows: np.ndarray, allowed: int, path: Path, what: str) -> np.ndarray:
    """Node ids of element rows of type ``allowed`` (dropping an element index column)."""
    if rows.size == 0:
        return np.zeros((0, NODES[allowed]), np.int64)
    types = np.unique(rows[:, 0])
    if types.size != 1 or int(types[0]) != allowed:
        raise ReadError(
            f"{path}: {what}: element types {types.tolist()}; this reader takes only "
            f"type {allowed} here (quads/lines in 2-D, hexahedra/quads in 3-D)"
        )
    n = NODES[allowed]
    if rows.shape[1] not in (n + 1, n + 2):
        raise ReadError(f"{path}: {what}: {rows.shape[1]} entries per line, type {allowed} needs {n + 1}")
    return np.ascontiguousarray(rows[:, 1 : n + 1])


def _keyword(line: bytes) -> tuple[str, str] | None:
    text = line.decode("ascii", "replace").strip()
    if "=" not in text or text.startswith("%"):
        return None
    key, _, value = text.partition("=")
    return key.strip(), value.strip()


def read_su2(path: Path) -> Mesh:
    """Read ``path`` into a Mesh: points (N, 3) [m], cells, one Group per marker."""
    path = Path(path)
    try:
        lines = path.read_bytes().rstrip().split(b"\n")
    except OSError as exc:
        raise ReadError(f"{path}: cannot read ({exc.strerror})") from None
    dim = None
    points = cells = None
    markers: list[tuple[str, np.ndarray]] = []
    roles: dict[str, str] = {}
    tag = None
    nmark = None
    i = 0
    while i < len(lines):  # walks sections and comments; data blocks are jumped over
        line = lines[i]
        i += 1
        note = _ROLE_NOTE.match(line.decode("ascii", "replace").strip())
        if note:
            roles[note.group(1)] = note.group(2)
            continue
        kv = _keyword(line)
        if kv is None:
            continue
        key, value = kv
        if key in ("NDIME", "NPOIN", "NELEM", "NMARK", "MARKER_ELEMS"):
            try:
                count = int(value.split()[0])
            except (ValueError, IndexError):
                raise ReadError(f"{path}: line {i}: {key}= needs an integer, got {value!r}") from None
        if key == "NDIME":
            if count not in (2, 3):
                raise ReadError(f"{path}: NDIME= {count}; valid: 2 or 3")
            dim = count
        elif key in ("NPOIN", "NELEM", "MARKER_ELEMS"):
            if dim is None:
                raise ReadError(f"{path}: {key}= comes before NDIME=")
            block = lines[i : i + count]
            if len(block) != count:
                raise ReadError(f"{path}: {key}= {count} but the file ends after {len(block)} lines")
            i += count
            if key == "NPOIN":
                rows = _numbers(block, np.float64, path, "NPOIN")
                if rows.shape[1] < dim:
                    raise ReadError(f"{path}: points have {rows.shape[1]} columns, NDIME= {dim}")
                points = np.zeros((count, 3))
                points[:, :dim] = rows[:, :dim]
            elif key == "NELEM":
                cells = _elements(_numbers(block, np.int64, path, "NELEM"), ALLOWED[dim][0], path, "NELEM")
            else:
                if tag is None:
                    raise ReadError(f"{path}: MARKER_ELEMS= without a MARKER_TAG= before it")
                rows = _numbers(block, np.int64, path, f"marker {tag}")
                markers.append((tag, _elements(rows, ALLOWED[dim][1], path, f"marker {tag}")))
                tag = None
        elif key == "MARKER_TAG":
            tag = value
        elif key == "NMARK":
            nmark = count
    if points is None or cells is None:
        raise ReadError(f"{path}: no {'NPOIN' if points is None else 'NELEM'}= section")
    if not markers:
        raise ReadError(f"{path}: no boundary markers (NMARK= / MARKER_TAG=)")
    if nmark is not None and nmark != len(markers):
        raise ReadError(f"{path}: NMARK= {nmark} but the file has {len(markers)} markers")
    top = max(int(cells.max(initial=-1)), *(int(f.max(initial=-1)) for _, f in markers))
    if cells.min(initial=0) < 0 or top >= points.shape[0]:
        raise ReadError(f"{path}: node ids must lie in 0..{points.shape[0] - 1}")
    groups = tuple(Group(name, _role(name, roles), facets) for name, facets in markers)
    return Mesh(points=points, cells=cells, groups=groups)
