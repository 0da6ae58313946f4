"""Periodic spanwise sides in every format that carries them, read back by independent readers.

Every front face must have exactly one back face at the same (x, y), the front being the
back moved by (0, 0, Lz). Readers and references:

* MSH 4.1 and 2.2: gmsh's own reader (``getPeriodicNodes``; gmsh reference manual, "MSH
  file format", $Periodic) and meshio's (``gmsh_periodic``);
* polyMesh: meshgen's polyMesh reader for the arrays and foamlib for the boundary
  dictionary; OpenFOAM's cyclic rules from its source (openfoam.com, cyclicPolyPatch.C:
  face i couples with face i of neighbourPatch, equal areas within matchTolerance,
  separationVector = neighbour centre - own centre);
* CGNS: h5py for the tree, ``cgnscheck`` (Debian cgns-convert) for validity; SIDS
  GridConnectivity1to1_t with GridConnectivityProperty_t / Periodic_t;
* SU2: meshgen's SU2 reader (markers) and SU2's MARKER_PERIODIC format (config_template.cfg:
  periodic marker, donor marker, rotation centre, rotation angles, translation).
"""

from __future__ import annotations

import json
import shutil
import subprocess

import meshio
import numpy as np
import pytest
from samples import BLOCKS, GROUPS

from meshgen.core.errors import MeshError, WriteError
from meshgen.io.readers.foam import read_polymesh
from meshgen.io.readers.su2 import read_su2
from meshgen.io.writers import cgns, msh, plot3d, su2  # noqa: F401  (registers the formats)
from meshgen.io.writers.foam import write_polymesh
from meshgen.io.writers.registry import FORMATS
from meshgen.meshing.gmsh_session import gmsh_session
from meshgen.meshing.mesh import extrude, structured_mesh
from meshgen.meshing.periodic import facet_pairs, node_pairs, periodic_span

h5py = pytest.importorskip("h5py")

SPAN = 0.4


def sample(nk: int = 3):
    """The upstream / plate / wake sample (4 x 3 cells) extruded to nk - 1 layers, periodic span."""
    m = structured_mesh(np.array([-1, 0, 0.5, 1, 2.0]), np.array([0, 0.1, 0.3, 1.0]), BLOCKS, GROUPS)
    return periodic_span(extrude(m, np.linspace(0.0, SPAN, nk)), "back", "front")


def assert_one_to_one(front_xyz: np.ndarray, back_xyz: np.ndarray, pairing: np.ndarray | None = None) -> None:
    """Facet centroids (n, 3): each front facet has exactly one back facet at the same (x, y).

    With ``pairing`` (front facet i pairs with back facet pairing[i]) the file's own pairing is
    checked; without it the pairing is found by the position alone.
    """
    assert front_xyz.shape == back_xyz.shape
    if pairing is None:
        fo = np.lexsort((front_xyz[:, 1], front_xyz[:, 0]))
        bo = np.lexsort((back_xyz[:, 1], back_xyz[:, 0]))
        pairing = np.empty(fo.size, np.int64)
        pairing[fo] = bo
    assert np.array_equal(np.sort(pairing), np.arange(front_xyz.shape[0]))  # a bijection
    np.testing.assert_allclose(front_xyz[:, :2], back_xyz[pairing, :2], rtol=0, atol=1e-12)
    np.testing.assert_allclose(front_xyz[:, 2] - back_xyz[pairing, 2], SPAN, rtol=0, atol=1e-12)


def facets_through_node_map(front: np.ndarray, back: np.ndarray, slave: np.ndarray, master: np.ndarray) -> np.ndarray:
    """Index of the back facet each front facet becomes under the node map slave -> master (or -1)."""
    image = dict(zip(slave.tolist(), master.tolist()))
    mapped = np.sort(np.vectorize(image.get)(front), axis=1)  # a few dozen facets in these tests
    keys = {tuple(r): i for i, r in enumerate(np.sort(back, axis=1).tolist())}
    return np.array([keys.get(tuple(r), -1) for r in mapped.tolist()])


