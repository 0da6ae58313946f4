"""Speed and memory benchmark, ``python -m meshgen.bench [--quick] [--json FILE]``: ratios to baselines of the same run.

Every figure is a ratio to a baseline measured in the same run, because the machine is
shared and its speed drifts from minute to minute:

- baseline A: gmsh alone meshing the same rectangle as one transfinite, recombined
  surface with the same node counts (uniform, Progression 1) and writing binary MSH 4.1:
  the cost of the meshing kernel meshgen builds on;
- baseline B: numpy writing the same node and cell arrays raw (``ndarray.tofile``): the
  cost of the bytes.

Each measurement runs in a fresh child process (gmsh holds one model per process, and a
child's peak resident memory, ``ru_maxrss``, is its own). Times are taken inside the
child around the work only (no interpreter start or imports) and each is the minimum of
``repeat`` runs, interleaved with its baseline's runs: on a shared machine the minimum is
the run least disturbed by other load. The cases give the viscosity directly, so that no
fluid-property tables (CoolProp) are loaded; one block (no upstream or wake block), so
the rectangle of baseline A is the whole domain.
"""


from .config import FULL, GMSH_WRITTEN, QUICK, Config, case_overrides
from .measure import fit_exponent
from .report import table
from .run import main, run_bench

__all__ = ["FULL", "GMSH_WRITTEN", "QUICK", "Config", "case_overrides", "fit_exponent", "main", "run_bench", "table"]
