"""report.md's picture links resolve from the folder the report is in (issue 11, item 6).

Before: a default build (outputs/<case>/) linked ``outputs/<case>/mesh.png`` from inside
``outputs/<case>/report.md``, so no picture showed; ``inspect --pictures DIR`` printed
bare file names.
"""

import re

from meshgen.cli import main

RE = ["--set", "flow.fluid=", "--set", "flow.velocity=", "--set", "flow.reynolds=1e5"]


def _links(markdown: str) -> list[str]:
    return re.findall(r"!\[[^\]]*\]\(([^)]+)\)", markdown)


def test_a_default_build_links_its_pictures_from_its_own_folder(tmp_path, monkeypatch):
    monkeypatch.chdir(tmp_path)
    assert main(["build", *RE, "--format", "su2"]) == 0  # into outputs/fairing-strip/
    report = tmp_path / "outputs" / "fairing-strip" / "report.md"
    links = _links(report.read_text())
    assert sorted(links) == ["mesh.png", "spacing.png", "y_plus.png"]
    assert all((report.parent / link).is_file() for link in links)


def test_inspect_links_its_pictures_from_the_current_folder(tmp_path, monkeypatch, capsys):
    assert main(["build", *RE, "--format", "su2", "--no-pictures", "-o", str(tmp_path / "m")]) == 0
    monkeypatch.chdir(tmp_path)
    capsys.readouterr()
    assert main(["inspect", "m/fairing-strip.su2", "--pictures", "pics"]) == 0
    links = _links(capsys.readouterr().out)
    assert sorted(links) == ["pics/mesh.png", "pics/spacing.png"]
    assert all((tmp_path / link).is_file() for link in links)
