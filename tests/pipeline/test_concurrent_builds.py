"""Two runs into one output folder: the second stops with exit 2; the first is unharmed.

Before the lock (issue 11, item 2): a second ``--force`` build deleted the first's
temporary file and the first died with a traceback; two builds of different cases both
exited 0, leaving the MSH of one and plan.json and quality.json of the other.
"""

import json
import os
import subprocess
import sys
import time
from pathlib import Path

import meshio

from meshgen.cli import main
from meshgen.io.atomic import TMP_PREFIX
from meshgen.io.lock import folder_lock

#: About 6e5 cells: a build that takes a few seconds (as in test_faults.py).
BIG = ["--set", "streamwise.max_spacing=0.0006", "--set", "streamwise.far_spacing=0.002",
       "--set", "wall.growth_ratio=1.02", "--set", "wall.max_spacing=0.02"]
RE = ["--set", "flow.fluid=", "--set", "flow.velocity=", "--set", "flow.reynolds=1e6"]
#: A build that imports everything first, then waits for a line on stdin before it runs.
WAIT_THEN_RUN = ("import sys\nfrom meshgen.cli import main\nimport meshgen.pipeline.build, meshgen.planning.plan, "
                 "meshgen.meshing.builder, meshgen.io.writers, meshgen.reports.quality\n"
                 "sys.stdin.readline()\nsys.exit(main(sys.argv[1:]))\n")


def _wait_for_temp(out: Path, proc: subprocess.Popen, timeout: float = 120.0) -> bool:
    end = time.monotonic() + timeout
    while time.monotonic() < end and proc.poll() is None:
        if out.is_dir() and any(p.name.startswith(TMP_PREFIX) for p in out.iterdir()):
            return True
        time.sleep(0.005)
    return False


def test_a_second_build_while_the_first_writes(tmp_path):
    out = tmp_path / "o"
    # The second process is started first and waits with meshgen imported, so that it
    # runs while the first one is writing, not a second later.
    second = subprocess.Popen([sys.executable, "-c", WAIT_THEN_RUN, "build", *RE, "--set", 'name="second"',
                               "-o", str(out), "--format", "msh", "--no-pictures", "--force"],
                              stdin=subprocess.PIPE, stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True)
    first = subprocess.Popen([sys.executable, "-m", "meshgen", "build", *RE, *BIG, "--set", 'name="first"',
                              "-o", str(out), "--format", "msh", "--format", "vtu", "--format", "su2",
                              "--no-pictures"],
                             stdout=subprocess.DEVNULL, stderr=subprocess.PIPE, text=True)
    assert _wait_for_temp(out, first), "the first build never started writing"
    _, second_err = second.communicate("go\n", timeout=300)
    _, err = first.communicate(timeout=300)
    assert first.returncode == 0, err
    assert second.returncode == 2, second_err
    (line,) = [ln for ln in second_err.splitlines() if ln.strip()]
    assert line.startswith("error:") and str(out) in line and f"process {first.pid}" in line, line
    # only the first case's files, whole
    assert sorted(p.name for p in out.iterdir()) == sorted(
        ["first.msh", "first.vtu", "first.su2", "bc.json", "bc.md", "quality.json", "report.md", "plan.json"])
    assert json.loads((out / "plan.json").read_text())["case"] == "first"
    meshio.read(out / "first.msh", file_format="gmsh")


def test_a_build_into_a_locked_folder_writes_nothing(tmp_path, capsys):
    (tmp_path / "keep.txt").write_text("x")
    with folder_lock(tmp_path):
        code = main(["build", *RE, "-o", str(tmp_path), "--no-pictures"])
    err = capsys.readouterr().err
    assert code == 2, err
    assert f"{tmp_path}: in use by another meshgen run (process {os.getpid()})" in err
    assert sorted(p.name for p in tmp_path.iterdir()) == ["keep.txt"]


def test_a_study_holds_its_folder_and_its_members_do_not_wait_for_it(tmp_path, capsys):
    root = tmp_path / "fam"
    with folder_lock(root):
        code = main(["family", *RE, "--levels", "2", "--ratio", "2", "-o", str(root), "--workers", "1"])
    assert code == 2
    assert f"{root}: in use by another meshgen run" in capsys.readouterr().err
    # unlocked, the study runs: its members lock their own folders under the study's lock
    assert main(["family", *RE, "--levels", "2", "--ratio", "2", "-o", str(root), "--workers", "1",
                 "--format", "su2"]) == 0
    assert (root / "level-1" / "plan.json").is_file()
