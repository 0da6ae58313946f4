"""The sizing table of a Plan: one list of (quantity, value) rows for every place that shows it.

``plan_rows(Plan.to_dict())`` is what ``meshgen plan`` prints as aligned text
(reports/plan_text.py), what a notebook shows for a Plan (``plan_markdown``,
``plan_html``) and what a built mesh shows above its groups. One list, so the three
never disagree on a label or a definition.
"""

from __future__ import annotations

import html


def _fmt(v: float) -> str:
    return f"{v:.4g}"


def _wall_state(w: dict) -> str:
    return f"{_fmt(w['T_w'])} K, {_fmt(w['rho_w'])} kg/m3, {_fmt(w['nu_w'])} m2/s"


def _resolution_rows(d: dict) -> list[tuple[str, str]]:
    """Rows of a scale-resolving plan (none for RANS): targets, achieved values, span, count."""
    r = d.get("resolution")
    if r is None:
        return []
    t, ref, c, at, along = (r["targets"], r["achieved_at_reference_station"], r["cell_count"], r["sized_at"],
                            r["along_plate"])
    wanted = ", ".join(f"{k} {_fmt(t[k])}" for k in ("dx_plus", "dz_plus", "y_plus", "cells_per_delta")
                       if t[k] is not None)
    rng = "; ".join(f"{k} {_fmt(v['low'])} to {_fmt(v['high'])} ({v['source']})" for k, v in r["ranges"].items())
    local = "-" if c["local_exponent"] is None else f"{c['local_exponent']:.3g}"
    return [
        ("resolution", r["description"]),
        ("targets", f"{wanted}, sized at x/L = {_fmt(at['x_over_L'])} ({at['station']} station)"),
        ("published ranges", rng or "-"),
        ("achieved at x_ref", (f"dx+ {_fmt(d['dx_plus'])}, dz+ {_fmt(d['dz_plus'])}, y+ {_fmt(d['dy_plus_wall'])}; "
                               f"cells per delta99: x {_fmt(ref['cells_per_delta']['x'])}, "
                               f"z {_fmt(ref['cells_per_delta']['z'])}")),
        ("dx+, dz+ along the plate", (f"{_fmt(along['dx_plus'][0])} to {_fmt(along['dx_plus'][1])}, "
                                      f"{_fmt(along['dz_plus'][0])} to {_fmt(along['dz_plus'][1])}")),
        ("span", (f"{_fmt(r['span'])} m = {_fmt(r['span_over_delta99_end'])} delta99(L), {r['span_cells']} cells, "
                  f"{r['span_boundary']} sides")),
        ("cell count against Re_L", (f"this grid N ~ Re_L^{local} here; {c['source']}: N ~ Re_L^"
                                     f"{c['choi_moin_exponent_text']}")),
    ]


