"""Writes that fall short: a file-size limit (RLIMIT_FSIZE, ``ulimit -f``) or a full disk.

Python ignores SIGXFSZ, so past the limit a write returns EFBIG, and gmsh's own writer
then stops early and returns normally (../shared/pitfalls.md, "Found in the second round").
Every such build must exit 1 with one line naming the file and the cause, remove its
temporary file, keep the previous file, and write no plan.json.
"""

import os
import resource
import shutil
import subprocess
import sys
import tempfile
from pathlib import Path

import meshio
import pytest

from meshgen.io.atomic import TMP_PREFIX

#: The flow given by its Reynolds number alone: no CoolProp import, about 1e4 cells.
RE = ["--set", "flow.fluid=", "--set", "flow.velocity=", "--set", "flow.reynolds=1e6"]
#: Every format's mesh file of that case is well above this many bytes; the reports are below it.
LIMIT = 100_000


def _meshgen(argv, fsize: int | None = None) -> subprocess.CompletedProcess:
    """Run the command line in a child process, with a file-size limit when ``fsize``."""

    def limit() -> None:
        resource.setrlimit(resource.RLIMIT_FSIZE, (fsize, fsize))

    return subprocess.run([sys.executable, "-m", "meshgen", *argv], capture_output=True, text=True,
                          preexec_fn=limit if fsize else None, timeout=300, check=False)


def _temporaries(folder: Path) -> list[Path]:
    return [p for p in folder.rglob("*") if p.name.startswith(TMP_PREFIX)]


def _one_error_line(err: str) -> str:
    lines = [ln for ln in err.splitlines() if ln.startswith("error:")]
    assert len(lines) == 1 and "Traceback" not in err, err
    return lines[0]


@pytest.mark.parametrize("fmt, name", [("msh", "fairing-strip.msh"), ("msh2", "fairing-strip.v2.msh"),
                                       ("vtu", "fairing-strip.vtu"), ("su2", "fairing-strip.su2"),
                                       ("cgns", "fairing-strip.cgns"), ("plot3d", "fairing-strip.xyz"),
                                       ("polymesh", "constant/polyMesh/points")])
def test_a_file_size_limit_fails_the_build(fmt, name, tmp_path):
    """Before: msh and msh2 exited 0 with a 204,800-byte file and plan.json (issue 11, item 1)."""
    out = tmp_path / "o"
    proc = _meshgen(["build", *RE, "--format", fmt, "--no-pictures", "-o", str(out)], fsize=LIMIT)
    assert proc.returncode == 1, proc.stderr
    line = _one_error_line(proc.stderr)
    assert "file-size limit" in line, line
    assert fmt == "polymesh" or name in line, line  # the polyMesh folder names its file
    assert not (out / "plan.json").exists()
    assert not (out / name).exists()
    assert not _temporaries(out)


def test_a_failed_rewrite_keeps_the_previous_file(tmp_path):
    out = tmp_path / "o"
    assert _meshgen(["build", *RE, "--format", "msh", "--no-pictures", "-o", str(out)]).returncode == 0
    before = (out / "fairing-strip.msh").read_bytes()
    proc = _meshgen(["build", *RE, "--set", "wall.growth_ratio=1.05", "--format", "msh", "--no-pictures",
                     "--force", "-o", str(out)], fsize=LIMIT)
    assert proc.returncode == 1, proc.stderr
    assert "previous version is kept" in _one_error_line(proc.stderr)
    assert (out / "fairing-strip.msh").read_bytes() == before
    meshio.read(out / "fairing-strip.msh", file_format="gmsh")  # still whole
    # the folder no longer holds one finished build: its plan.json is gone
    assert not (out / "plan.json").exists()
    assert not _temporaries(out)


def test_pictures_past_the_limit_fail_the_build(tmp_path):
    """matplotlib writes through Python: the PNG's EFBIG must become the same one line."""
    out = tmp_path / "o"
    coarse = ["--set", "flow.reynolds=1e4", "--set", "streamwise.max_spacing=0.2",
              "--set", "streamwise.far_spacing=0.5", "--set", "streamwise.leading_edge_spacing=0.05",
              "--set", "streamwise.trailing_edge_spacing=0.05", "--set", "wall.growth_ratio=1.5",
              "--set", "domain.height_factor=3"]  # an SU2 file of about 24 kB, pictures of 60 kB and more
    proc = _meshgen(["build", *RE, *coarse, "--format", "su2", "-o", str(out)], fsize=40_000)
    assert proc.returncode == 1, proc.stderr
    line = _one_error_line(proc.stderr)
    assert "file-size limit" in line and ".png" in line, line
    assert not (out / "plan.json").exists()
    assert not _temporaries(out)


@pytest.fixture
def small_disk():
    """A 320 KiB tmpfs (root only): a full disk for real, not a simulated error."""
    if os.geteuid() != 0 or shutil.which("mount") is None:
        pytest.skip("mounting a tmpfs needs root")
    mnt = Path(tempfile.mkdtemp(prefix="meshgen-disk-"))
    proc = subprocess.run(["mount", "-t", "tmpfs", "-o", "size=320k", "tmpfs", str(mnt)],
                          capture_output=True, text=True, check=False)
    if proc.returncode != 0:
        mnt.rmdir()
        pytest.skip(f"mount not permitted here: {proc.stderr.strip()}")
    try:
        yield mnt
    finally:
        subprocess.run(["umount", str(mnt)], check=False)
        mnt.rmdir()


@pytest.mark.parametrize("fmt", ["msh", "msh2", "vtu", "polymesh"])
def test_a_full_disk_fails_the_build(small_disk, fmt):
    """Before: on a full tmpfs a truncated MSH stayed under its final name (issue 11, item 1)."""
    out = small_disk / "o"
    proc = _meshgen(["build", *RE, "--format", fmt, "--no-pictures", "-o", str(out)])
    assert proc.returncode == 1, proc.stderr
    line = _one_error_line(proc.stderr)
    assert "no space left" in line, line
    assert not (out / "plan.json").exists()
    assert not _temporaries(out)
    assert not [p for p in out.rglob("*") if p.suffix in (".msh", ".vtu") or p.name == "points"]
