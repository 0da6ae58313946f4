"""The CGNS/HDF5 node layer: nodes with their name, label, type and flags attributes, data
written whole or piece by piece, the root, coordinates and family-specified BCs.

Sources: CGNS/HDF5 file mapping ("CGNS/HDF5 - An HPC implementation") and the attribute
types as the CGNS library's HDF5 layer (ADFH) creates them; CGNS SIDS for the node labels.
What goes into the tree for a meshgen Mesh is in cgns.py.
"""

from __future__ import annotations

import sys
from collections.abc import Iterable
from dataclasses import dataclass

import numpy as np

from ...core.errors import WriteError

LIBRARY_VERSION = 3.4
NAME_LENGTH = 32  # ADF/HDF5 node names and labels: at most 32 characters
#: Children of Base that are not families or zones.
BASE_CHILDREN = ("DataClass", "DimensionalUnits")
FLAGS = np.array([1], dtype=np.int32)  # bit 0: Fortran (reversed) dimensions, set by every CGNS/HDF5 file


def _string_type(h5py, size: int):
    """A fixed-length, null-terminated ASCII HDF5 string type of ``size`` bytes."""
    t = h5py.h5t.C_S1.copy()
    t.set_size(size)
    t.set_strpad(h5py.h5t.STR_NULLTERM)
    return t


def _str_attr(h5py, obj, key: str, value: str, size: int) -> None:
    """Attach a scalar string attribute the way the CGNS HDF5 layer does."""
    tid = _string_type(h5py, size)
    aid = h5py.h5a.create(obj.id, key.encode(), tid, h5py.h5s.create(h5py.h5s.SCALAR))
    aid.write(np.array(value.encode("ascii"), dtype=f"S{size}"), mtype=tid)


def _chars(text: str) -> np.ndarray:
    """C1 node data: the characters, without a terminator (SIDS character arrays)."""
    return np.frombuffer(text.encode("ascii"), dtype=np.int8)


def _ints(values) -> tuple[str, np.ndarray]:
    """I4 when every value fits in 32 bits, else I8 (the CGNS cgsize_t choice)."""
    a = np.asarray(values, dtype=np.int64)
    if a.size == 0 or (a.min() >= -(2**31) and a.max() < 2**31):
        return "I4", a.astype(np.int32)
    return "I8", a


def _check_name(name: str, what: str) -> str:
    if (not name or name != name.strip() or "/" in name or name == "." or len(name) > NAME_LENGTH
            or not name.isascii() or name in BASE_CHILDREN):
        raise WriteError(
            f"{what} {name!r} is not a valid CGNS node name; valid: 1 to {NAME_LENGTH} ASCII "
            f"characters, no '/', no leading or trailing space, not one of {', '.join(BASE_CHILDREN)}"
        )
    return name


#: Values per piece of a dataset written piece by piece (``Pieces``): 32 MB of float64.
PIECE_VALUES = 1 << 22


@dataclass(frozen=True)
class Pieces:
    """A node's data written into its dataset piece by piece: the dataset's shape and
    type, and (index, array) pairs that fill it, so no array of its size is held."""

    shape: tuple[int, ...]
    dtype: str
    pieces: Iterable[tuple[object, np.ndarray]]


class NodeWriter:
    """Writes CGNS nodes into an open h5py file."""

    def __init__(self, h5py, f):
        self.h5py = h5py
        self.f = f

    def node(self, parent, name: str, label: str, dtype: str = "MT", data: np.ndarray | None = None):
        g = parent.create_group(name, track_order=True)
        _str_attr(self.h5py, g, "name", name, NAME_LENGTH + 1)
        _str_attr(self.h5py, g, "label", label, NAME_LENGTH + 1)
        _str_attr(self.h5py, g, "type", dtype, 3)
        g.attrs.create("flags", FLAGS)
        if isinstance(data, Pieces):
            ds = g.create_dataset(" data", shape=data.shape, dtype=data.dtype)
            for index, a in data.pieces:
                ds[index] = a
        elif data is not None:
            g.create_dataset(" data", data=data)
        return g

    def text(self, parent, name: str, label: str, value: str):
        return self.node(parent, name, label, "C1", _chars(value))

    def ints(self, parent, name: str, label: str, values):
        """Sizes and indices (the library's cgsize_t): I4, or I8 when they need it."""
        code, a = _ints(values)
        return self.node(parent, name, label, code, a)

    def int4(self, parent, name: str, label: str, values):
        """Plain ``int`` data of the SIDS (dimensions, element type, transform): always I4."""
        return self.node(parent, name, label, "I4", np.asarray(values, dtype=np.int32))

    def root(self) -> None:
        """Root attributes and datasets, as the CGNS library's HDF5 layer writes them."""
        h5py = self.h5py
        _str_attr(h5py, self.f, "name", "HDF5 MotherNode", NAME_LENGTH + 1)
        _str_attr(h5py, self.f, "label", "Root Node of HDF5 File", NAME_LENGTH + 1)
        _str_attr(h5py, self.f, "type", "MT", 3)
        # The library records the machine's native float format, null-terminated
        # (IEEE_LITTLE_32 on x86-64); h5py writes native byte order too.
        end = "LITTLE" if sys.byteorder == "little" else "BIG"
        self.f.create_dataset(" format", data=_chars(f"IEEE_{end}_32\0"))
        version = np.zeros(NAME_LENGTH + 1, dtype=np.int8)
        text = _chars(f"HDF5 Version {h5py.version.hdf5_version}")
        version[: text.size] = text
        self.f.create_dataset(" hdf5version", data=version)
        self.node(self.f, "CGNSLibraryVersion", "CGNSLibraryVersion_t", "R4",
                  np.array([LIBRARY_VERSION], dtype=np.float32))

    def coordinates(self, zone, arrays: dict[str, np.ndarray | Pieces]) -> None:
        gc = self.node(zone, "GridCoordinates", "GridCoordinates_t")
        for name, a in arrays.items():
            data = a if isinstance(a, Pieces) else np.ascontiguousarray(a, dtype=np.float64)
            arr = self.node(gc, name, "DataArray_t", "R8", data)
            # Mass, length, time, temperature, angle: a coordinate is a length [m].
            self.node(arr, "DimensionalExponents", "DimensionalExponents_t", "R4",
                      np.array([0, 1, 0, 0, 0], dtype=np.float32))

    def bc(self, zbc, name: str, group: str, lo, hi, location: str | None = None) -> None:
        """A BC_t on ``group``'s family (its type lives in the Family_t's FamilyBC)."""
        bc = self.text(zbc, name, "BC_t", "FamilySpecified")
        self.ints(bc, "PointRange", "IndexRange_t", [lo, hi])  # HDF5 (2, idim) = CGNS (idim, 2)
        if location:
            self.text(bc, "GridLocation", "GridLocation_t", location)
        self.text(bc, "FamilyName", "FamilyName_t", group)
