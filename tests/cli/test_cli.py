"""The command line, called in-process through main(argv)."""

import json

import meshio
import pytest

from meshgen.case import TEMPLATES_DIR
from meshgen.cli import main

TEMPLATES = sorted(p.stem for p in TEMPLATES_DIR.glob("*.toml"))


def test_plan_json_keys(capsys):
    assert main(["plan", "--json"]) == 0
    d = json.loads(capsys.readouterr().out)
    for key in ("reynolds", "regime", "delta99_end", "domain_height", "first_cell_height",
                "growth_ratio", "cells", "caution"):
        assert key in d
    assert d["cells"] == sum(d["cells_per_block"].values())


def test_plan_table_carries_the_caution(capsys):
    assert main(["plan", "--set", "wall.y_plus=2"]) == 0
    out = capsys.readouterr().out
    assert "first-cell height" in out and "a-priori" in out and "licensed engineers" in out


def test_build_writes_files(tmp_path, capsys):
    out = tmp_path / "o"
    assert main(["build", "-o", str(out), "--no-pictures"]) == 0
    assert (out / "fairing-strip.msh").is_file() and (out / "plan.json").is_file()
    assert str(out) in capsys.readouterr().out
    # a second run refuses to overwrite, --force does
    assert main(["build", "-o", str(out), "--no-pictures"]) == 2
    assert main(["build", "-o", str(out), "--no-pictures", "--force"]) == 0


@pytest.mark.parametrize(
    "argv",
    [
        ["plan", "--set", "flow.reynolds=-1"],
        ["plan", "--set", "wall.growth_ratio=0.5"],
        ["plan", "--set", "nonsense"],
        ["plan", "missing-file.toml"],
        ["build", "--format", "nope"],
        ["build", "--set", "wall.y_plus=0"],
        ["build", "--bogus-flag"],
        ["init", "no-such-template"],
    ],
)
def test_bad_input_exit_2_and_nothing_written(argv, tmp_path, capsys, monkeypatch):
    monkeypatch.chdir(tmp_path)
    assert main(argv) == 2
    err = capsys.readouterr().err
    assert err.startswith("error:") and "Traceback" not in err
    assert list(tmp_path.iterdir()) == []


def test_output_path_that_is_a_file(tmp_path, capsys):
    f = tmp_path / "file"
    f.write_text("x")
    assert main(["build", "-o", str(f)]) == 2
    assert "is a file" in capsys.readouterr().err


def test_init_lists_and_writes(tmp_path, capsys):
    assert main(["init"]) == 0
    listing = capsys.readouterr().out
    assert all(t in listing for t in TEMPLATES) and len(TEMPLATES) >= 3
    target = tmp_path / "mine.toml"
    assert main(["init", TEMPLATES[0], "-o", str(target)]) == 0
    assert target.read_text().startswith("#")
    assert main(["plan", str(target)]) == 0


@pytest.mark.parametrize("template", TEMPLATES)
def test_every_template_builds(template, tmp_path):
    path = TEMPLATES_DIR / f"{template}.toml"
    assert main(["build", str(path), "-o", str(tmp_path), "--no-pictures"]) == 0
    plan = json.loads((tmp_path / "plan.json").read_text())
    m = meshio.read(tmp_path / f"{template}.msh", file_format="gmsh")
    cell_type = "quad" if plan["dimension"] == 2 else "hexahedron"
    assert sum(len(c.data) for c in m.cells if c.type == cell_type) == plan["cells"]
    assert set(plan["groups"]) <= set(m.field_data)


def test_gci_command_on_the_published_example(tmp_path, capsys):
    # Celik et al. (2008) Table 1: N = 18000, 8000, 4500; phi = 6.063, 5.972, 5.863
    # -> p = 1.53, phi_ext21 = 6.1685, GCI_fine21 = 2.2 %
    csv = tmp_path / "r.csv"
    csv.write_text("mesh,cells,phi\nfine,18000,6.063\nmedium,8000,5.972\ncoarse,4500,5.863\n")
    plot = tmp_path / "gci.png"
    assert main(["gci", str(csv), "--area", "1", "--json", "--plot", str(plot)]) == 0
    text = capsys.readouterr().out
    d = json.loads(text)
    res = d["quantities"]["phi"]["results"][0]
    assert round(res["p"], 2) == 1.53
    assert round(res["phi_ext21"], 4) == 6.1685
    assert round(100 * res["gci_fine21"], 1) == 2.2
    assert plot.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"


def test_gci_bad_csv_is_exit_2(tmp_path, capsys):
    csv = tmp_path / "r.csv"
    csv.write_text("mesh,phi\nfine,1.0\n")
    assert main(["gci", str(csv)]) == 2
    assert "Traceback" not in capsys.readouterr().err
