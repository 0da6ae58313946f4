"""Solver set-up beside the mesh: OpenFOAM ``0/``, ``system/``, ``constant/`` (foam-setup) and
an SU2 configuration fragment (su2-setup), parsed and checked against the mesh's groups.

Independent readers: foamlib (PyPI) parses every OpenFOAM dictionary, including the
polyMesh ``boundary`` the polymesh writer made of the same mesh; the SU2 mesh's
``MARKER_TAG=`` lines and the configuration's ``KEY= value`` lines are read as SU2's
published formats give them (SU2 docs, "Mesh File" and "Configuration File").
"""

from __future__ import annotations

import re

import pytest

from meshgen.core.errors import WriteError
from meshgen.io.writers import FORMATS
from meshgen.pipeline.api import build, plan

foamlib = pytest.importorskip("foamlib")

FIELDS = ("U", "p", "k", "omega", "epsilon", "nut", "nuTilda")
#: Patch types whose fields must carry the same type (OpenFOAM constraint patches).
CONSTRAINT = ("symmetryPlane", "empty", "cyclic")


def built(**domain):
    case = {"flow": {"velocity": 10.0, "nu": 1.5e-5, "length": 1.0, "regime": "turbulent",
                     "turbulence_intensity": 0.01, "viscosity_ratio": 5.0},
            "wall": {"y_plus": 1.0}, "domain": domain}
    return build(plan(case))


def write_case(mesh, folder):
    for name in ("polymesh", "foam-setup", "su2", "su2-setup"):
        FORMATS[name].write(mesh.mesh, folder, "plate")


@pytest.mark.parametrize("domain, front", [({}, "empty"), ({"span": 0.02, "span_cells": 2}, "symmetryPlane"),
                                           ({"span": 0.02, "span_cells": 2, "span_boundary": "patch"}, "patch"),
                                           ({"span": 0.02, "span_cells": 2, "span_boundary": "periodic"}, "cyclic")])
def test_every_field_names_every_patch_of_the_polymesh(tmp_path, domain, front):
    mesh = built(**domain)
    write_case(mesh, tmp_path)
    boundary = dict(foamlib.FoamFile(tmp_path / "constant/polyMesh/boundary")[None])
    assert boundary["front"]["type"] == boundary["back"]["type"] == front
    sheet = mesh.meta["boundary_conditions"]
    for field in FIELDS:
        f = foamlib.FoamFieldFile(tmp_path / "0" / field)
        bf = f.boundary_field
        assert list(bf) == list(boundary), field  # one entry per patch, in the boundary's order
        for name, patch in boundary.items():
            if patch["type"] in CONSTRAINT:
                assert bf[name]["type"] == patch["type"], (field, name)
    u = foamlib.FoamFieldFile(tmp_path / "0/U")
    assert list(u.internal_field) == [10.0, 0.0, 0.0]
    assert u.boundary_field["wall"]["type"] == "noSlip"
    assert list(u.boundary_field["inlet"]["value"]) == [10.0, 0.0, 0.0]
    k = foamlib.FoamFieldFile(tmp_path / "0/k")
    # k = 1.5 (Tu U)^2 = 1.5 (0.01 * 10)^2 = 0.015 m2/s2 (common practice, the sheet's formula)
    assert k.internal_field == pytest.approx(0.015) == sheet["turbulence"]["k"]
    assert k.boundary_field["inlet"]["value"] == pytest.approx(0.015)
    nut = foamlib.FoamFieldFile(tmp_path / "0/nut")
    assert nut.boundary_field["wall"]["type"] == "nutLowReWallFunction"  # wall.treatment = resolved
    assert foamlib.FoamFieldFile(tmp_path / "0/p").boundary_field["outlet"]["value"] == 0


