"""A table of bad inputs: each gives exit code 2, one clear line per problem, no traceback,
and leaves no file behind."""

from pathlib import Path

import pytest

from meshgen.cli import main

GOOD_CASE = 'name = "t"\n[flow]\nreynolds = 1e5\nlength = 1.0\n'

#: (id, files to create {name: text}, argv, text expected in the error)
CASES = [
    ("missing-file", {}, ["plan", "nope.toml"], "does not exist"),
    ("case-is-a-folder", {"d/x": ""}, ["plan", "d"], "is a folder"),
    ("toml-syntax", {"c.toml": 'name = "t"\n[flow\n'}, ["plan", "c.toml"], "line 2"),
    ("toml-bad-string", {"c.toml": 'name = "t\n'}, ["plan", "c.toml"], "TOML syntax error"),
    ("unknown-key", {"c.toml": GOOD_CASE + "reynlds = 3\n"}, ["plan", "c.toml"], "did you mean 'reynolds'"),
    ("unknown-section", {"c.toml": GOOD_CASE + "[wal]\ny_plus = 1\n"}, ["plan", "c.toml"], "unknown key"),
    ("unknown-set-key", {}, ["plan", "--set", "wall.y_pls=1"], "did you mean 'y_plus'"),
    ("unknown-set-section", {}, ["plan", "--set", "wll.y_plus=1"], "did you mean 'wall'"),
    ("set-without-equals", {}, ["plan", "--set", "wall.y_plus"], "expected section.key=value"),
    ("wrong-type-string", {}, ["plan", "--set", "wall.y_plus=\"one\""], "wall.y_plus"),
    ("wrong-type-list", {}, ["plan", "--set", "domain.upstream=[1, 2]"], "domain.upstream"),
    ("wrong-type-in-file", {"c.toml": GOOD_CASE + "[wall]\ncells = 2.5\n"}, ["plan", "c.toml"], "wall.cells"),
    ("nan", {}, ["plan", "--set", "wall.y_plus=nan"], "finite"),
    ("infinity", {}, ["plan", "--set", "flow.length=inf"], "finite"),
    ("negative-reynolds", {"c.toml": 'name="t"\n[flow]\nreynolds = -1e5\n'}, ["plan", "c.toml"], "flow.reynolds"),
    ("zero-reynolds", {"c.toml": 'name="t"\n[flow]\nreynolds = 0\n'}, ["plan", "c.toml"], "flow.reynolds"),
    ("ratio-below-one", {}, ["plan", "--set", "wall.growth_ratio=0.9"], "wall.growth_ratio"),
    ("ratio-absurd", {}, ["plan", "--set", "wall.growth_ratio=50"], "wall.growth_ratio"),
    ("streamwise-ratio-below-one", {}, ["plan", "--set", "streamwise.growth_ratio=0.5"], "streamwise.growth_ratio"),
    ("y-plus-zero", {}, ["plan", "--set", "wall.y_plus=0"], "wall.y_plus"),
    ("y-plus-negative", {}, ["plan", "--set", "wall.y_plus=-1"], "wall.y_plus"),
    ("first-cell-taller-than-domain", {}, ["plan", "--set", "wall.y_plus=1000", "--set", "flow.velocity=0.05"],
     "not smaller than the domain height"),
    ("first-cell-height-taller", {}, ["plan", "--set", "wall.y_plus=", "--set", "wall.first_cell_height=5.0"],
     "not smaller than the domain height"),
    ("cell-limit", {}, ["build", "--set", "output.max_cells=500"], "output.max_cells"),
    ("cell-limit-3d", {}, ["plan", "--set", "domain.span=1", "--set", "domain.span_cells=5000"], "output.max_cells"),
    ("contradictory-flow", {}, ["plan", "--set", "flow.reynolds=1e6"], "over-determine"),
    ("no-flow-at-all", {"c.toml": 'name = "t"\n[flow]\nlength = 2.0\n'}, ["plan", "c.toml"], "flow.reynolds"),
    ("velocity-without-viscosity", {"c.toml": 'name="t"\n[flow]\nvelocity = 3.0\n'}, ["plan", "c.toml"], "flow.nu"),
    ("nu-and-fluid", {}, ["plan", "--set", "flow.nu=1e-5"], "give one"),
    ("unknown-fluid", {}, ["plan", "--set", "flow.fluid=\"Unobtainium\""], "unknown fluid"),
    ("fluid-typo", {}, ["plan", "--set", "flow.fluid=\"Watr\""], "did you mean"),
    ("unknown-regime", {}, ["plan", "--set", "flow.regime=\"wavy\""], "flow.regime"),
    ("unknown-correlation", {}, ["plan", "--set", "flow.correlation=\"mine\""], "flow.correlation"),
    ("laminar-correlation-turbulent", {}, ["plan", "--set", "flow.correlation=\"blasius\""], "laminar correlation"),
    ("wall-over-determined", {}, ["plan", "--set", "wall.cells=50"], "give two of the three"),
    ("y-plus-and-height", {}, ["plan", "--set", "wall.first_cell_height=1e-5"], "not both"),
    ("upstream-shorter-than-spacing", {}, ["plan", "--set", "domain.upstream=0.0005"], "domain.upstream"),
    ("negative-span", {}, ["plan", "--set", "domain.span=-1"], "domain.span"),
    ("bad-group-name", {}, ["plan", "--set", "names.wall=\"my wall\""], "names.wall"),
    ("duplicate-group-names", {}, ["plan", "--set", "names.inlet=\"outlet\""], "must differ"),
    ("bad-case-name", {}, ["plan", "--set", "name=\"a/b\""], "name"),
    ("unknown-format", {}, ["build", "--format", "stl"], "unknown format"),
    ("unknown-format-in-case", {}, ["build", "--set", "output.formats=[\"xyz\"]"], "unknown format"),
    ("output-is-a-file", {"f": "x"}, ["build", "-o", "f"], "is a file"),
    ("output-under-a-file", {"f": "x"}, ["build", "-o", "f/sub"], "is a file"),
    ("unknown-command", {}, ["mesh-it"], "invalid choice"),
    ("unknown-option", {}, ["build", "--fast"], "unrecognized arguments"),
    ("no-command", {}, [], ""),
    ("init-unknown-template", {}, ["init", "jet-engine"], "unknown template"),
    ("init-target-exists", {"x.toml": "keep"}, ["init", "roof-panel-wind", "-o", "x.toml"], "exists"),
    ("gci-missing-file", {}, ["gci", "none.csv"], "does not exist"),
    ("gci-missing-columns", {"r.csv": "mesh,phi\na,1\nb,2\nc,3\n"}, ["gci", "r.csv"], "cells"),
    ("gci-too-few-rows", {"r.csv": "h,phi\n0.1,1.0\n"}, ["gci", "r.csv"], "row"),
    ("gci-not-numeric", {"r.csv": "h,phi\n0.1,1.0\n0.2,abc\n0.4,3\n"}, ["gci", "r.csv"], "line 3"),
    ("gci-no-quantity", {"r.csv": "h\n0.1\n0.2\n0.4\n"}, ["gci", "r.csv"], "quantity"),
    ("gci-area-and-volume", {"r.csv": "cells,phi\n100,1\n50,2\n25,3\n"},
     ["gci", "r.csv", "--area", "1", "--volume", "1"], "not both"),
    ("gci-bad-number-arg", {"r.csv": "h,phi\n0.1,1\n0.2,2\n"}, ["gci", "r.csv", "--fs", "big"], "invalid float"),
    ("family-too-few-levels-small-ratio", {}, ["family", "--levels", "1", "--ratio", "1.05"], "--ratio 1.05"),
    ("sweep-unknown-vary-key", {}, ["sweep", "--vary", "wall.y_plus=1,2"], "not a domain key"),
    ("inspect-missing-file", {}, ["inspect", "none.msh"], "does not exist"),
    # Found by a hostile run (issue 11): each was accepted, or ended in a traceback.
    ("reynolds-true", {"c.toml": 'name="t"\n[flow]\nreynolds = true\n'}, ["plan", "c.toml"],
     "flow.reynolds = true: a number is needed"),
    ("reynolds-string", {"c.toml": 'name="t"\n[flow]\nreynolds = "1e5"\n'}, ["plan", "c.toml"],
     "flow.reynolds = '1e5': a number is needed"),
    ("span-cells-true", {}, ["plan", "--set", "domain.span_cells=true"], "domain.span_cells = true"),
    ("height-factor-true", {}, ["plan", "--set", "domain.height_factor=true"], "domain.height_factor = true"),
    ("number-in-quotes", {}, ["plan", "--set", 'flow.length="2"'], "flow.length = '2'"),
    ("bare-word-for-a-number", {}, ["plan", "--set", "wall.growth_ratio=fast"], "wall.growth_ratio = 'fast'"),
    ("count-as-float", {}, ["plan", "--set", "domain.span=0.1", "--set", "domain.span_cells=2.0"],
     "domain.span_cells = 2.0: a whole number is needed"),
    ("name-dot-dot", {}, ["build", "--set", 'name=".."'], "name = '..'"),
    ("name-dot", {}, ["build", "--set", 'name="."'], "name = '.'"),
    ("name-bare-dot-dot", {}, ["build", "--set", "name=.."], "name = '..'"),
    ("name-hidden", {}, ["build", "--set", 'name=".x"'], "name = '.x'"),
    ("name-number", {"c.toml": 'name = 7\n[flow]\nreynolds = 1e5\n'}, ["plan", "c.toml"], "name = 7"),
    ("derived-reynolds-huge", {}, ["plan", "--set", "flow.fluid=", "--set", "flow.velocity=1e4",
                                   "--set", "flow.length=1e4", "--set", "flow.nu=1e-300"], "Re_L"),
    ("derived-viscosity-too-large", {}, ["plan", "--set", "flow.fluid=", "--set", "flow.reynolds=1",
                                         "--set", "flow.length=1e4"], "kinematic viscosity"),
    ("derived-velocity-too-large", {}, ["plan", "--set", "flow.fluid=", "--set", "flow.velocity=",
                                        "--set", "flow.reynolds=1e11", "--set", "flow.nu=1"], "velocity"),
    ("fluid-viscosity-out-of-range", {}, ["plan", "--set", "flow.pressure=1"], "flow.fluid"),
    ("reynolds-subnormal", {}, ["plan", "--set", "flow.fluid=", "--set", "flow.velocity=",
                                "--set", "flow.reynolds=5e-324"], "flow.reynolds"),
    ("reynolds-below-one", {}, ["plan", "--set", "flow.fluid=", "--set", "flow.velocity=",
                                "--set", "flow.reynolds=0.5"], "flow.reynolds"),
    ("huge-length", {}, ["plan", "--set", "flow.length=1e308"], "flow.length"),
    ("first-cell-subnormal", {}, ["plan", "--set", "wall.y_plus=", "--set", "wall.first_cell_height=5e-324"],
     "wall.first_cell_height"),
    ("reference-station-ahead-of-the-law", {}, ["plan", "--set", "wall.reference_station=1e-6"],
     "wall.reference_station"),
    ("reference-station-subnormal", {}, ["plan", "--set", "wall.reference_station=1e-300"],
     "wall.reference_station"),
    ("reference-station-tiny-laminar", {}, ["plan", "--set", "flow.fluid=", "--set", "flow.velocity=",
                                            "--set", "flow.reynolds=1e4", "--set", "wall.reference_station=1e-300"],
     "wall.reference_station"),
    ("gci-plot-is-a-folder", {"r.csv": "h,phi\n0.1,1.0\n0.2,1.1\n0.4,1.3\n", "d.png/x": ""},
     ["gci", "r.csv", "--plot", "d.png"], "is a folder"),
    ("gci-plot-under-a-file", {"r.csv": "h,phi\n0.1,1.0\n0.2,1.1\n0.4,1.3\n", "f": "x"},
     ["gci", "r.csv", "--plot", "f/p.png"], "is a file"),
    ("gci-plain-folder", {"d/x": ""}, ["gci", "d"], "family.json"),
    ("inspect-pictures-is-a-file", {"f": "x"}, ["inspect", "none.msh", "--pictures", "f"], "is a file"),
    ("family-warnings-are-not-printed-with-errors", {"f": "x"},
     ["family", "--levels", "2", "--ratio", "2", "--set", "domain.height_factor=5", "-o", "f"], "is a file"),
    ("sweep-warnings-are-not-printed-with-errors", {"f": "x"},
     ["sweep", "--vary", "domain.height_factor=5,6", "-o", "f"], "is a file"),
    ("domain-huge-values", {"d.csv": "height_factor,cd\n10,1e308\n20,-1e308\n40,1e308\n"},
     ["domain", "d.csv", "--json"], "'cd'"),
    ("domain-huge-key", {"d.csv": "height_factor,cd\n1e308,1\n20,1.7\n40,1.2\n"},
     ["domain", "d.csv", "--json"], "'height_factor'"),
    ("domain-variant-disagrees-with-key", {"d.csv": "variant,height_factor,cd\nheight_factor=10,20,1.0\n"
                                                    "height_factor=20,10,1.1\n"}, ["domain", "d.csv"], "variant"),
]


@pytest.mark.filterwarnings("error::RuntimeWarning")  # numpy's warnings never reach the user
@pytest.mark.parametrize("files, argv, expected", [c[1:] for c in CASES], ids=[c[0] for c in CASES])
def test_bad_input(files, argv, expected, tmp_path, monkeypatch, capsys):
    monkeypatch.chdir(tmp_path)
    for name, text in files.items():
        Path(name).parent.mkdir(parents=True, exist_ok=True)
        Path(name).write_text(text)
    before = sorted(p for p in tmp_path.rglob("*"))
    code = main(argv)
    err = capsys.readouterr().err
    assert code == 2, err
    assert "Traceback" not in err
    if expected:
        lines = [ln for ln in err.splitlines() if ln.strip()]
        assert lines and all(ln.startswith("error:") for ln in lines), err
        assert expected in err, err
    assert sorted(p for p in tmp_path.rglob("*")) == before  # nothing written


def test_the_table_is_large_enough():
    assert len(CASES) >= 40
