"""The one place that owns gmsh's global state: a session as a context manager.

gmsh keeps one model per process and is not thread-safe, so every build (and every
writer that needs gmsh) opens its own session and closes it, and families build in
separate processes. Options follow ../shared/pitfalls.md: no user config files, no
SIGINT handler, a geometric tolerance far below the smallest spacing.
"""

from __future__ import annotations

import signal
import threading
from collections.abc import Iterator
from contextlib import contextmanager

from ..core.errors import MeshgenError


@contextmanager
def gmsh_session(verbose: bool = False, name: str = "meshgen") -> Iterator[object]:
    """Initialise gmsh quietly (unless ``verbose``), yield the module, always finalise."""
    import gmsh

    if gmsh.isInitialized():
        raise MeshgenError("a gmsh session is already open in this process")
    gmsh.initialize(readConfigFiles=False, interruptible=False)
    _restore_sigpipe()
    try:
        gmsh.option.setNumber("General.Terminal", 1 if verbose else 0)
        gmsh.option.setNumber("General.Verbosity", 99 if verbose else 0)
        gmsh.option.setNumber("General.NumThreads", 1)
        gmsh.model.add(name)
        yield gmsh
    finally:
        gmsh.finalize()


def _restore_sigpipe() -> None:
    """Put Python's SIGPIPE handling back after gmsh.initialize().

    gmsh 4.15 resets SIGPIPE to its default action at the C level while Python's
    signal.getsignal still reports SIG_IGN; a later write to a closed pipe (a dead worker,
    ``meshgen ... | head``) would then kill the process with exit 141 instead of raising
    BrokenPipeError.
    """
    if threading.current_thread() is threading.main_thread():
        signal.signal(signal.SIGPIPE, signal.getsignal(signal.SIGPIPE))
