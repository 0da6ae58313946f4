"""The case: validated parameters of one mesh (pydantic v2).

A case file is TOML with the sections ``[flow]``, ``[wall]``, ``[domain]``,
``[streamwise]``, ``[names]``, ``[output]`` and ``[resolution]`` and a top-level ``name``. Every field has a
range; errors name the field, the value and what is valid. Loading, overrides and the
embedded default case are in loading.py.

Lengths in the domain and streamwise sections are in plate lengths L; ``wall.max_spacing``
is in units of delta99 at the plate end.
"""

from __future__ import annotations

import re
from typing import Annotated, Literal

from pydantic import BaseModel, ConfigDict, Field, Strict, field_validator, model_validator

from ..physics.correlations import CORRELATIONS
from ..physics.resolution import KINDS

#: A number in a case: an int or a float (ints are accepted where floats are expected);
#: booleans and strings are refused. pydantic's default (lax) mode would read ``true`` as 1
#: and ``"1e5"`` as 100000.0 (../shared/pitfalls.md). Every numeric key is a ``Real`` or a
#: ``Count``; tests/case/test_strict_numbers.py checks every field of every section.
Real = Annotated[float, Strict()]
#: A count in a case: an int only (``2.0``, ``true`` and ``"2"`` are refused).
Count = Annotated[int, Strict()]
#: Range of the Reynolds number Re_L, given or derived from U L / nu: from 1 (the low end
#: of the Blasius law's range in physics/correlations.py; below it there is no boundary
#: layer to size) to 1e11 (beyond every turbulent law's stated range).
REYNOLDS_RANGE = (1.0, 1e11)
#: Shortest plate [m]: 1 micrometre, some ten mean free paths of air at ambient conditions
#: (about 0.07 micrometre, from memory), below which a gas is no continuum to mesh.
LENGTH_MIN = 1e-6
#: Upper ends of the free-stream speed [m/s] and kinematic viscosity [m2/s], given or derived.
VELOCITY_MAX = 1e4
NU_MAX = 1.0
#: Smallest spacing, as a fraction of the plate length (streamwise spacings and caps, the
#: first-cell height in planning/plan.py; of delta99 for wall.max_spacing): cell aspect
#: ratios past 1e12 leave about 4 of double precision's 16 digits across a cell (meshgen's
#: limit; y+ = 0.05 at Re_L = 1e11 needs about 2e-11 L).
MIN_SPACING = 1e-12
#: Smallest non-zero Mach number: the compressible corrections are of order M^2, and van
#: Driest II's terms cancel below it (measured: 0.4 % off at M = 1e-7, a division by zero
#: at 1e-8), so 0 stands for anything smaller.
MACH_MIN = 1e-3
#: The case name is one folder name: letters, digits, '_', '.', '-', not starting with '.'
#: or '-' (so never '.', '..', a hidden folder or an option).
NAME_PATTERN = r"^[A-Za-z0-9_][A-Za-z0-9_.-]{0,63}$"


class Section(BaseModel):
    model_config = ConfigDict(extra="forbid", frozen=True, allow_inf_nan=False)


