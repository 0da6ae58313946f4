"""SU2 native mesh files: read back by meshio and by an independent parse of the format.

Format source for every check marked "SU2 spec": the published SU2 description, "Mesh
File" page of the SU2 documentation, section "SU2 Native Format" (NDIME=, NPOIN=, NELEM=,
NMARK=, MARKER_TAG=, MARKER_ELEMS=; VTK type ids line 3, quad 9, hexahedron 12).
"""

import logging
from pathlib import Path

import meshio
import numpy as np
import pytest
from samples import BLOCKS, GROUPS

from meshgen.core.errors import ReadError, WriteError
from meshgen.io.readers.su2 import guess_role, read_su2
from meshgen.io.writers import su2
from meshgen.io.writers.su2 import ascii_rows
from meshgen.meshing.mesh import Block, Group, Mesh, Patch, extrude, structured_mesh
from meshgen.meshing.verify import cell_measures, verify_mesh


def small_2d() -> Mesh:
    x = np.array([-1, 0, 0.5, 1, 2.0])
    y = np.array([0, 0.1, 0.3, 1.0])
    return structured_mesh(x, y, BLOCKS, GROUPS)


def graded_2d(ni: int = 301, nj: int = 201) -> Mesh:
    """A larger plate mesh with geometric wall-normal grading (coordinates of many lengths)."""
    x = np.concatenate(
        [np.linspace(-0.5, 0, 51)[:-1], np.linspace(0, 1, ni - 100), np.linspace(1, 2, 51)[1:]]
    )
    y = 0.4 * (np.geomspace(1e-5, 1, nj) - 1e-5) / (1 - 1e-5)
    n = x.size - 1
    groups = [
        ("inlet", "inlet", (Patch("imin"),)),
        ("outlet", "outlet", (Patch("imax"),)),
        ("plate_wall", "wall", (Patch("jmin", 49, n - 50),)),
        ("symmetry", "symmetry", (Patch("jmin", 0, 49), Patch("jmin", n - 50, n))),
        ("top", "farfield", (Patch("jmax", 0, n),)),
    ]
    return structured_mesh(
        x, y, (Block("upstream", 0, 49), Block("plate", 49, n - 50), Block("wake", n - 50, n)), groups
    )


MESHES = {
    "2d": small_2d,
    "3d": lambda: extrude(small_2d(), np.linspace(0, 0.5, 3)),
    "graded": graded_2d,
}


def write(mesh: Mesh, tmp_path: Path) -> Path:
    (path,) = su2.write(mesh, tmp_path, "case")
    assert path == tmp_path / "case.su2"
    return path


def parse_sections(path: Path) -> dict:
    """An independent, deliberately plain reading of the SU2 spec's sections."""
    lines = [ln.strip() for ln in path.read_text().splitlines()]
    out = {"markers": []}
    i = 0
    while i < len(lines):
        ln = lines[i]
        i += 1
        if ln.startswith("NDIME="):
            out["ndime"] = int(ln.split("=")[1])
        elif ln.startswith("NPOIN="):
            n = int(ln.split("=")[1])
            out["points"] = [row.split() for row in lines[i : i + n]]
            i += n
        elif ln.startswith("NELEM="):
            n = int(ln.split("=")[1])
            out["elements"] = [row.split() for row in lines[i : i + n]]
            i += n
        elif ln.startswith("NMARK="):
            out["nmark"] = int(ln.split("=")[1])
        elif ln.startswith("MARKER_TAG="):
            tag = ln.split("=", 1)[1].strip()
            count_line = lines[i]
            assert count_line.startswith("MARKER_ELEMS=")
            n = int(count_line.split("=")[1])
            out["markers"].append((tag, [row.split() for row in lines[i + 1 : i + 1 + n]]))
            i += 1 + n
    return out


@pytest.fixture(autouse=True)
def _quiet_meshio(caplog):
    # meshio warns once per marker that it turns string tags into numbers (known, see
    # shared/pitfalls.md); keep the test log readable.
    caplog.set_level(logging.ERROR)


@pytest.mark.parametrize("kind", list(MESHES))
def test_meshio_reads_counts_and_markers(tmp_path, kind):
    mesh = MESHES[kind]()
    m = meshio.read(write(mesh, tmp_path), file_format="su2")  # independent reader: meshio 5.3.5
    assert m.points.shape == (mesh.n_points, mesh.dim)  # SU2 spec: NDIME 2 -> x y only
    np.testing.assert_array_equal(m.points, mesh.points[:, : mesh.dim])  # repr reads back exactly
    volume = [c for c in m.cells if c.type == mesh.cell_type]
    facets = [c for c in m.cells if c.type == mesh.facet_type]
    assert len(volume) == 1 and len(facets) == 1
    np.testing.assert_array_equal(volume[0].data, mesh.cells)
    # meshio numbers the markers 1, 2, ... in file order in cell data "su2:tag"
    tags = m.cell_data["su2:tag"][m.cells.index(facets[0])]
    counts = np.bincount(tags, minlength=len(mesh.groups) + 1)[1:]
    assert counts.tolist() == list(mesh.group_sizes().values())
    np.testing.assert_array_equal(facets[0].data, np.concatenate([g.facets for g in mesh.groups]))


