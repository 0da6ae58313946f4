"""The CGNS writer, checked against the outside world.

Sources: the CGNS tools of Debian's cgns-convert (``cgnscheck``, ``cgnslist``,
``cgns_to_plot3d``, ``plot3d_to_cgns``, all built on the CGNS library 3.4); the CGNS SIDS
(BC_t, GridConnectivity1to1_t, Elements_t, ElementType_t); the CGNS/HDF5 file mapping
(node attributes, " data", dimensions stored reversed). The tools are skipped with a
reason only when absent; CI installs them.
"""

from __future__ import annotations

import dataclasses
import re
import shutil
import subprocess
from pathlib import Path

import numpy as np
import pytest
from samples import million_cells

from meshgen.core.errors import WriteError
from meshgen.io.writers import cgns, cgns_tree, plot3d
from meshgen.io.writers.registry import FORMATS
from meshgen.meshing.mesh import Block, Mesh, Patch, extrude, structured_mesh

h5py = pytest.importorskip("h5py")

TOOLS = ("cgnscheck", "cgnslist", "cgns_to_plot3d", "plot3d_to_cgns")
needs_tools = pytest.mark.skipif(
    any(shutil.which(t) is None for t in TOOLS),
    reason="CGNS tools not installed (Debian package cgns-convert: cgnscheck, cgnslist, ...)",
)

BLOCKS = (Block("upstream", 0, 1), Block("plate", 1, 3), Block("wake", 3, 4))


def sample_groups(wall: str = "wall", wall_patches: tuple[Patch, ...] | None = None):
    wall_patches = wall_patches or (Patch("jmin", 1, 3),)
    return [
        ("inlet", "inlet", (Patch("imin"),)),
        ("outlet", "outlet", (Patch("imax"),)),
        (wall, "wall", tuple(wall_patches)),
        ("symmetry", "symmetry", (Patch("jmin", 0, 1), Patch("jmin", 3, 4))),
        ("farfield", "farfield", (Patch("jmax", 0, 4),)),
    ]


def sample(kind: str) -> Mesh:
    """The upstream/plate/wake sample mesh: 2-D, extruded 3-D, or either without layout."""
    m = structured_mesh(np.array([-1, 0, 0.5, 1, 2.0]), np.array([0, 0.1, 0.3, 1.0]), BLOCKS, sample_groups())
    if kind.endswith("3d"):
        m = extrude(m, np.linspace(0, 0.5, 3))
    if kind.startswith("u"):
        m = dataclasses.replace(m, shape=None, blocks=())
    return m


# Hand-derived from the sample's definition (block node counts 2, 3, 2; nj = 4; nk = 3):
# SIDS BC_t PointRange, 1-based block-local vertex indices (i, j[, k]).
EXPECTED_RANGES_2D = {
    ("upstream", "inlet"): [(1, 1), (1, 4)],
    ("upstream", "symmetry"): [(1, 2), (1, 1)],
    ("upstream", "farfield"): [(1, 2), (4, 4)],
    ("plate", "wall"): [(1, 3), (1, 1)],
    ("plate", "farfield"): [(1, 3), (4, 4)],
    ("wake", "outlet"): [(2, 2), (1, 4)],
    ("wake", "symmetry"): [(1, 2), (1, 1)],
    ("wake", "farfield"): [(1, 2), (4, 4)],
}
EXPECTED_RANGES_3D = {key: [*r, (1, 3)] for key, r in EXPECTED_RANGES_2D.items()}
for _zone, _ni in (("upstream", 2), ("plate", 3), ("wake", 2)):
    EXPECTED_RANGES_3D[(_zone, "back")] = [(1, _ni), (1, 4), (1, 1)]
    EXPECTED_RANGES_3D[(_zone, "front")] = [(1, _ni), (1, 4), (3, 3)]

#: SIDS BCType_t names chosen per role (the writer's documented mapping; front and back
#: with the default domain.span_boundary = "symmetry"). They sit in each Family_t's
#: FamilyBC; every BC_t is FamilySpecified (SIDS 9.3), which VTK's CGNS reader loads.
ROLE_BC = {"wall": "BCWall", "inlet": "BCInflow", "outlet": "BCOutflow", "farfield": "BCFarfield",
           "symmetry": "BCSymmetryPlane", "front": "BCSymmetryPlane", "back": "BCSymmetryPlane"}


