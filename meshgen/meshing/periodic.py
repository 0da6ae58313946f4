"""Periodic boundary pairs: which facet and node of one group is the image of which of the other.

A ``PeriodicPair(source, target, translation)`` says that the target group is the source
group moved by ``translation``. Writers need the pairing in three forms: facet to facet
(OpenFOAM cyclic patches, CGNS point lists), node to node (gmsh's periodic node
correspondence) and the translation itself (SU2's MARKER_PERIODIC, CGNS Periodic_t).

Both are found from the geometry, not from the numbering, so any mesh whose two groups
match after the translation pairs correctly: facet centroids (and nodes) of the moved
source are matched to those of the target by sorting quantised coordinates, and every
facet and node must find exactly one partner within a tolerance of 1e-6 of the smallest
facet edge, or ``MeshError`` names how many did not.
"""

from __future__ import annotations

from dataclasses import replace

import numpy as np

from ..core.errors import MeshError
from .mesh import ExtrudedMesh, Mesh, PeriodicPair, bounds, node_coordinates

#: Matching tolerance as a fraction of the smallest facet edge of the two groups.
MATCH_RTOL = 1e-6


def _edge_min(mesh: Mesh, facets: np.ndarray) -> float:
    p = node_coordinates(mesh, facets)
    edges = np.linalg.norm(p - np.roll(p, -1, axis=1), axis=2)
    return float(edges.min())


def _match(a: np.ndarray, b: np.ndarray, tol: float, what: str) -> np.ndarray:
    """Index into ``b`` of the point matching each point of ``a`` (same count); raise if any does not."""
    if a.shape != b.shape:
        raise MeshError(f"periodic {what}: {a.shape[0]} against {b.shape[0]}; the two sides must match one to one")
    origin = np.minimum(a.min(axis=0), b.min(axis=0))
    # quantise to a grid of half the tolerance: equal points get equal keys unless they sit
    # on a rounding boundary, which the distance check below then reports
    ka = np.floor((a - origin) / tol + 0.5).astype(np.int64)
    kb = np.floor((b - origin) / tol + 0.5).astype(np.int64)
    oa = np.lexsort(ka.T[::-1])
    ob = np.lexsort(kb.T[::-1])
    partner = np.empty(a.shape[0], np.int64)
    partner[oa] = ob
    off = np.linalg.norm(a - b[partner], axis=1) > tol
    if np.any(off):
        raise MeshError(f"periodic {what}: {int(off.sum())} of {a.shape[0]} have no partner within {tol:.3g} m "
                        "after the translation")
    return partner


def facet_pairs(mesh: Mesh, pair: PeriodicPair) -> np.ndarray:
    """For each source facet (in group order), the index of its image among the target's facets."""
    src, tgt = mesh.group(pair.source).facets, mesh.group(pair.target).facets
    tol = MATCH_RTOL * min(_edge_min(mesh, src), _edge_min(mesh, tgt))
    moved = node_coordinates(mesh, src).mean(axis=1) + np.asarray(pair.translation)
    return _match(moved, node_coordinates(mesh, tgt).mean(axis=1), tol,
                  f"facets of {pair.source!r} and {pair.target!r}")


def node_pairs(mesh: Mesh, pair: PeriodicPair) -> tuple[np.ndarray, np.ndarray]:
    """(source nodes, their target images), both sorted by source node id."""
    src, tgt = mesh.group(pair.source).facets, mesh.group(pair.target).facets
    a, b = np.unique(src), np.unique(tgt)
    tol = MATCH_RTOL * min(_edge_min(mesh, src), _edge_min(mesh, tgt))
    partner = _match(node_coordinates(mesh, a) + np.asarray(pair.translation), node_coordinates(mesh, b), tol,
                     f"nodes of {pair.source!r} and {pair.target!r}")
    return a, b[partner]


def periodic_span(mesh: Mesh, back: str, front: str) -> Mesh:
    """``mesh`` with its spanwise sides ``back`` (z = z0) and ``front`` (z = z1) a periodic pair,
    front = back moved by (0, 0, z1 - z0); checked facet by facet and node by node."""
    lo, hi = bounds(mesh)
    pair = PeriodicPair(back, front, (0.0, 0.0, float(hi[2] - lo[2])))
    facet_pairs(mesh, pair)
    node_pairs(mesh, pair)
    return with_periodic(mesh, mesh.periodic + (pair,))


def with_periodic(mesh: Mesh, pairs: tuple[PeriodicPair, ...]) -> Mesh:
    """``mesh`` carrying ``pairs``; a lazy extrusion stays lazy (``replace`` would build it)."""
    if isinstance(mesh, ExtrudedMesh) and not mesh.built():
        out = ExtrudedMesh(mesh.base, mesh.z, mesh.groups)
        object.__setattr__(out, "periodic", pairs)  # frozen, as every Mesh is
        object.__setattr__(out, "meta", dict(mesh.meta))
        return out
    return replace(mesh, periodic=pairs)
