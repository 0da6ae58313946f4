"""Run the whole benchmark and its command line."""

from __future__ import annotations

import argparse
import os
import shutil
import sys
import tempfile
from dataclasses import asdict
from pathlib import Path

from .config import FULL, QUICK, Config
from .jobs import _child
from .measure import (
    bench_builds,
    bench_family,
    bench_solid,
    bench_solid_writers,
    bench_startup,
    bench_writers,
    fit_exponent,
    machine,
)
from .report import goals, table


def run_bench(cfg: Config, json_path: Path, workdir: Path | None = None, mode: str = "custom",
              say=lambda s: print(s, file=sys.stderr, flush=True)) -> dict:
    """Run every measurement of ``cfg``, write ``json_path`` and return the result."""
    from ..core.jsontext import dumps
    from ..io.atomic import write_text

    info = machine()
    own = workdir is None
    work = Path(tempfile.mkdtemp(prefix="meshgen-bench-")) if own else Path(workdir)
    work.mkdir(parents=True, exist_ok=True)
    try:
        rows, raw = bench_builds(cfg, work, say)
        rows += bench_writers(cfg, work, raw, say)
        rows += bench_startup(cfg, say)
        if cfg.solid:
            rows += bench_solid(cfg, work, say)
            if cfg.solid_writers:
                rows += bench_solid_writers(cfg, work, say)
        if cfg.family_cells:
            rows += bench_family(cfg, work, say)
    finally:
        if own:
            shutil.rmtree(work, ignore_errors=True)
    ok = [r for r in rows if r["section"] == "build" and r["name"] != "error"]
    prefixes = {"build": "meshgen build", "mesh_msh": "  mesh + msh", "baseline_a": "baseline A",
                "baseline_b": "baseline B"}
    exponent = {}
    for key, prefix in prefixes.items():
        rs = [r for r in ok if r["name"].startswith(prefix)]
        exponent[key] = fit_exponent([r["cells"] for r in rs], [r["seconds"] for r in rs])
    result = {"mode": mode, "machine": info, "config": asdict(cfg), "rows": rows, "exponent": exponent,
              "load_average_end": list(os.getloadavg())}
    result["goals"] = goals(cfg, rows, exponent["build"])
    json_path = Path(json_path)
    json_path.parent.mkdir(parents=True, exist_ok=True)
    write_text(json_path, dumps(result) + "\n")
    return result


def main(argv: list[str] | None = None) -> int:
    p = argparse.ArgumentParser(prog="python -m meshgen.bench", description="Speed and memory benchmark: ``python -m meshgen.bench [--quick] [--json FILE]``.")
    p.add_argument("--quick", action="store_true", help="1e5 and 3e5 cells, 3-D at 1e7 hexahedra instead of 1e8")
    p.add_argument("--json", type=Path, default=Path("outputs") / "bench.json", help="where to write the table")
    p.add_argument("--repeat", type=int, default=None, help="runs per timing (default 3, quick 2)")
    p.add_argument("--workdir", type=Path, default=None, help="folder for the files written (default: a temporary one)")
    p.add_argument("--child", help=argparse.SUPPRESS)
    args = p.parse_args(argv)
    if args.child:
        _child(args.child)
        return 0
    cfg = QUICK if args.quick else FULL
    if args.repeat is not None:
        if args.repeat < 1:
            p.error(f"--repeat {args.repeat}: must be 1 or more")
        cfg = Config(**{**asdict(cfg), "repeat": args.repeat})
    result = run_bench(cfg, args.json, args.workdir, "quick" if args.quick else "full")
    print(table(result))
    print(f"\nwritten: {args.json}")
    return 0
