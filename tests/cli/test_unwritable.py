"""Outputs into folders that cannot be written, or through a dangling link: exit 2 with one
line, no traceback (issue 11, items 11 and 13).

Root may write anywhere a permission allows, so as root the read-only folder is a tmpfs
mounted read-only (skipped where mount is not permitted); otherwise a folder with mode 0555.
"""

import os
import shutil
import subprocess
import tempfile
from pathlib import Path

import pytest

from meshgen.cli import main

RE = ["--set", "flow.fluid=", "--set", "flow.velocity=", "--set", "flow.reynolds=1e5"]
RESULTS = "h,phi\n0.1,1.0\n0.2,1.1\n0.4,1.3\n"


@pytest.fixture
def read_only():
    """A function that makes an existing empty folder read-only for the test's duration."""
    mounted, chmodded = [], []

    def make(folder: Path) -> Path:
        folder.mkdir(parents=True, exist_ok=True)
        if os.geteuid() != 0:
            os.chmod(folder, 0o555)
            chmodded.append(folder)
            return folder
        if shutil.which("mount") is None:
            pytest.skip("no mount here")
        proc = subprocess.run(["mount", "-t", "tmpfs", "-o", "ro,size=64k", "tmpfs", str(folder)],
                              capture_output=True, text=True, check=False)
        if proc.returncode != 0:
            pytest.skip(f"mount not permitted here: {proc.stderr.strip()}")
        mounted.append(folder)
        return folder

    yield make
    for folder in mounted:
        subprocess.run(["umount", str(folder)], check=False)
    for folder in chmodded:
        os.chmod(folder, 0o755)


def _one_error(capsys, expected: str) -> str:
    err = capsys.readouterr().err
    lines = [ln for ln in err.splitlines() if ln.strip()]
    assert len(lines) == 1 and lines[0].startswith("error:") and "Traceback" not in err, err
    assert expected in lines[0], lines[0]
    return lines[0]


def test_init_into_a_read_only_folder(tmp_path, read_only, capsys):
    ro = read_only(tmp_path / "ro")
    assert main(["init", "roof-panel-wind", "-o", str(ro / "x.toml")]) == 2
    _one_error(capsys, "not writable")


def test_polymesh_into_a_read_only_constant_folder(tmp_path, read_only, capsys):
    out = tmp_path / "o"
    read_only(out / "constant")
    assert main(["build", *RE, "--format", "polymesh", "--no-pictures", "-o", str(out)]) == 2
    _one_error(capsys, f"{out / 'constant'}: folder is not writable")
    assert sorted(p.name for p in out.iterdir()) == ["constant"]  # nothing else written


@pytest.mark.parametrize("command", ["gci", "domain"])
def test_a_plot_into_a_read_only_folder(tmp_path, read_only, capsys, command, monkeypatch):
    """Before: domain --plot exited 1 after printing its table; gci ended in a traceback."""
    monkeypatch.chdir(tmp_path)
    Path("r.csv").write_text(RESULTS if command == "gci" else "height_factor,cd\n10,1.02\n20,1\n")
    ro = read_only(tmp_path / "ro")
    assert main([command, "r.csv", "--plot", str(ro / "p.png")]) == 2
    _one_error(capsys, "not writable")


def test_build_into_a_dangling_link(tmp_path, capsys):
    (tmp_path / "out").symlink_to(tmp_path / "gone")
    assert main(["build", *RE, "--no-pictures", "-o", str(tmp_path / "out")]) == 2
    _one_error(capsys, "is a symbolic link to")
    assert not (tmp_path / "gone").exists()


@pytest.mark.parametrize("argv", [["inspect", "m.su2", "--pictures", "link/pics"],
                                  ["gci", "r.csv", "--plot", "link/p.png"]])
def test_pictures_through_a_dangling_link(tmp_path, capsys, monkeypatch, argv):
    monkeypatch.chdir(tmp_path)
    Path("r.csv").write_text(RESULTS)
    Path("link").symlink_to(tempfile.gettempdir() + "/meshgen-no-such-folder")
    assert main(argv) == 2
    _one_error(capsys, "is a symbolic link to")
