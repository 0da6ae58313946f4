"""Refinement families: nested levels, growth ratios, h and ratios, the manifest, published practice."""

import itertools
import json
import math
import re
import subprocess
import tomllib
from datetime import datetime

import meshio
import numpy as np
import pytest
from samples import run_cli
from scipy.spatial import cKDTree

from meshgen import __version__
from meshgen.core.errors import InputError
from meshgen.io.writers import FORMATS
from meshgen.study.family import family_study, representative_size
from meshgen.study.runner import Study, run_study

# A Reynolds-number case (no fluid, so no CoolProp import) with a pure geometric wall
# distribution (wall.cells with a growth ratio, first cell solved) and streamwise blocks of
# 20, 64 and 20 cells over 48 wall-normal cells: every count divides by 4, so the levels
# of an R = 2 family nest exactly down to level 2. 5376 cells on level 0.
SMALL = [
    "name=small", "flow.fluid=", "flow.velocity=", "flow.reynolds=1e6", "flow.length=1",
    "wall.y_plus=", "wall.cells=48", "wall.growth_ratio=1.15",
    "streamwise.leading_edge_spacing=0.005", "streamwise.trailing_edge_spacing=0.005",
    "streamwise.growth_ratio=1.15", "streamwise.max_spacing=0.016", "streamwise.far_spacing=0.1",
]
G_WALL = 1.15

# The NASA Turbulence Modeling Resource (TMR) zero-pressure-gradient flat plate
# (shared/references.md, "Grid families in published verification practice"): plate from
# x = 0 to 2 with Re = 5e6 per unit length, no block ahead of or behind it here, a first
# cell of 5e-7 of the unit reference length, 384 wall-normal cells and top at y ~ 1
# (height_factor 34 puts it at 1.0016 m); streamwise settings found to give 544 plate cells.
TMR = [
    "name=tmr", "flow.fluid=", "flow.velocity=", "flow.reynolds=1e7", "flow.length=2",
    "domain.upstream=0", "domain.downstream=0", "domain.height_factor=34",
    "wall.y_plus=", "wall.growth_ratio=", "wall.first_cell_height=5e-7", "wall.cells=384",
    "streamwise.leading_edge_spacing=1e-4", "streamwise.trailing_edge_spacing=1e-4",
    "streamwise.cells=544",
]


def sets(overrides):
    return [a for o in overrides for a in ("--set", o)]


def sets_formats():
    return [a for name in sorted(FORMATS) for a in ("--format", name)]





def read_msh(path):
    m = meshio.read(path, file_format="gmsh")
    return m.points, np.concatenate([c.data for c in m.cells if c.type == "quad"])


def is_subset(coarse, fine, tol=1e-12):
    """Every point of ``coarse`` is a point of ``fine``: within ``tol`` [m], far below the
    smallest spacing (4e-5 m here) and far above gmsh's round-off in the transfinite
    interpolation of inner nodes (6e-17 m measured)."""
    return bool(cKDTree(fine).query(coarse)[0].max() <= tol)


def _floats(obj):
    if isinstance(obj, float):
        yield obj
    elif isinstance(obj, dict):
        for v in obj.values():
            yield from _floats(v)
    elif isinstance(obj, list):
        for v in obj:
            yield from _floats(v)


def family(overrides, levels, ratio, formats=("msh",), keep_counts=False):
    return family_study(None, overrides, levels, ratio, list(formats), ["family"], keep_counts=keep_counts)


@pytest.fixture(scope="module")
def small_family(tmp_path_factory):
    out = tmp_path_factory.mktemp("family") / "f"
    # every registered format, so byte-identical reruns hold for all of them
    argv = ["family", *sets(SMALL), "--levels", "3", "--ratio", "2", *sets_formats(), "-o", str(out),
            "--workers", "2"]
    assert run_cli(argv) == 0
    return out, argv, json.loads((out / "family.json").read_text())


def test_integer_ratio_coarse_nodes_are_fine_nodes(small_family):
    # Integer r: the coarse nodes are exactly a subset of the fine nodes (design: refinement
    # families); read back from the written files by meshio, an independent reader.
    out = small_family[0]
    fine = read_msh(out / "level-0" / "small.msh")[0]
    for k in (1, 2):
        coarse, quads = read_msh(out / f"level-{k}" / "small.msh")
        assert quads.shape[0] == 5376 // 4**k  # 20 + 72 + 20 by 48 cells, each divisible by 4
        assert is_subset(coarse, fine)
    # the check can fail: with r = 1.5 the counts no longer divide and the nodes move
    st, _ = family(SMALL, 2, 1.5)
    p0, p1 = st.members[0].plan, st.members[1].plan
    assert not np.isin(p1.y, p0.y).all()