def run(*args: str) -> subprocess.CompletedProcess:
    return subprocess.run(list(args), capture_output=True, text=True, timeout=120, check=False)


def check_messages(path: Path, *options: str) -> tuple[list[str], list[str], str]:
    """ERROR and WARNING lines of ``cgnscheck`` (its exit code is 0 even with errors)."""
    out = run("cgnscheck", *options, str(path)).stdout
    lines = out.splitlines()
    return [s for s in lines if "ERROR" in s], [s for s in lines if "WARNING" in s], out


def cgnslist_tree(path: Path) -> dict[str, tuple[str, str, tuple[int, ...]]]:
    """``cgnslist -l -t -d``: node path -> (label, data type, CGNS dimensions)."""
    out = run("cgnslist", "-l", "-t", "-d", str(path)).stdout
    tree, stack = {}, []
    for line in out.splitlines()[1:]:
        depth = line.index("+-") // 2
        m = re.match(r"(\S+)\s+--\s+(\S+)\s+(\S+)\s+\(([^)]*)\)", line[line.index("+-") + 2:])
        assert m, line
        name, label, dtype, dims = m.groups()
        stack[depth - 1:] = [name]
        tree["/" + "/".join(stack)] = (label, dtype, tuple(int(d) for d in dims.split(",") if d))
    return tree


def text(node) -> str:
    return node[" data"][()].tobytes().decode("ascii")


def zones(f) -> dict[str, object]:
    return {k: g for k, g in f["Base"].items() if not k.startswith(" ") and g.attrs["label"] == b"Zone_t"}


def read_fortran_records(path: Path) -> list[bytes]:
    """Fortran unformatted sequential records (4-byte little-endian markers)."""
    raw, out, pos = Path(path).read_bytes(), [], 0
    while pos < len(raw):
        n = int(np.frombuffer(raw, "<i4", 1, pos)[0])
        out.append(raw[pos + 4 : pos + 4 + n])
        assert int(np.frombuffer(raw, "<i4", 1, pos + 4 + n)[0]) == n
        pos += n + 8
    return out


def block_grids(m: Mesh) -> list[np.ndarray]:
    """Expected node coordinates of each block, shape (nk, nj, ni_block, 3)."""
    ni, nj = m.shape[:2]
    nk = m.shape[2] if len(m.shape) == 3 else 1
    g = m.points.reshape(nk, nj, ni, 3)
    return [g[:, :, b.i0 : b.i1 + 1, :] for b in m.blocks]


def test_registered_and_outputs(tmp_path):
    fmt = FORMATS["cgns"]
    written = fmt.write(sample("2d"), tmp_path, "case")
    assert written == fmt.outputs(tmp_path, "case") == [tmp_path / "case.cgns"]
    assert sorted(p.name for p in tmp_path.iterdir()) == ["case.cgns"]  # no temporary left


@needs_tools
@pytest.mark.parametrize("kind", ["2d", "3d", "u2d", "u3d"])
def test_cgnscheck_finds_nothing(tmp_path, kind):
    path = cgns.write(sample(kind), tmp_path, kind)[0]
    errors, warnings, out = check_messages(path, "-w3")  # cgnscheck, highest warning level
    assert errors == [] and warnings == [], out
    assert "checking complete" in out


@needs_tools
def test_cgnscheck_catches_a_broken_file(tmp_path):
    # Negative control: the check above can fail. cgnscheck rejects a BC element range
    # that points past the zone's elements.
    path = cgns.write(sample("u2d"), tmp_path, "bad")[0]
    with h5py.File(path, "r+") as f:
        d = f["Base/fluid/ZoneBC/wall/PointRange/ data"]
        d[1, 0] = 10**6
    errors, _, out = check_messages(path)
    assert errors, out