class Flow(Section):
    """Free stream: either a Reynolds number with a plate length, or velocity + length
    + a kinematic viscosity or a fluid by name (with temperature and pressure)."""

    reynolds: Real | None = Field(None, ge=REYNOLDS_RANGE[0], le=REYNOLDS_RANGE[1],
                                  description="Re_L = U L / nu [-]")
    length: Real = Field(1.0, ge=LENGTH_MIN, le=1e4, description="plate length L [m]")
    velocity: Real | None = Field(None, gt=0, le=VELOCITY_MAX, description="free-stream speed U [m/s]")
    nu: Real | None = Field(None, gt=0, le=NU_MAX, description="kinematic viscosity [m2/s]")
    fluid: str | None = Field(None, min_length=1, description="CoolProp fluid name, e.g. 'Air', 'Water'")
    temperature: Real = Field(288.15, ge=1, le=5000, description="fluid temperature [K]")
    pressure: Real = Field(101325.0, gt=0, le=1e9, description="fluid pressure [Pa]")
    density: Real | None = Field(None, gt=0, le=1e5, description="density [kg/m3] (sheet only)")
    regime: Literal["auto", "laminar", "turbulent", "transitional"] = "auto"
    correlation: str | None = Field(None, description="skin-friction correlation name")
    transition_reynolds: Real = Field(5.0e5, ge=1e4, le=1e8, description="Re_x at transition [-] (transitional)")
    transition_onset: Literal["reynolds", "abu-ghannam-shaw", "mayle"] = Field(
        "reynolds", description="transition from transition_reynolds or from turbulence_intensity")
    mach: Real | None = Field(None, ge=0, le=10, description="free-stream Mach number; sizes compressible")
    turbulence_intensity: Real = Field(0.001, ge=0, le=0.5, description="free-stream Tu [-]")
    viscosity_ratio: Real = Field(1.0, gt=0, le=1e5, description="nu_t / nu in the free stream [-]")

    @field_validator("mach")
    @classmethod
    def _mach_zero_or_resolvable(cls, mach: float | None) -> float | None:
        if mach is not None and 0 < mach < MACH_MIN:
            raise ValueError(f"flow.mach = {mach!r}: give 0 (incompressible) or at least {MACH_MIN:g}; below it "
                             "the compressible corrections vanish and their formulas lose their digits")
        return mach

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

    y_plus: Real | None = Field(None, gt=0, le=1000, description="target y+ of the first cell [-] (default per treatment)")
    treatment: Literal["resolved", "wall-functions", "blended"] = Field(
        "resolved", description="wall treatment the solver uses: sets the default y+ and its band")
    y_plus_at: Literal["node", "centre"] = Field(
        "node", description="y+ measured at the first node (first-cell height) or the first cell centre")
    temperature: Real | None = Field(None, ge=1, le=5000, description="wall temperature [K]; none = adiabatic")
    first_cell_height: Real | None = Field(None, gt=0, description="first-cell height [m] (instead of y_plus)")
    growth_ratio: Real = Field(1.1, ge=1.0, le=2.0, description="wall-normal growth ratio [-]")
    cells: Count | None = Field(None, ge=2, le=100000, description="wall-normal cell count")
    max_spacing: Real = Field(0.5, ge=MIN_SPACING, le=100,
                              description="cap on the wall-normal spacing [delta99(L)]")
    reference_station: Real = Field(1.0, gt=0, le=1.0, description="x_ref / L where y+ is targeted")

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
    height_factor: Real = Field(10.0, ge=1.0, le=1000, description="H / delta99(L) [-]")
    upstream: Real = Field(0.5, ge=0, le=100, description="upstream block length [L]")
    downstream: Real = Field(0.5, ge=0, le=100, description="wake block length [L]")
    span: Real = Field(0.0, ge=0, le=100, description="spanwise extent [L]; 0 = 2-D")
    span_cells: Count = Field(1, ge=1, le=10000, description="spanwise cell count")
    span_boundary: Literal["symmetry", "patch", "periodic"] = Field(
        "symmetry", description="type of the front and back faces of a 3-D mesh in every format that "
        "carries types: symmetry plane, a plain patch the solver set-up decides, or a periodic pair "
        "(the default of a scale-resolving resolution.kind when not given)")


