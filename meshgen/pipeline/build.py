"""One build, start to finish: case -> plan -> mesh -> files in one output folder.

Everything that can be checked is checked before anything is written: the case, the
formats, the output folder and whether outputs would be overwritten. The mesh files are
written atomically; ``plan.json`` is written last, so its presence marks a finished build.
"""

from __future__ import annotations

import json
import os
import shutil
from collections.abc import Callable
from pathlib import Path

import numpy as np

from ..core.errors import InputError, WriteError
from ..core.jsontext import dumps
from ..io.atomic import clean_stale, write_text
from ..io.lock import folder_lock
from ..planning.plan import Plan

Progress = Callable[[str], None]


def _quiet(_: str) -> None:
    pass


def output_folder(output: str | os.PathLike | None, case_name: str, option: str = "-o") -> Path:
    """The output folder, checked: not a file, not a dangling link, and creatable or
    writable (``option`` names the argument in the messages)."""
    out = Path(output) if output else Path("outputs") / case_name
    try:
        if out.exists() and not out.is_dir():
            raise InputError(f"{option} {out}: is a file, not a folder")
        probe = out
        while not probe.exists():
            if probe.is_symlink():
                raise InputError(f"{option} {out}: {probe} is a symbolic link to {os.readlink(probe)}, "
                                 "which does not exist")
            probe = probe.parent
    except PermissionError:
        raise InputError(f"{option} {out}: a folder on the way is not readable or writable") from None
    if not probe.is_dir():
        raise InputError(f"{option} {out}: {probe} is a file, not a folder")
    if not os.access(probe, os.W_OK | os.X_OK):
        raise InputError(f"{option} {out}: folder {probe} is not writable")
    return out


def resolve_formats(names: list[str] | None, default: list[str]):
    from ..io.writers import get_format

    chosen = list(dict.fromkeys(names or default))
    problems, fmts = [], []
    for n in chosen:
        try:
            fmts.append(get_format(n))
        except InputError as exc:
            problems += exc.problems
    if problems:
        raise InputError(problems)
    return fmts


def _unwritable(targets: list[Path]) -> list[str]:
    """Outputs whose folder exists but may not be written (e.g. a read-only ``constant/``)."""
    folders = dict.fromkeys(p.parent for p in targets)
    return [f"{d}: folder is not writable" for d in folders
            if d.is_dir() and not os.access(d, os.W_OK | os.X_OK)]


#: Reports written beside every mesh (plan.json last, as the mark of a finished build).
REPORT_FILES = ("bc.json", "bc.md", "quality.json", "report.md", "plan.json")


def planned_outputs(out: Path, stem: str, fmts) -> list[Path]:
    paths = [p for f in fmts for p in f.outputs(out, stem)]
    return paths + [out / name for name in REPORT_FILES]


def verified_mesh(plan: Plan, verbose: bool = False):
    """The verified Mesh of ``plan``, carrying its boundary-condition sheet in
    ``meta["boundary_conditions"]`` for the solver set-up writers (foam-setup, su2-setup)."""
    from ..meshing.builder import build_mesh
    from ..reports.bc_sheet import bc_sheet

    mesh = build_mesh(plan, verbose=verbose)
    mesh.meta["boundary_conditions"] = bc_sheet(plan)  # the mesh was made just now: no one else holds it
    return mesh


def build_plan(plan: Plan, out: Path, fmts, force: bool = False, pictures: bool = True,
               verbose: bool = False, progress: Progress = _quiet, warnings=()) -> list[Path]:
    """Build and write one plan into ``out``; return the files written.

    The folder is locked for the whole build (io/lock.py): a second build into it stops
    with an InputError naming the process that holds it. ``warnings`` go to ``progress``
    once the checks have passed, so a refused build shows its errors alone.
    """
    with folder_lock(out):
        return _build_locked(plan, out, fmts, force, pictures, verbose, progress, warnings)


def _build_locked(plan: Plan, out: Path, fmts, force: bool, pictures: bool, verbose: bool,
                  progress: Progress, warnings) -> list[Path]:

    stem = plan.case.name
    targets = planned_outputs(out, stem, fmts)
    existing = [p for p in targets if p.exists()]
    if existing and not force:
        raise InputError(
            [f"{p}: exists; use --force to overwrite" for p in existing[:5]]
            + ([f"... and {len(existing) - 5} more"] if len(existing) > 5 else [])
        )
    unwritable = _unwritable(targets)
    if unwritable:
        raise InputError(unwritable)
    for w in warnings:
        progress(f"warning: {w}")
    clean_stale(out)
    progress(f"building {plan.cell_count:,} cells ({plan.case.name}, level {plan.level})")
    mesh = verified_mesh(plan, verbose)
    previous = _previous_files(out)
    # From here on the folder no longer holds one finished build, whatever happens next.
    (out / "plan.json").unlink(missing_ok=True)
    written: list[Path] = []
    for f in fmts:
        progress(f"writing {f.name}")
        written += f.write(mesh, out, stem)
    extra = _after_build_hooks(plan, mesh, out, pictures, progress)
    written += extra
    _remove_previous(out, previous, written, progress)
    d = plan.to_dict()
    d["files"] = [str(p.relative_to(out)) for p in written]
    written.append(write_text(out / "plan.json", dumps(d, what=str(out / "plan.json")) + "\n"))
    return written


