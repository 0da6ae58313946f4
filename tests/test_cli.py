"""The command line, called in-process through main(argv)."""

import json
from pathlib import Path

import meshio
import pytest

from meshgen.cli import main

TEMPLATES = sorted(p.stem for p in (Path(__file__).parents[1] / "meshgen" / "templates").glob("*.toml"))


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
    path = Path(__file__).parents[1] / "meshgen" / "templates" / f"{template}.toml"
    assert main(["build", str(path), "-o", str(tmp_path), "--no-pictures"]) == 0
    plan = json.loads((tmp_path / "plan.json").read_text())
    m = meshio.read(tmp_path / f"{template}.msh", file_format="gmsh")
    cell_type = "quad" if plan["dimension"] == 2 else "hexahedron"
    assert sum(len(c.data) for c in m.cells if c.type == cell_type) == plan["cells"]
    assert set(plan["groups"]) <= set(m.field_data)
