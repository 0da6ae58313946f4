"""The periodic span on the boundary-condition sheet: what each format carries and the SU2 line.

Only a 3-D plan whose spanwise sides are periodic (``Plan.span_boundary``) adds a section;
every other sheet stays as it was. The mesh files carry the pair themselves (MSH
``$Periodic``, polyMesh ``cyclic`` patches, CGNS periodic 1-to-1 connectivity); SU2 reads
periodicity from its configuration file, so the sheet gives the line to paste.
"""

from __future__ import annotations

from ..io.writers.su2 import marker_periodic
from ..meshing.mesh import PeriodicPair


def span_sheet(plan) -> dict:
    """{"periodic": {...}} for a periodic span, else {}."""
    if plan.z is None or plan.span_boundary != "periodic":
        return {}
    n = plan.case.names
    span = float(plan.z[-1] - plan.z[0])
    pair = PeriodicPair(n.back, n.front, (0.0, 0.0, span))
    return {"periodic": {
        "source": n.back, "target": n.front, "translation": [0.0, 0.0, span],
        "meaning": f"{n.front} (z = {span:.6g} m) is {n.back} (z = 0) moved by the translation",
        "su2_config": marker_periodic([pair]),
        "formats": {
            "msh": "gmsh periodic entities: $Periodic section with the node pairs",
            "polymesh": "cyclic patches with transform translational and separationVector",
            "cgns": "periodic 1-to-1 connectivity (GridConnectivityProperty / Periodic) in every zone",
            "su2": "ordinary markers; the MARKER_PERIODIC line below goes in the configuration (su2-setup "
                   "writes it into <name>.cfg)",
            "foam-setup": "the fields of the cyclic patches are type cyclic",
            "cgns-single": "two ordinary groups (for SU2, which takes the MARKER_PERIODIC line)",
            "plot3d": "listed under 'periodic' in the JSON companion",
            "vtu": "not carried (no place for it in the format)",
        },
    }}


def span_markdown(sheet: dict) -> list[str]:
    """Markdown lines of the periodic section (none without one)."""
    p = sheet.get("periodic")
    if p is None:
        return []
    lines = ["", "## Periodic span", "", f"{p['meaning']}.", "", "| format | periodicity |", "|---|---|"]
    lines += [f"| {k} | {v} |" for k, v in p["formats"].items()]
    return lines + ["", "SU2 configuration:", "", "```", p["su2_config"], "```"]
