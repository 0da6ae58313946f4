"""streamwise.max_spacing caps the plate at its edges too. Each half of the plate grew
from its edge spacing up to the cap, so an edge spacing above the cap (the default
trailing edge of 0.005 L with max_spacing = 0.002 L) met the capped half at mid-plate with
a jump of the spacing of 2.56, silently, where every growth ratio of a case is at most 2.
Such an edge is lowered to the cap, and the plan says so."""

import numpy as np
import pytest

from meshgen.case import load_case
from meshgen.cli import main
from meshgen.planning.plan import make_plan
from meshgen.planning.spacing import growth_ratios


def plate_ratios(plan):
    b = next(b for b in plan.blocks if b.name == "plate")
    r = growth_ratios(plan.x[b.i0:b.i1 + 1])
    return np.maximum(r, 1 / r)


@pytest.mark.parametrize("overrides, key", [
    (["streamwise.max_spacing=0.002"], "streamwise.trailing_edge_spacing"),  # 0.005 L > 0.002 L
    (["streamwise.leading_edge_spacing=0.03"], "streamwise.leading_edge_spacing"),  # 0.03 L > 0.02 L
])
def test_edge_spacing_above_the_cap_is_lowered_to_it_with_a_warning(overrides, key):
    case = load_case(None, overrides)
    plan = make_plan(case)
    s, length = case.streamwise, plan.flow.length
    # no step along the plate beyond the case's streamwise growth ratio
    assert plate_ratios(plan).max() <= s.growth_ratio * (1 + 1e-9)
    # no plate cell above the cap, the edges included
    b = next(b for b in plan.blocks if b.name == "plate")
    # no plate cell above the cap, the edges included (the uniform run between the edge
    # layers fills its length with a whole count, so it may exceed the cap by a little)
    assert np.diff(plan.x[b.i0:b.i1 + 1]).max() <= s.max_spacing * length * 1.01
    (w,) = [w for w in plan.warnings if key in w]
    assert "streamwise.max_spacing" in w


def test_the_command_line_builds_it_and_warns(capsys):
    assert main(["plan", "--set", "streamwise.max_spacing=0.002"]) == 0
    err = capsys.readouterr()
    assert "streamwise.trailing_edge_spacing" in err.out + err.err and "Traceback" not in err.err


def test_edges_within_the_cap_unchanged():
    # the default case: edges 0.001 L and 0.005 L below the cap of 0.02 L, no warning
    plan = make_plan(load_case(None, []))
    assert not [w for w in plan.warnings if "max_spacing" in w]
    np.testing.assert_allclose(np.diff(plan.x)[[plan.blocks[1].i0]], 0.001 * plan.flow.length, rtol=1e-12)
