"""report.md: the quality and boundary-layer reports as markdown tables, with the pictures linked."""

from __future__ import annotations

import numpy as np

from .cell_metrics import DBL_MAX

# --- report.md ---------------------------------------------------------------------------


def _fmt(v) -> str:
    if v is None:
        return "-"
    if isinstance(v, (int, np.integer)) and not isinstance(v, bool):
        return str(v)
    return "inf" if abs(v) >= DBL_MAX else f"{v:.4g}"


def _table(head: list[str], rows: list[list]) -> list[str]:
    return ["| " + " | ".join(head) + " |", "|" + "---|" * len(head)] + [
        "| " + " | ".join(c if isinstance(c, str) else _fmt(c) for c in r) + " |" for r in rows]


def _bl_markdown(bl: dict) -> list[str]:
    if "omitted" in bl:
        return ["## Boundary layer", "", f"Omitted: {bl['omitted']}.", ""]
    yp, ref = bl["y_plus"], bl["reference"]
    out = ["## Boundary layer", "",
           (f"{bl['regime']} flow, U = {_fmt(bl['velocity_m_s'])} m/s, nu = {_fmt(bl['nu_m2_s'])} m2/s, "
           f"plate length {_fmt(bl['plate_length_m'])} m (Re_L = {_fmt(bl['re_l'])}); skin friction "
           f"{bl['formula']} ({bl['correlation_source']}). Cells in delta99: "
           f"{bl['definitions']['cells_in_delta99']}."), ""]
    out += _table(["x/L", "nearest wall node x [m]", "Re_x", "delta99 [m]", "cells in delta99",
                   "first cell [m]", "y+"],
                  [[r["fraction"], r["x_m"], r["re_x"], r["delta99_m"], r["cells_in_delta99"],
                    r["first_cell_height_m"], r["y_plus"]] for r in bl["stations"]])
    out += ["", (f"Reference station x = {_fmt(ref['x_m'])} m: first cell "
                 f"{_fmt(ref['first_cell_height_m'])} m, "
            f"y+ {_fmt(ref['y_plus'])}"
            + (f" (target {_fmt(bl['y_plus_target'])})" if bl["y_plus_target"] is not None else "")
            + ", largest wall-normal growth "
            f"ratio {_fmt(ref['max_growth_ratio'])}."), "",
            (f"Estimated first-cell y+ along the plate: min {_fmt(yp['min'])}, length-weighted mean "
            f"{_fmt(yp['mean'])}, max {_fmt(yp['max'])}. Band {_fmt(yp['band'][0])} to {_fmt(yp['band'][1])} "
            f"({yp['band_rule']}): {100 * yp['fraction_in_band']:.1f} % of the plate inside, "
            f"{100 * yp['fraction_below']:.1f} % below, {100 * yp['fraction_above']:.1f} % above."), ""]
    return out


def quality_markdown(report: dict, case_name: str, pictures=(), relative_to=None) -> str:
    """report.md text: tables of ``report`` and the pictures as relative links.

    ``pictures`` are paths. With ``relative_to`` (the folder the text is written to, or
    the current folder for printed text) each is linked relative to it, so the links
    work wherever that folder is; without, an absolute path is linked by its file name
    and a relative one as given.
    """
    import os
    from pathlib import Path

    m = report["mesh"]
    out = [f"# Mesh quality: {case_name}", "",
           f"{m['n_cells']} {m['cell_type']} cells, {m['n_points']} nodes, {m['dim']}-D; structured layout: "
           f"{m['structure']}" + (f" ({' x '.join(map(str, m['shape']))} nodes)." if m["shape"] else "."), ""]
    out += _table(["group", "role", "facets"], [[k, m["roles"][k], v] for k, v in m["groups"].items()])
    out += ["", "## Errors", ""] + ([f"- **{e}**" for e in report["errors"]] or ["None."]) + [""]
    rows = []
    for name, s in report["metrics"].items():
        acc = "-" if "acceptable" not in s else f"{_fmt(s['acceptable'][0])} to {_fmt(s['acceptable'][1])}"
        rows.append([name.replace("_", " "), s["unit"], s["min"], s["p5"], s["p50"], s["p95"], s["max"],
                     acc, s.get("outside", "-") if "outside" in s else "-"])
    out += ["## Cell metrics", "", (f"Definitions: {report['sources']['metrics']}; centre-line angle: "
            f"{report['sources']['centre_line_angle']}."), ""]
    out += _table(["metric", "unit", "min", "p5", "median", "p95", "max", "acceptable", "outside"], rows)
    out.append("")
    if "boundary_layer" in report:
        out += _bl_markdown(report["boundary_layer"])
    notes = report["notes"] + report.get("boundary_layer", {}).get("notes", [])
    out += ["## Notes", ""] + [f"- {n}" for n in notes] + [""]
    if pictures:
        out += ["## Pictures", ""]
        for p in pictures:
            p = Path(p)
            if relative_to is not None:
                link = Path(os.path.relpath(p.absolute(), Path(relative_to).absolute())).as_posix()
            else:
                link = p.name if p.is_absolute() else p.as_posix()
            out += [f"![{p.stem.replace('_', ' ')}]({link})", ""]
    return "\n".join(out)
