"""Strict JSON: NaN and Infinity never reach a file or the screen (RFC 8259 has no such values)."""

import json

import numpy as np
import pytest

from meshgen.core.errors import WriteError
from meshgen.core.jsontext import dumps


def _strict_loads(text):
    """Python's reader accepts NaN and Infinity unless told otherwise; a strict reader does not."""
    def refuse(name):
        raise ValueError(f"not JSON: {name}")
    return json.loads(text, parse_constant=refuse)


def test_numpy_values_become_plain_json():
    text = dumps({"a": np.float32(0.5), "b": np.arange(3), "c": np.int64(7)})
    assert _strict_loads(text) == {"a": 0.5, "b": [0, 1, 2], "c": 7}


@pytest.mark.parametrize("bad, where", [
    ({"y_plus_range": [float("nan"), 1.0]}, "y_plus_range[0]"),
    ({"a": {"b": np.array([1.0, np.inf])}}, "a.b[1]"),
    ([{"x": -np.inf}], "[0].x"),
])
def test_a_non_finite_value_is_refused_and_located(bad, where):
    """Before: json.dumps wrote NaN into plan.json and quality.json (issue 11, item 3)."""
    with pytest.raises(WriteError) as exc:
        dumps(bad, what="plan.json")
    assert str(exc.value).startswith("plan.json: not written: ") and f"at {where} " in str(exc.value)
