"""The case: validated parameters of one mesh (pydantic v2).

A case file is TOML with the sections ``[flow]``, ``[wall]``, ``[domain]``,
``[streamwise]``, ``[names]`` and ``[output]`` and a top-level ``name``. Every field has a
range; errors name the field, the value and what is valid. ``load_case`` merges, in order,
the embedded default case, the file and the ``--set section.key=value`` overrides.

Lengths in the domain and streamwise sections are in plate lengths L; ``wall.max_spacing``
is in units of delta99 at the plate end.
"""

from __future__ import annotations

import difflib
import math
import tomllib
from pathlib import Path
from typing import Any, Literal

from pydantic import BaseModel, ConfigDict, Field, ValidationError, model_validator

from .boundary_layer import CORRELATIONS
from .errors import CaseError


class Section(BaseModel):
    model_config = ConfigDict(extra="forbid", frozen=True, allow_inf_nan=False)


class Flow(Section):
    """Free stream: either a Reynolds number with a plate length, or velocity + length
    + a kinematic viscosity or a fluid by name (with temperature and pressure)."""

    reynolds: float | None = Field(None, gt=0, le=1e11, description="Re_L = U L / nu [-]")
    length: float = Field(1.0, gt=0, le=1e4, description="plate length L [m]")
    velocity: float | None = Field(None, gt=0, le=1e4, description="free-stream speed U [m/s]")
    nu: float | None = Field(None, gt=0, le=1.0, description="kinematic viscosity [m2/s]")
    fluid: str | None = Field(None, min_length=1, description="CoolProp fluid name, e.g. 'Air', 'Water'")
    temperature: float = Field(288.15, gt=0, le=5000, description="fluid temperature [K]")
    pressure: float = Field(101325.0, gt=0, le=1e9, description="fluid pressure [Pa]")
    density: float | None = Field(None, gt=0, le=1e5, description="density [kg/m3] (sheet only)")
    regime: Literal["auto", "laminar", "turbulent"] = "auto"
    correlation: str | None = Field(None, description="skin-friction correlation name")
    turbulence_intensity: float = Field(0.001, ge=0, le=0.5, description="free-stream Tu [-]")
    viscosity_ratio: float = Field(1.0, gt=0, le=1e5, description="nu_t / nu in the free stream [-]")

    @model_validator(mode="after")
    def _one_way_to_the_reynolds_number(self) -> Flow:
        problems = []
        if self.reynolds is not None:
            if self.velocity is not None and (self.nu is not None or self.fluid is not None):
                problems.append(
                    "flow: reynolds and velocity with nu or fluid over-determine the flow; "
                    "give reynolds (+ length, optionally velocity or nu/fluid) or velocity + nu/fluid"
                )
        else:
            if self.velocity is None:
                problems.append("flow: give either flow.reynolds, or flow.velocity with flow.nu or flow.fluid")
            elif self.nu is None and self.fluid is None:
                problems.append("flow: flow.velocity needs flow.nu or flow.fluid (or give flow.reynolds)")
        if self.nu is not None and self.fluid is not None:
            problems.append(f"flow: both nu = {self.nu} and fluid = {self.fluid!r} given; give one")
        if self.correlation is not None and self.correlation not in CORRELATIONS:
            problems.append(
                f"flow.correlation: unknown {self.correlation!r}; valid: {', '.join(CORRELATIONS)}"
            )
        if problems:
            raise ValueError("\n".join(problems))
        return self


class Wall(Section):
    """Wall-normal distribution: any two of (first spacing, growth ratio, cells)."""

    y_plus: float = Field(1.0, gt=0, le=1000, description="target y+ of the first cell [-]")
    first_cell_height: float | None = Field(None, gt=0, description="first-cell height [m] (instead of y_plus)")
    growth_ratio: float = Field(1.1, ge=1.0, le=2.0, description="wall-normal growth ratio [-]")
    cells: int | None = Field(None, ge=2, le=100000, description="wall-normal cell count")
    max_spacing: float = Field(0.5, gt=0, le=100, description="cap on the wall-normal spacing [delta99(L)]")
    reference_station: float = Field(1.0, gt=0, le=1.0, description="x_ref / L where y+ is targeted")

    @model_validator(mode="after")
    def _two_of_three(self) -> Wall:
        given = self.model_fields_set
        if self.first_cell_height is not None and "y_plus" in given:
            raise ValueError("wall: give wall.y_plus or wall.first_cell_height, not both")
        spacing = self.first_cell_height is not None or "y_plus" in given
        if spacing and "growth_ratio" in given and self.cells is not None:
            raise ValueError(
                "wall: first spacing (y_plus or first_cell_height), growth_ratio and cells "
                "over-determine the wall-normal distribution; give two of the three"
            )
        return self


