"""The package layout: one subpackage per pipeline stage, imports pointing down only.

The stages, lowest first (DEVELOPERS.md, "Architecture"): a module may import from its own
stage and the stages below it, never from one above, so that the tree reads as the
pipeline and a stage can be understood without the ones that use it.
"""

from __future__ import annotations

import ast
from pathlib import Path

import pytest

PACKAGE = Path(__file__).resolve().parents[2] / "meshgen"

#: Lowest first. The top-level ``meshgen/__init__.py`` (the public API) and the benchmark
#: sit above every stage.
STAGES = ("core", "physics", "case", "planning", "meshing", "io", "reports", "pipeline", "study", "cli", "bench")
TOP_LEVEL_MODULES = {"__init__.py", "__main__.py"}
MAX_LINES = 420  # "about 400" (house habit); a module past this is split by job


def _modules():
    return sorted(PACKAGE.rglob("*.py"))


def _stage(module: Path) -> str | None:
    rel = module.relative_to(PACKAGE).parts
    return rel[0] if len(rel) > 1 else None


def _imported_stages(module: Path) -> set[str]:
    """Stages that ``module`` imports from, relative or absolute, at any depth (lazy imports too)."""
    tree = ast.parse(module.read_text(encoding="utf-8"))
    package = list(module.relative_to(PACKAGE.parent).with_suffix("").parts)
    if package[-1] == "__init__":
        package = package[:-1]
    else:
        package = package[:-1]
    out = set()
    for node in ast.walk(tree):
        if isinstance(node, ast.ImportFrom):
            if node.level:
                base = package[: len(package) - node.level + 1]
                target = base + (node.module.split(".") if node.module else [])
            elif node.module and node.module.split(".")[0] == "meshgen":
                target = node.module.split(".")
            else:
                continue
            if len(target) == 1:  # "from meshgen import x": x names a stage or a top-level name
                target = target + [a.name for a in node.names][:1]
            out.add(target[1])
        elif isinstance(node, ast.Import):
            for a in node.names:
                parts = a.name.split(".")
                if parts[0] == "meshgen" and len(parts) > 1:
                    out.add(parts[1])
    return out


@pytest.mark.parametrize("module", _modules(), ids=lambda p: str(p.relative_to(PACKAGE)))
def test_imports_point_down_the_stages(module):
    stage = _stage(module)
    if stage is None:
        return  # the public API and ``python -m meshgen`` may use every stage
    assert stage in STAGES, f"{stage}/ is not a known stage; add it to STAGES and DEVELOPERS.md"
    above = {s for s in _imported_stages(module) if s in STAGES and STAGES.index(s) > STAGES.index(stage)}
    assert not above, f"{module.relative_to(PACKAGE)} ({stage}) imports from stages above it: {sorted(above)}"


def test_top_level_holds_the_stages_and_entry_points_only():
    loose = {p.name for p in PACKAGE.glob("*.py")} - TOP_LEVEL_MODULES
    assert not loose, f"modules outside a stage: {sorted(loose)}"
    folders = {p.name for p in PACKAGE.iterdir() if p.is_dir() and (p / "__init__.py").exists()}
    assert folders == set(STAGES), folders ^ set(STAGES)


@pytest.mark.parametrize("stage", STAGES)
def test_every_stage_says_what_it_holds(stage):
    doc = ast.get_docstring(ast.parse((PACKAGE / stage / "__init__.py").read_text(encoding="utf-8")))
    assert doc and len(doc.strip()) > 20


def test_no_module_is_over_about_400_lines():
    long = {str(p.relative_to(PACKAGE)): n for p in _modules()
            if (n := len(p.read_text(encoding="utf-8").splitlines())) > MAX_LINES}
    assert not long, f"split by job: {long}"
