"""The case model: validation, overrides, contradictions, fluid properties."""

import pytest

from meshgen.case import DEFAULT_CASE_TOML, case_to_toml, load_case, parse_case
from meshgen.core.errors import CaseError
from meshgen.physics.fluids import fluid_state
from meshgen.planning.plan import make_plan


def problems(overrides, path=None):
    with pytest.raises(CaseError) as info:
        make_plan(load_case(path, overrides))
    return info.value.problems


def test_default_case_is_valid_and_embedded():
    case = load_case()
    assert case.name == "fairing-strip"
    assert "[flow]" in DEFAULT_CASE_TOML


@pytest.mark.parametrize(
    "overrides, field",
    [
        (["flow.reynolds=-5"], "flow.reynolds"),
        (["flow.reynolds=0"], "flow.reynolds"),
        (["wall.growth_ratio=0.95"], "wall.growth_ratio"),
        (["wall.y_plus=0"], "wall.y_plus"),
        (["domain.height_factor=nan"], "domain.height_factor"),
        (["flow.length=inf"], "flow.length"),
        (["flow.regime=\"slow\""], "flow.regime"),
        (["wall.y_plsu=1"], "did you mean 'y_plus'"),
        (["wal.y_plus=1"], "did you mean 'wall'"),
        (["flow.correlation=\"blasius\"", "flow.regime=\"turbulent\""], "flow.correlation"),
        (["flow.reynolds=1e6"], "over-determine"),  # default case has velocity + fluid
        (["flow.fluid=\"Unobtainium\""], "flow.fluid"),
        (["output.max_cells=100"], "output.max_cells"),
        (["wall.y_plus=5e2", "flow.velocity=0.01"], "not smaller than the domain height"),
        (["wall.cells=40", "wall.y_plus=1"], "over-determine"),
        (["names.wall=\"inlet\""], "must differ"),
    ],
)
def test_bad_values_name_their_field(overrides, field):
    found = problems(overrides)
    assert any(field in line for line in found), found


def test_every_problem_is_reported_at_once():
    found = problems(["flow.reynolds=-1", "wall.growth_ratio=0.5", "nosection.x=1"])
    assert len(found) == 3


def test_cell_limit_names_the_count():
    found = problems(["output.max_cells=1000"])
    assert "11,025" in found[0] or "needs" in found[0]


def test_overrides_change_the_plan():
    base = make_plan(load_case())
    finer = make_plan(load_case(None, ["wall.y_plus=0.5"]))
    assert finer.first_cell_height == pytest.approx(base.first_cell_height / 2, rel=1e-12)
    taller = make_plan(load_case(None, ["domain.height_factor=20"]))
    assert taller.domain_height == pytest.approx(2 * base.domain_height, rel=1e-12)


def test_reynolds_only_case():
    plan = make_plan(load_case(None, ["flow.velocity=", "flow.fluid=", "flow.reynolds=2e6", "flow.length=0.5"]))
    assert plan.flow.reynolds == 2e6
    assert plan.flow.velocity * plan.flow.length / plan.flow.nu == pytest.approx(2e6, rel=1e-12)


def test_wall_cells_and_ratio_solve_the_first_spacing():
    plan = make_plan(load_case(None, ["wall.y_plus=", "wall.cells=60", "wall.growth_ratio=1.1"]))
    assert plan.y.size == 61
    assert plan.growth_ratio == pytest.approx(1.1, rel=1e-9)


def test_case_round_trips_through_toml(tmp_path):
    case = load_case(None, ["wall.y_plus=0.8"])
    p = tmp_path / "c.toml"
    p.write_text(case_to_toml(case))
    assert load_case(p) == case


def test_missing_and_broken_files(tmp_path):
    assert "does not exist" in problems([], tmp_path / "nope.toml")[0]
    bad = tmp_path / "bad.toml"
    bad.write_text('name = "x"\n[flow\nreynolds = 1\n')
    assert "line 2" in problems([], bad)[0]


def test_parse_rejects_unknown_top_level_key():
    with pytest.raises(CaseError, match="unknown key"):
        parse_case({"flow": {"reynolds": 1e5}, "colour": "red"})


def test_water_viscosity_from_coolprop():
    # IAPWS 2008 viscosity formulation (Huber et al. 2009): water at 20 C, 1 atm has
    # nu = 1.0034e-6 m2/s (value from memory); compare at 0.5 %
    assert fluid_state("Water", 293.15, 101325.0).nu == pytest.approx(1.0034e-6, rel=5e-3)


def test_sea_level_air_from_coolprop():
    # U.S. Standard Atmosphere (1976): 288.15 K, 101325 Pa -> rho = 1.2250 kg/m3,
    # mu = 1.7894e-5 Pa s (Sutherland); CoolProp's real-gas air agrees within 1 %
    s = fluid_state("Air", 288.15, 101325.0)
    assert s.density == pytest.approx(1.2250, rel=1e-2)
    assert s.viscosity == pytest.approx(1.7894e-5, rel=1e-2)


@pytest.mark.parametrize("overrides", [[], ["wall.y_plus=", "wall.first_cell_height=2e-5"],
                                       ["wall.y_plus=", "wall.cells=60", "wall.growth_ratio=1.1"]])
def test_resolved_toml_loads_back_for_every_wall_mode(tmp_path, overrides):
    case = load_case(None, overrides)
    p = tmp_path / "c.toml"
    p.write_text(case_to_toml(case))
    back = load_case(p)
    assert back == case
    assert make_plan(back).first_cell_height == make_plan(case).first_cell_height
