"""The ``family``, ``sweep`` and ``domain`` commands, for ``meshgen.cli.main`` to add to its subparsers.

``add_commands(sub)`` adds the parsers and returns {"family": cmd_family, "sweep":
cmd_sweep, "domain": cmd_domain}; each command takes the parsed arguments and returns an
exit code, raising InputError for bad input before anything is written. ``family`` and
``sweep`` return 0 when every member is built and 1 when some member failed (with a
summary on stderr); their output folders default to ``outputs/<case name>-family`` and
``outputs/<case name>-sweep``. ``domain`` summarises a sweep's results CSV (domain.py,
domain_report.py) and returns 0 whatever the verdict: the verdict is in its output.

The manifests record the arguments that decide the meshes (the case, ``--set``,
``--levels``/``--ratio`` or ``--vary``, ``--format``); ``-o``, ``--workers``,
``--scheduler`` and ``--force`` only decide where and how the builds run, so they are left
out and a Dask run's manifest equals a local run's apart from ``created``.
"""

from __future__ import annotations

import argparse
import os
import sys

from ..core.errors import InputError, WriteError
from ..core.jsontext import dumps
from .args import _case_args, plot_problems
from .convention import CommaList, show_progress

EXIT_OK, EXIT_FAIL = 0, 1


def default_workers() -> int:
    """Local worker processes when --workers is not given: two, or one on a single core."""
    return min(2, os.cpu_count() or 1)


def _run_args(p: argparse.ArgumentParser) -> None:
    from ..io.writers import FORMATS

    p.add_argument("-o", "--output", metavar="DIR", help="output folder (default outputs/<case name>-<command>)")
    p.add_argument("--workers", type=int, default=None, metavar="K",
                   help=f"local worker processes (default {default_workers()}); ignored with --scheduler")
    p.add_argument("--format", dest="formats", action=CommaList, metavar="NAME[,NAME...]",
                   help=f"output format, repeatable: {', '.join(sorted(FORMATS))}")
    p.add_argument("--force", action="store_true", help="rebuild every member and overwrite existing outputs")
    p.add_argument("--json", action="store_true",
                   help="print the outcome as one JSON object on stdout (tables and messages go to stderr)")
    p.add_argument("--scheduler", metavar="ADDRESS",
                   help="build on a Dask cluster (e.g. tcp://host:8786) that shares the output folder")


def _family_args(p: argparse.ArgumentParser) -> None:
    from ..study.judge import Floors

    f = Floors()
    p.add_argument("--keep-counts", action="store_true",
                   help="keep the case's cell counts exactly (default: round them up so the levels nest)")
    p.add_argument("--dry-run", action="store_true", help="judge every level, print the table, write nothing")
    p.add_argument("--min-bl-cells", type=int, default=f.min_cells_delta99, metavar="N",
                   help=f"floor: wall-normal cells across delta99 at x/L = 0.5 (default {f.min_cells_delta99})")
    p.add_argument("--max-growth", type=float, default=f.max_growth, metavar="G",
                   help=f"ceiling: growth ratio between neighbouring cells (default {f.max_growth:g})")
    p.add_argument("--y-plus-band", metavar="LO,HI",
                   help="band of the first-cell y+ at the reference station (default: the wall treatment's)")


def _floors(args, case):
    """The floors from the options; the y+ band defaults to the case's wall treatment."""
    from ..study.judge import Floors, treatment_band

    problems = []
    if args.min_bl_cells < 1:
        problems.append(f"--min-bl-cells {args.min_bl_cells}: a whole number of cells, 1 or more")
    if not args.max_growth >= 1.0:  # also refuses NaN
        problems.append(f"--max-growth {args.max_growth}: a ratio of 1 or more, e.g. 1.3")
    band = treatment_band(case)
    if args.y_plus_band is not None:
        try:
            lo, hi = (float(v) for v in args.y_plus_band.split(","))
            if not 0 <= lo < hi:
                raise ValueError
            band = (lo, hi)
        except ValueError:
            problems.append(f"--y-plus-band {args.y_plus_band}: two numbers LO,HI with 0 <= LO < HI, e.g. 30,300")
    if problems:
        raise InputError(problems)
    return Floors(args.min_bl_cells, args.max_growth, band)


def add_commands(sub) -> dict:
    """Add the ``family`` and ``sweep`` subparsers to ``sub``; return their commands by name."""

    sf = sub.add_parser("family", help="build a refinement family (level 0 = the case, coarser levels)")
    _case_args(sf)
    sf.add_argument("--levels", type=int, required=True, metavar="N", help="number of levels, 2 to 12")
    sf.add_argument("--ratio", type=float, required=True, metavar="R",
                    help="refinement ratio between levels (above 1.1; Celik et al. 2008 recommend > 1.3)")
    _family_args(sf)
    _run_args(sf)

    ss = sub.add_parser("sweep", help="build the case with the outer boundaries moved (domain sweep)")
    _case_args(ss)
    ss.add_argument("--vary", action="append", default=[], required=True, metavar="KEY=V1,V2,...",
                    help="domain key and its values, repeatable (cartesian product): domain.height_factor, "
                         "domain.upstream, domain.downstream, domain.span")
    _run_args(ss)

    sd = sub.add_parser("domain", help="domain independence: each sweep variant against the largest domain")
    sd.add_argument("results", help="a sweep folder (each variant's results.json), or a CSV: one row per variant, "
                                    "a key column (e.g. height_factor) or a 'variant' column of folder names, and "
                                    "one or more quantity columns")
    sd.add_argument("--fit-order", type=float, metavar="Q",
                    help="decay order q of the fit phi_inf + a H^-q (default: fitted, from 3 variants)")
    sd.add_argument("--key", metavar="COLUMN",
                    help="the column or sweep key that sizes the domain (default: the only one that varies)")
    from ..study.domain import DEFAULT_TOL

    sd.add_argument("--tol", type=float, default=DEFAULT_TOL, metavar="FRACTION",
                    help="accepted relative change against the largest domain (default 0.01, i.e. 1 %%)")
    sd.add_argument("--json", action="store_true", help="print the summary as JSON")
    sd.add_argument("--plot", metavar="FILE", help="write a PNG (.png) of each quantity against the key")
    sd.add_argument("--manifest", metavar="FILE",
                    help="sweep.json giving each variant's key values (default: beside the CSV)")
    return {"family": cmd_family, "sweep": cmd_sweep, "domain": cmd_domain}


