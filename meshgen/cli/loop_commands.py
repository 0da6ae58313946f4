"""The study loop's result commands: ``gci FAMILY_DIR`` (with ``--wall``) and ``refit``.

``gci`` itself is parsed in main.py; a folder argument comes here. Scalars come from each
level's ``results.json`` (member_results.py), wall distributions from each level's
``--wall`` CSV (wall_gci.py). With ``--wall`` the table goes to stdout and the CSV and PNG
into the family folder as ``gci-wall-<stem>.csv`` / ``.png`` (``--plot`` names the PNG).
"""

from __future__ import annotations

import json
import sys
from pathlib import Path

from ..core.errors import InputError, WriteError
from ..core.jsontext import dumps
from .args import _case_args, plot_problems

EXIT_OK = 0


def add_commands(sub) -> dict:
    """Add the ``refit`` subparser; return {"refit": cmd_refit}."""
    from ..study.refit import OVER, WHERE

    sr = sub.add_parser("refit", help="re-fit the first-cell height from a solver's wall y+, tau_w, u_tau or cf")
    _case_args(sr)
    sr.add_argument("--wall", required=True, metavar="FILE",
                    help="the solver's wall distribution: CSV (x [m], then y_plus, u_tau, tau_w or cf), VTU or VTK")
    sr.add_argument("-o", "--output", required=True, metavar="NEW.toml", help="the re-fitted case file to write")
    sr.add_argument("--at", choices=WHERE, default="reference",
                    help="where the solver's y+ meets the target: the reference station (default), the largest "
                         f"or the mean y+ over x/L = {OVER[0]:g} to {OVER[1]:g}")
    sr.add_argument("--target", type=float, metavar="Y+", help="target y+ (default: the case's)")
    sr.add_argument("--solved-height", type=float, metavar="H",
                    help="first-cell height [m] of the mesh the solver ran on (default: plan.json beside FILE, "
                         "else the case's own)")
    sr.add_argument("--plot", metavar="FILE.png", help="picture of estimated against reported y+ "
                    "(default: NEW-y_plus.png beside NEW.toml)")
    sr.add_argument("--force", action="store_true", help="overwrite NEW.toml")
    return {"refit": cmd_refit}


def _solved_height(args) -> tuple[float | None, str]:
    if args.solved_height is not None:
        if not args.solved_height > 0:
            raise InputError(f"--solved-height {args.solved_height}: a positive height in metres")
        return args.solved_height, "--solved-height"
    beside = Path(args.wall).with_name("plan.json")
    if beside.is_file():
        try:
            return float(json.loads(beside.read_text(encoding="utf-8"))["first_cell_height"]), str(beside)
        except (OSError, ValueError, KeyError, TypeError) as exc:
            raise InputError(f"{beside}: no first_cell_height to read ({exc}); give --solved-height") from None
    return None, "the case's plan"


def cmd_refit(args) -> int:
    from ..case import case_to_toml, load_case, parse_case
    from ..io.atomic import write_text
    from ..planning.plan import make_plan
    from ..study.refit import refit, refitted_case_data
    from ..study.refit_report import plot_refit, refit_lines
    from ..study.wall_data import read_wall

    out = Path(args.output)
    problems = []
    if out.suffix.lower() != ".toml":
        problems.append(f"-o {out}: the re-fitted case is a TOML file; give a name ending in .toml")
    if out.is_dir() or (out.exists() and not args.force):
        problems.append(f"-o {out}: exists; use --force to overwrite" if out.is_file() else f"-o {out}: is a folder")
    if args.target is not None and not args.target > 0:
        problems.append(f"--target {args.target}: a positive y+")
    picture = Path(args.plot) if args.plot else out.with_name(f"{out.stem}-y_plus.png")
    problems += plot_problems(str(picture))
    if problems:
        raise InputError(problems)
    case = load_case(args.case, args.overrides)
    plan = make_plan(case)
    height, source = _solved_height(args)
    res = refit(plan, read_wall(args.wall), where=args.at, target=args.target, solved_height=height)
    data, notes = refitted_case_data(case, res["first_cell_height"])
    new_case = parse_case(data)
    print(f"solved first-cell height from {source}")
    for line in refit_lines(res):
        print(line, file=sys.stderr if line.startswith("warning:") else sys.stdout)
    new_plan = make_plan(new_case)
    lo, hi = new_plan.to_dict()["y_plus_range"]
    print(f"a-priori y+ range along the plate with the new height: {lo:.3g} to {hi:.3g}")
    for note in notes:
        print(f"note: {note}")
    try:
        write_text(out, case_to_toml(new_case))
        plot_refit(res, plan.flow.length, picture)
    except OSError as exc:
        raise WriteError(f"refit: cannot write ({exc.strerror or exc})") from None
    print(f"wrote {out}")
    print(f"wrote {picture}")
    return EXIT_OK


def cmd_gci_folder(args) -> int:
    from ..study.gci import to_json

    root = Path(args.results)
    if args.area is not None or args.volume is not None or args.manifest is not None:
        raise InputError("gci: a family folder has its own family.json; drop --area, --volume and --manifest")
    if args.wall:
        return _wall(args, root)
    if args.stations or args.quantity:
        raise InputError("gci: --stations and --quantity go with --wall NAME.csv")
    from ..study.gci_report import gci_table, plot_gci
    from ..study.member_results import family_rows
    from ..study.results import study_rows

    rows, warnings = family_rows(root)
    results = study_rows(rows, fs=args.fs, assumed_order=args.assumed_order, formal_order=args.formal_order)
    for w in warnings:
        print(f"warning: {w}", file=sys.stderr)
    print(dumps(to_json(results)) if args.json else gci_table(results))
    if args.plot:
        print(f"wrote {plot_gci(results, args.plot)}", file=sys.stderr)
    return EXIT_OK


def _wall(args, root: Path) -> int:
    from ..study.gci import to_json
    from ..study.wall_gci import DEFAULT_STATIONS, parse_stations, wall_study
    from ..study.wall_gci_report import plot_wall, wall_table, write_wall_csv

    name = Path(args.wall).name
    if name != args.wall:
        raise InputError(f"--wall {args.wall}: the file name inside each level's folder, e.g. wall.csv")
    stations = parse_stations(args.stations) if args.stations else DEFAULT_STATIONS
    res = wall_study(root, name, stations, args.quantity, fs=args.fs, assumed_order=args.assumed_order,
                     formal_order=args.formal_order)
    stem = Path(name).stem
    table = root / f"gci-wall-{stem}.csv"
    picture = Path(args.plot) if args.plot else root / f"gci-wall-{stem}.png"
    print(dumps(to_json(res)) if args.json else wall_table(res))
    try:
        written = [write_wall_csv(res, table), plot_wall(res, picture)]
    except OSError as exc:
        raise WriteError(f"gci --wall: cannot write ({exc.strerror or exc})") from None
    for w in written:
        print(f"wrote {w}", file=sys.stderr)
    return EXIT_OK