def test_pairs_are_found_by_geometry_and_mismatches_are_refused():
    m = sample()
    pair = m.periodic[0]
    assert pair.translation == (0.0, 0.0, SPAN)
    partner = facet_pairs(m, pair)
    back, front = m.group("back").facets, m.group("front").facets
    assert_one_to_one(m.points[front[partner]].mean(axis=1), m.points[back].mean(axis=1),
                      pairing=np.argsort(partner))
    a, b = node_pairs(m, pair)
    np.testing.assert_allclose(m.points[b] - m.points[a], [[0, 0, SPAN]] * a.size, atol=1e-12)
    # a front node moved off its image: no longer periodic
    bad = m.points.copy()
    bad[np.unique(front)[0], 0] += 1e-3
    from dataclasses import replace

    with pytest.raises(MeshError, match="no partner"):
        periodic_span(replace(m, points=bad, periodic=()), "back", "front")


@pytest.mark.parametrize("fmt", ["msh"])
def test_gmsh_reads_the_periodic_node_pairs_back(tmp_path, fmt):
    m = sample()
    path = FORMATS[fmt].write(m, tmp_path, "per")[0]
    with gmsh_session() as gmsh:
        gmsh.open(str(path))
        entity = {gmsh.model.getPhysicalName(2, t): int(gmsh.model.getEntitiesForPhysicalGroup(2, t)[0])
                  for _, t in gmsh.model.getPhysicalGroups(2)}
        master, slave_nodes, master_nodes, affine = gmsh.model.mesh.getPeriodicNodes(2, entity["front"])
        # gmsh reference manual: the affine transform maps the master onto the slave, by rows
        assert master == entity["back"]
        assert np.allclose(np.reshape(affine, (4, 4)), [[1, 0, 0, 0], [0, 1, 0, 0], [0, 0, 1, SPAN], [0, 0, 0, 1]])
        tags, xyz, _ = gmsh.model.mesh.getNodes()
        where = np.empty(int(tags.max()) + 1, np.int64)
        where[tags.astype(np.int64)] = np.arange(tags.size)
        xyz = xyz.reshape(-1, 3)
        front = gmsh.model.mesh.getElements(2, entity["front"])[2][0].reshape(-1, 4).astype(np.int64)
        back = gmsh.model.mesh.getElements(2, entity["back"])[2][0].reshape(-1, 4).astype(np.int64)
    assert slave_nodes.size == np.unique(front).size  # every front node has its pair
    d = xyz[where[slave_nodes.astype(np.int64)]] - xyz[where[master_nodes.astype(np.int64)]]
    np.testing.assert_allclose(d, [[0, 0, SPAN]] * d.shape[0], atol=1e-12)
    pairing = facets_through_node_map(front, back, slave_nodes.astype(np.int64), master_nodes.astype(np.int64))
    assert np.all(pairing >= 0)
    assert_one_to_one(xyz[where[front]].mean(axis=1), xyz[where[back]].mean(axis=1), pairing)


@pytest.mark.parametrize("fmt, reader", [("msh", meshio.gmsh.read), ("msh2", meshio.gmsh.read)])
def test_meshio_reads_the_periodic_section(tmp_path, fmt, reader):
    # gmsh's own MSH 2.2 reader drops $Periodic (its entities do not exist yet when the section
    # is read, measured with gmsh 4.15); meshio reads both versions.
    m = sample()
    path = FORMATS[fmt].write(m, tmp_path, "per")[0]
    mm = reader(str(path))
    assert len(mm.gmsh_periodic) == 1
    dim, (slave_tag, master_tag), affine, pairs = mm.gmsh_periodic[0]
    assert dim == 2 and slave_tag != master_tag
    assert np.allclose(np.ravel(affine)[[3, 7, 11]], [0, 0, SPAN])
    pairs = np.asarray(pairs, dtype=np.int64)
    np.testing.assert_allclose(mm.points[pairs[:, 0]] - mm.points[pairs[:, 1]], [[0, 0, SPAN]] * len(pairs),
                               atol=1e-12)
    # group facets by physical tag ($PhysicalNames -> field_data {name: [tag, dim]}), both versions
    tag = {name: int(v[0]) for name, v in mm.field_data.items()}
    cells = {name: np.concatenate([b.data[phys == tag[name]] for b, phys in zip(mm.cells, mm.cell_data["gmsh:physical"])
                                   if b.type == "quad"])
             for name in ("front", "back")}
    pairing = facets_through_node_map(cells["front"], cells["back"], pairs[:, 0], pairs[:, 1])
    assert np.all(pairing >= 0)
    assert_one_to_one(mm.points[cells["front"]].mean(axis=1), mm.points[cells["back"]].mean(axis=1), pairing)


