"""Compressible formulas: published constants and invariants a wrong formula would fail."""

import numpy as np
import pytest

from meshgen.physics import compressible as comp
from meshgen.physics import correlations as bl
from meshgen.physics import transition as tr
from meshgen.physics.wall import BoundaryLayerFlow, first_cell_height, wall_quantities, y_plus


def test_sutherland_sea_level():
    # U.S. Standard Atmosphere (1976): mu = 1.7894e-5 Pa s at 288.15 K
    assert comp.sutherland_viscosity(288.15) == pytest.approx(1.7894e-5, rel=1e-4)


def test_recovery_and_adiabatic_wall():
    # r = Pr^(1/2) laminar, Pr^(1/3) turbulent (Hirschel 2005, near eq. 3.7; White)
    assert comp.recovery_factor(0.72, False) == pytest.approx(0.72**0.5)
    assert comp.recovery_factor(0.72, True) == pytest.approx(0.72 ** (1 / 3))
    # r = 1 gives the total temperature T0 = T (1 + (gamma-1)/2 M^2): 1.8 T at Mach 2
    assert comp.adiabatic_wall_temperature(300.0, 2.0, 1.0) == pytest.approx(540.0)


def test_eckert_reference_temperature():
    # T* = 0.28 Te + 0.5 Tw + 0.22 Taw (Eckert 1955 via Hirschel 2005 eq. 7.62): weights sum to 1
    assert comp.eckert_reference_temperature(250.0, 250.0, 250.0) == pytest.approx(250.0)
    assert comp.eckert_reference_temperature(200.0, 400.0, 300.0) == pytest.approx(56 + 200 + 66)


def test_van_driest_identity_at_mach_zero_and_limit():
    f_c, f_rt = comp.van_driest_ii_factors(0.0, 288.15, 288.15, 0.89, 1.0)
    assert (f_c, f_rt) == (1.0, 1.0)
    # continuous as M -> 0 for an adiabatic wall (T_w = T_aw -> T_e)
    m = 1e-3
    t_aw = comp.adiabatic_wall_temperature(288.15, m, 0.89)
    f_c, _ = comp.van_driest_ii_factors(m, 288.15, t_aw, 0.89, 1.0)
    assert f_c == pytest.approx(1.0, abs=1e-5)


def _flow(mach, regime="turbulent", t_w=None, corr="white"):
    c = bl.CORRELATIONS[corr]
    return BoundaryLayerFlow(100.0, 1.5e-5, 1.2, regime, c.cf, tr.turbulent_re_theta(c.cf), 5e5,
                             mach=mach, temperature=250.0, wall_temperature=t_w)


def test_cf_falls_with_mach_on_an_adiabatic_wall():
    x = np.array([0.5, 2.0])
    machs = [0.0, 0.5, 1.0, 2.0, 3.0, 5.0]
    for regime in ("laminar", "turbulent"):
        cf = np.array([wall_quantities(x, _flow(m, regime)).cf for m in machs])
        assert np.all(np.diff(cf, axis=0) < 0), regime


def test_mach_zero_is_the_incompressible_sizing_exactly():
    x = np.geomspace(1e-3, 3.0, 200)
    f = _flow(0.0, t_w=400.0)  # a wall temperature has no effect at Mach 0
    w = wall_quantities(x, f)
    re = x * f.velocity / f.nu
    np.testing.assert_array_equal(w.cf, bl.skin_friction(re, "white"))
    np.testing.assert_array_equal(w.u_tau, bl.friction_velocity(f.velocity, w.cf))
    np.testing.assert_array_equal(w.nu_w, np.full_like(x, f.nu))
    np.testing.assert_array_equal(w.delta99, bl.delta99(x, re, "turbulent"))
    np.testing.assert_array_equal(first_cell_height(1.0, w), bl.wall_spacing(1.0, f.velocity, f.nu, w.cf))
    np.testing.assert_array_equal(y_plus(1e-5, w), bl.y_plus(1e-5, f.velocity, f.nu, w.cf))


def test_mach_two_adiabatic_first_cell_is_taller():
    """Same Re_x and y+: the hot wall's viscosity and low density lift the first cell."""
    x = np.array([1.0])
    dy0 = first_cell_height(1.0, wall_quantities(x, _flow(0.0)))
    w2 = wall_quantities(x, _flow(2.0))
    dy2 = first_cell_height(1.0, w2)
    assert dy2 / dy0 > 1.8  # measured 2.2 here
    assert w2.t_w[0] > 1.7 * 250.0 and w2.rho_w[0] < 1.2 / 1.7


def test_cooled_wall_first_cell_is_smaller_than_adiabatic():
    x = np.array([1.0])
    dy_ad = first_cell_height(1.0, wall_quantities(x, _flow(2.0)))
    dy_cold = first_cell_height(1.0, wall_quantities(x, _flow(2.0, t_w=250.0)))
    assert dy_cold < dy_ad


def test_compressible_thickness_grows_with_mach():
    # reference-temperature thickness (Hirschel 2005 eqs. 7.100, 7.104): hotter layer, thicker
    x = np.array([1.0])
    d = [wall_quantities(x, _flow(m, regime)).delta99[0] for regime in ("laminar", "turbulent") for m in (0, 2)]
    assert d[1] > d[0] and d[3] > d[2]


def test_laminar_reference_temperature_matches_power_law_form():
    """With mu ~ T^omega the method gives Cf/Cf_inc = (T*/Te)^((omega-1)/2) and
    delta/delta_inc = (T*/Te)^((1+omega)/2) (Hirschel 2005 eqs. 7.143, 7.100). Sutherland's
    law has a local exponent omega = dln mu / dln T; over a small temperature step the two agree."""
    t_e, t_ref = 300.0, 303.0
    omega = np.log(comp.sutherland_viscosity(t_ref) / comp.sutherland_viscosity(t_e)) / np.log(t_ref / t_e)
    k = comp.reference_reynolds_factor(t_e, t_ref, comp.sutherland_viscosity(t_e), comp.sutherland_viscosity(t_ref))
    cf = comp.laminar_cf_reference(1e5, k, t_e, t_ref) / (0.664 / np.sqrt(1e5))
    assert cf == pytest.approx((t_ref / t_e) ** ((omega - 1) / 2), rel=1e-12)
    assert comp.reference_thickness_factor(k, 0.5) == pytest.approx((t_ref / t_e) ** ((1 + omega) / 2), rel=1e-12)
