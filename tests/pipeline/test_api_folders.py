"""BuiltMesh.write with a folder format: the OpenFOAM set-up lands in the case folder it is
given, beside the polyMesh written there, and the refusal of an unknown suffix lists real
endings only."""

import pytest

import meshgen
from meshgen.core.errors import InputError


@pytest.fixture(scope="module")
def mesh():
    return meshgen.build(meshgen.plan({"flow": {"reynolds": 1e5, "length": 1.0}}))


def test_foam_setup_goes_into_the_case_folder_beside_its_polymesh(mesh, tmp_path):
    case = tmp_path / "mycase"
    mesh.write(case, format="polymesh")
    written = mesh.write(case, format="foam-setup")
    # OpenFOAM's case layout: <case>/0, <case>/system, <case>/constant (with polyMesh)
    assert (case / "constant" / "polyMesh" / "boundary").is_file()
    for name in ("0/U", "0/p", "system/controlDict", "constant/transportProperties"):
        assert (case / name).is_file(), name
    assert all(case in p.parents for p in written)
    assert sorted(p.name for p in tmp_path.iterdir()) == ["mycase"]  # nothing beside the case


def test_unknown_suffix_lists_only_real_endings(mesh, tmp_path):
    with pytest.raises(InputError) as e:
        mesh.write(tmp_path / "plate.foo")
    text = str(e.value)
    assert ".msh" in text and ".cfg" in text
    assert "in , " not in text and ", ," not in text
