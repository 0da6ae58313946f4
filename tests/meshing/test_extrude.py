"""The lazy extrusion: the same hexahedral mesh as an eager one, built only when read."""

import dataclasses

import numpy as np
import pytest
from samples import BLOCKS, GROUPS

from meshgen.core.errors import MeshError
from meshgen.meshing.mesh import (
    ExtrudedMesh,
    Group,
    Mesh,
    bounds,
    cell_blocks,
    extrude,
    node_coordinates,
    point_blocks,
    structured_mesh,
)
from meshgen.meshing.verify import cell_measures, verify_mesh

Z = np.array([0.0, 0.1, 0.25, 0.5])


def base() -> Mesh:
    return structured_mesh(np.array([-1.0, 0.0, 0.5, 1.0, 2.0]), np.array([0.0, 0.1, 0.3, 1.0]), BLOCKS, GROUPS)


def test_arrays_follow_the_numbering_of_the_docstring():
    """Node n of plane k is k n2 + n; cell c of layer k joins its quad in planes k and k+1."""
    b = base()
    m = extrude(b, Z)
    n2 = b.n_points
    assert m.n_points == n2 * Z.size and m.n_cells == b.n_cells * (Z.size - 1)
    k = np.repeat(np.arange(Z.size), n2)
    np.testing.assert_array_equal(m.points[:, :2], np.tile(b.points[:, :2], (Z.size, 1)))
    np.testing.assert_array_equal(m.points[:, 2], Z[k])
    layer = np.repeat(np.arange(Z.size - 1), b.n_cells)[:, None]
    np.testing.assert_array_equal(m.cells[:, :4], np.tile(b.cells, (Z.size - 1, 1)) + layer * n2)
    np.testing.assert_array_equal(m.cells[:, 4:], m.cells[:, :4] + n2)
    # the volumes are the base areas times the layer thicknesses (right prisms)
    area = (b.points[b.cells[:, 1], 0] - b.points[b.cells[:, 0], 0]) * (b.points[b.cells[:, 3], 1]
                                                                       - b.points[b.cells[:, 0], 1])
    np.testing.assert_allclose(cell_measures(m), np.outer(np.diff(Z), area).ravel(), rtol=1e-12)


def test_nothing_is_built_until_read():
    m = extrude(base(), Z)
    assert isinstance(m, ExtrudedMesh) and not m.built()
    verify_mesh(m, m.n_points, m.n_cells)
    blocks = np.concatenate([c.copy() for c in cell_blocks(m, rows=5)])
    pts = np.concatenate([p.copy() for p in point_blocks(m, rows=7)])
    ids = np.array([[0, 3], [m.n_points - 1, 21]])
    xyz = node_coordinates(m, ids)
    lo, hi = bounds(m)
    assert not m.built()
    np.testing.assert_array_equal(blocks, m.cells)
    np.testing.assert_array_equal(pts, m.points)
    np.testing.assert_array_equal(xyz, m.points[ids])
    np.testing.assert_array_equal(lo, m.points.min(axis=0))
    np.testing.assert_array_equal(hi, m.points.max(axis=0))
    assert m.built()
    verify_mesh(m, m.n_points, m.n_cells)  # the full check on the built arrays


def test_verify_catches_a_group_that_is_not_the_sweep():
    m = extrude(base(), Z)
    g = m.groups[0]
    bad = ExtrudedMesh(m.base, m.z, (Group(g.name, g.role, g.facets[::-1].copy()), *m.groups[1:]))
    with pytest.raises(MeshError, match="swept"):
        verify_mesh(bad)
    with pytest.raises(MeshError, match="back and front"):
        verify_mesh(ExtrudedMesh(m.base, m.z, m.groups[:-1]))
    with pytest.raises(MeshError, match="strictly increasing"):
        verify_mesh(ExtrudedMesh(m.base, np.array([0.0, np.nan]), m.groups))


def test_replace_gives_a_built_mesh():
    m = extrude(base(), Z)
    flat = dataclasses.replace(m, shape=None, blocks=())
    assert type(flat) is Mesh and flat.shape is None
    np.testing.assert_array_equal(flat.cells, m.cells)
    assert flat.group_sizes() == m.group_sizes()
