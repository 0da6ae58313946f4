"""Grid-convergence uncertainty (meshgen.study.gci, results, gci_report) against published examples.

Sources: Celik et al. (2008), J. Fluids Eng. 130(7) 078001, Table 1 (three grids); the NASA
NPARC Alliance grid-convergence tutorial (two grids with a known order); Roache (1994),
J. Fluids Eng. 116(3) 405-413 (safety factors). Values as listed in /work/shared/references.md.
"""

from __future__ import annotations

import json
import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from meshgen.core.errors import InputError
from meshgen.study import gci
from meshgen.study.domain import sweep_summary
from meshgen.study.gci_report import gci_table, plot_gci
from meshgen.study.results import quantity_columns, read_results_csv, study_rows

CELIK_CELLS = [18000, 8000, 4500]
CELIK_PHI = [6.063, 5.972, 5.863]
NPARC_PHI = [0.97050, 0.96854]
NPARC_P = 1.786170


def celik_result(size: float = 1.0) -> dict:
    h = gci.h_from_cells(CELIK_CELLS, 2, size)
    return gci.three_grid(h, CELIK_PHI)


# --- published examples -----------------------------------------------------------------


def test_celik_three_grid_example():
    res = celik_result()
    # Celik et al. (2008) Table 1, at the published rounding:
    assert res["r21"] == pytest.approx(1.5, abs=1e-12)  # Celik Table 1: r21 = 1.5
    assert res["r32"] == pytest.approx(1.3333, abs=5e-5)  # Celik Table 1: r32 = 1.333
    assert round(res["p"], 2) == 1.53  # Celik Table 1: p = 1.53
    assert res["phi_ext21"] == pytest.approx(6.1685, abs=5e-5)  # Celik Table 1: 6.1685
    assert round(100 * res["e_a21"], 1) == 1.5  # Celik Table 1: e_a21 = 1.5 %
    assert round(100 * res["e_ext21"], 1) == 1.7  # Celik Table 1: e_ext21 = 1.7 %
    assert round(100 * res["gci_fine21"], 1) == 2.2  # Celik Table 1: GCI_fine21 = 2.2 %
    assert res["kind"] == "monotonic"  # Celik: 0 < R < 1 is monotonic convergence
    assert res["p_method"].startswith("fixed-point")  # Celik's own iteration converges here
    assert res["fs"] == 1.25  # Roache (1994): Fs = 1.25 for three or more grids (memory)


def test_celik_example_does_not_depend_on_the_area():
    # Computed: h = (A/N)^(1/2) scales every h alike, so ratios, p and GCI cannot change.
    a, b = celik_result(1.0), celik_result(37.5)
    for key in ("r21", "r32", "p", "phi_ext21", "gci_fine21", "gci_medium32"):
        assert b[key] == pytest.approx(a[key], rel=1e-12)


def test_celik_defining_equations_hold():
    # Celik et al. (2008) eqs. as written in references.md, evaluated independently here.
    res = celik_result()
    p, r21, r32 = res["p"], res["r21"], res["r32"]
    e21, e32 = CELIK_PHI[1] - CELIK_PHI[0], CELIK_PHI[2] - CELIK_PHI[1]
    s = math.copysign(1.0, e32 / e21)
    q = math.log((r21**p - s) / (r32**p - s))
    assert p == pytest.approx(abs(math.log(abs(e32 / e21)) + q) / math.log(r21), rel=1e-10)
    ext = (r21**p * CELIK_PHI[0] - CELIK_PHI[1]) / (r21**p - 1)
    assert res["phi_ext21"] == pytest.approx(ext, rel=1e-12)
    assert res["gci_fine21"] == pytest.approx(1.25 * res["e_a21"] / (r21**p - 1), rel=1e-12)
    e_a32 = abs(e32 / CELIK_PHI[1])
    assert res["gci_medium32"] == pytest.approx(1.25 * e_a32 / (r32**p - 1), rel=1e-12)
    # Computed: with p from the same three grids the ratio GCI_32/(r21^p GCI_21) is phi1/phi2.
    assert res["asymptotic_ratio"] == pytest.approx(CELIK_PHI[0] / CELIK_PHI[1], rel=1e-10)


