"""CGNS groups every reader sees: VTK's CGNS reader (ParaView's), cgnscheck, the single-zone
variant SU2 reads, and the front/back type chosen by ``domain.span_boundary``.

Independent readers: ``vtk.vtkCGNSReader`` (PyPI ``vtk``), which loads FamilySpecified
BC_t nodes as patches and skips BCWall, BCInflow, ... (its own warning: "BC_t type ... not
supported yet"); ``cgnscheck`` (Debian cgns-convert, CGNS library 3.4); h5py for the tree.
What SU2 reads, from its source (SU2 8.1, CCGNSMeshReaderBase.cpp): one base, one
Unstructured zone, marker names taken from the boundary Elements_t sections.
"""

from __future__ import annotations

import dataclasses
import shutil

import pytest
from test_cgns import check_messages, sample, text

from meshgen.io.writers import cgns
from meshgen.io.writers.registry import FORMATS

h5py = pytest.importorskip("h5py")
vtk = pytest.importorskip("vtk")
needs_check = pytest.mark.skipif(shutil.which("cgnscheck") is None, reason="cgnscheck not installed (cgns-convert)")


def vtk_patches(path) -> dict[str, int]:
    """Cells per block name that VTK's CGNS reader loads, boundary patches included."""
    from vtkmodules.vtkCommonCore import vtkLogger

    vtkLogger.SetStderrVerbosity(vtkLogger.VERBOSITY_ERROR)
    r = vtk.vtkCGNSReader()
    r.SetFileName(str(path))
    r.UpdateInformation()
    r.EnableAllBases()
    r.SetLoadBndPatch(1)  # ParaView's "Load Patches"
    r.EnableAllFamilies()
    r.Update()
    it = r.GetOutput().NewIterator()
    it.InitTraversal()
    out: dict[str, int] = {}
    while not it.IsDoneWithTraversal():
        name = it.GetCurrentMetaData().Get(vtk.vtkCompositeDataSet.NAME())
        out[name] = out.get(name, 0) + it.GetCurrentDataObject().GetNumberOfCells()
        it.GoToNextItem()
    return out


@pytest.mark.parametrize("kind", ["2d", "3d", "u2d", "u3d"])
@pytest.mark.parametrize("fmt", ["cgns", "cgns-single"])
def test_vtk_reader_lists_every_group_with_its_facets(tmp_path, kind, fmt):
    # Before FamilySpecified BCs, VTK's reader loaded no group of the structured files.
    m = sample(kind)
    path = FORMATS[fmt].write(m, tmp_path, kind)[0]
    patches = vtk_patches(path)
    for name, n in m.group_sizes().items():
        assert patches.get(name) == n, (name, patches)
    assert patches["Internal"] == m.n_cells


@needs_check
@pytest.mark.parametrize("kind", ["2d", "3d", "u3d"])
@pytest.mark.parametrize("span", ["symmetry", "patch"])
def test_single_zone_and_patch_type_pass_cgnscheck(tmp_path, kind, span):
    m = dataclasses.replace(sample(kind), meta={"span_boundary": span})
    for path in (cgns.write(m, tmp_path, kind)[0], cgns.write_single(m, tmp_path, kind)[0]):
        errors, warnings, out = check_messages(path, "-w3")
        assert errors == [] and warnings == [], out


@pytest.mark.parametrize("kind", ["2d", "3d"])
def test_single_zone_is_what_su2_reads(tmp_path, kind):
    m = sample(kind)
    [path] = FORMATS["cgns-single"].write(m, tmp_path, "case")
    assert path.name == "case.single.cgns"
    with h5py.File(path, "r") as f:
        base = f["Base"]
        zones = [k for k, g in base.items() if "label" in g.attrs and g.attrs["label"] == b"Zone_t"]
        assert [k for k, g in f.items() if "label" in g.attrs and g.attrs["label"] == b"CGNSBase_t"] == ["Base"]
        assert len(zones) == 1 and text(base[zones[0]]["ZoneType"]) == "Unstructured"
        z = base[zones[0]]
        # SU2: a section of 1-D elements in 2-D (2-D elements in 3-D) is a marker named after it.
        facet = 3 if m.dim == 2 else 7  # BAR_2, QUAD_4 (cgnslib.h)
        markers = {k: g["ElementRange/ data"][()] for k, g in z.items()
                   if "label" in g.attrs and g.attrs["label"] == b"Elements_t" and g[" data"][()][0] == facet}
        assert {k: int(r[1] - r[0] + 1) for k, r in markers.items()} == m.group_sizes()


@pytest.mark.parametrize("span, want", [("symmetry", "BCSymmetryPlane"), ("patch", "UserDefined")])
def test_front_and_back_follow_the_span_boundary(tmp_path, span, want):
    m = dataclasses.replace(sample("3d"), meta={"span_boundary": span})
    with h5py.File(cgns.write(m, tmp_path, "s")[0], "r") as f:
        for g in ("front", "back"):
            assert text(f[f"Base/{g}/FamilyBC"]) == want
        assert text(f["Base/wall/FamilyBC"]) == "BCWall"