def test_geometric_growth_becomes_g_to_the_r():
    # Sampling every n-th node of a geometric series (ratio g, first cell a) gives cells of
    # ratio g^n with the first cell a (g^n - 1) / (g - 1): the geometric-series sum.
    st, _ = family(SMALL, 3, 2.0)
    a = st.members[0].plan.first_cell_height
    for m in st.members:
        n = 2 ** m.plan.level
        d = np.diff(m.plan.y)
        assert np.allclose(d[1:] / d[:-1], G_WALL**n, rtol=1e-9)
        assert m.plan.first_cell_height == pytest.approx(a * (G_WALL**n - 1) / (G_WALL - 1), rel=1e-9)
        assert m.record["growth_ratio"] == pytest.approx(G_WALL**n, rel=1e-9)
    # the default capped distribution (first cell from y+, growth up to the cap, no cell
    # count): 58 wall-normal cells at g = 1.15, so R = 2 nests and the growth near the wall
    # becomes g^2 as well
    st, _ = family(["flow.fluid=", "flow.velocity=", "flow.reynolds=1e6", "wall.growth_ratio=1.15"], 2, 2.0)
    fine, coarse = (m.plan for m in st.members)
    assert fine.y.size - 1 == 58 and np.array_equal(coarse.y, fine.y[::2])
    d = np.diff(coarse.y)
    assert np.allclose(d[1:5] / d[:4], 1.15**2, rtol=1e-9)


def test_built_wall_spacing_follows_the_plan(small_family):
    out, _, manifest = small_family
    for lv in manifest["levels"]:
        pts = read_msh(out / lv["name"] / "small.msh")[0]
        y = np.sort(pts[pts[:, 0] == pts[:, 0].min(), 1])  # the inlet's nodes
        assert y[1] - y[0] == pytest.approx(lv["first_cell_height"], rel=1e-9)
        assert (y[2] - y[1]) / (y[1] - y[0]) == pytest.approx(G_WALL ** (2 ** lv["level"]), rel=1e-6)


def test_h_and_ratio_from_the_written_meshes(small_family):
    # Celik et al. (2008) eq. 1: h = (area / N)^(1/2) in 2-D. Area and N are measured here
    # on the meshes meshio reads back (shoelace sum over the quads), not taken from the plan.
    out, _, manifest = small_family
    hs = []
    for lv in manifest["levels"]:
        pts, q = read_msh(out / lv["name"] / "small.msh")
        x, y = pts[q, 0], pts[q, 1]
        area = 0.5 * np.sum(x * np.roll(y, -1, axis=1) - np.roll(x, -1, axis=1) * y)
        h = math.sqrt(area / q.shape[0])
        assert lv["cells"] == q.shape[0]
        assert lv["h"] == pytest.approx(h, rel=1e-9)
        hs.append(h)
    assert manifest["h_dimension"] == 2
    for lv, h0, h1 in zip(manifest["levels"], hs, hs[1:]):
        assert lv["ratio_to_next"] == pytest.approx(h1 / h0, rel=1e-9)
        assert lv["ratio_to_next"] == pytest.approx(2.0, rel=1e-9)  # nested: N drops by exactly 4
    assert manifest["levels"][-1]["ratio_to_next"] is None


def test_checksums_match_sha256sum(small_family):
    # GNU coreutils' sha256sum is the independent reader of the manifest's SHA-256 (FIPS 180-4).
    out, _, manifest = small_family
    for lv in manifest["levels"]:
        assert lv["status"] == "built"
        assert {"small.msh", "small.vtu", "plan.json"} <= {f.split("/", 1)[1] for f in lv["files"]}
        names = sorted(lv["files"])
        got = subprocess.run(["sha256sum", *names], cwd=out, capture_output=True, text=True, check=True)
        assert dict(reversed(line.split("  ", 1)) for line in got.stdout.splitlines()) == \
            {n: lv["files"][n] for n in names}


