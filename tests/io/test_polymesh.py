"""OpenFOAM polyMesh folders: the rules of the published format, checked on the files.

Format source for every check marked "OF spec": the published OpenFOAM description of the
polyMesh, OpenFOAM User Guide, section "Mesh description" (points, faces, owner,
neighbour, boundary; internal faces first in upper-triangular order, owner < neighbour,
face normal by the right-hand rule pointing from owner to neighbour and out of the domain
on boundaries, boundary faces grouped per patch in the order of the boundary file, 2-D
cases one cell thick with ``empty`` front and back patches). The files are parsed back by
meshgen.readers.foam, whose only knowledge is the file syntax; the geometric checks below
use nothing from the writer.
"""

import dataclasses
import re
from pathlib import Path

import numpy as np
import pytest

from meshgen.core.errors import MeshError, ReadError, WriteError
from meshgen.io.readers.foam import read_polymesh
from meshgen.io.writers import foam
from meshgen.io.writers.foam import extrusion_span, write_polymesh
from meshgen.meshing.mesh import Block, Group, Mesh, Patch, extrude, structured_mesh

FILES = {
    "points": "vectorField",
    "faces": "faceList",
    "owner": "labelList",
    "neighbour": "labelList",
    "boundary": "polyBoundaryMesh",
}
from samples import BLOCKS, GROUPS


def small_2d() -> Mesh:
    return structured_mesh(np.array([-1, 0, 0.5, 1, 2.0]), np.array([0, 0.1, 0.3, 1.0]), BLOCKS, GROUPS)


def graded_2d(ni: int = 301, nj: int = 201) -> Mesh:
    """300 x 200 cells: clustered at the plate's edges and geometrically graded off the wall."""
    x = np.concatenate(
        [
            np.linspace(-0.5, 0, 51)[:-1],
            0.5 - 0.5 * np.cos(np.linspace(0, np.pi, ni - 100)),
            np.geomspace(1, 2, 51)[1:],
        ]
    )
    y = 0.4 * (np.geomspace(1e-5, 1, nj) - 1e-5) / (1 - 1e-5)
    n = x.size - 1
    groups = [
        ("inlet", "inlet", (Patch("imin"),)),
        ("outlet", "outlet", (Patch("imax"),)),
        ("wall", "wall", (Patch("jmin", 49, n - 50),)),
        ("symmetry", "symmetry", (Patch("jmin", 0, 49), Patch("jmin", n - 50, n))),
        ("farfield", "farfield", (Patch("jmax", 0, n),)),
    ]
    return structured_mesh(x, y, (Block("u", 0, 49), Block("p", 49, n - 50), Block("w", n - 50, n)), groups)


def check_polymesh(pm: dict, n_cells: int, patch_sizes: dict, volume: float) -> None:
    """The OF spec's rules and closed, positive cells, from the parsed arrays alone."""
    p, f, own, nei = pm["points"], pm["faces"], pm["owner"], pm["neighbour"]
    ni = nei.size
    assert pm["n_cells"] == n_cells
    # OF spec: owner < neighbour; internal faces sorted by owner, then neighbour
    assert np.all(own[:ni] < nei)
    key = own[:ni] * n_cells + nei
    assert np.all(np.diff(key) > 0)
    # OF spec: boundary faces grouped per patch, contiguous, in the boundary file's order
    start = ni
    for name, (kind, first, count) in pm["patches"].items():
        assert first == start, name
        start += count
    assert start == f.shape[0]
    assert {name: v[2] for name, v in pm["patches"].items()} == patch_sizes
    # OF spec: no unused points
    assert np.all(np.bincount(f.ravel(), minlength=p.shape[0]) > 0)
    # each hexahedron has six faces
    assert np.all(np.bincount(np.concatenate([own, nei]), minlength=n_cells) == 6)
    # face area vectors by the right-hand rule (half the cross product of the diagonals)
    q = p[f]
    area = 0.5 * np.cross(q[:, 2] - q[:, 0], q[:, 3] - q[:, 1])
    centre = q.mean(axis=1)
    # closed cells: outward area vectors (owned +, neighboured -) sum to zero per cell
    closure = np.stack(
        [np.bincount(own, area[:, k], n_cells) - np.bincount(nei, area[:ni, k], n_cells) for k in range(3)],
        axis=1,
    )
    scale = np.bincount(own, np.linalg.norm(area, axis=1), n_cells)
    assert np.all(np.linalg.norm(closure, axis=1) <= 1e-12 * scale)
    # volumes by the divergence theorem: V = 1/3 sum over faces of x_f . S_f (outward)
    flux = np.einsum("fk,fk->f", centre, area) / 3.0
    vol = np.bincount(own, flux, n_cells) - np.bincount(nei, flux[:ni], n_cells)
    assert np.all(vol > 0)
    assert vol.sum() == pytest.approx(volume, rel=1e-12)
    # normals from owner to neighbour inside, out of the domain on the boundary
    cc = (
        np.stack(
            [
                np.bincount(own, centre[:, k], n_cells) + np.bincount(nei, centre[:ni, k], n_cells)
                for k in range(3)
            ],
            axis=1,
        )
        / 6.0
    )
    assert np.all(np.einsum("fk,fk->f", area[:ni], cc[nei] - cc[own[:ni]]) > 0)
    assert np.all(np.einsum("fk,fk->f", area[ni:], centre[ni:] - cc[own[ni:]]) > 0)


