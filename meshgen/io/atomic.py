"""Atomic output: write to a temporary name beside the target, then rename into place.

A crash or a kill in the middle of writing leaves the previous file (or none), never a
truncated one. Temporary names start with ``.meshgen-tmp-`` so that a later run can
clean up what a killed run left behind.
"""

from __future__ import annotations

import os
import secrets
import shutil
import tempfile
from collections.abc import Iterator
from contextlib import contextmanager
from pathlib import Path

TMP_PREFIX = ".meshgen-tmp-"


def _umask() -> int:
    mask = os.umask(0)
    os.umask(mask)
    return mask


def _publish_mode(path: Path, directory: bool) -> None:
    """mkstemp/mkdtemp create 0600/0700; give the result the mode a plain open() would."""
    base = 0o777 if directory else 0o666
    os.chmod(path, base & ~_umask())


@contextmanager
def atomic_file(target: Path) -> Iterator[Path]:
    """Yield a temporary path in ``target``'s folder; on success rename it to ``target``."""
    target = Path(target)
    target.parent.mkdir(parents=True, exist_ok=True)
    # The name is chosen first and the file created inside the try: a Ctrl-C that lands
    # just after the file appears is then cleaned up too.
    tmp_path = target.parent / f"{TMP_PREFIX}{secrets.token_hex(8)}{target.suffix}"
    ours = True
    try:
        try:
            os.close(os.open(tmp_path, os.O_CREAT | os.O_EXCL | os.O_WRONLY, 0o600))
        except FileExistsError:
            ours = False  # someone else's file (a 64-bit name collision): leave it
            raise
        yield tmp_path
        _publish_mode(tmp_path, directory=False)
        os.replace(tmp_path, target)
    finally:
        if ours:
            tmp_path.unlink(missing_ok=True)


@contextmanager
def atomic_dir(target: Path) -> Iterator[Path]:
    """Yield a temporary folder beside ``target``; on success it replaces ``target``."""
    target = Path(target)
    target.parent.mkdir(parents=True, exist_ok=True)
    tmp_path = Path(tempfile.mkdtemp(prefix=TMP_PREFIX, dir=target.parent))
    try:
        yield tmp_path
        _publish_mode(tmp_path, directory=True)
        for sub in tmp_path.rglob("*"):
            if sub.is_dir():
                _publish_mode(sub, directory=True)
        if target.exists():
            old = Path(tempfile.mkdtemp(prefix=TMP_PREFIX, dir=target.parent))
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


def clean_stale(folder: Path) -> list[Path]:
    """Remove temporary files and folders a killed run left in ``folder`` (and one level
    down, where folder-shaped outputs such as ``constant/polyMesh`` are assembled)."""
    removed = []
    folder = Path(folder)
    if not folder.is_dir():
        return removed
    for p in [*folder.glob(TMP_PREFIX + "*"), *folder.glob("*/" + TMP_PREFIX + "*")]:
        if p.is_dir():
            shutil.rmtree(p, ignore_errors=True)
        else:
            p.unlink(missing_ok=True)
        removed.append(p)
    return removed
