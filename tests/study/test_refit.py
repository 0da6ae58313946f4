"""The first cell re-fitted from a solver's wall distribution, on synthetic walls with a known answer.

The synthetic solver reports Cf = k^2 times Blasius' 0.664 / sqrt(Re_x) (shared/references.md),
so its u_tau = U sqrt(Cf / 2) is k times the a-priori one and its y+ (y+ = y u_tau / nu) k
times the estimate on the same mesh: the height that meets the target at the reference
station is the old one / k (y+ is proportional to the wall distance at a given u_tau).
"""

import csv
import json
import tomllib

import meshio
import numpy as np
import pytest

from meshgen.case import load_case
from meshgen.cli import main
from meshgen.core.errors import InputError
from meshgen.planning.plan import make_plan
from meshgen.study.refit import refit
from meshgen.study.wall_data import read_wall

LAM = ["flow.fluid=", "flow.velocity=", "flow.reynolds=1e5", "flow.length=1", "flow.regime=laminar"]
K = 1.3


def blasius_wall(n=200, k=K, length=1.0, nu=1e-5, u=1.0, rho=1.0):
    x = np.linspace(0.0, length, n + 1)[1:]
    cf = k**2 * 0.664 / np.sqrt(u * x / nu)
    tau_w = 0.5 * rho * u**2 * cf
    return x, cf, tau_w, np.sqrt(tau_w / rho)


def write_csv(path, **cols):
    with path.open("w", newline="") as f:
        w = csv.writer(f)
        w.writerow(list(cols))
        w.writerows(zip(*cols.values()))


@pytest.mark.parametrize("field", ["cf", "tau_w", "u_tau", "y_plus"])
@pytest.mark.parametrize("at", ["node", "centre"])
def test_reference_station_refit_has_the_known_answer(tmp_path, field, at):
    plan = make_plan(load_case(None, LAM + [f"wall.y_plus_at={at}"]))
    h = plan.first_cell_height
    x, cf, tau_w, u_tau = blasius_wall()
    d = h * (0.5 if at == "centre" else 1.0)
    values = {"cf": cf, "tau_w": tau_w, "u_tau": u_tau, "y_plus": d * u_tau / 1e-5}[field]
    write_csv(tmp_path / "wall.csv", x=x, **{field: values})
    res = refit(plan, read_wall(tmp_path / "wall.csv"))
    assert res["first_cell_height"] == pytest.approx(h / K, rel=1e-9)
    assert res["y_plus_used"] == pytest.approx(K, rel=1e-9)  # the case targets y+ = 1 at x/L = 1
    assert res["solver_over_estimate"] == pytest.approx([K, K], rel=1e-9)
    assert res["y_plus_predicted"][-1] == pytest.approx(1.0, rel=1e-9)


def test_largest_and_mean_over_the_plate():
    plan = make_plan(load_case(None, LAM))
    h = plan.first_cell_height
    x, cf, *_ = blasius_wall()
    from meshgen.study.wall_data import WallData

    wall = WallData(x, {"cf": cf}, "synthetic")
    # Blasius y+ ~ x^(-1/4) at a fixed height: the largest over x/L >= 0.1 is at x/L = 0.1
    res = refit(plan, wall, where="max")
    assert res["y_plus_used"] == pytest.approx(K * 0.1**-0.25, rel=1e-9)
    assert max(res["y_plus_predicted"][19:]) == pytest.approx(1.0, rel=1e-9)
    res = refit(plan, wall, where="mean", target=2.0)
    on = (x >= 0.1 - 1e-12)
    assert res["first_cell_height"] == pytest.approx(h * 2.0 / (K * np.mean(x[on] ** -0.25)), rel=1e-9)


