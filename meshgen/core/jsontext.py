"""JSON text for every file meshgen writes and everything it prints: strict JSON only.

``json.dumps`` writes NaN and Infinity by default, which RFC 8259 does not allow and
strict readers refuse (../shared/pitfalls.md). ``dumps`` refuses them instead: a
non-finite value is stopped where it arises (e.g. a station outside a correlation's range
is reported as such), and one that slips through is an error naming where it sits, never
a file that is not JSON. Numpy scalars and arrays become plain numbers and lists.
"""

from __future__ import annotations

import json
import math
from collections.abc import Mapping
from typing import Any

from .errors import WriteError


def _plain(value: Any) -> Any:
    """json's ``default``: numpy scalars and arrays (imported lazily by their owners)."""
    if hasattr(value, "tolist"):
        return value.tolist()
    raise TypeError(f"{type(value).__name__} is not JSON serialisable")


def _non_finite(value: Any, where: str = "") -> str | None:
    """The path (e.g. ``y_plus_range[0]``) of the first non-finite number, or None."""
    if hasattr(value, "tolist") and not isinstance(value, (int, float)):
        value = value.tolist()
    if isinstance(value, float) and not math.isfinite(value):
        return where or "(the value itself)"
    if isinstance(value, Mapping):
        for k, v in value.items():
            found = _non_finite(v, f"{where}.{k}" if where else str(k))
            if found:
                return found
    elif isinstance(value, (list, tuple)):
        for i, v in enumerate(value):
            found = _non_finite(v, f"{where}[{i}]")
            if found:
                return found
    return None


def dumps(obj: Any, *, indent: int | None = 2, sort_keys: bool = False, what: str = "JSON output") -> str:
    """``obj`` as strict JSON text (no NaN or Infinity); ``what`` names it in an error."""
    try:
        return json.dumps(obj, indent=indent, sort_keys=sort_keys, allow_nan=False, default=_plain)
    except ValueError:
        where = _non_finite(obj)
        if where is None:
            raise
        raise WriteError(
            f"{what}: not written: the value at {where} is not a finite number, which JSON cannot "
            "hold (a defect in meshgen: please report it with the case)"
        ) from None
