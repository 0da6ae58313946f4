"""The measurements, run from the parent: builds, writers, the 3-D mesh and a family, each against its baseline."""

from __future__ import annotations

import math
import os
import platform
import shutil
import subprocess
import sys
import time
from pathlib import Path

from .config import GIB, GMSH_WRITTEN, MIB, NOT_STREAMED, Config, _formats, _plan, case_overrides
from .jobs import _meminfo_bytes, run_child

# ---- the measurements, run from the parent ----------------------------------------------


def machine() -> dict:
    """CPU model, cores, memory and library versions of this machine."""
    import gmsh
    import numpy

    cpu = platform.processor() or platform.machine()
    try:
        models = [ln.split(":", 1)[1].strip() for ln in Path("/proc/cpuinfo").read_text().splitlines()
                  if ln.startswith("model name")]
        cpu = models[0] if models else cpu
    except OSError:
        pass
    usable = len(os.sched_getaffinity(0)) if hasattr(os, "sched_getaffinity") else os.cpu_count()
    return {"cpu": cpu, "cores": os.cpu_count(), "usable_cores": usable,
            "memory_gib": round(_meminfo_bytes() / GIB, 1), "python": platform.python_version(),
            "numpy": numpy.__version__, "gmsh": gmsh.__version__, "load_average": list(os.getloadavg())}


def _best(samples: list[float]) -> float:
    return min(samples)


def _err(results: list[dict]) -> str | None:
    return next((r["error"] for r in results if "error" in r), None)


def bench_builds(cfg: Config, workdir: Path, say) -> tuple[list[dict], dict]:
    """Rows of baseline A, baseline B and the meshgen build at each size."""
    runs: dict[tuple[str, int], list[dict]] = {}
    plans = {n: _plan(case_overrides(n)) for n in cfg.sizes}
    for rep in range(cfg.repeat):
        for n, plan in plans.items():  # A and the build interleaved: drift hits both alike
            say(f"  2-D {plan.cell_count:,} cells, run {rep + 1}/{cfg.repeat}")
            a = {"kind": "gmsh", "nx": plan.x.size - 1, "ny": plan.y.size - 1, "length": float(plan.x[-1] - plan.x[0]),
                 "height": float(plan.y[-1]), "path": str(workdir / f"a-{n}.msh")}
            runs.setdefault(("A", n), []).append(run_child(a, workdir))
            b = {"kind": "build", "overrides": case_overrides(n), "formats": ["msh"], "folder": str(workdir / f"b-{n}")}
            runs.setdefault(("build", n), []).append(run_child(b, workdir))
            w = {"kind": "write", "overrides": case_overrides(n), "formats": ["msh"], "repeat": 1,
                 "folder": str(workdir / f"w-{n}")}
            res = run_child(w, workdir)
            if "error" not in res:  # the mesh and its MSH file without build_plan's reports
                res = {"seconds": res["mesh_seconds"] + res["writers"]["msh"]["samples"][0], "peak_rss": res["peak_rss"],
                       "phases": {"mesh": res["mesh_seconds"], "msh": res["writers"]["msh"]["samples"][0]}}
            runs.setdefault(("mesh", n), []).append(res)
            if n == cfg.writer_cells:  # the same build with its pictures
                p = {**b, "pictures": True, "folder": str(workdir / f"p-{n}")}
                runs.setdefault(("pictures", n), []).append(run_child(p, workdir))
    sizes = sorted(set(cfg.sizes) | {cfg.writer_cells})
    raw = {n: run_child({"kind": "raw", "overrides": case_overrides(n), "repeat": cfg.repeat,
                         "folder": str(workdir / "raw")}, workdir) for n in sizes}
    rows = []
    for n, plan in plans.items():
        a, r = runs[("A", n)], raw[n]
        cells = plan.cell_count
        problem = (_err(a) or _err(runs[("build", n)]) or _err(runs[("mesh", n)]) or _err(runs.get(("pictures", n), []))
                   or r.get("error"))
        if problem:
            rows.append({"section": "build", "name": "error", "cells": cells, "error": problem})
            continue
        ta, traw, pa = _best([x["seconds"] for x in a]), _best(r["samples"]), max(x["peak_rss"] for x in a)
        rows += [
            {"section": "build", "name": "baseline A (gmsh)", "cells": cells, "seconds": ta,
             "samples": [x["seconds"] for x in a], "peak_mib": pa / MIB, "phases": min(a, key=lambda x: x["seconds"])["phases"]},
            {"section": "build", "name": "baseline B (numpy raw)", "cells": cells, "seconds": traw, "samples": r["samples"],
             "bytes": r["bytes"], "mbps": r["bytes"] / traw / 1e6, "peak_mib": r["peak_rss"] / MIB},
        ]
        for key, name in (("build", "meshgen build (msh)"), ("pictures", "meshgen build (msh, pictures)"),
                          ("mesh", "  mesh + msh only")):
            if (key, n) not in runs:
                continue
            b = runs[(key, n)]
            tb, pb = _best([x["seconds"] for x in b]), max(x["peak_rss"] for x in b)
            rows.append({"section": "build", "name": name, "cells": cells, "seconds": tb,
                         "samples": [x["seconds"] for x in b], "x_a": tb / ta, "x_b": tb / traw, "peak_mib": pb / MIB,
                         "rss_x_a": pb / pa, "phases": min(b, key=lambda x: x["seconds"])["phases"]})
    return rows, raw


