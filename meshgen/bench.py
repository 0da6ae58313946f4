"""Speed and memory benchmark: ``python -m meshgen.bench [--quick] [--json FILE]``.

Every figure is a ratio to a baseline measured in the same run, because the machine is
shared and its speed drifts from minute to minute:

- baseline A: gmsh alone meshing the same rectangle as one transfinite, recombined
  surface with the same node counts (uniform, Progression 1) and writing binary MSH 4.1:
  the cost of the meshing kernel meshgen builds on;
- baseline B: numpy writing the same node and cell arrays raw (``ndarray.tofile``): the
  cost of the bytes.

Each measurement runs in a fresh child process (gmsh holds one model per process, and a
child's peak resident memory, ``ru_maxrss``, is its own). Times are taken inside the
child around the work only (no interpreter start or imports) and each is the minimum of
``repeat`` runs, interleaved with its baseline's runs: on a shared machine the minimum is
the run least disturbed by other load. The cases give the viscosity directly, so that no
fluid-property tables (CoolProp) are loaded; one block (no upstream or wake block), so
the rectangle of baseline A is the whole domain.
"""

from __future__ import annotations

import argparse
import json
import math
import os
import platform
import resource
import shutil
import subprocess
import sys
import tempfile
import time
from dataclasses import asdict, dataclass
from pathlib import Path

MIB = 1 << 20
GIB = 1 << 30
#: Goals of the issue: build time and peak memory against baseline A, own writers' rate,
#: the 3-D mesh's peak memory, and the fitted growth exponent of build time with cells.
GOAL_BUILD_TIME = 1.2
GOAL_BUILD_MEMORY = 1.5
GOAL_WRITER_MBPS = 150.0
GOAL_SOLID_BYTES = 16 * GIB
EXPONENT_BAND = (0.9, 1.1)
#: Formats gmsh itself writes: the rate goal is for meshgen's own writers.
GMSH_WRITTEN = ("msh", "msh2")
#: Address-space limit of every child, so that a runaway measurement fails with
#: MemoryError instead of pushing a shared machine into the out-of-memory killer.
CHILD_LIMIT = 20 * GIB
CHILD_TIMEOUT = 900  # s
VISCOSITY = 1.5e-5  # m2/s, about air at 15 C (from memory); the value only sizes the wall
ASPECT = 2.56  # streamwise / wall-normal cell counts of the bench grids (1600 x 625)


@dataclass(frozen=True)
class Config:
    sizes: tuple[int, ...]  # 2-D cell counts of the build rows
    writer_cells: int  # 2-D cells of the writer rows
    solid: tuple[int, int] | None  # (2-D cells, span cells) of the 3-D row, or None
    family_cells: int | None  # finest level of the family rows, or None
    repeat: int
    family_levels: int = 4
    family_ratio: float = 2.0


FULL = Config((100_000, 1_000_000, 4_000_000), 1_000_000, (100_000, 100), 1_000_000, 3)
QUICK = Config((100_000, 300_000), 300_000, None, 300_000, 2)


def grid_counts(cells: int) -> tuple[int, int]:
    """Streamwise and wall-normal cell counts (nx even) whose product is about ``cells``."""
    ny = max(8, round(math.sqrt(cells / ASPECT)))
    return max(4, 2 * round(cells / ny / 2)), ny


def case_overrides(cells: int, span_cells: int = 0) -> list[str]:
    """``--set`` overrides of the default case giving one block of about ``cells`` cells."""
    nx, ny = grid_counts(cells)
    dx = 1.0 / (nx + 0.5)  # [L]; uniform on the plate, the half-cell keeps nx from rounding down
    out = ["name=bench", "flow.fluid=", f"flow.nu={VISCOSITY!r}", "domain.upstream=0", "domain.downstream=0",
           f"streamwise.leading_edge_spacing={dx!r}", f"streamwise.trailing_edge_spacing={dx!r}",
           f"streamwise.max_spacing={dx!r}", "wall.growth_ratio=", f"wall.cells={ny}",
           f"output.max_cells={max(20_000_000, 2 * cells * max(span_cells, 1))}"]
    if span_cells:
        out += ["domain.span=0.2", f"domain.span_cells={span_cells}"]
    return out


def _plan(overrides: list[str]):
    from .case import load_case
    from .plan import make_plan

    return make_plan(load_case(None, overrides))


def _size(path: Path) -> int:
    path = Path(path)
    return sum(f.stat().st_size for f in path.rglob("*") if f.is_file()) if path.is_dir() else path.stat().st_size


