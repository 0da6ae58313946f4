"""Families that nest by default: rounding the finest counts, sqrt(2) chains, --keep-counts, --dry-run."""

import itertools
import json
import math

import meshio
import numpy as np
import pytest
from scipy.spatial import cKDTree

from meshgen.cli import main
from meshgen.study.family import family_study
from meshgen.study.nesting import chain_steps, family_counts, nesting_power

# The embedded default case (a demo of our own): 42 upstream, 80 plate, 26 wake cells by 75
# wall-normal cells, measured with meshgen plan.
DEFAULT_COUNTS = {"upstream": 42, "plate": 80, "wake": 26, "wall-normal": 75}


def family(overrides, levels, ratio, **kw):
    return family_study(None, overrides, levels, ratio, ["msh"], ["family"], **kw)


def counts_of(plan):
    return {**{b.name: b.i1 - b.i0 for b in plan.blocks}, "wall-normal": plan.y.size - 1}


def test_default_case_counts_are_what_the_rounding_starts_from():
    st, _ = family([], 2, 2.0, keep_counts=True)
    assert counts_of(st.members[0].plan) == DEFAULT_COUNTS


def test_integer_ratio_rounds_every_count_up_to_a_multiple_of_r_to_the_n_minus_1():
    counts, changed = family_counts(DEFAULT_COUNTS, 2.0, 3, keep=False)
    assert counts[0] == {"upstream": 44, "plate": 80, "wake": 28, "wall-normal": 76}
    assert changed == {"upstream": (42, 44), "wake": (26, 28), "wall-normal": (75, 76)}
    assert counts[1] == {k: n // 2 for k, n in counts[0].items()}
    assert counts[2] == {k: n // 4 for k, n in counts[0].items()}
    counts, changed = family_counts(DEFAULT_COUNTS, 3.0, 2, keep=False)
    assert counts[0] == {"upstream": 42, "plate": 81, "wake": 27, "wall-normal": 75}
    # --keep-counts: the case's counts on level 0, divided and rounded half up below
    counts, changed = family_counts(DEFAULT_COUNTS, 2.0, 3, keep=True)
    assert counts[0] == DEFAULT_COUNTS and changed == {}
    assert counts[2] == {"upstream": 11, "plate": 20, "wake": 7, "wall-normal": 19}  # 10.5 -> 11, 6.5 -> 7


def test_sqrt2_chains():
    assert nesting_power(math.sqrt(2)) == (2, 2) and nesting_power(1.414) == (2, 2)
    assert nesting_power(2.0) == (1, 2) and nesting_power(1.5) is None
    # 5 levels: levels 0, 2, 4 nest (ratio 2, so level 0 divides by 4); levels 1, 3 (by 2)
    assert chain_steps(math.sqrt(2), 5) == [4, 2, 2, 1, 1]
    counts, _ = family_counts(DEFAULT_COUNTS, math.sqrt(2), 5, keep=False)
    for a, b in ((0, 2), (2, 4), (1, 3)):
        assert counts[b] == {k: n // 2 for k, n in counts[a].items()}
    # level 1 is the finest count / sqrt(2) to the nearest even number
    assert counts[1]["plate"] == 56 and 80 / 56 == pytest.approx(math.sqrt(2), rel=0.02)


def test_sqrt2_every_second_level_shares_its_nodes():
    st, _ = family([], 4, math.sqrt(2))
    p = [m.plan for m in st.members]
    for fine, coarse in ((p[0], p[2]), (p[1], p[3])):
        assert np.array_equal(coarse.x, fine.x[::2]) and np.array_equal(coarse.y, fine.y[::2])
    # consecutive levels do not: level 1 has nodes that level 0 has not
    assert not np.isin(p[1].y, p[0].y).all()
    assert any("every second level" in n for n in st.header["nesting"]["notes"])


def read_points(path):
    return meshio.read(path, file_format="gmsh").points


def test_default_case_three_levels_ratio_2_nest_as_built(tmp_path, capsys):
    # Done means (issue 12): `meshgen family --levels 3 --ratio 2` on the default case nests and
    # prints what it rounded. The nodes are read back from the MSH files by meshio.
    out = tmp_path / "fam"
    assert main(["family", "--levels", "3", "--ratio", "2", "--format", "msh", "-o", str(out)]) == 0
    text = capsys.readouterr().out
    for line in ("upstream: 42 -> 44", "wake: 26 -> 28", "wall-normal: 75 -> 76"):
        assert line in text
    pts = [read_points(out / f"level-{k}" / "fairing-strip.msh") for k in range(3)]
    for fine, coarse in itertools.pairwise(pts):
        # every coarse node is a fine node: within 1e-12 m, far below the smallest spacing (1.5e-5 m)
        assert cKDTree(fine).query(coarse)[0].max() <= 1e-12
        assert len(fine) > len(coarse)
    manifest = json.loads((out / "family.json").read_text())
    assert manifest["nesting"]["rounded"] == {"upstream": [42, 44], "wake": [26, 28], "wall-normal": [75, 76]}
    assert [lv["ratio_to_next"] for lv in manifest["levels"]] == [2.0, 2.0, None]
    for lv in manifest["levels"]:
        assert set(lv["judgement"]) >= {"cells", "h", "first_cell_height", "y_plus_judged_range",
                                        "max_growth_wall_normal", "max_growth_streamwise",
                                        "cells_in_delta99", "warnings"}
    assert manifest["levels"][2]["judgement"]["warnings"]  # level 2 is beyond the growth ceiling


def test_keep_counts_keeps_them_and_warns(capsys):
    st, warnings = family([], 3, 2.0, keep_counts=True)
    assert counts_of(st.members[0].plan) == DEFAULT_COUNTS
    assert any("will not nest" in w and "upstream 42" in w and "wall-normal 75" in w for w in warnings)
    assert st.header["nesting"]["rounded"] == {}


def test_dry_run_judges_every_level_and_writes_nothing(tmp_path, monkeypatch, capsys):
    monkeypatch.chdir(tmp_path)
    assert main(["family", "--levels", "3", "--ratio", "2", "--dry-run", "-o", str(tmp_path / "f")]) == 0
    out = capsys.readouterr().out
    assert list(tmp_path.iterdir()) == []
    rows = [line.split()[0] for line in out.splitlines() if line.startswith("level-")]
    assert rows == ["level-0", "level-1", "level-2"]
    assert "floors (common practice)" in out and "dry run, nothing written" in out
