"""The wall picture's GCI band qualifies the fine-grid value: phi1 +- u_fine21 (Celik et al.
2008, J. Fluids Eng. 130(7) 078001, eq. 10 and their reporting form "phi1 +- GCI"), as the
scalar GCI picture draws it (study/gci_report.py), not around the extrapolated value."""

import numpy as np
from matplotlib.collections import PolyCollection
from matplotlib.figure import Figure
from test_results_in import wall_family

from meshgen.study.wall_gci import parse_stations, wall_study
from meshgen.study.wall_gci_report import _plot_one


def test_wall_band_is_centred_on_the_fine_grid_value(tmp_path):
    res = wall_study(wall_family(tmp_path), "wall.csv", parse_stations("0.1:0.7:0.1"), ["cf"])
    ax = Figure().subplots()
    _plot_one(ax, "cf", res)
    (band,) = [c for c in ax.collections if isinstance(c, PolyCollection)]
    v = np.concatenate([p.vertices for p in band.get_paths()])
    for r in res["quantities"]["cf"]:
        at = np.isclose(v[:, 0], r["x_over_L"])
        lo, hi = v[at, 1].min(), v[at, 1].max()
        # phi1 and phi_ext differ by 2 h1^2 (1 + x/L) here, so the two centres are apart
        assert abs(r["phi"][0] - r["phi_ext"]) > 1e-3 * r["phi"][0]
        np.testing.assert_allclose(0.5 * (lo + hi), r["phi"][0], rtol=1e-12)
        np.testing.assert_allclose(0.5 * (hi - lo), r["u_fine"], rtol=1e-9)
