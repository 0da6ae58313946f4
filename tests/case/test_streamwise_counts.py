"""streamwise.upstream_cells and streamwise.wake_cells, and the message about growth_ratio with cells."""

import numpy as np
import pytest

from meshgen.case import load_case
from meshgen.core.errors import CaseError
from meshgen.planning.plan import make_plan
from meshgen.planning.spacing import growth_ratios

REYNOLDS = ["flow.fluid=", "flow.velocity=", "flow.reynolds=1e6", "flow.length=1"]


def test_upstream_and_wake_counts_are_honoured_with_the_edge_spacing_matched():
    case = load_case(None, REYNOLDS + ["streamwise.upstream_cells=24", "streamwise.wake_cells=16"])
    plan = make_plan(case)
    up, wake = plan.block("upstream"), plan.block("wake")
    assert (up.i1 - up.i0, wake.i1 - wake.i0) == (24, 16)
    xu = plan.x[up.i0 : up.i1 + 1]
    xw = plan.x[wake.i0 : wake.i1 + 1]
    # the spacing next to the plate is the plate's edge spacing, the blocks keep their lengths
    assert xu[-1] - xu[-2] == pytest.approx(1e-3, rel=1e-12)  # streamwise.leading_edge_spacing
    assert xw[1] - xw[0] == pytest.approx(5e-3, rel=1e-9)  # streamwise.trailing_edge_spacing
    assert xu[0] == pytest.approx(-0.5) and xw[-1] == pytest.approx(1.5)
    # one geometric series each (constant ratio, the one the geometric sum fixes)
    r = growth_ratios(xw)
    np.testing.assert_allclose(r, r[0], rtol=1e-9)
    g = r[0]
    assert 5e-3 * (g**16 - 1) / (g - 1) == pytest.approx(0.5, rel=1e-9)


def test_counts_that_cannot_work_are_refused_with_the_key():
    with pytest.raises(CaseError, match=r"streamwise.upstream_cells = 4: .*growth ratio of .*raise"):
        make_plan(load_case(None, REYNOLDS + ["streamwise.upstream_cells=4"]))
    with pytest.raises(CaseError, match=r"streamwise.wake_cells = 200: .*do not fit"):
        make_plan(load_case(None, REYNOLDS + ["streamwise.wake_cells=200"]))
    with pytest.raises(CaseError, match=r"there is no wake block"):
        make_plan(load_case(None, REYNOLDS + ["streamwise.wake_cells=10", "domain.downstream=0"]))


def test_growth_ratio_with_cells_error_says_where_the_ratio_applies():
    # issue 12: the message said the ratio "then applies to the upstream and wake blocks", but
    # it cannot be given with streamwise.cells at all; the blocks use the default ratio
    with pytest.raises(CaseError) as exc:
        load_case(None, ["streamwise.cells=80", "streamwise.growth_ratio=1.2"])
    text = "\n".join(exc.value.problems)
    assert "applies to the upstream and wake blocks only" not in text
    assert "default ratio 1.1" in text and "streamwise.upstream_cells" in text


@pytest.mark.parametrize("cells", [2, 4, 10])
def test_a_plate_count_too_small_for_its_edge_spacings_is_refused_with_the_count_that_fits(cells):
    """Issue 11, item 4: cells = 4 built a plate whose growth ratio was 499 with no word,
    and cells = 2 put 0.5 L at the leading edge. The solved ratio meets the wall's limit (2)."""
    with pytest.raises(CaseError) as exc:
        make_plan(load_case(None, REYNOLDS + [f"streamwise.cells={cells}"]))
    (line,) = exc.value.problems
    # each half-plate of 0.5 m from 1e-3 m at ratio 2: 1e-3 (2^n - 1) >= 0.5 gives n = 9
    # (log2(501) = 8.97); from 5e-3 m: n = 7 (log2(101) = 6.66); so 2 x 9 = 18 cells
    assert line.startswith(f"streamwise.cells = {cells}: ") and "valid up to 2" in line, line
    assert "18 or more" in line, line


def test_the_smallest_count_that_fits_is_accepted_and_keeps_the_limit():
    plan = make_plan(load_case(None, REYNOLDS + ["streamwise.cells=18"]))
    p = plan.block("plate")
    r = growth_ratios(plan.x[p.i0 : p.i1 + 1])
    assert r.max() <= 2.0 + 1e-12 and 1.0 / r.min() <= 2.0 + 1e-12
    assert plan.x[p.i0 + 1] - plan.x[p.i0] == pytest.approx(1e-3, rel=1e-9)  # the leading-edge spacing