def test_polymesh_cyclic_patches_pair_face_by_face(tmp_path):
    foamlib = pytest.importorskip("foamlib")
    m = sample(nk=4)
    write_polymesh(m, tmp_path)
    pm = read_polymesh(tmp_path)
    boundary = dict(foamlib.FoamFile(tmp_path / "constant" / "polyMesh" / "boundary")[None])
    b, f = boundary["back"], boundary["front"]
    assert b["type"] == f["type"] == "cyclic"
    assert b["neighbourPatch"] == "front" and f["neighbourPatch"] == "back"
    assert b["transform"] == f["transform"] == "translational"
    np.testing.assert_allclose(b["separationVector"], [0, 0, SPAN])
    np.testing.assert_allclose(f["separationVector"], [0, 0, -SPAN])
    assert b["nFaces"] == f["nFaces"] == 4 * 3
    p, faces = pm["points"], pm["faces"]
    fb = faces[b["startFace"] : b["startFace"] + b["nFaces"]]
    ff = faces[f["startFace"] : f["startFace"] + f["nFaces"]]
    # face i with face i: centres differ by separationVector (neighbour - own), areas equal and opposite
    assert_one_to_one(p[ff].mean(axis=1), p[fb].mean(axis=1), np.arange(ff.shape[0]))

    def area(q):  # right-hand rule: half the cross product of the diagonals
        return 0.5 * np.cross(q[:, 2] - q[:, 0], q[:, 3] - q[:, 1])

    np.testing.assert_allclose(area(p[ff]), -area(p[fb]), rtol=0, atol=1e-15)
    assert np.all(area(p[fb])[:, 2] < 0) and np.all(area(p[ff])[:, 2] > 0)  # out of their own cells
    # coupled points: the front face is the back face reversed from the same first point, moved
    np.testing.assert_allclose(p[ff], p[fb[:, [0, 3, 2, 1]]] + [0, 0, SPAN], atol=1e-12)
    # owners: the same (i, j) column, the first and the last layer of cells
    owner = pm["owner"]
    per_layer = 4 * 3
    assert np.array_equal(owner[f["startFace"] : f["startFace"] + 12] - owner[b["startFace"] : b["startFace"] + 12],
                          np.full(12, 2 * per_layer))


def _cut(lo, hi) -> tuple[slice, ...]:
    """HDF5 slices (k, j, i) of the 1-based CGNS vertex range lo..hi (i, j, k)."""
    return tuple(slice(lo[d] - 1, hi[d]) for d in (2, 1, 0))