def plan_rows(d: dict) -> list[tuple[str, str]]:
    """(label, value) rows of ``Plan.to_dict()``, units in the values."""
    corr = d["correlation"]
    rows = [
        ("case", d["case"]),
        ("Reynolds number Re_L", f"{d['reynolds']:.4g}"),
        ("regime", d["regime"]),
        *([("transition at x", f"{_fmt(d['transition_x'])} m (Re_x = {d['transition_reynolds']:.4g})")]
          if d.get("transition_x") is not None else []),
        ("skin-friction correlation", f"{corr['name']}: {corr['formula']}"),
        ("free stream U, nu", f"{_fmt(d['velocity'])} m/s, {_fmt(d['nu'])} m2/s"),
        ("plate length L", f"{_fmt(d['length'])} m"),
        ("Mach number", "incompressible sizing" + (f" (estimated M = {d['mach_estimate']:.3g})"
                                                   if d.get("mach_estimate") is not None else "")
         if not d.get("mach") else f"{d['mach']:.4g}, T = {_fmt(d['temperature'])} K"),
        ("wall T_w, rho_w, nu_w at x_ref", _wall_state(d["wall_at_reference"])),
        ("wall treatment", f"{d['wall_treatment']} (y+ band {_fmt(d['y_plus_band'][0])} to {_fmt(d['y_plus_band'][1])})"),
        ("y+ measured at", "first node (y = first-cell height)" if d["y_plus_at"] == "node"
         else "first cell centre (y = half the first-cell height)"),
        ("delta99 at the plate end", f"{_fmt(d['delta99_end'])} m"),
        ("domain height H", f"{_fmt(d['domain_height'])} m"),
        ("domain x range", f"{_fmt(d['extent']['x'][0])} to {_fmt(d['extent']['x'][1])} m"),
        ("first-cell height", f"{_fmt(d['first_cell_height'])} m"),
        ("wall-normal growth ratio", _fmt(d["growth_ratio"])),
        ("streamwise spacing at x = 0", f"{_fmt(d['streamwise_first_spacing'])} m"),
    ]
    if d.get("y_plus_target") is not None:
        rows.append(("target y+ at x/L", f"{_fmt(d['y_plus_target'])} at {_fmt(d['reference_station'])}"))
    elif d.get("y_plus_at_reference") is not None:  # the spacing was given or solved: no target was set
        rows.append((f"y+ at x/L = {_fmt(d['reference_station'])} (from the first cell)",
                     _fmt(d["y_plus_at_reference"])))
    lo, hi = d["y_plus_range"]
    rows.append(("estimated y+ along the plate", f"{_fmt(lo)} to {_fmt(hi)}"))
    rows.append(("cells inside delta99 at x/L (nearest wall node)",
                 ", ".join(f"{k}: {v}" for k, v in d["cells_in_delta99"].items())))
    nodes = d["nodes"]
    grid = f"{nodes['x'] - 1} x {nodes['y'] - 1}" + ("" if nodes["z"] is None else f" x {nodes['z'] - 1}")
    rows.append(("cells (x by y[ by z])", grid))
    rows.append(("cells per block", ", ".join(f"{k}: {v:,}" for k, v in d["cells_per_block"].items())))
    rows.append(("cells in total", f"{d['cells']:,}"))
    rows += _resolution_rows(d)
    rows.append(("largest edge ratio (longest / shortest edge of a cell)",
                 f"{d['max_edge_ratio']:.3g} (large in the wall layers by design)"))
    rows.append(("boundary groups", ", ".join(d["groups"])))
    return rows


def plan_markdown(d: dict) -> str:
    """The sizing table as a markdown table, then one line per warning."""
    lines = ["| quantity | value |", "|---|---|"]
    lines += [f"| {k} | {v.replace('|', '/')} |" for k, v in plan_rows(d)]
    lines += [f"\nassumes: {a}" for a in d.get("assumptions", [])]
    lines += [f"\n**warning:** {w}" for w in d.get("warnings", [])]
    return "\n".join(lines) + "\n"


def plan_html(d: dict) -> str:
    """The sizing table as an HTML table (for notebooks that render HTML only)."""
    body = "".join(f"<tr><td>{html.escape(k)}</td><td>{html.escape(v)}</td></tr>" for k, v in plan_rows(d))
    warn = "".join(f"<p>assumes: {html.escape(a)}</p>" for a in d.get("assumptions", []))
    warn += "".join(f"<p><b>warning:</b> {html.escape(w)}</p>" for w in d.get("warnings", []))
    return f"<table><tr><th>quantity</th><th>value</th></tr>{body}</table>{warn}"


class PlanDisplay:
    """The Plan's short ``repr`` and its notebook tables (mixed into Plan)."""

    def __repr__(self) -> str:
        return (f"<Plan {self.case.name!r} level {self.level}: {self.dim}-D, {self.cell_count:,} cells, "
                f"Re_L = {self.flow.reynolds:.4g} ({self.flow.regime}), first cell {self.first_cell_height:.3g} m>")

    def _repr_markdown_(self) -> str:
        return f"**{self!r}**\n\n" + plan_markdown(self.to_dict())

    def _repr_html_(self) -> str:
        return f"<p><b>{html.escape(repr(self))}</b></p>" + plan_html(self.to_dict())