def _arguments(command: str, args, extra: list[str]) -> list[str]:
    """The arguments that decide the meshes, as a command line."""
    argv = [command] + ([args.case] if args.case else [])
    for item in args.overrides:
        argv += ["--set", item]
    argv += extra
    for name in args.formats or []:
        argv += ["--format", name]
    return argv


def _run(study, warnings: list[str], args, case_name: str) -> int:
    from ..pipeline.build import output_folder
    from ..study.runner import run_study

    root = output_folder(args.output, f"{case_name}-{study.kind}")
    workers = default_workers() if args.workers is None else args.workers
    # the warnings are printed once the run has passed its checks (whatever the progress
    # setting): an exit 2 prints its errors only
    report = run_study(study, root, workers=workers, force=args.force, scheduler=args.scheduler,
                       stream=sys.stderr if show_progress(args) else None,
                       on_start=lambda: [print(f"warning: {w}", file=sys.stderr) for w in warnings])
    return finish_report(report, study.kind, as_json=args.json)


def finish_report(report, kind: str, as_json: bool = False) -> int:
    """Print the outcome (stdout; one JSON object with ``as_json``) and any failures
    (stderr); the exit code."""
    if as_json:
        print(dumps({"command": kind, "folder": str(report.manifest.parent), "manifest": str(report.manifest),
                     "total": report.total, "built": report.built, "skipped": report.skipped,
                     "failed": report.failed}))
    else:
        print(f"{kind}: {report.total} members in {report.manifest.parent} ({len(report.built)} built, "
              f"{len(report.skipped)} up to date, {len(report.failed)} failed); manifest {report.manifest}")
    if not report.failed:
        return EXIT_OK
    print(f"error: {len(report.failed)} of {report.total} {kind} members failed:", file=sys.stderr)
    for name, error in report.failed.items():
        print(f"error:   {name}: {error}", file=sys.stderr)
    return EXIT_FAIL


def cmd_family(args) -> int:
    from ..case import load_case
    from ..study.family import family_study
    from ..study.judge import judgement_table

    try:
        case = load_case(args.case, args.overrides)
    except InputError:
        case = None  # family_study lists the case's problems with every other one
    floors = _floors(args, case)
    extra = ["--levels", str(args.levels), "--ratio", repr(args.ratio)]
    extra += ["--keep-counts"] if args.keep_counts else []
    study, warnings = family_study(args.case, args.overrides, args.levels, args.ratio, args.formats,
                                   _arguments("family", args, extra), keep_counts=args.keep_counts,
                                   floors=floors)
    nesting = study.header["nesting"]
    out = sys.stderr if args.json else sys.stdout  # with --json, stdout holds the JSON object only
    if nesting["rounded"]:
        print("family: the finest level's counts rounded up so that the levels nest "
              "(--keep-counts keeps the case's):", file=out)
        for name, (old, new) in nesting["rounded"].items():
            print(f"  {name}: {old} -> {new}", file=out)
    for note in nesting["notes"]:
        print(f"family: {note}", file=out)
    print(judgement_table([m.name for m in study.members], [m.record["judgement"] for m in study.members],
                          floors), file=out)
    if args.dry_run:
        for w in warnings:
            print(f"warning: {w}", file=sys.stderr)
        print("family: dry run, nothing written", file=out)
        if args.json:
            print(dumps({"command": "family", "dry_run": True,
                         "levels": [{"name": m.name, **m.record} for m in study.members]}))
        return EXIT_OK
    return _run(study, warnings, args, study.members[0].plan.case.name)


def cmd_sweep(args) -> int:
    from ..study.sweep import sweep_study

    extra = [a for item in args.vary for a in ("--vary", item)]
    study, warnings = sweep_study(args.case, args.overrides, args.vary, args.formats,
                                  _arguments("sweep", args, extra))
    return _run(study, warnings, args, study.members[0].plan.case.name)


def cmd_domain(args) -> int:
    from ..study.domain import domain_summary
    from ..study.domain_report import domain_table, plot_domain, verdict

    problems = plot_problems(args.plot)
    if not (0 < args.tol < 1):  # also refuses NaN
        problems.append(f"--tol {args.tol}: a fraction above 0 and below 1, e.g. 0.01 for 1 %")
    if problems:
        raise InputError(problems)
    if args.fit_order is not None and not args.fit_order > 0:
        raise InputError(f"--fit-order {args.fit_order}: a positive decay order, e.g. 1")
    summary = domain_summary(args.results, key=args.key, tol=args.tol, manifest=args.manifest,
                             fit_order=args.fit_order)
    if args.json:
        print(dumps({**summary, "verdict": verdict(summary)}))
    else:
        print(domain_table(summary))
    if args.plot:
        try:
            written = plot_domain(summary, args.plot)
        except OSError as exc:
            raise WriteError(f"--plot {args.plot}: cannot be written ({exc.strerror or exc})") from None
        print(f"wrote {written}", file=sys.stderr)
    return EXIT_OK
