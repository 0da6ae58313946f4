"""1-D node distributions: geometric growth, growth with a cap, two-sided clustering.

Every function returns node positions (a strictly increasing float64 array) that start
at 0 unless stated; callers shift and mirror them. A distribution is a mapping from the
node index to position: a refinement family samples the same mapping with fewer nodes
(``resample``), so levels stay geometrically similar.

Geometric series: with first cell ``a``, ratio ``g`` and ``n`` cells the length is
``L = a (g^n - 1) / (g - 1)`` (``L = n a`` for g = 1). ``solve_geometric`` returns the
third of (first, ratio, count) from the other two and the length.
"""

from __future__ import annotations

import math

import numpy as np

from ..core.errors import CaseError


def geometric_length(first: float, ratio: float, count: int) -> float:
    """Length [m] of ``count`` cells growing from ``first`` by ``ratio``."""
    if abs(ratio - 1.0) < 1e-12:
        return first * count
    power = count * math.log(ratio)
    if power > 700.0:  # beyond float range: longer than anything we compare against
        return math.inf
    return first * math.expm1(power) / (ratio - 1.0)


def geometric_nodes(first: float, ratio: float, count: int) -> np.ndarray:
    """Node positions 0, a, a + a g, ... of ``count`` geometric cells."""
    sizes = first * ratio ** np.arange(count, dtype=np.float64)
    return np.concatenate([[0.0], np.cumsum(sizes)])


def _ratio_for(length: float, first: float, count: int) -> float:
    """The ratio g that makes ``count`` cells from ``first`` span ``length`` (bisection)."""
    if count * first > length:
        lo, hi = 1e-6, 1.0
    else:
        # the last cell alone, first g^(n-1), cannot exceed the length: an upper bound
        lo, hi = 1.0, (length / first) ** (1.0 / max(count - 1, 1)) * (1 + 1e-12)
    for _ in range(200):
        mid = 0.5 * (lo + hi)
        if geometric_length(first, mid, count) < length:
            lo = mid
        else:
            hi = mid
        if hi - lo < 1e-15 * hi:
            break
    return 0.5 * (lo + hi)


def solve_geometric(
    length: float, first: float | None = None, ratio: float | None = None, count: int | None = None
) -> tuple[float, float, int]:
    """Given the length and two of (first, ratio, count), return all three.

    The count found from first and ratio is rounded up to a whole number of cells, and
    the ratio is then re-solved so that the first cell stays exactly ``first``.
    """
    given = [v is not None for v in (first, ratio, count)]
    if sum(given) != 2:
        raise CaseError("give exactly two of first spacing, growth ratio and cell count")
    if count is None:
        assert first is not None and ratio is not None
        if abs(ratio - 1.0) < 1e-12:
            n = length / first
        else:
            n = math.log(1.0 + length * (ratio - 1.0) / first) / math.log(ratio)
        _check_count(n, "geometric distribution")
        count = max(1, math.ceil(n - 1e-9))
        return first, _ratio_for(length, first, count), count
    if ratio is None:
        assert first is not None
        return first, _ratio_for(length, first, count), count
    if abs(ratio - 1.0) < 1e-12:
        return length / count, ratio, count
    return length * (ratio - 1.0) / (ratio**count - 1.0), ratio, count


#: Refuse 1-D distributions longer than this many cells before allocating them.
MAX_CELLS_1D = 10_000_000


def _check_count(count: float, what: str) -> None:
    if count > MAX_CELLS_1D:
        raise CaseError(f"{what}: would need {count:.3g} cells in one direction (limit {MAX_CELLS_1D:.0e})")


def capped_geometric(length: float, first: float, ratio: float, cap: float,
                     what: str = "distribution") -> np.ndarray:
    """Nodes from 0 to ``length``: cells grow from ``first`` by ``ratio`` up to ``cap``,
    then stay uniform. The first cell is exactly ``first``. The uniform cells are no
    smaller than the last grown cell and larger by at most a factor (1 + 1/k), k their
    count, so the spacing never contracts.
    """
    if first >= length:
        raise CaseError(f"{what}: first spacing {first:.4g} m is not smaller than the length {length:.4g} m")
    cap = max(cap, first)
    if ratio <= 1.0 + 1e-12:
        n = max(1, math.ceil(length / first - 1e-9))
        _check_count(n, what)
        return _stretch_tail(np.arange(n + 1) * first, length, first)
    m = math.floor(math.log(cap / first) / math.log(ratio)) + 1  # cells below the cap
    grown = geometric_nodes(first, ratio, m)
    if grown[-1] >= length:
        # The layer reaches the far end before the cap: keep growing, fit the ratio.
        _, g, n = solve_geometric(length, first=first, ratio=ratio)
        nodes = geometric_nodes(first, g, n)
        nodes[-1] = length
        return nodes
    # Uniform cells no smaller than the last grown one: shrink the layer until the
    # remainder holds at least one such cell, so the spacing never contracts.
    while m > 1 and length - grown[m] < first * ratio ** (m - 1):
        m -= 1
    grown = grown[: m + 1]
    last = first * ratio ** (m - 1)
    rest = length - grown[-1]
    _check_count(rest / last, what)
    n_uniform = max(1, math.floor(rest / last + 1e-9))
    uniform = grown[-1] + np.arange(1, n_uniform + 1) * (rest / n_uniform)
    nodes = np.concatenate([grown, uniform])
    nodes[-1] = length
    return nodes


