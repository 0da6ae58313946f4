"""Distributions along the wall from a solver: a CSV with ``x``, or a VTU/VTK surface file.

A wall CSV (the results-folder convention, member_results.py) has a header whose first
column is ``x`` [m] along the wall and whose other columns are named quantities, e.g.
``x,cf,tau_w,y_plus``; blank lines and lines starting with ``#`` are skipped. A VTU
(XML) or legacy VTK surface file is read with meshio; its point data (or cell data, at
the cell centres) give the quantities, its points' x the stations. Several values at one
x (the spanwise points of a 3-D surface) are averaged.

Field names are matched loosely (case, ``_``, ``-`` and spaces ignored, ``+`` read as
"plus"): ``y_plus`` (yPlus, y+), ``tau_w`` (wallShearStress, tau_wall: a vector field
counts by its magnitude), ``cf`` (skin_friction_coefficient, skinFriction), ``u_tau``
(utau, friction_velocity).
"""

from __future__ import annotations

import csv
import math
import re
from dataclasses import dataclass
from pathlib import Path

import numpy as np

from ..core.errors import InputError

#: Canonical quantity names and the spellings solvers use for them (matched loosely).
ALIASES = {
    "y_plus": ("yplus",),
    "tau_w": ("tauw", "wallshearstress", "tauwall", "wallshear"),
    "cf": ("cf", "skinfrictioncoefficient", "skinfriction"),
    "u_tau": ("utau", "frictionvelocity"),
}
#: x values closer than this fraction of the extent are one station (spanwise copies).
SAME_X = 1e-9


@dataclass(frozen=True)
class WallData:
    """Stations x [m] (increasing) and each quantity there, with where they came from."""

    x: np.ndarray
    columns: dict[str, np.ndarray]
    source: str

    def quantity(self, name: str) -> np.ndarray | None:
        """A column by its canonical name (``ALIASES``) or its own name, else None."""
        return self.columns.get(name)


def canonical_name(name: str) -> str:
    """The canonical quantity name of a field or column name, or the name itself."""
    key = re.sub(r"[\s_\-]", "", name.replace("+", "plus")).lower()
    for canon, spellings in ALIASES.items():
        if key in spellings or key == canon.replace("_", ""):
            return canon
    return name


def _merge_stations(x: np.ndarray, values: dict[str, np.ndarray], source: str) -> WallData:
    """Sort by x and average the values that share a station (vectorised)."""
    extent = float(np.ptp(x)) if x.size else 0.0
    if x.size < 2 or extent == 0:
        raise InputError(f"{source}: needs values at two or more distinct x stations along the wall")
    key = np.round((x - x.min()) / (SAME_X * extent)).astype(np.int64)
    _, inverse, counts = np.unique(key, return_inverse=True, return_counts=True)
    xs = np.bincount(inverse, weights=x) / counts
    cols = {k: np.bincount(inverse, weights=v) / counts for k, v in values.items()}
    return WallData(xs, cols, source)


def read_wall_csv(path: str | Path) -> WallData:
    """A wall CSV (see the module docstring); InputError names the file, line and column."""
    path = Path(path)
    try:
        text = path.read_text(encoding="utf-8-sig")
    except FileNotFoundError:
        raise InputError(f"{path}: no such file; expected a wall CSV with x [m] first") from None
    except (OSError, UnicodeDecodeError) as exc:
        raise InputError(f"{path}: cannot be read as text ({exc})") from None
    numbered = [(i, ln) for i, ln in enumerate(text.splitlines(), 1) if ln.strip() and not ln.lstrip().startswith("#")]
    if len(numbered) < 3:
        raise InputError(f"{path}: expected a header (x,cf,...) and two or more rows along the wall")
    records = list(csv.reader(ln for _, ln in numbered))
    header = [c.strip() for c in records[0]]
    problems = []
    if header[0].lower() != "x":
        problems.append(f"{path} line {numbered[0][0]}: the first column must be x [m] along the wall, not {header[0]!r}")
    if len(header) < 2:
        problems.append(f"{path}: no quantity column besides x")
    problems += [f"{path} line {ln}: {len(rec)} values, but the header has {len(header)} columns"
                 for (ln, _), rec in zip(numbered[1:], records[1:]) if len(rec) != len(header)]
    if problems:
        raise InputError(problems)
    text_table = np.char.strip(np.array(records[1:], dtype=str))
    try:
        table = text_table.astype(np.float64)
    except ValueError:  # find the cells that are not numbers, for the message
        table = np.vectorize(_to_float, otypes=[np.float64])(text_table)
    bad = np.argwhere(~np.isfinite(table))
    if bad.size:
        raise InputError([f"{path} line {numbered[i + 1][0]}, column {header[j]!r}: "
                          f"{text_table[i, j]!r} is not a finite number" for i, j in bad[:20]])
    cols = {canonical_name(h): table[:, j] for j, h in enumerate(header[1:], 1)}
    return _merge_stations(table[:, 0], cols, str(path))


