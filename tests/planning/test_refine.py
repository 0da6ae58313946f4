"""Resampling a node mapping with other counts: scipy's PCHIP as the reference, nesting invariants."""

import math

import numpy as np
import pytest
from scipy.interpolate import PchipInterpolator

from meshgen.planning.spacing import capped_geometric, growth_ratios, resample, two_sided


def test_resample_is_the_monotone_cubic_through_the_nodes():
    # scipy's PchipInterpolator (Fritsch & Carlson / Fritsch & Butland) is the independent reference
    for nodes in (capped_geometric(1.0, 1e-5, 1.12, 0.05), two_sided(2.0, 1e-3, 5e-3, 1.1, 0.04)):
        n = nodes.size - 1
        for count in (n + 3, round(n / math.sqrt(2)), n // 3):
            ref = PchipInterpolator(np.arange(n + 1), nodes)(np.arange(count + 1) * n / count)
            np.testing.assert_allclose(resample(nodes, count), ref, rtol=0, atol=1e-15 * nodes[-1])


def test_sqrt2_sampling_keeps_a_geometric_layer_smooth():
    # a geometric series sampled at index steps of sqrt(2) is geometric with ratio g^sqrt(2);
    # straight lines between the nodes made it jitter by several per cent from cell to cell
    nodes = capped_geometric(1.0, 1e-5, 1.12, 0.05)
    n = nodes.size - 1
    coarse = resample(nodes, round(n / math.sqrt(2)))
    r = growth_ratios(coarse)[:30]  # inside the geometric layer
    g = 1.12 ** (n / round(n / math.sqrt(2)))
    np.testing.assert_allclose(r, g, rtol=2e-3)
    linear = np.interp(np.arange(coarse.size) * n / (coarse.size - 1), np.arange(n + 1), nodes)
    assert np.ptp(growth_ratios(linear)[:30]) > 10 * np.ptp(r)


def test_samplings_of_one_mapping_share_the_nodes_of_shared_indices():
    nodes = capped_geometric(1.0, 1e-5, 1.12, 0.05)
    n = nodes.size - 1
    a, b = resample(nodes, 4 * 19), resample(nodes, 2 * 19)  # 76 and 38 cells from n
    assert n % 38 != 0
    np.testing.assert_array_equal(b, a[::2])
    assert np.all(np.diff(a) > 0) and a[0] == nodes[0] and a[-1] == nodes[-1]
    assert resample(nodes, n) is not nodes and np.array_equal(resample(nodes, n), nodes)


@pytest.mark.parametrize("count", [1, 2])
def test_resample_to_one_or_two_cells(count):
    nodes = capped_geometric(1.0, 1e-3, 1.2, 0.1)
    out = resample(nodes, count)
    assert out.size == count + 1 and out[0] == 0.0 and out[-1] == 1.0