def _formats():
    """Every registered format, with the modules that may register more imported first."""
    import importlib

    from .writers import FORMATS

    for name in ("su2", "foam"):
        try:
            importlib.import_module(f"meshgen.writers.{name}")
        except ImportError:
            pass  # not written yet: the registry lists what exists
    return dict(FORMATS)


# ---- jobs run in a child process: each returns a dict of plain JSON values -------------


def job_gmsh(job: dict) -> dict:
    """Baseline A: one transfinite recombined rectangle, binary MSH 4.1."""
    import gmsh

    nx, ny, length, height = job["nx"], job["ny"], job["length"], job["height"]
    t0 = time.perf_counter()
    gmsh.initialize(readConfigFiles=False, interruptible=False)
    gmsh.option.setNumber("General.Terminal", 0)
    gmsh.option.setNumber("General.NumThreads", 1)  # as meshgen's session
    gmsh.model.add("baseline")
    geo = gmsh.model.geo
    pts = [geo.addPoint(*xy, 0.0) for xy in ((0, 0), (length, 0), (length, height), (0, height))]
    lines = [geo.addLine(pts[k], pts[(k + 1) % 4]) for k in range(4)]
    surface = geo.addPlaneSurface([geo.addCurveLoop(lines)])
    geo.synchronize()
    for line, n in zip(lines, (nx, ny, nx, ny)):
        gmsh.model.mesh.setTransfiniteCurve(line, n + 1, "Progression", 1.0)
    gmsh.model.mesh.setTransfiniteSurface(surface)
    gmsh.model.mesh.setRecombine(2, surface)
    for k, line in enumerate(lines, start=1):  # boundary lines in groups, as meshgen's file has
        gmsh.model.addPhysicalGroup(1, [line], k)
    gmsh.model.addPhysicalGroup(2, [surface], 100)
    t1 = time.perf_counter()
    gmsh.model.mesh.generate(2)
    t2 = time.perf_counter()
    gmsh.option.setNumber("Mesh.MshFileVersion", 4.1)
    gmsh.option.setNumber("Mesh.Binary", 1)
    gmsh.write(job["path"])
    t3 = time.perf_counter()
    cells = len(gmsh.model.mesh.getElementsByType(3)[0])
    gmsh.finalize()
    t4 = time.perf_counter()
    return {"seconds": t4 - t0, "phases": {"set-up": t1 - t0, "generate": t2 - t1, "write": t3 - t2,
                                           "finalize": t4 - t3}, "cells": cells}


def job_raw(job: dict) -> dict:
    """Baseline B: the node and cell arrays of the plan's grid written raw, ``repeat`` times."""
    from .mesh import structured_mesh

    plan = _plan(job["overrides"])
    mesh = structured_mesh(plan.x, plan.y, plan.blocks, plan.group_layout())
    folder = Path(job["folder"])
    folder.mkdir(parents=True, exist_ok=True)
    times = []
    for rep in range(job["repeat"]):
        paths = [folder / f"points-{rep}.bin", folder / f"cells-{rep}.bin"]
        t = time.perf_counter()
        mesh.points.tofile(paths[0])
        mesh.cells.tofile(paths[1])
        times.append(time.perf_counter() - t)
        for p in paths:
            p.unlink()
    return {"samples": times, "bytes": int(mesh.points.nbytes + mesh.cells.nbytes), "cells": mesh.n_cells}


def _phase_clock():
    """A progress callback that records the time between build_plan's progress messages."""
    marks: list[tuple[str, float]] = []

    def progress(message: str) -> None:
        label = "mesh" if message.startswith("building") else message.removeprefix("writing ")
        marks.append((label, time.perf_counter()))

    def phases(end: float) -> dict:
        stamps = [t for _, t in marks[1:]] + [end]
        return {label: b - a for (label, a), b in zip(marks, stamps)}

    return progress, phases


def job_build(job: dict) -> dict:
    """``build_plan`` with the given formats: total time and the time of each phase."""
    from . import bc_sheet, builder, quality  # noqa: F401  (imported before the clock starts, as gmsh is for A)
    from .build import build_plan, resolve_formats

    _formats()
    plan = _plan(job["overrides"])
    fmts = resolve_formats(job["formats"], [])
    progress, phases = _phase_clock()
    t = time.perf_counter()
    build_plan(plan, Path(job["folder"]), fmts, force=True, pictures=False, progress=progress)
    end = time.perf_counter()
    return {"seconds": end - t, "phases": phases(end), "cells": plan.cell_count}


