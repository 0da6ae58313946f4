"""meshgen inspect: the same figures from every written format as from the Mesh in memory."""

import json

import numpy as np
import pytest

from meshgen.case import load_case
from meshgen.cli import main
from meshgen.io.readers.foam import polymesh_to_mesh
from meshgen.meshing.builder import build_mesh
from meshgen.meshing.verify import cell_measures, verify_mesh
from meshgen.planning.plan import make_plan
from meshgen.reports.quality import quality_report

OVERRIDES = ["domain.span=0.05", "domain.span_cells=2"]


@pytest.fixture(scope="module")
def written(tmp_path_factory):
    out = tmp_path_factory.mktemp("inspect")
    argv = ["build", "-o", str(out), "--no-pictures"]
    for o in OVERRIDES:
        argv += ["--set", o]
    for f in ("msh", "msh2", "vtu", "su2", "polymesh"):
        argv += ["--format", f]
    assert main(argv) == 0
    mesh = build_mesh(make_plan(load_case(None, OVERRIDES)))
    return out, mesh


@pytest.mark.parametrize("name", ["fairing-strip.msh", "fairing-strip.v2.msh", "fairing-strip.vtu", "fairing-strip.su2"])
def test_same_metrics_from_each_file(written, name, capsys):
    out, mesh = written
    assert main(["inspect", str(out / name), "--json"]) == 0
    from_file = json.loads(capsys.readouterr().out)
    in_memory = json.loads(json.dumps(quality_report(mesh)))
    for metric in ("aspect_ratio", "edge_ratio", "skew", "scaled_jacobian", "volume"):
        a = from_file["metrics"][metric]
        b = in_memory["metrics"][metric]
        for key in ("min", "max", "mean"):
            # abs: skew is 0 up to round-off, and MSH 2.2 is ASCII (about 16 digits)
            assert a[key] == pytest.approx(b[key], rel=1e-9, abs=1e-9), (metric, key)


def test_polymesh_folder_reads_back_as_the_same_hexahedra(written, capsys):
    out, mesh = written
    back = polymesh_to_mesh(out)
    verify_mesh(back, mesh.n_points, mesh.n_cells)
    assert back.group_sizes() == mesh.group_sizes()
    np.testing.assert_allclose(np.sort(cell_measures(back)), np.sort(cell_measures(mesh)), rtol=1e-9)
    assert main(["inspect", str(out)]) == 0
    assert "Mesh quality" in capsys.readouterr().out


def test_pictures_from_inspect(written, tmp_path):
    out, _ = written
    assert main(["inspect", str(out / "fairing-strip.msh"), "--pictures", str(tmp_path)]) == 0
    pngs = sorted(tmp_path.glob("*.png"))
    assert pngs and all(p.read_bytes()[:4] == b"\x89PNG" for p in pngs)


@pytest.mark.parametrize("content, name", [(b"not a mesh", "x.msh"), (b"<VTKFile>", "x.vtu"),
                                           (b"NDIME= 2\n", "x.su2"), (b"x", "x.stl")])
def test_unreadable_files_are_exit_2(tmp_path, content, name, capsys):
    p = tmp_path / name
    p.write_bytes(content)
    assert main(["inspect", str(p)]) == 2
    err = capsys.readouterr().err
    assert err.startswith("error:") and "Traceback" not in err


def test_untagged_mesh_is_exit_2(tmp_path, capsys):
    # an MSH file with cells but no physical groups
    import gmsh  # noqa: F401

    from meshgen.meshing.gmsh_session import gmsh_session

    p = tmp_path / "bare.msh"
    with gmsh_session() as g:
        g.model.occ.addRectangle(0, 0, 0, 1, 1)
        g.model.occ.synchronize()
        g.model.mesh.generate(2)
        g.write(str(p))
    assert main(["inspect", str(p)]) == 2
    assert "Traceback" not in capsys.readouterr().err


@pytest.mark.filterwarnings("error::RuntimeWarning")
@pytest.mark.parametrize("name", ["fairing-strip.su2", "fairing-strip.v2.msh"])
def test_a_non_finite_coordinate_is_an_error_not_a_clean_report(written, name, tmp_path, capsys):
    """Before: a NaN coordinate gave "Errors: None" (issue 11, item 7), and --json wrote NaN."""
    out, _ = written
    text = (out / name).read_text()
    marker = "NPOIN=" if name.endswith(".su2") else "$Nodes"
    head, _, rest = text.partition(marker)
    lines = rest.split("\n")
    row = 5 if name.endswith(".su2") else 4  # a node row in either file
    lines[row] = " ".join(["nan" if k == 1 else v for k, v in enumerate(lines[row].split())])
    bad = tmp_path / name
    bad.write_text(head + marker + "\n".join(lines))
    assert main(["inspect", str(bad), "--json"]) == 0
    def refuse(c):
        raise ValueError(c)
    report = json.loads(capsys.readouterr().out, parse_constant=refuse)
    assert report["errors"] and "1 node has a non-finite coordinate" in report["errors"][0], report["errors"]
    assert main(["inspect", str(bad)]) == 0
    text = capsys.readouterr().out
    assert "non-finite coordinate" in text and "None." not in text.split("## Errors")[1].split("##")[0]
