"""The command line: ``main(argv)`` returns an exit code, so tests call it in-process.

Exit codes: 0 done, 2 bad input (one line per problem on stderr, nothing written),
130 interrupted, 1 anything else.
"""

from __future__ import annotations

import argparse
import importlib
import os
import sys
from pathlib import Path

from .. import __version__
from ..core.errors import InputError, MeshgenError
from ..core.jsontext import dumps
from . import convention
from .args import _case_args, _Parser, plot_problems

EXIT_OK, EXIT_FAIL, EXIT_INPUT, EXIT_INTERRUPT = 0, 1, 2, 130


def _parser() -> argparse.ArgumentParser:
    from ..io.writers import FORMATS

    p = _Parser(prog="meshgen", description="Graded, tagged structured meshes for flat-plate boundary layers.",
                epilog=convention.OUTPUT_RULE)
    p.add_argument("--version", action="version", version=f"meshgen {__version__}")
    convention.global_options(p)
    sub = p.add_subparsers(dest="command", parser_class=_Parser)

    sp = sub.add_parser("plan", help="print the sizing table (no mesh is built)")
    _case_args(sp)
    sp.add_argument("--json", action="store_true", help="print the plan as JSON")

    sb = sub.add_parser("build", help="build, verify and write the mesh")
    _case_args(sb)
    sb.add_argument("-o", "--output", metavar="DIR", help="output folder (default outputs/<case name>/)")
    sb.add_argument("--format", dest="formats", action=convention.CommaList, metavar="NAME[,NAME...]",
                    help=f"output formats, comma list or repeated: {', '.join(sorted(FORMATS))}")
    sb.add_argument("--json", action="store_true",
                    help="print the folder, files and warnings as one JSON object on stdout")
    sb.add_argument("--force", action="store_true", help="overwrite existing outputs")
    sb.add_argument("--no-pictures", action="store_true", help="skip the PNG pictures")

    si = sub.add_parser("init", help="list the starter cases, or write one to edit ('default' is the embedded case)")
    si.add_argument("template", nargs="?", help="template name, or 'default' for the embedded default case")
    si.add_argument("-o", "--output", metavar="FILE", help="file to write (default <template>.toml)")
    si.add_argument("--force", action="store_true", help="overwrite an existing file")

    sg = sub.add_parser("gci", help="grid-convergence uncertainty (Celik et al. 2008) from a family folder or a CSV")
    sg.add_argument("results", help="a family folder (each level's results.json), or a CSV: one row per mesh with "
                                    "cells or h (or mesh names with family.json) and named quantities")
    sg.add_argument("--wall", metavar="NAME.csv",
                    help="with a family folder: each level's wall distribution NAME.csv, GCI at stations along the wall")
    sg.add_argument("--stations", metavar="X/L,...",
                    help="stations x/L for --wall: a,b,c or start:stop:step (default 0.1:0.9:0.05)")
    sg.add_argument("--quantity", action="append", metavar="NAME", help="with --wall: the columns to study "
                    "(repeatable; default every column but x)")
    sg.add_argument("--json", action="store_true", help="print the results as JSON")
    sg.add_argument("--plot", metavar="FILE", help="write a PNG of each quantity against h")
    sg.add_argument("--manifest", metavar="FILE", help="family.json giving h per level (default: beside the CSV)")
    sg.add_argument("--area", type=float, help="2-D domain area [m2], to get h from cells")
    sg.add_argument("--volume", type=float, help="3-D domain volume [m3], to get h from cells")
    sg.add_argument("--fs", type=float, help="safety factor (default 1.25 for three or more meshes, 3 for two)")
    sg.add_argument("--assumed-order", type=float, default=2.0, help="order for a two-mesh study (default 2)")
    sg.add_argument("--formal-order", type=float, default=2.0, help="the scheme's formal order (default 2)")

    sn = sub.add_parser("inspect", help="quality report of a mesh file (MSH 4.1/2.2, VTU, SU2, polyMesh folder)")
    sn.add_argument("mesh", help="mesh file, or an OpenFOAM case / polyMesh folder")
    sn.add_argument("--json", action="store_true", help="print the report as JSON")
    sn.add_argument("--pictures", metavar="DIR",
                    help="write the pictures into DIR (the printed report links them from the current folder)")
    sn.add_argument("--angle-limit", type=float, default=70.0, metavar="DEG",
                    help="largest acceptable centre-line angle, above 0 and below 90 (default 70, common "
                         "practice for finite-volume solvers)")

    sf = sub.add_parser("formats", help="list the output formats and the solvers that read them")
    sf.add_argument("--json", action="store_true", help="print the formats as one JSON object")
    for module in EXTRA_COMMANDS:
        COMMANDS.update(importlib.import_module(module).add_commands(sub))
    convention.apply(p)
    return p


