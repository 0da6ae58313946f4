"""What a scale-resolving plan achieves in wall units, along the plate and at the reference
station, and how its cell count grows with Re_L against the published scaling.

Wall units: dx+ = dx u_tau / nu_w, dz+ = dz u_tau / nu_w, y+ = dy1 u_tau / nu_w, with the
wall quantities of ``meshgen.planning.resolved.wall_scales`` at the centre of each plate
cell. The grid is the plan's own 1-D arrays, which the builder verifies node for node.

The local exponent d ln N / d ln Re_L is measured by sizing the same case at Re_L times
10^(-1/4) and 10^(+1/4) (the speed scaled, everything else fixed) and comparing the counts;
the published exponents are those of Choi & Moin (2012) (``meshgen.physics.resolution``).
"""

from __future__ import annotations

import math
from dataclasses import replace

import numpy as np

from ..core.errors import InputError
from ..physics.resolution import CHOI_MOIN, KINDS
from . import resolved

#: Half-width of the Re_L interval of the local exponent, in decades.
EXPONENT_HALF_DECADES = 0.25

#: What a scale-resolving mesh does not settle by itself (common practice).
CAUTIONS = (
    ("the targets hold where the layer is turbulent: a scale-resolving run also needs turbulent inflow "
     "(recycled or synthetic) or a trip, and a development length before statistics are taken"),
    ("periodic sides assume a statistically homogeneous span: check that spanwise two-point correlations "
     "fall to about zero within half the span, or widen it (resolution.span_deltas)"),
    ("the wall units are a-priori estimates from correlations: check dx+, dz+ and y+ with the solver's wall "
     "shear stress and refine where they exceed the targets"),
)


def _plate(plan) -> tuple[np.ndarray, np.ndarray]:
    """Centres [m] and widths [m] of the plate's cells."""
    xs = plan.plate_nodes()
    return 0.5 * (xs[1:] + xs[:-1]), np.diff(xs)


def _first_cell_and_dz(plan) -> tuple[float, float]:
    dz = float(np.diff(plan.z).max()) if plan.z is not None else math.nan
    return float(plan.y[1] - plan.y[0]), dz


def along_plate(plan) -> dict[str, np.ndarray]:
    """x [m] (plate cell centres) and the achieved dx+, dz+, first-cell y+ and delta99 / dx there."""
    xc, dx = _plate(plan)
    ws = resolved.wall_scales(plan.flow, xc)
    lv = ws.viscous_length
    dy1, dz = _first_cell_and_dz(plan)
    return {"x": xc, "dx_plus": dx / lv, "dz_plus": dz / lv, "dy_plus_wall": dy1 / lv,
            "delta_over_dx": ws.delta99 / dx}


def at_station(plan, x: float) -> dict:
    """Achieved figures in the plate cell holding ``x`` [m] (the last cell at the trailing edge)."""
    xs = plan.plate_nodes()
    i = int(np.clip(np.searchsorted(xs, x) - 1, 0, xs.size - 2))
    dx = float(xs[i + 1] - xs[i])
    ws = resolved.wall_scales(plan.flow, x)
    lv, delta = float(ws.viscous_length), float(ws.delta99)
    dy1, dz = _first_cell_and_dz(plan)
    return {
        "x_over_L": x / plan.flow.length,
        "dx_plus": dx / lv, "dz_plus": dz / lv, "dy_plus_wall": dy1 / lv,
        "cells_per_delta": {"x": delta / dx, "z": delta / dz, "y_first_cell": delta / dy1},
    }


def count_at(case, flow, factor: float) -> int:
    """Cells of the same case sized at Re_L times ``factor`` (the speed scaled)."""
    scaled = replace(flow, velocity=flow.velocity * factor, reynolds=flow.reynolds * factor)
    nx, ny, nz = resolved.cell_counts(case, scaled)
    return nx * ny * nz


def local_exponent(case, flow) -> float | None:
    """d ln N / d ln Re_L of this case's grid around its Re_L; None where a neighbour cannot be sized."""
    f = 10.0**EXPONENT_HALF_DECADES
    try:
        lo, hi = count_at(case, flow, 1.0 / f), count_at(case, flow, f)
    except InputError:
        return None
    return math.log(hi / lo) / math.log(f * f)


def _range(a: np.ndarray) -> list[float]:
    return [float(a.min()), float(a.max())]


def resolution_figures(plan) -> dict:
    """The plan.json entries of a scale-resolving plan: achieved dx+, dz+ and y+ at the reference
    station (top level), and the ``resolution`` section with targets, ranges and the count."""
    s, case = plan.resolution, plan.case
    k = KINDS[s.kind]
    ref = at_station(plan, case.wall.reference_station * plan.flow.length)
    along = along_plate(plan)
    exponent = local_exponent(case, plan.flow)
    targets = {"dx_plus": s.dx_plus, "dz_plus": s.dz_plus, "cells_per_delta": s.cells_per_delta,
               "y_plus": s.y_plus, "first_cell_height": s.first, "dx": s.dx, "dz": s.dz}
    ranges = {name: {"low": t.low, "high": t.high, "source": t.source}
              for name, t in (("dx_plus", k.dx_plus), ("dz_plus", k.dz_plus), ("cells_per_delta", k.cells_per_delta))
              if t is not None}
    return {
        "dx_plus": ref["dx_plus"],
        "dz_plus": ref["dz_plus"],
        "dy_plus_wall": ref["dy_plus_wall"],
        "resolution": {
            "kind": s.kind,
            "description": k.description,
            "sized_at": {"station": s.station, "x_over_L": s.station_x / plan.flow.length},
            "targets": targets,
            "ranges": ranges,
            "achieved_at_reference_station": ref,
            "along_plate": {key: _range(along[key]) for key in ("dx_plus", "dz_plus", "dy_plus_wall")},
            "span": float(plan.z[-1]),
            "span_cells": int(plan.z.size - 1),
            "span_over_delta99_end": float(plan.z[-1]) / plan.delta99_end,
            "span_boundary": plan.span_boundary,
            "cautions": list(CAUTIONS),
            "cell_count": {
                "cells": plan.cell_count,
                "choi_moin_exponent": k.choi_moin_exponent,
                "choi_moin_exponent_text": k.exponent_text,
                "source": CHOI_MOIN,
                "local_exponent": exponent,
                "local_exponent_meaning": ("d ln N / d ln Re_L of this case's grid, sized at Re_L x 10^(-1/4) "
                                           "and x 10^(+1/4) with everything else fixed"),
            },
        },
    }
