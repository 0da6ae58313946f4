"""Streamwise nodes: the upstream, plate and wake blocks of one ``x`` array.

The plate clusters at both edges (``two_sided``), or takes ``streamwise.cells`` with its
growth solved (``plate_with_count``); the upstream and wake blocks grow away from the
plate's edge spacing up to ``streamwise.far_spacing``, or take ``streamwise.upstream_cells``
/ ``streamwise.wake_cells`` with their ratio solved (``block_with_count``). Lengths [m].
"""

from __future__ import annotations

import math

import numpy as np

from ..case import Case
from ..core.errors import CaseError
from .layout import Block
from .spacing import capped_geometric, geometric_nodes, solve_geometric, two_sided

#: Largest solved growth ratio: the case model's limit on every growth ratio (wall.growth_ratio,
#: streamwise.growth_ratio), so a solved ratio is held to what a given one may be.
MAX_RATIO = 2.0


def _fewest(half: float, first: float) -> int:
    """Fewest geometric cells from ``first`` that fill ``half`` at a ratio of at most
    MAX_RATIO: first (R^n - 1) / (R - 1) >= half."""
    return max(1, math.ceil(math.log(half / first * (MAX_RATIO - 1) + 1) / math.log(MAX_RATIO) - 1e-9))


def plate_with_count(length: float, dx_le: float, dx_te: float, cells: int) -> np.ndarray:
    """``cells`` plate cells: two geometric layers from the edges meeting at mid-plate,
    each with its ratio solved from its first spacing and its half of the count (at most
    MAX_RATIO: a count too small for the edge spacings is refused with the one that fits)."""
    left_n = cells // 2
    right_n = cells - left_n
    half = 0.5 * length
    need_l, need_r = _fewest(half, dx_le), _fewest(half, dx_te)
    if left_n < need_l or right_n < need_r:
        fits = max(2 * need_l, 2 * need_r - 1)
        raise CaseError(
            f"streamwise.cells = {cells}: from the edge spacings {dx_le:.4g} m and {dx_te:.4g} m the plate "
            f"would grow by a ratio above {MAX_RATIO:g} (valid up to 2, as for wall.growth_ratio); give "
            f"{fits} or more, or raise streamwise.leading_edge_spacing and trailing_edge_spacing"
        )
    parts = []
    for first, n in ((dx_le, left_n), (dx_te, right_n)):
        if first * n > half * (1 + 1e-12):
            raise CaseError(
                f"streamwise.cells = {cells}: {n} cells of at least {first:.4g} m do not fit half "
                f"the plate ({half:.4g} m); lower the edge spacings or streamwise.cells"
            )
        f, g, _ = solve_geometric(half, first=first, count=n)
        nodes = geometric_nodes(f, g, n)
        nodes[-1] = half
        parts.append(nodes)
    left, right = parts
    nodes = np.concatenate([left, length - right[::-1][1:]])
    nodes[-1] = length
    return nodes


def block_with_count(length: float, first: float, cells: int, key: str) -> np.ndarray:
    """``cells`` cells over ``length`` growing from ``first`` by one solved ratio (at most 2)."""
    if first * cells > length * (1 + 1e-12):
        raise CaseError(
            f"{key} = {cells}: {cells} cells of at least {first:.4g} m (the spacing matched at the "
            f"plate edge) do not fit the block's {length:.4g} m; lower {key}"
        )
    first, ratio, _ = solve_geometric(length, first=first, count=cells)
    if ratio > MAX_RATIO:
        raise CaseError(
            f"{key} = {cells}: from {first:.4g} m at the plate edge this needs a growth ratio of "
            f"{ratio:.3g} (valid up to 2); raise {key}"
        )
    nodes = geometric_nodes(first, ratio, cells)
    nodes[-1] = length
    return nodes


def _outer_block(case: Case, which: str, length: float, first: float) -> np.ndarray:
    """The upstream or wake block: a given count (ratio solved), else growth up to the cap."""
    s = case.streamwise
    cells = s.upstream_cells if which == "upstream" else s.wake_cells
    key = f"streamwise.{which}_cells"
    if cells is not None:
        return block_with_count(length, first, cells, key)
    domain_key = "domain.upstream" if which == "upstream" else "domain.downstream"
    return capped_geometric(length, first, s.growth_ratio, s.far_spacing * case.flow.length, domain_key)


def streamwise_nodes(case: Case, length: float) -> tuple[np.ndarray, tuple[Block, ...]]:
    """x nodes through the upstream, plate and wake blocks, spacing matched at x = 0 and L."""
    s, d = case.streamwise, case.domain
    dx_le, dx_te = s.leading_edge_spacing * length, s.trailing_edge_spacing * length
    if s.cells is None:
        # the cap holds at the edges too: an edge spacing above it would meet the other,
        # capped half at mid-plate with a jump no growth ratio allows (edge_cap_notes says so)
        cap = s.max_spacing * length
        dx_le, dx_te = min(dx_le, cap), min(dx_te, cap)
        plate = two_sided(length, dx_le, dx_te, s.growth_ratio, s.max_spacing * length, "streamwise")
    else:
        plate = plate_with_count(length, dx_le, dx_te, s.cells)
    missing = [f"streamwise.{w}_cells = {n} but domain.{k} = 0: there is no {w} block; unset "
               f"streamwise.{w}_cells or give domain.{k} a length"
               for w, k, n, extent in (("upstream", "upstream", s.upstream_cells, d.upstream),
                                       ("wake", "downstream", s.wake_cells, d.downstream))
               if n is not None and extent == 0]
    if missing:
        raise CaseError(missing)
    parts, blocks, start = [], [], 0
    if d.upstream > 0:
        up = _outer_block(case, "upstream", d.upstream * length, dx_le)
        parts.append(-up[::-1])
        blocks.append(Block("upstream", 0, up.size - 1))
        start = up.size - 1
    parts.append(plate if not parts else plate[1:])
    blocks.append(Block("plate", start, start + plate.size - 1))
    start += plate.size - 1
    if d.downstream > 0:
        wake = _outer_block(case, "wake", d.downstream * length, dx_te)
        parts.append(length + wake[1:])
        blocks.append(Block("wake", start, start + wake.size - 1))
    x = np.concatenate(parts)
    return x, tuple(blocks)


def edge_cap_notes(case: Case) -> list[str]:
    """Warnings for edge spacings that streamwise_nodes lowered to the plate's cap."""
    s = case.streamwise
    if s.cells is not None:
        return []
    return [f"streamwise.{w}_spacing = {v:g} L is above streamwise.max_spacing = {s.max_spacing:g} L: the "
            f"plate's spacing at the {w.replace('_', ' ')} is lowered to the cap (left as given, the halves of "
            f"the plate would meet with a jump of {v / s.max_spacing:.3g}); set it to at most "
            f"{s.max_spacing:g} to silence this"
            for w, v in (("leading_edge", s.leading_edge_spacing), ("trailing_edge", s.trailing_edge_spacing))
            if v > s.max_spacing * (1 + 1e-9)]


__all__ = ["block_with_count", "edge_cap_notes", "plate_with_count", "streamwise_nodes"]
