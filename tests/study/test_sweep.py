"""Domain sweeps: one mesh per combination, only the domain changes, the manifest."""

import json
import subprocess

import meshio
import numpy as np
import pytest
from samples import run_cli

from meshgen.core.errors import InputError
from meshgen.study.sweep import SWEEP_KEYS, parse_vary, sweep_study, variant_name

# A Reynolds-number case (no fluid, no CoolProp import), turbulent at Re_L = 1e6 with the
# default wall-normal distribution (first cell from y+ = 1, growth 1.2 up to the cap of
# 0.5 delta99, then uniform): about 4000 cells per variant.
RE_L, L = 1e6, 1.0
SMALL = [
    "name=small", "flow.fluid=", "flow.velocity=", f"flow.reynolds={RE_L}", f"flow.length={L}",
    "wall.growth_ratio=1.2",
    "streamwise.leading_edge_spacing=0.005", "streamwise.trailing_edge_spacing=0.005",
    "streamwise.growth_ratio=1.15", "streamwise.max_spacing=0.04",
]
# Prandtl's 1/7-power law delta99 = 0.37 x Re_x^-0.2 (Schlichting; shared/references.md,
# "Turbulent flat plate", from memory there), the thickness the domain height is scaled by.
DELTA99_END = 0.37 * L * RE_L**-0.2
FACTORS, UPSTREAMS = (10.0, 15.0), (0.5, 1.0)


def sets(overrides):
    return [a for o in overrides for a in ("--set", o)]





def sweep(vary, overrides=SMALL):
    return sweep_study(None, overrides, vary, ["msh"], ["sweep"])


@pytest.fixture(scope="module")
def built(tmp_path_factory):
    out = tmp_path_factory.mktemp("sweep") / "s"
    argv = ["sweep", *sets(SMALL), "--vary", "domain.height_factor=10,15", "--vary", "domain.upstream=0.5,1",
            "--format", "msh", "-o", str(out), "--workers", "2"]
    assert run_cli(argv) == 0
    return out, json.loads((out / "sweep.json").read_text())


def read_msh(path):
    m = meshio.read(path, file_format="gmsh")
    return m.points, np.concatenate([c.data for c in m.cells if c.type == "quad"])


def inlet_y(points):
    """Wall-normal node positions on the inlet (placed exactly, not interpolated by gmsh)."""
    return np.sort(points[points[:, 0] == points[:, 0].min(), 1])


def test_one_folder_per_combination(built):
    out, manifest = built
    names = [v["name"] for v in manifest["variants"]]
    assert names == ["height_factor=10_upstream=0.5", "height_factor=10_upstream=1",
                     "height_factor=15_upstream=0.5", "height_factor=15_upstream=1"]
    assert sorted(p.name for p in out.iterdir() if p.is_dir()) == names
    assert [tuple(v["values"].values()) for v in manifest["variants"]] == \
        [(f, u) for f in FACTORS for u in UPSTREAMS]
    assert manifest["vary"] == {"domain.height_factor": [10.0, 15.0], "domain.upstream": [0.5, 1.0]}


def test_only_the_domain_changes(built):
    out, manifest = built
    n = manifest["near_wall_nodes"]
    assert n >= 20  # common practice: 20 or more cells inside delta99
    ys = {v["name"]: inlet_y(read_msh(out / v["name"] / "small.msh")[0]) for v in manifest["variants"]}
    ref = ys[manifest["variants"][0]["name"]]
    assert ref[n - 1] <= DELTA99_END < ref[n]
    for v in manifest["variants"]:
        y = ys[v["name"]]
        assert np.array_equal(y[:n], ref[:n])  # the same first n wall-normal nodes, bit for bit
        assert v["first_cell_height"] == manifest["variants"][0]["first_cell_height"]
        assert y[1] - y[0] == pytest.approx(v["first_cell_height"], rel=1e-11)  # 12 digits kept
        factor, upstream = v["values"]["domain.height_factor"], v["values"]["domain.upstream"]
        assert y[-1] == pytest.approx(factor * DELTA99_END, rel=1e-12)  # H = height_factor * delta99(L)
        pts, quads = read_msh(out / v["name"] / "small.msh")
        assert pts[:, 0].min() == pytest.approx(-upstream * L, rel=1e-12)
        assert v["extent"]["x"] == pytest.approx([-upstream * L, 1.5 * L], rel=1e-12)
        assert v["extent"]["y"] == pytest.approx([0.0, factor * DELTA99_END], rel=1e-11)
        assert v["cells"] == quads.shape[0]
    # the taller domain has more cells above the layer, the longer run more upstream
    cells = {tuple(v["values"].values()): v["cells"] for v in manifest["variants"]}
    assert cells[(15.0, 0.5)] > cells[(10.0, 0.5)] and cells[(10.0, 1.0)] > cells[(10.0, 0.5)]