def test_celik_example_reports_a_capped_iteration():
    # A cap of 2 steps cannot converge; the same equation solved by bisection must agree.
    capped = gci.three_grid(gci.h_from_cells(CELIK_CELLS, 2, 1.0), CELIK_PHI, max_iter=2)
    assert capped["p_method"] == "bisection"
    assert any("did not converge" in w for w in capped["warnings"])
    assert round(capped["p"], 2) == 1.53  # Celik Table 1: p = 1.53
    assert capped["p"] == pytest.approx(celik_result()["p"], rel=1e-10)


def test_nparc_two_grid_example():
    res = gci.two_grid([1.0, 2.0], NPARC_PHI, NPARC_P, fs=1.25)
    # NASA NPARC Alliance tutorial: r = 2, p = 1.786170, Fs = 1.25 -> GCI12 = 0.103083 %.
    assert 100 * res["gci_fine21"] == pytest.approx(0.103083, abs=5e-7)


def test_two_grid_default_safety_factor_is_three():
    # Roache (1994, 1998): Fs = 3 for two-grid studies (memory); GCI is linear in Fs.
    res = gci.two_grid([1.0, 2.0], NPARC_PHI, NPARC_P)
    assert res["fs"] == 3.0
    assert 100 * res["gci_fine21"] == pytest.approx(0.103083 * 3.0 / 1.25, rel=1e-5)
    assert any("assumed" in w for w in res["warnings"])


# --- exact power laws -------------------------------------------------------------------


@settings(max_examples=300, deadline=None)
@given(
    p=st.floats(0.5, 4.0),
    r21=st.floats(1.3, 3.0),
    r32=st.floats(1.3, 3.0),
    h1=st.floats(1e-4, 1.0),
    phi0=st.floats(-100.0, 100.0),
    amp=st.floats(1e-3, 10.0),
    sign=st.sampled_from([-1.0, 1.0]),
)
def test_exact_power_law_recovers_order_and_limit(p, r21, r32, h1, phi0, amp, sign):
    # Computed: phi = phi0 + C h^p is what Richardson extrapolation assumes, so the apparent
    # order must be p and the extrapolated value phi0, for any refinement ratios.
    h = h1 * np.array([1.0, r21, r21 * r32])
    c = sign * amp * max(1.0, abs(phi0))
    phi = phi0 + c * (h / h1) ** p
    res = gci.three_grid(h, phi)
    assert res["kind"] == "monotonic"
    assert abs(res["p"] - p) <= 1e-8
    # Round-off in phi of about 1e-16 of its largest magnitude limits how exact phi0 can be.
    scale = max(1.0, float(np.max(np.abs(phi))), abs(phi0))
    assert abs(res["phi_ext21"] - phi0) <= 1e-10 * scale
    assert abs(res["phi_ext32"] - phi0) <= 1e-10 * scale


def test_equal_ratios_use_the_closed_form():
    # Roache (1998): for constant r, p = ln((phi3 - phi2)/(phi2 - phi1)) / ln r (computed
    # here on phi = 1 + h^2, h = 1, 2, 4: phi = 2, 5, 17, ratio 4, p = 2).
    res = gci.three_grid([1.0, 2.0, 4.0], [2.0, 5.0, 17.0])
    assert res["p_method"].startswith("closed form")
    assert res["p"] == pytest.approx(2.0, rel=1e-14)
    assert res["phi_ext21"] == pytest.approx(1.0, rel=1e-14)


