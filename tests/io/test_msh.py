"""MSH 4.1 and 2.2 written with numpy, judged by gmsh: the same file as gmsh writes.

The reference is the file gmsh itself writes after the Mesh is loaded into a discrete
gmsh model (one entity and physical group for the cells, one per boundary group), as
meshgen wrote MSH before it had its own writer. gmsh opens both files and must return
the same nodes, elements by type, physical groups and names; meshio must read ours. The
bytes must be the same too, except the entity bounding boxes: gmsh samples its discrete
curves' parametrisation for those (values off in the last bits), ours are the exact node
ranges (the MSH 4.1 description asks for the entity's bounding box; readers do not use
them to build the mesh).
"""

from pathlib import Path

import meshio
import numpy as np
import pytest
from samples import BLOCKS, GROUPS

from meshgen.io.writers import FORMATS
from meshgen.io.writers.msh import GMSH_TYPE
from meshgen.meshing.gmsh_session import gmsh_session
from meshgen.meshing.mesh import ExtrudedMesh, Mesh, extrude, structured_mesh

#: The MSH 4.1 binary header fields (gmsh reference manual, "MSH file format"):
#: per entity an int tag, then (min x, y, z, max x, y, z) as doubles.
BOX_BYTES = 6 * 8


def gmsh_written(mesh: Mesh, path: Path, version: float, binary: bool) -> Path:
    """The file gmsh writes for ``mesh`` loaded as a discrete model (the reference)."""
    d = mesh.dim
    with gmsh_session() as gmsh:
        gmsh.model.addDiscreteEntity(d, 1)
        gmsh.model.mesh.addNodes(d, 1, np.arange(1, mesh.n_points + 1, dtype=np.uint64), mesh.points.ravel())
        gmsh.model.mesh.addElementsByType(1, GMSH_TYPE[mesh.cell_type], np.arange(1, mesh.n_cells + 1),
                                          (mesh.cells + 1).ravel())
        gmsh.model.addPhysicalGroup(d, [1], 1, name=mesh.cell_group)
        first = mesh.n_cells + 1
        for k, g in enumerate(mesh.groups, start=1):
            gmsh.model.addDiscreteEntity(d - 1, k)
            n = g.facets.shape[0]
            gmsh.model.mesh.addElementsByType(k, GMSH_TYPE[mesh.facet_type], np.arange(first, first + n),
                                              (g.facets + 1).ravel())
            gmsh.model.addPhysicalGroup(d - 1, [k], k + 1, name=g.name)
            first += n
        gmsh.option.setNumber("Mesh.MshFileVersion", version)
        gmsh.option.setNumber("Mesh.Binary", 1 if binary else 0)
        gmsh.option.setNumber("Mesh.SaveAll", 0)
        gmsh.write(str(path))
    return path


def gmsh_read(path: Path) -> dict:
    """What gmsh reads from a file: nodes, elements per (dim, entity, type), groups."""
    with gmsh_session() as gmsh:
        gmsh.open(str(path))
        tags, coords, _ = gmsh.model.mesh.getNodes()
        elements = {}
        for dim, ent in gmsh.model.getEntities():
            types, etags, enodes = gmsh.model.mesh.getElements(dim, ent)
            for t, et, en in zip(types, etags, enodes):
                elements[(dim, ent, int(t))] = (np.asarray(et), np.asarray(en))
        groups = {}
        for dim, tag in gmsh.model.getPhysicalGroups():
            groups[(dim, tag)] = (gmsh.model.getPhysicalName(dim, tag),
                                  [int(e) for e in gmsh.model.getEntitiesForPhysicalGroup(dim, tag)])
    return {"tags": np.asarray(tags), "coords": np.asarray(coords), "elements": elements, "groups": groups}


def mask_boxes(data: bytes) -> bytes:
    """The MSH 4.1 binary file with every entity bounding box zeroed."""
    start = data.index(b"$Entities\n") + len(b"$Entities\n")
    counts = np.frombuffer(data, "<u8", 4, start)
    pos = start + 32
    out = bytearray(data)
    for d, n in enumerate(counts.tolist()):
        for _ in range(n):
            pos += 4  # tag
            size = 3 * 8 if d == 0 else BOX_BYTES
            out[pos:pos + size] = bytes(size)
            pos += size
            n_phys = int(np.frombuffer(data, "<u8", 1, pos)[0])
            pos += 8 + 4 * n_phys
            if d > 0:
                n_bnd = int(np.frombuffer(data, "<u8", 1, pos)[0])
                pos += 8 + 4 * n_bnd
    return bytes(out)