def extent(mesh: Mesh, k: int) -> float:
    return float(np.ptp(mesh.points[:, k]))


@pytest.mark.parametrize("make", [small_2d, graded_2d], ids=["small", "300x200"])
def test_2d_mesh_is_extruded_to_one_empty_layer(tmp_path, make):
    mesh = make()
    (folder,) = foam.write(mesh, tmp_path, "ignored")
    assert folder == tmp_path / "constant" / "polyMesh"
    assert sorted(p.name for p in folder.iterdir()) == sorted(FILES)
    pm = read_polymesh(tmp_path)
    span = extrusion_span(mesh)
    assert span == min(1.0, extent(mesh, 0) / 100)
    sizes = {**mesh.group_sizes(), "back": mesh.n_cells, "front": mesh.n_cells}
    check_polymesh(pm, mesh.n_cells, sizes, extent(mesh, 0) * extent(mesh, 1) * span)
    types = {name: v[0] for name, v in pm["patches"].items()}
    assert types == {
        "inlet": "patch",
        "outlet": "patch",
        "wall": "wall",
        "symmetry": "symmetryPlane",
        "farfield": "patch",
        "back": "empty",
        "front": "empty",
    }
    # OF spec: a 2-D case is one cell thick
    assert np.unique(pm["points"][:, 2]).tolist() == [0.0, span]
    # coordinates are written exactly (shortest round-trip form)
    np.testing.assert_array_equal(
        np.unique(pm["points"][:, :2], axis=0), np.unique(mesh.points[:, :2], axis=0)
    )


@pytest.mark.parametrize("span, want", [(None, "symmetryPlane"), ("symmetry", "symmetryPlane"), ("patch", "patch")])
def test_3d_front_and_back_follow_the_span_boundary(tmp_path, span, want):
    # domain.span_boundary decides the type in every format that carries one (CGNS: the
    # family's FamilyBC); a mesh with no choice recorded takes the default, symmetry.
    mesh = extrude(small_2d(), np.linspace(0, 0.5, 4))
    if span is not None:
        mesh = dataclasses.replace(mesh, meta={"span_boundary": span})
    write_polymesh(mesh, tmp_path)
    pm = read_polymesh(tmp_path / "constant" / "polyMesh")
    check_polymesh(pm, mesh.n_cells, mesh.group_sizes(), 3.0 * 1.0 * 0.5)
    assert pm["patches"]["front"][0] == want and pm["patches"]["back"][0] == want
    np.testing.assert_array_equal(pm["points"], mesh.points)


def test_one_layer_3d_keeps_the_chosen_type_and_2d_gets_empty(tmp_path):
    mesh = dataclasses.replace(extrude(small_2d(), np.array([0.0, 0.2])), meta={"span_boundary": "patch"})
    write_polymesh(mesh, tmp_path / "a")
    pm = read_polymesh(tmp_path / "a")
    check_polymesh(pm, mesh.n_cells, mesh.group_sizes(), 3.0 * 1.0 * 0.2)
    assert pm["patches"]["front"][0] == "patch" and pm["patches"]["back"][0] == "patch"
    write_polymesh(small_2d(), tmp_path / "b")  # a 2-D mesh: OpenFOAM's one-layer 2-D, empty
    pm = read_polymesh(tmp_path / "b")
    assert pm["patches"]["front"][0] == "empty" and pm["patches"]["back"][0] == "empty"


