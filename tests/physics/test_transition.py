"""Transition: onset correlations and the composite laminar/turbulent layer (invariants).

Published values: Abu-Ghannam & Shaw (1980) zero-gradient form Re_theta = 163 +
exp(6.91 - Tu[%]) (form checked against independent reproductions; the paper not read);
Mayle (1991) 400 Tu^-5/8 (from memory); Blasius theta = 0.664 x / sqrt(Re_x) (Howarth 1938
via Schlichting).
"""

import math

import numpy as np
import pytest

from meshgen.physics import correlations as bl
from meshgen.physics import transition as tr
from meshgen.physics.wall import BoundaryLayerFlow, wall_quantities

U, NU = 30.0, 1.5e-5


def _flow(regime, corr="white", re_tr=5e5):
    c = bl.CORRELATIONS[corr]
    return BoundaryLayerFlow(U, NU, 1.2, regime, c.cf, tr.turbulent_re_theta(c.cf), re_tr)


def test_onset_correlations():
    # Abu-Ghannam & Shaw (1980), zero pressure gradient: Tu -> 0 gives 163 + e^6.91
    assert tr.abu_ghannam_shaw(0.0) == pytest.approx(163.0 + math.exp(6.91), rel=1e-12)
    assert tr.abu_ghannam_shaw(1.0) == pytest.approx(163.0 + math.exp(5.91), rel=1e-12)
    # Mayle (1991), from memory: 400 at Tu = 1 %
    assert tr.mayle(1.0) == pytest.approx(400.0, rel=1e-12)
    # more free-stream turbulence, earlier transition (both correlations)
    tu = np.array([0.002, 0.005, 0.01, 0.03])
    for name in tr.ONSET_CORRELATIONS:
        assert np.all(np.diff(tr.transition_re_from_intensity(tu, name)) < 0)
    # through the Blasius momentum thickness: Re_x = (Re_theta / 0.664)^2
    assert tr.transition_re_from_intensity(0.01) == pytest.approx((tr.abu_ghannam_shaw(1.0) / 0.664) ** 2)


def test_laminar_part_equals_the_laminar_sizing_exactly():
    x = np.linspace(1e-3, 0.2499, 50)  # Re_x up to 5e5 * 0.999
    assert np.all(x * U / NU < 5e5)
    a, b = wall_quantities(x, _flow("transitional")), wall_quantities(x, _flow("laminar"))
    for name in ("cf", "u_tau", "nu_w", "delta99"):
        np.testing.assert_array_equal(getattr(a, name), getattr(b, name))
    # and the laminar sizing is Blasius: Cf = 0.664 / sqrt(Re_x), delta99 = 4.91 x / sqrt(Re_x)
    np.testing.assert_array_equal(b.cf, bl.skin_friction(x * U / NU, "blasius"))
    np.testing.assert_array_equal(b.delta99, bl.delta99(x, x * U / NU, "laminar"))


@pytest.mark.parametrize("corr", ["prandtl", "schlichting", "white"])
def test_turbulent_part_follows_the_law_from_the_virtual_origin(corr):
    w = wall_quantities(np.linspace(0.3, 3.0, 40), _flow("transitional", corr))
    x0 = w.virtual_origin_x
    assert 0 < x0 < w.transition_x == pytest.approx(5e5 * NU / U)
    re_shift = (w.x - x0) * U / NU
    np.testing.assert_allclose(w.cf, bl.skin_friction(re_shift, corr), rtol=1e-12)
    np.testing.assert_allclose(w.delta99, bl.delta99(w.x - x0, re_shift, "turbulent"), rtol=1e-12)


@pytest.mark.parametrize("corr", ["prandtl", "schlichting", "white"])
def test_momentum_thickness_is_continuous_at_transition(corr):
    w = wall_quantities(np.array([1.0]), _flow("transitional", corr))
    re_tr, re0 = 5e5, w.virtual_origin_x * U / NU
    theta = tr.turbulent_re_theta(bl.CORRELATIONS[corr].cf)
    assert theta(re_tr - re0) == pytest.approx(tr.laminar_re_theta(re_tr), rel=1e-12)


def test_integrated_cf_gives_a_continuous_momentum_thickness():
    """theta(L) from integrating the composite Cf/2 equals the turbulent law's theta at
    L - x0: no jump at x_tr (Prandtl's law, whose theta is the exact integral)."""
    re_l = 1e7
    x = np.concatenate([np.geomspace(1e-9, 1.0, 20001)]) * re_l * NU / U
    w = wall_quantities(x, _flow("transitional", "prandtl"))
    re = x * U / NU
    # the trapezoid rule on the geometric grid, with the exact laminar integral near x = 0
    theta = 0.664 * math.sqrt(re[0]) + np.sum(0.25 * (w.cf[1:] + w.cf[:-1]) * np.diff(re))
    re0 = w.virtual_origin_x * U / NU
    assert theta == pytest.approx(0.037 * (re_l - re0) ** 0.8, rel=2e-4)


@pytest.mark.parametrize("corr", ["prandtl", "schlichting", "white"])
def test_turbulent_theta_obeys_the_momentum_integral(corr):
    """d Re_theta / d Re_x = Cf / 2 (momentum integral, zero pressure gradient)."""
    cf = bl.CORRELATIONS[corr].cf
    theta = tr.turbulent_re_theta(cf)
    re = np.geomspace(2e4, 1e9, 50)
    h = 1e-5
    slope = (theta(re * (1 + h)) - theta(re * (1 - h))) / (2 * h * re)
    np.testing.assert_allclose(slope, 0.5 * cf(re), rtol=1e-8)


def test_prandtl_theta_is_its_closed_form():
    # integral of 0.0592 Re^-0.2 / 2 from 0: 0.037 Re^0.8 (C_D = 0.074 Re^-0.2)
    re = np.geomspace(1e3, 1e9, 30)
    np.testing.assert_allclose(tr.turbulent_re_theta(bl.CORRELATIONS["prandtl"].cf)(re), 0.037 * re**0.8, rtol=1e-12)


def test_virtual_origin_vectorised_and_refuses_unbracketed():
    re_tr = np.array([1e5, 5e5, 3e6])
    re0 = tr.virtual_origin(re_tr, tr.laminar_re_theta, tr.turbulent_re_theta(bl.CORRELATIONS["prandtl"].cf))
    # Prandtl's law in closed form: 0.037 (Re_tr - Re0)^0.8 = 0.664 sqrt(Re_tr)
    np.testing.assert_allclose(re_tr - re0, (0.664 * np.sqrt(re_tr) / 0.037) ** 1.25, rtol=1e-10)
    with pytest.raises(ValueError):
        tr.virtual_origin(1e5, tr.laminar_re_theta, lambda r: 0 * r)
