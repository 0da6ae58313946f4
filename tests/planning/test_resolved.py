"""The scale-resolving plan: case keys, stations, rounding, the wall-normal layer, the cell limit,
and that RANS plans are unchanged by the resolution section.

Invariants a wrong implementation fails (derived from the definitions in
meshgen/planning/resolved.py), plus one check against White's skin friction written out
here (Viscous Fluid Flow (1974) eq. 6-134, via the NASA TMR flat-plate page).
"""

from __future__ import annotations

import math

import numpy as np
import pytest

from meshgen.case import case_to_toml, load_case, parse_case
from meshgen.core.errors import CaseError
from meshgen.planning import resolved, wall_units
from meshgen.planning.plan import make_plan, resolve_flow
from meshgen.planning.refine import coarsen

BASE = ["flow.velocity=", "flow.fluid=", "flow.reynolds=1e5", "flow.regime=turbulent", "flow.length=1"]


def case(*extra: str):
    return load_case(None, [*BASE, *extra])


def test_rans_plan_is_unchanged_by_the_resolution_section():
    plain = make_plan(case("domain.span=0.05", "domain.span_cells=4"))
    explicit = make_plan(case("domain.span=0.05", "domain.span_cells=4", "resolution.kind=rans"))
    a, b = plain.to_dict(), explicit.to_dict()
    assert a == b
    assert "dx_plus" not in a and "resolution" not in a
    assert plain.resolution is None and plain.span_boundary == "symmetry"
    # a case without [resolution] writes back the same TOML as before the section existed
    assert "[resolution]" not in case_to_toml(plain.case)


def test_resolution_keys_round_trip_through_toml():
    c = case("resolution.kind=dns", "resolution.dz_plus=7", "resolution.station=strictest")
    text = case_to_toml(c)
    assert "[resolution]" in text and 'kind = "dns"' in text and "dz_plus = 7.0" in text
    import tomllib

    assert parse_case(tomllib.loads(text)) == c


@pytest.mark.parametrize(
    "overrides, words",
    [
        (["resolution.dx_plus=50"], "resolution.dx_plus: not used by resolution.kind = 'rans'"),
        (["resolution.kind=wall-modelled-les", "resolution.dz_plus=10"], "resolution.dz_plus: not used"),
        (["resolution.kind=dns", "resolution.cells_per_delta=20"], "resolution.cells_per_delta: not used"),
        (["resolution.kind=dns", "domain.span_cells=8"], "domain.span_cells: derived"),
        (["resolution.kind=dns", "streamwise.cells=100"], "streamwise.cells: not used"),
        (["resolution.kind=wall-resolved-les", "wall.growth_ratio=", "wall.cells=40"], "wall.cells: not used"),
        (["resolution.kind=wall-modelled-les", "wall.y_plus=", "wall.first_cell_height=1e-4"],
         "wall.first_cell_height: not used"),
        (["resolution.kind=dns", "domain.span=0.1", "resolution.span_deltas=3"], "give one"),
        (["resolution.kind=dns", "domain.span=0"], "needs a 3-D mesh"),
        (["domain.span_boundary=periodic"], "domain.span_boundary = 'periodic' needs a 3-D mesh"),
    ],
)
def test_contradictory_keys_name_the_field(overrides, words):
    with pytest.raises(CaseError) as err:
        make_plan(case(*overrides))
    assert words in str(err.value)


@pytest.mark.parametrize("kind", ["wall-resolved-les", "dns"])
def test_rounding_only_refines_and_the_first_cell_is_exact(kind):
    plan = make_plan(case(f"resolution.kind={kind}"))
    s = plan.resolution
    plate = plan.plate_nodes()
    assert np.allclose(np.diff(plate), np.diff(plate)[0])  # a uniform plate
    assert np.diff(plate).max() <= s.dx * (1 + 1e-12)
    assert np.diff(plan.z).max() <= s.dz * (1 + 1e-12)
    # one more cell would be finer than needed: the counts are the smallest that meet the targets
    assert 1.0 / (plate.size - 2) > s.dx
    assert plan.z[-1] / (plan.z.size - 2) > s.dz
    # y+ = 1 at x = L from White's Cf (eq. 6-134), U = 1 m/s, nu = 1e-5 m2/s
    u_tau = math.sqrt(0.455 / math.log(0.06 * 1e5) ** 2 / 2.0)
    assert plan.y[1] == pytest.approx(1.0 * 1e-5 / u_tau, rel=1e-12)


