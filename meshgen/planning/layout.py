"""The block layout of a structured grid: blocks as node ranges of ``i`` and patches of its sides.

The plan decides the layout and the mesh carries it, so these live with the plan.
"""

from __future__ import annotations

from dataclasses import dataclass

#: Sides of a structured grid: index direction and end.
SIDES = ("imin", "imax", "jmin", "jmax", "kmin", "kmax")


@dataclass(frozen=True)
class Block:
    """A structured block: the node range ``i0 <= i <= i1`` of the global grid."""

    name: str
    i0: int
    i1: int


@dataclass(frozen=True)
class Patch:
    """A piece of a grid side covered by one group.

    For ``jmin``/``jmax`` (and ``kmin``/``kmax``) the piece is nodes ``i0..i1``; for
    ``imin``/``imax`` ``i0`` and ``i1`` are ignored (the whole side).
    """

    side: str
    i0: int = 0
    i1: int = 0