@pytest.mark.parametrize("kind", list(MESHES))
def test_own_parse_of_sections(tmp_path, kind):
    mesh = MESHES[kind]()
    s = parse_sections(write(mesh, tmp_path))
    assert s["ndime"] == mesh.dim
    # SU2 spec: a point line holds NDIME coordinates (here followed by the point index)
    assert {len(row) for row in s["points"]} == {mesh.dim + 1}
    assert [int(row[-1]) for row in s["points"]] == list(range(mesh.n_points))
    coords = np.array([[float(v) for v in row[: mesh.dim]] for row in s["points"]])
    np.testing.assert_array_equal(coords, mesh.points[:, : mesh.dim])
    # SU2 spec: element line = VTK type id, node ids, (element index); quad 9, hexahedron 12
    vtk_cell, vtk_facet, nodes = (9, 3, 4) if mesh.dim == 2 else (12, 9, 8)
    assert len(s["elements"]) == mesh.n_cells
    assert {row[0] for row in s["elements"]} == {str(vtk_cell)}
    assert {len(row) for row in s["elements"]} == {nodes + 2}
    assert [int(row[-1]) for row in s["elements"]] == list(range(mesh.n_cells))
    # markers: names and element counts equal the Mesh's groups, in order
    assert s["nmark"] == len(mesh.groups)
    assert {tag: len(rows) for tag, rows in s["markers"]} == mesh.group_sizes()
    assert [tag for tag, _ in s["markers"]] == [g.name for g in mesh.groups]
    for _, rows in s["markers"]:
        assert {row[0] for row in rows} == {str(vtk_facet)}  # 2-D: lines; 3-D: quads
        assert {len(row) for row in rows} == {1 + nodes // 2}


@pytest.mark.parametrize("kind", ["2d", "graded"])
def test_quads_read_back_counter_clockwise(tmp_path, kind):
    m = meshio.read(write(MESHES[kind](), tmp_path), file_format="su2")  # meshio's arrays
    q = m.cells_dict["quad"]
    x, y = m.points[q, 0], m.points[q, 1]
    area = 0.5 * np.sum(x * np.roll(y, -1, axis=1) - np.roll(x, -1, axis=1) * y, axis=1)  # shoelace
    assert np.all(area > 0)


def test_hexahedra_read_back_right_handed(tmp_path):
    mesh = MESHES["3d"]()
    m = meshio.read(write(mesh, tmp_path), file_format="su2")
    back = Mesh(points=m.points, cells=m.cells_dict["hexahedron"], groups=())
    vol = cell_measures(back)
    assert np.all(vol > 0)
    assert vol.sum() == pytest.approx(3.0 * 1.0 * 0.5)  # domain x-extent * height * span


@pytest.mark.parametrize("kind", list(MESHES))
def test_round_trip_through_own_reader(tmp_path, kind):
    mesh = MESHES[kind]()
    back = read_su2(write(mesh, tmp_path))
    verify_mesh(back, expected_points=mesh.n_points, expected_cells=mesh.n_cells)
    assert back.group_sizes() == mesh.group_sizes()
    assert [g.role for g in back.groups] == [g.role for g in mesh.groups]  # from the role comments
    np.testing.assert_array_equal(back.points, mesh.points)
    np.testing.assert_array_equal(back.cells, mesh.cells)
    for a, b in zip(back.groups, mesh.groups):
        np.testing.assert_array_equal(a.facets, b.facets)


def test_roles_guessed_without_role_comments(tmp_path):
    path = write(MESHES["graded"](), tmp_path)
    path.write_text("".join(ln for ln in path.read_text().splitlines(True) if not ln.startswith("%")))
    back = read_su2(path)
    assert {g.name: g.role for g in back.groups} == {
        "inlet": "inlet",
        "outlet": "outlet",
        "plate_wall": "wall",
        "symmetry": "symmetry",
        "top": "farfield",
    }
    assert guess_role("Symmetry_Lower") == "symmetry"


def test_reads_file_without_index_columns(tmp_path):
    # Hand-written after the SU2 spec's layout, without the optional trailing indices:
    # two unit quads side by side (x 0..2, y 0..1).
    text = """NDIME= 2
NPOIN= 6
0 0
1 0
2 0
0 1
1 1
2 1
NELEM= 2
9 0 1 4 3
9 1 2 5 4
NMARK= 2
MARKER_TAG= lower
MARKER_ELEMS= 2
3 0 1
3 1 2
MARKER_TAG= rest
MARKER_ELEMS= 4
3 2 5
3 5 4
3 4 3
3 3 0
"""
    path = tmp_path / "two.su2"
    path.write_text(text)
    back = read_su2(path)
    verify_mesh(back)
    assert back.group_sizes() == {"lower": 2, "rest": 4}
    assert cell_measures(back).tolist() == [1.0, 1.0]


def test_published_triangle_example_is_refused(tmp_path):
    # The square example of the SU2 spec (9 points, 8 triangles, type 5), abridged to its
    # volume part and one marker: meshio reads it, the Mesh cannot hold triangles.
    pts = "\n".join(f"{x} {y}" for y in (0, 0.5, 1) for x in (0, 0.5, 1))
    tris = "5 0 1 3\n5 1 4 3\n5 1 2 4\n5 2 5 4\n5 3 4 6\n5 4 7 6\n5 4 5 7\n5 5 8 7"
    text = f"NDIME= 2\nNPOIN= 9\n{pts}\nNELEM= 8\n{tris}\nNMARK= 1\nMARKER_TAG= lower\nMARKER_ELEMS= 2\n3 0 1\n3 1 2\n"
    path = tmp_path / "square.su2"
    path.write_text(text)
    assert len(meshio.read(path, file_format="su2").cells_dict["triangle"]) == 8
    with pytest.raises(ReadError, match="element types"):
        read_su2(path)


@pytest.mark.parametrize(
    "text, message",
    [
        ("NPOIN= 1\n0 0\n", "before NDIME"),
        ("NDIME= 4\n", "NDIME= 4"),
        ("NDIME= 2\nNPOIN= 3\n0 0\n1 0\n", "file ends"),
        ("NDIME= 2\nNPOIN= 2\n0 0\n1 x\n", "unreadable"),
    ],
)
def test_bad_files_raise_read_error(tmp_path, text, message):
    path = tmp_path / "bad.su2"
    path.write_text(text)
    with pytest.raises(ReadError, match=message):
        read_su2(path)


def test_bad_marker_tag_is_refused_and_nothing_written(tmp_path):
    mesh = small_2d()
    bad = Mesh(
        mesh.points, mesh.cells, mesh.groups[:-1] + (Group("far field", "farfield", mesh.groups[-1].facets),)
    )
    with pytest.raises(WriteError, match="far field"):
        su2.write(bad, tmp_path, "case")
    assert list(tmp_path.iterdir()) == []  # atomic: no partial or temporary file left


def test_ascii_rows_matches_python_formatting():
    # Python's own %d and repr() are the reference for the vectorised formatter.
    rng = np.random.default_rng(7)
    ints = rng.integers(0, 10**15, (500, 2))
    ints[:4] = [[0, 9], [10, 99], [100, 7], [10**15 - 1, 1]]
    floats = rng.standard_normal(500) * 10.0 ** rng.integers(-300, 300, 500)
    floats[:5] = [0.0, -0.0, 1e-5, -123.5, 0.1]
    text = ascii_rows([ints[:, 0], floats, ints[:, 1]], [b"<", b" ", b",", b">\n"])
    expected = "".join(f"<{a} {float(f) + 0.0!r},{b}>\n" for a, f, b in zip(ints[:, 0], floats, ints[:, 1]))
    assert text == expected.encode()


def test_registered_format_writes_what_it_announces(tmp_path):
    from meshgen.io.writers.registry import get_format

    fmt = get_format("su2")
    assert fmt.write(small_2d(), tmp_path, "case") == fmt.outputs(tmp_path, "case") == [tmp_path / "case.su2"]


@pytest.mark.parametrize(
    "seps",
    [
        [b"", b"\n"],  # one column, the ending goes into the free leading bytes
        [b"4(", b" ", b")\n"],  # a prefix too long for the free bytes of some widths
        [b"<<<<<", b"=", b"\n"],  # a prefix longer than one unit
    ],
)
def test_ascii_rows_every_digit_count(seps):
    # Python's str() of each integer is the reference; every decimal width from 1 to 19
    # digits, with the top of the column at each width too (it sets the units used).
    ints = np.array([0, 1, 9] + [10**d + e for d in range(1, 19) for e in (-1, 0, 7)] + [2**63 - 1], np.int64)
    for top in (9, 9999, 10**4, 10**7 - 1, 10**8, 2**31 - 1, 2**31, 10**12, 2**63 - 1):
        col = ints[ints <= top]
        cols = [col, col[::-1].copy()][: len(seps) - 1]
        text = ascii_rows(cols, seps)
        rows = zip(*cols)
        expected = "".join(
            seps[0].decode() + "".join(f"{v}" + seps[k + 1].decode() for k, v in enumerate(r)) for r in rows
        )
        assert text == expected.encode(), top


def test_ascii_rows_across_blocks():
    # More rows than one block of the formatter holds; Python's formatting is the reference.
    rng = np.random.default_rng(11)
    n = 3 * (su2._BLOCK_BYTES // 12) + 5
    ids = rng.integers(0, 10**6, n)
    coords = np.round(rng.standard_normal(n), 3)
    text = ascii_rows([coords, ids], [b"(", b" ", b")\n"])
    expected = "".join(f"({c + 0.0!r} {i})\n" for c, i in zip(coords.tolist(), ids.tolist()))  # -0.0 as 0.0
    assert text == expected.encode()
    assert ascii_rows([ids[:0]], [b"", b"\n"]) == b""