def job_write(job: dict) -> dict:
    """One mesh built, then the writers (all, or ``formats``), ``repeat`` times each."""
    from .builder import build_mesh

    fmts = _formats()
    plan = _plan(job["overrides"])
    t = time.perf_counter()
    mesh = build_mesh(plan)
    out = {"cells": mesh.n_cells, "mesh_seconds": time.perf_counter() - t, "writers": {}}
    for name in job.get("formats") or list(fmts):  # a handful of formats
        folder = Path(job["folder"]) / name
        samples, size = [], 0
        for _ in range(job["repeat"]):
            t = time.perf_counter()
            paths = fmts[name].write(mesh, folder, "bench")
            samples.append(time.perf_counter() - t)
            size = sum(_size(p) for p in paths)
            shutil.rmtree(folder)
        out["writers"][name] = {"samples": samples, "bytes": size}
    return out


JOBS = {"gmsh": job_gmsh, "raw": job_raw, "build": job_build, "write": job_write}


def _child(spec_path: str) -> None:
    from .atomic import write_text

    limit = min(CHILD_LIMIT, int(0.9 * _meminfo_bytes())) if _meminfo_bytes() else CHILD_LIMIT
    resource.setrlimit(resource.RLIMIT_AS, (limit, limit))
    job = json.loads(Path(spec_path).read_text())
    result = JOBS[job["kind"]](job)
    result["peak_rss"] = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss * 1024  # KiB on Linux
    write_text(Path(job["result"]), json.dumps(result))


def run_child(job: dict, workdir: Path) -> dict:
    """Run one job in a fresh interpreter; its result, or {"error": ...}."""
    n = len(list(workdir.glob("job-*.json")))
    spec, result = workdir / f"job-{n}.json", workdir / f"result-{n}.json"
    spec.write_text(json.dumps({**job, "result": str(result)}))
    env = dict(os.environ, PYTHONPATH=os.pathsep.join(
        [str(Path(__file__).resolve().parents[1])] + [p for p in [os.environ.get("PYTHONPATH")] if p]))
    try:
        proc = subprocess.run([sys.executable, "-m", "meshgen.bench", "--child", str(spec)], check=False, env=env,
                              capture_output=True, text=True, timeout=CHILD_TIMEOUT)
    except subprocess.TimeoutExpired:
        return {"error": f"timed out after {CHILD_TIMEOUT} s"}
    if proc.returncode != 0 or not result.exists():
        tail = (proc.stderr.strip().splitlines() or [f"exit code {proc.returncode}"])[-1]
        return {"error": tail}
    return json.loads(result.read_text())


# ---- the measurements, run from the parent ----------------------------------------------


def _meminfo_bytes() -> int:
    try:
        for line in Path("/proc/meminfo").read_text().splitlines():
            if line.startswith("MemTotal:"):
                return int(line.split()[1]) * 1024
    except OSError:
        pass
    return 0


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
    sizes = sorted(set(cfg.sizes) | {cfg.writer_cells})
    raw = {n: run_child({"kind": "raw", "overrides": case_overrides(n), "repeat": cfg.repeat,
                         "folder": str(workdir / "raw")}, workdir) for n in sizes}
    rows = []
    for n, plan in plans.items():
        a, r = runs[("A", n)], raw[n]
        cells = plan.cell_count
        problem = _err(a) or _err(runs[("build", n)]) or _err(runs[("mesh", n)]) or r.get("error")
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
        for key, name in (("build", "meshgen build (msh)"), ("mesh", "  mesh + msh only")):
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
    cells2, span = cfg.solid
    formats = [f for f in ("msh", "polymesh") if f in _formats()]
    say(f"  3-D {cells2 * span:,} hexahedra: build, {' and '.join(formats)}")
    res = run_child({"kind": "write", "overrides": case_overrides(cells2, span), "repeat": 1, "formats": formats,
                     "folder": str(workdir / "solid")}, workdir)
    if "error" in res:
        return [{"section": "solid", "name": "error", "cells": cells2 * span, "error": res["error"]}]
    phases = {"mesh": res["mesh_seconds"]} | {k: w["samples"][0] for k, w in res["writers"].items()}
    return [{"section": "solid", "name": "build + " + " + ".join(formats), "cells": res["cells"],
             "seconds": sum(phases.values()), "phases": phases, "peak_mib": res["peak_rss"] / MIB,
             "formats": formats, "bytes": sum(w["bytes"] for w in res["writers"].values())}]


