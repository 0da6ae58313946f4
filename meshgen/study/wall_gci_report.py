"""Reporting grid convergence along the wall: a table per station, a CSV and a PNG band.

All take what ``meshgen.study.wall_gci.wall_study`` returns. Oscillatory and divergent
stations are marked in the table (kind in capitals with ``*``), in the CSV (``kind``) and
in the picture (shaded and marked), not hidden; a station whose GCI is not a result
(``unreliable_because``) shows no extrapolated value or GCI in the table and the CSV.
"""

from __future__ import annotations

from collections.abc import Mapping
from pathlib import Path

import numpy as np

from ..io.atomic import atomic_file, write_text

# Colours of our own choosing: levels from deep blue to ochre, a wine-red extrapolation on
# a pale apricot band, coral for oscillatory and slate grey for divergent stations.
LEVEL_COLOURS = ("#27476e", "#4f8a8b", "#a3b86c", "#e4b363", "#9c6644", "#6d597a")
EXT_COLOUR, BAND_COLOUR, OSC_COLOUR, DIV_COLOUR = "#8c2f39", "#f2c6b4", "#d1495b", "#5c5c5c"
MARKED = ("oscillatory", "divergent", "indeterminate")


def _kind(row: Mapping) -> str:
    return f"{row['kind'].upper()}*" if row["kind"] in MARKED else row["kind"]


def station_summary(rows: list[Mapping]) -> str:
    """One line: how many stations converge monotonically, where the others are."""
    parts = [f"{sum(r['kind'] == 'monotonic' for r in rows)} of {len(rows)} stations monotonic"]
    for kind in MARKED:
        at = [f"{r['x_over_L']:g}" for r in rows if r["kind"] == kind]
        if at:
            parts.append(f"{kind} at x/L = {', '.join(at)}")
    bad = [f"{r['x_over_L']:g}" for r in rows if r["kind"] == "monotonic" and not r["reliable"]]
    if bad:
        parts.append(f"GCI unreliable (order far from formal) at x/L = {', '.join(bad)}")
    return "; ".join(parts)


def wall_table(res: Mapping) -> str:
    """Plain text: per quantity, one row per station (each level, kind, p, extrapolated, GCI)."""
    names = [lv["name"] for lv in res["levels"]]
    out = []
    for q, rows in res["quantities"].items():
        out.append(f"{q} along the wall ({res['file']}): Celik et al. (2008) at each station, "
                   f"{names[0]} finest; GCI in % of the fine value; * = marked station")
        head = ["x/L", *names, "kind", "p", "extrapolated", "GCI fine", "band +/-"]
        table = [head]
        for r in rows:
            shown = r["reliable"] and r["phi_ext"] is not None
            table.append([f"{r['x_over_L']:g}", *(f"{v:.6g}" for v in r["phi"]), _kind(r),
                          "-" if r["p"] is None else f"{r['p']:.3g}",
                          f"{r['phi_ext']:.6g}" if shown else ("unreliable" if r["phi_ext"] is not None else "-"),
                          f"{100 * r['gci_fine']:.3g} %" if shown and r["gci_fine"] is not None else "-",
                          f"{r['u_fine']:.3g}" if shown else "-"])
        widths = [max(len(t[j]) for t in table) for j in range(len(head))]
        out += ["  " + "  ".join(c.rjust(w) for c, w in zip(t, widths)) for t in table]
        out += [f"  {station_summary(rows)}", ""]
    return "\n".join(out + [f"warning: {w}" for w in res["warnings"]])


def write_wall_csv(res: Mapping, path: str | Path) -> Path:
    """The station table as CSV: quantity, x_over_L, one column per level, kind, p, phi_ext,
    gci_fine (fraction), u_fine, reliable, unreliable_because. Unreliable values are blank."""
    names = [lv["name"] for lv in res["levels"]]
    lines = [",".join(["quantity", "x_over_L", *names, "kind", "p", "phi_ext", "gci_fine", "u_fine",
                       "reliable", "unreliable_because"])]
    for q, rows in res["quantities"].items():
        for r in rows:
            ok = r["reliable"]

            def num(v, shown=ok):
                return "" if v is None or not shown else repr(float(v))
            lines.append(",".join([q, repr(r["x_over_L"]), *(repr(float(v)) for v in r["phi"]), r["kind"],
                                   num(r["p"], True), num(r["phi_ext"]), num(r["gci_fine"]), num(r["u_fine"]),
                                   "true" if ok else "false", (r["unreliable_because"] or "").replace(",", ";")]))
    return write_text(Path(path), "\n".join(lines) + "\n")


