"""meshgen: graded, tagged structured meshes for external boundary-layer flows.

The public API, one flat namespace over the stage subpackages::

    import meshgen
    case = meshgen.load_case({"flow": {"reynolds": 1e5, "length": 1.0}})
    plan = meshgen.plan(case)
    mesh = meshgen.build(plan)
    mesh.write("out/plate.msh")

Names are imported on first use (module ``__getattr__``), so ``import meshgen`` stays
cheap: gmsh, matplotlib and CoolProp load only when a build, a picture or a fluid needs
them.
"""

from __future__ import annotations

import importlib

__version__ = "0.1.0"

#: Public name -> module that defines it.
_PUBLIC = {
    "load_case": "meshgen.case.loading",
    "Case": "meshgen.case.model",
    "plan": "meshgen.pipeline.api",
    "Plan": "meshgen.planning.plan",
    "build": "meshgen.pipeline.api",
    "BuiltMesh": "meshgen.pipeline.api",
    "Mesh": "meshgen.meshing.mesh",
    "family": "meshgen.study.api",
    "gci": "meshgen.study.api",
    "GciResult": "meshgen.study.api",
    "formats": "meshgen.io.writers",
    "MeshgenError": "meshgen.core.errors",
    "InputError": "meshgen.core.errors",
    "CaseError": "meshgen.core.errors",
    "MeshError": "meshgen.core.errors",
    "WriteError": "meshgen.core.errors",
}
_RENAMED = {"formats": "FORMATS"}

__all__ = [
    "BuiltMesh", "Case", "CaseError", "GciResult", "InputError", "Mesh", "MeshError", "MeshgenError",
    "Plan", "WriteError", "build", "family", "formats", "gci", "load_case", "plan",
]


def __getattr__(name: str):
    try:
        module = _PUBLIC[name]
    except KeyError:
        raise AttributeError(f"module 'meshgen' has no attribute {name!r}") from None
    value = getattr(importlib.import_module(module), _RENAMED.get(name, name))
    globals()[name] = value  # once loaded, a plain attribute
    return value


def __dir__() -> list[str]:
    return sorted(set(globals()) | set(__all__))