def read_wall_mesh(path: str | Path) -> WallData:
    """A VTU or legacy VTK surface file: point data at the points, cell data at the cell centres."""
    import meshio

    path = Path(path)
    suffix = path.suffix.lower()
    reader = {".vtu": meshio.vtu.read, ".vtk": meshio.vtk.read}.get(suffix)
    if reader is None:
        raise InputError(f"{path}: a wall file is a CSV, a .vtu or a .vtk file")
    if not path.is_file():
        raise InputError(f"{path}: no such file")
    try:
        mesh = reader(str(path))
    except Exception as exc:  # noqa: BLE001  meshio raises many types for a broken file
        raise InputError(f"{path}: cannot be read as {suffix[1:].upper()} ({exc})") from None
    fields: dict[str, tuple[np.ndarray, np.ndarray]] = {}
    for name, data in mesh.point_data.items():
        fields[canonical_name(name)] = (mesh.points[:, 0], _scalar(np.asarray(data)))
    if mesh.cell_data:
        centres = np.concatenate([mesh.points[block.data, 0].mean(axis=1) for block in mesh.cells])
        for name, blocks in mesh.cell_data.items():
            fields.setdefault(canonical_name(name),
                              (centres, np.concatenate([_scalar(np.asarray(b)) for b in blocks])))
    known = {k: v for k, v in fields.items() if k in ALIASES}
    if not known:
        raise InputError(f"{path}: no wall field among {', '.join(sorted(fields)) or 'none'}; "
                         f"expected one of {', '.join(ALIASES)} (or their usual spellings)")
    # one station set: the first field's; every other known field on the same locations
    x0 = next(iter(known.values()))[0]
    same = {k: v for k, (x, v) in known.items() if x.shape == x0.shape and np.array_equal(x, x0)}
    return _merge_stations(x0, same, str(path))


def _scalar(data: np.ndarray) -> np.ndarray:
    """A scalar per point: the value, or the magnitude of a vector."""
    return data if data.ndim == 1 else np.linalg.norm(data.reshape(data.shape[0], -1), axis=1)


def read_wall(path: str | Path) -> WallData:
    """A wall distribution from a CSV, VTU or VTK file, chosen by suffix."""
    suffix = Path(path).suffix.lower()
    return read_wall_mesh(path) if suffix in (".vtu", ".vtk") else read_wall_csv(path)


def _to_float(text: str) -> float:
    try:
        return float(text)
    except ValueError:
        return math.nan


__all__ = ["ALIASES", "WallData", "canonical_name", "read_wall", "read_wall_csv", "read_wall_mesh"]


def along_wall(x: np.ndarray, y: np.ndarray, at: np.ndarray) -> np.ndarray:
    """``y(x)`` of one level's wall distribution at the stations ``at`` (same units as x).

    Piecewise cubic Hermite through the nodes with each node's slope from the parabola
    through it and its two neighbours (one-sided three-point slopes at the ends), so the
    interpolant is exact for quadratics and its error is third order in the node spacing:
    straight lines between the nodes add an error of order h^2 y'' that can exceed the
    differences between well-converged levels. ``x`` must increase; ``at`` inside [x0, xn].
    Two nodes: a straight line.
    """
    x, y, at = (np.asarray(a, dtype=float) for a in (x, y, at))
    if x.size < 3:
        return np.interp(at, x, y)
    h = np.diff(x)
    d = np.diff(y) / h
    m = np.empty_like(y)
    m[1:-1] = (h[:-1] * d[1:] + h[1:] * d[:-1]) / (h[:-1] + h[1:])
    m[0] = ((2 * h[0] + h[1]) * d[0] - h[0] * d[1]) / (h[0] + h[1])
    m[-1] = ((2 * h[-1] + h[-2]) * d[-1] - h[-1] * d[-2]) / (h[-1] + h[-2])
    k = np.clip(np.searchsorted(x, at, side="right") - 1, 0, x.size - 2)
    hk = h[k]
    t = (at - x[k]) / hk
    t2, t3 = t * t, t * t * t
    out = ((2 * t3 - 3 * t2 + 1) * y[k] + (t3 - 2 * t2 + t) * hk * m[k]
           + (-2 * t3 + 3 * t2) * y[k + 1] + (t3 - t2) * hk * m[k + 1])
    exact = at == x[k]
    out[exact] = y[k[exact]]
    return out