def test_headers_name_class_object_and_counts(tmp_path):
    mesh = small_2d()
    folder = write_polymesh(mesh, tmp_path, span=0.25)
    pm = read_polymesh(tmp_path)
    for name, cls in FILES.items():
        text = (folder / name).read_text()
        head = re.search(r"FoamFile\s*\{(.*?)\}", text, re.DOTALL).group(1)  # OF spec: FoamFile dictionary
        assert re.search(rf"\bclass\s+{cls};", head) and re.search(rf"\bobject\s+{name};", head)
        assert re.search(r"\bformat\s+ascii;", head)
    note = re.search(r'note\s+"([^"]*)"', (folder / "owner").read_text()).group(1)
    counts = dict(re.findall(r"(\w+):(\d+)", note))
    assert counts == {
        "nPoints": str(pm["points"].shape[0]),
        "nCells": str(mesh.n_cells),
        "nFaces": str(pm["faces"].shape[0]),
        "nInternalFaces": str(pm["n_internal_faces"]),
    }
    # OF spec: faces written as n(p0 p1 ...)
    body = (folder / "faces").read_text().split("(", 1)[1]
    assert re.match(r"\s*4\(\d+ \d+ \d+ \d+\)\n", body)
    assert np.unique(pm["points"][:, 2]).tolist() == [0.0, 0.25]


def test_rewrite_replaces_folder_and_leaves_no_temporaries(tmp_path):
    write_polymesh(small_2d(), tmp_path)
    (tmp_path / "constant" / "polyMesh" / "stale").write_text("x")
    write_polymesh(graded_2d(161, 21), tmp_path)
    assert sorted(p.name for p in (tmp_path / "constant").iterdir()) == ["polyMesh"]
    assert not (tmp_path / "constant" / "polyMesh" / "stale").exists()
    assert read_polymesh(tmp_path)["n_cells"] == 160 * 20


def test_invalid_names_and_spans_are_refused(tmp_path):
    mesh = small_2d()
    renamed = Mesh(
        mesh.points, mesh.cells, mesh.groups[:-1] + (Group("far field", "farfield", mesh.groups[-1].facets),)
    )
    with pytest.raises(WriteError, match="far field"):
        write_polymesh(renamed, tmp_path)
    front = Mesh(
        mesh.points, mesh.cells, mesh.groups[:-1] + (Group("front", "farfield", mesh.groups[-1].facets),)
    )
    with pytest.raises(WriteError, match="front"):
        write_polymesh(front, tmp_path)
    with pytest.raises(WriteError, match="span"):
        write_polymesh(mesh, tmp_path, span=-1.0)
    with pytest.raises(WriteError, match="3-D"):
        write_polymesh(extrude(mesh, np.array([0.0, 1.0])), tmp_path, span=1.0)
    assert not (tmp_path / "constant").exists() or not any((tmp_path / "constant").iterdir())


def test_untagged_boundary_faces_are_a_mesh_error(tmp_path):
    mesh = extrude(small_2d(), np.array([0.0, 1.0]))
    missing = Mesh(mesh.points, mesh.cells, tuple(g for g in mesh.groups if g.name != "wall"))
    with pytest.raises(MeshError, match="2 boundary faces belong to no group"):
        foam.polymesh(missing)
    doubled = Mesh(
        mesh.points, mesh.cells, mesh.groups + (Group("again", "wall", mesh.group("wall").facets),)
    )
    with pytest.raises(MeshError, match="more than one group"):
        foam.polymesh(doubled)


def test_reader_refuses_binary_and_missing_folders(tmp_path):
    write_polymesh(small_2d(), tmp_path)
    points = tmp_path / "constant" / "polyMesh" / "points"
    points.write_text(points.read_text().replace("format      ascii;", "format      binary;"))
    with pytest.raises(ReadError, match="binary"):
        read_polymesh(tmp_path)
    with pytest.raises(ReadError, match="no constant/polyMesh"):
        read_polymesh(tmp_path / "nowhere")


def test_reader_takes_comments_and_extra_patch_entries(tmp_path):
    # Syntax the OF spec allows and meshgen does not write: C/C++ comments around the
    # list and extra keywords in a patch entry.
    folder = write_polymesh(small_2d(), tmp_path)
    for name in ("owner", "boundary"):
        path = folder / name
        path.write_text("/* banner */\n" + path.read_text() + "\n// end (of file)\n")
    boundary = folder / "boundary"
    boundary.write_text(
        boundary.read_text().replace("type            wall;", "type wall;\n        inGroups 1(wall);")
    )
    pm = read_polymesh(Path(folder))
    assert pm["patches"]["wall"][0] == "wall"
    assert pm["owner"].size == pm["faces"].shape[0]


def test_registered_format_writes_what_it_announces(tmp_path):
    from meshgen.io.writers.registry import get_format

    fmt = get_format("polymesh")
    written = fmt.write(small_2d(), tmp_path, "case")
    assert written == fmt.outputs(tmp_path, "case") == [tmp_path / "constant" / "polyMesh"]
    assert all(p.is_dir() for p in written)


