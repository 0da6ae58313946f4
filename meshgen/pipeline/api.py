"""The Python API of one mesh: ``plan(case)``, ``build(plan)`` and the built mesh's methods.

``meshgen`` re-exports these (``meshgen.plan``, ``meshgen.build``); the five lines::

    import meshgen
    case = meshgen.load_case({"flow": {"reynolds": 1e5, "length": 1.0}})
    plan = meshgen.plan(case)          # sizing; printable, a table in Jupyter
    mesh = meshgen.build(plan)         # verified BuiltMesh
    mesh.write("out/plate.msh")        # format from the suffix, or format="su2", ...

Errors raise the project's exceptions (CaseError, InputError, MeshError, WriteError);
nothing here exits or prints.
"""

from __future__ import annotations

import os
from functools import cached_property
from pathlib import Path

from ..core.errors import InputError
from ..meshing.mesh import Mesh
from ..planning.plan import Plan

PathLike = str | os.PathLike


def plan(case=None) -> Plan:
    """The sizing Plan of ``case``: a Case, a dictionary or TOML path for ``load_case``, or
    None for the embedded default case. Lengths [m], velocities [m/s], viscosity [m2/s].

    >>> plan({"flow": {"reynolds": 1e5}}).cell_count > 0
    True
    """
    from ..case import Case, load_case
    from ..planning.plan import make_plan

    return make_plan(case if isinstance(case, Case) else load_case(case))


class BuiltMesh:
    """A verified Mesh together with the Plan it was built from.

    Reads like the Mesh (``points`` [m], ``cells``, ``groups``, ``group_sizes()``, ``dim``,
    ...; ``.mesh`` is the Mesh itself, which a 3-D extrusion builds only when read) and
    adds what a notebook needs: ``write`` (any registered format), ``quality()`` (the
    quality report, with the boundary-layer section from the plan), ``pictures(folder)``
    and ``boundary_conditions()`` (the BC sheet).
    """

    def __init__(self, mesh: Mesh, plan: Plan | None = None):
        self.mesh, self.plan = mesh, plan

    def __getattr__(self, name: str):
        if name == "mesh":  # not set yet (copy, pickle): no recursion
            raise AttributeError(name)
        return getattr(self.mesh, name)

    def __repr__(self) -> str:
        return (f"<BuiltMesh {self.meta.get('case', '?')!r} level {self.meta.get('level', 0)}: "
                f"{self.dim}-D, {self.n_cells:,} {self.cell_type} cells, {self.n_points:,} nodes, "
                f"groups {', '.join(self.group_sizes())}>")

    def _group_lines(self) -> list[str]:
        lines = ["| group | role | facets |", "|---|---|---|"]
        return lines + [f"| {g.name} | {g.role} | {g.facets.shape[0]:,} |" for g in self.groups]

    def _repr_markdown_(self) -> str:
        from ..planning.summary import plan_markdown

        sizing = plan_markdown(self.plan.to_dict()) if self.plan is not None else ""
        return f"**{self!r}**\n\n" + "\n".join(self._group_lines()) + "\n\n" + sizing

    def _repr_html_(self) -> str:
        import html

        from ..planning.summary import plan_html

        rows = "".join(f"<tr><td>{html.escape(g.name)}</td><td>{g.role}</td><td>{g.facets.shape[0]:,}</td></tr>"
                       for g in self.groups)
        sizing = plan_html(self.plan.to_dict()) if self.plan is not None else ""
        return (f"<p><b>{html.escape(repr(self))}</b></p><table><tr><th>group</th><th>role</th>"
                f"<th>facets</th></tr>{rows}</table>{sizing}")

    def write(self, path: PathLike, format: str | None = None) -> list[Path]:
        """Write the mesh; return the paths written.

        ``path`` is the file to write (``out/plate.msh``, ``out/plate.su2``...); the format
        follows from its suffix unless ``format`` names one (``meshgen formats`` lists
        them). For ``polymesh`` and ``foam-setup`` ``path`` is the case folder.
        Files are written atomically; existing ones are replaced.
        """
        from ..io.writers import FORMATS, get_format

        path = Path(path)
        fmt = get_format(format) if format else _format_for(path, FORMATS)
        folder, stem = _folder_and_stem(path, fmt)
        return fmt.write(self.mesh, folder, stem)

    @cached_property
    def _quality(self) -> dict:
        from ..reports.quality import quality_report
        from .build import quality_for_plan

        return quality_report(self.mesh) if self.plan is None else quality_for_plan(self.plan, self.mesh)

    def quality(self) -> dict:
        """The quality report as JSON-ready data (what ``quality.json`` holds): cell
        metrics with their acceptable ranges, growth ratios, face angles and, with a plan,
        cells across delta99 and y+ along the plate."""
        return self._quality

    def report_markdown(self, pictures=()) -> str:
        """``report.md``'s text for this mesh (pictures linked by name)."""
        from ..reports.markdown import quality_markdown

        return quality_markdown(self._quality, self.meta.get("case", "mesh"), pictures)

    def pictures(self, folder: PathLike) -> list[Path]:
        """Write mesh.png, spacing.png and y_plus.png into ``folder``; return their paths."""
        from ..reports.plots import make_pictures

        return make_pictures(self.mesh, self._quality, self.meta.get("case", "mesh"), Path(folder))

    def boundary_conditions(self) -> dict:
        """The boundary-condition sheet (what ``bc.json`` holds): free stream, turbulence
        values with their recommended ranges, one entry per group."""
        from ..reports.bc_sheet import bc_sheet

        if self.plan is None:
            raise InputError("boundary_conditions: this mesh has no plan; build it with meshgen.build(plan)")
        return bc_sheet(self.plan)


