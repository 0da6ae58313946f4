"""One command-line convention for every command, applied once to the whole parser.

- Global options (``--verbose``, ``--quiet``) work before or after the subcommand: each
  subparser repeats them with ``argparse.SUPPRESS`` defaults, so a value given after the
  subcommand wins and one given before it is not reset.
- Repeatable list options also take comma lists: ``--format msh,su2`` equals
  ``--format msh --format su2`` (``CommaList``).
- ``--json`` prints one JSON object on stdout; every message goes to stderr.
- The output rule, stated in ``meshgen --help`` (``OUTPUT_RULE``).
- Progress (``progress_for``): a rich bar on stderr with the stage and the estimated time
  left, only when stdout is a terminal and ``--quiet`` is not given.
"""

from __future__ import annotations

import argparse
import sys
from typing import Self

#: The rule every command's output options follow (shown in ``meshgen --help``).
OUTPUT_RULE = (
    "Output options: -o/--output names what a command writes: a folder for commands that "
    "write several files (build, family, sweep), a file for those that write one (init, refit). "
    "Pictures: --pictures DIR writes a command's PNG set into DIR, --plot FILE.png writes its "
    "one picture, and --no-pictures skips the pictures a build writes by default. "
    "--json prints one JSON object on stdout and sends every message to stderr. "
    "--verbose and --quiet may stand before or after the command; lists take commas "
    "(--format msh,su2) or repeats."
)


class CommaList(argparse.Action):
    """Append each comma-separated item: ``--format msh,su2 --format vtu`` -> [msh, su2, vtu]."""

    def __call__(self, parser, namespace, values, option_string=None):
        items = list(getattr(namespace, self.dest, None) or [])
        parts = [v.strip() for v in str(values).split(",")]
        if any(not v for v in parts):
            parser.error(f"{option_string} {values!r}: empty item in the comma list")
        setattr(namespace, self.dest, items + parts)


def global_options(p: argparse.ArgumentParser, after_command: bool = False) -> None:
    """``--verbose`` and ``--quiet``; on a subparser their defaults do not reset the main parser's."""
    kw = {"default": argparse.SUPPRESS} if after_command else {}
    p.add_argument("--verbose", action="store_true", help="show gmsh's own log", **kw)
    p.add_argument("--quiet", action="store_true", help="no progress bar and no progress messages", **kw)


def apply(parser: argparse.ArgumentParser) -> None:
    """Give every subcommand the global options (the main parser has them already)."""
    for action in parser._actions:  # argparse keeps the subparsers only here
        if isinstance(action, argparse._SubParsersAction):
            for sub in dict.fromkeys(action.choices.values()):
                names = {s for a in sub._actions for s in a.option_strings}
                if "--quiet" not in names:
                    global_options(sub, after_command=True)


def show_progress(args) -> bool:
    """A bar only on a terminal, never with --quiet or --json (stdout is then for the JSON)."""
    return sys.stdout.isatty() and not getattr(args, "quiet", False) and not getattr(args, "json", False)


class StageProgress:
    """Progress of one build from its stage messages: a rich bar (stage, elapsed, time left)
    on a terminal, the messages as lines on stderr otherwise, nothing with ``quiet``.

    The build reports its stages as text (pipeline/build.py ``progress``); ``stages`` is
    how many it will report, so the bar advances one step per stage and rich estimates
    the time left from the steps done so far.
    """

    def __init__(self, stages: int, bar: bool, quiet: bool):
        self.quiet, self.seen, self.bar = quiet, 0, None
        if bar:
            from rich.console import Console
            from rich.progress import BarColumn, Progress, TextColumn, TimeElapsedColumn, TimeRemainingColumn

            self.bar = Progress(TextColumn("{task.description:<36}"), BarColumn(),
                                TextColumn("{task.completed}/{task.total}"), TimeElapsedColumn(),
                                TextColumn("left"), TimeRemainingColumn(), console=Console(stderr=True),
                                transient=True)
            self.task = self.bar.add_task("starting", total=stages)

    def __enter__(self) -> Self:
        if self.bar is not None:
            self.bar.start()
        return self

    def __exit__(self, *exc) -> None:
        if self.bar is not None:
            self.bar.stop()

    def __call__(self, message: str) -> None:
        if message.startswith("warning:"):
            print(message, file=sys.stderr)  # warnings show whatever the progress setting
        elif self.bar is not None:  # a new stage completes the one before it
            self.bar.update(self.task, description=message, advance=1 if self.seen else 0)
            self.seen += 1
        elif not self.quiet:
            print(message, file=sys.stderr)