def test_first_cell_at_the_cell_centre_is_twice_as_high():
    node = make_plan(case("resolution.kind=dns"))
    centre = make_plan(case("resolution.kind=dns", "wall.y_plus_at=centre"))
    assert centre.y[1] == pytest.approx(2 * node.y[1], rel=1e-12)


@pytest.mark.parametrize("kind", ["wall-resolved-les", "dns", "wall-modelled-les"])
def test_wall_normal_layer_grows_to_the_cap_and_never_past_it(kind):
    plan = make_plan(case(f"resolution.kind={kind}"))
    s = plan.resolution
    dy = np.diff(plan.y)
    inside = dy[plan.y[1:] <= s.layer_top * (1 + 1e-12)]
    assert inside.max() <= s.cap * (1 + 1e-12)
    ratio = dy[1:] / dy[:-1]
    g = plan.case.wall.growth_ratio
    assert ratio.max() <= g * (1 + 1e-9)  # never grows faster than wall.growth_ratio
    assert np.all(ratio[: inside.size - 1] >= 1 - 1e-9)  # and never shrinks inside the layer
    assert plan.y[-1] == pytest.approx(plan.domain_height, rel=1e-12)
    if kind == "wall-modelled-les":
        assert np.allclose(inside, inside[0], rtol=1e-9)  # delta/n down to the wall


def test_default_span_is_four_delta99_at_the_plate_end_and_domain_span_overrides_it():
    plan = make_plan(case("resolution.kind=wall-resolved-les"))
    assert plan.z[-1] == pytest.approx(4.0 * plan.delta99_end, rel=1e-12)
    wider = make_plan(case("resolution.kind=wall-resolved-les", "resolution.span_deltas=6"))
    assert wider.z[-1] == pytest.approx(6.0 * plan.delta99_end, rel=1e-12)
    fixed = make_plan(case("resolution.kind=wall-resolved-les", "domain.span=0.05"))
    assert fixed.z[-1] == pytest.approx(0.05, rel=1e-12)
    assert plan.span_boundary == "periodic"
    assert make_plan(case("resolution.kind=dns", "domain.span_boundary=symmetry")).span_boundary == "symmetry"


def test_strictest_station_meets_the_targets_all_along_the_plate():
    ref = make_plan(case("resolution.kind=wall-resolved-les"))
    strict = make_plan(case("resolution.kind=wall-resolved-les", "resolution.station=strictest",
                            "resolution.strictest_from=0.2"))
    a_ref, a_strict = wall_units.along_plate(ref), wall_units.along_plate(strict)
    downstream = a_strict["x"] >= 0.2
    # at the reference station (x = L) the plate upstream is coarser than the target in wall units
    assert a_ref["dx_plus"].max() > 100 and a_ref["dz_plus"].max() > 20
    # sized at the strictest station (u_tau largest at x = 0.2 L), every station downstream meets them
    assert strict.resolution.station_x == pytest.approx(0.2, rel=1e-9)
    assert a_strict["dx_plus"][downstream].max() <= 100 * (1 + 1e-9)
    assert a_strict["dz_plus"][downstream].max() <= 20 * (1 + 1e-9)
    assert a_strict["dy_plus_wall"][downstream].max() <= 1 + 1e-9


def test_a_count_beyond_max_cells_is_refused_with_the_number_needed():
    c = case("resolution.kind=dns", "flow.reynolds=1e7")
    flow, _ = resolve_flow(c)
    nx, ny, nz = resolved.cell_counts(c, flow)
    with pytest.raises(CaseError) as err:
        make_plan(c)
    assert f"the plan needs {nx * ny * nz:,} cells" in str(err.value)
    assert nx * ny * nz > 1e10  # counted without allocating anything of that size


