"""The plan shows a y+ target only when the first cell was sized by one (issue 11, item 5).

Before: with wall.cells and wall.growth_ratio fixing the spacing, `plan` showed "target
y+ 1" while the estimate ran from 0.35 to 0.93: a target nobody set.
"""

import json

import pytest

from meshgen.cli import main

RE = ["--set", "flow.fluid=", "--set", "flow.velocity=", "--set", "flow.reynolds=1e6"]
BY_COUNT = ["--set", "wall.y_plus=", "--set", "wall.cells=60", "--set", "wall.growth_ratio=1.15"]


def _plan(argv, capsys):
    assert main(["plan", *RE, *argv, "--json"]) == 0
    d = json.loads(capsys.readouterr().out)
    assert main(["plan", *RE, *argv]) == 0
    return d, capsys.readouterr().out


def test_a_spacing_fixed_by_count_and_ratio_has_no_target(capsys):
    d, text = _plan(BY_COUNT, capsys)
    assert d["y_plus_target"] is None
    # what the mesh gives at the reference station, the plate end: the bottom of the range,
    # as the skin friction falls along a turbulent plate
    assert d["y_plus_at_reference"] == pytest.approx(d["y_plus_range"][0], rel=1e-9)
    assert "target y+" not in text
    assert "y+ at x/L = 1 (from the first cell)" in text


def test_a_spacing_sized_by_y_plus_keeps_its_target(capsys):
    d, text = _plan(["--set", "wall.y_plus=0.8"], capsys)
    assert d["y_plus_target"] == 0.8 and d["y_plus_at_reference"] == pytest.approx(0.8, rel=1e-9)
    assert "target y+ at x/L" in text


def test_the_report_of_such_a_build_names_no_target(tmp_path):
    assert main(["build", *RE, *BY_COUNT, "--format", "su2", "-o", str(tmp_path)]) == 0
    q = json.loads((tmp_path / "quality.json").read_text())
    assert q["boundary_layer"]["y_plus_target"] is None
    assert "(target" not in (tmp_path / "report.md").read_text()