def test_manifest_checksums_match_sha256sum(built):
    # GNU coreutils' sha256sum as the independent reader (FIPS 180-4 SHA-256).
    out, manifest = built
    assert manifest["kind"] == "sweep"
    for v in manifest["variants"]:
        assert v["status"] == "built" and f"{v['name']}/small.msh" in v["files"]
        got = subprocess.run(["sha256sum", *sorted(v["files"])], cwd=out, capture_output=True, text=True,
                             check=True)
        assert {name: sha for sha, name in (line.split("  ", 1) for line in got.stdout.splitlines())} == \
            v["files"]


def test_keys_outside_the_domain_are_refused_with_the_valid_list():
    with pytest.raises(InputError) as exc:
        parse_vary(["wall.y_plus=1,2"])
    assert "wall.y_plus" in exc.value.problems[0]
    assert all(k in exc.value.problems[0] for k in SWEEP_KEYS)


@pytest.mark.parametrize("vary, message", [
    (["domain.height_factor=10,abc"], "'abc' is not a finite number"),
    (["domain.height_factor=10,10.0"], "given twice"),
    (["domain.height_factor=10", "domain.height_factor=20"], "given twice"),
    (["domain.upstream"], "expected KEY=V1,V2"),
    ([], "at least one"),
])
def test_bad_vary_is_refused(vary, message):
    with pytest.raises(InputError, match=message):
        parse_vary(vary)


def test_bad_value_names_variant_and_field(tmp_path, monkeypatch):
    monkeypatch.chdir(tmp_path)
    with pytest.raises(InputError) as exc:
        run_cli(["sweep", *sets(SMALL), "--vary", "domain.height_factor=0.5,10"])
    text = "\n".join(exc.value.problems)
    assert "variant height_factor=0.5" in text and "domain.height_factor" in text
    assert list(tmp_path.iterdir()) == []  # nothing written


def test_wall_cells_with_a_height_sweep_is_refused():
    cells = [*SMALL, "wall.y_plus=", "wall.cells=40"]
    with pytest.raises(InputError, match=r"wall\.cells = 40.*--set wall\.cells="):
        sweep(["domain.height_factor=10,15"], cells)
    # with the count fixed, the ratio follows from H: the near-wall nodes would indeed move
    a, b = (sweep([f"domain.upstream={u}"], cells + [f"domain.height_factor={f}"])[0].members[0].plan
            for u, f in ((0.5, 10), (0.5, 15)))
    assert not np.allclose(a.y[1:5], b.y[1:5], rtol=1e-6)
    # moving only the inlet leaves them alone, so that sweep is allowed
    st, _ = sweep(["domain.upstream=0.5,1"], cells)
    ya, yb = (m.plan.y for m in st.members)
    assert np.array_equal(ya, yb)


def test_too_low_a_top_is_caught_before_building():
    # At H = 1.5 delta99 the growth up to the cap (0.5 delta99 at g = 1.2) does not fit.
    with pytest.raises(InputError, match="variant height_factor=1.5 changes"):
        sweep(["domain.height_factor=1.5,20"])


def test_span_variants_are_three_d():
    st, _ = sweep(["domain.span=0,0.1"], SMALL + ["domain.span_cells=4"])
    flat, deep = (m.plan for m in st.members)
    assert flat.z is None and deep.z.size == 5 and deep.z[-1] == pytest.approx(0.1 * L)
    assert deep.cell_count == 4 * flat.cell_count
    assert st.members[1].record["extent"]["z"] == pytest.approx([0.0, 0.1])


def test_variant_names_are_sanitised():
    assert variant_name([("domain.height_factor", 12.5), ("domain.span", 1e-5)]) == \
        "height_factor=12.5_span=1e-05"
    assert variant_name([("domain.upstream", 1 / 3)]) == "upstream=0.333333333333"
