"""Option helpers shared by every command: the raising parser and the case arguments."""

from __future__ import annotations

import argparse

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
