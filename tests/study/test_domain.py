"""Domain independence (meshgen.study.domain, domain_report, ``meshgen domain``).

The relative changes are checked on hand-computed numbers, the key values looked up in
sweep.json against the meshes of a real ``meshgen sweep`` read back with meshio (an
independent reader), and the picture with PIL (an independent PNG reader).
"""

from __future__ import annotations

import json
from pathlib import Path

import meshio
import numpy as np
import pytest

from meshgen.cli import main
from meshgen.core.errors import InputError
from meshgen.study.domain import domain_summary, read_sweep_results
from meshgen.study.domain_report import BAND_COLOUR, OUT_COLOUR, domain_table, plot_domain, verdict

# Hand-computed example: the reference is the largest domain (height_factor = 40, cd = 2.000);
# rel = (cd - 2.000) / 2.000.
HAND_CSV = "height_factor,cd\n10,2.050\n15,2.016\n20,1.990\n40,2.000\n"
HAND_REL = {10.0: 0.025, 15.0: 0.008, 20.0: -0.005, 40.0: 0.0}  # +2.5 %, +0.8 %, -0.5 %, 0

# The default case kept small (about 10 000 cells per variant), as a user would sweep it.
SMALL = ["--set", "streamwise.max_spacing=0.05", "--set", "streamwise.far_spacing=0.2"]
FACTORS = (10.0, 15.0, 20.0)


def write(path: Path, text: str) -> Path:
    path.parent.mkdir(parents=True, exist_ok=True)
    path.write_text(text, encoding="utf-8")
    return path


def by_key(quantity: dict, key: str) -> dict[float, dict]:
    return {v[key]: v for v in quantity["variants"]}


# --- the relative changes and the verdict -----------------------------------------------


def test_relative_changes_on_a_hand_computed_example(tmp_path):
    s = domain_summary(write(tmp_path / "r.csv", HAND_CSV), tol=0.01)
    assert s["key_column"] == "height_factor"  # found as the only sweep key among the columns
    assert s["reference"]["height_factor"] == 40.0
    cd = s["quantities"]["cd"]
    assert cd["reference_value"] == 2.0
    rel = {k: v["rel_change"] for k, v in by_key(cd, "height_factor").items()}
    assert rel == pytest.approx(HAND_REL, abs=1e-12)
    assert cd["max_abs_rel_change"] == pytest.approx(0.025, abs=1e-12)
    # hand-computed: |rel| <= 1 % for 15 (0.8 %), 20 (0.5 %) and 40; not for 10 (2.5 %)
    assert {k: v["within_tol"] for k, v in by_key(cd, "height_factor").items()} == \
        {10.0: False, 15.0: True, 20.0: True, 40.0: True}
    assert cd["within_from"] == 15.0 and cd["all_within"] is False and s["all_within"] is False


@pytest.mark.parametrize(
    ("tol", "within_from", "words"),
    [
        # every |rel| (at most 2.5 %) is within 3 %: the smallest domain tried is enough
        (0.03, 10.0, ["domain-independent within 3 %", "height_factor = 10) is large enough"]),
        # 2.5 % at 10 is outside 1 %, 0.8 % at 15 and 0.5 % at 20 are inside
        (0.01, 15.0, ["from height_factor = 15 up", "cd changes by +2.5 % at height_factor = 10"]),
        # 0.5 % at 20, the next smaller domain, is outside 0.4 %: nothing is shown
        (0.004, 40.0, ["not shown domain-independent", "-0.5 % at height_factor = 20", "extend the sweep"]),
    ],
)
def test_the_tolerance_decides_the_verdict(tmp_path, tol, within_from, words):
    s = domain_summary(write(tmp_path / "r.csv", HAND_CSV), tol=tol)
    assert s["quantities"]["cd"]["within_from"] == within_from
    assert s["all_within"] is (within_from == 10.0)
    line = verdict(s)
    assert line.startswith("verdict: ") and "\n" not in line
    for w in words:
        assert w in line, line
    table = domain_table(s)
    assert table.endswith(line) and "+2.5 %" in table and "reference" in table