def test_manifest_records_case_tool_arguments_and_figures(small_family):
    manifest = small_family[2]
    assert manifest["kind"] == "family" and manifest["meshgen_version"] == __version__
    # the arguments that decide the meshes, without -o and --workers
    assert manifest["arguments"] == ["family", *sets(SMALL), "--levels", "3", "--ratio", "2.0", *sets_formats()]
    assert tomllib.loads(manifest["case_toml"])["wall"]["cells"] == 48
    assert manifest["case_input"]["wall"] == {"cells": 48, "growth_ratio": 1.15}
    assert datetime.strptime(manifest["created"], "%Y-%m-%dT%H:%M:%SZ")
    st, _ = family(SMALL, 3, 2.0)
    for lv, m in zip(manifest["levels"], st.members):
        d = m.plan.to_dict()
        assert lv["name"] == f"level-{m.plan.level}" and lv["factor"] == 2.0 ** m.plan.level
        assert lv["y_plus_range"] == pytest.approx(d["y_plus_range"], rel=1e-11)
        assert lv["first_cell_height"] == pytest.approx(m.plan.first_cell_height, rel=1e-11)
    # floats are written with at most 12 significant digits
    floats = list(_floats(manifest))
    assert len(floats) > 20 and all(float(f"{v:.12g}") == v for v in floats)


def test_two_identical_runs_are_byte_identical(small_family, tmp_path):
    out, argv, _ = small_family
    again = tmp_path / "again"
    assert run_cli([a if a != str(out) else str(again) for a in argv]) == 0
    for lv in json.loads((again / "family.json").read_text())["levels"]:
        for rel in lv["files"]:
            assert (again / rel).read_bytes() == (out / rel).read_bytes(), rel
    strip = re.compile(r'^  "created": "[^"]*",\n', re.MULTILINE)
    a, b = ((d / "family.json").read_text() for d in (out, again))
    assert len(strip.findall(a)) == len(strip.findall(b)) == 1
    assert strip.sub("", a) == strip.sub("", b)


def test_nasa_tmr_five_grid_family_counts(tmp_path):
    # NASA TMR flat plate (shared/references.md): 544x384, 272x192, 136x96, 68x48, 34x24 cells.
    st, _ = family(TMR, 5, 2.0)
    counts = [(m.plan.x.size - 1, m.plan.y.size - 1) for m in st.members]
    assert counts == [(544, 384), (272, 192), (136, 96), (68, 48), (34, 24)]
    assert st.members[0].plan.domain_height == pytest.approx(1.0, abs=0.01)  # TMR: y in [0, 1]
    assert all(m.record["ratio_to_next"] == pytest.approx(2.0, rel=1e-12) for m in st.members[:-1])
    # build the three coarsest and check they nest ("every other point of the next finer one")
    coarse = Study(st.kind, st.members_key, st.header, st.members[2:])
    report = run_study(coarse, tmp_path, workers=2, stream=None)
    assert not report.failed
    meshes = [read_msh(tmp_path / m.name / "tmr.msh") for m in coarse.members]
    assert [q.shape[0] for _, q in meshes] == [136 * 96, 68 * 48, 34 * 24]
    assert is_subset(meshes[1][0], meshes[0][0]) and is_subset(meshes[2][0], meshes[1][0])


def test_non_integer_ratio_reports_the_effective_ratio():
    st, warnings = family(SMALL, 3, math.sqrt(2))
    assert not any("Celik" in w for w in warnings)  # sqrt(2) > 1.3
    recs = [m.record for m in st.members]
    for a, b in itertools.pairwise(recs):
        assert a["ratio_to_next"] == pytest.approx(math.sqrt(a["cells"] / b["cells"]), rel=1e-12)
        assert a["ratio_to_next"] == pytest.approx(math.sqrt(2), rel=0.05)  # counts are rounded
    assert recs[0]["ratio_to_next"] != pytest.approx(math.sqrt(2), rel=1e-6)


@pytest.mark.parametrize("ratio", ["1.1", "1.0", "0.5", "nan"])
def test_ratio_at_or_below_1_1_is_refused_and_nothing_written(ratio, tmp_path, monkeypatch):
    monkeypatch.chdir(tmp_path)
    with pytest.raises(InputError) as exc:
        run_cli(["family", *sets(SMALL), "--levels", "3", "--ratio", ratio])
    assert any(p.startswith(f"--ratio {float(ratio)}") for p in exc.value.problems)
    assert list(tmp_path.iterdir()) == []


