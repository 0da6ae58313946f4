"""SU2 native mesh files (.su2, ASCII), written from the Mesh arrays with numpy.

Layout, from the published SU2 description ("Mesh File", SU2 documentation, section "SU2
Native Format")::

    NDIME= 2                     dimension; 2-D points have x y only
    NPOIN= n                     n lines: coordinates [m], then the point index
    NELEM= m                     m lines: VTK type id, node ids (0-based), element index
    NMARK= k                     then, per boundary group:
    MARKER_TAG= name               the group name the solver's config refers to
    MARKER_ELEMS= e                e lines: VTK type id, node ids

VTK type ids: line 3, quad 9, hexahedron 12 (2-D: quads with line markers; 3-D:
hexahedra with quad markers). The trailing point and element indices are optional in the
description ("implied by the ordering"); they are written because older files carry them
and some readers expect them, and SU2 skips them. Lines starting with ``%`` are comments; the file
opens with one comment line per marker naming its role (wall, inlet, ...), which SU2 and
meshio skip and :func:`meshgen.readers.su2.read_su2` uses to restore the roles. A periodic
pair adds two comment lines with the ``MARKER_PERIODIC`` line SU2's configuration needs
(:func:`marker_periodic`); the markers themselves stay ordinary markers.

The numbers are formatted by :func:`ascii_blocks`, a vectorised table formatter (integers
four digits at a time from a table of 0..9999, floats through ``repr`` of their distinct
values, so that coordinates read back bit for bit), block by block of rows. ``%``
formatting and ``np.savetxt`` took 2-4 s per million rows on the development machine.
"""

from __future__ import annotations

import re
from collections.abc import Sequence
from pathlib import Path

import numpy as np

from ... import __version__
from ...core.errors import WriteError
from ...meshing.mesh import Mesh
from ..atomic import atomic_file
from .registry import Format, register

#: VTK cell type ids used by SU2 (SU2 "Mesh File" page, element type table).
VTK_TYPE = {"line": 3, "quad": 9, "hexahedron": 12}

#: A marker tag SU2 can read back and a config file can name in ``MARKER_*= ( ... )``:
#: no whitespace, ``=``, ``%``, commas or parentheses.
TAG = re.compile(r"[A-Za-z0-9_.+-]+")

#: The byte that pads formatted numbers and separators to whole units; removed at the end.
_PAD = 0

#: Rows formatted per block: the block's tables stay in cache and are reused by the
#: allocator, instead of one table of the whole file (page faults cost as much as the work).
_BLOCK_BYTES = 1 << 21