def bench_family(cfg: Config, workdir: Path, say) -> list[dict]:
    """A refinement family built with 1 and with 2 workers (the study runner), if it exists."""
    from .errors import MeshgenError

    try:
        from .study.family import family_study
        from .study.runner import run_study
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
    return [{"section": "family", "name": f"{w} worker{'s' if w > 1 else ''}", "cells": cells,
             "seconds": _best(samples[w]), "samples": samples[w]} for w in (1, 2)]


# ---- goals, table, command line ---------------------------------------------------------


def _goal(text: str, value, target, ok: bool | None, unit: str = "") -> dict:
    status = "not measured" if ok is None else ("pass" if ok else "short")
    return {"goal": text, "value": value, "target": target, "unit": unit, "status": status}


def goals(cfg: Config, rows: list[dict], exponent: float | None) -> list[dict]:
    out = []
    for prefix, what in (("meshgen build", "2-D build"), ("  mesh + msh", "2-D mesh + msh only (no reports)")):
        builds = {r["cells"]: r for r in rows if r["name"].startswith(prefix)}
        if not builds:
            continue
        n = min(builds, key=lambda c: abs(math.log(c / 1e6)))  # the size nearest 1e6
        r = builds[n]
        out.append(_goal(f"{what} at {n:,} cells within {GOAL_BUILD_TIME} x baseline A", r["x_a"],
                         GOAL_BUILD_TIME, r["x_a"] <= GOAL_BUILD_TIME, "x A"))
        out.append(_goal(f"{what} at {n:,} cells: peak memory within {GOAL_BUILD_MEMORY} x A's", r["rss_x_a"],
                         GOAL_BUILD_MEMORY, r["rss_x_a"] <= GOAL_BUILD_MEMORY, "x A"))
    lo, hi = EXPONENT_BAND
    out.append(_goal("build time grows linearly with cells (fitted exponent)", exponent, [lo, hi],
                     None if exponent is None else lo <= exponent <= hi))
    for r in rows:
        if r["section"] == "writers" and "mbps" in r and not r["gmsh_written"]:
            out.append(_goal(f"writer {r['name']} at {r['cells']:,} cells at {GOAL_WRITER_MBPS:g} MB/s or more",
                             r["mbps"], GOAL_WRITER_MBPS, r["mbps"] >= GOAL_WRITER_MBPS, "MB/s"))
    solid = [r for r in rows if r["section"] == "solid"]
    if cfg.solid:
        r = solid[0] if solid else {"name": "error", "error": "not run"}
        ok = None if r["name"] == "error" else r["peak_mib"] * MIB <= GOAL_SOLID_BYTES
        out.append(_goal(f"3-D mesh of {cfg.solid[0] * cfg.solid[1]:,} hexahedra built and written within 16 GiB",
                         r.get("peak_mib"), GOAL_SOLID_BYTES / MIB, ok if r["name"] != "error" else False, "MiB"))
    fam = {r["name"]: r for r in rows if r["section"] == "family"}
    if cfg.family_cells:
        ok = fam["2 workers"]["seconds"] < fam["1 worker"]["seconds"] if "2 workers" in fam else None
        value = fam["2 workers"]["seconds"] / fam["1 worker"]["seconds"] if ok is not None else None
        out.append(_goal("family with 2 workers faster than with 1", value, 1.0, ok, "x 1 worker"))
    return out


def _num(v, spec: str) -> str:
    width = int("".join(ch for ch in spec.split(".")[0] if ch.isdigit()) or 0)
    return "-".rjust(width) if v is None else format(v, spec)


def _phases(p: dict | None) -> str:
    return ", ".join(f"{k} {v:.2f}" for k, v in (p or {}).items())