@needs_tools
@pytest.mark.parametrize("kind", ["2d", "3d"])
def test_cgnslist_shows_zones_in_cgns_dimensions(tmp_path, kind):
    m = sample(kind)
    tree = cgnslist_tree(cgns.write(m, tmp_path, kind)[0])
    dim = m.dim
    assert tree["/CGNSLibraryVersion"] == ("CGNSLibraryVersion_t", "R4", (1,))
    assert tree["/Base"] == ("CGNSBase_t", "I4", (2,))
    for b in m.blocks:
        z = f"/Base/{b.name}"
        # cgnslist prints CGNS (Fortran) dimensions: the HDF5 mapping stores them reversed.
        assert tree[z] == ("Zone_t", "I4", (dim, 3))
        nodes = (b.i1 - b.i0 + 1, m.shape[1], *m.shape[2:])
        for axis in "XYZ"[:dim]:
            assert tree[f"{z}/GridCoordinates/Coordinate{axis}"] == ("DataArray_t", "R8", nodes)
        assert (f"{z}/GridCoordinates/CoordinateZ" in tree) == (dim == 3)
        expected = EXPECTED_RANGES_3D if dim == 3 else EXPECTED_RANGES_2D
        bcs = {p.rsplit("/", 1)[1] for p, v in tree.items()
               if p.startswith(f"{z}/ZoneBC/") and v[0] == "BC_t"}
        assert bcs == {g for (zone, g) in expected if zone == b.name}
        for p, (label, dtype, dims) in tree.items():
            if p.startswith(f"{z}/ZoneGridConnectivity/") and p.endswith("/Transform"):
                assert (label, dtype, dims) == ('"int[IndexDimension]"', "I4", (dim,))


@needs_tools
def test_node_storage_matches_the_cgns_library(tmp_path):
    # Reference file written by the CGNS library itself (plot3d_to_cgns), compared node
    # storage by node storage: attribute types, root datasets, creation-order tracking.
    m = sample("3d")
    xyz = plot3d.write(m, tmp_path, "ref")[0]
    ref_path = tmp_path / "ref.cgns"
    assert run("plot3d_to_cgns", "-u", "-d", str(xyz), str(ref_path)).returncode == 0
    ours_path = cgns.write(m, tmp_path, "ours")[0]

    def attr_types(obj):
        out = {}
        for key in obj.attrs:
            a = obj.attrs.get_id(key)
            t = a.get_type()
            if t.get_class() == h5py.h5t.STRING:
                out[key] = ("string", t.get_size(), t.get_strpad(), t.get_cset(), a.shape)
            else:
                out[key] = (str(obj.attrs[key].dtype), a.shape)
        return out

    with h5py.File(ref_path, "r") as ref, h5py.File(ours_path, "r") as ours:
        for key in ("name", "label", "type"):
            assert ours.attrs[key] == ref.attrs[key]
        assert attr_types(ours) == attr_types(ref)
        assert ours[" format"][()].tobytes() == ref[" format"][()].tobytes()
        assert ours[" hdf5version"].dtype == ref[" hdf5version"].dtype == np.int8
        assert ours[" hdf5version"].shape == ref[" hdf5version"].shape
        assert ours[" hdf5version"][()].tobytes().startswith(b"HDF5 Version ")
        ref_node = attr_types(ref["CGNSLibraryVersion"])
        ref_order = ref["CGNSLibraryVersion"].id.get_create_plist().get_link_creation_order()
        assert ours["CGNSLibraryVersion/ data"][()] == pytest.approx(ref["CGNSLibraryVersion/ data"][()])
        assert ours["Base/ data"][()].tolist() == ref["Base/ data"][()].tolist() == [3, 3]
        nodes = []
        ours.visititems(lambda name, obj: nodes.append(obj) if isinstance(obj, h5py.Group) else None)
        assert len(nodes) > 50
        for g in nodes:
            assert attr_types(g) == ref_node, g.name
            assert g.attrs["flags"].tolist() == ref["CGNSLibraryVersion"].attrs["flags"].tolist()
            assert g.id.get_create_plist().get_link_creation_order() == ref_order, g.name
            assert g.attrs["name"].decode() == g.name.rsplit("/", 1)[1]
        ref_zone = ref["Base/Zone1"]
        our_zone = ours["Base/upstream"]
        assert our_zone[" data"].dtype == ref_zone[" data"].dtype
        assert our_zone[" data"][()].tolist() == ref_zone[" data"][()].tolist()
        cx = "GridCoordinates/CoordinateX/ data"
        assert our_zone[cx].shape == ref_zone[cx].shape and our_zone[cx].dtype == ref_zone[cx].dtype
        np.testing.assert_array_equal(our_zone[cx][()], ref_zone[cx][()])


