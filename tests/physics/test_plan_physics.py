"""The sizing physics inside make_plan: regimes, wall treatment, y+ definition, Mach."""

import numpy as np
import pytest

from meshgen.case import load_case
from meshgen.core.errors import CaseError
from meshgen.physics import correlations as bl
from meshgen.planning.plan import make_plan

KINEMATIC = ["flow.fluid=", "flow.nu=1.5e-5", "flow.velocity=25"]


def _plan(*overrides):
    return make_plan(load_case(None, list(overrides)))


def test_mach_zero_reproduces_the_incompressible_plan_exactly():
    a, b = _plan(*KINEMATIC), _plan(*KINEMATIC, "flow.mach=0")
    np.testing.assert_array_equal(a.x, b.x)
    np.testing.assert_array_equal(a.y, b.y)
    # and the plan is the incompressible formulas, bit for bit
    f = a.flow
    cf = bl.skin_friction(bl.reynolds_x(f.length, f.velocity, f.nu), f.correlation)
    assert a.first_cell_height == bl.wall_spacing(1.0, f.velocity, f.nu, cf)
    assert a.delta99_end == bl.delta99(f.length, f.reynolds, f.regime)


def test_transitional_plan():
    p = _plan("flow.regime=\"transitional\"")
    d = p.to_dict()
    f = p.flow
    assert d["transition_x"] == pytest.approx(5e5 * f.nu / f.velocity)
    xs, yp = p.y_plus_along_plate()
    lam = xs < d["transition_x"]
    wl = _plan("flow.regime=\"laminar\"", "wall.y_plus=", f"wall.first_cell_height={p.first_cell_height!r}")
    np.testing.assert_array_equal(yp[lam], wl.y_plus_along_plate()[1][lam])
    assert "transitional" in " ".join(d["assumptions"])


def test_transition_from_turbulence_intensity():
    p = _plan("flow.regime=\"transitional\"", "flow.transition_onset=\"abu-ghannam-shaw\"",
              "flow.turbulence_intensity=0.01")
    # Abu-Ghannam & Shaw (1980): Re_theta = 163 + exp(6.91 - 1) at Tu = 1 %, Re_x = (Re_theta / 0.664)^2
    assert p.flow.transition_re == pytest.approx(((163 + np.exp(5.91)) / 0.664) ** 2)


def test_auto_states_its_assumption():
    d = _plan().to_dict()
    text = " ".join(d["assumptions"])
    assert "turbulent from the leading edge" in text and "transitional" in text


def test_mach_two_adiabatic_first_cell_taller_and_wall_state_shown():
    m0 = _plan(*KINEMATIC, "flow.velocity=680")
    m2 = _plan(*KINEMATIC, "flow.velocity=680", "flow.mach=2")
    assert m2.first_cell_height > 1.8 * m0.first_cell_height
    w = m2.to_dict()["wall_at_reference"]
    assert w["T_w"] > 1.7 * 288.15 and w["nu_w"] > 2 * 1.5e-5


def test_centre_definition_doubles_the_first_cell():
    a, b = _plan(*KINEMATIC), _plan(*KINEMATIC, "wall.y_plus_at=\"centre\"")
    assert b.first_cell_height == pytest.approx(2 * a.first_cell_height, rel=1e-12)
    assert b.to_dict()["y_plus_range"][1] == pytest.approx(a.to_dict()["y_plus_range"][1], rel=1e-9)


@pytest.mark.parametrize("overrides, words", [
    (["flow.velocity=250"], "sized as incompressible"),
    (["wall.treatment=\"wall-functions\"", "wall.y_plus=10"], "buffer layer"),
    (["wall.y_plus=10"], "above about 1"),
])
def test_physics_warnings(overrides, words):
    assert any(words in w for w in _plan(*overrides).warnings)


def test_wall_function_default_target_and_no_warning_at_50():
    p = _plan("wall.treatment=\"wall-functions\"", "wall.y_plus=")
    assert p.to_dict()["y_plus_target"] == 50.0
    assert not any("buffer" in w for w in p.warnings)


def test_mach_with_fluid_and_velocity_is_refused():
    with pytest.raises(CaseError, match="flow.mach"):
        _plan("flow.mach=0.5")
