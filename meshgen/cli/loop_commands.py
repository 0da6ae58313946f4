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

EXIT_OK = 0


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
    print(json.dumps(to_json(results), indent=2, allow_nan=False) if args.json else gci_table(results))
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
    print(json.dumps(to_json(res), indent=2, allow_nan=False) if args.json else wall_table(res))
    try:
        written = [write_wall_csv(res, table), plot_wall(res, picture)]
    except OSError as exc:
        raise WriteError(f"gci --wall: cannot write ({exc.strerror or exc})") from None
    for w in written:
        print(f"wrote {w}", file=sys.stderr)
    return EXIT_OK