def fit_exponent(cells: list[float], seconds: list[float]) -> float | None:
    """p of seconds ~ cells**p, least squares in log-log (None with fewer than two sizes)."""
    if len(cells) < 2:
        return None
    lx, ly = [math.log(c) for c in cells], [math.log(s) for s in seconds]
    mx, my = sum(lx) / len(lx), sum(ly) / len(ly)
    return sum((x - mx) * (y - my) for x, y in zip(lx, ly)) / sum((x - mx) ** 2 for x in lx)


def bench_writers(cfg: Config, workdir: Path, raw: dict, say) -> list[dict]:
    say(f"  writers at {cfg.writer_cells:,} cells")
    res = run_child({"kind": "write", "overrides": case_overrides(cfg.writer_cells), "repeat": cfg.repeat,
                     "folder": str(workdir / "writers")}, workdir)
    if "error" in res:
        return [{"section": "writers", "name": "error", "error": res["error"]}]
    b = raw.get(cfg.writer_cells, {})
    tb = _best(b["samples"]) if "samples" in b else None
    rows = []
    for name, w in res["writers"].items():
        t = _best(w["samples"])
        rows.append({"section": "writers", "name": name, "cells": res["cells"], "seconds": t, "samples": w["samples"],
                     "bytes": w["bytes"], "mbps": w["bytes"] / t / 1e6, "x_b": t / tb if tb else None,
                     "gmsh_written": name in GMSH_WRITTEN})
    return rows


def bench_solid(cfg: Config, workdir: Path, say) -> list[dict]:
    """The 3-D mesh built and written as MSH and CGNS by one build (with its quality
    report, no pictures): time, phases, each file's rate and the peak memory."""
    cells2, span = cfg.solid
    formats = ["msh", "cgns"]
    say(f"  3-D {cells2 * span:,} hexahedra: build, {' and '.join(formats)}")
    os.sync()  # start with no dirty pages of earlier runs waiting to be written back
    res = run_child({"kind": "build", "overrides": case_overrides(cells2, span, blocks=3), "formats": formats,
                     "folder": str(workdir / "solid"), "cleanup": True}, workdir)
    if "error" in res:
        return [{"section": "solid", "name": "error", "cells": cells2 * span, "error": res["error"]}]
    sizes = res["bytes"]
    rates = {f: sizes[f] / res["phases"][f] / 1e6 for f in formats}
    return [{"section": "solid", "name": "build + " + " + ".join(formats), "cells": res["cells"],
             "seconds": res["seconds"], "phases": res["phases"], "peak_mib": res["peak_rss"] / MIB,
             "formats": formats, "bytes": sum(sizes.values()), "mbps": rates}]