def test_unequal_ratios_fall_back_to_bisection_when_the_iteration_diverges():
    # Computed: for r21 = 1.3, r32 = 3 the fixed-point map has slope above 1 near p = 2,
    # so Celik's iteration cannot converge; the order must still be exact.
    h = np.array([1.0, 1.3, 3.9])
    res = gci.three_grid(h, 1.0 + 0.5 * h**2)
    assert res["p_method"] == "bisection"
    assert any("did not converge" in w for w in res["warnings"])
    assert res["p"] == pytest.approx(2.0, abs=1e-10)


def test_large_fine_ratio_with_r_above_one_is_still_monotonic():
    # Computed: phi = 1 + h^0.5 with r21 = 3, r32 = 1.3 gives R = eps21/eps32 = 3.0 > 1,
    # which the equal-ratio reading would call divergent; the scaled R is below 1.
    h = np.array([1.0, 3.0, 3.9])
    res = gci.three_grid(h, 1.0 + h**0.5)
    assert res["R"] > 1
    assert res["kind"] == "monotonic"
    assert res["p"] == pytest.approx(0.5, abs=1e-9)
    assert any("scaled R" in w for w in res["warnings"])


# --- classification and warnings --------------------------------------------------------


def test_oscillatory_input():
    # Celik et al. (2008): R = eps21/eps32 < 0 is oscillatory convergence (classification
    # from memory). eps21 = +0.1, eps32 = -0.15 -> R = -0.667.
    res = gci.three_grid([1.0, 2.0, 4.0], [1.0, 1.1, 0.95])
    assert res["kind"] == "oscillatory"
    assert res["R"] == pytest.approx(-0.1 / 0.15, rel=1e-12)
    assert any("unreliable" in w for w in res["warnings"])


def test_divergent_input():
    # Celik et al. (2008): R > 1 is divergence (from memory); no extrapolation is made.
    res = gci.three_grid([1.0, 2.0, 4.0], [1.0, 1.1, 1.15])
    assert res["kind"] == "divergent"
    assert res["R"] == pytest.approx(2.0, rel=1e-12)
    assert res["p"] is None and res["phi_ext21"] is None and res["gci_fine21"] is None
    assert any("divergent" in w for w in res["warnings"])


def test_zero_change_is_indeterminate():
    res = gci.three_grid([1.0, 2.0, 4.0], [1.0, 1.0, 1.1])
    assert res["kind"] == "indeterminate"
    assert res["p"] is None
    assert any("phi1 = phi2" in w for w in res["warnings"])


@pytest.mark.parametrize("p", [0.3, 5.0])
def test_order_far_from_formal_is_flagged(p):
    # The brief's plausibility band, 0.5 to 2x the formal order (common practice).
    h = np.array([1.0, 2.0, 4.0])
    res = gci.three_grid(h, 1.0 + 0.01 * h**p, formal_order=2.0)
    assert res["p"] == pytest.approx(p, rel=1e-10)
    assert any("far from the formal order" in w for w in res["warnings"])


def test_small_and_unequal_ratios_are_flagged():
    # Celik et al. (2008) advise r > 1.3 (from memory); unequal ratios: common practice.
    h = np.array([1.0, 1.1, 1.6])
    res = gci.three_grid(h, 1.0 + h**2)
    assert any("below 1.3" in w for w in res["warnings"])
    assert any("non-uniform refinement" in w for w in res["warnings"])


def test_bad_three_grid_arguments():
    with pytest.raises(InputError, match="fine to coarse"):
        gci.three_grid([2.0, 1.0, 4.0], [1.0, 2.0, 3.0])
    with pytest.raises(InputError, match="expected 3 numbers"):
        gci.three_grid([1.0, 2.0], [1.0, 2.0])
    with pytest.raises(InputError, match="positive"):
        gci.three_grid([0.0, 1.0, 2.0], [1.0, 2.0, 3.0])


# --- h and studies ----------------------------------------------------------------------