def _stretch_tail(nodes: np.ndarray, length: float, first: float) -> np.ndarray:
    """Scale all but the first cell so the last node lands on ``length``."""
    if nodes.size <= 2:
        return np.array([0.0, length])
    tail = nodes[1:] - first
    scale = (length - first) / tail[-1]
    out = np.concatenate([[0.0], first + tail * scale])
    out[-1] = length
    return out


def _layer_below_cap(first: float, ratio: float, cap: float) -> np.ndarray:
    """Nodes of the geometric cells from ``first`` that stay at or below ``cap``."""
    m = math.floor(math.log(max(cap, first) / first) / math.log(ratio)) + 1
    return geometric_nodes(first, ratio, m)


def two_sided(length: float, first_start: float, first_end: float, ratio: float, cap: float,
              what: str = "distribution") -> np.ndarray:
    """Nodes on [0, length] clustered at both ends: growth from each end up to ``cap``,
    one run of equal cells between.

    The spacing at x = 0 is ``first_start`` and at x = length ``first_end``; the middle
    cells are no smaller than either layer's last cell. The alternative, each half a capped
    geometric distribution over length/2, is kept when it grows more smoothly (short
    lengths, first spacings near the cap).
    """
    half = 0.5 * length
    left = capped_geometric(half, first_start, ratio, cap, what)
    right = capped_geometric(half, first_end, ratio, cap, what)
    halves = np.concatenate([left, length - right[::-1][1:]])
    halves[-1] = length
    joined = _joined_layers(length, first_start, first_end, ratio, cap, what)
    if joined is not None and _worst_growth(joined) <= _worst_growth(halves) * (1 + 1e-9):
        return joined
    return halves


def _worst_growth(nodes: np.ndarray) -> float:
    r = growth_ratios(nodes)
    return float(max(r.max(), 1.0 / r.min())) if r.size else 1.0


def _joined_layers(length: float, first_start: float, first_end: float, ratio: float, cap: float,
                   what: str) -> np.ndarray | None:
    """Both end layers up to the cap with one uniform run between, or None if they do not fit."""
    if ratio > 1.0 + 1e-12 and max(first_start, first_end) < 0.5 * length:
        left = _layer_below_cap(first_start, ratio, cap)
        right = _layer_below_cap(first_end, ratio, cap)
        # drop cells from the longer layer until the middle holds a cell as large as the last
        while left.size + right.size > 4:
            last = max(left[-1] - left[-2], right[-1] - right[-2])
            if left[-1] + right[-1] + last <= length:
                break
            if left[-1] >= right[-1]:
                left = left[:-1]
            else:
                right = right[:-1]
        last = max(left[-1] - left[-2], right[-1] - right[-2])
        rest = length - left[-1] - right[-1]
        if rest >= last:
            _check_count(rest / last, what)
            n = max(1, math.floor(rest / last + 1e-9))
            middle = left[-1] + np.arange(1, n) * (rest / n)
            nodes = np.concatenate([left, middle, length - right[::-1]])
            nodes[-1] = length
            return nodes
    return None


def _monotone_slopes(nodes: np.ndarray) -> np.ndarray:
    """dx/dxi at every node of an increasing sequence on unit index steps: the harmonic mean of
    the neighbouring cell sizes inside, a one-sided three-point estimate at the ends
    (Fritsch & Butland 1984, the shape-preserving piecewise cubic Hermite interpolant)."""
    d = np.diff(nodes)
    if d.size == 1:
        return np.array([d[0], d[0]])
    slopes = np.empty(nodes.size)
    slopes[1:-1] = 2.0 / (1.0 / d[:-1] + 1.0 / d[1:])
    for end, (a, b) in ((0, (d[0], d[1])), (-1, (d[-1], d[-2]))):
        s = 0.5 * (3.0 * a - b)
        slopes[end] = 0.0 if s < 0 else min(s, 3.0 * a)  # stays monotone (Fritsch & Carlson 1980)
    return slopes


def resample(nodes: np.ndarray, count: int) -> np.ndarray:
    """Sample the index-to-position mapping of ``nodes`` with ``count`` cells.

    The mapping is the monotone piecewise cubic through the nodes (``_monotone_slopes``):
    a geometric distribution sampled at a fractional index step keeps a smooth, nearly
    constant ratio, where straight lines between the nodes would make the ratio jitter
    cell to cell. Where a sample falls on a whole index it is that node exactly, so when
    ``(nodes.size - 1) / count`` is an integer r the result is every r-th node (a nested
    coarse grid), and two samplings of the same mapping share every node whose index they
    share (the index of sample k is (k n) / count, rounded once).
    """
    n = nodes.size - 1
    xi = (np.arange(count + 1, dtype=np.float64) * n) / count
    k = np.minimum(np.floor(xi).astype(np.int64), n - 1)
    t = xi - k
    d = np.diff(nodes)[k]
    slopes = _monotone_slopes(nodes)
    # cubic Hermite on [k, k + 1] with end slopes m0, m1 (unit index step)
    m0, m1 = slopes[k], slopes[k + 1]
    out = nodes[k] + t * (m0 + t * ((3.0 * d - 2.0 * m0 - m1) + t * (m0 + m1 - 2.0 * d)))
    whole = t == 0.0
    out[whole] = nodes[k[whole]]
    out[-1] = nodes[-1]
    return out


def growth_ratios(nodes: np.ndarray) -> np.ndarray:
    """Ratio of each cell to the one before it (cell k+1 / cell k)."""
    d = np.diff(nodes)
    return d[1:] / d[:-1]
