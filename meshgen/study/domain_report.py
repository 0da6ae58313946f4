"""Reporting a domain sweep: a plain-text table with a verdict line, and a PNG per quantity.

Both take what ``meshgen.study.domain.domain_summary`` returns: the relative change of each
variant against the largest-domain variant (the reference) and whether it is within the
tolerance. Percentages are of the reference value.
"""

from __future__ import annotations

from collections.abc import Mapping
from pathlib import Path

import numpy as np

from ..io.atomic import atomic_file

#: What each sweep key measures (the case file's units: delta99(L) and the plate length L).
KEY_MEANING = {
    "domain.height_factor": "H / delta99(L)",
    "domain.upstream": "upstream length / L",
    "domain.downstream": "wake length / L",
    "domain.span": "span / L",
}
# Colours of our own choosing: slate data, muted clay for values outside the tolerance,
# charcoal reference, a pale sage band.
DATA_COLOUR, OUT_COLOUR, REF_COLOUR, BAND_COLOUR, LINE_COLOUR = (
    "#4f6d8a", "#b86f52", "#2f3b45", "#b7d3b0", "#9aa8b4",
)
FIT_COLOUR = "#7b4b94"  # a plum fit curve and limit line


def _pct(x: float) -> str:
    return f"{100 * x:.3g} %"


def _signed_pct(x: float) -> str:
    return "0 %" if x == 0 else f"{100 * x:+.3g} %"


def _key_label(key: str) -> str:
    meaning = KEY_MEANING.get(key if key.startswith("domain.") else f"domain.{key}")
    return f"{key} ({meaning})" if meaning else key


def _sorted_variants(st: Mapping, key: str) -> list[dict]:
    return sorted(st["variants"], key=lambda v: v[key])


def verdict(summary: Mapping) -> str:
    """One plain line: is every quantity within the tolerance of the largest domain, and from
    which key value on."""
    key, tol, qs = summary["key_column"], summary["tol"], summary["quantities"]
    ref, band = summary["reference"][key], _pct(tol)
    largest = f"the largest domain ({key} = {ref:g})"
    changes = [(q, v) for q, st in qs.items() for v in st["variants"]]
    smallest = min(v[key] for _, v in changes)
    if summary["all_within"]:
        return (
            f"verdict: domain-independent within {band}: every variant of {', '.join(qs)} is within "
            f"{band} of {largest}, so the smallest domain tried ({key} = {smallest:g}) is large enough"
        )
    start = max(st["within_from"] for st in qs.values())
    if start == ref:
        below = max(v[key] for _, v in changes if v[key] < ref)
        q, v = max(((q, v) for q, v in changes if v[key] == below), key=lambda t: abs(t[1]["rel_change"]))
        return (
            f"verdict: not shown domain-independent within {band}: {q} changes by "
            f"{_signed_pct(v['rel_change'])} at {key} = {below:g} against {largest}; extend the "
            f"sweep to larger {key}"
        )
    q, v = max(changes, key=lambda t: abs(t[1]["rel_change"]))
    return (
        f"verdict: within {band} of {largest} from {key} = {start:g} up; smaller domains are not "
        f"({q} changes by {_signed_pct(v['rel_change'])} at {key} = {v[key]:g})"
    )


def domain_table(summary: Mapping) -> str:
    """A plain-text report: one table per quantity, then the verdict line."""
    key, tol, qs = summary["key_column"], summary["tol"], summary["quantities"]
    ref = summary["reference"]
    n = len(next(iter(qs.values()))["variants"])
    name = f" ({ref['name']})" if ref.get("name") else ""
    out = [
        (
            f"domain sweep over {_key_label(key)}: {n} variants; reference = the largest domain, "
            f"{key} = {ref[key]:g}{name}; tolerance {_pct(tol)} of the reference value"
        )
    ]
    if summary.get("held"):
        out.append("other keys held at " + ", ".join(f"{k} = {x:g}" for k, x in summary["held"].items()))
    for q, st in qs.items():
        variants = _sorted_variants(st, key)
        named = any(v["name"] for v in variants)
        wn = max(len("variant"), *(len(v["name"] or "-") for v in variants)) if named else 0
        wk, wq = max(len(key), 10), max(len(q), 14)
        head = f"  {'variant':<{wn}}" if named else " "
        out += [
            "",
            f"{q}: reference value {st['reference_value']:.8g}",
            f"{head}  {key:>{wk}}  {q:>{wq}}  {'change':>9}  within {_pct(tol)}",
        ]
        out += [
            (f"  {v['name'] or '-':<{wn}}" if named else " ")
            + f"  {v[key]:>{wk}g}  {v['value']:>{wq}.8g}  "
            f"{_signed_pct(v['rel_change']):>9}  "
            + ("reference" if v[key] == ref[key] else "yes" if v["within_tol"] else "no")
            for v in variants
        ]
        out.append(
            f"  largest change {_pct(st['max_abs_rel_change'])}; within {_pct(tol)} from "
            f"{key} = {st['within_from']:g} up"
        )
        out += _fit_lines(st.get("fit"), key)
    out += [f"warning: {w}" for w in summary.get("warnings", [])]
    return "\n".join([*out, "", verdict(summary)])


