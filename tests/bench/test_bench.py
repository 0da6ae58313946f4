"""The benchmark's table and JSON on tiny sizes, and the fast exact checks it led to.

No timing is asserted here (speed is measured by ``python -m meshgen.bench``, never in
tests). The fast paths of verify_mesh and of the builder's check of gmsh's quads are
compared with the general checks they short-cut: the general path is the reference.
"""

import json

import numpy as np
import pytest

from meshgen import bench
from meshgen.bench import config as bench_config
from meshgen.core.errors import MeshError
from meshgen.io.writers import FORMATS as ALL_FORMATS

FORMATS = {n: f for n, f in ALL_FORMATS.items() if not f.setup}  # the bench times mesh writers
from meshgen.meshing.builder import _is_each_planned_cell_once
from meshgen.meshing.mesh import Block, Group, Mesh, Patch, extrude, structured_mesh
from meshgen.meshing.verify import (
    _count_inverted,
    _count_inverted_grid,
    _verify_faces,
    corner_jacobians,
    verify_mesh,
)

TINY = bench.Config(sizes=(2000, 4000), writer_cells=2000, solid=(1000, 2), family_cells=4000, repeat=1,
                    family_levels=2)


@pytest.fixture(scope="module")
def tiny(tmp_path_factory):
    root = tmp_path_factory.mktemp("bench")
    result = bench.run_bench(TINY, root / "bench.json", root / "work", say=lambda _: None)
    return result, root / "bench.json"


def test_every_row_is_in_the_table_and_the_json(tiny):
    result, path = tiny
    on_disk = json.loads(path.read_text())
    assert on_disk["rows"] == json.loads(json.dumps(result["rows"]))
    rows = on_disk["rows"]
    assert not [r for r in rows if r["name"] == "error"], [r.get("error") for r in rows]
    names = {(r["section"], r["name"]) for r in rows}
    cells = sorted({r["cells"] for r in rows if r["section"] == "build"})
    assert len(cells) == len(TINY.sizes)
    for n in cells:
        for name in ("baseline A (gmsh)", "baseline B (numpy raw)", "meshgen build (msh)", "  mesh + msh only"):
            assert [r for r in rows if r["name"] == name and r["cells"] == n], (name, n)
    bench_config._formats()  # registers su2 / polymesh when their modules exist
    assert {n for s, n in names if s == "writers"} == set(FORMATS)
    assert next(r for r in rows if r["section"] == "solid")["cells"] == 1000 * 2
    assert [r for r in rows if r["name"] == "meshgen build (msh, pictures)"]
    solid_writers = {r["name"]: r for r in rows if r["section"] == "solid writers"}
    assert set(solid_writers) == set(FORMATS)
    assert all(("skipped" in r) == (n in bench_config.NOT_STREAMED) for n, r in solid_writers.items())
    assert {r["name"] for r in rows if r["section"] == "startup"} == {
        "python -c 'import numpy'", "meshgen --help", "meshgen --version"}
    family = {n for s, n in names if s == "family"}
    assert family in ({"1 worker", "2 workers"}, {"not available"})
    text = bench.table(on_disk)
    for needle in ["baseline A (gmsh)", "baseline B (numpy raw)", "meshgen build (msh)", "goals:", "3-D", "family",
                   "writers, 3-D", "start-up", "efficiency",
                   on_disk["machine"]["cpu"], f"gmsh {on_disk['machine']['gmsh']}", *FORMATS]:
        assert needle in text, needle


def test_goals_and_exponent_are_reported(tiny):
    result, _ = tiny
    goals = {g["goal"]: g["status"] for g in result["goals"]}
    assert all(s in ("pass", "short", "not measured") for s in goals.values())
    assert any("within 1.2 x baseline A" in g for g in goals)
    assert any("6 GiB" in g for g in goals)
    assert any("3-D msh written at" in g for g in goals) and any("3-D cgns written at" in g for g in goals)
    assert any("pictures of" in g for g in goals) and any("meshgen --help within" in g for g in goals)
    assert any("2 workers" in g for g in goals)
    own = [f for f in FORMATS if f not in bench.GMSH_WRITTEN]
    assert all(any(f"writer {f} " in g for g in goals) for f in own)
    assert result["exponent"]["build"] is not None


def test_exponent_fit_recovers_a_power_law():
    cells = [1e5, 1e6, 4e6]
    assert bench.fit_exponent(cells, [3e-6 * c**1.25 for c in cells]) == pytest.approx(1.25)
    assert bench.fit_exponent([1e5], [1.0]) is None


