"""The boundary-condition sheet: free-stream and turbulence values, one entry per group."""

import json

import pytest

from meshgen.case import load_case
from meshgen.cli import main
from meshgen.planning.plan import make_plan
from meshgen.reports.bc_sheet import bc_sheet, turbulence_values


def test_intensity_form():
    plan = make_plan(load_case(None, ["flow.turbulence_intensity=0.01", "flow.viscosity_ratio=10"]))
    t = turbulence_values(plan)
    u, nu = plan.flow.velocity, plan.flow.nu
    # common practice: k = 1.5 (Tu U)^2, nu_t = ratio nu, omega = k / nu_t, eps = 0.09 k^2 / nu_t
    assert t["k"] == pytest.approx(1.5 * (0.01 * u) ** 2, rel=1e-12)
    assert t["omega"] == pytest.approx(t["k"] / (10 * nu), rel=1e-12)
    assert t["epsilon"] == pytest.approx(0.09 * t["k"] ** 2 / (10 * nu), rel=1e-12)
    # NASA TMR, Spalart-Allmaras page: nu_tilde_inf = 3 to 5 nu_inf
    assert 3 * nu <= t["nu_tilde"] <= 5 * nu


def test_sst_recommendation_ranges():
    # Menter (1993) via the NASA TMR SST page: U/L < omega < 10 U/L, 1e-5 U^2/Re < k < 0.1 U^2/Re
    plan = make_plan(load_case(None, ["flow.velocity=", "flow.fluid=", "flow.reynolds=1e6", "flow.length=1"]))
    rec = turbulence_values(plan)["recommended"]
    assert rec["omega"] == pytest.approx([1.0, 10.0])
    assert rec["k"] == pytest.approx([1e-11, 1e-7])


def test_values_outside_the_recommendation_are_noted():
    plan = make_plan(load_case(None, ["flow.turbulence_intensity=0.05"]))
    assert any("outside the SST recommendation" in n for n in turbulence_values(plan)["notes"])


def test_sheet_lists_every_group_with_its_role():
    plan = make_plan(load_case(None, ["domain.span=0.1", "domain.span_cells=2", "names.wall=\"hull\""]))
    sheet = bc_sheet(plan)
    roles = {g["name"]: g["role"] for g in sheet["groups"]}
    assert roles == {"inlet": "inlet", "outlet": "outlet", "hull": "wall", "farfield": "farfield",
                     "symmetry": "symmetry", "back": "back", "front": "front"}
    assert sheet["free_stream"]["p_gauge"] == 0.0
    assert sheet["free_stream"]["Re_L"] == pytest.approx(plan.flow.reynolds)


def test_build_writes_the_sheet_and_plan_shows_it(tmp_path, capsys):
    assert main(["build", "-o", str(tmp_path), "--no-pictures"]) == 0
    sheet = json.loads((tmp_path / "bc.json").read_text())
    assert (tmp_path / "bc.md").read_text().startswith("# Boundary conditions")
    assert {g["name"] for g in sheet["groups"]} == {"inlet", "outlet", "wall", "farfield", "symmetry"}
    capsys.readouterr()
    assert main(["plan", "--json"]) == 0
    assert "boundary_conditions" in json.loads(capsys.readouterr().out)
