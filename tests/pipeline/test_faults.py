"""Faults: a killed or interrupted build leaves no truncated file; builds are deterministic."""

import os
import signal
import subprocess
import sys
import time
from pathlib import Path

import meshio
import pytest

from meshgen.cli import main
from meshgen.io.atomic import TMP_PREFIX

#: About 6e5 cells: a build that takes a few seconds, long enough to be interrupted.
BIG = ["--set", "streamwise.max_spacing=0.0006", "--set", "streamwise.far_spacing=0.002",
       "--set", "wall.growth_ratio=1.02", "--set", "wall.max_spacing=0.02"]


def _start_build(out: Path) -> subprocess.Popen:
    return subprocess.Popen(
        [sys.executable, "-m", "meshgen", "build", "-o", str(out), "--format", "vtu", "--format", "msh",
         "--no-pictures", "--force", *BIG],
        stdout=subprocess.DEVNULL, stderr=subprocess.PIPE,
    )


def _wait_for_temp(out: Path, proc: subprocess.Popen, timeout: float = 60.0) -> bool:
    """Wait until the build has a temporary file open in ``out`` (it is writing)."""
    end = time.monotonic() + timeout
    while time.monotonic() < end and proc.poll() is None:
        if out.is_dir() and any(p.name.startswith(TMP_PREFIX) for p in out.iterdir()):
            return True
        time.sleep(0.005)
    return False


def _complete_or_absent(out: Path) -> None:
    for name, fmt in (("fairing-strip.vtu", "vtu"), ("fairing-strip.msh", "gmsh")):
        p = out / name
        if p.exists():  # a file that exists is whole: its reader accepts it
            meshio.read(p, file_format=fmt)


def test_sigkill_while_writing_leaves_no_truncated_file(tmp_path):
    out = tmp_path / "o"
    proc = _start_build(out)
    assert _wait_for_temp(out, proc), "the build never started writing"
    proc.send_signal(signal.SIGKILL)
    proc.wait(timeout=30)
    _complete_or_absent(out)
    assert not (out / "plan.json").exists()  # plan.json is last: the build is marked unfinished
    # the next run cleans the temporary files up and finishes
    assert main(["build", "-o", str(out), "--no-pictures", "--force"]) == 0
    assert not [p for p in out.iterdir() if p.name.startswith(TMP_PREFIX)]
    _complete_or_absent(out)


def test_ctrl_c_stops_with_130_and_no_partial_files(tmp_path):
    out = tmp_path / "o"
    proc = _start_build(out)
    assert _wait_for_temp(out, proc), "the build never started writing"
    t0 = time.monotonic()
    proc.send_signal(signal.SIGINT)
    _, err = proc.communicate(timeout=60)
    assert proc.returncode == 130, err.decode()
    assert time.monotonic() - t0 < 20  # promptly
    assert b"Traceback" not in err
    if not out.exists():
        return  # the build created the folder and wrote nothing into it: removed
    assert not [p for p in out.iterdir() if p.name.startswith(TMP_PREFIX)]
    assert not (out / "plan.json").exists()
    _complete_or_absent(out)


def test_same_case_gives_byte_identical_files(tmp_path):
    a, b = tmp_path / "a", tmp_path / "b"
    fmts = ["--format", "msh", "--format", "msh2", "--format", "vtu"]
    for d in (a, b):
        assert main(["build", "-o", str(d), "--no-pictures", *fmts, "--set", "domain.span=0.05",
                     "--set", "domain.span_cells=2"]) == 0
    names = sorted(p.name for p in a.iterdir())
    assert names == sorted(p.name for p in b.iterdir())
    for n in names:
        assert (a / n).read_bytes() == (b / n).read_bytes(), n


@pytest.mark.skipif(os.geteuid() != 0, reason="needs root to run the build as an unprivileged user")
def test_read_only_output_folder(tmp_path):
    """A folder the user may not write: exit 2 with a clear line, nothing written.

    Root may write anywhere, so the build runs as the unprivileged user 'nobody' (setpriv).
    """
    import shutil
    import tempfile

    top = Path(tempfile.mkdtemp(prefix="meshgen-ro-", dir="/tmp"))  # reachable by 'nobody'
    os.chmod(top, 0o755)
    ro = top / "ro"
    ro.mkdir()
    os.chmod(ro, 0o555)
    env = dict(os.environ, HOME=str(tmp_path), MPLCONFIGDIR=str(tmp_path))
    proc = subprocess.run(
        ["setpriv", "--reuid=65534", "--regid=65534", "--clear-groups", sys.executable, "-m", "meshgen",
         "build", "-o", str(ro / "case"), "--no-pictures"],
        capture_output=True, check=False, env=env, cwd=str(Path(__file__).parents[2]),
    )
    if b"Permission denied" in proc.stderr and b"meshgen" not in proc.stderr:
        pytest.skip("the unprivileged user cannot read the Python environment")
    assert proc.returncode == 2, proc.stderr.decode()
    try:
        assert b"not writable" in proc.stderr
        assert list(ro.iterdir()) == []
    finally:
        shutil.rmtree(top, ignore_errors=True)


def test_outputs_get_the_usual_permissions(tmp_path):
    """Temporary files are created private; the published files must follow the umask."""
    old = os.umask(0o022)
    try:
        assert main(["build", "-o", str(tmp_path), "--no-pictures", "--format", "msh",
                     "--format", "polymesh"]) == 0
    finally:
        os.umask(old)
    assert (tmp_path / "fairing-strip.msh").stat().st_mode & 0o777 == 0o644
    assert (tmp_path / "constant" / "polyMesh").stat().st_mode & 0o777 == 0o755


def test_a_closed_pipe_after_gmsh_raises_instead_of_killing():
    """gmsh.initialize() resets SIGPIPE at the C level; the session wrapper restores it."""
    code = (
        "import os\n"
        "from meshgen.meshing.gmsh_session import gmsh_session\n"
        "with gmsh_session():\n    pass\n"
        "r, w = os.pipe(); os.close(r)\n"
        "try:\n    os.write(w, b'x')\nexcept BrokenPipeError:\n    print('raised')\n"
    )
    proc = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, timeout=60, check=False)
    assert proc.returncode == 0 and "raised" in proc.stdout, (proc.returncode, proc.stderr)