def test_h_from_cells():
    # Celik et al. (2008) eq. 1: h = (A/N)^(1/2) in 2-D, (V/N)^(1/3) in 3-D (computed).
    assert gci.h_from_cells(100, 2, 4.0) == pytest.approx(0.2, rel=1e-15)
    assert gci.h_from_cells(1000, 3, 8.0) == pytest.approx(0.2, rel=1e-15)
    np.testing.assert_allclose(gci.h_from_cells([400, 100], 2, 4.0), [0.1, 0.2], rtol=1e-15)
    with pytest.raises(InputError, match="dim"):
        gci.h_from_cells(100, 4, 1.0)
    with pytest.raises(InputError, match="size"):
        gci.h_from_cells(100, 2, -1.0)


def test_study_sorts_and_takes_every_triplet():
    # Given coarse-first, out of order: the study must sort fine to coarse (Celik: grid 1 finest).
    h = np.array([8.0, 1.0, 4.0, 2.0])
    phi = 1.0 + 0.1 * h**2
    res = gci.study(phi, h=h, names=["d", "a", "c", "b"], quantity="cd")
    assert [lv["name"] for lv in res["levels"]] == ["a", "b", "c", "d"]
    assert [r["levels"] for r in res["results"]] == [["a", "b", "c"], ["b", "c", "d"]]
    for r in res["results"]:
        assert r["p"] == pytest.approx(2.0, rel=1e-12)  # computed: exact h^2 data
        assert r["phi_ext21"] == pytest.approx(1.0, rel=1e-12)


def test_study_default_names_number_the_finest_first():
    res = gci.study([1.4, 1.0, 1.1], h=[4.0, 1.0, 2.0])  # Celik et al.: grid 1 is the finest
    assert [(lv["name"], lv["h"]) for lv in res["levels"]] == [
        ("grid1", 1.0),
        ("grid2", 2.0),
        ("grid3", 4.0),
    ]


def test_study_from_cells_matches_celik():
    res = gci.study(CELIK_PHI, cells=CELIK_CELLS, dim=2, size=1.0)
    assert round(res["results"][0]["p"], 2) == 1.53  # Celik Table 1: p = 1.53


def test_study_of_two_meshes_is_a_two_grid_estimate():
    res = gci.study(NPARC_PHI, h=[1.0, 2.0], fs=1.25, assumed_order=NPARC_P)
    (r,) = res["results"]
    assert r["method"] == gci.METHOD_TWO
    assert 100 * r["gci_fine21"] == pytest.approx(0.103083, abs=5e-7)  # NPARC tutorial
    assert gci.study(NPARC_PHI, h=[1.0, 2.0])["results"][0]["p"] == 2.0  # default assumed order


def test_study_rejects_duplicate_h_and_too_few_meshes():
    with pytest.raises(InputError, match="same h"):
        gci.study([1.0, 2.0, 3.0], h=[1.0, 2.0, 2.0])
    with pytest.raises(InputError, match="2 or more"):
        gci.study([1.0], h=[1.0])


# --- CSV input --------------------------------------------------------------------------


def write(path, text):
    path.write_text(text, encoding="utf-8")
    return path


def test_csv_with_h_and_two_quantities(tmp_path):
    csv = write(
        tmp_path / "r.csv",
        "mesh,h,cd,cf,notes\ncoarse,4,1.16,2,x\nfine,1,1.01,1.5,y\nmid,2,1.04,1.6,z\n",
    )
    rows = read_results_csv(csv)
    assert [r["mesh"] for r in rows] == ["fine", "mid", "coarse"]
    assert quantity_columns(rows) == ["cd", "cf"]  # the text column is not a quantity
    res = study_rows(rows)
    assert set(res["quantities"]) == {"cd", "cf"}
    # Computed: cd = 1 + 0.01 h^2 on h = 1, 2, 4 -> p = 2, phi_ext = 1.
    assert res["quantities"]["cd"]["results"][0]["p"] == pytest.approx(2.0, rel=1e-9)
    assert res["quantities"]["cd"]["results"][0]["phi_ext21"] == pytest.approx(1.0, rel=1e-9)


