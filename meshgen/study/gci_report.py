"""Reporting grid-convergence results: a plain-text table and a PNG of phi against h.

Both take what ``meshgen.study.gci.study`` or ``meshgen.study.results.study_rows`` return
(Celik et al. 2008 notation: grid 1 is the finest; GCI as a percentage of the fine-grid
value).
"""

from __future__ import annotations

from collections.abc import Mapping
from pathlib import Path

import numpy as np

from ..core.errors import InputError
from ..io.atomic import atomic_file
from .gci import METHOD_TWO, P_HIGH_FACTOR, P_LOW


def _by_quantity(results: Mapping) -> dict:
    if "quantities" in results:
        return dict(results["quantities"])
    if "quantity" in results and "results" in results:
        return {results["quantity"]: results}
    raise InputError("results: expected what study() or study_rows() returns")


def _num(x) -> str:
    return "-" if x is None else f"{x:.6g}"


def _pct(x) -> str:
    return "-" if x is None else f"{100 * x:.4g} %"


def unreliable_because(res: Mapping) -> str | None:
    """Why a result's extrapolation and GCI are not results to report (None: they are).

    A three-grid GCI stands only on monotonic convergence with an apparent order near a
    practical scheme's (P_LOW to P_HIGH_FACTOR times the formal order, as ``three_grid``
    warns); a tiny GCI from an oscillatory set or an absurd order is not a small uncertainty.
    A two-grid estimate states its assumed order and stands as such.
    """
    if res["method"] == METHOD_TWO:
        return None
    if res["kind"] != "monotonic":
        return f"{res['kind']} convergence"
    p = res["p"]
    if p is None or res["gci_fine21"] is None:
        return "no apparent order or GCI"
    hi = P_HIGH_FACTOR * res.get("formal_order", 2.0)
    if not P_LOW <= p <= hi:
        return f"apparent order p = {p:.3g} outside {P_LOW:g} to {hi:g}"
    return None


def _result_lines(res: dict) -> list[str]:
    why = unreliable_because(res)
    if why is not None and res["gci_fine21"] is not None:
        return _unreliable_lines(res, why)
    out = [f"  {' / '.join(res['levels'])}: {res['method']}, Fs = {res['fs']:g}"]
    ratios = f"r21 = {res['r21']:.4g}" + (f", r32 = {res['r32']:.4g}" if "r32" in res else "")
    steps = f", {res['p_iterations']} steps" if res.get("p_iterations") else ""
    conv = res["kind"] + (f" (R = {res['R']:.4g})" if res.get("R") is not None else "")
    out += [
        f"    refinement ratios   {ratios}",
        f"    convergence         {conv}",
        f"    order               p = {_num(res['p'])}"
        + (f" ({res['p_method']}{steps})" if res["p_method"] else ""),
        f"    extrapolated        phi_ext21 = {_num(res['phi_ext21'])}"
        + (f", phi_ext32 = {_num(res['phi_ext32'])}" if "phi_ext32" in res else ""),
        f"    relative errors     e_a21 = {_pct(res['e_a21'])}, e_ext21 = {_pct(res['e_ext21'])}",
        f"    GCI                 fine21 = {_pct(res['gci_fine21'])}"
        + ("" if res["u_fine21"] is None else f" (band +/-{res['u_fine21']:.6g})")
        + (
            f", medium32 = {_pct(res['gci_medium32'])}, "
            f"asymptotic ratio = {_num(res['asymptotic_ratio'])}"
            if "gci_medium32" in res
            else ""
        ),
    ]
    return out + [f"    warning: {w}" for w in res["warnings"]]


def _unreliable_lines(res: dict, why: str) -> list[str]:
    """The result without its extrapolation and GCI printed as numbers (they are not results)."""
    ratios = f"r21 = {res['r21']:.4g}" + (f", r32 = {res['r32']:.4g}" if "r32" in res else "")
    conv = res["kind"] + (f" (R = {res['R']:.4g})" if res.get("R") is not None else "")
    out = [
        f"  {' / '.join(res['levels'])}: {res['method']}, Fs = {res['fs']:g}",
        f"    refinement ratios   {ratios}",
        f"    convergence         {conv}",
        f"    order               p = {_num(res['p'])}",
        (f"    GCI                 UNRELIABLE ({why}): no extrapolated value or GCI is reported; "
         "see the JSON output for the raw numbers"),
    ]
    return out + [f"    warning: {w}" for w in res["warnings"]]


