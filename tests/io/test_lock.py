"""The output-folder lock and the stale-temporary cleanup that relies on it."""

import os
import subprocess
import sys

import pytest

from meshgen.core.errors import InputError
from meshgen.io.atomic import TMP_PREFIX, clean_stale
from meshgen.io.lock import LOCK_NAME, folder_lock


def test_a_second_holder_is_refused_with_the_folder_and_the_pid(tmp_path):
    with folder_lock(tmp_path), pytest.raises(InputError) as exc, folder_lock(tmp_path):
        pass
    (line,) = exc.value.problems
    assert str(tmp_path) in line and f"process {os.getpid()}" in line, line


def test_another_process_is_refused_while_the_lock_is_held(tmp_path):
    """flock is per open file, so a second process is the real test of exclusion."""
    code = ("import sys\nfrom meshgen.io.lock import folder_lock\nfrom meshgen.core.errors import InputError\n"
            "try:\n    with folder_lock(sys.argv[1]):\n        print('got it')\n"
            "except InputError as e:\n    print(e.problems[0])\n")
    with folder_lock(tmp_path):
        held = subprocess.run([sys.executable, "-c", code, str(tmp_path)], capture_output=True, text=True,
                              check=True).stdout
    free = subprocess.run([sys.executable, "-c", code, str(tmp_path)], capture_output=True, text=True,
                          check=True).stdout
    assert f"in use by another meshgen run (process {os.getpid()})" in held, held
    assert free.strip() == "got it"


def test_the_lock_file_goes_and_a_created_folder_too(tmp_path):
    new = tmp_path / "new" / "deeper"
    with folder_lock(new):
        assert (new / LOCK_NAME).read_text().split()[0] == str(os.getpid())
    assert not new.exists()  # created for the lock and left empty: removed
    with folder_lock(tmp_path):
        (tmp_path / "kept").write_text("x")
    assert sorted(p.name for p in tmp_path.iterdir()) == ["kept"]


def test_a_lock_file_left_by_a_killed_run_does_not_block(tmp_path):
    """The kernel drops a killed holder's flock; only the file remains, and it is reused."""
    (tmp_path / LOCK_NAME).write_text("999999999 elsewhere\n")
    with folder_lock(tmp_path):
        pass


def test_cleanup_removes_only_temporaries_whose_owner_is_gone(tmp_path):
    """Before: clean_stale removed every temporary, a live build's too (issue 11, item 2a)."""
    live = subprocess.Popen([sys.executable, "-c", "import time; time.sleep(60)"])
    dead = subprocess.Popen([sys.executable, "-c", "pass"])
    dead.wait()
    try:
        mine = tmp_path / f"{TMP_PREFIX}{os.getpid()}-a.msh"
        theirs = tmp_path / f"{TMP_PREFIX}{live.pid}-b.msh"
        gone = tmp_path / f"{TMP_PREFIX}{dead.pid}-c.msh"
        older = tmp_path / f"{TMP_PREFIX}k2j3h4.vtu"  # an older version's name: no owner
        folder = tmp_path / "constant" / f"{TMP_PREFIX}{dead.pid}-d"
        folder.mkdir(parents=True)
        for p in (mine, theirs, gone, older):
            p.write_text("x")
        removed = clean_stale(tmp_path)
        assert sorted(removed) == sorted([gone, older, folder])
        assert mine.exists() and theirs.exists()
    finally:
        live.kill()
        live.wait()
