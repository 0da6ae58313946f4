"""The public Python API: five lines from a dictionary to a file, errors as exceptions,
a cheap ``import meshgen``, short reprs and notebook tables.

Independent readers: meshio reads the MSH and SU2 written through ``Mesh.write`` back.
"""

from __future__ import annotations

import subprocess
import sys

import meshio
import pytest

import meshgen
from meshgen.core.errors import CaseError, InputError

CASE = {"flow": {"reynolds": 1e5, "length": 1.0}}


@pytest.fixture(scope="module")
def built():
    plan = meshgen.plan(meshgen.load_case(CASE))
    return plan, meshgen.build(plan)


def test_import_is_cheap_and_lazy():
    # gmsh, matplotlib and CoolProp cost seconds to import; the CLI's start-up needs them absent.
    code = ("import sys, meshgen; meshgen.load_case; "
            "print(sorted(m for m in ('gmsh', 'matplotlib', 'CoolProp', 'h5py') if m in sys.modules))")
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True).stdout
    assert out.strip() == "[]"


def test_every_public_name_resolves_and_is_documented():
    assert sorted(meshgen.__all__) == sorted(meshgen._PUBLIC)
    for name in meshgen.__all__:
        value = getattr(meshgen, name)
        assert value is not None
        if callable(value) and name != "formats":
            assert value.__doc__ and len(value.__doc__) > 30, name
    with pytest.raises(AttributeError):
        meshgen.no_such_name  # noqa: B018


def test_load_case_takes_a_dict_a_path_or_nothing(tmp_path):
    assert meshgen.load_case(CASE).flow.reynolds == 1e5
    path = tmp_path / "c.toml"
    path.write_text('[flow]\nreynolds = 2e5\n')
    assert meshgen.load_case(path).flow.reynolds == 2e5
    assert meshgen.load_case().name == "fairing-strip"
    data = {"flow": {"reynolds": 1e5}}
    meshgen.load_case(data, ["wall.y_plus=2"])
    assert data == {"flow": {"reynolds": 1e5}}  # the caller's dictionary is not changed


def test_errors_raise_instead_of_exiting():
    with pytest.raises(CaseError, match="flow.reynolds"):
        meshgen.load_case({"flow": {"reynolds": -1}})
    with pytest.raises(InputError, match="expected a Plan"):
        meshgen.build({"flow": {}})


def test_write_by_suffix_and_by_name_read_back(built, tmp_path):
    _, mesh = built
    [msh] = mesh.write(tmp_path / "plate.msh")
    back = meshio.gmsh.read(msh)  # meshio, an independent MSH reader
    assert set(mesh.group_sizes()) <= set(back.cell_sets)
    [su2] = mesh.write(tmp_path / "plate.su2")
    assert meshio.su2.read(su2).points.shape[0] == mesh.n_points
    assert mesh.write(tmp_path / "plate.v2.msh")[0].name == "plate.v2.msh"  # longest ending wins
    with pytest.raises(InputError, match="cannot tell the format"):
        mesh.write(tmp_path / "plate.dat")
    with pytest.raises(InputError, match="writes '<name>.cgns'"):
        mesh.write(tmp_path / "plate.msh", format="cgns")


def test_reprs_are_short_and_the_notebook_shows_the_sizing_table(built):
    plan, mesh = built
    for obj in (plan, mesh):
        assert len(repr(obj)) < 200 and "array" not in repr(obj)
    md = mesh._repr_markdown_()
    assert "| first-cell height |" in md and "| wall | wall | 80 |" in md
    assert plan._repr_html_().startswith("<p><b>&lt;Plan")
    assert "<td>first-cell height</td>" in plan._repr_html_()


def test_plan_and_report_agree_on_cells_in_delta99_and_edge_ratio(built):
    # One definition each (issue 14): the plan counted at the exact station, the report at
    # the nearest wall node, and they differed by one cell at x/L = 0.1.
    plan, mesh = built
    q = mesh.quality()
    report = {f"{s['fraction']:g}": s["cells_in_delta99"] for s in q["boundary_layer"]["stations"]}
    for station, count in plan.cells_in_delta99().items():
        assert report[station] == count
    assert plan.to_dict()["max_edge_ratio"] == pytest.approx(q["metrics"]["edge_ratio"]["max"], rel=1e-9)


def test_boundary_conditions_and_pictures(built, tmp_path):
    _, mesh = built
    sheet = mesh.boundary_conditions()
    assert {g["name"] for g in sheet["groups"]} == set(mesh.group_sizes())
    names = [p.name for p in mesh.pictures(tmp_path)]
    assert names == ["mesh.png", "spacing.png", "y_plus.png"]
    assert all((tmp_path / n).stat().st_size > 10_000 for n in names)


def test_gci_from_rows_matches_the_closed_form():
    # r = 2 constant: p = ln((phi3 - phi2) / (phi2 - phi1)) / ln 2 = ln(4) / ln 2 = 2 (Celik et al. 2008, eq. 3 with q = 0)
    res = meshgen.gci([{"h": 0.01, "q": 1.0}, {"h": 0.02, "q": 1.1}, {"h": 0.04, "q": 1.5}])
    assert res["q"]["results"][0]["p"] == pytest.approx(2.0)
    assert "GCI_fine" in repr(res) and "```" in res._repr_markdown_()
    with pytest.raises(InputError):
        meshgen.gci([{"cells": 100, "q": 1.0}, {"cells": 400, "q": 1.1}])


def test_a_3d_build_stays_lazy_until_read(tmp_path):
    plan = meshgen.plan({"flow": {"reynolds": 1e5}, "domain": {"span": 0.05, "span_cells": 2}})
    mesh = meshgen.build(plan)
    assert mesh.dim == 3 and not mesh.mesh.built()  # the API does not build the hexahedra itself
    [cgns] = mesh.write(tmp_path / "p.cgns")
    assert cgns.stat().st_size > 0 and mesh.n_cells == plan.cell_count
