"""``meshgen plan`` and ``meshgen build`` with a scale-resolving case, end to end (in-process).

A small wall-resolved LES (Re_L = 1e5, the coarse ends of the published ranges, one delta99
of span: 20 000 cells) goes through the whole pipeline: the plan's achieved wall units are
those of the built mesh read back from its files, the sides are periodic in the files, and
the report has the picture along the plate. Ranges: Georgiadis, Rizzetta & Fureby (2010)
and Piomelli & Chasnov (1996), from memory (50 <= dx+ <= 150, 15 <= dz+ <= 40).
"""

from __future__ import annotations

import json

import numpy as np
import pytest

from meshgen.cli import main
from meshgen.io.readers.foam import read_polymesh

CASE = ["--set", "flow.velocity=", "--set", "flow.fluid=", "--set", "flow.reynolds=1e5",
        "--set", "flow.regime=turbulent", "--set", "flow.length=1",
        "--set", "resolution.kind=wall-resolved-les", "--set", "resolution.dx_plus=150",
        "--set", "resolution.dz_plus=40", "--set", "resolution.span_deltas=1",
        "--set", "domain.upstream=0.1", "--set", "domain.downstream=0.1"]


def test_plan_prints_targets_achieved_values_and_cautions(capsys):
    assert main(["plan", *CASE]) == 0
    out = capsys.readouterr().out
    assert "wall-resolved LES" in out and "achieved at x_ref" in out and "N ~ Re_L^13/7" in out
    assert "caution: periodic sides assume a statistically homogeneous span" in out
    assert "MARKER_PERIODIC= ( back, front," in out


@pytest.fixture(scope="module")
def built(tmp_path_factory):
    out = tmp_path_factory.mktemp("wrles") / "o"
    argv = ["build", *CASE, "-o", str(out), "--format", "msh", "--format", "polymesh", "--format", "cgns",
            "--format", "su2"]
    assert main(argv) == 0
    return out


def test_build_reports_what_the_files_hold(built):
    plan = json.loads((built / "plan.json").read_text())
    pm = read_polymesh(built)
    assert pm["n_cells"] == plan["cells"] == plan["resolution"]["cell_count"]["cells"]
    # the achieved spanwise spacing, from the files: span / cells, in wall units at x = L
    z = pm["points"][:, 2]
    dz = (z.max() - z.min()) / plan["resolution"]["span_cells"]
    wall_unit = plan["nu"] / plan["wall_at_reference"]["u_tau"]
    assert plan["dz_plus"] == pytest.approx(dz / wall_unit, rel=1e-9)
    # Georgiadis et al. (2010); Piomelli & Chasnov (1996) (from memory): wall-resolved LES ranges
    assert 50 <= plan["dx_plus"] <= 150 and 15 <= plan["dz_plus"] <= 40 and plan["dy_plus_wall"] <= 1 + 1e-9
    # the first cell in the file is the planned one
    y = np.unique(np.round(pm["points"][:, 1], 15))
    assert y[1] == pytest.approx(plan["first_cell_height"], rel=1e-9)
    assert (built / "resolution.png").stat().st_size > 20_000
    assert "resolution.png" in (built / "report.md").read_text()


def test_build_writes_periodic_sides(built):
    boundary = (built / "constant" / "polyMesh" / "boundary").read_text()
    assert boundary.count("cyclic;") == 2 and "neighbourPatch  front;" in boundary
    assert "$Periodic" in (built / "fairing-strip.msh").read_bytes().decode("latin-1")
    assert "MARKER_PERIODIC= ( back, front," in (built / "bc.md").read_text()
    sheet = json.loads((built / "bc.json").read_text())
    front = next(g for g in sheet["groups"] if g["name"] == "front")
    assert "periodic" in front["condition"]  # the default of a scale-resolving kind
    assert sheet["periodic"]["translation"][2] == pytest.approx(json.loads(
        (built / "plan.json").read_text())["resolution"]["span"], rel=1e-12)
