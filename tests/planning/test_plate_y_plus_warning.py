"""A wall-resolved plan whose first cell is above the band over most of the plate says so.

The y+ target holds at the reference station only; on a turbulent plate the wall shear,
and so y+, grows towards the leading edge (Cf ~ Re_x^-0.2 and steeper, White, Viscous Fluid
Flow eq. 6-134), so a target of 1 at x/L = 1 leaves y+ above 1 on nearly all the plate.
The band (y+ about 1 or below for a wall-resolved treatment) is common practice (NASA TMR's
"conventional wisdom").
"""

from meshgen.case import load_case
from meshgen.planning.plan import make_plan


def _warnings(*overrides):
    return [w for w in make_plan(load_case(None, list(overrides))).warnings if "holds at the reference station" in w]


def test_the_default_case_is_told_its_first_cell_is_above_one_on_most_of_the_plate():
    (w,) = _warnings()
    assert "averages 1.1" in w and "wall.y_plus" in w and "reference station" in w


def test_following_the_advice_clears_the_warning():
    (w,) = _warnings()
    advised = w.split("lower wall.y_plus to about ")[1].split(" ")[0]  # the average criterion
    assert not _warnings(f"wall.y_plus={advised}")


def test_a_reference_station_near_the_leading_edge_needs_no_warning():
    assert not _warnings("wall.reference_station=0.01")


def test_laminar_and_wall_function_plates_are_not_judged_by_it():
    assert not _warnings("flow.regime=\"laminar\"", "flow.velocity=2.0")
    assert not _warnings("wall.treatment=\"wall-functions\"")


def test_a_laminar_plate_is_not_warned_of_a_buffer_layer():
    # The buffer layer (5 < y+ < 30) is a region of the turbulent wall layer (common
    # practice); a laminar boundary layer has none, whatever y+ its first node reaches.
    plan = make_plan(load_case(None, ["flow.regime=\"laminar\"", "flow.velocity=2.0"]))
    assert max(plan.y_plus_along_plate()[1]) > 5
    assert not [w for w in plan.warnings if "buffer layer" in w]
