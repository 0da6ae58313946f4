"""van Driest II against the NASA Turbulence Modeling Resource (TMR) worked values.

Source: NASA TMR, "2DZPH: 2D Zero Pressure Gradient High Mach Number Flat Plate Validation
Case", data file ZPGflatplateSS_validation/cf_vandriestII.dat: Cf from the Karman-Schoenherr
relation Cf_inc = (17.08 L^2 + 25.11 L + 6.012)^-1, L = log10 Re_theta (Schoenherr 1932),
transformed by van Driest II with T_aw = T_inf (1 + 0.89 (gamma-1)/2 M^2), Sutherland's law
(110.4 K), free-stream temperature 300 K. The file gives ten digits.
"""

import numpy as np
import pytest

from meshgen.physics import compressible as comp

T_INF = 300.0  # NASA TMR: "freestream temperature of 300K"
R = 0.89  # NASA TMR recovery factor


def karman_schoenherr(re_theta):
    lg = np.log10(re_theta)
    return 1.0 / (17.08 * lg**2 + 25.11 * lg + 6.012)


def cf_van_driest(mach, tw_ratio, re_theta):
    t_w = tw_ratio * T_INF
    mu_ratio = comp.sutherland_viscosity(T_INF) / comp.sutherland_viscosity(t_w)
    f_c, f_rt = comp.van_driest_ii_factors(mach, T_INF, t_w, R, mu_ratio)
    return karman_schoenherr(re_theta * f_rt) / f_c


# (Mach, T_w / T_inf, Re_theta, Cf) read from cf_vandriestII.dat (NASA TMR)
TMR = [
    (2.0, 1.712, 1000.0, 3.222897416e-3),
    (2.0, 1.712, 4000.0, 2.349761780e-3),
    (2.0, 1.712, 25000.0, 1.651445404e-3),
    (5.0, 1.090, 1000.0, 2.492831787e-3),
    (5.0, 1.090, 2000.0, 2.128125867e-3),
    (5.0, 1.090, 3000.0, 1.950844540e-3),
    (5.0, 5.450, 1000.0, 1.604816178e-3),
    (5.0, 5.450, 4000.0, 1.137468847e-3),
]


@pytest.mark.parametrize("mach, tw, re_theta, cf", TMR)
def test_tmr_van_driest_ii_values(mach, tw, re_theta, cf):
    # NASA TMR cf_vandriestII.dat, ten significant digits; 1e-6 allows for their arithmetic
    assert cf_van_driest(mach, tw, re_theta) == pytest.approx(cf, rel=1e-6)


def test_tmr_adiabatic_walls_are_adiabatic():
    # NASA TMR lists T_w/T_inf = 1.712 at M = 2 and 5.450 at M = 5 as T_w/T_aw = 1.0
    for mach, tw in ((2.0, 1.712), (5.0, 5.450)):
        t_aw = comp.adiabatic_wall_temperature(T_INF, mach, R)
        assert tw * T_INF / t_aw == pytest.approx(1.0, abs=2e-3)
