"""OpenFOAM case set-up beside the polyMesh (format ``foam-setup``): ``0/``, ``system/`` and
``constant/`` dictionaries for a steady incompressible run (simpleFoam), filled from the
boundary-condition sheet.

Written, each as an OpenFOAM dictionary (``FoamFile`` header, ``key value;`` entries, ``{}``
sub-dictionaries; OpenFOAM User Guide, "File structure of OpenFOAM cases" and "Boundary
conditions"):

* ``0/U``, ``0/p``, ``0/k``, ``0/omega``, ``0/epsilon``, ``0/nut``, ``0/nuTilda``: the free
  stream as ``internalField`` and one ``boundaryField`` entry per polyMesh patch, by role
  (table ``CONDITIONS``); p is kinematic (p / rho, m2/s2), as simpleFoam solves it.
* ``system/controlDict`` (simpleFoam, y+ and wall shear stress written), ``fvSchemes``
  (second-order convection for U, first-order for the turbulence fields), ``fvSolution``
  (SIMPLEC, GAMG for p).
* ``constant/transportProperties`` + ``turbulenceProperties`` (the names openfoam.com reads)
  and ``constant/physicalProperties`` + ``momentumTransport`` (openfoam.org's): nu and the
  model (k-omega SST, or laminar for a laminar case).

The patches are those the ``polymesh`` writer makes of the same Mesh: every group with its
patch type (``cyclic`` for a periodic pair, whose fields are ``type cyclic;``), and for a
2-D mesh ``front`` and ``back`` of type ``empty``. The values come
from ``mesh.meta["boundary_conditions"]`` (the pipeline attaches ``bc.json``'s sheet);
a mesh without it raises WriteError. Wall functions follow the case's wall treatment:
resolved -> nutLowReWallFunction, wall-functions -> nutkWallFunction, blended ->
nutUSpaldingWallFunction (OpenFOAM's wall-function documentation); omega and epsilon use
their wall functions, which switch between the viscous and log layers by y+.
"""

from __future__ import annotations

from pathlib import Path

from ... import __version__
from ...core.errors import WriteError
from ...meshing.mesh import Mesh
from ..atomic import atomic_dir, write_text
from .foam import PATCH_TYPE, SPAN_PATCH, WORD
from .registry import Format, register

#: Field name -> (class, dimensions [kg m s K mol A cd]).
FIELDS = {
    "U": ("volVectorField", "[0 1 -1 0 0 0 0]"),
    "p": ("volScalarField", "[0 2 -2 0 0 0 0]"),
    "k": ("volScalarField", "[0 2 -2 0 0 0 0]"),
    "omega": ("volScalarField", "[0 0 -1 0 0 0 0]"),
    "epsilon": ("volScalarField", "[0 2 -3 0 0 0 0]"),
    "nut": ("volScalarField", "[0 2 -1 0 0 0 0]"),
    "nuTilda": ("volScalarField", "[0 2 -1 0 0 0 0]"),
}
WALL_NUT = {"resolved": "nutLowReWallFunction", "wall-functions": "nutkWallFunction",
            "blended": "nutUSpaldingWallFunction"}
TURBULENCE = ("k", "omega", "epsilon", "nuTilda")


def _fixed(v: str) -> str:
    return f"type fixedValue; value {v};"


def _outflow(v: str) -> str:
    """Zero gradient where the flow leaves, the free-stream value where it enters."""
    return f"type inletOutlet; inletValue {v}; value {v};"


def _conditions(role: str, field: str, free: dict[str, str], treatment: str) -> str:
    """The boundaryField entry of ``field`` on a patch of ``role`` (polyMesh type patch/wall)."""
    if role == "inlet":
        return {"p": "type zeroGradient;", "nut": f"type calculated; value {free['nut']};"}.get(
            field, _fixed(free[field]))
    if role == "outlet":
        if field == "p":
            return _fixed("uniform 0")
        if field == "U":
            return "type inletOutlet; inletValue uniform (0 0 0); value " + free["U"] + ";"
        return f"type calculated; value {free['nut']};" if field == "nut" else _outflow(free[field])
    if role == "wall":
        return {
            "U": "type noSlip;",
            "p": "type zeroGradient;",
            "k": f"type kqRWallFunction; value {free['k']};" if treatment != "resolved" else _fixed("uniform 0"),
            "omega": f"type omegaWallFunction; value {free['omega']};",
            "epsilon": f"type epsilonWallFunction; value {free['epsilon']};",
            "nut": f"type {WALL_NUT[treatment]}; value uniform 0;",
            "nuTilda": _fixed("uniform 0"),
        }[field]
    if role == "farfield":
        if field == "U":  # streamwise velocity fixed, the other components free (the sheet's top condition)
            return ("type directionMixed; refValue " + free["U"] + "; refGradient uniform (0 0 0); "
                    "valueFraction uniform (1 0 0 0 0 0); value " + free["U"] + ";")
        if field == "p":
            return "type zeroGradient;"
        return f"type calculated; value {free['nut']};" if field == "nut" else _outflow(free[field])
    # a plain patch (front/back with span_boundary = "patch"): the user's own condition
    return ("type slip;" if field == "U" else "type zeroGradient;") + "  // plain patch: set your condition"


