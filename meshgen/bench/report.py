"""Goals met or not, and the printed table of a benchmark result."""

from __future__ import annotations

import math

from .config import (
    EXPONENT_BAND,
    GOAL_BUILD_MEMORY,
    GOAL_BUILD_TIME,
    GOAL_PICTURES_SECONDS,
    GOAL_SOLID_BYTES,
    GOAL_SOLID_MBPS,
    GOAL_STARTUP_SECONDS,
    GOAL_WRITER_MBPS,
    MIB,
    Config,
)

# ---- goals, table, command line ---------------------------------------------------------


def _goal(text: str, value, target, ok: bool | None, unit: str = "") -> dict:
    status = "not measured" if ok is None else ("pass" if ok else "short")
    return {"goal": text, "value": value, "target": target, "unit": unit, "status": status}


def goals(cfg: Config, rows: list[dict], exponent: float | None) -> list[dict]:
    out = []
    for prefix, what in (("meshgen build (msh)", "2-D build"), ("  mesh + msh", "2-D mesh + msh only (no reports)")):
        builds = {r["cells"]: r for r in rows if r["name"] == prefix or r["name"].startswith(prefix + " only")}
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
    pics = [r for r in rows if r["name"] == "meshgen build (msh, pictures)"]
    plain = {r["cells"]: r for r in rows if r["name"] == "meshgen build (msh)"}
    for r in pics:
        extra = r["seconds"] - plain[r["cells"]]["seconds"] if r["cells"] in plain else None
        out.append(_goal(f"pictures of {r['cells']:,} cells within {GOAL_PICTURES_SECONDS:g} s (build with minus "
                         "without)", extra, GOAL_PICTURES_SECONDS,
                         None if extra is None else extra <= GOAL_PICTURES_SECONDS, "s"))
    for r in (r for r in rows if r["section"] == "startup" and r["name"].startswith("meshgen")):
        out.append(_goal(f"{r['name']} within {GOAL_STARTUP_SECONDS:g} s", r["seconds"], GOAL_STARTUP_SECONDS,
                         r["seconds"] <= GOAL_STARTUP_SECONDS, "s"))
    solid = [r for r in rows if r["section"] == "solid"]
    if cfg.solid:
        r = solid[0] if solid else {"name": "error", "error": "not run"}
        ok = None if r["name"] == "error" else r["peak_mib"] * MIB <= GOAL_SOLID_BYTES
        n = cfg.solid[0] * cfg.solid[1]
        out.append(_goal(f"3-D mesh of {n:,} hexahedra built and written (MSH, CGNS) within "
                         f"{GOAL_SOLID_BYTES / 2**30:g} GiB", r.get("peak_mib"), GOAL_SOLID_BYTES / MIB,
                         ok if r["name"] != "error" else False, "MiB"))
        for f, mbps in r.get("mbps", {}).items():
            out.append(_goal(f"3-D {f} written at {GOAL_SOLID_MBPS:g} MB/s or more", mbps, GOAL_SOLID_MBPS,
                             mbps >= GOAL_SOLID_MBPS, "MB/s"))
    fam = {r["name"]: r for r in rows if r["section"] == "family"}
    if cfg.family_cells:
        ok = fam["2 workers"]["seconds"] < fam["1 worker"]["seconds"] if "2 workers" in fam else None
        value = fam["2 workers"]["seconds"] / fam["1 worker"]["seconds"] if ok is not None else None
        out.append(_goal("family with 2 workers faster than with 1", value, 1.0, ok, "x 1 worker"))
        if "2 workers" in fam:
            f2 = fam["2 workers"]
            out.append(_goal(f"family parallel efficiency against its bound of {f2['speedup_bound']:.2f} x "
                             "(total work / largest member)", f2["efficiency"], 1.0, None, "of the bound"))
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
            rates = ", ".join(f"{f} {v:.0f} MB/s" for f, v in r.get("mbps", {}).items())
            lines.append(f"3-D {r['name']}: {r['cells']:,} hexahedra, {r['seconds']:.1f} s ({_phases(r['phases'])}), "
                         f"peak {r['peak_mib'] / 1024:.2f} GiB, {r['bytes'] / 1e6:.0f} MB written ({rates}; one run)")
    big = [r for r in rows if r["section"] == "solid writers"]
    if big:
        lines += ["", (f"{'writers, 3-D':28s} {'cells':>11s} {'s':>7s} {'MB':>8s} {'MB/s':>7s} {'x B':>6s} "
                       f"{'peak MiB':>9s}")]
        for r in big:
            if "seconds" not in r:
                lines.append(f"  {r['name']:26s} {r.get('skipped') or 'error: ' + r['error']}")
                continue
            lines.append(f"  {r['name']:26s} {r['cells']:>11,} {r['seconds']:7.1f} {r['bytes'] / 1e6:8.0f} "
                         f"{r['mbps']:7.0f} {_num(r['x_b'], '6.2f')} {r['peak_mib']:9.0f}")
    start = [r for r in rows if r["section"] == "startup"]
    if start:
        lines += ["", "start-up: " + ", ".join(f"{r['name']} {r['seconds']:.3f} s ({r['x_numpy']:.2f} x numpy)"
                                              for r in start)]
    fam = [r for r in rows if r["section"] == "family"]
    if fam:
        lines.append("")
        if fam[0]["name"] == "not available":
            lines.append(f"family: not available ({fam[0]['error']})")
        else:
            levels = ", ".join(f"{c:,}" for c in fam[0]["cells"])
            lines.append(f"family of {len(fam[0]['cells'])} levels at ratio {cfg['family_ratio']:g} ({levels} cells): "
                         + ", ".join(f"{r['name']} {r['seconds']:.2f} s" for r in fam)
                         + f"; speed-up {fam[-1]['speedup']:.2f} x of at most {fam[-1]['speedup_bound']:.2f} x "
                         f"(total / largest member), efficiency {100 * fam[-1]['efficiency']:.0f} %")
    lines += ["", "goals:"]
    for g in result["goals"]:
        v = g["value"]
        shown = "-" if v is None else (f"{v:.3g}" if isinstance(v, float) else str(v))
        lines.append(f"  [{g['status']:>5s}] {g['goal']}: {shown} {g['unit']}".rstrip())
    return "\n".join(lines)
