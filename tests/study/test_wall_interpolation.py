"""Wall distributions interpolated to common stations (gci --wall): third-order, not linear.

Linear interpolation between a level's wall nodes adds an error of order h^2 f'' that can
exceed the differences between well-converged levels (a laminar solve measured here: about
5e-5 relative in Cf at x/L = 0.5 against level differences of 6e-6), so that stations flip
between monotonic and oscillatory convergence by interpolation noise alone.
"""

import numpy as np

from meshgen.study.wall_data import along_wall


def graded_stations(n: int) -> np.ndarray:
    """Nodes clustered towards x = 0, as a plate's wall nodes are (non-uniform spacing)."""
    return np.linspace(0.0, 1.0, n) ** 1.7


def test_a_quadratic_is_reproduced_exactly_on_uneven_nodes():
    # Invariant of the three-point slopes: the cubic Hermite interpolant through exact
    # parabola slopes reproduces any quadratic, which straight lines do not.
    x = graded_stations(23)
    f = lambda s: 0.3 - 1.2 * s + 2.5 * s * s
    q = np.linspace(0.013, 0.997, 41)
    assert np.allclose(along_wall(x, f(x), q), f(q), rtol=0, atol=1e-13)
    assert np.abs(np.interp(q, x, f(x)) - f(q)).max() > 1e-4  # linear fails this


def test_blasius_like_skin_friction_is_interpolated_far_below_level_differences():
    # Cf = 0.664 / sqrt(Re_x) (Blasius; shared/references.md) on 200 graded wall nodes of a
    # 1 m plate at Re_L = 1e5: the interpolation error at x/L = 0.1 ... 0.9 must be far
    # below 6e-6 relative (the level differences of a converged family), and far below linear.
    x = graded_stations(201)[1:]
    cf = 0.664 / np.sqrt(1e5 * x)
    q = np.linspace(0.1, 0.9, 17)
    exact = 0.664 / np.sqrt(1e5 * q)
    cubic = np.abs(along_wall(x, cf, q) / exact - 1).max()
    linear = np.abs(np.interp(q, x, cf) / exact - 1).max()
    assert cubic < 1e-6 and cubic < linear / 20


def test_nodes_are_returned_exactly_and_two_nodes_fall_back_to_a_line():
    x = graded_stations(9)
    y = np.cos(3 * x)
    assert np.array_equal(along_wall(x, y, x), y)
    assert np.allclose(along_wall(np.array([0.0, 2.0]), np.array([1.0, 3.0]), np.array([0.5])), [1.5])