def patches(mesh: Mesh) -> list[tuple[str, str, str]]:
    """(name, role, polyMesh type) of every patch the polymesh writer makes of ``mesh``."""
    from ...meshing.mesh import span_boundary

    span = "empty" if mesh.dim == 2 else span_boundary(mesh)
    cyclic = {n for p in mesh.periodic for n in (p.source, p.target)}  # cyclic patches (foam_cyclic.py)
    out = [(g.name, g.role, "cyclic" if g.name in cyclic else
            SPAN_PATCH[span] if g.role in ("front", "back") else PATCH_TYPE.get(g.role, "patch"))
           for g in mesh.groups]
    if mesh.dim == 2:
        out += [("back", "back", "empty"), ("front", "front", "empty")]
    return out


def _header(cls: str, location: str, obj: str) -> str:
    return (f"// written by meshgen {__version__}\nFoamFile\n{{\n    version     2.0;\n    format      ascii;\n"
            f"    class       {cls};\n    location    \"{location}\";\n    object      {obj};\n}}\n\n")


def _entry(text: str) -> str:
    """``type x; value y;`` as one line per key, indented inside a patch block."""
    body, _, comment = text.partition("//")
    lines = [f"        {part.strip()};" for part in body.split(";") if part.strip()]
    if comment:
        lines.append(f"        // {comment.strip()}")
    return "\n".join(lines)


def field_file(field: str, mesh: Mesh, sheet: dict) -> str:
    cls, dims = FIELDS[field]
    fs, t = sheet["free_stream"], sheet["turbulence"]
    free = {"U": f"uniform ({fs['U']!r} 0 0)", "p": "uniform 0", "k": f"uniform {t['k']!r}",
            "omega": f"uniform {t['omega']!r}", "epsilon": f"uniform {t['epsilon']!r}",
            "nut": f"uniform {t['nu_t']!r}", "nuTilda": f"uniform {t['nu_tilde']!r}"}
    treatment = sheet.get("wall", {}).get("treatment", "resolved")
    blocks = []
    for name, role, kind in patches(mesh):
        if kind in ("symmetryPlane", "empty", "cyclic"):  # constraint patches: the field follows the patch type
            text = f"type {kind};"
        else:
            text = _conditions(role, field, free, treatment)
        blocks.append(f"    {name}\n    {{\n{_entry(text)}\n    }}")
    return (_header(cls, "0", field) + f"dimensions      {dims};\n\ninternalField   {free[field]};\n\n"
            "boundaryField\n{\n" + "\n".join(blocks) + "\n}\n")


CONTROL = """application     simpleFoam;
startFrom       latestTime;
startTime       0;
stopAt          endTime;
endTime         3000;
deltaT          1;
writeControl    timeStep;
writeInterval   500;
purgeWrite      2;
writeFormat     ascii;
writePrecision  10;
writeCompression off;
timeFormat      general;
timePrecision   6;
runTimeModifiable true;

functions
{
    yPlus
    {
        type            yPlus;
        libs            ("libfieldFunctionObjects.so");
        writeControl    writeTime;
    }
    wallShearStress
    {
        type            wallShearStress;
        libs            ("libfieldFunctionObjects.so");
        patches         (%s);
        writeControl    writeTime;
    }
}
"""

SCHEMES = """ddtSchemes
{
    default         steadyState;
}

gradSchemes
{
    default         Gauss linear;
}

divSchemes
{
    default         none;
    div(phi,U)      bounded Gauss linearUpwind grad(U);
    div(phi,k)      bounded Gauss upwind;
    div(phi,omega)  bounded Gauss upwind;
    div(phi,epsilon) bounded Gauss upwind;
    div(phi,nuTilda) bounded Gauss upwind;
    div((nuEff*dev2(T(grad(U))))) Gauss linear;
}

laplacianSchemes
{
    default         Gauss linear corrected;
}

interpolationSchemes
{
    default         linear;
}

snGradSchemes
{
    default         corrected;
}

wallDist
{
    method          meshWave;
}
"""

