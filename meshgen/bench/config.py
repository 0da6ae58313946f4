"""What the benchmark measures: goals, sizes, the bench cases and the formats timed."""

from __future__ import annotations

import math
from dataclasses import dataclass
from pathlib import Path

MIB = 1 << 20
GIB = 1 << 30
#: Goals of the issues: build time and peak memory against baseline A, own writers' rate,
#: the 3-D mesh's peak memory and writing rate, start-up time, and the fitted growth
#: exponent of build time with cells.
GOAL_BUILD_TIME = 1.2
GOAL_BUILD_MEMORY = 1.5
GOAL_WRITER_MBPS = 150.0
GOAL_SOLID_BYTES = 6 * GIB
GOAL_SOLID_MBPS = 200.0
GOAL_PICTURES_SECONDS = 1.0
GOAL_STARTUP_SECONDS = 0.2
#: Formats written at the 3-D size too, and why the others are not: they build the whole
#: mesh in memory instead of streaming it layer by layer.
NOT_STREAMED = {"su2": "not streamed (ASCII of the whole mesh)"}
EXPONENT_BAND = (0.9, 1.1)
#: Formats gmsh itself writes (the rate goal is for meshgen's own writers): none since
#: MSH is written with numpy too.
GMSH_WRITTEN: tuple[str, ...] = ()
#: Address-space limit of every child, so that a runaway measurement fails with
#: MemoryError instead of pushing a shared machine into the out-of-memory killer.
CHILD_LIMIT = 20 * GIB
CHILD_TIMEOUT = 900  # s
VISCOSITY = 1.5e-5  # m2/s, about air at 15 C (from memory); the value only sizes the wall
ASPECT = 2.56  # streamwise / wall-normal cell counts of the bench grids (1600 x 625)


@dataclass(frozen=True)
class Config:
    sizes: tuple[int, ...]  # 2-D cell counts of the build rows
    writer_cells: int  # 2-D cells of the writer rows
    solid: tuple[int, int] | None  # (2-D cells, span cells) of the 3-D row, or None
    family_cells: int | None  # finest level of the family rows, or None
    repeat: int
    family_levels: int = 4
    family_ratio: float = 2.0
    solid_writers: bool = True  # each streamed writer on the 3-D mesh, in its own child
    startup_repeat: int = 5


#: The full run: 1e8 hexahedra (1e6 quads x 100 layers); the quick one 1e7.
FULL = Config((100_000, 1_000_000, 4_000_000), 1_000_000, (1_000_000, 100), 1_000_000, 3)
QUICK = Config((100_000, 300_000), 300_000, (100_000, 100), 300_000, 2)


def grid_counts(cells: int) -> tuple[int, int]:
    """Streamwise and wall-normal cell counts (nx even) whose product is about ``cells``."""
    ny = max(8, round(math.sqrt(cells / ASPECT)))
    return max(4, 2 * round(cells / ny / 2)), ny


def case_overrides(cells: int, span_cells: int = 0, blocks: int = 1) -> list[str]:
    """``--set`` overrides of the default case giving about ``cells`` cells (times
    ``span_cells`` layers): one block, or with ``blocks=3`` an upstream and a wake block of
    an eighth of the streamwise cells each (every Plot3D block record under 2 GiB at 1e8)."""
    nx, ny = grid_counts(cells)
    plate = nx if blocks == 1 else nx - 2 * (nx // 8)
    dx = 1.0 / (plate + 0.5)  # [L]; uniform on the plate, the half-cell keeps nx from rounding down
    out = ["name=bench", "flow.fluid=", f"flow.nu={VISCOSITY!r}",
           f"streamwise.leading_edge_spacing={dx!r}", f"streamwise.trailing_edge_spacing={dx!r}",
           f"streamwise.max_spacing={dx!r}", "wall.growth_ratio=", f"wall.cells={ny}",
           f"output.max_cells={max(20_000_000, 2 * cells * max(span_cells, 1))}"]
    if blocks == 1:
        out += ["domain.upstream=0", "domain.downstream=0"]
    else:
        out += ["domain.upstream=0.2", "domain.downstream=0.2", f"streamwise.upstream_cells={nx // 8}",
                f"streamwise.wake_cells={nx // 8}"]
    if span_cells:
        out += ["domain.span=0.2", f"domain.span_cells={span_cells}"]
    return out


def _plan(overrides: list[str]):
    from ..case import load_case
    from ..planning.plan import make_plan

    return make_plan(load_case(None, overrides))


def _size(path: Path) -> int:
    path = Path(path)
    return sum(f.stat().st_size for f in path.rglob("*") if f.is_file()) if path.is_dir() else path.stat().st_size


def _formats():
    """Every registered mesh format (not the solver set-up ones), with the modules that may
    register more imported first."""
    import importlib

    from ..io.writers import FORMATS

    for name in ("su2", "foam"):
        try:
            importlib.import_module(f"meshgen.writers.{name}")
        except ImportError:
            pass  # not written yet: the registry lists what exists
    return {n: f for n, f in FORMATS.items() if not f.setup}
