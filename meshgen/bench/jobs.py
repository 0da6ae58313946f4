"""Measurements run in a fresh child process (gmsh holds one model per process; ru_maxrss is the child's own)."""

from __future__ import annotations

import json
import os
import resource
import shutil
import subprocess
import sys
import time
from pathlib import Path

from ..core.jsontext import dumps
from .config import CHILD_LIMIT, CHILD_TIMEOUT, _formats, _plan, _size


def _meminfo_bytes() -> int:
    try:
        for line in Path("/proc/meminfo").read_text().splitlines():
            if line.startswith("MemTotal:"):
                return int(line.split()[1]) * 1024
    except OSError:
        pass
    return 0


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
    from ..meshing.mesh import structured_mesh

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


def job_raw_bytes(job: dict) -> dict:
    """Baseline B at the 3-D size: numpy writing as many bytes as a writer's file, raw, from
    one 64 MiB buffer written again and again (the disk's rate for that size, without an
    array of the whole size in memory)."""
    import numpy as np

    buf = np.full(1 << 23, 1.0)  # 64 MiB
    path = Path(job["folder"]) / "raw.bin"
    path.parent.mkdir(parents=True, exist_ok=True)
    left = int(job["bytes"])
    t = time.perf_counter()
    with open(path, "wb") as f:
        while left > 0:  # buffers, not values
            view = memoryview(buf).cast("B")[: min(left, buf.nbytes)]
            f.write(view)
            left -= len(view)
    seconds = time.perf_counter() - t
    path.unlink()
    return {"seconds": seconds, "bytes": int(job["bytes"])}


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
    from ..meshing import builder  # noqa: F401
    from ..pipeline.build import build_plan, resolve_formats
    from ..reports import bc_sheet, quality  # noqa: F401  (imported before the clock starts, as gmsh is for A)

    _formats()
    if job.get("pictures"):  # matplotlib imported before the clock, as gmsh is (start-up is its own row)
        import matplotlib

        matplotlib.use("Agg")
        import matplotlib.pyplot

        from ..reports import plots  # noqa: F401
    plan = _plan(job["overrides"])
    fmts = resolve_formats(job["formats"], [])
    progress, phases = _phase_clock()
    t = time.perf_counter()
    written = build_plan(plan, Path(job["folder"]), fmts, force=True, pictures=bool(job.get("pictures")),
                         progress=progress)
    end = time.perf_counter()
    sizes = {f.name: _size(p) for f in fmts for p in f.outputs(Path(job["folder"]), plan.case.name)
             if p in written and p.exists()}
    if job.get("cleanup"):
        shutil.rmtree(job["folder"], ignore_errors=True)
    return {"seconds": end - t, "phases": phases(end), "cells": plan.cell_count, "bytes": sizes}


def job_write(job: dict) -> dict:
    """One mesh built, then the writers (all, or ``formats``), ``repeat`` times each."""
    from ..meshing.builder import build_mesh

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


JOBS = {"gmsh": job_gmsh, "raw": job_raw, "raw_bytes": job_raw_bytes, "build": job_build, "write": job_write}


def _child(spec_path: str) -> None:
    from ..io.atomic import write_text

    limit = min(CHILD_LIMIT, int(0.9 * _meminfo_bytes())) if _meminfo_bytes() else CHILD_LIMIT
    resource.setrlimit(resource.RLIMIT_AS, (limit, limit))
    job = json.loads(Path(spec_path).read_text())
    result = JOBS[job["kind"]](job)
    result["peak_rss"] = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss * 1024  # KiB on Linux
    write_text(Path(job["result"]), dumps(result, indent=None))


def run_child(job: dict, workdir: Path) -> dict:
    """Run one job in a fresh interpreter; its result, or {"error": ...}."""
    n = len(list(workdir.glob("job-*.json")))
    spec, result = workdir / f"job-{n}.json", workdir / f"result-{n}.json"
    spec.write_text(dumps({**job, "result": str(result)}, indent=None))
    env = dict(os.environ, PYTHONPATH=os.pathsep.join(
        [str(Path(__file__).resolve().parents[2])] + [p for p in [os.environ.get("PYTHONPATH")] if p]))
    try:
        proc = subprocess.run([sys.executable, "-m", "meshgen.bench", "--child", str(spec)], check=False, env=env,
                              capture_output=True, text=True, timeout=CHILD_TIMEOUT)
    except subprocess.TimeoutExpired:
        return {"error": f"timed out after {CHILD_TIMEOUT} s"}
    if proc.returncode != 0 or not result.exists():
        tail = (proc.stderr.strip().splitlines() or [f"exit code {proc.returncode}"])[-1]
        return {"error": tail}
    return json.loads(result.read_text())
