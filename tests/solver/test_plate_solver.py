"""The study loop on a real solve: examples/plate_solver.py on meshes meshgen builds.

SLOW (about a minute on two cores): steady laminar Navier-Stokes solves with scikit-fem
(Taylor-Hood Q2/Q1, Newton, scipy's SuperLU) at Re_L = 1e5, H = 20 delta99, an upstream
block and no wake block. The reference is the Blasius flat-plate solution (Howarth 1938,
Proc. R. Soc. A 164, as tabulated in Schlichting, Boundary-Layer Theory; White, Viscous
Fluid Flow; ../shared/references.md): Cf = 0.664 / sqrt(Re_x), CD = 1.328 / sqrt(Re_L).

One family of three levels at ratio sqrt(2) (examples/laminar-plate.toml: 11,060, 5,488
and 2,765 cells) is built and solved once for the module; the refit test builds and
solves its own two meshes of about 3,000 cells.
"""

import csv
import importlib.util
import json
import math
import sys
from pathlib import Path

import pytest

from meshgen.cli import main

pytestmark = pytest.mark.solver

ROOT = Path(__file__).resolve().parents[2]
CASE = ROOT / "examples" / "laminar-plate.toml"
RE_L, LENGTH, U, NU = 1e5, 1.0, 1.0, 1e-5  # the case: flow.reynolds with flow.length = 1 m (U = 1 m/s)
SQRT2 = "1.41421356"


def blasius_cf(x):
    """Blasius local skin friction Cf = 0.664 / sqrt(Re_x) (shared/references.md)."""
    return 0.664 / math.sqrt(U * x / NU)


def load_solver():
    spec = importlib.util.spec_from_file_location("plate_solver", ROOT / "examples" / "plate_solver.py")
    module = importlib.util.module_from_spec(spec)
    sys.modules["plate_solver"] = module  # dataclasses look their module up while the class is made
    spec.loader.exec_module(module)
    return module


def read_wall_csv(path: Path) -> dict[str, list[float]]:
    lines = [line for line in path.read_text().splitlines() if line and not line.startswith("#")]
    rows = list(csv.reader(lines))
    return {name: [float(r[k]) for r in rows[1:]] for k, name in enumerate(rows[0])}


def interp(x0: float, xs: list[float], ys: list[float]) -> float:
    k = next(i for i, x in enumerate(xs) if x >= x0)
    t = (x0 - xs[k - 1]) / (xs[k] - xs[k - 1])
    return ys[k - 1] + t * (ys[k] - ys[k - 1])


@pytest.fixture(scope="module")
def solver():
    return load_solver()


@pytest.fixture(scope="module")
def family(tmp_path_factory, solver):
    root = tmp_path_factory.mktemp("study") / "family"
    assert main(["family", str(CASE), "--levels", "3", "--ratio", SQRT2, "-o", str(root)]) == 0
    levels = sorted(root.glob("level-*"))
    assert [p.name for p in levels] == ["level-0", "level-1", "level-2"]
    assert solver.main([str(p) for p in levels] + ["--quiet"]) == 0
    return root


def test_finest_level_cf_is_within_two_percent_of_blasius(family):
    wall = read_wall_csv(family / "level-0" / "wall.csv")
    errors = [cf / blasius_cf(x) - 1 for x, cf in zip(wall["x"], wall["cf"]) if 0.2 <= x / LENGTH <= 0.9]
    assert len(errors) > 30
    # Blasius 0.664 / sqrt(Re_x) (Howarth 1938; shared/references.md), over 0.2 <= x/L <= 0.9
    assert max(abs(e) for e in errors) < 0.02, f"largest deviation {max(errors, key=abs):+.3%}"


def test_wall_csv_columns_agree_with_each_other_and_with_the_plan(family):
    """tau_w = 0.5 rho U^2 cf, and y+ is taken at the first node: y_plus = h1 u_tau / nu with
    h1 the plan's first-cell height (y+ = y u_tau / nu, u_tau = sqrt(tau_w / rho); references.md)."""
    for level in ("level-0", "level-2"):
        plan = json.loads((family / level / "plan.json").read_text())
        wall = read_wall_csv(family / level / "wall.csv")
        rho, h1 = plan["density"], plan["first_cell_height"]
        assert wall["x"][0] > 0 and wall["x"][-1] == pytest.approx(LENGTH)
        for x, cf, tau, yp in zip(wall["x"], wall["cf"], wall["tau_w"], wall["y_plus"]):
            assert tau == pytest.approx(0.5 * rho * U**2 * cf, rel=1e-8)
            assert yp == pytest.approx(h1 * math.sqrt(abs(tau) / rho) / NU, rel=1e-6)


