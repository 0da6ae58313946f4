"""``domain.span_boundary``: the front and back faces of a 3-D mesh get one type in every
format that carries types, from the case (CGNS family BC type, OpenFOAM patch type).

Independent readers: h5py for the CGNS tree (CGNS SIDS FamilyBC_t), meshgen's polyMesh
reader checked elsewhere against the OpenFOAM rules; the boundary file is parsed here as
text.
"""

from __future__ import annotations

import re

import h5py
import pytest

from meshgen.case import load_case
from meshgen.cli import main
from meshgen.core.errors import CaseError


@pytest.mark.parametrize("span, cgns_type, foam_type", [("symmetry", "BCSymmetryPlane", "symmetryPlane"),
                                                        ("patch", "UserDefined", "patch")])
def test_case_key_reaches_every_typed_format(tmp_path, span, cgns_type, foam_type):
    out = tmp_path / span
    code = main(["build", "-o", str(out), "--no-pictures", "--format", "cgns", "--format", "polymesh",
                 "--set", "domain.span=0.05", "--set", "domain.span_cells=2",
                 "--set", f"domain.span_boundary={span}", "--set", "flow.fluid=", "--set", "flow.nu=1.5e-5"])
    assert code == 0
    with h5py.File(out / "fairing-strip.cgns", "r") as f:
        for g in ("front", "back"):
            assert f[f"Base/{g}/FamilyBC/ data"][()].tobytes().decode() == cgns_type
    boundary = (out / "constant" / "polyMesh" / "boundary").read_text()
    for g in ("front", "back"):
        assert re.search(rf"{g}\s*\{{\s*type\s+{foam_type};", boundary), boundary


def test_unknown_span_boundary_is_a_case_error():
    with pytest.raises(CaseError, match="domain.span_boundary"):
        load_case({"flow": {"reynolds": 1e5}, "domain": {"span_boundary": "wall"}})