def bench_solid_writers(cfg: Config, workdir: Path, say) -> list[dict]:
    """Each streamed writer on the 3-D mesh, each in its own child (its own peak memory),
    right after numpy writing as many bytes raw (baseline B at that size)."""
    cells2, span = cfg.solid
    rows = []
    for name in _formats():  # a handful of formats
        if name in NOT_STREAMED:
            rows.append({"section": "solid writers", "name": name, "cells": cells2 * span,
                         "skipped": NOT_STREAMED[name]})
            continue
        say(f"  3-D {cells2 * span:,} hexahedra: {name}")
        os.sync()  # the writer and its baseline each start with the page cache written back
        res = run_child({"kind": "write", "overrides": case_overrides(cells2, span, blocks=3), "repeat": 1,
                         "formats": [name], "folder": str(workdir / "solid-writer")}, workdir)
        if "error" in res:
            rows.append({"section": "solid writers", "name": name, "cells": cells2 * span, "error": res["error"]})
            continue
        w = res["writers"][name]
        os.sync()
        raw = run_child({"kind": "raw_bytes", "bytes": w["bytes"], "folder": str(workdir / "raw-3d")}, workdir)
        t = w["samples"][0]
        rows.append({"section": "solid writers", "name": name, "cells": res["cells"], "seconds": t,
                     "bytes": w["bytes"], "mbps": w["bytes"] / t / 1e6, "peak_mib": res["peak_rss"] / MIB,
                     "raw_seconds": raw.get("seconds"),
                     "x_b": t / raw["seconds"] if "seconds" in raw else None})
    return rows


def bench_startup(cfg: Config, say) -> list[dict]:
    """``meshgen --help`` and ``--version`` against ``python -c "import numpy"`` (wall time of
    a fresh interpreter each, the minimum of ``startup_repeat`` interleaved runs)."""
    say("  start-up")
    commands = {"python -c 'import numpy'": ["-c", "import numpy"], "meshgen --help": ["-m", "meshgen", "--help"],
                "meshgen --version": ["-m", "meshgen", "--version"]}
    env = dict(os.environ, PYTHONPATH=os.pathsep.join(
        [str(Path(__file__).resolve().parents[2])] + [p for p in [os.environ.get("PYTHONPATH")] if p]))
    samples: dict[str, list[float]] = {k: [] for k in commands}
    for _ in range(cfg.startup_repeat):
        for name, args in commands.items():
            t = time.perf_counter()
            subprocess.run([sys.executable, *args], check=True, env=env, capture_output=True)
            samples[name].append(time.perf_counter() - t)
    base = _best(samples["python -c 'import numpy'"])
    return [{"section": "startup", "name": name, "seconds": _best(s), "samples": s, "x_numpy": _best(s) / base}
            for name, s in samples.items()]


def bench_family(cfg: Config, workdir: Path, say) -> list[dict]:
    """A refinement family built with 1 and with 2 workers (the study runner), if it exists."""
    from ..core.errors import MeshgenError

    try:
        from ..study.family import family_study
        from ..study.runner import run_study
    except ImportError as exc:
        return [{"section": "family", "name": "not available", "error": str(exc)}]
    samples: dict[int, list[float]] = {1: [], 2: []}
    try:
        study, _ = family_study(None, case_overrides(cfg.family_cells), cfg.family_levels, cfg.family_ratio,
                                ["msh"], [])
        cells = [m.plan.cell_count if hasattr(m, "plan") else m.cells for m in study.members]
        for rep in range(cfg.repeat):
            for workers in (1, 2):  # interleaved, like the baselines
                say(f"  family of {len(cells)} levels, {workers} worker(s), run {rep + 1}/{cfg.repeat}")
                root = workdir / f"family-{workers}-{rep}"
                t = time.perf_counter()
                report = run_study(study, root, workers=workers, force=True, stream=None)
                samples[workers].append(time.perf_counter() - t)
                if report.failed:
                    raise RuntimeError(f"levels failed: {report.failed}")
                shutil.rmtree(root, ignore_errors=True)
    except (TypeError, AttributeError, RuntimeError, MeshgenError) as exc:  # the runner's API is still moving
        return [{"section": "family", "name": "not available", "error": f"{type(exc).__name__}: {exc}"}]
    # Two workers can gain at most total work / largest member (the finest level is about
    # three quarters of a ratio-2 family's cells): the efficiency is measured against that.
    bound = min(2.0, sum(cells) / max(cells))
    speedup = _best(samples[1]) / _best(samples[2])
    return [{"section": "family", "name": f"{w} worker{'s' if w > 1 else ''}", "cells": cells,
             "seconds": _best(samples[w]), "samples": samples[w], "speedup": speedup if w == 2 else 1.0,
             "speedup_bound": bound, "efficiency": (speedup if w == 2 else 1.0) / (bound if w == 2 else 1.0)}
            for w in (1, 2)]
