"""SU2 configuration fragment beside the mesh (format ``su2-setup``, ``<stem>.cfg``).

One ``KEY= value`` line per option, ``%`` comments, as SU2's configuration files are
written (SU2 documentation, "Configuration File" and "Markers and Boundary Conditions";
``config_template.cfg``). It holds what follows from the mesh and the boundary-condition
sheet, for SU2's incompressible solver (a steady low-speed flat plate):

* the solver (INC_RANS with SST, or INC_NAVIER_STOKES for a laminar case), the free stream
  (INC_DENSITY_INIT, INC_VELOCITY_INIT, constant viscosity MU_CONSTANT, dimensional),
  and the turbulence intensity and viscosity ratio (FREESTREAM_TURBULENCEINTENSITY,
  FREESTREAM_TURB2LAMVISCRATIO);
* one marker line per role naming every group of that role: wall -> MARKER_HEATFLUX
  (no-slip, adiabatic: heat flux 0), inlet -> MARKER_INLET with INC_INLET_TYPE=
  VELOCITY_INLET (marker, temperature [K], speed [m/s], direction 1 0 0), outlet ->
  MARKER_OUTLET with INC_OUTLET_TYPE= PRESSURE_OUTLET (marker, gauge pressure 0),
  farfield -> MARKER_FAR, symmetry and front/back -> MARKER_SYM (SU2 has no
  condition-free marker: a "patch" front/back is written there too, with a note); a
  periodic pair goes in MARKER_PERIODIC instead (rotation none, translation the span);
* MESH_FILENAME naming ``<stem>.su2`` (or the ``cgns-single`` file when that is the one
  written), and the wall as the plotting and monitoring marker.

Numerics, iteration counts and output stay the user's. A 2-D mesh has no front/back.
"""

from __future__ import annotations

from pathlib import Path

from ... import __version__
from ...core.errors import WriteError
from ...meshing.mesh import Mesh, span_boundary
from ..atomic import write_text
from .foam_setup import sheet_of
from .registry import Format, register
from .su2 import marker_periodic


def _outputs(out_dir: Path, stem: str) -> list[Path]:
    return [Path(out_dir) / f"{stem}.cfg"]


def by_role(mesh: Mesh) -> dict[str, list[str]]:
    out: dict[str, list[str]] = {}
    for g in mesh.groups:
        out.setdefault(g.role, []).append(g.name)
    return out


def config_text(mesh: Mesh, sheet: dict, stem: str) -> str:
    fs, t = sheet["free_stream"], sheet["turbulence"]
    laminar = sheet.get("wall", {}).get("regime") == "laminar"
    roles = by_role(mesh)
    temperature = sheet.get("wall", {}).get("T_w", 288.15)
    lines = [
        f"% SU2 configuration fragment for {stem}, written by meshgen {__version__}",
        "% Free stream and markers from the boundary-condition sheet (bc.json); add numerics and output.",
        "%",
        f"SOLVER= {'INC_NAVIER_STOKES' if laminar else 'INC_RANS'}",
        *([] if laminar else ["KIND_TURB_MODEL= SST"]),
        "MATH_PROBLEM= DIRECT",
        f"MESH_FILENAME= {stem}.su2",
        "MESH_FORMAT= SU2",
        "%",
        "INC_NONDIM= DIMENSIONAL",
        "INC_DENSITY_MODEL= CONSTANT",
        f"INC_DENSITY_INIT= {fs['rho']!r}",
        f"INC_VELOCITY_INIT= ( {fs['U']!r}, 0.0, 0.0 )",
        "VISCOSITY_MODEL= CONSTANT_VISCOSITY",
        f"MU_CONSTANT= {fs['mu']!r}",
        f"FREESTREAM_TURBULENCEINTENSITY= {t['turbulence_intensity']!r}",
        f"FREESTREAM_TURB2LAMVISCRATIO= {t['viscosity_ratio']!r}",
        f"REF_LENGTH= {fs['L']!r}",
        "%",
    ]
    if "wall" in roles:
        lines.append("MARKER_HEATFLUX= ( " + ", ".join(f"{n}, 0.0" for n in roles["wall"]) + " )")
    if "inlet" in roles:
        lines.append("INC_INLET_TYPE= " + ", ".join(["VELOCITY_INLET"] * len(roles["inlet"])))
        lines.append("MARKER_INLET= ( " + ", ".join(f"{n}, {temperature!r}, {fs['U']!r}, 1.0, 0.0, 0.0"
                                                     for n in roles["inlet"]) + " )")
    if "outlet" in roles:
        lines.append("INC_OUTLET_TYPE= " + ", ".join(["PRESSURE_OUTLET"] * len(roles["outlet"])))
        lines.append("MARKER_OUTLET= ( " + ", ".join(f"{n}, 0.0" for n in roles["outlet"]) + " )")
    if "farfield" in roles:
        lines.append("MARKER_FAR= ( " + ", ".join(roles["farfield"]) + " )")
    periodic = {n for p in mesh.periodic for n in (p.source, p.target)}
    sym = [n for n in roles.get("symmetry", []) + roles.get("back", []) + roles.get("front", []) if n not in periodic]
    if mesh.periodic:
        lines.append(marker_periodic(mesh.periodic))
    if (roles.get("front") or roles.get("back")) and span_boundary(mesh) == "patch":
        lines.append("% front/back are plain patches in the mesh (domain.span_boundary = patch); SU2 needs a "
                     "condition for every marker, so they are listed as symmetry: change it if you meant another")
    if sym:
        lines.append("MARKER_SYM= ( " + ", ".join(sym) + " )")
    if "wall" in roles:
        lines.append("MARKER_PLOTTING= ( " + ", ".join(roles["wall"]) + " )")
        lines.append("MARKER_MONITORING= ( " + ", ".join(roles["wall"]) + " )")
    return "\n".join(lines) + "\n"


def write(mesh: Mesh, out_dir: Path, stem: str) -> list[Path]:
    """Write ``<stem>.cfg`` into ``out_dir``."""
    sheet = sheet_of(mesh, "su2-setup")
    unknown = sorted({g.role for g in mesh.groups} - {"wall", "inlet", "outlet", "farfield", "symmetry", "front", "back"})
    if unknown:
        raise WriteError(f"su2-setup: groups with roles {unknown} have no SU2 marker mapping")
    return [write_text(_outputs(out_dir, stem)[0], config_text(mesh, sheet, stem))]


register(
    Format(
        name="su2-setup",
        description="SU2 configuration fragment <name>.cfg: incompressible solver, free stream, one marker "
                    "line per role naming every group; use with su2",
        solvers="SU2 (incompressible solver)",
        outputs=_outputs,
        write=write,
        setup=True,
    )
)