@pytest.mark.parametrize("kind", ["2d", "3d"])
def test_coordinates_exact(tmp_path, kind):
    m = sample(kind)
    with h5py.File(cgns.write(m, tmp_path, kind)[0], "r") as f:
        assert list(zones(f)) == [b.name for b in m.blocks]
        for b, grid in zip(m.blocks, block_grids(m), strict=True):
            gc = f[f"Base/{b.name}/GridCoordinates"]
            assert sorted(gc) == ["CoordinateX", "CoordinateY", "CoordinateZ"][: m.dim]
            for c, axis in enumerate("XYZ"[: m.dim]):
                # HDF5 mapping: C-order (nk, nj, ni) is the CGNS (ni, nj, nk) array.
                want = grid[..., c] if m.dim == 3 else grid[0, ..., c]
                got = gc[f"Coordinate{axis}/ data"][()]
                assert got.shape == want.shape
                np.testing.assert_array_equal(got, want)


@needs_tools
def test_cgns_library_reads_the_coordinates(tmp_path):
    # cgns_to_plot3d reads our file through the CGNS library and writes Plot3D (3-D only).
    m = sample("3d")
    path = cgns.write(m, tmp_path, "c")[0]
    out = tmp_path / "back.xyz"
    assert run("cgns_to_plot3d", "-u", "-d", "-n", str(path), str(out)).returncode == 0
    rec = read_fortran_records(out)
    nb = int(np.frombuffer(rec[0], "<i4")[0])
    dims = np.frombuffer(rec[1], "<i4").reshape(nb, 3)
    got = [np.frombuffer(r, "<f8").reshape(3, nk, nj, ni)
           for r, (ni, nj, nk) in zip(rec[2:], dims, strict=True)]
    want = [np.moveaxis(g, -1, 0) for g in block_grids(m)]
    assert len(got) == len(want) == 3
    for w in want:  # the library orders zones by name; match blocks by content
        assert sum(g.shape == w.shape and np.array_equal(g, w) for g in got) == 1


def _bc_nodes(f, m: Mesh) -> dict[str, set]:
    """Global node ids per family, from each BC_t PointRange (SIDS: 1-based vertices)."""
    ni, nj = m.shape[:2]
    per_group: dict[str, set] = {}
    for b in m.blocks:
        z = f[f"Base/{b.name}"]
        size = z[" data"][()][0]  # vertex counts of this zone
        for bc in z["ZoneBC"].values():
            assert bc.attrs["label"] == b"BC_t"
            family = text(bc["FamilyName"])
            group = m.group(family)
            assert text(bc) == "FamilySpecified"
            assert text(f[f"Base/{family}/FamilyBC"]) == ROLE_BC[group.role]
            lo, hi = bc["PointRange/ data"][()]
            flat = [d for d in range(m.dim) if lo[d] == hi[d]]
            assert len(flat) == 1 and lo[flat[0]] in (1, size[flat[0]])  # on a face of the zone
            axes = [np.arange(lo[d] - 1, hi[d]) for d in range(m.dim)]
            axes[0] = axes[0] + b.i0
            if m.dim == 2:
                axes.append(np.array([0]))
            i, j, k = np.meshgrid(*axes, indexing="ij")
            per_group.setdefault(family, set()).update((i + ni * (j + nj * k)).ravel().tolist())
    return per_group


@pytest.mark.parametrize("kind", ["2d", "3d"])
def test_boundary_conditions_cover_the_groups(tmp_path, kind):
    m = sample(kind)
    with h5py.File(cgns.write(m, tmp_path, kind)[0], "r") as f:
        nodes = _bc_nodes(f, m)
        assert set(nodes) == {g.name for g in m.groups}
        for g in m.groups:
            assert nodes[g.name] == set(np.unique(g.facets).tolist()), g.name


