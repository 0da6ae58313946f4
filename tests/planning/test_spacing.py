"""1-D distributions against the closed forms of the geometric series."""

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from meshgen.core.errors import CaseError
from meshgen.planning.spacing import (
    capped_geometric,
    geometric_length,
    geometric_nodes,
    growth_ratios,
    resample,
    solve_geometric,
    two_sided,
)


def test_geometric_sum_closed_form():
    # S_n = a (g^n - 1) / (g - 1), the textbook sum of a geometric series
    a, g, n = 1e-5, 1.2, 37
    nodes = geometric_nodes(a, g, n)
    assert nodes[-1] == pytest.approx(a * (g**n - 1) / (g - 1), rel=1e-12)
    assert geometric_length(a, g, n) == pytest.approx(nodes[-1], rel=1e-12)
    np.testing.assert_allclose(growth_ratios(nodes), g, rtol=1e-12)


@settings(max_examples=60, deadline=None)
@given(first=st.floats(1e-8, 1e-2), ratio=st.floats(1.01, 1.5))
def test_solved_count_then_ratio_keeps_first_and_length(first, ratio):
    f, g, n = solve_geometric(1.0, first=first, ratio=ratio)
    assert f == first
    # the re-solved ratio reproduces the count and the length
    assert geometric_length(f, g, n) == pytest.approx(1.0, rel=1e-10)
    assert g <= ratio * (1 + 1e-12)


@settings(max_examples=60, deadline=None)
@given(count=st.integers(5, 400), ratio=st.floats(1.001, 1.4))
def test_first_from_ratio_and_count(count, ratio):
    f, g, n = solve_geometric(2.5, ratio=ratio, count=count)
    assert (g, n) == (ratio, count)
    assert geometric_length(f, g, n) == pytest.approx(2.5, rel=1e-12)
    # and solving back for the ratio from (first, count) recovers it
    assert solve_geometric(2.5, first=f, count=n)[1] == pytest.approx(ratio, rel=1e-9)


def test_two_of_three_required():
    with pytest.raises(CaseError):
        solve_geometric(1.0, first=0.1)
    with pytest.raises(CaseError):
        solve_geometric(1.0, first=0.1, ratio=1.1, count=3)


def test_capped_growth():
    nodes = capped_geometric(1.0, 1e-6, 1.15, 0.02)
    d = np.diff(nodes)
    assert d[0] == 1e-6  # exactly the first spacing
    assert nodes[0] == 0.0 and nodes[-1] == 1.0
    r = growth_ratios(nodes)
    assert r.max() <= 1.15 * (1 + 1e-9) and r.min() >= 1 - 1e-9  # never contracts
    assert d.max() <= 0.02 * 1.2


def test_capped_reaching_the_end_before_the_cap():
    nodes = capped_geometric(1.0, 1e-3, 1.1, 10.0)
    assert np.diff(nodes)[0] == pytest.approx(1e-3, rel=1e-14) and nodes[-1] == 1.0
    assert growth_ratios(nodes).max() <= 1.1 + 1e-12


def test_two_sided_clusters_both_ends():
    nodes = two_sided(2.0, 1e-3, 4e-3, 1.1, 0.05)
    d = np.diff(nodes)
    assert d[0] == pytest.approx(1e-3, rel=1e-12)
    assert d[-1] == pytest.approx(4e-3, rel=1e-9)
    assert nodes[-1] == 2.0 and np.all(d > 0)
    # growth towards the middle, one run of equal cells there, shrinking to the end
    r = growth_ratios(nodes)
    assert r.max() <= 1.1 * (1 + 1e-2) and r.min() >= 1 / (1.1 * (1 + 1e-2))
    middle = d[d >= 0.999 * d.max()]
    assert middle.size > 10 and np.ptp(middle) <= 1e-9 * d.max()


def test_resample_integer_factor_is_a_subset():
    nodes = capped_geometric(1.0, 1e-5, 1.1, 0.05)
    n = nodes.size - 1
    n -= n % 4
    nodes = nodes[: n + 1]
    coarse = resample(nodes, n // 2)
    np.testing.assert_array_equal(coarse, nodes[::2])
    # geometric part: first spacing a (1 + g), ratio g^2 (the family rule, ../shared/design.md)
    assert coarse[1] == pytest.approx(1e-5 * (1 + 1.1), rel=1e-12)
    assert (coarse[2] - coarse[1]) / coarse[1] == pytest.approx(1.1**2, rel=1e-9)


def test_first_spacing_above_length_is_rejected():
    with pytest.raises(CaseError, match="not smaller than the length"):
        capped_geometric(1.0, 2.0, 1.1, 0.1)


def test_absurd_counts_are_refused_before_allocation():
    with pytest.raises(CaseError, match="would need"):
        capped_geometric(1.0, 1e-12, 1.0, 1e-12)


def test_plate_with_a_given_count():
    from meshgen.planning.streamwise import plate_with_count

    nodes = plate_with_count(2.0, 1e-4, 2e-4, 544)
    d = np.diff(nodes)
    assert nodes.size == 545 and nodes[0] == 0.0 and nodes[-1] == 2.0
    assert d[0] == pytest.approx(1e-4, rel=1e-12) and d[-1] == pytest.approx(2e-4, rel=1e-9)
    # each half is one geometric series: constant ratio from its edge
    r = growth_ratios(nodes[:273])
    np.testing.assert_allclose(r, r[0], rtol=1e-9)
    with pytest.raises(CaseError, match="do not fit"):
        plate_with_count(1.0, 0.1, 0.1, 20)