#: A stem no format's fixed names contain: a format whose first output does not start
#: with it writes fixed names into a case folder (polymesh, foam-setup).
_PROBE = "meshgen-stem-probe"


def _is_folder_format(fmt) -> bool:
    first = fmt.outputs(Path(), _PROBE)[0]
    return first.parent != Path() or not first.name.startswith(_PROBE)


def _format_for(path: Path, formats: dict):
    """The format whose first output file has ``path``'s name ending (longest match)."""
    name = path.name
    best, size = None, 0
    for fmt in formats.values():
        first = fmt.outputs(Path(), "x")[0]
        if _is_folder_format(fmt):
            continue  # a folder format (polymesh, foam-setup): only by name
        ending = first.name[1:]
        if name.endswith(ending) and len(ending) > size and len(name) > len(ending):
            best, size = fmt, len(ending)
    if best is None:
        endings = sorted(f.outputs(Path(), "x")[0].name[1:] for f in formats.values()
                         if not _is_folder_format(f))
        raise InputError(f"write: cannot tell the format of {path.name!r} from its suffix; "
                         f"give format=... or a name ending in {', '.join(endings)}")
    return best


def _folder_and_stem(path: Path, fmt) -> tuple[Path, str]:
    first = fmt.outputs(Path(), "x")[0]
    if _is_folder_format(fmt):  # path is the case folder
        return path, path.name
    ending = first.name[1:]
    if not path.name.endswith(ending) or path.name == ending:
        raise InputError(f"write: format {fmt.name!r} writes '<name>{ending}', not {path.name!r}; "
                         f"give a path ending in {ending}")
    return path.parent, path.name[: -len(ending)]


def build(plan: Plan, verbose: bool = False) -> BuiltMesh:
    """Mesh ``plan`` with gmsh, verify it against the plan and return it (extruded in 3-D).

    Raises MeshError when the mesh differs from the plan in any checked way (node and
    cell counts, grid points, cells, groups, first wall spacing).
    """
    from .build import verified_mesh

    if not isinstance(plan, Plan):
        raise InputError(f"build: expected a Plan (from meshgen.plan(case)), got {type(plan).__name__}")
    return BuiltMesh(verified_mesh(plan, verbose), plan)