def test_signs_and_quantities_are_kept_apart(tmp_path):
    # hand-computed: cf falls towards the reference (negative changes), cd rises to it
    csv = write(tmp_path / "r.csv", "upstream,cd,cf,cells\n0.5,0.99,4.2,100\n1,0.995,4.1,120\n2,1,4,140\n")
    s = domain_summary(csv)
    assert s["key_column"] == "upstream" and list(s["quantities"]) == ["cd", "cf"]  # cells is no quantity
    cf = by_key(s["quantities"]["cf"], "upstream")
    assert cf[0.5]["rel_change"] == pytest.approx(0.05, abs=1e-12)  # (4.2 - 4) / 4
    assert cf[1.0]["rel_change"] == pytest.approx(0.025, abs=1e-12)  # (4.1 - 4) / 4
    cd = by_key(s["quantities"]["cd"], "upstream")
    assert cd[0.5]["rel_change"] == pytest.approx(-0.01, abs=1e-12)  # (0.99 - 1) / 1
    assert "upstream (upstream length / L)" in domain_table(s)


# --- key values from sweep.json -----------------------------------------------------------


@pytest.fixture(scope="module")
def real_sweep(tmp_path_factory):
    out = tmp_path_factory.mktemp("domain") / "sweep"
    argv = ["sweep", *SMALL, "--vary", "domain.height_factor=10,15,20", "--format", "msh", "-o", str(out)]
    assert main(argv) == 0
    return out


def test_key_values_come_from_the_sweep_manifest(real_sweep, capsys):
    # Folder names as sweep.py documents them (key without "domain.", value); rows shuffled
    # and the quantity set to the factor itself, so a wrong lookup shows in every row.
    csv = write(real_sweep / "results.csv",
                "variant,phi\nheight_factor=15,15\nheight_factor=20,20\nheight_factor=10,10\n")
    res = read_sweep_results(csv)
    assert res.key == "domain.height_factor" and res.manifest == real_sweep / "sweep.json"
    assert [r[res.key] for r in res.rows] == [r["phi"] for r in res.rows]
    s = domain_summary(csv)
    assert s["reference"] == {"domain.height_factor": 20.0, "name": "height_factor=20"}
    phi = by_key(s["quantities"]["phi"], "domain.height_factor")
    assert {k: v["rel_change"] for k, v in phi.items()} == \
        pytest.approx({10.0: -0.5, 15.0: -0.25, 20.0: 0.0}, abs=1e-12)  # (k - 20) / 20
    # The meshes themselves, read with meshio: the top sits at H = height_factor * delta99(L),
    # so H / height_factor is one length for every variant.
    tops = {}
    for name, v in phi.items():
        (mesh,) = (real_sweep / v["name"]).glob("*.msh")
        tops[name] = meshio.read(mesh, file_format="gmsh").points[:, 1].max()
    per_factor = np.array([tops[k] / k for k in FACTORS])
    np.testing.assert_allclose(per_factor, per_factor[0], rtol=1e-9)
    # the command line, the manifest named explicitly and the CSV elsewhere
    elsewhere = write(real_sweep.parent / "collected" / "r.csv", csv.read_text())
    assert main(["domain", str(elsewhere), "--manifest", str(real_sweep / "sweep.json"),
                 "--key", "height_factor", "--json"]) == 0
    data = json.loads(capsys.readouterr().out)
    assert data["key_column"] == "domain.height_factor" and data["all_within"] is False
    assert data["verdict"].startswith("verdict: not shown domain-independent")


def test_one_key_at_a_time(tmp_path):
    # A two-key sweep's manifest, written by hand with sweep.json's fields (sweep.py).
    names = {(h, u): f"height_factor={h:g}_upstream={u:g}" for h in (10, 20) for u in (0.5, 1)}
    variants = [{"name": n, "values": {"domain.height_factor": float(h), "domain.upstream": u}}
                for (h, u), n in names.items()]
    write(tmp_path / "sweep.json", json.dumps({"kind": "sweep", "variants": variants}))
    rows = "".join(f"{n},{1 + h / 1000 + u / 100}\n" for (h, u), n in names.items())
    full = write(tmp_path / "all.csv", "variant,cd\n" + rows)
    with pytest.raises(InputError, match="several keys"):
        domain_summary(full)
    with pytest.raises(InputError, match="domain.upstream takes 2 values"):
        domain_summary(full, key="height_factor")
    # one slice: upstream held at 1, so only the height moves
    part = write(tmp_path / "slice.csv",
                 "variant,cd\n" + "".join(f"{names[(h, 1)]},{1 + h / 1000}\n" for h in (10, 20)))
    s = domain_summary(part)
    assert s["key_column"] == "domain.height_factor" and s["held"] == {"domain.upstream": 1.0}
    # hand-computed: (1.010 - 1.020) / 1.020
    assert by_key(s["quantities"]["cd"], "domain.height_factor")[10.0]["rel_change"] == \
        pytest.approx(-0.01 / 1.02, abs=1e-12)
    assert "other keys held at domain.upstream = 1" in domain_table(s)