def test_gci_of_the_solved_family_extrapolates_cf_mid_to_blasius(family, capsys):
    for level in ("level-0", "level-1", "level-2"):
        results = json.loads((family / level / "results.json").read_text())
        assert set(results) == {"cf_mid", "cd"}
    capsys.readouterr()
    assert main(["gci", str(family), "--json"]) == 0
    report = json.loads(capsys.readouterr().out)
    cf_mid = report["quantities"]["cf_mid"]
    phi = [lv["phi"] for lv in cf_mid["levels"]]
    extrapolated = cf_mid["results"][0]["phi_ext21"]
    blasius_mid = blasius_cf(0.5 * LENGTH)
    # Blasius Cf at x/L = 0.5 (Howarth 1938; shared/references.md)
    assert abs(extrapolated / blasius_mid - 1) < 0.015, (phi, extrapolated)
    assert all(abs(p / blasius_mid - 1) < 0.015 for p in phi), phi


def test_gci_of_the_drag_is_reliable_with_the_order_of_the_wall_reaction(family, capsys):
    """The plate drag from the summed wall reaction of Q2 elements converges at about order
    2k = 4 (superconvergence of reaction functionals; from memory), so it is studied with
    --formal-order 4 and must come out monotonic, with p near 4 and CD near Blasius."""
    capsys.readouterr()
    assert main(["gci", str(family), "--json", "--formal-order", "4"]) == 0
    result = json.loads(capsys.readouterr().out)["quantities"]["cd"]["results"][0]
    assert result["kind"] == "monotonic" and result["reliable"], result.get("unreliable_because")
    assert 3.0 < result["p"] < 6.0
    # Blasius CD = 1.328 / sqrt(Re_L) (shared/references.md); the leading edge adds a little
    # at this Reynolds number, so 1.5 %
    assert abs(result["phi_ext21"] / (1.328 / math.sqrt(RE_L)) - 1) < 0.015


def test_gci_along_the_wall_reads_every_level(family, capsys):
    capsys.readouterr()
    assert main(["gci", str(family), "--wall", "wall.csv", "--quantity", "cf", "--stations", "0.25,0.5,0.75"]) == 0
    out = capsys.readouterr().out
    assert "0.5" in out and (family / "gci-wall-wall.png").stat().st_size > 10_000
    table = (family / "gci-wall-wall.csv").read_text()
    assert "0.75" in table


REFIT_CASE = """\
name = "refit-plate"

[flow]
reynolds = 1.0e5
length = 1.0
regime = "laminar"

[wall]
y_plus = 0.4
growth_ratio = 1.25
max_spacing = 1.0
reference_station = 0.5

[domain]
height_factor = 20.0
upstream = 0.25
downstream = 0.0

[streamwise]
leading_edge_spacing = 2.0e-4
trailing_edge_spacing = 0.02
growth_ratio = 1.16
max_spacing = 0.04
far_spacing = 0.1
upstream_cells = 24

[names]
wall = "plate_surface"
"""


def test_refit_from_the_solvers_y_plus_meets_the_target_on_a_second_solve(tmp_path, solver):
    """Solve on a mesh sized for y+ = 0.4, refit to y+ = 1 from the solver's wall.csv, rebuild,
    solve again: the solver's first-node y+ at the reference station x/L = 0.5 is 1 within 5 %."""
    case = tmp_path / "case.toml"
    case.write_text(REFIT_CASE)
    first, second, refitted = tmp_path / "first", tmp_path / "second", tmp_path / "refitted.toml"
    assert main(["build", str(case), "-o", str(first), "--no-pictures"]) == 0
    assert solver.main([str(first), "--quiet"]) == 0
    assert main(["refit", str(case), "--wall", str(first / "wall.csv"), "--target", "1.0",
                 "-o", str(refitted)]) == 0
    old = json.loads((first / "plan.json").read_text())["first_cell_height"]
    assert main(["build", str(refitted), "-o", str(second), "--no-pictures"]) == 0
    new = json.loads((second / "plan.json").read_text())["first_cell_height"]
    assert new == pytest.approx(2.5 * old, rel=0.05)  # y+ is proportional to the height at a given u_tau
    assert solver.main([str(second), "--quiet"]) == 0
    wall = read_wall_csv(second / "wall.csv")
    assert abs(interp(0.5 * LENGTH, wall["x"], wall["y_plus"]) - 1.0) < 0.05


def test_a_folder_without_a_mesh_is_refused_by_name(tmp_path, solver, capsys):
    (tmp_path / "plan.json").write_text(json.dumps({"dimension": 2, "files": ["case.vtu"]}))
    (tmp_path / "bc.json").write_text(json.dumps({"groups": []}))
    assert solver.main([str(tmp_path), "--quiet"]) == 1
    assert "lists no .msh file" in capsys.readouterr().err
