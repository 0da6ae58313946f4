"""A one-line progress bar for studies, redrawn in place on a terminal."""

from __future__ import annotations

from typing import TextIO


class ProgressBar:
    """``family [#########.........] 3/5 done (1 failed)``, on one line of ``stream``.

    Redrawn in place on a terminal; one line per update otherwise (logs, pipes).
    """

    WIDTH = 24

    def __init__(self, label: str, total: int, stream: TextIO | None):
        self.label, self.total, self.stream = label, total, stream
        self.tty = bool(stream is not None and getattr(stream, "isatty", lambda: False)())
        self.shown = False

    def update(self, done: int, failed: int, note: str = "") -> None:
        if self.stream is None:
            return
        filled = self.WIDTH * done // max(self.total, 1)
        line = (f"{self.label} [{'#' * filled}{'.' * (self.WIDTH - filled)}] {done}/{self.total} done"
                + (f" ({failed} failed)" if failed else "") + (f"  {note}" if note else ""))
        self.stream.write(("\r" + line + "\033[K") if self.tty else line + "\n")
        self.stream.flush()
        self.shown = True

    def message(self, text: str) -> None:
        """A line of its own (a failure), kept above the bar."""
        if self.stream is None:
            return
        self.stream.write(("\r\033[K" if self.tty and self.shown else "") + text + "\n")
        self.stream.flush()

    def close(self) -> None:
        if self.stream is not None and self.tty and self.shown:
            self.stream.write("\n")
            self.stream.flush()