# --- bad input: exit 2, one line per problem, nothing written -----------------------------

MANIFEST = json.dumps({"kind": "sweep", "variants": [
    {"name": "height_factor=10", "values": {"domain.height_factor": 10.0}},
    {"name": "height_factor=20", "values": {"domain.height_factor": 20.0}}]})
FAMILY = json.dumps({"kind": "family", "levels": [{"name": "level-0", "cells": 10, "h": 0.1}]})
GOOD = "height_factor,cd\n10,1.02\n20,1\n"


@pytest.mark.parametrize(
    ("files", "argv", "expected"),
    [
        ({}, ["none.csv"], "no such file"),
        ({"r.csv": "cd,cf\n1,2\n3,4\n"}, ["r.csv"], "no column sizes the domain"),
        ({"r.csv": GOOD}, ["r.csv", "--key", "upstream"], "--key upstream: no such column"),
        ({"r.csv": "top,cd\nlow,1\nhigh,2\n"}, ["r.csv", "--key", "top"], "holds text"),
        ({"r.csv": "height_factor,cd\n10,1\n20,abc\n"}, ["r.csv"], "line 3, column 'cd'"),
        ({"r.csv": "height_factor,cd\n10,1\n"}, ["r.csv"], "at least 2"),
        ({"r.csv": "height_factor,note\n10,a\n20,b\n"}, ["r.csv"], "no quantity column"),
        ({"r.csv": "height_factor,cd\n10,1\n20,0\n"}, ["r.csv"], "0 on the reference variant"),
        ({"r.csv": "height_factor,cd\n10,1\n10,2\n20,1\n"}, ["r.csv"], "lines 2 and 3: the same height_factor"),
        ({"r.csv": GOOD}, ["r.csv", "--tol", "0"], "--tol 0.0"),
        ({"r.csv": GOOD}, ["r.csv", "--tol", "5"], "below 1"),
        ({"r.csv": GOOD}, ["r.csv", "--tol", "one"], "invalid float"),
        ({"r.csv": GOOD}, ["r.csv", "--plot", "p.svg"], "ending in .png"),
        ({"r.csv": GOOD, "f": "x"}, ["r.csv", "--plot", "f/p.png"], "is a file"),
        ({"r.csv": GOOD, "sweep.json": MANIFEST}, ["r.csv", "--manifest", "sweep.json"], "not used"),
        ({"r.csv": "variant,cd\nheight_factor=10,1\nheight_factor=20,2\n"}, ["r.csv"], "no sweep.json beside"),
        ({"r.csv": "variant,cd\nheight_factor=10,1\nheight_factr=20,2\n", "sweep.json": MANIFEST}, ["r.csv"],
         "did you mean 'height_factor=20'"),
        ({"r.csv": "variant,cd\nheight_factor=10,1\nheight_factor=10,2\n", "sweep.json": MANIFEST}, ["r.csv"],
         "given twice"),
        ({"r.csv": "variant,cd\n1,1\n2,2\n", "sweep.json": MANIFEST}, ["r.csv"], "holds numbers"),
        ({"r.csv": "variant,cd\nlevel-0,1\nlevel-1,2\n", "family.json": FAMILY},
         ["r.csv", "--manifest", "family.json"], "not a sweep manifest"),
        ({"r.csv": "variant,cd\nheight_factor=10,1\nheight_factor=20,2\n", "sweep.json": "{broken"}, ["r.csv"],
         "not a readable JSON manifest"),
        ({"r.csv": "variant,cd\nheight_factor=10,1\nheight_factor=20,2\n", "sweep.json": MANIFEST},
         ["r.csv", "--key", "span"], "neither a CSV column nor a key of the sweep"),
        # issue 11, item 12: a key column that contradicts the variant (before: the column won)
        ({"r.csv": "variant,height_factor,cd\nheight_factor=10,20,1\nheight_factor=20,10,2\n",
          "sweep.json": MANIFEST}, ["r.csv"], "line 2: height_factor = 20 but variant 'height_factor=10'"),
        ({"r.csv": "variant,height_factor,cd\nheight_factor=10,10,1\nheight_factor=20,15,2\n"}, ["r.csv"],
         "line 3: height_factor = 15 but variant 'height_factor=20' has height_factor = 20"),
    ],
)
def test_bad_input_is_exit_2(tmp_path, monkeypatch, capsys, files, argv, expected):
    monkeypatch.chdir(tmp_path)
    for name, text in files.items():
        write(Path(name), text)
    before = sorted(tmp_path.rglob("*"))
    assert main(["domain", *argv, "--plot", "out.png"] if "--plot" not in argv else ["domain", *argv]) == 2
    err = capsys.readouterr().err
    lines = [ln for ln in err.splitlines() if ln.strip()]
    assert lines and all(ln.startswith("error: ") for ln in lines), err
    assert expected in err, err
    assert "Traceback" not in err
    assert sorted(tmp_path.rglob("*")) == before  # nothing written, not even the picture