def table(result: dict) -> str:
    """The printed report."""
    m, cfg, rows = result["machine"], result["config"], result["rows"]
    title = (f"meshgen benchmark ({result['mode']}): times in s, each the minimum of {cfg['repeat']} runs "
             "(least disturbed by other load); ratios to baselines from the same run; MB = 1e6 bytes")
    host = (f"machine: {m['cpu']}, {m['cores']} cores ({m['usable_cores']} usable), {m['memory_gib']} GiB; "
            f"Python {m['python']}, numpy {m['numpy']}, gmsh {m['gmsh']}; load average "
            f"{m['load_average'][0]:.1f} at start, {result['load_average_end'][0]:.1f} at end")
    lines = [title, host, ""]
    head = f"{'2-D, one block':28s} {'cells':>10s} {'s':>7s} {'x A':>6s} {'x B':>6s} {'peak MiB':>9s} {'x A':>5s}  phases [s]"
    lines.append(head)
    for r in (r for r in rows if r["section"] == "build"):
        if r["name"] == "error":
            lines.append(f"  error at {r['cells']:,} cells: {r['error']}")
            continue
        lines.append(f"  {r['name']:26s} {r['cells']:>10,} {r['seconds']:7.3f} {_num(r.get('x_a'), '6.2f')} "
                     f"{_num(r.get('x_b'), '6.1f')} {r['peak_mib']:9.0f} {_num(r.get('rss_x_a'), '5.2f')}  "
                     f"{_phases(r.get('phases'))}")
    e = result["exponent"]
    lines.append(f"  time ~ cells^p: meshgen build p = {_num(e['build'], '.3f')}, mesh + msh p = "
                 f"{_num(e['mesh_msh'], '.3f')}, baseline A p = {_num(e['baseline_a'], '.3f')}, "
                 f"baseline B p = {_num(e['baseline_b'], '.3f')}")
    lines += ["", f"{'writers':28s} {'cells':>10s} {'s':>7s} {'MB':>8s} {'MB/s':>7s} {'x B':>6s}"]
    for r in (r for r in rows if r["section"] == "writers"):
        if r["name"] == "error":
            lines.append(f"  error: {r['error']}")
            continue
        who = " (gmsh)" if r["gmsh_written"] else ""
        lines.append(f"  {r['name'] + who:26s} {r['cells']:>10,} {r['seconds']:7.3f} {r['bytes'] / 1e6:8.1f} "
                     f"{r['mbps']:7.0f} {_num(r['x_b'], '6.1f')}")
    solid = [r for r in rows if r["section"] == "solid"]
    if solid:
        r = solid[0]
        lines.append("")
        if r["name"] == "error":
            lines.append(f"3-D: error at {r['cells']:,} hexahedra: {r['error']}")
        else:
            lines.append(f"3-D {r['name']}: {r['cells']:,} hexahedra, {r['seconds']:.1f} s ({_phases(r['phases'])}), "
                         f"peak {r['peak_mib'] / 1024:.2f} GiB, {r['bytes'] / 1e6:.0f} MB written (one run)")
    fam = [r for r in rows if r["section"] == "family"]
    if fam:
        lines.append("")
        if fam[0]["name"] == "not available":
            lines.append(f"family: not available ({fam[0]['error']})")
        else:
            levels = ", ".join(f"{c:,}" for c in fam[0]["cells"])
            lines.append(f"family of {len(fam[0]['cells'])} levels at ratio {cfg['family_ratio']:g} ({levels} cells): "
                         + ", ".join(f"{r['name']} {r['seconds']:.2f} s" for r in fam))
    lines += ["", "goals:"]
    for g in result["goals"]:
        v = g["value"]
        shown = "-" if v is None else (f"{v:.3g}" if isinstance(v, float) else str(v))
        lines.append(f"  [{g['status']:>5s}] {g['goal']}: {shown} {g['unit']}".rstrip())
    return "\n".join(lines)


def run_bench(cfg: Config, json_path: Path, workdir: Path | None = None, mode: str = "custom",
              say=lambda s: print(s, file=sys.stderr, flush=True)) -> dict:
    """Run every measurement of ``cfg``, write ``json_path`` and return the result."""
    from .atomic import write_text

    info = machine()
    own = workdir is None
    work = Path(tempfile.mkdtemp(prefix="meshgen-bench-")) if own else Path(workdir)
    work.mkdir(parents=True, exist_ok=True)
    try:
        rows, raw = bench_builds(cfg, work, say)
        rows += bench_writers(cfg, work, raw, say)
        if cfg.solid:
            rows += bench_solid(cfg, work, say)
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
    write_text(json_path, json.dumps(result, indent=2) + "\n")
    return result


def main(argv: list[str] | None = None) -> int:
    p = argparse.ArgumentParser(prog="python -m meshgen.bench", description=__doc__.splitlines()[0])
    p.add_argument("--quick", action="store_true", help="1e5 and 3e5 cells, no 3-D mesh (under a minute)")
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


if __name__ == "__main__":
    sys.exit(main())
