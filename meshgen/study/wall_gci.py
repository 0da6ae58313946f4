"""Grid convergence along the wall: the Celik procedure at stations along the plate.

Each level of a family has a wall distribution (``DIR/<level>/NAME.csv``, wall_data.py):
each is interpolated linearly to common stations x/L (default ``DEFAULT_STATIONS``), and
``meshgen.study.gci.study`` runs at every station for every quantity, with h from
``family.json`` (Celik et al. 2008, J. Fluids Eng. 130(7) 078001). The finest triplet (or
pair) gives each station's extrapolated value, GCI and band phi1 +- u_fine21 (around the fine value); the
station's kind of convergence (monotonic, oscillatory, divergent, indeterminate) and
whether its GCI is a result (``gci_report.unreliable_because``) are kept with it, so
oscillatory and divergent stations are marked, not hidden.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np

from ..core.errors import InputError
from .gci import study
from .gci_report import unreliable_because
from .manifest import load_json
from .results import read_family_levels
from .wall_data import along_wall, read_wall

#: Default stations x/L: the plate's inside, away from the leading-edge singularity and the
#: trailing edge (where the wake changes the flow).
DEFAULT_STATIONS = tuple(round(0.1 + 0.05 * k, 2) for k in range(17))  # 0.1 ... 0.9


def parse_stations(text: str) -> tuple[float, ...]:
    """Stations x/L from ``a,b,c`` or ``start:stop:step`` (stop included)."""
    try:
        if ":" in text:
            start, stop, step = (float(v) for v in text.split(":"))
            if step <= 0 or stop < start:
                raise ValueError
            n = int(np.floor((stop - start) / step + 1e-9)) + 1
            values = tuple(float(v) for v in np.round(start + step * np.arange(n), 12))
        else:
            values = tuple(float(v) for v in text.split(","))
    except ValueError:
        raise InputError(f"--stations {text}: give x/L values as a,b,c or start:stop:step, e.g. 0.1:0.9:0.05") from None
    if not values or not all(0 < v <= 1 for v in values) or len(set(values)) != len(values):
        raise InputError(f"--stations {text}: distinct x/L values in (0, 1]")
    return tuple(sorted(values))


def plate_length(manifest: dict) -> float:
    """L [m] from family.json (``plate_length``; older manifests: the case's flow.length)."""
    if isinstance(manifest.get("plate_length"), (int, float)):
        return float(manifest["plate_length"])
    return float(manifest.get("case_input", {}).get("flow", {}).get("length", 1.0))


def wall_study(family_dir: str | Path, name: str, stations=DEFAULT_STATIONS, quantities=None, *,
               fs: float | None = None, assumed_order: float = 2.0, formal_order: float = 2.0) -> dict:
    """The station-by-station study of the wall file ``name`` in every level of a family.

    Returns {"file", "plate_length", "stations", "levels": [{name, cells, h, x, values}],
    "quantities": {q: [per station: {x_over_L, phi (per level), kind, p, phi_ext, gci_fine,
    u_fine, reliable, unreliable_because, warnings}]}, "warnings"}.
    """
    root = Path(family_dir)
    manifest_path = root / "family.json"
    levels = read_family_levels(manifest_path)
    length = plate_length(load_json(manifest_path, "no such manifest"))
    stations = np.asarray(stations, dtype=float)
    data, missing = [], []
    for lv in sorted(levels, key=lambda lv: lv["h"]):
        path = root / str(lv["name"]) / name
        if path.is_file():
            data.append((lv, read_wall(path)))
        else:
            missing.append(str(lv["name"]))
    if len(data) < 2:
        raise InputError(f"{root}: {len(data)} level(s) have {name} (missing: {', '.join(missing)}); "
                         f"a study needs at least 2. Write each level's wall distribution as DIR/<level>/{name}")
    warnings = [f"no {name} in {', '.join(missing)}; left out"] if missing else []
    common = [q for q in data[0][1].columns if all(q in w.columns for _, w in data)]
    qs = common if quantities is None else list(quantities)
    problems = [f"--quantity {q}: not in every level's {name} (common: {', '.join(common)})"
                for q in qs if q not in common]
    for lv, w in data:
        lo, hi = w.x[0] / length, w.x[-1] / length
        if stations[0] < lo - 1e-9 or stations[-1] > hi + 1e-9:
            problems.append(f"{w.source}: covers x/L = {lo:.4g} to {hi:.4g}, not every station "
                            f"({stations[0]:g} to {stations[-1]:g}); give --stations inside it")
    if problems or not qs:
        raise InputError(problems or [f"{root}: no quantity column in every level's {name}"])
    hs = [float(lv["h"]) for lv, _ in data]
    names = [str(lv["name"]) for lv, _ in data]
    out = {"file": name, "plate_length": length, "stations": stations.tolist(), "warnings": warnings,
           "levels": [{"name": n, "cells": lv.get("cells"), "h": h, "x": w.x.tolist(),
                       "values": {q: w.columns[q].tolist() for q in qs}}
                      for n, h, (lv, w) in zip(names, hs, data)],
           "quantities": {}}
    for q in qs:
        # Third-order interpolation: straight lines would add noise larger than the level
        # differences of a converged family (wall_data.along_wall).
        at = np.array([along_wall(w.x, w.columns[q], stations * length) for _, w in data])  # levels x stations
        rows = []
        for j, s in enumerate(stations):  # a few tens of stations, each one small study
            st = study(at[:, j], h=hs, names=names, quantity=q, fs=fs, assumed_order=assumed_order,
                       formal_order=formal_order)
            res = st["results"][0]
            why = unreliable_because(res)
            rows.append({"x_over_L": float(s), "phi": at[:, j].tolist(), "kind": res["kind"], "p": res["p"],
                         "phi_ext": res["phi_ext21"], "gci_fine": res["gci_fine21"], "u_fine": res["u_fine21"],
                         "reliable": why is None, "unreliable_because": why, "warnings": res["warnings"]})
        out["quantities"][q] = rows
    return out