def one_cell_wide() -> Mesh:
    """One cell in x, two in y: the smallest grid (ni = 2)."""
    groups = [
        ("inlet", "inlet", (Patch("imin"),)),
        ("outlet", "outlet", (Patch("imax"),)),
        ("wall", "wall", (Patch("jmin", 0, 1),)),
        ("top", "farfield", (Patch("jmax", 0, 1),)),
    ]
    return structured_mesh(np.array([0.0, 1.0]), np.array([0.0, 0.5, 1.0]), (Block("b", 0, 1),), groups)


def unstructured(mesh: Mesh) -> Mesh:
    """The same cells and groups without the grid layout: polymesh() takes the general path."""
    return Mesh(mesh.points, mesh.cells, mesh.groups)


def reordered_facets(mesh: Mesh) -> Mesh:
    """Groups in reverse order, each facet's nodes rotated and reversed: the same node sets."""
    turn = [Group(g.name, g.role, np.roll(g.facets, 1, axis=1)[:, ::-1].copy()) for g in mesh.groups]
    groups = tuple(turn[::-1])
    return Mesh(mesh.points, mesh.cells, groups, shape=mesh.shape)


@pytest.mark.parametrize(
    "make",
    [
        lambda: extrude(small_2d(), np.array([0.0, 0.2])),
        lambda: extrude(graded_2d(121, 31), np.linspace(0, 0.3, 4)),
        lambda: reordered_facets(extrude(graded_2d(121, 11), np.array([0.0, 0.1, 0.4]))),
        lambda: extrude(one_cell_wide(), np.array([0.0, 1.0, 2.0])),
    ],
    ids=["one-layer", "three-layers", "reordered-facets", "one-cell-wide"],
)
def test_grid_arithmetic_matches_the_face_sort(make):
    # A structured mesh is paired by grid arithmetic; the general path (one sort of face
    # keys, no grid layout) must give the same arrays, so the files cannot differ.
    mesh = make()
    assert foam._grid_paired(mesh) is not None  # the arithmetic path is taken
    fast, general = foam.polymesh(mesh), foam.polymesh(unstructured(mesh))
    for name in ("faces", "owner", "neighbour"):
        np.testing.assert_array_equal(getattr(fast, name), getattr(general, name), err_msg=name)
    assert fast.patches == general.patches
    # and the result follows the OF spec on its own
    pm = {"points": mesh.points, "faces": fast.faces, "owner": fast.owner, "neighbour": fast.neighbour,
          "n_cells": mesh.n_cells, "patches": {n: (k, s, c) for n, k, s, c in fast.patches}}
    x, y, z = (extent(mesh, k) for k in range(3))
    check_polymesh(pm, mesh.n_cells, mesh.group_sizes(), x * y * z)


def test_renumbered_mesh_takes_the_general_path(tmp_path):
    # Points and cells in random order, no grid layout: the general path alone, checked
    # against the OF spec rules from the parsed files.
    mesh = extrude(graded_2d(121, 21), np.array([0.0, 0.1]))
    rng = np.random.default_rng(2)
    perm = rng.permutation(mesh.n_points)
    new_id = np.empty_like(perm)
    new_id[perm] = np.arange(perm.size)
    groups = tuple(Group(g.name, g.role, new_id[g.facets]) for g in mesh.groups)
    renumbered = Mesh(mesh.points[perm], new_id[mesh.cells][rng.permutation(mesh.n_cells)], groups)
    assert foam._grid_paired(renumbered) is None
    write_polymesh(renumbered, tmp_path)
    pm = read_polymesh(tmp_path)
    check_polymesh(pm, mesh.n_cells, mesh.group_sizes(), extent(mesh, 0) * extent(mesh, 1) * 0.1)
    assert pm["patches"]["front"][0] == "symmetryPlane"  # a 3-D mesh with no recorded choice


def test_grid_with_a_doubly_tagged_face_falls_back_and_is_refused():
    mesh = extrude(small_2d(), np.array([0.0, 1.0]))
    wall = mesh.group("wall").facets
    groups = [Group(g.name, g.role, np.concatenate([g.facets, wall[:1]]) if g.name == "inlet" else g.facets)
              for g in mesh.groups]  # one wall face tagged by the inlet as well
    doubled = Mesh(mesh.points, mesh.cells, tuple(groups), shape=mesh.shape)
    assert foam._grid_paired(doubled) is None
    with pytest.raises(MeshError, match="more than one group"):
        foam.polymesh(doubled)
