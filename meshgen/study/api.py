"""The Python API of the studies: ``family(...)`` builds a refinement family, ``gci(...)``
runs the grid-convergence procedure of Celik et al. (2008) and returns a displayable result.

``meshgen`` re-exports both. Errors raise the project's exceptions; nothing here exits.
"""

from __future__ import annotations

import os
from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from pathlib import Path

from ..core.errors import MeshError
from ..core.jsontext import dumps
from .runner import RunReport

PathLike = str | os.PathLike


def _case_source(case):
    """What ``load_case`` takes: a Case becomes the dictionary of the values that were set."""
    from ..case import Case

    if isinstance(case, Case):
        return case.model_dump(mode="json", exclude_unset=True)
    return case


def family(case=None, levels: int = 3, ratio: float = 2.0, output: PathLike | None = None, *,
           formats: Sequence[str] | None = None, workers: int = 1, force: bool = False,
           keep_counts: bool = False) -> RunReport:
    """Build a refinement family of ``case`` (a Case, dictionary, TOML path or None for the
    default case) into ``output``/level-0, level-1, ... with ``output``/family.json.

    Level 0 is the case with its counts rounded up so that the levels nest (the case's
    counts exactly with ``keep_counts``); level k divides every block's cell count by
    ``ratio``**k on the same node mappings (``levels`` 2 to 12, ``ratio`` above 1.1; Celik et al. 2008
    recommend more than 1.3). ``output`` defaults to ``outputs/<case name>-family``.
    Returns the RunReport (manifest path, members built, skipped, failed); raises
    InputError before building anything on bad input and MeshError, after the others
    are built, when some member failed.
    """
    from ..pipeline.build import output_folder
    from .family import family_study
    from .runner import run_study

    study, _ = family_study(_case_source(case), [], levels, ratio, list(formats) if formats else None,
                            ["family", "--levels", str(levels), "--ratio", repr(ratio)]
                            + (["--keep-counts"] if keep_counts else []), keep_counts=keep_counts)
    root = output_folder(output, f"{study.members[0].plan.case.name}-family")
    report = run_study(study, root, workers=workers, force=force)
    if report.failed:
        raise MeshError("; ".join(f"{name}: {error}" for name, error in report.failed.items()))
    return report


@dataclass(frozen=True)
class GciResult:
    """Grid-convergence results per quantity (Celik et al. 2008 notation: grid 1 is the
    finest; GCI as a fraction of the fine-grid value). ``data`` is what ``meshgen gci
    --json`` prints (before JSON conversion)."""

    data: dict

    def table(self) -> str:
        """The plain-text table ``meshgen gci`` prints."""
        from .gci_report import gci_table

        return gci_table(self.data)

    def to_json(self) -> str:
        from .gci import to_json

        return dumps(to_json(self.data))

    def plot(self, path: PathLike) -> Path:
        """Write a PNG of each quantity against h with the extrapolated value and its band."""
        from .gci_report import plot_gci

        return plot_gci(self.data, path)

    def __getitem__(self, quantity: str) -> dict:
        return self.data["quantities"][quantity]

    def __repr__(self) -> str:
        qs = self.data["quantities"]
        parts = []
        for name, st in qs.items():
            res = st["results"][0]
            g = res.get("gci_fine21")
            parts.append(f"{name}: GCI_fine {'-' if g is None else f'{100 * g:.3g} %'}")
        return f"<GciResult {len(qs)} quantities; {'; '.join(parts)}>"

    def _repr_markdown_(self) -> str:
        return f"**{self!r}**\n\n```\n{self.table()}\n```\n"


def gci(results: PathLike | Sequence[Mapping], *, area: float | None = None, volume: float | None = None,
        manifest: PathLike | None = None, fs: float | None = None, assumed_order: float = 2.0,
        formal_order: float = 2.0) -> GciResult:
    """Grid-convergence uncertainty of every quantity in ``results``.

    ``results`` is a CSV path (one row per mesh: ``cells`` or ``h`` [m], an optional
    ``mesh`` name, one column per quantity) or the same rows as dictionaries. With only
    ``cells``, give ``area`` [m2] (2-D) or ``volume`` [m3] (3-D), or a ``manifest``
    (family.json; a family.json beside the CSV is found by itself). ``fs`` is the safety
    factor (default 1.25 for three or more meshes, 3 for two), ``assumed_order`` the order
    of a two-mesh study, ``formal_order`` the scheme's. Source: Celik et al. (2008),
    J. Fluids Eng. 130(7) 078001.
    """
    from ..core.errors import InputError
    from .gci import h_from_cells
    from .results import read_results_csv, study_rows

    if area is not None and volume is not None:
        raise InputError("gci: give area (2-D) or volume (3-D), not both")
    dim = 2 if area is not None else 3 if volume is not None else None
    size = area if area is not None else volume
    if isinstance(results, (str, os.PathLike)):
        if not Path(results).is_file():
            raise InputError(f"gci: results file {str(results)!r} does not exist")
        rows = read_results_csv(results, dim=dim, size=size, manifest=manifest)
    else:
        rows = [dict(r) for r in results]
        if rows and "h" not in rows[0]:
            if dim is None or any("cells" not in r for r in rows):
                raise InputError("gci: rows need 'h' [m], or 'cells' with area or volume")
            for r in rows:
                r["h"] = float(h_from_cells(r["cells"], dim, size))
        rows.sort(key=lambda r: r["h"])
    return GciResult(study_rows(rows, fs=fs, assumed_order=assumed_order, formal_order=formal_order))
