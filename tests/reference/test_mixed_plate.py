"""Mixed laminar/turbulent plate drag against the published composite formulas.

C_D = 0.074 Re_L^-0.2 - 1740 / Re_L for transition at Re_x = 5e5 (Prandtl-Schlichting
composite, as in common textbooks; from memory). It assumes the turbulent layer behaves as if it had started at the leading edge; meshgen's composite starts it from a virtual origin that keeps the momentum thickness continuous, so the two differ
by a term that falls with Re_L: the tolerance below is that construction difference, not
numerical error.
"""

import itertools
import math

import numpy as np
import pytest

from meshgen.physics import correlations as bl
from meshgen.physics import transition as tr
from meshgen.physics.wall import BoundaryLayerFlow, wall_quantities


def _drag(re_l: float) -> float:
    """C_D = (1/Re_L) * integral of the composite Cf over the plate (U = nu = 1)."""
    c = bl.CORRELATIONS["prandtl"]
    flow = BoundaryLayerFlow(1.0, 1.0, 1.0, "transitional", c.cf, tr.turbulent_re_theta(c.cf), 5e5)
    re = np.geomspace(1e-6, re_l, 400001)
    cf = wall_quantities(re, flow).cf
    lam = 1.328 * math.sqrt(re[0])  # exact integral of the Blasius Cf on [0, re[0]]
    return (lam + np.sum(0.5 * (cf[1:] + cf[:-1]) * np.diff(re))) / re_l


def test_the_1740_is_prandtls_construction():
    # 5e5 * (C_D,turb(5e5) - C_D,lam(5e5)) with 0.074 Re^-0.2 and Blasius 1.328 / sqrt(Re)
    assert 5e5 * (0.074 * 5e5**-0.2 - 1.328 / math.sqrt(5e5)) == pytest.approx(1740, rel=2e-3)


# measured: 3.2 % at 1e7, 1.5 % at 3e7, 0.65 % at 1e8 (6.6 % at 3e6)
@pytest.mark.parametrize("re_l, rtol", [(1e7, 0.04), (3e7, 0.02), (1e8, 0.007)])
def test_prandtl_schlichting_composite(re_l, rtol):
    published = 0.074 * re_l**-0.2 - 1740 / re_l  # Prandtl-Schlichting composite (from memory)
    assert _drag(re_l) == pytest.approx(published, rel=rtol)


def test_difference_falls_with_reynolds_number():
    errs = [abs(_drag(r) / (0.074 * r**-0.2 - 1740 / r) - 1) for r in (3e6, 1e7, 3e7, 1e8)]
    assert all(b < a for a, b in itertools.pairwise(errs))
