"""Atomic output: write to a temporary name beside the target, check it, then rename.

A crash, a kill or a failed write leaves the previous file (or none), never a truncated
one. Before the rename every written file is checked, because not every writer reports a
short write: Python ignores SIGXFSZ, so past a file-size limit (``ulimit -f``) a write
returns EFBIG, and a C library that ignores it (gmsh's own writer did) stops early and
returns normally; on a full disk the same (../shared/pitfalls.md). A failed write raises
``WriteError`` with one line naming the file and the cause; the temporary is removed and
the previous file kept.

Temporary names are ``.meshgen-tmp-<pid>-...``: the owner's process id lets a later run
clean up what a killed run left (``clean_stale``) without touching the temporaries of a
build that is still writing.
"""

from __future__ import annotations

import errno
import os
import re
import resource
import secrets
import shutil
import tempfile
from collections.abc import Iterator
from contextlib import contextmanager
from pathlib import Path

from ..core.errors import WriteError

TMP_PREFIX = ".meshgen-tmp-"
_OWNER = re.compile(re.escape(TMP_PREFIX) + r"(\d+)-")
#: Causes of a failed write, by errno, as the one line a user reads.
CAUSES = {
    errno.EFBIG: "the file reached the file-size limit (ulimit -f)",
    errno.ENOSPC: "no space left on the device",
    errno.EDQUOT: "the disk quota is exhausted",
    errno.EACCES: "permission denied",
    errno.EPERM: "operation not permitted",
    errno.EROFS: "read-only file system",
    errno.EIO: "input/output error",
}


def _umask() -> int:
    mask = os.umask(0)
    os.umask(mask)
    return mask


def _publish_mode(path: Path, directory: bool) -> None:
    """mkstemp/mkdtemp create 0600/0700; give the result the mode a plain open() would."""
    base = 0o777 if directory else 0o666
    os.chmod(path, base & ~_umask())


def _tmp_prefix() -> str:
    return f"{TMP_PREFIX}{os.getpid()}-"


def short_write(path: Path) -> str | None:
    """Why the file at ``path`` may have been cut short, or None.

    Two checks that need no knowledge of the format: the file-size limit (a writer cannot
    go past it, so a file that reached it was stopped there) and a full file system (a
    writer that ran out of space leaves the disk full).
    """
    size = path.stat().st_size
    soft, _ = resource.getrlimit(resource.RLIMIT_FSIZE)
    if soft != resource.RLIM_INFINITY and size >= soft:
        return f"{CAUSES[errno.EFBIG]} after {size:,} bytes"
    try:
        fs = os.statvfs(path)
    except OSError:
        return None
    free = fs.f_bfree if os.geteuid() == 0 else fs.f_bavail  # root may use the reserved blocks
    if fs.f_blocks > 0 and free == 0:
        return f"{CAUSES[errno.ENOSPC]} ({size:,} bytes written)"
    return None


def _cause(exc: BaseException) -> str:
    if isinstance(exc, OSError) and exc.errno in CAUSES:
        return CAUSES[exc.errno]
    if isinstance(exc, OSError) and exc.strerror:
        return exc.strerror
    return str(exc).splitlines()[0] if str(exc) else type(exc).__name__


def _failed(target: Path, cause: str, name: Path | None = None) -> WriteError:
    kept = "; the previous version is kept" if target.exists() else ""
    return WriteError(f"{name or target}: not written: {cause}{kept}")


def _files(path: Path) -> list[Path]:
    return [p for p in sorted(path.rglob("*")) if p.is_file()] if path.is_dir() else [path]


def _check_tree(tmp: Path, target: Path) -> None:
    """Raise WriteError when any file under ``tmp`` was cut short; name it by its final path."""
    for f in _files(tmp):
        why = short_write(f)
        if why is not None:
            raise _failed(target, why, target / f.relative_to(tmp) if tmp.is_dir() else target)


def _translate(exc: BaseException, tmp: Path, target: Path) -> WriteError | None:
    """The WriteError for an exception raised while writing ``tmp``, or None when the
    exception was not a write fault (it then propagates as it is)."""
    for f in _files(tmp) if tmp.exists() else []:
        why = short_write(f)
        if why is not None:  # any library's error, when the file system says why
            return _failed(target, why, target / f.relative_to(tmp) if tmp.is_dir() else None)
    if isinstance(exc, OSError):
        name = None
        if exc.filename and tmp.is_dir() and Path(exc.filename).is_relative_to(tmp):
            name = target / Path(exc.filename).relative_to(tmp)
        return _failed(target, _cause(exc), name)
    return None