class Domain(Section):
    height_factor: float = Field(10.0, ge=1.0, le=1000, description="H / delta99(L) [-]")
    upstream: float = Field(0.5, ge=0, le=100, description="upstream block length [L]")
    downstream: float = Field(0.5, ge=0, le=100, description="wake block length [L]")
    span: float = Field(0.0, ge=0, le=100, description="spanwise extent [L]; 0 = 2-D")
    span_cells: int = Field(1, ge=1, le=10000, description="spanwise cell count")


class Streamwise(Section):
    leading_edge_spacing: float = Field(1e-3, gt=0, le=0.5, description="first spacing at x = 0 [L]")
    trailing_edge_spacing: float = Field(5e-3, gt=0, le=0.5, description="spacing at x = L [L]")
    growth_ratio: float = Field(1.1, ge=1.0, le=2.0, description="streamwise growth ratio [-]")
    max_spacing: float = Field(0.02, gt=0, le=1.0, description="cap on the plate [L]")
    far_spacing: float = Field(0.1, gt=0, le=10.0, description="cap in the upstream and wake blocks [L]")
    cells: int | None = Field(None, ge=2, le=1_000_000, description="plate cells (solves the plate's ratio)")

    @model_validator(mode="after")
    def _two_of_three(self) -> Streamwise:
        if self.cells is not None and "growth_ratio" in self.model_fields_set:
            raise ValueError(
                "streamwise: leading/trailing-edge spacing, growth_ratio and cells over-determine "
                "the plate distribution; with streamwise.cells the plate's ratio is solved "
                "(growth_ratio then applies to the upstream and wake blocks only if given without cells)"
            )
        return self


class Names(Section):
    """Boundary group names (renamable); the roles stay the same."""

    inlet: str = Field("inlet", pattern=r"^[A-Za-z_][A-Za-z0-9_]{0,63}$")
    outlet: str = Field("outlet", pattern=r"^[A-Za-z_][A-Za-z0-9_]{0,63}$")
    wall: str = Field("wall", pattern=r"^[A-Za-z_][A-Za-z0-9_]{0,63}$")
    farfield: str = Field("farfield", pattern=r"^[A-Za-z_][A-Za-z0-9_]{0,63}$")
    symmetry: str = Field("symmetry", pattern=r"^[A-Za-z_][A-Za-z0-9_]{0,63}$")
    front: str = Field("front", pattern=r"^[A-Za-z_][A-Za-z0-9_]{0,63}$")
    back: str = Field("back", pattern=r"^[A-Za-z_][A-Za-z0-9_]{0,63}$")
    fluid: str = Field("fluid", pattern=r"^[A-Za-z_][A-Za-z0-9_]{0,63}$")

    @model_validator(mode="after")
    def _distinct(self) -> Names:
        values = list(self.model_dump().values())
        if len(set(values)) != len(values):
            raise ValueError(f"names: group names must differ, got {values}")
        return self


class Output(Section):
    formats: list[str] = Field(default_factory=lambda: ["msh", "vtu"], min_length=1)
    max_cells: int = Field(20_000_000, ge=1, le=500_000_000, description="refuse plans above this")


class Case(Section):
    name: str = Field("case", pattern=r"^[A-Za-z0-9_.-]{1,64}$", description="case name (output folder)")
    flow: Flow
    wall: Wall = Wall()
    domain: Domain = Domain()
    streamwise: Streamwise = Streamwise()
    names: Names = Names()
    output: Output = Output()


#: The embedded default case: a demo scenario of our own (a 2 m glider wing-root fairing
#: strip at 25 m/s in sea-level air, wall-resolved).
DEFAULT_CASE_TOML = """\
name = "fairing-strip"

[flow]
velocity = 25.0          # m/s
length = 2.0             # m
fluid = "Air"
temperature = 288.15     # K
pressure = 101325.0      # Pa
regime = "auto"
turbulence_intensity = 0.002
viscosity_ratio = 1.0

[wall]
y_plus = 1.0
growth_ratio = 1.12

[domain]
height_factor = 10.0
upstream = 0.5
downstream = 0.5
"""

SECTIONS = {
    "flow": Flow, "wall": Wall, "domain": Domain, "streamwise": Streamwise,
    "names": Names, "output": Output,
}


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
        if key == "name":
            data["name"] = raw.strip()
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
        shown = "" if isinstance(given, dict) else f" = {given!r}"
        lines.append(f"{where}{shown}: {err['msg']}")
    return lines


def parse_case(data: dict[str, Any]) -> Case:
    try:
        return Case.model_validate(data)
    except ValidationError as exc:
        raise CaseError(_format_errors(exc, data)) from None


def load_case(path: str | Path | None = None, overrides: list[str] | None = None) -> Case:
    """Case from a TOML file (or the embedded default when ``path`` is None) + overrides.

    A case file holds the whole case: its own values replace the default's; only the
    embedded default fills fields it leaves out, as the model's own defaults.
    """
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
