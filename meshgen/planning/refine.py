"""Refinement of a Plan: the same node mappings sampled with other cell counts.

A family's levels (meshgen.study.family) are the case's plan resampled block by block with
each level's counts; ``coarsen`` divides every count by one factor (rounded half up).
"""

from __future__ import annotations

import math
from dataclasses import replace

import numpy as np

from .layout import Block
from .plan import Plan
from .spacing import resample


def _count(cells: int, factor: float, least: int) -> int:
    """cells / factor rounded half up (not Python's half-to-even), at least ``least``."""
    return max(least, math.floor(cells / factor + 0.5))


def block_counts(plan: Plan) -> dict[str, int]:
    """Cell counts of every direction a family refines: each streamwise block by name,
    ``wall-normal`` and, in a real 3-D plan (more than one layer), ``span``."""
    counts = {b.name: b.i1 - b.i0 for b in plan.blocks}
    counts["wall-normal"] = plan.y.size - 1
    if plan.z is not None and plan.z.size > 2:
        counts["span"] = plan.z.size - 1
    return counts


def resample_plan(plan: Plan, counts: dict[str, int], level: int) -> Plan:
    """The plan with the cell counts ``counts`` (keys of ``block_counts``) on the same mappings.

    Each block of ``x`` and the ``y`` and ``z`` arrays are resampled on their own
    (``spacing.resample``), so block interfaces stay where they are; two plans resampled
    from the same plan share every node whose index the two samplings share, so counts
    that divide each other give nested grids. A one-layer extrusion stays one layer.
    """
    parts, blocks, start = [], [], 0
    for b in plan.blocks:
        n = counts[b.name]
        new = resample(plan.x[b.i0 : b.i1 + 1], n)
        parts.append(new if not parts else new[1:])
        blocks.append(Block(b.name, start, start + n))
        start += n
    y = resample(plan.y, counts["wall-normal"])
    z = plan.z
    if "span" in counts and z is not None:
        z = resample(z, counts["span"])
    return replace(plan, x=np.concatenate(parts), y=y, z=z, blocks=tuple(blocks), level=level)


def coarsen(plan: Plan, factor: float, level: int) -> Plan:
    """The plan with every block's cell count divided by ``factor``, rounded half up."""
    least = {"wall-normal": 2}
    counts = {k: _count(n, factor, least.get(k, 1)) for k, n in block_counts(plan).items()}
    return resample_plan(plan, counts, level)


__all__ = ["block_counts", "coarsen", "resample_plan"]
