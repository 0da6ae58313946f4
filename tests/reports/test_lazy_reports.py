"""Reports of a lazy extrusion: the same figures as of the built mesh, and nothing built."""

import json

import numpy as np
from samples import plate_groups

from meshgen.meshing.mesh import Block, Mesh, extrude, structured_mesh
from meshgen.reports import quality as q
from meshgen.reports.boundary_layer import boundary_layer_report
from meshgen.reports.plots import make_pictures


def lazy():
    x = np.concatenate([[-0.5], np.linspace(0.0, 1.0, 9), [1.6]])
    y = np.concatenate([[0.0], np.geomspace(1e-3, 0.4, 7)])
    base = structured_mesh(x, y, (Block("upstream", 0, 1), Block("plate", 1, 9), Block("wake", 9, 10)),
                           plate_groups(1, 9, 10))
    return extrude(base, np.linspace(0.0, 0.2, 6))


def test_quality_and_boundary_layer_reports_are_the_built_mesh_s(tmp_path):
    m = lazy()
    args = ("wall", 5.0, 1.5e-5, "laminar", None, 1.0)
    report = q.quality_report(m, boundary_layer_report(m, *args))
    pictures = make_pictures(m, report, "lazy", tmp_path)
    assert not m.built()
    assert [p.name for p in pictures] == ["mesh.png", "spacing.png", "y_plus.png"]
    whole = Mesh(m.points, m.cells, m.groups, m.shape, m.blocks)
    assert json.dumps(report) == json.dumps(q.quality_report(whole, boundary_layer_report(whole, *args)))


def test_swept_jacobians_are_the_per_cell_ones_bit_for_bit():
    """The per-layer shortcut must give exactly _hex_corner_min and _hex_centre's numbers."""
    from meshgen.meshing.mesh import plane_slab
    from meshgen.reports.cell_metrics import _hex_centre, _hex_corner_min, swept_centre, swept_corner_min

    rng = np.random.default_rng(3)
    base = lazy().base
    points = base.points.copy()
    points[:, :2] += rng.normal(scale=1e-3, size=(base.n_points, 2))  # skewed quads
    m = extrude(Mesh(points, base.cells, base.groups, base.shape, base.blocks), [0.1, 0.1 + 1 / 3, 0.7, 1.1])
    quads = base.cells
    x, y = points[:, 0].copy(), points[:, 1].copy()
    for k in range(3):
        slab = plane_slab(m, k, k + 2)
        comp = [np.ascontiguousarray(slab.points[:, a]) for a in range(3)]
        b, t = m.z[k], m.z[k + 1]
        dz = t - b
        side, top = b + b + t + t - b - b - t - t, t + t + t + t - b - b - b - b
        assert np.array_equal(swept_corner_min(x, y, quads, [dz])[dz], _hex_corner_min(comp, slab.cells))
        assert np.array_equal(swept_centre(x, y, quads, [(side, top)])[(side, top)], _hex_centre(comp, slab.cells))
