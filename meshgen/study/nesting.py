"""Cell counts of every level of a refinement family, arranged so that the levels nest.

With an integer ratio R over N levels, level k has every count of the finest level divided
by R^k; the coarse nodes are exactly every R^k-th fine node when each count of the finest
level is a multiple of R^(N-1). ``family_counts`` rounds the finest level's counts up to
such multiples (the same node mappings sampled with a few more cells) and reports what it
changed, unless asked to keep the case's counts.

A ratio whose square is an integer Q (sqrt(2), sqrt(3)) cannot nest consecutive levels,
but every second level can: levels 0, 2, 4, ... form one chain with ratio Q and levels 1,
3, 5, ... another. The finest level's counts are rounded up to multiples of Q^(n0-1), n0
the length of the first chain; level 1 takes the multiple of Q^(n1-1) nearest to the
finest count / R; every other level divides its chain's first level by Q. Any other ratio
(e.g. 1.5) nests no level with another; its counts are rounded half up from count / R^k.

The counts are those of ``meshgen.planning.refine.block_counts``: each streamwise block,
``wall-normal`` and ``span`` (a one-layer extrusion stays one layer and is not counted).
"""

from __future__ import annotations

import math

#: R^m within this relative distance of an integer counts as that integer (1.414^2 = 1.9994).
INTEGER_RTOL = 1e-3
#: Fewest cells kept per direction when counts are divided (the family refuses too coarse levels).
LEAST = {"wall-normal": 2}


def nesting_power(ratio: float) -> tuple[int, int] | None:
    """(m, Q): the smallest m in (1, 2) with R^m close to an integer Q >= 2, else None."""
    for m in (1, 2):
        q = ratio**m
        if round(q) >= 2 and abs(q - round(q)) <= INTEGER_RTOL * q:
            return m, round(q)
    return None


def _round_half_up(value: float) -> int:
    return math.floor(value + 0.5)


def _multiple(value: float, step: int, up: bool) -> int:
    """The multiple of ``step`` at or above ``value`` (``up``), else the nearest one; at least ``step``."""
    k = math.ceil(value / step - 1e-9) if up else _round_half_up(value / step)
    return max(1, k) * step


def chain_steps(ratio: float, levels: int) -> list[int] | None:
    """For each level, the multiple its counts must be of so that its chain nests (None: no nesting)."""
    found = nesting_power(ratio)
    if found is None:
        return None
    m, q = found
    return [q ** (len(range(k, levels, m)) - 1) for k in range(levels)]


def family_counts(fine: dict[str, int], ratio: float, levels: int, keep: bool
                  ) -> tuple[list[dict[str, int]], dict[str, tuple[int, int]]]:
    """Counts of every level and the changes made to the finest: ({name: (old, new)}).

    ``fine`` holds the case's own counts (``block_counts``). ``keep`` keeps them exactly and
    divides by R^k, rounded half up, on every level (the levels then nest only where the
    counts happen to divide).
    """
    steps = None if keep else chain_steps(ratio, levels)
    if steps is None:
        return [{k: max(LEAST.get(k, 1), _round_half_up(n / ratio**lv)) for k, n in fine.items()}
                for lv in range(levels)], {}
    m, q = nesting_power(ratio)
    counts: list[dict[str, int]] = []
    for lv in range(levels):
        if lv == 0:
            counts.append({k: _multiple(n, steps[0], up=True) for k, n in fine.items()})
        elif lv < m:  # the first level of the second chain (sqrt-type ratios only)
            counts.append({k: _multiple(n / ratio**lv, steps[lv], up=False) for k, n in counts[0].items()})
        else:
            counts.append({k: n // q for k, n in counts[lv - m].items()})
    changed = {k: (n, counts[0][k]) for k, n in fine.items() if counts[0][k] != n}
    return counts, changed


def nesting_note(ratio: float, levels: int, keep: bool, fine: dict[str, int]) -> tuple[list[str], list[str]]:
    """(notes, warnings) that say which levels nest, for the family's output."""
    found = nesting_power(ratio)
    steps = chain_steps(ratio, levels)
    if found is None:
        return [], [(f"--ratio {ratio:g}: no power of it up to 2 is a whole number, so no level nests "
                     "with another (coarse nodes are not fine nodes); use 2, 3 or sqrt(2) for nested levels")]
    m, q = found
    if keep:
        odd = [f"{k} {n}" for k, n in fine.items() if n % steps[0]]
        if not odd:
            return [], []
        return [], [(
            f"--keep-counts: the levels will not nest: {', '.join(odd)} cells do not divide by {steps[0]} "
            f"(ratio {ratio:g} over {levels} levels); drop --keep-counts to round them up, or set "
            "wall.cells, streamwise.cells, streamwise.upstream_cells, streamwise.wake_cells and "
            "domain.span_cells to multiples of it"
        )]
    if m == 1:
        return [f"levels nest: every level's nodes are a subset of the next finer level's (ratio {q})"], []
    chains = [", ".join(str(k) for k in range(c, levels, m)) for c in range(m)]
    return [f"ratio {ratio:g}: consecutive levels cannot nest; every second level does (ratio {q}): "
            + " and ".join(f"levels {c}" for c in chains if "," in c)
            + " share their nodes"], []
