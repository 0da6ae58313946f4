"""Streamed writing: a lazy extrusion is written without building its hexahedra, into the
same bytes as the same mesh held whole, also when the pieces are tiny (many slabs)."""

import dataclasses

import numpy as np
import pytest
from samples import BLOCKS, GROUPS

from meshgen.io.writers import FORMATS, cgns, msh
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


STREAMED = ["msh", "msh2", "cgns"]


@pytest.mark.parametrize("structured", [True, False], ids=["structured", "unstructured"])
@pytest.mark.parametrize("fmt", STREAMED)
def test_lazy_mesh_written_in_tiny_pieces_gives_the_same_bytes(tmp_path, monkeypatch, fmt, structured):
    monkeypatch.setattr(cgns, "PIECE_VALUES", 7)  # a few values per piece: many pieces
    monkeypatch.setattr(msh, "CHUNK", 5)
    m = lazy(structured)
    a = files(FORMATS[fmt].write(m, tmp_path / "lazy", "m"))
    assert not m.built()
    b = files(FORMATS[fmt].write(built(m), tmp_path / "built", "m"))
    assert a.keys() == b.keys() and a == b
