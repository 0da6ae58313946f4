"""Periodic pairs of a polyMesh: ``cyclic`` patches with a translational transform.

OpenFOAM couples face i of a cyclic patch with face i of its ``neighbourPatch``: it checks
that the two faces' areas match within ``matchTolerance`` and that the separation of their
centres (neighbour minus this patch) equals the patch's ``separationVector``, which the
neighbour gives with the opposite sign (openfoam.com source, ``cyclicPolyPatch::calcTransforms``
and ``coupledPolyPatch::calcTransformTensors``: text read). The boundary entry of each
side::

    back  { type cyclic; inGroups 1(cyclic); nFaces N; startFace S; matchTolerance 0.0001;
            transform translational; neighbourPatch front; separationVector (0 0 Lz); }

Here the source patch keeps its faces; the target patch's faces are put in the source's
order and each is written as its source face reversed with the same first point, moved by
the translation (so that it points out of its own cell and the two faces' points
correspond in the order OpenFOAM's coupled patches use).
"""

from __future__ import annotations

import numpy as np

from ...core.errors import MeshError
from ...meshing.mesh import Mesh
from ...meshing.periodic import facet_pairs, node_pairs

#: Relative tolerance OpenFOAM applies to the face match (its default, written explicitly).
MATCH_TOLERANCE = 1e-4


def cyclic_patches(mesh: Mesh, faces: np.ndarray, owner: np.ndarray,
                   patches: list[tuple[str, str, int, int]]) -> dict[str, tuple[str, tuple[float, float, float]]]:
    """Reorder each periodic target patch in ``faces``/``owner`` (in place) to pair face by face
    with its source, and return {patch: (neighbour patch, separation vector [m])}."""
    where = {name: (start, n) for name, _kind, start, n in patches}
    out: dict[str, tuple[str, tuple[float, float, float]]] = {}
    for p in mesh.periodic:  # a loop over the periodic pairs
        (s0, n), (t0, m) = where[p.source], where[p.target]
        if n != m:
            raise MeshError(f"polymesh: periodic patches {p.source!r} ({n} faces) and {p.target!r} ({m}) differ")
        partner = facet_pairs(mesh, p)
        a, b = node_pairs(mesh, p)
        image = np.full(mesh.n_points, -1, np.int64)
        image[a] = b
        moved = image[faces[s0 : s0 + n][:, [0, 3, 2, 1]]]
        target = faces[t0 : t0 + n][partner]
        if np.any(moved < 0) or not np.array_equal(np.sort(moved, axis=1), np.sort(target, axis=1)):
            raise MeshError(f"polymesh: the faces of {p.target!r} are not the images of {p.source!r}")
        faces[t0 : t0 + n] = moved
        owner[t0 : t0 + n] = owner[t0 : t0 + n][partner]
        t = tuple(float(v) for v in p.translation)
        out[p.source] = (p.target, t)
        out[p.target] = (p.source, tuple(-v for v in t))
    return out


def cyclic_entries(neighbour: str, separation: tuple[float, float, float]) -> list[str]:
    """The extra lines of a cyclic patch's boundary entry (after type, nFaces, startFace)."""
    sx, sy, sz = (repr(v + 0.0) for v in separation)
    return [
        "        inGroups        1(cyclic);",
        f"        matchTolerance  {MATCH_TOLERANCE:g};",
        "        transform       translational;",
        f"        neighbourPatch  {neighbour};",
        f"        separationVector ({sx} {sy} {sz});",
    ]