def _digit_units() -> np.ndarray:
    """The text of 0..9999 as one 4-byte unit each, three ways (uint32, read-only).

    Index ``v`` is the zero-filled form (``0042``), ``v + LEADING`` the form with leading
    zeros as padding (``42``; 0 gives ``0``) and ``v + TOP`` the same except that 0 is
    padding only: the form of a chunk above the lowest one that holds the leading digit
    (or lies above it, where it is 0).
    """
    v = np.arange(10000)
    digits = np.stack([v // 1000, v // 100 % 10, v // 10 % 10, v % 10], axis=1)
    full = (digits + ord("0")).astype(np.uint8)
    width = 1 + (v >= 10) + (v >= 100) + (v >= 1000)
    leading = np.where(np.arange(4)[None, :] < 4 - width[:, None], _PAD, full).astype(np.uint8)
    top = leading.copy()
    top[0] = _PAD
    units = np.concatenate([full, leading, top]).view(np.uint32).ravel()
    units.flags.writeable = False
    return units


#: Offsets of the leading and top forms in _DIGITS.
LEADING, TOP = 10000, 20000
_DIGITS = _digit_units()


def _units(text: bytes) -> np.ndarray:
    """Separator bytes padded to whole 4-byte units (uint32)."""
    if bytes([_PAD]) in text:
        raise ValueError("separators cannot hold the padding byte")
    size = -(-len(text) // 4) * 4
    return np.frombuffer(text.ljust(size, bytes([_PAD])), np.uint32)


class _IntField:
    """Non-negative integers in decimal after a separator, four digits per unit.

    The units are right-aligned (leading zeros become padding). The separator goes into
    the top unit's always-free leading bytes when it fits (a 7-digit column leaves one
    byte, enough for a space), else into units of its own before the digits.
    """

    def __init__(self, values: np.ndarray, prefix: bytes):
        v = np.asarray(values)
        v = v if v.ndim == 1 else v.ravel()  # a strided column is read once, by astype below
        if v.size and int(v.min()) < 0:
            raise ValueError(f"negative integer {int(v.min())} in an index column")
        top = int(v.max()) if v.size else 0
        self.values = v.astype(np.int32 if top < 2**31 else np.int64)
        self.chunks = max(1, -(-len(str(top)) // 4))  # units of four digits
        free = 4 * self.chunks - len(str(top))
        self.merged = _units(prefix) if len(prefix) <= free else None
        self.prefix = _units(prefix) if self.merged is None else _units(b"")
        self.width = self.prefix.size + self.chunks

    def fill(self, out: np.ndarray, rows: slice) -> None:
        """Write the units of ``rows`` into ``out`` (block rows, self.width)."""
        out[:, : self.prefix.size] = self.prefix
        digits = out[:, self.prefix.size :]
        v = self.values[rows]
        rem = v
        for c in range(self.chunks):  # one pass per four digits, at most five
            if c < self.chunks - 1:
                q = rem // 10000
                idx = rem - q * 10000
                # the chunk holds the leading digit, or lies above it, when v < 10**(4c+4)
                idx += (v < 10 ** (4 * c + 4)) * idx.dtype.type(LEADING if c == 0 else TOP)
                rem = q
            else:  # the top chunk: below 10000 by the choice of self.chunks
                idx = rem + (LEADING if c == 0 else TOP)
            unit = np.take(_DIGITS, idx, mode="clip")
            if c == self.chunks - 1 and self.merged is not None and self.merged.size:
                unit |= self.merged[0]
            # contiguous take, then one strided copy: faster than take(out=strided view)
            digits[:, self.chunks - 1 - c] = unit


class _FloatField:
    """Floats as Python ``repr`` strings (the shortest form that reads back exactly).

    Each distinct value is formatted once, with the separator before it: structured and
    extruded meshes repeat their coordinates many times, so this is far cheaper than
    formatting every entry.
    """

    def __init__(self, values: np.ndarray, prefix: bytes, form: str | None = None):
        v = np.asarray(values, dtype=np.float64)
        v = v if v.ndim == 1 else v.ravel()
        if not np.all(np.isfinite(v)):
            raise ValueError("non-finite coordinate")
        _units(prefix)  # refuses a separator holding the padding byte
        text = prefix.decode("latin-1")
        if form is None:
            v = v + 0.0  # -0.0 -> 0.0
            distinct = np.unique(v)
            # exact (v holds only these values) and faster than unique's return_inverse
            self.inverse = np.searchsorted(distinct, v)
            strings = [text + repr(x) for x in distinct.tolist()]
        else:  # a C format: values told apart by their bits, so -0.0 prints as C prints it
            bits = v.view(np.int64)
            distinct = np.unique(bits)
            self.inverse = np.searchsorted(distinct, bits)
            strings = [text + form % x for x in distinct.view(np.float64).tolist()]
        pool = np.array(strings, dtype="S")  # NUL-padded = _PAD
        self.width = -(-pool.dtype.itemsize // 4)
        self.pool = pool.astype(f"S{4 * self.width}").view(np.uint32).reshape(distinct.size, self.width)

    def fill(self, out: np.ndarray, rows: slice) -> None:
        out[:] = np.take(self.pool, self.inverse[rows], axis=0, mode="clip")  # contiguous take, one copy


def ascii_blocks(columns: Sequence[np.ndarray], seps: Sequence[bytes],
                 float_format: str | None = None) -> list[np.ndarray]:
    """Format columns of equal length as text rows: ``seps[0] c0 seps[1] c1 ... seps[-1]``.

    Integer columns are written in decimal, float columns in Python's shortest exact
    form, or in the %-format ``float_format`` (e.g. ``"%.16g"``, as C prints it) when
    given. ``seps`` has one more entry than ``columns`` (the row's prefix and ending).
    Returns the text as uint8 arrays, one per block of rows, to be written in order.

    Each row is a fixed number of 4-byte units (separators, digit chunks, float strings),
    padded with ``_PAD``; one boolean selection per block drops the padding. A row's
    ending is written before the next row's prefix (so it can share the first field's
    units): the first row's copy is cut off and the last row's ending appended.
    """
    if len(seps) != len(columns) + 1:
        raise ValueError("ascii_rows needs one separator more than columns")
    n = np.asarray(columns[0]).size if columns else 0
    if n == 0:
        return []
    prefixes = [seps[-1] + seps[0], *seps[1:-1]]
    fields = [
        _IntField(c, p) if np.issubdtype(np.asarray(c).dtype, np.integer) else _FloatField(c, p, float_format)
        for c, p in zip(columns, prefixes)
    ]
    width = sum(f.width for f in fields)
    step = max(1, _BLOCK_BYTES // (4 * width))
    blocks = []
    for start in range(0, n, step):  # blocks of rows, not rows
        rows = slice(start, min(start + step, n))
        table = np.empty((rows.stop - rows.start, width), np.uint32)
        col = 0
        for f in fields:  # a loop over the handful of columns
            f.fill(table[:, col : col + f.width], rows)
            col += f.width
        flat = table.view(np.uint8).ravel()
        blocks.append(flat[flat != _PAD])
    blocks[0] = blocks[0][len(seps[-1]) :]
    blocks.append(np.frombuffer(seps[-1], np.uint8))
    return blocks


def ascii_rows(columns: Sequence[np.ndarray], seps: Sequence[bytes]) -> bytes:
    """:func:`ascii_blocks` joined into one bytes object."""
    return b"".join(ascii_blocks(columns, seps))


def _element_rows(type_id: int, nodes: np.ndarray, numbered: bool) -> list[np.ndarray]:
    """Element lines: type id, node ids, and (volume elements) the element index."""
    n = nodes.shape[0]
    cols = [np.full(n, type_id, np.int64)] + [nodes[:, k] for k in range(nodes.shape[1])]
    if numbered:
        cols.append(np.arange(n, dtype=np.int64))
    return ascii_blocks(cols, [b""] + [b" "] * (len(cols) - 1) + [b"\n"])


def check_tags(mesh: Mesh) -> None:
    """Raise WriteError unless every group name is a usable, distinct SU2 marker tag."""
    names = [g.name for g in mesh.groups]
    bad = [n for n in names if not TAG.fullmatch(n)]
    if bad:
        raise WriteError(f"SU2 marker tags {bad} are not valid; use letters, digits and _ . + - only")
    if len(set(names)) != len(names):
        raise WriteError(f"SU2 marker tags repeat: {names}; each group needs its own name")


def marker_periodic(pairs) -> str:
    """SU2's configuration line for periodic marker pairs (``PeriodicPair``s).

    Format from SU2's config_template.cfg: ``MARKER_PERIODIC= ( periodic marker, donor marker,
    rotation_center_x, _y, _z, rotation_angle_x, _y, _z, translation_x, _y, _z, ... )``; the
    translation goes from the periodic marker to the donor (as in SU2's own periodic test
    cases, x_minus to x_plus with (1, 0, 0)).
    """
    items = []
    for p in pairs:  # a loop over the periodic pairs
        items += [p.source, p.target] + ["0.0"] * 6 + [repr(float(v) + 0.0) for v in p.translation]
    return "MARKER_PERIODIC= ( " + ", ".join(items) + " )"


def su2_chunks(mesh: Mesh) -> list[bytes | np.ndarray]:
    """The whole file as byte chunks (bytes or uint8 arrays), in the order of the published description."""
    check_tags(mesh)
    d = mesh.dim
    head = [f"% SU2 mesh written by meshgen {__version__}; {mesh.n_cells} {mesh.cell_type} cells"]
    head += [f"% role of marker {g.name}: {g.role}" for g in mesh.groups]
    if mesh.periodic:  # SU2 takes periodicity from its configuration file, not from the mesh
        head += ["% periodic markers: put this line in the SU2 configuration file", "% " + marker_periodic(mesh.periodic)]
    head += [f"NDIME= {d}", f"NPOIN= {mesh.n_points}", ""]
    pts = mesh.points[:, :d]
    cols = [pts[:, k] for k in range(d)] + [np.arange(mesh.n_points, dtype=np.int64)]
    chunks = [
        "\n".join(head).encode(),
        *ascii_blocks(cols, [b""] + [b" "] * d + [b"\n"]),
        f"NELEM= {mesh.n_cells}\n".encode(),
        *_element_rows(VTK_TYPE[mesh.cell_type], mesh.cells, numbered=True),
        f"NMARK= {len(mesh.groups)}\n".encode(),
    ]
    facet_id = VTK_TYPE[mesh.facet_type]
    for g in mesh.groups:  # a loop over the handful of boundary groups
        chunks.append(f"MARKER_TAG= {g.name}\nMARKER_ELEMS= {g.facets.shape[0]}\n".encode())
        chunks.extend(_element_rows(facet_id, g.facets, numbered=False))
    return chunks


def write(mesh: Mesh, out_dir: Path, stem: str) -> list[Path]:
    """Write ``<out_dir>/<stem>.su2`` atomically; return its path."""
    target = Path(out_dir) / f"{stem}.su2"
    try:
        chunks = su2_chunks(mesh)
    except ValueError as exc:
        raise WriteError(f"{target}: {exc}") from exc
    with atomic_file(target) as tmp, open(tmp, "wb") as f:
        f.writelines(chunks)
    return [target]


register(
    Format(
        name="su2",
        description="SU2 native mesh, ASCII; one marker per boundary group, by name",
        solvers="SU2 (MESH_FORMAT= SU2); meshio reads it too",
        outputs=lambda d, s: [Path(d) / f"{s}.su2"],
        write=write,
    )
)