SOLUTION = """solvers
{
    p
    {
        solver          GAMG;
        smoother        GaussSeidel;
        tolerance       1e-07;
        relTol          0.05;
    }
    "(U|k|omega|epsilon|nuTilda)"
    {
        solver          smoothSolver;
        smoother        symGaussSeidel;
        tolerance       1e-08;
        relTol          0.1;
    }
}

SIMPLE
{
    nNonOrthogonalCorrectors 0;
    consistent      yes;
    residualControl
    {
        p               1e-06;
        U               1e-07;
        "(k|omega|epsilon|nuTilda)" 1e-07;
    }
}

relaxationFactors
{
    equations
    {
        U               0.9;
        ".*"            0.9;
    }
}
"""


def _constant_files(sheet: dict) -> dict[str, str]:
    nu = sheet["free_stream"]["nu"]
    laminar = sheet.get("wall", {}).get("regime") == "laminar"
    model = "simulationType  laminar;\n" if laminar else (
        "simulationType  RAS;\n\nRAS\n{\n    model           kOmegaSST;\n    RASModel        kOmegaSST;\n"
        "    turbulence      on;\n    printCoeffs     on;\n}\n")
    return {
        "transportProperties": _header("dictionary", "constant", "transportProperties")
        + f"transportModel  Newtonian;\nnu              {nu!r};\n",
        "physicalProperties": _header("dictionary", "constant", "physicalProperties")
        + f"viscosityModel  constant;\nnu              [0 2 -1 0 0 0 0] {nu!r};\n",
        "turbulenceProperties": _header("dictionary", "constant", "turbulenceProperties") + model,
        "momentumTransport": _header("dictionary", "constant", "momentumTransport") + model,
    }


def sheet_of(mesh: Mesh, what: str) -> dict:
    sheet = mesh.meta.get("boundary_conditions")
    if sheet is None:
        raise WriteError(f"{what}: the mesh carries no boundary-condition sheet; build it from a plan "
                         "(meshgen build, or meshgen.build(plan)) to write the solver set-up")
    return sheet


def _outputs(out_dir: Path, stem: str) -> list[Path]:
    out = Path(out_dir)
    return [out / "0", out / "system"] + [out / "constant" / n for n in
                                          ("transportProperties", "physicalProperties",
                                           "turbulenceProperties", "momentumTransport")]


def write(mesh: Mesh, out_dir: Path, stem: str) -> list[Path]:
    """Write ``0/``, ``system/`` and the ``constant/`` dictionaries into the case folder ``out_dir``."""
    sheet = sheet_of(mesh, "foam-setup")
    bad = [name for name, _, _ in patches(mesh) if not WORD.fullmatch(name)]
    if bad:
        raise WriteError(f"foam-setup: patch names {bad} are not OpenFOAM words")
    out = Path(out_dir)
    with atomic_dir(out / "0") as tmp:
        for field in FIELDS:
            (tmp / field).write_text(field_file(field, mesh, sheet), encoding="utf-8")
    walls = " ".join(name for name, role, _ in patches(mesh) if role == "wall")
    with atomic_dir(out / "system") as tmp:
        (tmp / "controlDict").write_text(_header("dictionary", "system", "controlDict") + CONTROL % walls,
                                         encoding="utf-8")
        (tmp / "fvSchemes").write_text(_header("dictionary", "system", "fvSchemes") + SCHEMES, encoding="utf-8")
        (tmp / "fvSolution").write_text(_header("dictionary", "system", "fvSolution") + SOLUTION, encoding="utf-8")
    for name, text in _constant_files(sheet).items():
        write_text(out / "constant" / name, text)
    return _outputs(out, stem)


register(
    Format(
        name="foam-setup",
        description="OpenFOAM case set-up for simpleFoam: 0/ (U, p, k, omega, epsilon, nut, nuTilda; one "
                    "entry per patch by role), system/ (controlDict, fvSchemes, fvSolution), constant/ "
                    "(viscosity, turbulence model); use with polymesh",
        solvers="OpenFOAM (openfoam.com and openfoam.org dictionary names both written)",
        outputs=_outputs,
        write=write,
        setup=True,
    )
)
