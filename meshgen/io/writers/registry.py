"""The table of output formats: each writer module registers itself here.

Adding a format touches its own module, one import line in ``writers/__init__.py`` and
one test file. The command line reads this table for ``--format`` and its help text.
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass
from pathlib import Path

from ...core.errors import InputError
from ...meshing.mesh import Mesh

#: write(mesh, out_dir, stem) -> the paths written (files or folders), inside out_dir.
WriteFn = Callable[[Mesh, Path, str], list[Path]]


@dataclass(frozen=True)
class Format:
    name: str
    description: str
    solvers: str  # which programs read it, for the README and `--help`
    outputs: Callable[[Path, str], list[Path]]  # the paths write() will create
    write: WriteFn
    setup: bool = False  # a solver set-up beside the mesh (foam-setup, su2-setup), not a mesh file


FORMATS: dict[str, Format] = {}


def register(fmt: Format) -> Format:
    FORMATS[fmt.name] = fmt
    return fmt


def get_format(name: str) -> Format:
    try:
        return FORMATS[name]
    except KeyError:
        raise InputError(
            f"--format: unknown format {name!r}; valid: {', '.join(sorted(FORMATS))}"
        ) from None
