"""One run per output folder: an exclusive lock held while a build (or a study) writes there.

Two builds into one folder would clean up each other's temporary files and leave the
files of two cases side by side. ``folder_lock`` takes an exclusive ``flock`` on the file
``.meshgen.lock`` in the folder, without waiting: a second run gets an ``InputError``
naming the folder and the process that holds it. The kernel drops the lock when its
holder exits, however it exits, so a killed run never leaves the folder locked; the lock
file itself is removed on release.

A study locks its own folder for the whole run and each member locks its member folder
(a sub-folder), so members never wait for their study's lock.
"""

from __future__ import annotations

import fcntl
import os
import socket
from collections.abc import Iterator
from contextlib import contextmanager
from pathlib import Path

from ..core.errors import InputError, WriteError

LOCK_NAME = ".meshgen.lock"


def _holder(path: Path) -> str:
    """Who holds the lock, as written by the holder: 'process <pid> on <host>'."""
    try:
        pid, _, host = path.read_text(encoding="utf-8").strip().partition(" ")
    except OSError:
        return "another process"
    if not pid.isdigit():
        return "another process (it has not written its id yet)"
    here = host in ("", socket.gethostname())
    return f"process {pid}" + ("" if here else f" on {host}")


def _open_locked(path: Path, folder: Path) -> int:
    """A descriptor of the lock file ``path``, exclusively locked (InputError when taken)."""
    while True:
        try:
            fd = os.open(path, os.O_RDWR | os.O_CREAT | os.O_CLOEXEC, 0o644)
        except OSError as exc:
            raise InputError(f"{folder}: cannot create its lock file ({exc.strerror})") from None
        try:
            fcntl.flock(fd, fcntl.LOCK_EX | fcntl.LOCK_NB)
        except BlockingIOError:
            os.close(fd)
            raise InputError(
                f"{folder}: in use by another meshgen run ({_holder(path)}); wait for it to finish "
                "or write to another folder"
            ) from None
        except OSError as exc:  # e.g. ENOLCK: a file system without locks
            os.close(fd)
            raise WriteError(f"{folder}: cannot be locked ({exc.strerror})") from None
        # The previous holder removes the file on release: if it did so after we opened
        # it, our lock is on a file nobody else will see; open the new one instead.
        try:
            same = os.stat(path).st_ino == os.fstat(fd).st_ino
        except FileNotFoundError:
            same = False
        if same:
            return fd
        os.close(fd)


@contextmanager
def folder_lock(folder: str | os.PathLike) -> Iterator[Path]:
    """Hold the exclusive lock of ``folder`` (created if missing) for the ``with`` block.

    Folders this call created are removed again on release if nothing was written there.
    """
    folder = Path(folder)
    created = [p for p in (folder, *folder.parents) if not p.exists()]  # deepest first
    try:
        folder.mkdir(parents=True, exist_ok=True)
    except OSError as exc:
        raise InputError(f"{folder}: cannot be created ({exc.strerror})") from None
    path = folder / LOCK_NAME
    fd = _open_locked(path, folder)
    try:
        os.ftruncate(fd, 0)
        os.write(fd, f"{os.getpid()} {socket.gethostname()}\n".encode())
        yield folder
    finally:
        try:
            path.unlink()  # while still locked, so a waiting opener sees the inode change
        except OSError:
            pass
        os.close(fd)
        for p in created:
            try:
                p.rmdir()  # only when empty
            except OSError:
                break
