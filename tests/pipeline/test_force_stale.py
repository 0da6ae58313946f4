"""--force into a folder holding another build: no file of the previous build survives
beside the new plan.json looking like part of it."""

import json

import meshio

from meshgen.pipeline.build import build_case

# a small laminar case and a different one (another Reynolds number), both quick to build
SMALL = ["flow.fluid=", "flow.velocity=", "flow.reynolds=1e5", "flow.length=1.0"]
OTHER = ["flow.fluid=", "flow.velocity=", "flow.reynolds=3e4", "flow.length=1.0"]


def test_force_removes_files_of_the_previous_build_it_does_not_rewrite(tmp_path):
    out = tmp_path / "run"
    build_case(None, SMALL, out, ["msh", "vtu", "su2", "polymesh"], pictures=False)
    stem = json.loads((out / "plan.json").read_text())["case"]
    assert (out / f"{stem}.vtu").exists() and (out / "constant" / "polyMesh").is_dir()

    build_case(None, OTHER, out, ["msh"], force=True, pictures=False)
    d = json.loads((out / "plan.json").read_text())
    assert d["reynolds"] == 3e4
    # the VTU, SU2 and polyMesh of the Re = 1e5 build are gone: left beside the new
    # plan.json they would pass for meshes of the Re = 3e4 case
    assert not (out / f"{stem}.vtu").exists()
    assert not (out / f"{stem}.su2").exists()
    assert not (out / "constant" / "polyMesh").exists()
    # what is left is what the new plan.json lists (and the folder lock's own files)
    left = {p.name for p in out.iterdir() if not p.name.startswith(".")}
    assert left == {p.split("/")[0] for p in d["files"]} | {"plan.json"}
    # and the MSH is the new one (meshio reads its points back: the cell count matches)
    m = meshio.read(out / f"{stem}.msh", file_format="gmsh")
    assert sum(len(c.data) for c in m.cells if c.type == "quad") == d["cells"]


def test_force_leaves_files_the_previous_build_did_not_write(tmp_path):
    out = tmp_path / "run"
    build_case(None, SMALL, out, ["msh", "vtu"], pictures=False)
    mine = out / "notes.txt"
    mine.write_text("the user's own file\n")
    build_case(None, OTHER, out, ["msh"], force=True, pictures=False)
    assert mine.read_text() == "the user's own file\n"
