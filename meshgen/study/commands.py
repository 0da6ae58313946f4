"""The ``family`` and ``sweep`` commands, for ``meshgen.cli`` to add to its subparsers.

``add_commands(sub)`` adds both parsers and returns {"family": cmd_family, "sweep":
cmd_sweep}; each command takes the parsed arguments and returns an exit code (0 all
built, 1 some member failed, with a summary on stderr), raising InputError for bad input
before anything is written. Output folders default to ``outputs/<case name>-family`` and
``outputs/<case name>-sweep``.

The manifests record the arguments that decide the meshes (the case, ``--set``,
``--levels``/``--ratio`` or ``--vary``, ``--format``); ``-o``, ``--workers``,
``--scheduler`` and ``--force`` only decide where and how the builds run, so they are left
out and a Dask run's manifest equals a local run's apart from ``created``.
"""

from __future__ import annotations

import argparse
import os
import sys

from ..build import output_folder
from .runner import RunReport, Study, run_study

EXIT_OK, EXIT_FAIL = 0, 1


def default_workers() -> int:
    """Local worker processes when --workers is not given: two, or one on a single core."""
    return min(2, os.cpu_count() or 1)


def _run_args(p: argparse.ArgumentParser) -> None:
    from ..writers import FORMATS

    p.add_argument("-o", "--output", metavar="DIR", help="output folder (default outputs/<case name>-<command>)")
    p.add_argument("--workers", type=int, default=None, metavar="K",
                   help=f"local worker processes (default {default_workers()}); ignored with --scheduler")
    p.add_argument("--format", dest="formats", action="append", metavar="NAME",
                   help=f"output format, repeatable: {', '.join(sorted(FORMATS))}")
    p.add_argument("--force", action="store_true", help="rebuild every member and overwrite existing outputs")
    p.add_argument("--scheduler", metavar="ADDRESS",
                   help="build on a Dask cluster (e.g. tcp://host:8786) that shares the output folder")


def add_commands(sub) -> dict:
    """Add the ``family`` and ``sweep`` subparsers to ``sub``; return their commands by name."""
    from ..cli import _case_args  # at call time: cli.py is fully loaded when it builds its parser

    sf = sub.add_parser("family", help="build a refinement family (level 0 = the case, coarser levels)")
    _case_args(sf)
    sf.add_argument("--levels", type=int, required=True, metavar="N", help="number of levels (2 or more)")
    sf.add_argument("--ratio", type=float, required=True, metavar="R",
                    help="refinement ratio between levels (above 1.1; Celik et al. 2008 recommend > 1.3)")
    _run_args(sf)

    ss = sub.add_parser("sweep", help="build the case with the outer boundaries moved (domain sweep)")
    _case_args(ss)
    ss.add_argument("--vary", action="append", default=[], required=True, metavar="KEY=V1,V2,...",
                    help="domain key and its values, repeatable (cartesian product): domain.height_factor, "
                         "domain.upstream, domain.downstream, domain.span")
    _run_args(ss)
    return {"family": cmd_family, "sweep": cmd_sweep}


def _arguments(command: str, args, extra: list[str]) -> list[str]:
    """The arguments that decide the meshes, as a command line."""
    argv = [command] + ([args.case] if args.case else [])
    for item in args.overrides:
        argv += ["--set", item]
    argv += extra
    for name in args.formats or []:
        argv += ["--format", name]
    return argv


def _run(study: Study, warnings: list[str], args, case_name: str) -> int:
    for w in warnings:
        print(f"warning: {w}", file=sys.stderr)
    root = output_folder(args.output, f"{case_name}-{study.kind}")
    workers = default_workers() if args.workers is None else args.workers
    report = run_study(study, root, workers=workers, force=args.force, scheduler=args.scheduler,
                       stream=sys.stderr)
    return finish_report(report, study.kind)


def finish_report(report: RunReport, kind: str) -> int:
    """Print the outcome (stdout) and any failures (stderr); the exit code."""
    print(f"{kind}: {report.total} members in {report.manifest.parent} ({len(report.built)} built, "
          f"{len(report.skipped)} up to date, {len(report.failed)} failed); manifest {report.manifest}")
    if not report.failed:
        return EXIT_OK
    print(f"error: {len(report.failed)} of {report.total} {kind} members failed:", file=sys.stderr)
    for name, error in report.failed.items():
        print(f"error:   {name}: {error}", file=sys.stderr)
    return EXIT_FAIL


def cmd_family(args) -> int:
    from .family import family_study

    study, warnings = family_study(args.case, args.overrides, args.levels, args.ratio, args.formats,
                                   _arguments("family", args, ["--levels", str(args.levels),
                                                               "--ratio", repr(args.ratio)]))
    return _run(study, warnings, args, study.members[0].plan.case.name)


def cmd_sweep(args) -> int:
    from .sweep import sweep_study

    extra = [a for item in args.vary for a in ("--vary", item)]
    study, warnings = sweep_study(args.case, args.overrides, args.vary, args.formats,
                                  _arguments("sweep", args, extra))
    return _run(study, warnings, args, study.members[0].plan.case.name)