def test_csv_with_cells_and_area_reproduces_celik(tmp_path):
    csv = write(
        tmp_path / "r.csv", "level,cells,phi\nL1,18000,6.063\nL2,8000,5.972\nL3,4500,5.863\n"
    )
    rows = read_results_csv(csv, dim=2, size=2.5)
    assert [r["cells"] for r in rows] == CELIK_CELLS
    res = study_rows(rows)["quantities"]["phi"]["results"][0]
    assert round(100 * res["gci_fine21"], 1) == 2.2  # Celik Table 1: GCI_fine21 = 2.2 %
    text = gci_table(study_rows(rows))
    assert "L1 / L2 / L3" in text and "monotonic" in text
    data = json.loads(json.dumps(gci.to_json(study_rows(rows)), allow_nan=False))
    assert round(data["quantities"]["phi"]["results"][0]["p"], 2) == 1.53  # Celik Table 1


def test_csv_takes_h_from_family_json_beside_it(tmp_path):
    levels = [
        {"name": "L1", "cells": 18000, "h": 0.01},
        {"name": "L2", "cells": 8000, "h": 0.015},
        {"name": "L3", "cells": 4500, "h": 0.02},
    ]
    (tmp_path / "family.json").write_text(json.dumps({"levels": levels}), encoding="utf-8")
    by_name = read_results_csv(
        write(tmp_path / "a.csv", "mesh,cells,cd\nL2,8000,2\nL1,18000,1\nL3,4500,3\n")
    )
    assert [r["h"] for r in by_name] == [0.01, 0.015, 0.02]
    by_cells = read_results_csv(write(tmp_path / "b.csv", "cells,cd\n4500,3\n18000,1\n"))
    assert [r["h"] for r in by_cells] == [0.01, 0.02]


def test_csv_manifest_mismatch(tmp_path):
    manifest = tmp_path / "elsewhere.json"
    manifest.write_text(
        json.dumps(
            {
                "levels": [
                    {"name": "L1", "cells": 100, "h": 0.1},
                    {"name": "L2", "cells": 25, "h": 0.2},
                ]
            }
        )
    )
    csv = write(tmp_path / "r.csv", "mesh,cells,cd\nL1,100,1\nL2,30,2\nL9,7,3\n")
    with pytest.raises(InputError) as err:
        read_results_csv(csv, manifest=manifest)
    assert len(err.value.problems) == 2
    assert "level 'L2'" in err.value.problems[0] and "25" in err.value.problems[0]
    assert "L9" in err.value.problems[1]


def test_bad_manifest(tmp_path):
    manifest = tmp_path / "family.json"
    manifest.write_text(
        json.dumps({"levels": [{"name": "L1", "h": 0.1}, {"name": "L2", "h": -1}, {"h": 0.3}]})
    )
    csv = write(tmp_path / "r.csv", "mesh,cells,cd\nL1,100,1\nL2,30,2\n")
    with pytest.raises(InputError) as err:
        read_results_csv(csv)
    assert len(err.value.problems) == 2
    assert "levels[1].h = -1" in err.value.problems[0]
    assert "levels[2]: has neither 'name' nor 'cells'" in err.value.problems[1]
    manifest.write_text("{not json")
    with pytest.raises(InputError, match="not a readable JSON manifest"):
        read_results_csv(csv)


def test_csv_cells_without_size_or_manifest(tmp_path):
    csv = write(tmp_path / "r.csv", "cells,cd\n100,1\n25,2\n")
    with pytest.raises(InputError, match="family.json"):
        read_results_csv(csv)