def gci_table(results: Mapping) -> str:
    """A plain-text report of ``study``/``study_rows`` results, one section per quantity."""
    out = []
    for q, st in _by_quantity(results).items():
        out += [
            f"{q}: grid convergence (grid 1 finest; GCI in % of the fine-grid value)",
            f"  {'mesh':<14}{'cells':>12}{'h':>14}{q:>16}",
        ]
        out += [
            f"  {lv['name']:<14}{'-' if lv['cells'] is None else lv['cells']:>12}"
            f"{lv['h']:>14.6g}{lv['phi']:>16.8g}"
            for lv in st["levels"]
        ]
        for res in st["results"]:
            out += _result_lines(res)
        out.append("")
    return "\n".join(out)


# Colours of our own choosing: deep teal data, brick-red extrapolation, sand band.
DATA_COLOUR, FIT_COLOUR, EXT_COLOUR, BAND_COLOUR = "#1d5c63", "#7a7a7a", "#b23a2e", "#e9c46a"


def _plot_one(ax, quantity: str, st: dict) -> None:
    h = np.array([lv["h"] for lv in st["levels"]])
    phi = np.array([lv["phi"] for lv in st["levels"]])
    ax.plot(h, phi, "o-", color=DATA_COLOUR, lw=1.2, ms=6, label="solutions", zorder=3)
    for lv in st["levels"]:
        ax.annotate(
            lv["name"],
            (lv["h"], lv["phi"]),
            textcoords="offset points",
            xytext=(4, 6),
            fontsize="small",
            color=DATA_COLOUR,
        )
    res = st["results"][0]  # the finest triplet (or pair) sets the extrapolation
    ext, u, p = res["phi_ext21"], res["u_fine21"], res["p"]
    why = unreliable_because(res)
    if why is not None and ext is not None:  # not a result: say so instead of drawing a band
        ax.text(0.02, 0.04, f"extrapolation and GCI unreliable: {why}", transform=ax.transAxes,
                color=EXT_COLOUR, fontsize="small")
        ext = None
    if ext is not None and res["kind"] != "oscillatory":
        hh = np.linspace(0.0, h.max(), 200)
        ax.plot(
            hh,
            ext + (phi[0] - ext) * (hh / h[0]) ** p,
            "--",
            color=FIT_COLOUR,
            lw=1,
            label=f"phi_ext + C h^p, p = {p:.3g}",
        )
    if ext is not None:
        # The GCI qualifies the fine-grid value: phi1 +- u_fine21 (u = GCI_fine21 |phi1|,
        # Celik et al. 2008 eq. 10 and their reporting form "phi1 +- GCI"), so the band is
        # drawn around phi1, from the fine grid to h = 0 where phi_ext should fall inside it.
        ax.fill_between([0.0, h[0]], phi[0] - u, phi[0] + u, color=BAND_COLOUR, alpha=0.35, lw=0,
                        label=f"GCI band of the fine grid: phi1 \u00b1 {u:.3g} (GCI_fine21 = {_pct(res['gci_fine21'])})")
        ax.errorbar([h[0]], [phi[0]], yerr=[[u], [u]], fmt="none", ecolor=EXT_COLOUR, capsize=6, zorder=4)
        ax.plot([0.0], [ext], "D", color=EXT_COLOUR, zorder=4, clip_on=False,  # on the axis at h = 0
                label=f"extrapolated phi_ext21 = {ext:.6g}")
    # room for the level labels and the legend: nothing is cut at the frame
    ax.set_xlim(0.0, 1.15 * h.max())
    lo, hi = ax.get_ylim()
    ax.set_ylim(lo, hi + 0.12 * (hi - lo))
    ax.set_xlabel("representative cell size h [m] (h = 0: extrapolated)")
    ax.set_ylabel(quantity)
    kind = f"two grids, assumed p = {p:g}" if res["method"] == METHOD_TWO else res["kind"]
    ax.set_title(
        f"{quantity}: grid convergence ({kind}" + (", no extrapolation)" if ext is None else ")")
    )
    ax.grid(alpha=0.3)
    ax.legend(fontsize="small", loc="best")


def plot_gci(results: Mapping, path: str | Path) -> Path:
    """PNG of phi against h, one subplot per quantity, with the extrapolated value at h = 0.

    The band is phi1 +- u_fine21 (u = GCI_fine21 |phi1|), around the fine-grid value it
    qualifies, with the extrapolated value marked at h = 0. Written atomically; returns the path.
    """
    from matplotlib.backends.backend_agg import FigureCanvasAgg
    from matplotlib.figure import Figure

    studies = _by_quantity(results)
    fig = Figure(figsize=(7.5, 4.0 * len(studies)), layout="constrained")
    FigureCanvasAgg(fig)  # Agg canvas on this figure only: no pyplot state, no display
    axes = fig.subplots(len(studies), 1, squeeze=False)[:, 0]
    for ax, (q, st) in zip(axes, studies.items()):
        _plot_one(ax, q, st)
    path = Path(path)
    with atomic_file(path) as tmp:
        fig.savefig(tmp, format="png", dpi=110)
    return path