def _make_parent(target: Path) -> None:
    try:
        target.parent.mkdir(parents=True, exist_ok=True)
    except OSError as exc:
        raise _failed(target, f"its folder cannot be created ({_cause(exc)})") from None


@contextmanager
def _checked(tmp_path: Path, target: Path) -> Iterator[None]:
    """Around the writing into ``tmp_path``: an error while writing becomes one naming
    ``target`` (``_translate``), and what was written is checked before it is published."""
    try:
        yield
    except Exception as exc:
        err = _translate(exc, tmp_path, target)
        if err is None:
            raise
        raise err from exc
    _check_tree(tmp_path, target)


@contextmanager
def atomic_file(target: Path) -> Iterator[Path]:
    """Yield a temporary path in ``target``'s folder; on success, check it and rename it
    to ``target``."""
    target = Path(target)
    _make_parent(target)
    # The name is chosen first and the file created inside the try: a Ctrl-C that lands
    # just after the file appears is then cleaned up too.
    tmp_path = target.parent / f"{_tmp_prefix()}{secrets.token_hex(8)}{target.suffix}"
    ours = True
    try:
        try:
            os.close(os.open(tmp_path, os.O_CREAT | os.O_EXCL | os.O_WRONLY, 0o600))
        except FileExistsError:
            ours = False  # someone else's file (a 64-bit name collision): leave it
            raise
        except OSError as exc:
            raise _failed(target, _cause(exc)) from None
        with _checked(tmp_path, target):
            yield tmp_path
        _publish_mode(tmp_path, directory=False)
        os.replace(tmp_path, target)
    finally:
        if ours:
            tmp_path.unlink(missing_ok=True)


@contextmanager
def atomic_dir(target: Path) -> Iterator[Path]:
    """Yield a temporary folder beside ``target``; on success, check every file in it
    and let it replace ``target``."""
    target = Path(target)
    _make_parent(target)
    try:
        tmp_path = Path(tempfile.mkdtemp(prefix=_tmp_prefix(), dir=target.parent))
    except OSError as exc:
        raise _failed(target, _cause(exc)) from None
    try:
        with _checked(tmp_path, target):
            yield tmp_path
        _publish_mode(tmp_path, directory=True)
        for sub in tmp_path.rglob("*"):
            if sub.is_dir():
                _publish_mode(sub, directory=True)
        if target.exists():
            old = Path(tempfile.mkdtemp(prefix=_tmp_prefix(), dir=target.parent))
            os.replace(target, old / "old")
            os.replace(tmp_path, target)
            shutil.rmtree(old, ignore_errors=True)
        else:
            os.replace(tmp_path, target)
    finally:
        if tmp_path.exists():
            shutil.rmtree(tmp_path, ignore_errors=True)


def write_text(target: Path, text: str) -> Path:
    """Write a text file atomically."""
    with atomic_file(target) as tmp:
        tmp.write_text(text, encoding="utf-8")
    return Path(target)


def _owner_alive(name: str) -> bool:
    """Whether the process that made the temporary ``name`` still runs (this one included).

    A name without an owner (an older version's) counts as abandoned."""
    m = _OWNER.match(name)
    if m is None:
        return False
    try:
        os.kill(int(m.group(1)), 0)
    except ProcessLookupError:
        return False
    except (PermissionError, OverflowError, ValueError):
        return True  # another user's live process (or a name we cannot judge): leave it
    return True


def clean_stale(folder: Path) -> list[Path]:
    """Remove temporary files and folders a killed run left in ``folder`` (and one level
    down, where folder-shaped outputs such as ``constant/polyMesh`` are assembled).

    Only temporaries whose owner process is gone are removed; call it with the folder's
    lock held (io/lock.py), so no other build can be starting to write there.
    """
    removed = []
    folder = Path(folder)
    if not folder.is_dir():
        return removed
    for p in [*folder.glob(TMP_PREFIX + "*"), *folder.glob("*/" + TMP_PREFIX + "*")]:
        if _owner_alive(p.name):
            continue
        if p.is_dir():
            shutil.rmtree(p, ignore_errors=True)
        else:
            p.unlink(missing_ok=True)
        removed.append(p)
    return removed
