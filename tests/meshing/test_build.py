"""Built meshes read back by gmsh and by meshio: groups, cell types, counts, spacing."""

import meshio
import numpy as np
import pytest

from meshgen.case import load_case
from meshgen.meshing.builder import build_mesh
from meshgen.meshing.gmsh_session import gmsh_session
from meshgen.meshing.verify import boundary_faces, verify_mesh
from meshgen.pipeline.build import build_case
from meshgen.planning.plan import make_plan

GROUPS = {"inlet", "outlet", "wall", "farfield", "symmetry"}


@pytest.fixture(scope="module")
def built(tmp_path_factory):
    out = tmp_path_factory.mktemp("default")
    files = build_case(output=out, formats=["msh", "msh2", "vtu"], pictures=False)
    plan = make_plan(load_case())
    return out, files, plan


def _gmsh_read(path):
    """Groups, element counts and node coordinates as gmsh itself reads the file."""
    with gmsh_session() as gmsh:
        gmsh.open(str(path))
        groups = {}
        for dim, tag in gmsh.model.getPhysicalGroups():
            name = gmsh.model.getPhysicalName(dim, tag)
            count = 0
            for ent in gmsh.model.getEntitiesForPhysicalGroup(dim, tag):
                _, tags, _ = gmsh.model.mesh.getElements(dim, ent)
                count += sum(len(t) for t in tags)
            groups[name] = (dim, count)
        _, coords, _ = gmsh.model.mesh.getNodes()
        return groups, coords.reshape(-1, 3)


def test_gmsh_reads_groups_and_counts(built):
    out, _, plan = built
    mesh = build_mesh(plan)
    groups, coords = _gmsh_read(out / "fairing-strip.msh")
    assert set(groups) == GROUPS | {"fluid"}
    assert groups["fluid"] == (2, plan.cell_count)
    for g in mesh.groups:
        assert groups[g.name] == (1, g.facets.shape[0])
    assert coords.shape[0] == plan.node_count


@pytest.mark.parametrize("name, fmt", [("fairing-strip.msh", "gmsh"), ("fairing-strip.v2.msh", "gmsh")])
def test_meshio_reads_msh(built, name, fmt):
    out, _, plan = built
    m = meshio.read(out / name, file_format=fmt)
    assert m.points.shape[0] == plan.node_count
    quads = sum(len(c.data) for c in m.cells if c.type == "quad")
    lines = sum(len(c.data) for c in m.cells if c.type == "line")
    assert quads == plan.cell_count
    assert {c.type for c in m.cells} == {"quad", "line"}  # all cells quads
    # every boundary edge of the quads is one line element, once
    nx, ny = plan.x.size - 1, plan.y.size - 1
    assert lines == 2 * (nx + ny)
    assert GROUPS <= set(m.field_data)


def test_meshio_reads_vtu_with_names(built):
    out, _, plan = built
    m = meshio.read(out / "fairing-strip.vtu")
    assert sum(len(c.data) for c in m.cells if c.type == "quad") == plan.cell_count
    ids = {name: int(np.ravel(v)[0]) for name, v in m.field_data.items()}
    assert set(ids) == GROUPS | {"fluid"}
    gid = np.concatenate(m.cell_data["group_id"])
    assert np.count_nonzero(gid == ids["fluid"]) == plan.cell_count


def test_wall_spacing_as_planned_in_the_file(built):
    out, _, plan = built
    m = meshio.read(out / "fairing-strip.msh", file_format="gmsh")
    y = np.unique(m.points[:, 1])
    assert y[1] - y[0] == pytest.approx(plan.first_cell_height, rel=1e-9)
    assert y[-1] == pytest.approx(plan.domain_height, rel=1e-12)


def test_mesh_in_memory_is_structured_and_verified(built):
    _, _, plan = built
    mesh = build_mesh(plan)
    verify_mesh(mesh, plan.node_count, plan.cell_count)
    bf, _ = boundary_faces(mesh)
    assert sum(mesh.group_sizes().values()) == bf.shape[0]
    np.testing.assert_allclose(mesh.grid()[0, :, 0], plan.x, rtol=0, atol=1e-12 * abs(plan.x).max())


@pytest.mark.parametrize("re", [1e9, 1e10])
def test_high_reynolds_is_not_merged(re):
    """The geometric-tolerance pitfall (../shared/pitfalls.md): Re_L = 1e9 at y+ = 1."""
    plan = make_plan(load_case(None, ["flow.velocity=", "flow.fluid=", f"flow.reynolds={re}",
                                      "flow.correlation=\"white\""]))
    assert plan.first_cell_height / plan.flow.length < 1e-7
    mesh = build_mesh(plan)
    assert mesh.n_points == plan.node_count and mesh.n_cells == plan.cell_count
    y = mesh.grid()[:, 0, 1]
    assert (y[1] - y[0]) == pytest.approx(plan.first_cell_height, rel=1e-9)


def test_without_upstream_and_wake():
    plan = make_plan(load_case(None, ["domain.upstream=0", "domain.downstream=0"]))
    mesh = build_mesh(plan)
    assert {g.name for g in mesh.groups} == {"inlet", "outlet", "wall", "farfield"}
    verify_mesh(mesh, plan.node_count, plan.cell_count)


def test_renamed_groups():
    plan = make_plan(load_case(None, ["names.wall=\"hull\"", "names.farfield=\"top\""]))
    mesh = build_mesh(plan)
    assert {"hull", "top"} <= {g.name for g in mesh.groups}


def test_extruded_mesh():
    plan = make_plan(load_case(None, ["domain.span=0.05", "domain.span_cells=3"]))
    mesh = build_mesh(plan)
    assert mesh.dim == 3 and mesh.n_cells == plan.cell_count
    assert {"front", "back"} <= set(mesh.group_sizes())