def test_plan_json_carries_targets_achieved_values_and_the_scaling():
    d = make_plan(case("resolution.kind=wall-resolved-les")).to_dict()
    r = d["resolution"]
    assert r["kind"] == "wall-resolved-les" and r["sized_at"] == {"station": "reference", "x_over_L": 1.0}
    assert r["achieved_at_reference_station"]["dx_plus"] == d["dx_plus"]
    lo, hi = r["along_plate"]["dx_plus"]  # at cell centres; the reference station is the node x = L
    assert lo == pytest.approx(d["dx_plus"], rel=1e-2) and hi > lo
    c = r["cell_count"]
    assert c["cells"] == d["cells"] and c["choi_moin_exponent"] == pytest.approx(13 / 7)
    assert 1.0 < c["local_exponent"] < 2.5
    assert r["span_cells"] == d["nodes"]["z"] - 1 and r["span_boundary"] == "periodic"


def test_local_exponent_is_the_slope_between_the_neighbouring_counts():
    c = case("resolution.kind=wall-resolved-les")
    flow, _ = resolve_flow(c)
    f = 10 ** wall_units.EXPONENT_HALF_DECADES
    expected = math.log(wall_units.count_at(c, flow, f) / wall_units.count_at(c, flow, 1 / f)) / math.log(f * f)
    assert wall_units.local_exponent(c, flow) == pytest.approx(expected, rel=1e-12)
    assert wall_units.count_at(c, flow, 1.0) == make_plan(c).cell_count


def test_warnings_for_cheap_wall_modelling_and_laminar_layers():
    w = make_plan(case("resolution.kind=wall-modelled-les")).warnings
    assert any("wall modelling pays off only at higher Reynolds numbers" in m for m in w)
    assert not any("buffer layer" in m for m in w)  # the y+ band of a RANS treatment does not apply
    lam = make_plan(case("resolution.kind=dns", "flow.regime=laminar")).warnings
    assert any("laminar boundary layer" in m for m in lam)


def test_transitional_strictest_station_lies_in_the_turbulent_part():
    c = case("resolution.kind=wall-modelled-les", "flow.regime=transitional", "flow.reynolds=2e6",
             "flow.transition_reynolds=5e5", "resolution.station=strictest", "output.max_cells=500000000")
    flow, _ = resolve_flow(c)
    s = resolved.sizing(c, flow)
    assert s.station_x >= 0.25 * (1 - 1e-3)  # Re_x = 5e5 at x = 0.25 L: never in the laminar part


def test_a_family_coarsens_a_resolved_plan():
    plan = make_plan(case("resolution.kind=wall-resolved-les"))
    coarse = coarsen(plan, 2.0, 1)
    assert coarse.resolution == plan.resolution
    assert coarse.z.size - 1 == math.floor((plan.z.size - 1) / 2 + 0.5)
    assert coarse.to_dict()["dz_plus"] == pytest.approx(plan.to_dict()["dz_plus"] * (plan.z.size - 1)
                                                        / (coarse.z.size - 1), rel=1e-9)


def test_upstream_and_wake_counts_apply_to_a_resolved_plan():
    plan = make_plan(case("resolution.kind=wall-resolved-les", "streamwise.upstream_cells=7",
                          "streamwise.wake_cells=9"))
    assert plan.block("upstream").i1 - plan.block("upstream").i0 == 7
    assert plan.block("wake").i1 - plan.block("wake").i0 == 9
    # the blocks start from the plate's own spacing: no jump at x = 0 and x = L
    dx = np.diff(plan.x)
    i0, i1 = plan.block("plate").i0, plan.block("plate").i1
    assert dx[i0 - 1] == pytest.approx(dx[i0], rel=1e-9) and dx[i1] == pytest.approx(dx[i1 - 1], rel=1e-9)
    with pytest.raises(CaseError, match="no wake block"):
        make_plan(case("resolution.kind=dns", "domain.downstream=0", "streamwise.wake_cells=4"))
