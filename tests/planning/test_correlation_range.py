"""Stations where a skin-friction law has no value are reported as outside its range, never as NaN.

Schlichting's Cf = (2 log10 Re_x - 0.65)^-2.3 has a negative base below Re_x = 10^0.325 =
2.11 (NaN in floating point); White's Cf = 0.455 / ln^2(0.06 Re_x) has its pole at Re_x =
1 / 0.06 = 16.7 and rises with Re_x below it. Both follow from the formulas as printed in
White, Viscous Fluid Flow (1974), eqs. 6-135a and 6-134.
"""

import json
import warnings

import numpy as np
import pytest

from meshgen.cli import main
from meshgen.physics import correlations as bl

RE = ["--set", "flow.fluid=", "--set", "flow.velocity=", "--set", "flow.reynolds=1e6"]
#: A leading-edge spacing of 1e-6 L puts the first plate node at Re_x = 1.
NEAR_EDGE = ["--set", "streamwise.leading_edge_spacing=1e-6"]


def strict_json(text: str):
    """Python's reader takes NaN and Infinity unless told not to; RFC 8259 has neither."""
    def refuse(name):
        raise ValueError(f"not JSON: {name}")
    return json.loads(text, parse_constant=refuse)


@pytest.mark.parametrize("name, below, above", [("schlichting", 2.0, 2.2), ("white", 16.0, 17.0)])
def test_a_law_has_no_value_below_the_end_of_its_formula(name, below, above):
    with warnings.catch_warnings():
        warnings.simplefilter("error")  # no RuntimeWarning either
        cf = bl.skin_friction(np.array([1.0, below, above, 1e6]), name)
    assert np.isnan(cf[:2]).all() and np.isfinite(cf[2:]).all()
    assert bl.CORRELATIONS[name].defined_from == pytest.approx(10**0.325 if name == "schlichting" else 1 / 0.06)


@pytest.mark.filterwarnings("error::RuntimeWarning")
@pytest.mark.parametrize("corr", ["schlichting", "white"])
def test_plan_json_reports_the_stations_outside_the_range(corr, capsys):
    """Before: `plan --json` printed NaN (Schlichting) or y+ up to 246 from White's pole."""
    assert main(["plan", *RE, *NEAR_EDGE, "--set", f'flow.correlation="{corr}"', "--json"]) == 0
    d = strict_json(capsys.readouterr().out)
    out = d["y_plus_outside_correlation"]
    assert out["stations"] >= 1 and out["re_x_below"] == pytest.approx(bl.CORRELATIONS[corr].defined_from)
    lo, hi = d["y_plus_range"]
    assert 0 < lo < hi  # finite numbers over the rest of the plate
    assert any("outside the range" in w and corr in w for w in d["warnings"])


@pytest.mark.filterwarnings("error::RuntimeWarning")
def test_a_build_writes_strict_json_and_says_where_there_is_no_estimate(tmp_path, capsys):
    """Before: NaN in plan.json and quality.json, exit 0."""
    assert main(["build", *RE, *NEAR_EDGE, "--set", 'flow.correlation="schlichting"', "-o", str(tmp_path),
                 "--format", "su2"]) == 0
    plan = strict_json((tmp_path / "plan.json").read_text())
    quality = strict_json((tmp_path / "quality.json").read_text())
    assert plan["y_plus_outside_correlation"]["stations"] >= 1
    ypl = quality["boundary_layer"]["y_plus"]
    assert len(ypl["x_m"]) == len(ypl["y_plus"]) and min(ypl["x_m"]) > 1e-6 * 2  # the nodes ahead are left out
    assert any("outside the range" in n for n in quality["boundary_layer"]["notes"])
    assert "Traceback" not in capsys.readouterr().err


def test_a_reference_station_outside_the_range_is_refused(capsys):
    """Before: `--set wall.reference_station=1e-6` ended in a traceback."""
    code = main(["plan", *RE, "--set", 'flow.correlation="schlichting"', "--set", "wall.reference_station=1e-6"])
    err = capsys.readouterr().err
    assert code == 2, err
    (line,) = err.splitlines()
    assert line.startswith("error: wall.reference_station = 1e-06:") and "schlichting" in line, line