def test_refit_command_writes_the_case_with_only_the_height_changed(tmp_path, capsys):
    plan = make_plan(load_case(None, LAM))
    x, cf, *_ = blasius_wall()
    write_csv(tmp_path / "wall.csv", x=x, cf=cf)
    sets = [a for o in LAM for a in ("--set", o)]
    new = tmp_path / "new.toml"
    assert main(["refit", *sets, "--wall", str(tmp_path / "wall.csv"), "-o", str(new)]) == 0
    out = capsys.readouterr().out
    assert "old 0.000308625 m -> new 0.000237404 m" in out and "predicted y+" in out
    assert (tmp_path / "new-y_plus.png").read_bytes()[:4] == b"\x89PNG"
    refitted = load_case(new)
    assert refitted.wall.first_cell_height == pytest.approx(plan.first_cell_height / K, rel=1e-6)
    old, now = load_case(None, LAM).model_dump(), refitted.model_dump()
    old["wall"].pop("y_plus"), now["wall"].pop("y_plus")
    old["wall"].pop("first_cell_height"), now["wall"].pop("first_cell_height")
    assert now == old  # everything else unchanged
    assert "y_plus" not in tomllib.loads(new.read_text())["wall"]
    # an existing file is kept without --force
    assert main(["refit", *sets, "--wall", str(tmp_path / "wall.csv"), "-o", str(new)]) == 2


def test_plan_json_beside_the_wall_file_gives_the_solved_height(tmp_path, capsys):
    x, cf, *_ = blasius_wall()
    write_csv(tmp_path / "wall.csv", x=x, cf=cf)
    (tmp_path / "plan.json").write_text(json.dumps({"first_cell_height": 6e-4}))
    sets = [a for o in LAM for a in ("--set", o)]
    assert main(["refit", *sets, "--wall", str(tmp_path / "wall.csv"), "-o", str(tmp_path / "n.toml")]) == 0
    out = capsys.readouterr().out
    assert "plan.json" in out and "old 0.0006 m" in out
    # the solver's y+ is proportional to the solved height: twice the height, half the new/old ratio
    assert load_case(tmp_path / "n.toml").wall.first_cell_height == pytest.approx(6e-4 / (K * 6e-4 / 0.000308625),
                                                                                  rel=1e-5)


def test_vtu_surface_with_a_wall_shear_vector(tmp_path):
    # a 3-D surface (two spanwise rows) with point data "wallShearStress" as a vector, read by
    # meshio; the magnitude counts and the two rows are averaged per x
    x, _, tau_w, _ = blasius_wall(n=50)
    pts = np.concatenate([np.column_stack([x, 0 * x, 0 * x]), np.column_stack([x, 0 * x, 0.1 + 0 * x])])
    vec = np.concatenate([np.column_stack([-tau_w, 0 * x, 0 * x])] * 2)
    quads = np.array([[i, i + 1, i + 51, i + 50] for i in range(49)])
    meshio.Mesh(pts, [("quad", quads)], point_data={"wallShearStress": vec}).write(tmp_path / "wall.vtu")
    wall = read_wall(tmp_path / "wall.vtu")
    np.testing.assert_allclose(wall.x, x, rtol=1e-12)
    np.testing.assert_allclose(wall.columns["tau_w"], tau_w, rtol=1e-12)
    plan = make_plan(load_case(None, LAM))
    assert refit(plan, wall)["first_cell_height"] == pytest.approx(plan.first_cell_height / K, rel=1e-9)


def test_refit_errors(tmp_path):
    plan = make_plan(load_case(None, LAM))
    x, cf, *_ = blasius_wall()
    write_csv(tmp_path / "p.csv", x=x, pressure=cf)
    with pytest.raises(InputError, match="no y_plus, u_tau, tau_w or cf"):
        refit(plan, read_wall(tmp_path / "p.csv"))
    write_csv(tmp_path / "short.csv", x=x[:50], cf=cf[:50])
    with pytest.raises(InputError, match="not the reference station"):
        refit(plan, read_wall(tmp_path / "short.csv"))
    assert refit(plan, read_wall(tmp_path / "short.csv"), where="max")["first_cell_height"] > 0