@needs_tools
@pytest.mark.parametrize("kind", ["2d", "3d"])
def test_cgnscheck_reads_the_hand_derived_ranges(tmp_path, kind):
    _, _, out = check_messages(cgns.write(sample(kind), tmp_path, kind)[0], "-v")
    got, zone, bc = {}, None, None
    for line in out.splitlines():
        if m := re.match(r'checking zone "(.+)"', line):
            zone = m.group(1)
        elif m := re.match(r'\s+checking BC "(.+)"', line):
            bc = m.group(1)
        elif (m := re.match(r"\s+Range=\[(.+)\]", line)) and bc:
            got[(zone, bc)] = [tuple(int(v) for v in r.split(":")) for r in m.group(1).split(",")]
            bc = None
    assert got == (EXPECTED_RANGES_3D if kind == "3d" else EXPECTED_RANGES_2D)


def _coords_at(zone, lo, hi, dim) -> np.ndarray:
    """Coordinates of the nodes lo..hi (1-based, CGNS order) of a zone, shape (n, dim)."""
    cut = tuple(slice(lo[d] - 1, hi[d]) for d in reversed(range(dim)))  # HDF5 order k, j, i
    return np.stack([zone[f"GridCoordinates/Coordinate{a}/ data"][cut].ravel() for a in "XYZ"[:dim]], axis=1)


@pytest.mark.parametrize("kind", ["2d", "3d"])
def test_one_to_one_interfaces_join_matching_nodes(tmp_path, kind):
    # SIDS GridConnectivity1to1_t: PointRange here, PointRangeDonor in the donor zone,
    # Transform = identity when both index systems run the same way.
    m = sample(kind)
    links = set()
    with h5py.File(cgns.write(m, tmp_path, kind)[0], "r") as f:
        zs = zones(f)
        for name, z in zs.items():
            for conn in z["ZoneGridConnectivity"].values():
                assert conn.attrs["label"] == b"GridConnectivity1to1_t"
                donor = text(conn)
                assert donor in zs and donor != name
                assert conn["Transform/ data"][()].tolist() == list(range(1, m.dim + 1))
                here = _coords_at(z, *conn["PointRange/ data"][()], m.dim)
                there = _coords_at(zs[donor], *conn["PointRangeDonor/ data"][()], m.dim)
                assert here.shape[0] == m.shape[1] * (m.shape[2] if m.dim == 3 else 1)
                np.testing.assert_array_equal(here, there)
                links.add((name, donor))
    assert links == {("upstream", "plate"), ("plate", "upstream"), ("plate", "wake"), ("wake", "plate")}


@pytest.mark.parametrize("kind", ["u2d", "u3d"])
def test_unstructured_zone(tmp_path, kind):
    m = sample(kind)
    # SIDS ElementType_t values (cgnslib.h): BAR_2 = 3, QUAD_4 = 7, HEXA_8 = 17.
    cell_type, facet_type = (7, 3) if m.dim == 2 else (17, 7)
    with h5py.File(cgns.write(m, tmp_path, kind)[0], "r") as f:
        z = f["Base/fluid"]
        assert text(z["ZoneType"]) == "Unstructured"
        assert z[" data"][()].tolist() == [[m.n_points], [m.n_cells], [0]]
        for c, axis in enumerate("XYZ"[: m.dim]):
            np.testing.assert_array_equal(z[f"GridCoordinates/Coordinate{axis}/ data"][()], m.points[:, c])
        sec = z["fluid"]
        assert sec[" data"][()].tolist() == [cell_type, 0]
        assert sec["ElementRange/ data"][()].tolist() == [1, m.n_cells]
        conn = sec["ElementConnectivity/ data"][()]
        np.testing.assert_array_equal(conn.reshape(m.cells.shape) - 1, m.cells)
        nxt = m.n_cells + 1
        for g in m.groups:
            sec = z[g.name]
            n = g.facets.shape[0]
            assert sec[" data"][()].tolist() == [facet_type, 0]
            assert sec["ElementRange/ data"][()].tolist() == [nxt, nxt + n - 1]
            conn = sec["ElementConnectivity/ data"][()]
            np.testing.assert_array_equal(conn.reshape(g.facets.shape) - 1, g.facets)
            bc = z[f"ZoneBC/{g.name}"]
            assert text(bc) == "FamilySpecified" and text(bc["FamilyName"]) == g.name
            assert text(f[f"Base/{g.name}/FamilyBC"]) == ROLE_BC[g.role]
            assert bc["PointRange/ data"][()].ravel().tolist() == [nxt, nxt + n - 1]
            assert text(bc["GridLocation"]) == ("FaceCenter" if m.dim == 3 else "EdgeCenter")
            nxt += n


