"""Turbulent flat-plate correlations against their published forms.

Sources (../shared/references.md): White, Viscous Fluid Flow (1974) eqs. 6-112a (Prandtl,
Cf = 0.0592 Re_x^-0.2), 6-134 (White, Cf = 0.455 / ln^2(0.06 Re_x)), 6-135a (Schlichting,
Cf = (2 log10 Re_x - 0.65)^-2.3), as listed by the NASA Turbulence Modeling Resource
flat-plate page; delta99 = 0.37 x Re_x^-0.2 (Prandtl 1/7 law, Schlichting; from memory).
"""

import math

import numpy as np
import pytest

from meshgen.case import load_case
from meshgen.physics import correlations as bl
from meshgen.planning.plan import make_plan

RE = [1e6, 1e7, 1e8]


@pytest.mark.parametrize("re", RE)
def test_published_forms(re):
    # hand evaluation of each published formula with math (not numpy), one by one
    assert bl.skin_friction(re, "prandtl") == pytest.approx(0.0592 * re ** -0.2, rel=1e-12)
    assert bl.skin_friction(re, "white") == pytest.approx(0.455 / math.log(0.06 * re) ** 2, rel=1e-12)
    assert bl.skin_friction(re, "schlichting") == pytest.approx((2 * math.log10(re) - 0.65) ** -2.3, rel=1e-12)


def test_worked_value_at_re_1e6():
    # computed by hand from the formulas at Re_x = 1e6: Prandtl 0.003735, Schlichting 0.003747,
    # White 0.003759; the three agree within 1 % there
    assert bl.skin_friction(1e6, "prandtl") == pytest.approx(0.003735, abs=2e-6)
    assert bl.skin_friction(1e6, "schlichting") == pytest.approx(0.003747, abs=2e-6)
    assert bl.skin_friction(1e6, "white") == pytest.approx(0.003759, abs=2e-6)


def test_turbulent_thickness():
    x, re = 2.0, 1e7
    assert bl.delta99(x, re, "turbulent") == pytest.approx(0.37 * x * re ** -0.2, rel=1e-12)


def test_wall_units_round_trip():
    """y+ of the planned first cell at the reference station equals the target."""
    plan = make_plan(load_case(None, ["wall.y_plus=0.7", "wall.reference_station=0.5"]))
    f = plan.flow
    x_ref = 0.5 * f.length
    cf = bl.skin_friction(f.velocity * x_ref / f.nu, f.correlation)
    tau_w_over_rho = 0.5 * f.velocity**2 * cf  # tau_w = 0.5 rho U^2 Cf
    u_tau = math.sqrt(tau_w_over_rho)
    assert plan.first_cell_height * u_tau / f.nu == pytest.approx(0.7, rel=1e-12)


def test_table_drives_dispatch():
    """Every entry names a source and a regime the dispatch knows."""
    for c in bl.CORRELATIONS.values():
        assert c.source and c.formula
        assert c.regime in bl.DEFAULT_CORRELATION
        lo, hi = c.re_range
        assert np.isfinite(c.cf(np.array([lo + 1.0, hi]))).all()


def test_auto_regime_threshold():
    # engineering convention (e.g. Incropera, from memory): transition at Re_x about 5e5
    assert bl.regime_for(4.9e5, "auto")[0] == "laminar"
    assert bl.regime_for(4.9e5, "auto")[1]  # transitional warning
    assert bl.regime_for(5.1e5, "auto")[0] == "turbulent"
    assert bl.regime_for(5e4, "auto") == ("laminar", [])