class Streamwise(Section):
    leading_edge_spacing: Real = Field(1e-3, ge=MIN_SPACING, le=0.5,
                                       description="first spacing at x = 0 [L]")
    trailing_edge_spacing: Real = Field(5e-3, ge=MIN_SPACING, le=0.5, description="spacing at x = L [L]")
    growth_ratio: Real = Field(1.1, ge=1.0, le=2.0, description="streamwise growth ratio [-]")
    max_spacing: Real = Field(0.02, ge=MIN_SPACING, le=1.0, description="cap on the plate [L]")
    far_spacing: Real = Field(0.1, ge=MIN_SPACING, le=10.0,
                              description="cap in the upstream and wake blocks [L]")
    cells: Count | None = Field(None, ge=2, le=1_000_000, description="plate cells (solves the plate's ratio)")
    upstream_cells: Count | None = Field(None, ge=1, le=1_000_000,
                                       description="upstream block cells (solves the block's ratio)")
    wake_cells: Count | None = Field(None, ge=1, le=1_000_000, description="wake block cells (solves the block's ratio)")

    @model_validator(mode="after")
    def _two_of_three(self) -> Streamwise:
        if self.cells is not None and "growth_ratio" in self.model_fields_set:
            raise ValueError(
                "streamwise: give streamwise.cells or streamwise.growth_ratio, not both: with "
                "streamwise.cells the plate's growth is solved from the leading- and trailing-edge "
                "spacings, and the upstream and wake blocks grow at the default ratio "
                f"{Streamwise.model_fields['growth_ratio'].default} up to streamwise.far_spacing; "
                "set streamwise.upstream_cells and streamwise.wake_cells to fix their counts instead"
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
    max_cells: Count = Field(20_000_000, ge=1, le=500_000_000, description="refuse plans above this")
    centre_line_angle_limit: Real = Field(
        70.0, gt=0, lt=90, description="largest acceptable angle [deg] between a face's normal and the line "
        "joining its two cell centres, for the quality report (70: common practice for finite-volume solvers)")


class Resolution(Section):
    """What the grid resolves: RANS (the first cell only, today's sizing) or a scale-resolving
    kind, which sizes the streamwise and spanwise spacing and the span from u_tau(x) too
    (meshgen.physics.resolution holds the defaults and their sources)."""

    kind: Literal["rans", "wall-resolved-les", "wall-modelled-les", "dns"] = "rans"
    dx_plus: Real | None = Field(None, gt=0, le=10000, description="streamwise spacing in wall units [-]")
    dz_plus: Real | None = Field(None, gt=0, le=10000, description="spanwise spacing in wall units [-]")
    cells_per_delta: Real | None = Field(None, ge=2, le=1000, description="cells per delta99 [-]")
    span_deltas: Real | None = Field(None, gt=0, le=1000, description="span in delta99 at the plate end [-]")
    station: Literal["reference", "strictest"] = Field(
        "reference", description="size at wall.reference_station or at the strictest station of the plate")
    strictest_from: Real = Field(0.1, gt=0, lt=1, description="x/L where the search for the strictest station starts")

    @model_validator(mode="after")
    def _keys_of_the_kind(self) -> Resolution:
        k = KINDS[self.kind]
        used = {"dx_plus": k.dx_plus, "dz_plus": k.dz_plus, "cells_per_delta": k.cells_per_delta,
                "span_deltas": k.name != "rans", "station": k.name != "rans", "strictest_from": k.name != "rans"}
        problems = [
            f"resolution.{key}: not used by resolution.kind = {self.kind!r}; "
            + ("set a scale-resolving kind (wall-resolved-les, wall-modelled-les, dns)" if self.kind == "rans"
               else f"{self.kind} uses " + ", ".join(n for n, v in used.items() if v))
            for key, v in used.items() if key in self.model_fields_set and not v
        ]
        if problems:
            raise ValueError("\n".join(problems))
        return self


class Case(Section):
    """One validated case: flow, wall, domain, streamwise, names and output sections
    (lengths in [domain] and [streamwise] in plate lengths L, the rest in SI units);
    build it with ``load_case`` (TOML file, dictionary or the embedded default)."""

    name: str = Field("case", description="case name (output folder): one folder name")
    flow: Flow
    wall: Wall = Wall()
    domain: Domain = Domain()
    streamwise: Streamwise = Streamwise()
    names: Names = Names()
    output: Output = Output()
    resolution: Resolution = Resolution()

    @field_validator("name")
    @classmethod
    def _one_folder_name(cls, name: str) -> str:
        if not re.fullmatch(NAME_PATTERN, name):
            raise ValueError(f"name = {name!r}: one folder name of 1 to 64 letters, digits, '_', '.' or '-', "
                             "not starting with '.' or '-' (so not '.' or '..')")
        return name
