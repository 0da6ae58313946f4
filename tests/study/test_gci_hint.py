"""gci on a CSV with only 'cells' names the options that supply the domain size."""

from meshgen.cli import main


def test_cells_only_csv_names_area_and_volume(tmp_path, capsys):
    csv = tmp_path / "r.csv"
    csv.write_text("mesh,cells,cd\na,1000,0.1\nb,4000,0.11\nc,16000,0.112\n")
    assert main(["gci", str(csv)]) == 2
    err = capsys.readouterr().err
    # the options that exist (meshgen gci --help), not a "dimension" nobody can give
    assert "--area" in err and "--volume" in err and "--manifest" in err