def _templates_dir() -> Path:
    from ..case import TEMPLATES_DIR

    return TEMPLATES_DIR


#: ``meshgen init default`` writes the embedded default case.
DEFAULT_TEMPLATE = "default"


def _template_text(name: str) -> str:
    if name == DEFAULT_TEMPLATE:
        from ..case import DEFAULT_CASE_TOML

        return DEFAULT_CASE_TOML
    return (_templates_dir() / f"{name}.toml").read_text(encoding="utf-8")


def _template_summary(text: str) -> str:
    """The first sentence of the leading comment block (it may run over several lines)."""
    lines = []
    for line in text.splitlines():
        if not line.startswith("#"):
            break
        lines.append(line.lstrip("# ").strip())
    words = " ".join(lines)
    end = words.find(". ")
    return words if end < 0 else words[: end + 1]


def cmd_init(args) -> int:
    names = sorted([DEFAULT_TEMPLATE, *(p.stem for p in _templates_dir().glob("*.toml"))])
    if not args.template:
        width = max(len(n) for n in names)
        for n in names:
            print(f"{n.ljust(width)}  {_template_summary(_template_text(n))}")
        return EXIT_OK
    if args.template not in names:
        import difflib

        close = difflib.get_close_matches(args.template, names, n=1)
        hint = f"; did you mean {close[0]!r}?" if close else ""
        raise InputError(f"init: unknown template {args.template!r}{hint} (valid: {', '.join(names)})")
    target = Path(args.output or f"{args.template}.toml")
    if target.is_dir():
        raise InputError(f"-o {target}: is a folder; give a file name")
    if target.exists() and not args.force:
        raise InputError(f"-o {target}: exists; use --force to overwrite")
    from ..pipeline.build import output_folder

    output_folder(target.parent, "", option=f"-o {target}: folder")  # a file, a dangling link, read-only
    from ..io.atomic import write_text

    write_text(target, _template_text(args.template))
    print(f"wrote {target}")
    return EXIT_OK


def cmd_plan(args) -> int:
    from ..case import load_case
    from ..planning.plan import make_plan
    from ..reports.bc_sheet import bc_markdown, bc_sheet
    from ..reports.plan_text import CAUTION, plan_table

    plan = make_plan(load_case(args.case, args.overrides))
    d = plan.to_dict()
    sheet = bc_sheet(plan)
    if args.json:
        d["boundary_conditions"] = sheet
        d["caution"] = CAUTION
        print(dumps(d))
    else:
        print(plan_table(d))
        print()
        print(bc_markdown(sheet).split("\n", 2)[2])
        print(CAUTION)
    return EXIT_OK


def cmd_formats(args) -> int:
    from ..io.writers import FORMATS

    if args.json:
        print(dumps({name: {"description": f.description, "solvers": f.solvers, "setup": f.setup,
                            "outputs": [str(o) for o in f.outputs(Path(), "<name>")]}
                     for name, f in sorted(FORMATS.items())}))
        return EXIT_OK
    width = max(len(n) for n in FORMATS)
    for name, f in sorted(FORMATS.items()):
        print(f"{name.ljust(width)}  {f.description}. Read by: {f.solvers}")
    return EXIT_OK


def cmd_gci(args) -> int:
    from ..study.gci import to_json
    from ..study.gci_report import gci_table, plot_gci
    from ..study.results import read_results_csv, study_rows

    problems = plot_problems(args.plot)
    if problems:
        raise InputError(problems)
    if Path(args.results).is_dir():
        from .loop_commands import cmd_gci_folder

        return cmd_gci_folder(args)
    if args.wall or args.stations or args.quantity:
        raise InputError("gci: --wall, --stations and --quantity need a family folder, not a CSV")
    if args.area is not None and args.volume is not None:
        raise InputError("gci: give --area (2-D) or --volume (3-D), not both")
    dim = 2 if args.area is not None else 3 if args.volume is not None else None
    size = args.area if args.area is not None else args.volume
    if not Path(args.results).is_file():
        raise InputError(f"gci: results file {args.results!r} does not exist")
    rows = read_results_csv(args.results, dim=dim, size=size, manifest=args.manifest)
    results = study_rows(rows, fs=args.fs, assumed_order=args.assumed_order, formal_order=args.formal_order)
    if args.json:
        print(dumps(to_json(results)))
    else:
        print(gci_table(results))
    if args.plot:
        print(f"wrote {plot_gci(results, args.plot)}", file=sys.stderr)
    return EXIT_OK


