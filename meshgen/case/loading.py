"""Loading a case: the embedded default, TOML files, ``--set`` overrides, and writing it back.

``load_case`` merges, in order, the embedded default case, the file and the
``--set section.key=value`` overrides, then validates (model.py). ``case_to_toml`` writes a
resolved case that loads back to the same Case.
"""

from __future__ import annotations

import copy
import difflib
import math
import tomllib
from pathlib import Path
from typing import Any

from pydantic import ValidationError

from ..core.errors import CaseError
from .model import Case, Domain, Flow, Names, Output, Resolution, Streamwise, Wall

#: The starter cases that ``meshgen init`` lists and writes.
TEMPLATES_DIR = Path(__file__).parent / "templates"

#: The embedded default case: a demo scenario of our own (a 2 m glider wing-root fairing
#: strip at 25 m/s in sea-level air, wall-resolved).
DEFAULT_CASE_TOML = """\
# The embedded default case: a 2 m glider wing-root fairing strip at 25 m/s in
# sea-level air (Re_L about 3.4e6), wall-resolved (y+ = 1), with a quiet free stream.
# Edit the values, then run:  meshgen plan this-file.toml
name = "fairing-strip"

[flow]
velocity = 25.0          # free-stream speed U [m/s]
length = 2.0             # plate length L [m]
fluid = "Air"            # CoolProp fluid name
temperature = 288.15     # [K]
pressure = 101325.0      # [Pa]
regime = "auto"          # laminar | turbulent | transitional | auto (laminar below Re_L = 5e5)
turbulence_intensity = 0.0001   # free-stream Tu [-]: a quiet stream, inside the SST ranges of bc.md
viscosity_ratio = 0.01   # free-stream nu_t / nu [-]

[wall]
y_plus = 1.0             # target y+ of the first cell at the reference station
growth_ratio = 1.12      # wall-normal growth ratio

[domain]
height_factor = 10.0     # domain height H / delta99(L)
upstream = 0.5           # upstream block length [L] (symmetry below)
downstream = 0.5         # wake block length [L] (symmetry below)
"""

SECTIONS = {
    "flow": Flow, "wall": Wall, "domain": Domain, "streamwise": Streamwise,
    "names": Names, "output": Output, "resolution": Resolution,
}
#: Sections written back by ``case_to_toml`` only when the case sets one of their keys, so
#: that a case without them writes the same text as before they existed.
OPTIONAL_SECTIONS = ("resolution",)


def _did_you_mean(key: str, options: list[str]) -> str:
    close = difflib.get_close_matches(key, options, n=1)
    return f"; did you mean {close[0]!r}?" if close else f"; valid: {', '.join(options)}"


def _read_toml(text: str, source: str) -> dict[str, Any]:
    try:
        return tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        raise CaseError(f"{source}: TOML syntax error: {exc}") from None


def read_case_file(path: str | Path) -> dict[str, Any]:
    path = Path(path)
    if path.is_dir():
        raise CaseError(f"case file {str(path)!r} is a folder, not a TOML file")
    try:
        text = path.read_text(encoding="utf-8")
    except FileNotFoundError:
        raise CaseError(f"case file {str(path)!r} does not exist") from None
    except (OSError, UnicodeDecodeError) as exc:
        raise CaseError(f"case file {str(path)!r} cannot be read: {exc}") from None
    return _read_toml(text, str(path))


def _parse_value(raw: str) -> Any:
    """A --set value as TOML (numbers, booleans, strings, lists) or a bare string."""
    try:
        return tomllib.loads(f"v = {raw}")["v"]
    except tomllib.TOMLDecodeError:
        return raw


def apply_overrides(data: dict[str, Any], overrides: list[str]) -> dict[str, Any]:
    """Apply ``section.key=value`` strings to the raw case dictionary."""
    problems = []
    for item in overrides:
        key, sep, raw = item.partition("=")
        key = key.strip()
        if not sep or not key:
            problems.append(f"--set {item!r}: expected section.key=value")
            continue
        if key == "name":  # parsed like every other value: "--set name=run1" or name="run 1"
            if raw.strip():
                data["name"] = _parse_value(raw.strip())
            else:
                data.pop("name", None)
            continue
        section, dot, field = key.partition(".")
        if not dot or section not in SECTIONS:
            problems.append(
                f"--set {key}: unknown section {section!r}{_did_you_mean(section, list(SECTIONS))}"
            )
            continue
        fields = list(SECTIONS[section].model_fields)
        if field not in fields:
            problems.append(f"--set {key}: unknown key {field!r}{_did_you_mean(field, fields)}")
            continue
        if raw.strip() == "":  # "--set flow.velocity=" removes the key (back to its default)
            data.get(section, {}).pop(field, None)
        else:
            data.setdefault(section, {})[field] = _parse_value(raw.strip())
    if problems:
        raise CaseError(problems)
    return data


