"""A progress bar for studies: members done of the total, with the estimated time left.

On a terminal it is a rich bar, redrawn in place; on any other stream one line per update
(logs, pipes); with no stream, silent.
"""

from __future__ import annotations

from typing import TextIO


class ProgressBar:
    """``family  3/5 done (1 failed)  0:00:12 elapsed, 0:00:08 left`` on ``stream``."""

    WIDTH = 24

    def __init__(self, label: str, total: int, stream: TextIO | None):
        self.label, self.total, self.stream = label, total, stream
        self.tty = bool(stream is not None and getattr(stream, "isatty", lambda: False)())
        self.rich = None
        if self.tty:
            from rich.console import Console
            from rich.progress import BarColumn, Progress, TextColumn, TimeElapsedColumn, TimeRemainingColumn

            self.rich = Progress(TextColumn(f"{label}"), BarColumn(), TextColumn("{task.completed}/{task.total} done"),
                                 TextColumn("{task.description}"), TimeElapsedColumn(), TextColumn("left"),
                                 TimeRemainingColumn(), console=Console(file=stream), transient=False)
            self.task = self.rich.add_task("", total=total)
            self.rich.start()

    def update(self, done: int, failed: int, note: str = "") -> None:
        if self.stream is None:
            return
        text = (f"({failed} failed) " if failed else "") + note
        if self.rich is not None:
            self.rich.update(self.task, completed=done, description=text)
            return
        filled = self.WIDTH * done // max(self.total, 1)
        self.stream.write(f"{self.label} [{'#' * filled}{'.' * (self.WIDTH - filled)}] {done}/{self.total} done"
                          + (f" ({failed} failed)" if failed else "") + (f"  {note}" if note else "") + "\n")
        self.stream.flush()

    def message(self, text: str) -> None:
        """A line of its own (a failure), kept above the bar."""
        if self.rich is not None:
            self.rich.console.print(text, markup=False, highlight=False)
        elif self.stream is not None:
            self.stream.write(text + "\n")
            self.stream.flush()

    def close(self) -> None:
        if self.rich is not None:
            self.rich.stop()
