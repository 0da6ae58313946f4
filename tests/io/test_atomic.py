"""The shared writing layer: an interrupt at any point leaves no temporary file behind; every
file is checked before its rename, and a failed write is one WriteError naming file and cause."""

import errno
import os
import subprocess
import sys

import pytest

from meshgen.core.errors import WriteError
from meshgen.io import atomic
from meshgen.io.atomic import TMP_PREFIX, atomic_dir, atomic_file


def test_interrupt_right_after_the_temporary_file_exists(tmp_path, monkeypatch):
    """Ctrl-C lands between the creation of the temporary file and the first write (the
    moment a watcher sees the file appear): the file must still be removed."""
    real_close = os.close

    def close_then_interrupt(fd):
        real_close(fd)
        raise KeyboardInterrupt

    monkeypatch.setattr(atomic.os, "close", close_then_interrupt)
    with pytest.raises(KeyboardInterrupt), atomic_file(tmp_path / "a.msh") as tmp:
        tmp.write_bytes(b"never")
    monkeypatch.undo()
    assert not [p for p in tmp_path.iterdir() if p.name.startswith(TMP_PREFIX)]


def _left(folder):
    return [p for p in folder.rglob("*") if p.name.startswith(TMP_PREFIX)]


def test_a_writer_that_stops_early_without_an_error_is_caught(tmp_path):
    """A C writer that ignores EFBIG (gmsh's did) returns normally with a short file: the
    size check against the file-size limit catches it (run in a child under the limit)."""
    target = tmp_path / "m.bin"
    target.write_bytes(b"previous")
    code = (
        "import resource, sys\n"
        "from pathlib import Path\n"
        "from meshgen.io.atomic import atomic_file\n"
        "from meshgen.core.errors import WriteError\n"
        "resource.setrlimit(resource.RLIMIT_FSIZE, (10000, 10000))\n"
        "try:\n"
        "    with atomic_file(Path(sys.argv[1])) as tmp, open(tmp, 'wb') as fh:\n"
        "        try:\n"
        "            fh.write(b'x' * 50000); fh.flush()\n"
        "        except OSError:\n"
        "            pass  # swallowed, as a C library would\n"
        "except WriteError as exc:\n"
        "    print(exc)\n"
    )
    out = subprocess.run([sys.executable, "-c", code, str(target)], capture_output=True, text=True,
                         check=True).stdout.strip()
    assert out.startswith(f"{target}: not written: the file reached the file-size limit"), out
    assert "previous version is kept" in out
    assert target.read_bytes() == b"previous"
    assert not _left(tmp_path)


@pytest.mark.parametrize("code, cause", [(errno.ENOSPC, "no space left on the device"),
                                         (errno.EFBIG, "file-size limit"), (errno.EDQUOT, "quota")])
def test_an_os_error_while_writing_names_the_file_and_the_cause(tmp_path, code, cause):
    target = tmp_path / "a.vtu"
    with pytest.raises(WriteError) as exc, atomic_file(target):
        raise OSError(code, os.strerror(code))
    assert str(exc.value).startswith(f"{target}: not written: ") and cause in str(exc.value)
    assert "\n" not in str(exc.value)
    assert not target.exists() and not _left(tmp_path)


def test_a_folder_output_names_the_file_that_failed(tmp_path):
    target = tmp_path / "constant" / "polyMesh"
    with pytest.raises(WriteError) as exc, atomic_dir(target) as tmp:
        (tmp / "points").write_text("x")
        raise OSError(errno.ENOSPC, "No space left on device", str(tmp / "faces"))
    assert str(exc.value).startswith(f"{target / 'faces'}: not written: no space left")
    assert not target.exists() and not _left(tmp_path)


def test_other_errors_pass_through_unchanged(tmp_path):
    with pytest.raises(ZeroDivisionError), atomic_file(tmp_path / "x.txt") as tmp:
        tmp.write_text("partial")
        _ = 1 / 0
    assert not _left(tmp_path)


def test_the_temporary_names_its_owner(tmp_path):
    with atomic_file(tmp_path / "x.txt") as tmp:
        assert tmp.name.startswith(f"{TMP_PREFIX}{os.getpid()}-")
        tmp.write_text("x")
    assert (tmp_path / "x.txt").read_text() == "x"
