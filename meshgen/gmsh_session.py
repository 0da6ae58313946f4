"""The one place that owns gmsh's global state: a session as a context manager.

gmsh keeps one model per process and is not thread-safe, so every build (and every
writer that needs gmsh) opens its own session and closes it, and families build in
separate processes. Options follow ../shared/pitfalls.md: no user config files, no
SIGINT handler, a geometric tolerance far below the smallest spacing.
"""

from __future__ import annotations

from collections.abc import Iterator
from contextlib import contextmanager

from .errors import MeshgenError


@contextmanager
def gmsh_session(verbose: bool = False, name: str = "meshgen") -> Iterator[object]:
    """Initialise gmsh quietly (unless ``verbose``), yield the module, always finalise."""
    import gmsh

    if gmsh.isInitialized():
        raise MeshgenError("a gmsh session is already open in this process")
    gmsh.initialize(readConfigFiles=False, interruptible=False)
    try:
        gmsh.option.setNumber("General.Terminal", 1 if verbose else 0)
        gmsh.option.setNumber("General.Verbosity", 99 if verbose else 0)
        gmsh.option.setNumber("General.NumThreads", 1)
        gmsh.model.add(name)
        yield gmsh
    finally:
        gmsh.finalize()
