"""Every number in a case is strict: booleans and strings are refused, naming the field.

pydantic's default (lax) mode reads ``true`` as 1 and ``"1e5"`` as 100000.0, so
``reynolds = true`` built a mesh at Re_L = 1 (issue 11, item 8; ../shared/pitfalls.md).
This test walks every numeric field of every section, so a key added later with a plain
``float`` or ``int`` instead of ``case.model.Real`` / ``Count`` fails here.
"""

import typing

import pytest

from meshgen.case import load_case
from meshgen.case.loading import SECTIONS
from meshgen.core.errors import CaseError


def _kind(annotation) -> type | None:
    """float or int when the field holds a number (optional or not), else None."""
    if annotation in (float, int):
        return annotation
    for arg in typing.get_args(annotation):
        found = _kind(arg)
        if found:
            return found
    return None


NUMERIC = [(s, k, _kind(f.annotation)) for s, model in SECTIONS.items()
           for k, f in model.model_fields.items() if _kind(f.annotation)]


def test_the_walk_finds_the_numbers():
    names = {f"{s}.{k}" for s, k, _ in NUMERIC}
    assert {"flow.reynolds", "flow.length", "wall.cells", "domain.span_cells", "output.max_cells"} <= names


@pytest.mark.parametrize("section, key, kind", NUMERIC, ids=[f"{s}.{k}" for s, k, _ in NUMERIC])
@pytest.mark.parametrize("raw, shown", [("true", "true"), ('"1"', "'1'"), ("false", "false")])
def test_booleans_and_strings_are_refused(section, key, kind, raw, shown):
    with pytest.raises(CaseError) as exc:
        load_case(None, [f"{section}.{key}={raw}"])
    line = next((p for p in exc.value.problems if p.startswith(f"{section}.{key} = {shown}: ")), None)
    assert line is not None, exc.value.problems
    assert ("a whole number is needed" if kind is int else "a number is needed") in line


@pytest.mark.parametrize("section, key, kind", [n for n in NUMERIC if n[2] is int],
                         ids=[f"{s}.{k}" for s, k, t in NUMERIC if t is int])
def test_counts_take_no_fraction_point(section, key, kind):
    with pytest.raises(CaseError) as exc:
        load_case(None, [f"{section}.{key}=3.0"])
    assert any(p.startswith(f"{section}.{key} = 3.0: a whole number is needed") for p in exc.value.problems)


def test_ints_are_accepted_where_floats_are_expected():
    case = load_case(None, ["flow.length=3", "domain.height_factor=12"])
    assert case.flow.length == 3.0 and isinstance(case.flow.length, float)
    assert case.domain.height_factor == 12.0
