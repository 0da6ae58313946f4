"""The whole case space: every case builds a verified mesh or is refused with a CaseError."""

import numpy as np
import pytest
from hypothesis import HealthCheck, example, given, settings
from hypothesis import strategies as st

from meshgen.case import load_case
from meshgen.case.loading import SECTIONS
from meshgen.core.errors import CaseError
from meshgen.core.jsontext import dumps
from meshgen.meshing.builder import build_mesh
from meshgen.meshing.verify import verify_mesh
from meshgen.planning.plan import make_plan

REYNOLDS_ONLY = ["flow.velocity=", "flow.fluid="]


def _build_or_refuse(overrides):
    """Return the mesh, or None when the case is refused with a reason."""
    try:
        plan = make_plan(load_case(None, overrides))
    except CaseError as exc:
        assert exc.problems and all(p.strip() for p in exc.problems)
        return None, None
    mesh = build_mesh(plan)  # raises MeshError when verification fails: never allowed
    verify_mesh(mesh, plan.node_count, plan.cell_count)
    wall = np.unique(mesh.group(plan.case.names.wall).facets)
    ni = plan.x.size
    dy = mesh.points[wall + ni, 1] - mesh.points[wall, 1]
    np.testing.assert_allclose(dy, plan.first_cell_height, rtol=1e-9)
    return plan, mesh


def log_floats(lo, hi):
    """Floats spread evenly in log10 between lo and hi."""
    return st.floats(np.log10(lo), np.log10(hi)).map(lambda v: float(10**v))


@settings(max_examples=40, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(
    re=log_floats(1e2, 1e10),
    regime=st.sampled_from(["auto", "laminar", "turbulent"]),
    y_plus=log_floats(0.05, 300),
    growth=st.floats(1.0, 1.6),
    height=st.floats(1.0, 60.0),
    upstream=st.sampled_from([0.0, 0.01, 0.3, 2.0]),
    downstream=st.sampled_from([0.0, 0.2, 3.0]),
    le=log_floats(1e-4, 0.2),
    cap=log_floats(1e-3, 0.3),
    span=st.sampled_from([0.0, 0.0, 0.05]),
)
def test_every_case_builds_verified_or_is_refused(re, regime, y_plus, growth, height, upstream,
                                                  downstream, le, cap, span):
    overrides = REYNOLDS_ONLY + [
        f"flow.reynolds={re!r}", f'flow.regime="{regime}"', f"wall.y_plus={y_plus!r}",
        f"wall.growth_ratio={growth!r}", f"domain.height_factor={height!r}",
        f"domain.upstream={upstream!r}", f"domain.downstream={downstream!r}",
        f"streamwise.leading_edge_spacing={le!r}", f"streamwise.max_spacing={cap!r}",
        f"domain.span={span!r}", "domain.span_cells=2", "output.max_cells=40000",
    ]
    _build_or_refuse(overrides)


@pytest.mark.parametrize("regime", ["laminar", "turbulent"])
@pytest.mark.parametrize("y_plus", [0.05, 1.0, 30.0, 300.0])
@pytest.mark.parametrize("re", [1e2, 1e4, 1e6, 1e8, 1e10])
def test_extreme_but_valid(re, y_plus, regime):
    """Re_L from 1e2 to 1e10, y+ from 0.05 to 300, both regimes: built and verified, or
    refused with a reason (a too-low Reynolds number for turbulence, a first cell taller
    than the domain, a cell count past the limit)."""
    overrides = REYNOLDS_ONLY + [f"flow.reynolds={re}", f'flow.regime="{regime}"', f"wall.y_plus={y_plus}"]
    if regime == "turbulent" and re >= 1e9:
        overrides.append('flow.correlation="white"')  # Schlichting's stated range ends at 1e9
    plan, _ = _build_or_refuse(overrides)
    if regime == "turbulent" and re < 1e4:
        assert plan is None  # refused: turbulent correlations need Re_L >= 1e4
    if plan is not None:
        _, yp = plan.y_plus_along_plate()
        assert np.all(np.isfinite(yp)) and np.all(yp > 0)
        # the estimate at the reference station (the plate end) is the target
        assert yp[-1] == pytest.approx(y_plus, rel=1e-9)


#: What a hostile user may give any key, as --set spells it: booleans, strings (numbers
#: in quotes, path-like names), subnormal, huge and non-finite floats, out-of-range ints.
HOSTILE = st.one_of(
    st.sampled_from(["true", "false", '"1e5"', '"1"', '""', "5e-324", "1e-310", "1e308", "-1e308",
                     "1.7976931348623157e308", "-0.0", "0", "nan", "-inf", "[1, 2]", '".."', '"."', '"/"',
                     '"a/b"', '"../up"', '"~"', '".hidden"', '"-rf"', "..", "C:\\\\x", '"nul\\u0000"']),
    st.floats(allow_nan=True, allow_infinity=True).map(repr),
    st.integers(min_value=-(2**63), max_value=2**63 - 1).map(str),
)
KEYS = ["name"] + [f"{s}.{k}" for s, m in SECTIONS.items() for k in m.model_fields]


@pytest.mark.filterwarnings("error::RuntimeWarning")  # numpy's warnings never reach the user
@settings(max_examples=300, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(key=st.sampled_from(KEYS), value=HOSTILE)
@example("flow.reynolds", "true")
@example("domain.span_cells", "true")
@example("flow.reynolds", '"1e5"')
@example("name", '".."')
@example("name", '"."')
@example("flow.reynolds", "5e-324")
@example("wall.first_cell_height", "5e-324")
@example("wall.reference_station", "1e-300")
@example("flow.temperature", "3.2e-279")
@example("flow.length", "5e-324")
@example("flow.mach", "1e-15")
@example("streamwise.leading_edge_spacing", "5e-324")
def test_hostile_values_are_refused_in_one_line_each_or_planned(key, value):
    """Before (issue 11, items 8-11): true built Re_L = 1, "1e5" was read as a number, '..'
    named the output folder, and subnormal values ended in tracebacks."""
    try:
        plan = make_plan(load_case(None, REYNOLDS_ONLY + ["flow.reynolds=1e5", f"{key}={value}",
                                                          "output.max_cells=40000"]))
    except CaseError as exc:
        assert exc.problems and all(p.strip() and "\n" not in p for p in exc.problems), exc.problems
        return
    dumps(plan.to_dict())  # strict JSON: raises on NaN or infinity
    name = plan.case.name
    assert name not in (".", "..") and "/" not in name and "\\" not in name and not name.startswith(("-", "."))
    assert np.all(np.isfinite(plan.x)) and np.all(np.isfinite(plan.y)) and plan.first_cell_height > 0
