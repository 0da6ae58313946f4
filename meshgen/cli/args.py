"""Option helpers shared by every command: the raising parser and the case arguments."""

from __future__ import annotations

import argparse
import os
from pathlib import Path

from ..core.errors import InputError


class ArgumentError(InputError):
    pass


class _Parser(argparse.ArgumentParser):
    """argparse that raises instead of exiting, so bad arguments get exit code 2 cleanly."""

    def error(self, message: str):
        raise ArgumentError(f"{self.prog}: {message}")


def _case_args(p: argparse.ArgumentParser) -> None:
    p.add_argument("case", nargs="?", help="case file (TOML); the embedded default case if omitted")
    p.add_argument("--set", dest="overrides", action="append", default=[], metavar="SECTION.KEY=VALUE",
                   help="override a case field, e.g. --set wall.y_plus=0.5 (repeatable; empty value unsets)")


def plot_problems(plot: str | None, option: str = "--plot") -> list[str]:
    """Why the picture ``plot`` cannot be written, checked before anything is read or
    written: not a PNG name, a folder, a file or a dangling link on the way, a folder
    that may not be written."""
    if plot is None:
        return []
    path = Path(plot)
    if path.suffix.lower() != ".png":
        return [f"{option} {plot}: the picture is a PNG; give a file name ending in .png"]
    if path.is_dir():
        return [f"{option} {plot}: is a folder; give a file name ending in .png"]
    for p in path.parents:
        if p.is_symlink() and not p.exists():
            return [f"{option} {plot}: {p} is a symbolic link to {os.readlink(p)}, which does not exist"]
        if p.exists():
            if not p.is_dir():
                return [f"{option} {plot}: {p} is a file, not a folder"]
            if not os.access(p, os.W_OK | os.X_OK):
                return [f"{option} {plot}: folder {p} is not writable"]
            return []
    return []