def test_integer_width_follows_the_values():
    assert cgns_tree._ints([0, 2**31 - 1])[0] == "I4"
    assert cgns_tree._ints([1, 2**31])[0] == "I8"
    assert cgns_tree._ints([[1, 2], [3, 2**40]])[1].dtype == np.int64


@needs_tools
@pytest.mark.parametrize("kind", ["3d", "u3d"])
def test_cgns_library_reads_64_bit_integers(tmp_path, monkeypatch, kind):
    # Meshes past 2**31 nodes or connectivity entries get I8 arrays; force I8 everywhere
    # on a small mesh and let cgnscheck read it.
    monkeypatch.setattr(cgns_tree, "_ints", lambda v: ("I8", np.asarray(v, dtype=np.int64)))
    path = cgns.write(sample(kind), tmp_path, kind)[0]
    with h5py.File(path, "r") as f:
        zone = f["Base/upstream" if kind == "3d" else "Base/fluid"]
        assert zone.attrs["type"] == b"I8" and zone[" data"].dtype == np.int64
    errors, warnings, out = check_messages(path, "-w3")
    assert errors == [] and warnings == [], out


@needs_tools
def test_name_clash_and_two_pieces_in_one_zone(tmp_path):
    # The wall group is named like the plate block and split in two patches.
    groups = sample_groups("plate", (Patch("jmin", 1, 2), Patch("jmin", 2, 3)))
    m = extrude(structured_mesh(np.array([-1, 0, 0.5, 1, 2.0]), np.array([0, 0.1, 0.3, 1.0]), BLOCKS, groups),
                np.linspace(0, 0.5, 3))
    path = cgns.write(m, tmp_path, "clash")[0]
    errors, warnings, out = check_messages(path, "-w3")
    assert errors == [] and warnings == [], out
    with h5py.File(path, "r") as f:
        assert list(zones(f)) == ["upstream", "plate_zone", "wake"]
        assert f["Base/plate"].attrs["label"] == b"Family_t"
        bcs = f["Base/plate_zone/ZoneBC"]
        assert {"plate", "plate_2"} <= set(bcs)
        assert text(bcs["plate_2/FamilyName"]) == "plate"


@pytest.mark.parametrize(
    "change, words",
    [
        (lambda g: dataclasses.replace(g, role="slip"), ["'slip'", "wall"]),
        (lambda g: dataclasses.replace(g, name="w" * 33), ["w" * 33, "32"]),
        (lambda g: dataclasses.replace(g, patches=(Patch("jmin", 1, 2),)), ["'wall'", "facets"]),
        (lambda g: dataclasses.replace(g, patches=(Patch("jmax", 1, 3),)), ["'wall'", "nodes"]),
    ],
)
def test_bad_groups_raise_and_write_nothing(tmp_path, change, words):
    m = sample("2d")
    groups = tuple(change(g) if g.name == "wall" else g for g in m.groups)
    with pytest.raises(WriteError) as err:
        cgns.write(dataclasses.replace(m, groups=groups), tmp_path, "bad")
    assert all(w in str(err.value) for w in words), str(err.value)
    assert list(tmp_path.iterdir()) == []


@needs_tools
def test_a_million_cells(tmp_path):
    m = million_cells()
    assert m.n_cells == 1_000_000
    path = cgns.write(m, tmp_path, "big")[0]
    errors, warnings, out = check_messages(path, "-w3")
    assert errors == [] and warnings == [], out[-2000:]
    with h5py.File(path, "r") as f:
        assert f["Base/plate/ data"][()].tolist() == [[501, 1001], [500, 1000], [0, 0]]