def _fit_lines(fit: Mapping | None, key: str) -> list[str]:
    """The fit phi_inf + a H^-q and each variant's difference from phi_inf."""
    if fit is None:
        return []
    how = "fitted" if fit["q_fitted"] else "given"
    head = (f"  fit phi({key}) = phi_inf + a {key}^-q: phi_inf = {fit['phi_inf']:.8g}, q = {fit['q']:.3g} "
            f"({how}), a = {fit['a']:.4g}, rms residual {fit['rms']:.3g}")
    if not fit["reliable"]:
        return [(f"  fit phi({key}) = phi_inf + a {key}^-q: UNRELIABLE, no power-law decay fits; "
                 "phi_inf not reported (see --json)")]
    diffs = ", ".join(f"{key} = {d['key']:g}: {_signed_pct(d['rel_diff'])}" for d in fit["differences"]
                      if d["rel_diff"] is not None)
    return [head, f"  difference from phi_inf: {diffs}"]


def _plot_one(ax, q: str, st: Mapping, key: str, tol: float, ref_key: float) -> None:
    variants = _sorted_variants(st, key)
    x = np.array([v[key] for v in variants])
    y = np.array([v["value"] for v in variants])
    ok = np.array([v["within_tol"] for v in variants])
    ref, half = st["reference_value"], tol * abs(st["reference_value"])
    ax.axhspan(ref - half, ref + half, color=BAND_COLOUR, alpha=0.45, lw=0,
               label=f"\u00b1{_pct(tol)} of the largest domain's value")
    ax.axhline(ref, color=REF_COLOUR, lw=0.8, ls=":")
    ax.plot(x, y, "-", color=LINE_COLOUR, lw=1.2, zorder=2)
    fit = st.get("fit")
    if fit is not None and fit["reliable"]:
        xx = np.linspace(x.min(), x.max() * 1.5, 200)
        ax.plot(xx, fit["phi_inf"] + fit["a"] * xx ** -fit["q"], "--", color=FIT_COLOUR, lw=1.1, zorder=2,
                label=f"fit phi_inf + a {key}^-q (q = {fit['q']:.3g}, {'fitted' if fit['q_fitted'] else 'given'})")
        ax.axhline(fit["phi_inf"], color=FIT_COLOUR, lw=0.9, ls="-.",
                   label=f"phi_inf = {fit['phi_inf']:.6g} (unbounded domain)")
    ax.plot(x[ok], y[ok], "o", color=DATA_COLOUR, ms=7, ls="none", zorder=3, label="within the tolerance")
    if not ok.all():
        ax.plot(x[~ok], y[~ok], "o", mfc="white", mec=OUT_COLOUR, mew=1.8, ms=7, ls="none", zorder=3,
                label="outside the tolerance")
    ax.plot([ref_key], [ref], "D", color=REF_COLOUR, ms=8, ls="none", zorder=4,
            label=f"reference: largest domain ({key} = {ref_key:g})")
    for v in variants:
        if v[key] != ref_key:
            ax.annotate(_signed_pct(v["rel_change"]), (v[key], v["value"]), textcoords="offset points",
                        xytext=(6, 6), fontsize="small",
                        color=DATA_COLOUR if v["within_tol"] else OUT_COLOUR)
    scale = 100.0 / abs(ref)  # value -> change against the reference [%]
    right = ax.secondary_yaxis("right", functions=(lambda v: (v - ref) * scale, lambda p: ref + p / scale))
    right.set_ylabel("change against the largest domain [%]")
    span = (x.max() * (1.5 if fit is not None and fit["reliable"] else 1.0)) - x.min()
    ax.set_xlim(x.min() - 0.08 * span, x.min() + 1.1 * span)
    ax.margins(y=0.12)  # room for the change labels above the points
    ax.set_xlabel(_key_label(key))
    ax.set_ylabel(q)
    start = st["within_from"]
    shown = (f"within \u00b1{_pct(tol)} from {key} = {start:g} up" if start < ref_key
             else f"no smaller domain within \u00b1{_pct(tol)}")
    ax.set_title(f"{q} against {key}: {shown}")
    ax.grid(alpha=0.3)
    ax.legend(fontsize="small", loc="best", framealpha=0.9)


def plot_domain(summary: Mapping, path: str | Path) -> Path:
    """PNG of each quantity against the key, one subplot per quantity: the variants, the
    reference (largest domain) and the tolerance band around it. Written atomically."""
    from matplotlib.backends.backend_agg import FigureCanvasAgg
    from matplotlib.figure import Figure

    key, tol, qs = summary["key_column"], summary["tol"], summary["quantities"]
    fig = Figure(figsize=(7.5, 3.8 * len(qs)), layout="constrained")
    FigureCanvasAgg(fig)  # Agg canvas on this figure only: no pyplot state, no display
    axes = fig.subplots(len(qs), 1, squeeze=False)[:, 0]
    for ax, (q, st) in zip(axes, qs.items()):
        _plot_one(ax, q, st, key, tol, summary["reference"][key])
    path = Path(path)
    with atomic_file(path) as tmp:
        fig.savefig(tmp, format="png", dpi=110)
    return path