def _read_any(path: Path):
    """A Mesh from any file the tool can read, chosen by suffix; a folder is a polyMesh."""
    from ..core.errors import ReadError

    if not path.exists():
        raise ReadError(f"inspect: {path} does not exist")
    if path.is_dir():
        from ..io.readers.foam import polymesh_to_mesh

        return polymesh_to_mesh(path)
    suffix = path.suffix.lower()
    if suffix == ".msh":
        from ..io.readers.msh import read_msh

        return read_msh(path)
    if suffix == ".vtu":
        from ..io.readers.vtu import read_vtu

        return read_vtu(path)
    if suffix == ".su2":
        from ..io.readers.su2 import read_su2

        return read_su2(path)
    raise ReadError(f"inspect: cannot read {path.name!r}; readable: .msh (4.1, 2.2), .vtu, .su2, a polyMesh folder")


def cmd_inspect(args) -> int:
    from ..reports.markdown import quality_markdown
    from ..reports.quality import quality_report

    path = Path(args.mesh)
    if args.pictures:
        from ..pipeline.build import output_folder

        output_folder(args.pictures, "", option="--pictures")
    mesh = _read_any(path)
    if not 0 < args.angle_limit < 90:  # also refuses NaN
        raise InputError(f"--angle-limit {args.angle_limit}: an angle in degrees above 0 and below 90")
    report = quality_report(mesh, angle_limit=args.angle_limit)
    pics = []
    if args.pictures and report["metrics"]:
        from ..reports.plots import make_pictures

        pics = make_pictures(mesh, report, path.stem, Path(args.pictures))
    elif args.pictures:
        print(f"no pictures: {report['errors'][0]}", file=sys.stderr)
    if args.json:
        print(dumps(report))
    else:  # printed text: its picture links are relative to the current folder
        print(quality_markdown(report, path.stem, pics, relative_to=Path.cwd()))
    return EXIT_OK


def cmd_build(args) -> int:
    from ..pipeline.build import build_case

    warnings: list[str] = []
    stages = 3 + len(args.formats or ["msh", "vtu"]) + (0 if args.no_pictures else 1)
    with convention.StageProgress(stages, convention.show_progress(args), args.quiet) as progress:
        def report(message: str) -> None:
            if message.startswith("warning: "):
                warnings.append(message[len("warning: "):])
            progress(message)

        written = build_case(case_path=args.case, overrides=args.overrides, output=args.output,
                             formats=args.formats, force=args.force, pictures=not args.no_pictures,
                             verbose=args.verbose, progress=report)
    folder = Path(os.path.commonpath([str(p) for p in written])) if written else Path(args.output or ".")
    if args.json:
        print(dumps({"command": "build", "folder": str(folder), "files": [str(p) for p in written],
                     "warnings": warnings}))
        return EXIT_OK
    print(f"wrote {len(written)} files to {folder}:")
    for p in written:
        print(f"  {p}")
    return EXIT_OK


COMMANDS = {"plan": cmd_plan, "build": cmd_build, "init": cmd_init, "formats": cmd_formats, "gci": cmd_gci,
            "inspect": cmd_inspect}
#: Modules whose add_commands(subparsers) adds more commands and returns {name: function}.
EXTRA_COMMANDS: list[str] = ["meshgen.cli.study_commands", "meshgen.cli.loop_commands"]


def main(argv: list[str] | None = None) -> int:
    argv = sys.argv[1:] if argv is None else list(argv)
    if argv == ["--version"]:  # answered before the parser (and the libraries it needs) is built
        print(f"meshgen {__version__}")
        return EXIT_OK
    try:
        args = _parser().parse_args(argv)
        if not args.command:
            _parser().print_help()
            return EXIT_INPUT
        return COMMANDS[args.command](args)
    except InputError as exc:
        for line in exc.problems:
            print(f"error: {line}", file=sys.stderr)
        return EXIT_INPUT
    except KeyboardInterrupt:
        print("interrupted", file=sys.stderr)
        return EXIT_INTERRUPT
    except MeshgenError as exc:
        print(f"error: {exc}", file=sys.stderr)
        return EXIT_FAIL
    except MemoryError:
        print("error: out of memory; reduce the cell count (output.max_cells caps a plan) or free memory",
              file=sys.stderr)
        return EXIT_FAIL
    except SystemExit as exc:  # --help and --version
        return int(exc.code or 0)
    except BrokenPipeError:
        os.dup2(os.open(os.devnull, os.O_WRONLY), sys.stdout.fileno())
        return EXIT_OK


def entry() -> None:
    sys.exit(main())