def test_case_overrides_hit_the_cell_counts():
    for n in (4000, 100_000, 1_000_000):
        plan = bench_config._plan(bench.case_overrides(n))
        assert abs(plan.cell_count / n - 1) < 0.01
        assert len(plan.blocks) == 1  # one block: the rectangle of baseline A


# ---- the fast checks against the general ones -------------------------------------------


def _grid(dim3: bool) -> Mesh:
    x = np.array([-1, 0, 0.5, 1, 2.0])
    y = np.array([0, 0.1, 0.3, 1.0])
    blocks = (Block("upstream", 0, 1), Block("plate", 1, 3), Block("wake", 3, 4))
    groups = [("inlet", "inlet", (Patch("imin"),)), ("outlet", "outlet", (Patch("imax"),)),
              ("wall", "wall", (Patch("jmin", 1, 3),)),
              ("symmetry", "symmetry", (Patch("jmin", 0, 1), Patch("jmin", 3, 4))),
              ("farfield", "farfield", (Patch("jmax", 0, 4),))]
    m = structured_mesh(x, y, blocks, groups)
    return extrude(m, np.linspace(0, 0.5, 3)) if dim3 else m


def _with_facets(m: Mesh, k: int, facets: np.ndarray) -> Mesh:
    groups = list(m.groups)
    g = groups[k]
    groups[k] = Group(g.name, g.role, facets, g.patches)
    return Mesh(m.points, m.cells, tuple(groups), m.shape, m.blocks)


def _general(m: Mesh) -> str:
    try:
        _verify_faces(m)
    except MeshError as exc:
        return str(exc)
    return "ok"


def _fast(m: Mesh) -> str:
    try:
        verify_mesh(m)
    except MeshError as exc:
        return str(exc)
    return "ok"


@pytest.mark.parametrize("dim3", [False, True])
def test_structured_verify_agrees_with_the_general_check(dim3):
    m = _grid(dim3)
    assert _fast(m) == _general(m) == "ok"
    wall = m.group("wall").facets
    k = [g.name for g in m.groups].index("wall")
    reversed_one = wall.copy()
    reversed_one[0] = reversed_one[0][::-1]
    broken = {
        "reversed": _with_facets(m, k, reversed_one),
        "missing": _with_facets(m, k, wall[1:]),
        "twice": _with_facets(m, k, np.concatenate([wall, wall[:1]])),
    }
    for what, mesh in broken.items():
        assert _fast(mesh) == _general(mesh) != "ok", what
    if dim3:  # a rotated quad facet is the same outward face
        rotated = wall.copy()
        rotated[0] = np.roll(rotated[0], 1)
        assert _fast(_with_facets(m, k, rotated)) == "ok"


def test_renumbered_cells_take_the_general_path_and_pass():
    m = _grid(True)
    order = np.random.default_rng(0).permutation(m.n_cells)
    shuffled = Mesh(m.points, m.cells[order], m.groups, m.shape, m.blocks)
    assert _fast(shuffled) == "ok"
    doubled = Mesh(m.points, np.concatenate([m.cells, m.cells[:1]]), m.groups, m.shape, m.blocks)
    assert "shared by more than two cells" in _fast(doubled)


@pytest.mark.parametrize("dim3", [False, True])
def test_grid_jacobians_count_the_same_inverted_cells(dim3):
    m = _grid(dim3)
    pts = m.points.copy()
    pts[m.cells[2, 2], :2] = pts[m.cells[2, 0], :2] - 0.05  # folds cell 2 (and its neighbours)
    bent = Mesh(pts, m.cells, m.groups, m.shape, m.blocks)
    reference = int(np.count_nonzero(corner_jacobians(bent).min(axis=1) <= 0))
    assert reference > 0
    assert _count_inverted_grid(bent) == _count_inverted(bent) == reference
    assert "inverted or degenerate" in _fast(bent)


def test_builder_quad_check_finds_a_wrong_quad():
    ni, nj = 5, 4
    m = structured_mesh(np.arange(ni, dtype=float), np.arange(nj, dtype=float), (Block("plate", 0, ni - 1),), [])
    quads = m.cells[np.random.default_rng(1).permutation(m.n_cells)][:, [1, 2, 3, 0]]  # any order, any start
    assert _is_each_planned_cell_once(quads, ni, nj)
    twice = quads.copy()
    twice[0] = twice[1]
    assert not _is_each_planned_cell_once(twice, ni, nj)
    skew = quads.copy()
    skew[0] = [0, 1, ni + 2, ni]  # not a grid cell
    assert not _is_each_planned_cell_once(skew, ni, nj)