def _previous_files(out: Path) -> list[str]:
    """The files the folder's last finished build listed in its plan.json (none if unreadable)."""
    try:
        files = json.loads((out / "plan.json").read_text())["files"]
    except (OSError, ValueError, KeyError, TypeError):
        return []
    return [f for f in files if isinstance(f, str)] if isinstance(files, list) else []


def _remove_previous(out: Path, previous: list[str], written: list[Path], progress: Progress) -> None:
    """Remove what the previous build wrote and this one did not (a --force build of
    other formats or another case): left beside the new plan.json, an old VTU or polyMesh
    would pass for a mesh of this case. Only paths inside ``out`` that the old plan.json
    recorded are touched, never a file of the user's."""
    now = {str(p.relative_to(out)) for p in written}
    root = out.resolve()
    for rel in previous:
        p = out / rel
        if rel in now or p.is_symlink() or not p.exists() or root not in p.resolve().parents:
            continue
        try:
            shutil.rmtree(p) if p.is_dir() else p.unlink()
        except OSError as exc:
            raise WriteError(f"{p}: left from the previous build and cannot be removed: {exc.strerror}") from exc
        progress(f"removed {p} (written by the previous build, not by this one)")
        for d in p.parents:  # an emptied constant/ goes too
            if d.resolve() == root or any(d.iterdir()):
                break
            d.rmdir()


def quality_for_plan(plan: Plan, mesh) -> dict:
    """The quality report of a built mesh, with the boundary-layer section from its plan."""
    from ..physics.treatment import TREATMENTS
    from ..physics.wall import y_plus
    from ..planning.sizing import sized_by_y_plus
    from ..reports.boundary_layer import boundary_layer_report
    from ..reports.quality import quality_report

    f, w = plan.flow, plan.case.wall
    x_ref = w.reference_station * f.length
    centre = w.y_plus_at == "centre"
    # the y+ at the reference station: the target when the first cell was sized by it
    target = float(y_plus(plan.first_cell_height, f.wall(np.array([x_ref])), centre)[0])
    t = TREATMENTS[w.treatment]
    # wall=f.wall gives every estimate; regime and correlation only label the report
    regime = "turbulent" if f.regime == "transitional" else f.regime
    blr = boundary_layer_report(mesh, plan.case.names.wall, f.velocity, f.nu, regime, f.correlation,
                                target, plate_length=f.length, x_ref=x_ref, wall=f.wall, at_centre=centre,
                                band=t.band, band_rule=t.description)
    blr["regime"] = f.regime
    if not sized_by_y_plus(w):  # the height was given or solved from a count: no target was set
        blr["y_plus_target"] = None
    blr["assumptions"] = plan.to_dict()["assumptions"]
    return quality_report(mesh, blr, angle_limit=plan.case.output.centre_line_angle_limit)


def _after_build_hooks(plan: Plan, mesh, out: Path, pictures: bool, progress: Progress) -> list[Path]:
    """Reports written beside the mesh: boundary-condition sheet, quality report, pictures."""
    from ..reports.bc_sheet import bc_markdown, bc_sheet
    from ..reports.markdown import quality_markdown

    sheet = bc_sheet(plan)
    written = [
        write_text(out / "bc.json", dumps(sheet, what=str(out / "bc.json")) + "\n"),
        write_text(out / "bc.md", bc_markdown(sheet)),
    ]
    progress("quality report")
    report = quality_for_plan(plan, mesh)
    pics: list[Path] = []
    if pictures:
        from ..reports.plots import make_pictures
        from ..reports.resolution_plot import write_resolution_picture

        progress("pictures")
        pics = make_pictures(mesh, report, plan.case.name, out)
        pics += write_resolution_picture(plan, plan.case.name, out)
    written.append(write_text(out / "quality.json", dumps(report, what=str(out / "quality.json")) + "\n"))
    written.append(write_text(out / "report.md", quality_markdown(report, plan.case.name, pics, relative_to=out)))
    return written + pics


def build_case(case_path=None, overrides=None, output=None, formats=None, force=False,
               pictures=True, verbose=False, progress: Progress = _quiet) -> list[Path]:
    from ..case import load_case
    from ..planning.plan import make_plan

    case = load_case(case_path, overrides)
    plan = make_plan(case)
    fmts = resolve_formats(formats, case.output.formats)
    out = output_folder(output, case.name)
    return build_plan(plan, out, fmts, force=force, pictures=pictures, verbose=verbose, progress=progress,
                      warnings=plan.warnings)
