"""One command-line convention: global options anywhere, comma lists, --json = one object on
stdout, the output rule in --help, init's default case, whole-sentence template summaries,
real limits in the help, a progress bar only on a terminal, build naming its folder.
"""

from __future__ import annotations

import json
import os
import pty
import select
import subprocess
import sys
import tomllib

import pytest

from meshgen.case import DEFAULT_CASE_TOML, TEMPLATES_DIR, load_case
from meshgen.cli import main
from meshgen.cli.main import _parser, _template_summary

FAST = ["--set", "flow.fluid=", "--set", "flow.nu=1.5e-5"]  # no CoolProp: a quick build


@pytest.mark.parametrize("argv", [["--quiet", "--verbose", "plan"], ["plan", "--quiet", "--verbose"],
                                  ["--quiet", "plan", "--verbose"]])
def test_global_options_before_or_after_the_command(argv):
    args = _parser().parse_args(argv)
    assert args.quiet and args.verbose and args.command == "plan"


def test_global_options_default_off_and_every_command_has_them():
    args = _parser().parse_args(["plan"])
    assert not args.quiet and not args.verbose
    for command in ("build", "family", "sweep", "gci", "domain", "inspect", "init", "formats"):
        assert "--quiet" in _parser()._subparsers._group_actions[0].choices[command].format_help()


@pytest.mark.parametrize("command", [["build"], ["family", "--levels", "2", "--ratio", "2"],
                                     ["sweep", "--vary", "domain.height_factor=10,20"]])
def test_list_options_take_comma_lists(command):
    args = _parser().parse_args([*command, "--format", "msh,su2", "--format", "vtu"])
    assert args.formats == ["msh", "su2", "vtu"]


def test_an_empty_item_in_a_comma_list_is_bad_input(capsys):
    assert main(["build", "--format", "msh,,su2"]) == 2
    assert "empty item" in capsys.readouterr().err


def test_help_states_the_output_rule_and_real_limits(capsys):
    assert main(["--help"]) == 0
    out = capsys.readouterr().out
    assert "-o/--output names what a command writes" in out and "--plot FILE.png" in out
    assert main(["family", "--help"]) == 0
    assert "2 to 12" in capsys.readouterr().out


def one_json_object(text: str) -> dict:
    data = json.loads(text)  # raises if anything else is on stdout
    assert isinstance(data, dict)
    return data


def test_build_json_and_the_folder_it_names(tmp_path, capsys):
    out = tmp_path / "b"
    assert main(["build", "-o", str(out), "--no-pictures", "--format", "polymesh,msh", "--json", *FAST]) == 0
    captured = capsys.readouterr()
    data = one_json_object(captured.out)
    assert data["folder"] == str(out) and str(out / "plan.json") in data["files"]
    # the polyMesh is written first; the folder is still the build's own, not <dir>/constant
    assert main(["build", "-o", str(out), "--no-pictures", "--format", "polymesh", "--force", *FAST]) == 0
    assert capsys.readouterr().out.splitlines()[0].endswith(f"files to {out}:")


def test_quiet_and_non_terminal_builds_print_no_progress(tmp_path, capsys):
    assert main(["build", "-o", str(tmp_path / "q"), "--no-pictures", "--quiet", *FAST]) == 0
    err = capsys.readouterr().err
    assert "writing" not in err and "\r" not in err and "\x1b[" not in err
    assert main(["build", "-o", str(tmp_path / "n"), "--no-pictures", *FAST]) == 0
    err = capsys.readouterr().err
    assert "writing msh" in err and "\x1b[" not in err  # stage lines, no bar: stdout is not a terminal


def test_family_and_sweep_json(tmp_path, capsys):
    case = [*FAST, "--set", "flow.velocity=", "--set", "flow.reynolds=1e5", "--workers", "1"]
    assert main(["family", "--levels", "2", "--ratio", "2", "-o", str(tmp_path / "f"), "--json", *case]) == 0
    data = one_json_object(capsys.readouterr().out)
    assert data["command"] == "family" and data["built"] == ["level-0", "level-1"]
    assert main(["sweep", "--vary", "domain.height_factor=10,12", "-o", str(tmp_path / "s"), "--json", *case]) == 0
    data = one_json_object(capsys.readouterr().out)
    assert data["command"] == "sweep" and len(data["built"]) == 2


def test_formats_json(capsys):
    assert main(["formats", "--json"]) == 0
    data = one_json_object(capsys.readouterr().out)
    assert data["cgns-single"]["outputs"] == ["<name>.single.cgns"] and data["foam-setup"]["setup"] is True


def test_init_exports_the_default_case(tmp_path, capsys):
    target = tmp_path / "d.toml"
    assert main(["init", "default", "-o", str(target)]) == 0
    assert target.read_text() == DEFAULT_CASE_TOML
    assert load_case(target) == load_case(None)
    capsys.readouterr()
    assert main(["init"]) == 0
    assert capsys.readouterr().out.startswith("default ")


@pytest.mark.parametrize("path", sorted(TEMPLATES_DIR.glob("*.toml")), ids=lambda p: p.stem)
def test_templates_are_commented_and_summarised_in_whole_sentences(path):
    text = path.read_text()
    summary = _template_summary(text)
    assert summary.endswith(".") and summary[0].isupper() and len(summary) > 40
    # like the laminar template: every key line says what it is (a comment after the value)
    keys = [line for line in text.splitlines() if "=" in line and not line.startswith("#") and
            not line.startswith("name")]
    assert all("#" in line for line in keys), [k for k in keys if "#" not in k]
    tomllib.loads(text)


def test_a_terminal_gets_a_bar_with_the_stage_and_time_left(tmp_path):
    # A real pseudo-terminal: rich draws the bar only when stdout is one.
    master, slave = pty.openpty()
    env = {**os.environ, "COLUMNS": "120"}
    proc = subprocess.Popen([sys.executable, "-m", "meshgen", "build", "-o", str(tmp_path / "t"), *FAST],
                            stdin=slave, stdout=slave, stderr=slave, close_fds=True, env=env)
    os.close(slave)
    out = b""
    while select.select([master], [], [], 120)[0]:
        try:
            chunk = os.read(master, 65536)
        except OSError:
            break
        if not chunk:
            break
        out += chunk
    proc.wait(timeout=120)
    text = out.decode(errors="replace")
    assert proc.returncode == 0, text
    # the stage on screen when rich redraws (pictures take the longest), the steps and the time left
    assert "pictures" in text and "left" in text and "/6" in text and "\x1b[" in text