def sample(kind: str) -> Mesh:
    x = np.array([-1.0, 0.0, 1 / 3, 1.0, 2.0])
    y = np.array([0.0, 1e-7, 0.30000000000000004, 1.0])
    m = structured_mesh(x, y, BLOCKS, GROUPS)
    if kind == "2d":
        return m
    if kind == "3d":
        return extrude(m, np.array([-0.0, 0.1, 0.25, 0.5]))
    # no structured layout, nodes shuffled: the writer must not rely on the grid
    rng = np.random.default_rng(7)
    perm = rng.permutation(m.n_points)
    inv = np.empty_like(perm)
    inv[perm] = np.arange(perm.size)
    groups = tuple(type(g)(g.name, g.role, inv[g.facets]) for g in m.groups)
    return Mesh(m.points[perm], inv[m.cells], groups)


KINDS = ["2d", "3d", "unstructured"]


@pytest.mark.parametrize("kind", KINDS)
@pytest.mark.parametrize("fmt, version, binary", [("msh", 4.1, True), ("msh2", 2.2, False)])
def test_same_file_as_gmsh_writes(tmp_path, kind, fmt, version, binary):
    mesh = sample(kind)
    (ours,) = FORMATS[fmt].write(mesh, tmp_path, "ours")
    ref = gmsh_written(mesh, tmp_path / f"ref{ours.name[4:]}", version, binary)
    a, b = gmsh_read(ours), gmsh_read(ref)
    np.testing.assert_array_equal(a["tags"], b["tags"])
    np.testing.assert_array_equal(a["coords"], b["coords"])
    assert a["elements"].keys() == b["elements"].keys()
    for key in a["elements"]:
        np.testing.assert_array_equal(a["elements"][key][0], b["elements"][key][0])
        np.testing.assert_array_equal(a["elements"][key][1], b["elements"][key][1])
    assert a["groups"] == b["groups"]
    assert {name for name, _ in a["groups"].values()} == {g.name for g in mesh.groups} | {mesh.cell_group}
    if binary:
        assert mask_boxes(ours.read_bytes()) == mask_boxes(ref.read_bytes())
    else:
        assert ours.read_bytes() == ref.read_bytes()


@pytest.mark.parametrize("kind", KINDS)
@pytest.mark.parametrize("fmt, meshio_format", [("msh", "gmsh"), ("msh2", "gmsh")])
def test_meshio_reads_it(tmp_path, kind, fmt, meshio_format):
    mesh = sample(kind)
    (path,) = FORMATS[fmt].write(mesh, tmp_path, "m")
    m = meshio.read(path, file_format=meshio_format)
    if fmt == "msh":
        np.testing.assert_array_equal(m.points, mesh.points)
    else:  # 16 significant digits, as gmsh prints them: 0.30000000000000004 reads back as 0.3
        np.testing.assert_allclose(m.points, mesh.points, rtol=1e-15, atol=0)
    cells = np.concatenate([b.data for b in m.cells if b.type == mesh.cell_type])
    np.testing.assert_array_equal(cells, mesh.cells)
    if fmt == "msh":  # MSH 4.1: one cell block per entity, sets named after the groups
        sizes = {n: sum(len(i) for i in v) for n, v in m.cell_sets.items() if n != "gmsh:bounding_entities"}
        assert sizes == {**mesh.group_sizes(), mesh.cell_group: mesh.n_cells}
    else:  # MSH 2.2: names only in field_data (pitfalls.md)
        assert set(m.field_data) == {g.name for g in mesh.groups} | {mesh.cell_group}


def test_lazy_extrusion_writes_the_same_bytes_without_building_its_cells(tmp_path):
    base = sample("2d")
    for fmt in ("msh", "msh2"):
        lazy = extrude(base, np.linspace(0.0, 0.3, 5))
        (a,) = FORMATS[fmt].write(lazy, tmp_path / "lazy", "m")
        assert isinstance(lazy, ExtrudedMesh) and not lazy.built()
        eager = Mesh(lazy.points, lazy.cells, lazy.groups, lazy.shape, lazy.blocks)
        (b,) = FORMATS[fmt].write(eager, tmp_path / "eager", "m")
        assert a.read_bytes() == b.read_bytes()
