"""The boundary-condition sheet: free-stream and turbulence values, one entry per group."""

import json

import pytest

from meshgen.case import TEMPLATES_DIR, load_case
from meshgen.cli import main
from meshgen.planning.plan import make_plan
from meshgen.reports.bc_sheet import bc_markdown, bc_sheet, sa_chi, turbulence_values


def test_intensity_form():
    plan = make_plan(load_case(None, ["flow.turbulence_intensity=0.01", "flow.viscosity_ratio=10"]))
    t = turbulence_values(plan)
    u, nu = plan.flow.velocity, plan.flow.nu
    # common practice: k = 1.5 (Tu U)^2, nu_t = ratio nu, omega = k / nu_t, eps = 0.09 k^2 / nu_t
    assert t["k"] == pytest.approx(1.5 * (0.01 * u) ** 2, rel=1e-12)
    assert t["omega"] == pytest.approx(t["k"] / (10 * nu), rel=1e-12)
    assert t["epsilon"] == pytest.approx(0.09 * t["k"] ** 2 / (10 * nu), rel=1e-12)
    # nu_tilde follows the viscosity ratio: nu_t = nu_tilde fv1(chi), fv1 = chi^3 / (chi^3 + 7.1^3)
    # (Spalart & Allmaras 1994); before, it was 3 nu whatever the ratio.
    chi = t["nu_tilde"] / nu
    assert chi * chi**3 / (chi**3 + 7.1**3) == pytest.approx(10.0, rel=1e-9)


@pytest.mark.parametrize("ratio, chi", [(0.210438, 3.0), (1.294234, 5.0)])
def test_sa_inversion_matches_the_tmr_free_stream(ratio, chi):
    # NASA TMR SA page: nu_tilde = 3 nu in the free stream is nu_t = 0.210438 nu (from memory);
    # 5 nu is 625 / (125 + 357.911) = 1.294234 (the formula).
    assert sa_chi(ratio) == pytest.approx(chi, rel=1e-6)


def shipped_cases():
    return [None, *sorted(TEMPLATES_DIR.glob("*.toml"))]


@pytest.mark.parametrize("source", shipped_cases(), ids=lambda s: getattr(s, "name", "default"))
def test_shipped_cases_sheets_agree_with_themselves(source):
    # Issue 14: the default case and every template flagged their own values as outside the
    # ranges the sheet cites. Now: no note says so, and every model whose case values are
    # outside its range gets a proposal inside it, with the reason.
    t = turbulence_values(make_plan(load_case(source)))
    assert not [n for n in t["notes"] if "outside" in n]
    rec = t["recommended"]
    for model, p in t["proposed"].items():
        assert p["reason"]
        if model == "k-omega SST":
            assert rec["k"][0] < p["k"] < rec["k"][1] and rec["omega"][0] < p["omega"] < rec["omega"][1]
        else:
            assert rec["nu_tilde"][0] <= p["nu_tilde"] * (1 + 1e-12) and p["nu_tilde"] <= rec["nu_tilde"][1] * (1 + 1e-12)
    inside_sst = rec["k"][0] < t["k"] < rec["k"][1] and rec["omega"][0] < t["omega"] < rec["omega"][1]
    assert inside_sst == ("k-omega SST" not in t["proposed"])
    if source is None or "roof" not in source.name:  # the wind case means its 5 % turbulence
        assert inside_sst


def test_sst_recommendation_ranges():
    # Menter (1993) via the NASA TMR SST page: U/L < omega < 10 U/L, 1e-5 U^2/Re < k < 0.1 U^2/Re
    plan = make_plan(load_case(None, ["flow.velocity=", "flow.fluid=", "flow.reynolds=1e6", "flow.length=1"]))
    rec = turbulence_values(plan)["recommended"]
    assert rec["omega"] == pytest.approx([1.0, 10.0])
    assert rec["k"] == pytest.approx([1e-11, 1e-7])


def test_values_outside_the_recommendation_get_a_proposal():
    plan = make_plan(load_case(None, ["flow.turbulence_intensity=0.05", "flow.viscosity_ratio=10"]))
    t = turbulence_values(plan)
    p = t["proposed"]["k-omega SST"]
    assert "quiet free stream" in p["reason"] and "real free-stream turbulence" in p["reason"]
    # the proposal's own Tu and ratio give its k and omega back (k = 1.5 (Tu U)^2, omega = k / (r nu))
    u, nu = plan.flow.velocity, plan.flow.nu
    assert 1.5 * (p["turbulence_intensity"] * u) ** 2 == pytest.approx(p["k"], rel=1e-12)
    assert p["k"] / (p["viscosity_ratio"] * nu) == pytest.approx(p["omega"], rel=1e-12)
    assert "proposed for k-omega SST" in bc_markdown(bc_sheet(plan))


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
