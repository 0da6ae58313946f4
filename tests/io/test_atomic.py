"""Atomic files: an interrupt at any point leaves no temporary file behind."""

import os

import pytest

from meshgen.io import atomic
from meshgen.io.atomic import TMP_PREFIX, atomic_file


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
