"""Periodic pairs in CGNS: periodic 1-to-1 connectivity between a zone's kmin and kmax faces.

CGNS SIDS, GridConnectivity1to1_t with a GridConnectivityProperty_t holding a Periodic_t
(cgns.github.io, SIDS sections "GridConnectivity1to1_t" and "GridConnectivityProperty_t";
from memory where noted): each structured zone connects its kmin face to its own kmax face
and back, as two GridConnectivity1to1_t nodes whose data is the donor zone's name, with

    PointRange / PointRangeDonor   the two faces (1-based vertex ranges)
    Transform                      1 2 3 (the index directions agree)
    GridConnectivityProperty / Periodic
        RotationCenter, RotationAngle  (0, 0, 0)
        Translation                    from this interface to the donor's (SIDS: "the
                                       translation from the current interface to the
                                       connecting interface", from memory)

The arrays are R4, as the CGNS library's cg_1to1_periodic_write stores them (from memory),
each with its DimensionalExponents (metres, and an angle), which cgnscheck asks for.
The faces of a periodic pair get no BC_t and no Family_t: they are interfaces, not
boundaries. ``cgnscheck`` validates the result (tests/io/test_periodic.py).
"""

from __future__ import annotations

import numpy as np

from ...core.errors import WriteError
from ...meshing.mesh import Mesh
from ...meshing.periodic import with_periodic

NAME_LENGTH = 32
#: DimensionalExponents (mass, length, time, temperature, angle) of a length and of an angle.
LENGTH = np.array([0, 1, 0, 0, 0], dtype=np.float32)
ANGLE = np.array([0, 0, 0, 0, 1], dtype=np.float32)


def periodic_names(mesh: Mesh) -> set[str]:
    """Names of the groups that belong to a periodic pair."""
    return {n for p in mesh.periodic for n in (p.source, p.target)}


def _pair_pieces(pieces: list, mesh: Mesh) -> list[tuple[object, object, tuple[float, float, float]]]:
    """(source piece, target piece, translation) per block, checked to be its kmin and kmax faces."""
    out = []
    for p in mesh.periodic:  # a loop over the periodic pairs
        src = [pc for pc in pieces if pc.group == p.source]
        tgt = {pc.block: pc for pc in pieces if pc.group == p.target}
        for a in src:  # one piece per block
            b = tgt.get(a.block)
            if (b is None or {a.side, b.side} != {"kmin", "kmax"} or a.lo[:2] != b.lo[:2]
                    or a.hi[:2] != b.hi[:2]):
                raise WriteError(f"CGNS: periodic groups {p.source!r} and {p.target!r} must be the kmin and kmax "
                                 "faces of the same blocks to be written as 1-to-1 periodic connectivity")
            out.append((a, b, p.translation))
        if len(src) != len(tgt):
            raise WriteError(f"CGNS: periodic groups {p.source!r} and {p.target!r} cover different blocks")
    return out


def write_periodic(tree, zgc, zone_name: str, block: int, pieces: list, mesh: Mesh) -> None:
    """The periodic 1-to-1 connections of one zone (block) under its ZoneGridConnectivity node."""
    for a, b, translation in _pair_pieces(pieces, mesh):
        if a.block != block:
            continue
        t = np.asarray(translation, dtype=np.float64)
        for here, there, sign in ((a, b, 1.0), (b, a, -1.0)):  # both directions
            conn = tree.text(zgc, f"periodic_{here.group}"[:NAME_LENGTH], "GridConnectivity1to1_t", zone_name)
            tree.ints(conn, "PointRange", "IndexRange_t", [list(here.lo), list(here.hi)])
            tree.ints(conn, "PointRangeDonor", "IndexRange_t", [list(there.lo), list(there.hi)])
            tree.int4(conn, "Transform", '"int[IndexDimension]"', [1, 2, 3])
            prop = tree.node(conn, "GridConnectivityProperty", "GridConnectivityProperty_t")
            per = tree.node(prop, "Periodic", "Periodic_t")
            zero = np.zeros(3, dtype=np.float32)
            arrays = (("RotationCenter", zero, LENGTH), ("RotationAngle", zero, ANGLE),
                      ("Translation", (sign * t + 0.0).astype(np.float32), LENGTH))
            for name, values, exponents in arrays:  # three small arrays
                arr = tree.node(per, name, "DataArray_t", "R4", values.copy())
                tree.node(arr, "DimensionalExponents", "DimensionalExponents_t", "R4", exponents.copy())


def zone_connectivity(tree, zone, zone_name: str, block: int, pieces: list, mesh: Mesh, interfaces: bool):
    """The zone's ZoneGridConnectivity node, with its periodic connections, when it has
    block interfaces or periodic pairs (else None)."""
    if not (interfaces or mesh.periodic):
        return None
    zgc = tree.node(zone, "ZoneGridConnectivity", "ZoneGridConnectivity_t")
    write_periodic(tree, zgc, zone_name, block, pieces, mesh)
    return zgc


def for_writing(mesh: Mesh, single: bool) -> Mesh:
    """The mesh a CGNS file is written from. The one-zone file (``cgns-single``) keeps a
    periodic pair as two ordinary groups (typed UserDefined): it serves SU2, which takes
    periodicity from its configuration (MARKER_PERIODIC, on the BC sheet and in su2-setup).
    Zones per block carry the pair as connectivity, which needs the structured layout."""
    if single:
        return with_periodic(mesh, ()) if mesh.periodic else mesh
    if mesh.periodic and mesh.shape is None:
        raise WriteError("CGNS: periodic pairs are written for structured meshes only (the mesh has no layout)")
    return mesh
