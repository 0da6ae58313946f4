"""Every format on every template, 2-D and 3-D: the independent readers find every group
with as many facets as the Mesh has, and as many cells as the plan."""

import json
import shutil
import subprocess

import h5py
import meshio
import numpy as np
import pytest

from meshgen.case import TEMPLATES_DIR as TEMPLATE_DIR
from meshgen.case import load_case
from meshgen.cli import main
from meshgen.io.readers.foam import read_polymesh
from meshgen.meshing.builder import build_mesh
from meshgen.planning.plan import make_plan

TEMPLATES = sorted(p.stem for p in TEMPLATE_DIR.glob("*.toml"))
ALL = ["msh", "su2", "polymesh", "cgns", "plot3d", "vtu"]
#: (template, extra overrides): each template as given, and one forced into 3-D.
CASES = [(t, []) for t in TEMPLATES] + [("hull-strip-water", ["domain.span=0.05", "domain.span_cells=3"])]


@pytest.fixture(scope="module", params=CASES, ids=[f"{t}{'-3d' if o else ''}" for t, o in CASES])
def built(request, tmp_path_factory):
    template, overrides = request.param
    out = tmp_path_factory.mktemp(template)
    path = TEMPLATE_DIR / f"{template}.toml"
    argv = ["build", str(path), "-o", str(out), "--no-pictures", "--force"]
    for o in overrides:
        argv += ["--set", o]
    for f in ALL:
        argv += ["--format", f]
    assert main(argv) == 0
    plan = make_plan(load_case(path, overrides))
    mesh = build_mesh(plan)
    return out, plan, mesh


def test_msh_groups_via_gmsh_reader_and_meshio(built):
    out, plan, mesh = built
    m = meshio.read(out / f"{plan.case.name}.msh", file_format="gmsh")
    sizes = {name: sum(len(ix) for ix in blocks) for name, blocks in m.cell_sets.items()
             if name != "gmsh:bounding_entities"}
    assert sizes == {**mesh.group_sizes(), mesh.cell_group: plan.cell_count}


def test_su2_markers(built):
    out, plan, mesh = built
    path = out / f"{plan.case.name}.su2"
    m = meshio.read(path, file_format="su2")  # meshio's SU2 reader, independent of ours
    cell_type = "quad" if plan.dim == 2 else "hexahedron"
    assert sum(len(c.data) for c in m.cells if c.type == cell_type) == plan.cell_count
    # and a plain parse of the marker sections (SU2 native format: MARKER_TAG / MARKER_ELEMS)
    text = path.read_text().splitlines()
    tags = {ln.split("=")[1].strip(): int(text[i + 1].split("=")[1]) for i, ln in enumerate(text)
            if ln.startswith("MARKER_TAG=")}
    assert tags == mesh.group_sizes()
    ndime = next(int(ln.split("=")[1]) for ln in text if ln.startswith("NDIME="))
    assert ndime == plan.dim


def test_polymesh_patches(built):
    out, plan, mesh = built
    pm = read_polymesh(out)
    counts = {name: n for name, (_, _, n) in pm["patches"].items()}
    expected = mesh.group_sizes()
    if plan.dim == 2:  # one-layer extrusion: front and back are the 2-D cells
        expected = {**expected, "front": plan.cell_count, "back": plan.cell_count}
        assert pm["patches"]["front"][0] == "empty" and pm["patches"]["back"][0] == "empty"
    assert counts == expected
    assert pm["n_cells"] == plan.cell_count
    assert pm["patches"][plan.case.names.wall][0] == "wall"


@pytest.mark.skipif(shutil.which("cgnscheck") is None, reason="cgnscheck (Debian cgns-convert) not installed")
def test_cgns_passes_cgnscheck_and_counts(built):
    out, plan, mesh = built
    path = out / f"{plan.case.name}.cgns"
    res = subprocess.run(["cgnscheck", str(path)], capture_output=True, text=True, timeout=120, check=False)
    assert "ERROR" not in res.stdout.upper().replace("0 ERRORS", ""), res.stdout[-2000:]
    with h5py.File(path, "r") as f:
        base = next(v for v in f.values() if isinstance(v, h5py.Group) and v.attrs["label"].tobytes().startswith(b"CGNSBase_t"))
        zones = [z for z in base.values() if isinstance(z, h5py.Group) and z.attrs["label"].tobytes().startswith(b"Zone_t")]
        cells = sum(int(np.prod(np.asarray(z[" data"]).reshape(-1)[plan.dim: 2 * plan.dim])) for z in zones)
        bc_names = {bc.attrs["name"].tobytes().rstrip(b"\0").decode().split("_")[0]
                    for z in zones if "ZoneBC" in z for bc in z["ZoneBC"].values()}
    assert cells == plan.cell_count
    assert {n.split("_")[0] for n in mesh.group_sizes()} <= bc_names


@pytest.mark.skipif(shutil.which("plot3d_to_cgns") is None, reason="plot3d_to_cgns not installed")
def test_plot3d_read_by_plot3d_to_cgns(built, tmp_path):
    out, plan, mesh = built
    grid = out / f"{plan.case.name}.xyz"
    target = tmp_path / "from_p3d.cgns"
    res = subprocess.run(["plot3d_to_cgns", "-u", "-d", str(grid), str(target)], capture_output=True,
                         text=True, timeout=120, check=False)
    assert res.returncode == 0 and target.is_file(), res.stdout + res.stderr
    side = json.loads((out / f"{plan.case.name}.p3d.json").read_text())
    assert {g["name"] for g in side["groups"]} == set(mesh.group_sizes())
    nodes = sum(b["ni"] * b["nj"] * b["nk"] for b in side["blocks"])
    ni, nj = plan.x.size, plan.y.size
    nk = 1 if plan.z is None else plan.z.size
    # blocks share their interface node columns
    assert nodes == (ni + len(side["blocks"]) - 1) * nj * nk