@pytest.mark.skipif(shutil.which("cgnscheck") is None, reason="cgnscheck not installed (Debian cgns-convert)")
def test_cgns_periodic_connectivity_is_clean_and_joins_matching_faces(tmp_path):
    m = sample()
    path = cgns.write(m, tmp_path, "per")[0]
    out = subprocess.run(["cgnscheck", str(path)], capture_output=True, text=True, timeout=120,
                         check=False).stdout
    # cgnscheck exits 0 even with errors: read its messages
    assert not [s for s in out.splitlines() if "ERROR" in s or "WARNING" in s], out
    assert out.count("checking periodic property") == 2 * 3  # both directions in each of three zones
    with h5py.File(path, "r") as f:
        base = f["Base"]
        assert "back" not in base and "front" not in base  # interfaces, not boundary families
        for zname in ("upstream", "plate", "wake"):
            z = base[zname]
            assert not {"back", "front"} & set(z["ZoneBC"])
            conns = z["ZoneGridConnectivity"]
            for here, sign in (("periodic_back", 1.0), ("periodic_front", -1.0)):
                c = conns[here]
                assert c.attrs["label"] == b"GridConnectivity1to1_t"
                assert c[" data"][()].tobytes().decode() == zname  # the zone is its own donor
                per = c["GridConnectivityProperty/Periodic"]
                assert per.attrs["label"] == b"Periodic_t"
                np.testing.assert_allclose(per["Translation/ data"][()], [0, 0, sign * SPAN], rtol=1e-7)
                np.testing.assert_array_equal(per["RotationAngle/ data"][()], [0, 0, 0])
                lo, hi = c["PointRange/ data"][()]
                dlo, dhi = c["PointRangeDonor/ data"][()]
                xyz = [z[f"GridCoordinates/Coordinate{a}/ data"] for a in "XYZ"]
                mine = np.stack([g[_cut(lo, hi)].ravel() for g in xyz], axis=1)
                donor = np.stack([g[_cut(dlo, dhi)].ravel() for g in xyz], axis=1)
                np.testing.assert_array_equal(mine[:, :2], donor[:, :2])  # same (x, y), node for node
                np.testing.assert_allclose(donor[:, 2] - mine[:, 2], sign * SPAN, atol=1e-12)


def test_cgns_refuses_a_periodic_mesh_without_layout(tmp_path):
    from dataclasses import replace

    with pytest.raises(WriteError, match="structured meshes only"):
        cgns.write(replace(sample(), shape=None, blocks=()), tmp_path, "per")
    assert list(tmp_path.iterdir()) == []


def test_su2_markers_pair_by_position_and_carry_the_marker_periodic_line(tmp_path):
    m = sample()
    path = su2.write(m, tmp_path, "per")[0]
    back = read_su2(path)
    g = {x.name: x.facets for x in back.groups}
    assert_one_to_one(back.points[g["front"]].mean(axis=1), back.points[g["back"]].mean(axis=1))
    # SU2 config_template.cfg: ( periodic marker, donor marker, rotation centre (3), angles (3), translation (3) )
    line = next(s for s in path.read_text().splitlines() if "MARKER_PERIODIC=" in s)
    items = [s.strip() for s in line.split("(", 1)[1].rsplit(")", 1)[0].split(",")]
    assert items[:2] == ["back", "front"]
    assert [float(v) for v in items[2:]] == [0, 0, 0, 0, 0, 0, 0, 0, SPAN]


def test_plot3d_companion_lists_the_pair(tmp_path):
    _, companion = plot3d.write(sample(), tmp_path, "per")
    meta = json.loads(companion.read_text())
    assert meta["periodic"] == [{"group": "back", "image": "front", "translation": [0.0, 0.0, SPAN]}]


@pytest.mark.skipif(shutil.which("cgnscheck") is None, reason="cgnscheck not installed (Debian cgns-convert)")
def test_cgns_single_keeps_the_pair_as_two_clean_groups(tmp_path):
    # the one-zone file is for SU2, which reads marker names from the element sections and
    # periodicity from its configuration (MARKER_PERIODIC)
    m = sample()
    path = cgns.write_single(m, tmp_path, "per")[0]
    out = subprocess.run(["cgnscheck", str(path)], capture_output=True, text=True, timeout=120,
                         check=False).stdout
    assert not [s for s in out.splitlines() if "ERROR" in s or "WARNING" in s], out
    with h5py.File(path, "r") as f:
        zone = next(g for k, g in f["Base"].items() if not k.startswith(" ") and g.attrs["label"] == b"Zone_t")
        assert {"back", "front"} <= set(zone) and {"back", "front"} <= set(zone["ZoneBC"])
