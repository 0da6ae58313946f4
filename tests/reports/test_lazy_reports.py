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
