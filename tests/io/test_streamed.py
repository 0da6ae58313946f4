"""Streamed writing: a lazy extrusion is written without building its hexahedra, into the
same bytes as the same mesh held whole, also when the pieces are tiny (many slabs)."""

import dataclasses

import meshio
import numpy as np
import pytest
from samples import BLOCKS, GROUPS

from meshgen.io.writers import FORMATS, cgns, msh, plot3d, vtu
from meshgen.meshing.mesh import ExtrudedMesh, Mesh, extrude, structured_mesh

Z = np.array([0.0, 0.1, 0.25, 0.3, 0.5])


def lazy(structured: bool = True) -> ExtrudedMesh:
    m = structured_mesh(np.array([-1.0, 0.0, 0.5, 1.0, 2.0]), np.array([0.0, 0.1, 0.3, 1.0]), BLOCKS, GROUPS)
    if not structured:
        m = dataclasses.replace(m, shape=None, blocks=())
    return extrude(m, Z)


def built(m: ExtrudedMesh) -> Mesh:
    return Mesh(m.points, m.cells, m.groups, m.shape, m.blocks, m.cell_group, dict(m.meta))


def files(paths) -> dict[str, bytes]:
    out = {}
    for p in paths:
        for f in sorted(p.rglob("*")) if p.is_dir() else [p]:
            if f.is_file():
                out[f.name] = f.read_bytes()
    return out


STREAMED = ["msh", "msh2", "cgns", "cgns-single", "vtu", "plot3d", "polymesh", "polymesh-binary"]


#: (format, structured layout): Plot3D has no unstructured form; polyMesh streams grids
#: only (an unstructured one takes the general path, built).
CASES = [(f, s) for f in STREAMED for s in (True, False) if s or f not in ("plot3d", "polymesh", "polymesh-binary")]


@pytest.mark.parametrize("fmt, structured", CASES, ids=[f"{f}-{'grid' if s else 'flat'}" for f, s in CASES])
def test_lazy_mesh_written_in_tiny_pieces_gives_the_same_bytes(tmp_path, monkeypatch, fmt, structured):
    monkeypatch.setattr(cgns, "PIECE_VALUES", 7)  # a few values per piece: many pieces
    monkeypatch.setattr(msh, "CHUNK", 5)
    monkeypatch.setattr(plot3d, "SLAB_VALUES", 7)
    m = lazy(structured)
    a = files(FORMATS[fmt].write(m, tmp_path / "lazy", "m"))
    assert not m.built()
    b = files(FORMATS[fmt].write(built(m), tmp_path / "built", "m"))
    assert a.keys() == b.keys() and a == b


def test_vtu_appended_arrays_read_back_by_meshio(tmp_path):
    """meshio's VTU reader (independent of ours) finds the points, the hexahedra and each
    group's facets with its id, and the id-to-name field data (VTK XML appended raw data)."""
    m = lazy()
    (path,) = vtu.write(m, tmp_path, "m")
    r = meshio.read(path, file_format="vtu")
    np.testing.assert_array_equal(r.points, m.points)
    by_type = {b.type: (b.data, np.ravel(ids)) for b, ids in zip(r.cells, r.cell_data["group_id"], strict=True)}
    np.testing.assert_array_equal(by_type["hexahedron"][0], m.cells)
    assert set(by_type["hexahedron"][1].tolist()) == {0}
    quads, ids = by_type["quad"]
    names = {int(np.asarray(v).ravel()[0]): k for k, v in r.field_data.items()}
    assert names[0] == m.cell_group
    for k, g in enumerate(m.groups, start=1):
        assert names[k] == g.name
        np.testing.assert_array_equal(quads[ids == k], g.facets)


@pytest.mark.parametrize("fmt, structured", CASES, ids=[f"{f}-{'grid' if s else 'flat'}" for f, s in CASES])
def test_lazy_mesh_written_in_default_pieces_gives_the_same_bytes(tmp_path, fmt, structured):
    """Pieces larger than a node plane: a lazy extrusion's point blocks end at every plane,
    so a writer must place each block by its own length, not by the piece size."""
    m = lazy(structured)
    a = files(FORMATS[fmt].write(m, tmp_path / "lazy", "m"))
    b = files(FORMATS[fmt].write(built(m), tmp_path / "built", "m"))
    assert a.keys() == b.keys() and a == b


@pytest.mark.parametrize("kind", ["2d", "lazy", "shuffled"])
def test_binary_polymesh_reads_back_as_the_ascii_one(tmp_path, kind):
    """foamlib (an independent parser of OpenFOAM files) reads the binary files into the same
    points, faces, owners, neighbours and patches as the ASCII ones; the faces come as a
    faceCompactList (offsets 0, 4, 8, ... into the node labels)."""
    from foamlib import FoamFile

    from meshgen.io.writers.foam import write_polymesh

    m = lazy()
    if kind == "2d":
        m = m.base
    elif kind == "shuffled":  # no grid layout: the general path
        b = built(m)
        order = np.random.default_rng(2).permutation(b.n_cells)
        m = Mesh(b.points, b.cells[order], b.groups)
    a = write_polymesh(m, tmp_path / "ascii")
    b = write_polymesh(m, tmp_path / "binary", binary=True)
    for name in ("points", "owner", "neighbour", "boundary"):
        x, y = FoamFile(a / name)[None], FoamFile(b / name)[None]
        assert (np.array_equal(x, y) if name != "boundary" else x == y), name
    offsets, labels = FoamFile(b / "faces")[None]
    faces = np.asarray(FoamFile(a / "faces")[None])
    np.testing.assert_array_equal(offsets, 4 * np.arange(faces.shape[0] + 1))
    np.testing.assert_array_equal(labels.reshape(-1, 4), faces)
    assert "format      binary;" in (b / "owner").read_bytes()[:400].decode("latin-1")
