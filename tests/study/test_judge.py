"""Judging the levels of a family: figures against independent formulas, floors, advice that works."""

import numpy as np
import pytest

from meshgen.planning.spacing import geometric_nodes
from meshgen.study.family import family_study
from meshgen.study.judge import Floors, max_growth

# A laminar plate at Re_L = 1e5 with the top at 20 delta99 (the set-up of issue 12), a
# geometric wall layer of ratio 1.15 from a given first cell: a demo of our own.
LAMINAR = [
    "name=lam", "flow.fluid=", "flow.velocity=", "flow.reynolds=1e5", "flow.length=1", "flow.regime=laminar",
    "domain.height_factor=20", "domain.upstream=0.25", "domain.downstream=0",
    "wall.y_plus=", "wall.first_cell_height=1e-4", "wall.growth_ratio=1.15",
]


def family(overrides, levels, ratio, floors=None):
    return family_study(None, overrides, levels, ratio, ["msh"], ["family"], floors=floors)


def test_max_growth_either_way():
    nodes = geometric_nodes(1e-3, 1.2, 10)
    assert max_growth(nodes) == pytest.approx(1.2, rel=1e-12)
    assert max_growth(nodes[-1] - nodes[::-1]) == pytest.approx(1.2, rel=1e-12)  # shrinking cells
    assert max_growth(np.array([0.0, 1.0])) == 1.0


def test_level_figures_against_the_geometric_series_and_blasius():
    # 64 wall-normal cells (a multiple of 4: not rounded) of one geometric series from 1e-4 m
    st, _ = family([o for o in LAMINAR if not o.startswith("wall.growth")] + ["wall.growth_ratio=", "wall.cells=64"],
                   3, 2.0)
    figs = [m.record["judgement"] for m in st.members]
    a, g = 1e-4, st.members[0].plan.growth_ratio
    for k, f in enumerate(figs):
        n = 2**k
        # nested levels take every n-th node of the geometric layer: first cell = the sum of the
        # first n fine cells, a (g^n - 1) / (g - 1), and the ratio becomes g^n (geometric series)
        assert f["first_cell_height"] == pytest.approx(a * (g**n - 1) / (g - 1), rel=1e-9)
        assert f["max_growth_wall_normal"] == pytest.approx(g**n, rel=1e-9)
        # y+ = y u_tau / nu with u_tau = U sqrt(Cf / 2), Cf = 0.664 / sqrt(Re_x) (Blasius,
        # shared/references.md); U = 1, nu = L / Re_L for a Reynolds-number case, x_ref = L
        u_tau = np.sqrt(0.664 / np.sqrt(1e5) / 2)
        assert f["y_plus_at_reference"] == pytest.approx(f["first_cell_height"] * u_tau * 1e5, rel=1e-9)
        # delta99 = 4.91 x / sqrt(Re_x) (Blasius): count the wall-normal nodes below it
        y = st.members[k].plan.y
        for s, count in f["cells_in_delta99"].items():
            d = 4.91 * float(s) / np.sqrt(1e5 * float(s))
            assert count == np.count_nonzero(y[1:] <= d)


def test_coarsest_level_with_few_cells_across_delta99_is_named():
    st, warnings = family(LAMINAR, 3, 2.0)
    mid = [m.record["judgement"]["cells_in_delta99"]["0.5"] for m in st.members]
    assert mid[0] >= 10 > mid[2]  # 4-5 cells on the coarsest: the level the solver lost (issue 12)
    text = [w for w in warnings if "across delta99" in w]
    assert len(text) == 1 and text[0].startswith("level-2:") and "--ratio" in text[0]
    # the floor is settable: at 4 cells the same family passes
    _, warnings = family(LAMINAR, 3, 2.0, Floors(min_cells_delta99=4))
    assert not any("across delta99" in w for w in warnings)


def test_following_the_growth_advice_clears_the_warning():
    _, warnings = family(LAMINAR, 3, 2.0)
    advice = next(w for w in warnings if w.startswith("level-2: largest wall-normal growth"))
    value = float(advice.split("lower wall.growth_ratio to about ")[1].split()[0])
    _, warnings = family([o for o in LAMINAR if not o.startswith("wall.growth")] + [f"wall.growth_ratio={value}"],
                         3, 2.0)
    assert not any("wall-normal growth" in w for w in warnings)


def test_following_the_y_plus_advice_clears_the_warning():
    _, warnings = family(LAMINAR, 3, 2.0)
    advice = next(w for w in warnings if w.startswith("level-2: first-cell y+"))
    value = float(advice.split("wall.first_cell_height = ")[1].split()[0])
    _, warnings = family([o for o in LAMINAR if not o.startswith("wall.first")] + [f"wall.first_cell_height={value}"],
                         3, 2.0)
    assert not any("first-cell y+" in w for w in warnings)


def test_wall_function_band_flags_a_too_fine_first_cell():
    _, warnings = family(LAMINAR, 2, 2.0, Floors(y_plus_band=(30.0, 300.0)))
    assert any(w.startswith("level-0: first-cell y+") and "below the band 30 to 300" in w for w in warnings)
