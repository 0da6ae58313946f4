"""Results back in from the member folders: gci FAMILY_DIR, --wall stations, domain SWEEP_DIR and its fit.

Exact power laws are the reference (a wrong Richardson extrapolation or fit cannot return
their limit and order): phi(h) = phi0 + C h^p gives phi_ext = phi0 and p (Celik et al. 2008,
J. Fluids Eng. 130(7) 078001, eqs. 3-4 with equal ratios); phi(H) = phi_inf + a H^-q gives
phi_inf and q back from the domain fit.
"""

import csv
import json

import numpy as np
import pytest

from meshgen.cli import main
from meshgen.core.errors import InputError
from meshgen.study.domain_fit import fit_power_law
from meshgen.study.member_results import family_rows, read_member_results
from meshgen.study.results import read_results_csv, study_rows
from meshgen.study.wall_gci import parse_stations, wall_study

H = [0.00625, 0.0125, 0.025, 0.05]  # four levels of ratio 2
L = 2.0  # plate length [m]


def make_family(root, levels=4, results=True):
    """A family folder as meshgen family writes it (only the fields the readers use)."""
    root.mkdir(parents=True, exist_ok=True)
    lv = [{"name": f"level-{k}", "cells": 4000 // 4**k, "h": H[k]} for k in range(levels)]
    (root / "family.json").write_text(json.dumps({"kind": "family", "levels": lv, "plate_length": L}))
    for k in range(levels):
        (root / f"level-{k}").mkdir(exist_ok=True)
        if results:
            h = H[k]
            (root / f"level-{k}" / "results.json").write_text(
                json.dumps({"cd": 0.0042 + 0.5 * h**2, "cf_mid": 0.0029 - 0.3 * h**1.5, "note": 1}))
    return root


def test_gci_family_dir_recovers_the_power_laws(tmp_path, capsys):
    root = make_family(tmp_path / "fam")
    rows, warnings = family_rows(root)
    assert [r["mesh"] for r in rows] == ["level-0", "level-1", "level-2", "level-3"] and warnings == []
    res = study_rows(rows)
    finest = res["quantities"]["cd"]["results"][0]
    assert finest["phi_ext21"] == pytest.approx(0.0042, rel=1e-10) and finest["p"] == pytest.approx(2, rel=1e-9)
    finest = res["quantities"]["cf_mid"]["results"][0]
    assert finest["phi_ext21"] == pytest.approx(0.0029, rel=1e-10) and finest["p"] == pytest.approx(1.5, rel=1e-9)
    assert main(["gci", str(root)]) == 0
    out = capsys.readouterr().out
    assert "phi_ext21 = 0.0042," in out and "level-3" in out


def test_members_without_results_are_left_out_with_a_warning(tmp_path, capsys):
    root = make_family(tmp_path / "fam")
    (root / "level-3" / "results.json").unlink()
    rows, warnings = family_rows(root)
    assert len(rows) == 3 and "level-3" in warnings[0]
    (root / "level-2" / "results.json").unlink()
    (root / "level-1" / "results.json").unlink()
    with pytest.raises(InputError, match="1 of 4 levels"):
        family_rows(root)


def test_bad_results_json_names_the_file(tmp_path, capsys):
    root = make_family(tmp_path / "fam")
    (root / "level-1" / "results.json").write_text('{"cd": "big", "cf": true}')
    with pytest.raises(InputError) as exc:
        read_member_results(root / "level-1" / "results.json")
    assert len(exc.value.problems) == 2 and all("level-1" in p for p in exc.value.problems)
    assert main(["gci", str(root)]) == 2


def test_csv_keyed_by_member_names_alone(tmp_path):
    # issue 12: gci refused a CSV keyed by member names although family.json sat beside it
    root = make_family(tmp_path / "fam", results=False)
    phi = [0.0042 + 0.5 * h**2 for h in H]
    text = "mesh,cd\n" + "".join(f"level-{k},{v!r}\n" for k, v in enumerate(phi))
    (root / "results.csv").write_text(text)
    rows = read_results_csv(root / "results.csv")
    assert [r["h"] for r in rows] == H and [r["cells"] for r in rows] == [4000, 1000, 250, 62]
    assert study_rows(rows)["quantities"]["cd"]["results"][0]["phi_ext21"] == pytest.approx(0.0042, rel=1e-10)
    # the manifest given instead of beside it
    (tmp_path / "elsewhere.csv").write_text(text)
    assert read_results_csv(tmp_path / "elsewhere.csv", manifest=root / "family.json") == rows
    with pytest.raises(InputError, match="no 'cells' or 'h' column"):
        read_results_csv(tmp_path / "elsewhere.csv")
    (root / "results.csv").write_text(text.replace("level-3", "level-9"))
    with pytest.raises(InputError, match="no level named 'level-9'"):
        read_results_csv(root / "results.csv")


def test_unreliable_gci_is_not_printed_as_a_result(tmp_path, capsys):
    root = make_family(tmp_path / "fam", levels=3, results=False)
    for k, v in enumerate([1.0, 1.000001, 0.9]):  # oscillatory: a tiny change, then a large one back
        (root / f"level-{k}" / "results.json").write_text(json.dumps({"phi": v}))
    assert main(["gci", str(root)]) == 0
    out = capsys.readouterr().out
    assert "UNRELIABLE (oscillatory convergence)" in out
    assert "fine21 =" not in out and "phi_ext21 =" not in out
    assert main(["gci", str(root), "--json"]) == 0
    res = json.loads(capsys.readouterr().out)["quantities"]["phi"]["results"][0]
    assert res["reliable"] is False and res["gci_fine21"] is not None  # the raw number stays in JSON


def write_wall(path, x, **columns):
    with path.open("w", newline="") as f:
        w = csv.writer(f)
        w.writerow(["x", *columns])
        w.writerows(zip(x, *columns.values()))


def wall_family(tmp_path):
    """Each level's cf(x) = exact + 2 h^2 (1 + x/L), and (-1)^k 0.01 (x/L - 0.7) beyond x/L = 0.7:
    piecewise linear in x, so linear interpolation to the stations is exact; every level has
    its own stations (and a node at the kink)."""
    root = make_family(tmp_path / "fam", levels=3)
    for k in range(3):
        s = np.union1d(np.linspace(0.0, 1.0, 21 + 8 * k), [0.7])
        exact = 0.002 + 0.001 * s
        cf = exact + 2 * H[k] ** 2 * (1 + s) + np.where(s > 0.7, (-1) ** k * 0.01 * (s - 0.7), 0.0)
        write_wall(root / f"level-{k}" / "wall.csv", s * L, cf=cf, tau_w=0.5 * cf)
    return root


def test_wall_gci_per_station(tmp_path, capsys):
    root = wall_family(tmp_path)
    res = wall_study(root, "wall.csv", parse_stations("0.1:0.9:0.1"), ["cf"])
    rows = res["quantities"]["cf"]
    for r in rows:
        s = r["x_over_L"]
        if s <= 0.7:
            assert r["kind"] == "monotonic" and r["reliable"]
            assert r["phi_ext"] == pytest.approx(0.002 + 0.001 * s, rel=1e-9)  # the exact limit
            assert r["p"] == pytest.approx(2.0, rel=1e-9)
        else:
            assert r["kind"] == "oscillatory" and not r["reliable"]
    assert main(["gci", str(root), "--wall", "wall.csv", "--stations", "0.1:0.9:0.1"]) == 0
    out = capsys.readouterr().out
    assert out.count("OSCILLATORY*") == 4 and "oscillatory at x/L = 0.8, 0.9" in out  # both quantities
    table = list(csv.DictReader((root / "gci-wall-wall.csv").open()))
    assert len(table) == 18 and {r["quantity"] for r in table} == {"cf", "tau_w"}
    osc = [r for r in table if r["kind"] == "oscillatory"]
    assert len(osc) == 4 and all(r["gci_fine"] == "" and r["reliable"] == "false" for r in osc)
    assert (root / "gci-wall-wall.png").read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"


def test_wall_stations_outside_a_level_are_refused(tmp_path):
    root = wall_family(tmp_path)
    s = np.linspace(0.2, 1.0, 9)
    write_wall(root / "level-1" / "wall.csv", s * L, cf=s, tau_w=s)
    with pytest.raises(InputError, match="level-1.*covers x/L = 0.2 to 1"):
        wall_study(root, "wall.csv", parse_stations("0.1,0.5"))
    for bad in ("0,0.5", "0.5:0.1:0.1", "a,b", "1.5"):
        with pytest.raises(InputError, match="--stations"):
            parse_stations(bad)


@pytest.mark.parametrize("q", [0.7, 1.0, 2.3])
def test_domain_fit_recovers_phi_inf_and_q(q):
    hs = np.array([10.0, 15.0, 20.0, 30.0, 40.0])
    fit = fit_power_law(hs, 0.0042 + 0.003 * hs**-q)
    assert fit["phi_inf"] == pytest.approx(0.0042, rel=1e-7) and fit["q"] == pytest.approx(q, rel=1e-6)
    assert fit["a"] == pytest.approx(0.003, rel=1e-5) and fit["reliable"]
    given = fit_power_law(hs[:2], (0.0042 + 0.003 * hs**-q)[:2], q)  # q given: two variants suffice
    assert given["phi_inf"] == pytest.approx(0.0042, rel=1e-10)


def test_domain_fit_without_decay_is_unreliable():
    fit = fit_power_law([10.0, 15.0, 20.0], [1.0, 1.2, 1.1])  # not monotone: no power law
    assert not fit["reliable"]


def test_domain_sweep_dir(tmp_path, capsys):
    root = tmp_path / "sweep"
    variants = []
    for hf in (10, 15, 20, 40):
        name = f"height_factor={hf}"
        (root / name).mkdir(parents=True)
        (root / name / "results.json").write_text(json.dumps({"cf_mid": 0.003 + 0.002 * hf**-1.2}))
        variants.append({"name": name, "values": {"domain.height_factor": hf}})
    (root / "sweep.json").write_text(json.dumps({"kind": "sweep", "variants": variants}))
    assert main(["domain", str(root), "--json"]) == 0
    summary = json.loads(capsys.readouterr().out)
    fit = summary["quantities"]["cf_mid"]["fit"]
    assert fit["phi_inf"] == pytest.approx(0.003, rel=1e-7) and fit["q"] == pytest.approx(1.2, rel=1e-6)
    assert main(["domain", str(root), "--plot", str(tmp_path / "d.png"), "--fit-order", "1.2"]) == 0
    out = capsys.readouterr().out
    assert "phi_inf = 0.003," in out and "(given)" in out and "domain.height_factor = 10: +4.21 %" in out
    assert (tmp_path / "d.png").stat().st_size > 1000
