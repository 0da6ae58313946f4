"""OpenFOAM itself reads the set-up: simpleFoam (Debian's ``openfoam``, v1912) runs a few
iterations on a polyMesh + foam-setup case, and checkMesh finds nothing but the intended
high aspect ratio of the wall layers. Skipped with the reason when OpenFOAM is absent;
.ci/run installs it.
"""

from __future__ import annotations

import re
import shutil
import subprocess
from pathlib import Path

import pytest

from meshgen.cli import main

BASHRC = Path("/usr/share/openfoam/etc/bashrc")  # where Debian's package puts the environment
needs_openfoam = pytest.mark.skipif(shutil.which("simpleFoam") is None or not BASHRC.exists(),
                                    reason="OpenFOAM not installed (Debian package openfoam)")


def foam(case: Path, command: str) -> subprocess.CompletedProcess:
    return subprocess.run(["bash", "-c", f"source {BASHRC} >/dev/null 2>&1; {command}"], cwd=case,
                          capture_output=True, text=True, timeout=300, check=False)


@needs_openfoam
@pytest.mark.parametrize("extra", [[], ["--set", "domain.span=0.02", "--set", "domain.span_cells=2"],
                                   ["--set", "domain.span=0.02", "--set", "domain.span_cells=2",
                                    "--set", "domain.span_boundary=patch"]],
                         ids=["2d", "3d-symmetry", "3d-patch"])
def test_simplefoam_runs_on_the_written_case(tmp_path, extra):
    case = tmp_path / "case"
    assert main(["build", "-o", str(case), "--quiet", "--no-pictures", "--format", "polymesh,foam-setup",
                 "--set", "flow.fluid=", "--set", "flow.nu=1.5e-5", "--set", "flow.velocity=10",
                 "--set", "flow.length=1", "--set", "flow.turbulence_intensity=0.0002", *extra]) == 0
    control = case / "system" / "controlDict"
    control.write_text(re.sub(r"endTime\s+\d+;", "endTime         5;", control.read_text()))
    check = foam(case, "checkMesh")
    failed = re.findall(r"^\s*\*\*\*(.*)$", check.stdout, flags=re.MULTILINE)
    assert all("aspect ratio" in f for f in failed), check.stdout[-3000:]
    run = foam(case, "simpleFoam")
    assert run.returncode == 0 and "FOAM FATAL" not in run.stdout + run.stderr, (run.stdout + run.stderr)[-3000:]
    assert "Selecting RAS turbulence model kOmegaSST" in run.stdout
    assert re.search(r"^Time = 5$", run.stdout, flags=re.MULTILINE) and run.stdout.rstrip().endswith("End")