def test_system_and_constant_dictionaries_parse(tmp_path):
    mesh = built()
    write_case(mesh, tmp_path)
    control = foamlib.FoamFile(tmp_path / "system/controlDict")
    assert control["application"] == "simpleFoam"
    assert list(control["functions"]["wallShearStress"]["patches"]) == ["wall"]
    schemes = foamlib.FoamFile(tmp_path / "system/fvSchemes")
    assert schemes["ddtSchemes"]["default"] == "steadyState"
    solution = foamlib.FoamFile(tmp_path / "system/fvSolution")
    assert solution["SIMPLE"]["consistent"] is True
    nu = mesh.meta["boundary_conditions"]["free_stream"]["nu"]
    assert foamlib.FoamFile(tmp_path / "constant/transportProperties")["nu"] == pytest.approx(nu)
    assert foamlib.FoamFile(tmp_path / "constant/momentumTransport")["RAS"]["model"] == "kOmegaSST"


def test_a_laminar_case_sets_up_a_laminar_run(tmp_path):
    mesh = build(plan({"flow": {"reynolds": 1e5}}))
    FORMATS["foam-setup"].write(mesh.mesh, tmp_path, "x")
    FORMATS["su2-setup"].write(mesh.mesh, tmp_path, "x")
    assert foamlib.FoamFile(tmp_path / "constant/turbulenceProperties")["simulationType"] == "laminar"
    assert "SOLVER= INC_NAVIER_STOKES" in (tmp_path / "x.cfg").read_text()


def su2_options(path) -> dict[str, str]:
    """``KEY= value`` lines of an SU2 configuration file, comments (%) skipped."""
    out = {}
    for line in path.read_text().splitlines():
        if line.strip() and not line.startswith("%"):
            key, _, value = line.partition("=")
            assert key not in out, f"{key} given twice"
            out[key.strip()] = value.strip()
    return out


def marker_names(value: str, per_marker: int) -> list[str]:
    items = [v.strip() for v in value.strip("() ").split(",")]
    return items[::per_marker]


@pytest.mark.parametrize("domain", [{}, {"span": 0.02, "span_cells": 2}])
def test_su2_markers_name_every_group_once(tmp_path, domain):
    mesh = built(**domain)
    write_case(mesh, tmp_path)
    tags = re.findall(r"^MARKER_TAG=\s*(\S+)", (tmp_path / "plate.su2").read_text(), flags=re.MULTILINE)
    opts = su2_options(tmp_path / "plate.cfg")
    # values per marker: HEATFLUX (name, flux), INLET velocity type (name, T, |U|, nx, ny, nz),
    # OUTLET pressure (name, p), FAR and SYM (name) -- SU2 "Markers and Boundary Conditions"
    named = (marker_names(opts["MARKER_HEATFLUX"], 2) + marker_names(opts["MARKER_INLET"], 6)
             + marker_names(opts["MARKER_OUTLET"], 2) + marker_names(opts["MARKER_FAR"], 1)
             + marker_names(opts["MARKER_SYM"], 1))
    assert sorted(named) == sorted(tags) == sorted(mesh.group_sizes())
    assert opts["INC_VELOCITY_INIT"] == "( 10.0, 0.0, 0.0 )"
    assert float(opts["MARKER_INLET"].strip("() ").split(",")[2]) == 10.0
    assert opts["MESH_FILENAME"] == "plate.su2" and opts["KIND_TURB_MODEL"] == "SST"


def test_a_mesh_without_a_sheet_is_refused(tmp_path):
    from test_cgns import sample  # a mesh not built from a plan

    for name in ("foam-setup", "su2-setup"):
        with pytest.raises(WriteError, match="boundary-condition sheet"):
            FORMATS[name].write(sample("2d"), tmp_path, "x")
    assert not list(tmp_path.iterdir())


def test_su2_periodic_sides_go_to_marker_periodic_not_symmetry(tmp_path):
    # SU2 config_template.cfg: MARKER_PERIODIC= ( periodic marker, donor marker, rotation centre (3),
    # rotation angles (3), translation (3) ); a marker has one condition only
    mesh = built(span=0.02, span_cells=2, span_boundary="periodic")
    write_case(mesh, tmp_path)
    opts = su2_options(tmp_path / "plate.cfg")
    items = [v.strip() for v in opts["MARKER_PERIODIC"].strip("() ").split(",")]
    assert items[:2] == ["back", "front"] and [float(v) for v in items[2:]] == [0] * 8 + [pytest.approx(0.02)]
    sym = [v.strip() for v in opts.get("MARKER_SYM", "( )").strip("() ").split(",") if v.strip()]
    assert "front" not in sym and "back" not in sym