def test_ratio_below_1_3_warns():
    # Celik et al. (2008) recommend a refinement factor r > 1.3.
    _, warnings = family(SMALL, 2, 1.2)
    assert any("1.3" in w and "Celik" in w for w in warnings)
    assert not any("Celik" in w for w in family(SMALL, 2, 1.3)[1])


def test_too_coarse_level_is_refused_with_level_and_count():
    with pytest.raises(InputError) as exc:
        family(SMALL, 5, 2.0, keep_counts=True)
    text = "\n".join(exc.value.problems)
    # level 4 divides by 16: 20 upstream cells round to 1, 48 wall-normal cells to 3
    assert "level 4" in text and "upstream block with 1 streamwise" in text and "3 wall-normal" in text
    assert "at most 4 levels" in text
    # nested (the default): 20 upstream cells become 32, so 2 on level 4; 48 still gives 3
    with pytest.raises(InputError) as exc:
        family(SMALL, 5, 2.0)
    text = "\n".join(exc.value.problems)
    assert "3 wall-normal" in text and "upstream" not in text and "at most 4 levels" in text
    # level 3 (factor 8) still fits: 3 + 9 + 3 streamwise cells (20/8 = 2.5 rounds half up, 72/8 = 9) over 6
    assert family(SMALL, 4, 2.0)[0].members[-1].plan.cell_count == (3 + 9 + 3) * 6


def test_three_d_family_uses_the_volume():
    # Celik et al. (2008) eq. 1: h = (volume / N)^(1/3) in 3-D.
    st, _ = family(SMALL + ["domain.span=0.2", "domain.span_cells=8"], 3, 2.0)
    assert st.header["h_dimension"] == 3
    for m in st.members:
        p = m.plan
        vol = (p.x[-1] - p.x[0]) * p.y[-1] * 0.2
        assert m.record["h"] == pytest.approx((vol / p.cell_count) ** (1 / 3), rel=1e-12)
        assert p.z.size - 1 == 8 // 2**p.level
    # a one-layer extrusion stays one layer: its h is the 2-D one
    one, _ = family(SMALL + ["domain.span=0.2"], 2, 2.0)
    flat, _ = family(SMALL, 2, 2.0)
    assert one.header["h_dimension"] == 2
    assert [m.record["h"] for m in one.members] == [m.record["h"] for m in flat.members]
    assert representative_size(one.members[1].plan)[0] == flat.members[1].record["h"]
    with pytest.raises(InputError, match="spanwise"):
        family(SMALL + ["domain.span=0.2", "domain.span_cells=2"], 3, 2.0)


def test_manifest_is_read_by_the_gci_reader(small_family):
    # the grid-convergence module sizes CSV rows by the family manifest's levels
    from meshgen.study.results import read_family_levels

    out, _, manifest = small_family
    levels = read_family_levels(out / "family.json")
    assert [(lv["name"], lv["cells"], lv["h"]) for lv in levels] == \
        [(lv["name"], lv["cells"], lv["h"]) for lv in manifest["levels"]]


def test_coarse_levels_carry_their_own_resolution_warning():
    from meshgen.case import load_case
    from meshgen.planning.plan import make_plan
    from meshgen.planning.refine import coarsen

    fine = make_plan(load_case(None, ["wall.growth_ratio=1.05"]))
    assert not any("inside delta99" in w for w in fine.warnings)
    coarse = coarsen(fine, 16, level=4)
    assert any("inside delta99" in w for w in coarse.warnings)


def test_coarsened_counts_round_half_up():
    from meshgen.planning.refine import _count

    assert _count(20, 8, 1) == 3  # 2.5 -> 3 (Python's round would give 2)
    assert _count(544, 2, 1) == 272


def test_a_family_that_will_not_nest_says_so():
    from meshgen.case import load_case
    from meshgen.planning.plan import make_plan
    from meshgen.planning.refine import block_counts
    from meshgen.study.nesting import nesting_note

    fine = block_counts(make_plan(load_case(None, SMALL)))  # 20 + 72 + 20 by 48 cells
    assert nesting_note(2.0, 3, True, fine)[1] == []  # every count divides by 4
    text = " ".join(nesting_note(2.0, 5, True, fine)[1])  # 16 divides 48 but not 20 or 72
    assert "upstream 20" in text and "plate 72" in text and "wall-normal" not in text
    assert "no level nests" in " ".join(nesting_note(1.5, 3, False, fine)[1])