def _format_errors(exc: ValidationError, data: dict[str, Any]) -> list[str]:
    lines = []
    for err in exc.errors():
        loc = [str(p) for p in err["loc"]]
        where = ".".join(loc) if loc else "case"
        if err["type"] == "extra_forbidden":
            section = SECTIONS.get(loc[0]) if len(loc) == 2 else Case
            options = list(section.model_fields) if section else list(SECTIONS)
            lines.append(f"{where}: unknown key{_did_you_mean(loc[-1], options)}")
            continue
        if err["type"] == "value_error":
            lines.extend(str(err["ctx"]["error"]).splitlines())
            continue
        given = err.get("input")
        shown = "" if isinstance(given, dict) else f" = {_shown(given)}"
        lines.append(f"{where}{shown}: {_message(err)}")
    return lines


def _shown(value: Any) -> str:
    """A value as the case file spells it (``true``, not ``True``)."""
    return ("true" if value else "false") if isinstance(value, bool) else repr(value)


def _message(err: dict) -> str:
    """pydantic's message, or a plainer one for a wrong type of number (model.Real, Count)."""
    if err["type"] not in ("float_type", "int_type"):
        return err["msg"]
    needed = "a number" if err["type"] == "float_type" else "a whole number"
    given = err.get("input")
    if isinstance(given, bool):
        return f"{needed} is needed; true and false are not numbers"
    if isinstance(given, str):
        return f"{needed} is needed, not a string (write it without quotes)"
    if isinstance(given, float):
        return f"{needed} is needed, e.g. {int(given)}" if given.is_integer() else f"{needed} is needed"
    return f"{needed} is needed, not a {type(given).__name__}"


def parse_case(data: dict[str, Any]) -> Case:
    try:
        return Case.model_validate(data)
    except ValidationError as exc:
        raise CaseError(_format_errors(exc, data)) from None


def load_case(path: str | Path | dict | None = None, overrides: list[str] | None = None) -> Case:
    """Case from a TOML file, a dictionary of the same shape, or the embedded default
    (``path`` None), with ``--set`` style overrides (``"wall.y_plus=0.5"``) applied.

    A case file (or dictionary) holds the whole case: its own values replace the
    default's; only the model's own defaults fill the fields it leaves out. Raises
    CaseError listing every problem.

    >>> load_case({"flow": {"reynolds": 1e5}}).flow.length
    1.0
    """
    if isinstance(path, dict):
        data = copy.deepcopy(path)
    else:
        data = _read_toml(DEFAULT_CASE_TOML, "default case") if path is None else read_case_file(path)
    problems: list[str] = []
    for item in overrides or []:  # one at a time, so every bad override is reported
        try:
            data = apply_overrides(data, [item])
        except CaseError as exc:
            problems += exc.problems
    try:
        case = parse_case(data)
    except CaseError as exc:
        problems += exc.problems
    if problems:
        raise CaseError(problems)
    return case


def case_to_toml(case: Case) -> str:
    """The resolved case as TOML: the values that were set, and every default as a comment.

    Writing only what was set keeps the text loadable (a default y_plus beside a given
    first_cell_height would over-determine the wall) while the comments show the rest.
    """
    lines = [f'name = "{case.name}"']
    for section in SECTIONS:
        sec = getattr(case, section)
        if section in OPTIONAL_SECTIONS and not sec.model_fields_set:
            continue
        lines.append(f"\n[{section}]")
        for key, value in sec.model_dump().items():
            if value is None:
                continue
            prefix = "" if key in sec.model_fields_set else "# (default) "
            lines.append(f"{prefix}{key} = {_toml_value(value)}")
    return "\n".join(lines) + "\n"


def _toml_value(value: Any) -> str:
    if isinstance(value, bool):
        return "true" if value else "false"
    if isinstance(value, str):
        return '"' + value.replace("\\", "\\\\").replace('"', '\\"') + '"'
    if isinstance(value, float):
        return repr(value) if math.isfinite(value) else "nan"
    if isinstance(value, list):
        return "[" + ", ".join(_toml_value(v) for v in value) + "]"
    return str(value)
