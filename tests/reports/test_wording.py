"""Wording and pictures that must agree: the centre-line angle and its limit as a setting,
round-off on perfect cells not counted as out of range, legends naming each group once,
and the GCI band drawn around the fine-grid value it qualifies.
"""

from __future__ import annotations

import numpy as np
import pytest
from samples import GROUPS, plate_groups

from meshgen.cli import main
from meshgen.meshing.mesh import Block, extrude, structured_mesh
from meshgen.reports.cell_metrics import cell_metrics
from meshgen.reports.markdown import quality_markdown
from meshgen.reports.plots import group_label
from meshgen.reports.quality import quality_report

BLOCKS = (Block("upstream", 0, 1), Block("plate", 1, 3), Block("wake", 3, 4))


def uneven_box():
    """Rectangular hexahedra whose scaled Jacobians round to 1 + 1 ulp (measured)."""
    m = structured_mesh(np.array([0, 0.3, 0.7, 1.1, 1.9]), np.array([0, 0.1, 0.3, 0.7]), BLOCKS, GROUPS)
    return extrude(m, np.array([0, 0.13, 0.29, 0.71]))


def test_perfect_cells_with_round_off_are_not_outside_the_range():
    m = uneven_box()
    sj = cell_metrics(m)[0]["scaled_jacobian"]
    assert np.count_nonzero(sj > 1.0) > 0  # the round-off is there (1 + 2.2e-16)...
    r = quality_report(m)
    assert r["metrics"]["scaled_jacobian"]["outside"] == 0  # ...and not counted (it was: 5 of 27)


def test_a_value_truly_outside_is_still_counted():
    from meshgen.reports.quality import summarise

    s = summarise("scaled_jacobian", np.array([1.0 + 2.2e-16, 1.0 + 1e-12, 0.2999999999, 0.5]))
    assert s["outside"] == 2


def test_centre_line_angle_is_named_ours_and_its_limit_is_a_setting():
    m = uneven_box()
    r = quality_report(m, angle_limit=45.0)
    angle = r["metrics"]["centre_line_angle"]
    assert angle["acceptable"] == [0.0, 45.0] and "non_orthogonality" not in r["metrics"]
    assert angle["max"] == pytest.approx(0.0, abs=1e-9)  # a rectangular grid: normals along the centre lines
    text = quality_markdown(r, "box")
    assert "centre line angle" in text and "non-orthogonality" not in text.lower()
    assert "default 70" in r["sources"]["centre_line_angle"]


def test_the_case_key_and_the_inspect_option_set_the_limit(tmp_path, capsys):
    import json

    out = tmp_path / "b"
    assert main(["build", "-o", str(out), "--no-pictures", "--set", "flow.fluid=", "--set", "flow.nu=1.5e-5",
                 "--set", "output.centre_line_angle_limit=30"]) == 0
    q = json.loads((out / "quality.json").read_text())
    assert q["metrics"]["centre_line_angle"]["acceptable"] == [0.0, 30.0]
    capsys.readouterr()
    assert main(["inspect", str(out / "fairing-strip.msh"), "--json", "--angle-limit", "55"]) == 0
    assert json.loads(capsys.readouterr().out)["metrics"]["centre_line_angle"]["acceptable"] == [0.0, 55.0]
    assert main(["inspect", str(out / "fairing-strip.msh"), "--angle-limit", "95"]) == 2


def test_legends_name_each_group_once():
    assert group_label("inlet", "inlet") == "inlet"
    assert group_label("hull", "wall") == "hull (wall)"


def test_legend_of_the_mesh_picture(tmp_path):
    from meshgen.reports.plots import mesh_figure

    m = structured_mesh(np.linspace(-1, 2, 13), np.linspace(0, 1, 5), (Block("upstream", 0, 4),
                        Block("plate", 4, 8), Block("wake", 8, 12)), plate_groups(4, 8, 12))
    fig = mesh_figure(m, quality_report(m), "legend")
    labels = [t.get_text() for legend in fig.legends for t in legend.get_texts()]  # fig.legend: the groups
    assert "inlet" in labels and not [t for t in labels if "(inlet)" in t or "(wall)" in t]


def test_gci_band_is_drawn_around_the_fine_grid_value(tmp_path):
    from matplotlib.figure import Figure

    from meshgen.study.gci import study
    from meshgen.study.gci_report import _plot_one

    st = study([0.0130, 0.0132, 0.0140], h=[0.01, 0.02, 0.04], quantity="cd")
    res = st["results"][0]
    ax = Figure().subplots()
    _plot_one(ax, "cd", st)
    band = next(c for c in ax.collections if "GCI band" in str(c.get_label()))
    ys = band.get_paths()[0].vertices[:, 1]
    # Celik et al. (2008): the fine-grid solution is reported as phi1 +- GCI_fine21 |phi1|
    assert (ys.min() + ys.max()) / 2 == pytest.approx(0.0130, rel=1e-12)
    assert ys.max() - ys.min() == pytest.approx(2 * res["u_fine21"], rel=1e-9)
    assert "[m]" in ax.get_xlabel()
    top = max(t.xyann[1] for t in ax.texts if hasattr(t, "xyann"))  # the level labels fit in the frame
    assert ax.get_ylim()[1] > 0.0140 and top > 0