@pytest.mark.parametrize(
    ("text", "expected"),
    [
        ("mesh,cd\na,1\nb,2\n", "no 'cells' or 'h' column"),
        ("h,cd\n1,1\n", "at least 2"),
        ("h,cd\n1,1\n2,abc\n", "line 3, column 'cd': 'abc' is not a finite number"),
        ("h,cd\n1,1\n2,\n", "line 3, column 'cd': empty"),
        ("h,cd\n1,1\n1,2\n", "same h"),
        ("h,mesh\n1,a\n2,b\n", "no quantity column"),
        ("h,cd,cd\n1,1,1\n2,2,2\n", "'cd' appears more than once"),
        ("h,cd\n1,1\n2,2,3\n", "line 3: 3 values"),
        ("cells,cd\n100.5,1\n25,2\n", "not a positive whole number"),
        ("", "empty"),
    ],
)
def test_csv_errors(tmp_path, text, expected):
    with pytest.raises(InputError) as err:
        read_results_csv(write(tmp_path / "r.csv", text), dim=2, size=1.0)
    assert any(expected in line for line in err.value.problems), err.value.problems


def test_csv_reports_every_problem_on_its_own_line(tmp_path):
    csv = write(tmp_path / "r.csv", "h,cd,cf\n1,x,1\n2,2,y\n")
    with pytest.raises(InputError) as err:
        read_results_csv(csv)
    assert len(err.value.problems) == 2
    assert "line 2, column 'cd'" in err.value.problems[0]
    assert "line 3, column 'cf'" in err.value.problems[1]


# --- plot -------------------------------------------------------------------------------


def test_plot_is_a_png(tmp_path):
    from PIL import Image  # an independent PNG reader

    results = {
        "quantities": {
            "phi": gci.study(CELIK_PHI, cells=CELIK_CELLS, dim=2, size=1.0),
            "cd": gci.study(NPARC_PHI, h=[1.0, 2.0]),
        }
    }
    out = plot_gci(results, tmp_path / "sub" / "gci.png")
    data = out.read_bytes()
    assert data[:8] == b"\x89PNG\r\n\x1a\n"  # PNG signature (ISO/IEC 15948)
    assert len(data) > 20_000  # two labelled subplots, not an empty canvas
    with Image.open(out) as img:
        img.verify()
    with Image.open(out) as img:
        width, height = img.size
        assert height > width  # one subplot per quantity, stacked
        assert (
            len(np.unique(np.asarray(img.convert("RGB")).reshape(-1, 3), axis=0)) > 50
        )  # lines, text and colours drawn


# --- domain sweep -----------------------------------------------------------------------


def test_sweep_summary():
    # Values built as a reference times (1 + offset); reference Cf = 0.6641 / sqrt(Re_x) at
    # Re_x = 1e4 (Blasius, Schlichting). The relative changes must be the offsets.
    cf = 0.6641 / math.sqrt(1e4)
    offsets = {10.0: 0.026, 15.0: 0.009, 20.0: 0.006, 40.0: 0.0}
    rows = [{"height_factor": k, "cf": cf * (1 + o), "cd": 2 * cf} for k, o in offsets.items()]
    out = sweep_summary(rows, "height_factor", ["cf", "cd"], tol=0.01)
    assert out["reference"]["height_factor"] == 40.0
    variants = out["quantities"]["cf"]["variants"]
    np.testing.assert_allclose(
        [v["rel_change"] for v in variants], list(offsets.values()), atol=1e-14
    )
    assert [v["within_tol"] for v in variants] == [False, True, True, True]
    assert out["quantities"]["cf"]["all_within"] is False
    assert out["quantities"]["cd"]["all_within"] is True


def test_sweep_summary_errors():
    rows = [{"H": 10, "cf": 1.0}, {"H": 20, "cf": 0.0}]
    with pytest.raises(InputError, match="reference variant"):
        sweep_summary(rows, "H", "cf", 0.01)
    with pytest.raises(InputError, match="missing"):
        sweep_summary(rows, "L", "cf", 0.01)
    with pytest.raises(InputError, match="appears twice"):
        sweep_summary([{"H": 20, "cf": 1.0}, {"H": 20, "cf": 2.0}], "H", "cf", 0.01)