def _plot_one(ax, q: str, res: Mapping) -> None:
    length = res["plate_length"]
    rows = res["quantities"][q]
    for k, lv in enumerate(res["levels"]):
        x = np.asarray(lv["x"]) / length
        on = (x >= 0) & (x <= 1)
        ax.plot(x[on], np.asarray(lv["values"][q])[on], "-", color=LEVEL_COLOURS[k % len(LEVEL_COLOURS)],
                lw=1.1, label=f"{lv['name']} (h = {lv['h']:.3g} m)")
    s = np.array([r["x_over_L"] for r in rows])
    ok = np.array([r["reliable"] and r["phi_ext"] is not None for r in rows])
    ext = np.array([r["phi_ext"] if r["phi_ext"] is not None else np.nan for r in rows], dtype=float)
    u = np.array([r["u_fine"] if r["u_fine"] is not None else np.nan for r in rows], dtype=float)
    fine = np.array([r["phi"][0] for r in rows])
    if ok.any():
        # The GCI qualifies the fine-grid value (Celik et al. 2008, eq. 10: phi1 +- GCI), as
        # in the scalar picture; the extrapolated curve should fall inside the band.
        ax.fill_between(s, fine - u, fine + u, where=ok, color=BAND_COLOUR, alpha=0.7, lw=0,
                        label="GCI band of the finest level (phi1 \u00b1 u_fine21)", zorder=1)
        ax.plot(np.where(ok, s, np.nan), np.where(ok, ext, np.nan), "o-", color=EXT_COLOUR, ms=3.5, lw=1.2,
                label="extrapolated (Richardson, Celik et al. 2008)", zorder=4)
    for kind, colour, marker in (("oscillatory", OSC_COLOUR, "D"), ("divergent", DIV_COLOUR, "X"),
                                 ("indeterminate", DIV_COLOUR, "s")):
        at = np.array([r["kind"] == kind for r in rows])
        if at.any():
            for x in s[at]:
                ax.axvspan(x - 0.012, x + 0.012, color=colour, alpha=0.18, lw=0, zorder=0)
            ax.plot(s[at], fine[at], marker, mfc="white", mec=colour, mew=1.6, ms=7, ls="none", zorder=5,
                    label=f"{kind} station ({at.sum()}): no GCI")
    weak = np.array([r["kind"] == "monotonic" and not r["reliable"] for r in rows])
    if weak.any():
        ax.plot(s[weak], fine[weak], "^", mfc="white", mec=OSC_COLOUR, ms=7, ls="none", zorder=5,
                label=f"order far from formal ({weak.sum()}): GCI unreliable")
    ax.set_xlim(0.0, 1.0)
    # The vertical scale follows the stations, not the leading-edge values (Cf grows without
    # bound towards x = 0 and would flatten the curves where the study is).
    shown = [fine, np.where(ok, ext, np.nan), np.where(ok, fine - u, np.nan), np.where(ok, fine + u, np.nan)]
    start = max(0.0, float(s.min()) - 0.05)
    for lv in res["levels"]:
        x = np.asarray(lv["x"]) / length
        shown.append(np.asarray(lv["values"][q])[(x >= start) & (x <= 1)])
    v = np.concatenate([np.ravel(a) for a in shown])
    v = v[np.isfinite(v)]
    if v.size and v.max() > v.min():
        pad = 0.06 * (v.max() - v.min())
        ax.set_ylim(v.min() - pad, v.max() + pad)
    ax.set_xlabel("x / L along the plate")
    ax.set_ylabel(q)
    n_ok = int(ok.sum())
    ax.set_title(f"{q}: each level, the extrapolated curve and its GCI band ({n_ok} of {len(rows)} stations)")
    ax.grid(alpha=0.3)
    ax.legend(fontsize="small", loc="best", framealpha=0.9)


def plot_wall(res: Mapping, path: str | Path) -> Path:
    """PNG, one subplot per quantity (see ``_plot_one``), written atomically."""
    from matplotlib.backends.backend_agg import FigureCanvasAgg
    from matplotlib.figure import Figure

    qs = list(res["quantities"])
    fig = Figure(figsize=(8.5, 4.2 * len(qs)), layout="constrained")
    FigureCanvasAgg(fig)  # Agg canvas on this figure only: no pyplot state, no display
    axes = fig.subplots(len(qs), 1, squeeze=False)[:, 0]
    for ax, q in zip(axes, qs):
        _plot_one(ax, q, res)
    path = Path(path)
    with atomic_file(path) as tmp:
        fig.savefig(tmp, format="png", dpi=110)
    return path