def test_every_problem_on_its_own_line(tmp_path, capsys):
    csv = write(tmp_path / "r.csv", "height_factor,cd,cf\n10,x,1\n20,2,y\n")
    assert main(["domain", str(csv)]) == 2
    lines = capsys.readouterr().err.splitlines()
    assert len(lines) == 2 and "line 2, column 'cd'" in lines[0] and "line 3, column 'cf'" in lines[1]


# --- the picture --------------------------------------------------------------------------


def _rgb(hex_colour: str) -> np.ndarray:
    return np.array([int(hex_colour[i : i + 2], 16) for i in (1, 3, 5)], dtype=float)


def test_plot_is_a_readable_png(tmp_path, capsys):
    from PIL import Image  # an independent PNG reader

    csv = write(tmp_path / "r.csv", "height_factor,cd,cf\n10,2.050,1.0\n15,2.016,1.0\n20,1.990,1.0\n40,2.000,1.0\n")
    out = tmp_path / "pics" / "domain.png"
    assert main(["domain", str(csv), "--plot", str(out)]) == 0
    assert f"wrote {out}" in capsys.readouterr().err
    data = out.read_bytes()
    assert data[:8] == b"\x89PNG\r\n\x1a\n"  # PNG signature (ISO/IEC 15948)
    assert [p.name for p in out.parent.iterdir()] == ["domain.png"]  # no temporary file left
    with Image.open(out) as img:
        img.verify()
    with Image.open(out) as img:
        assert img.height > img.width  # two quantities, one subplot each, stacked
        rgb = np.asarray(img.convert("RGB")).reshape(-1, 3).astype(float)
    # The tolerance band is drawn with alpha 0.45 over white (domain_report); its blended
    # colour must cover a good part of the picture.
    band = 255 - 0.45 * (255 - _rgb(BAND_COLOUR))
    assert np.count_nonzero(np.all(np.abs(rgb - band) <= 2, axis=1)) > 20_000
    # cd at height_factor = 10 is outside 1 %: its marker is drawn in the outside colour
    assert np.count_nonzero(np.all(np.abs(rgb - _rgb(OUT_COLOUR)) <= 2, axis=1)) > 20


def test_plot_domain_writes_atomically_where_asked(tmp_path):
    s = domain_summary(write(tmp_path / "r.csv", HAND_CSV))
    out = plot_domain(s, tmp_path / "a" / "b.png")
    assert out == tmp_path / "a" / "b.png" and out.stat().st_size > 10_000


def test_a_key_column_that_agrees_with_its_variants_is_used(tmp_path, capsys):
    write(tmp_path / "r.csv", "variant,height_factor,cd\nheight_factor=10,10,1\nheight_factor=20,20,1.004\n")
    assert main(["domain", str(tmp_path / "r.csv"), "--json"]) == 0
    assert json.loads(capsys.readouterr().out)["all_within"] is True


@pytest.mark.filterwarnings("error::RuntimeWarning")
def test_keys_far_apart_give_a_summary_without_overflow(tmp_path, capsys):
    """Keys from 1e-90 to 1e90: H^-q leaves the float range for most q; those are skipped."""
    write(tmp_path / "r.csv", "height_factor,cd\n1e-90,1\n20,1.7\n1e90,1.2\n")
    assert main(["domain", str(tmp_path / "r.csv"), "--json"]) == 0
    def refuse(c):
        raise ValueError(c)
    data = json.loads(capsys.readouterr().out, parse_constant=refuse)
    assert data["all_within"] is False
