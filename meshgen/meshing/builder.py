"""Build the Plan in gmsh as conforming structured quad blocks, extract and verify a Mesh.

Each block is a four-sided transfinite surface recombined into quads. The block sides
carry exactly the Plan's node distributions: after gmsh's 1-D pass each side's nodes are
replaced, in one vectorised call per side, by the planned ones (with their parametric
coordinates), and the surfaces are then meshed by transfinite interpolation, which
reproduces a tensor-product grid exactly for a rectangle. Blocks share their interface
curves, so the mesh conforms across them.

After meshing, the arrays are extracted once and checked against the Plan: every node
lies on a planned grid point, node and cell counts match (no node was merged, see the
tolerance pitfall in ../shared/pitfalls.md), every gmsh quad is a planned cell, every
physical group holds exactly the planned nodes, and the first spacing at the wall equals
the planned one to 1e-9 relative. Any mismatch raises ``MeshError``.
"""

from __future__ import annotations

import numpy as np

from ..core.errors import MeshError
from ..planning.plan import Plan
from .gmsh_session import gmsh_session
from .mesh import Mesh, extrude, structured_mesh
from .periodic import periodic_span
from .verify import verify_mesh

#: Relative tolerance on the first wall spacing (issue: equal to the plan to 1e-9).
WALL_SPACING_RTOL = 1e-9
#: A node may sit this fraction of its local spacing away from its planned position.
NODE_RTOL = 1e-6


def build_mesh(plan: Plan, verbose: bool = False) -> Mesh:
    """Mesh the Plan with gmsh and return the verified Mesh (extruded when 3-D)."""
    try:
        with gmsh_session(verbose=verbose, name=plan.case.name) as gmsh:
            tags = _make_blocks(gmsh, plan)
            gmsh.model.mesh.generate(2)
            points, groups_nodes, quads = _extract(gmsh, plan, tags)
    except MemoryError:
        raise MeshError(_failed(plan, "out of memory")) from None
    except Exception as exc:
        if type(exc) is not Exception:  # gmsh's own errors are plain Exceptions; ours are not
            raise
        # gmsh raises an empty Exception when an allocation fails (measured under ulimit -v)
        raise MeshError(_failed(plan, str(exc).strip() or "gmsh stopped without a message, as it does when "
                                "it runs out of memory")) from None
    mesh = structured_mesh(plan.x, plan.y, plan.blocks, plan.group_layout(), points=points)
    _check_against_gmsh(mesh, plan, groups_nodes, quads)
    verify_mesh(mesh, plan.x.size * plan.y.size, (plan.x.size - 1) * (plan.y.size - 1))
    _check_wall_spacing(mesh, plan)
    meta = {"case": plan.case.name, "level": plan.level, "span_boundary": plan.span_boundary}
    mesh = Mesh(mesh.points, mesh.cells, mesh.groups, mesh.shape, mesh.blocks, plan.case.names.fluid, meta)
    if plan.z is not None:
        n = plan.case.names
        # lazy: the hexahedra are built block by block by whatever reads them
        mesh = extrude(mesh, plan.z, front=n.front, back=n.back)
        verify_mesh(mesh, plan.node_count, plan.cell_count)
        if plan.span_boundary == "periodic":
            mesh = periodic_span(mesh, n.back, n.front)
    return mesh


def _failed(plan: Plan, why: str) -> str:
    nx, ny = plan.x.size - 1, plan.y.size - 1
    return (f"meshing {nx * ny:,} cells ({nx} x {ny}) failed: {why}; reduce the cell count (larger "
            "streamwise.max_spacing, wall.max_spacing or growth ratios; output.max_cells caps a plan) "
            "or free memory")


def _make_blocks(gmsh, plan: Plan) -> dict:
    """Geometry, transfinite settings and the planned 1-D meshes of every block side."""
    geo, mesh = gmsh.model.geo, gmsh.model.mesh
    x, y = plan.x, plan.y
    height = float(y[-1])
    smallest = min(np.diff(x).min(), np.diff(y).min())
    size = max(x[-1] - x[0], height)
    # Far below the smallest spacing, so no two planned points are ever merged.
    gmsh.option.setNumber("Geometry.Tolerance", float(np.clip(1e-3 * smallest / size, 1e-16, 1e-8)))
    gmsh.option.setNumber("Geometry.AutoCoherence", 0)
    edges = [b.i0 for b in plan.blocks] + [plan.blocks[-1].i1]
    bottom_pts = [geo.addPoint(float(x[i]), 0.0, 0.0) for i in edges]
    top_pts = [geo.addPoint(float(x[i]), height, 0.0) for i in edges]
    verticals = [geo.addLine(b, t) for b, t in zip(bottom_pts, top_pts)]
    bottoms, tops, surfaces = [], [], []
    for k, _ in enumerate(plan.blocks):  # a handful of blocks
        bottoms.append(geo.addLine(bottom_pts[k], bottom_pts[k + 1]))
        tops.append(geo.addLine(top_pts[k], top_pts[k + 1]))
        loop = geo.addCurveLoop([bottoms[k], verticals[k + 1], -tops[k], -verticals[k]])
        surfaces.append(geo.addPlaneSurface([loop]))
    geo.synchronize()
    for k, b in enumerate(plan.blocks):
        for c in (bottoms[k], tops[k]):
            mesh.setTransfiniteCurve(c, b.i1 - b.i0 + 1)
        mesh.setTransfiniteSurface(
            surfaces[k], cornerTags=[bottom_pts[k], bottom_pts[k + 1], top_pts[k + 1], top_pts[k]]
        )
        mesh.setRecombine(2, surfaces[k])
    for c in verticals:
        mesh.setTransfiniteCurve(c, y.size)
    mesh.generate(1)
    next_tag = [int(gmsh.model.mesh.getMaxNodeTag()) + 1]

    def place(curve: int, xs: np.ndarray, ys: np.ndarray, u: np.ndarray) -> None:
        start, end = gmsh.model.getAdjacencies(1, curve)[1]
        a = gmsh.model.mesh.getNodes(0, int(start))[0][0]
        b = gmsh.model.mesh.getNodes(0, int(end))[0][0]
        mesh.clear([(1, curve)])
        inner = np.arange(next_tag[0], next_tag[0] + u.size - 2, dtype=np.uint64)
        next_tag[0] += inner.size
        xyz = np.stack([xs[1:-1], ys[1:-1], np.zeros(inner.size)], axis=1)
        mesh.addNodes(1, curve, inner, xyz.ravel(), u[1:-1])
        chain = np.concatenate([[a], inner, [b]]).astype(np.uint64)
        mesh.addElementsByType(curve, 1, [], np.stack([chain[:-1], chain[1:]], axis=1).ravel())

    for k, b in enumerate(plan.blocks):
        xs = x[b.i0 : b.i1 + 1]
        u = (xs - xs[0]) / (xs[-1] - xs[0])
        place(bottoms[k], xs, np.zeros_like(xs), u)
        place(tops[k], xs, np.full_like(xs, height), u)
    for k, i in enumerate(edges):
        place(verticals[k], np.full_like(y, x[i]), y, y / height)
    gmsh.option.setNumber("Mesh.MeshOnlyEmpty", 1)
    names = plan.case.names
    side_curves = {"imin": [verticals[0]], "imax": [verticals[-1]]}
    for tag, (name, _role, patches) in enumerate(plan.group_layout(), start=1):
        curves = []
        for p in patches:
            if p.side in side_curves:
                curves += side_curves[p.side]
            else:
                row = bottoms if p.side == "jmin" else tops
                curves += [row[k] for k, b in enumerate(plan.blocks) if p.i0 <= b.i0 and b.i1 <= p.i1]
        gmsh.model.addPhysicalGroup(1, curves, tag, name=name)
    gmsh.model.addPhysicalGroup(2, surfaces, 100, name=names.fluid)
    return {"surfaces": surfaces}


def _grid_index(values: np.ndarray, planned: np.ndarray) -> np.ndarray:
    """Index of the nearest planned coordinate; raise if any value is off the grid."""
    idx = np.clip(np.searchsorted(planned, values), 1, planned.size - 1)
    nearer_left = (values - planned[idx - 1]) < (planned[idx] - values)
    idx = idx - nearer_left
    d = np.diff(planned)
    local = np.minimum(d[np.clip(idx - 1, 0, d.size - 1)], d[np.clip(idx, 0, d.size - 1)])
    off = np.abs(values - planned[idx]) > NODE_RTOL * local
    if np.any(off):
        k = int(np.argmax(off))
        raise MeshError(
            f"{int(off.sum())} gmsh nodes are off the planned grid (e.g. {values[k]!r} vs {planned[idx[k]]!r})"
        )
    return idx


def _extract(gmsh, plan: Plan, tags: dict):
    """Node coordinates in grid order, node ids of each physical group, quads as ids."""
    ni, nj = plan.x.size, plan.y.size
    node_tags, coords, _ = gmsh.model.mesh.getNodes(returnParametricCoord=False)
    coords = coords.reshape(-1, 3)
    if node_tags.size != ni * nj:
        raise MeshError(f"gmsh made {node_tags.size} nodes, the plan has {ni * nj} (nodes merged or lost)")
    gid = _grid_index(coords[:, 1], plan.y) * ni + _grid_index(coords[:, 0], plan.x)
    # As many nodes as grid points: all points hit <=> no two nodes on one point (O(N), no sort).
    hit = np.zeros(ni * nj, dtype=bool)
    hit[gid] = True
    if not hit.all():
        raise MeshError("two gmsh nodes landed on the same planned grid point")
    lookup = np.full(int(node_tags.max()) + 1, -1, dtype=np.int64)
    lookup[node_tags.astype(np.int64)] = gid
    points = np.empty((ni * nj, 3))
    points[gid] = coords
    points[:, 2] = 0.0
    groups_nodes = {}
    for dim, tag in gmsh.model.getPhysicalGroups(1):
        name = gmsh.model.getPhysicalName(dim, tag)
        ntags, _ = gmsh.model.mesh.getNodesForPhysicalGroup(dim, tag)
        groups_nodes[name] = np.sort(lookup[ntags.astype(np.int64)])
    del node_tags, coords
    _, quad_nodes = gmsh.model.mesh.getElementsByType(3)
    quads = lookup[quad_nodes].reshape(-1, 4)
    return points, groups_nodes, quads


def _is_each_planned_cell_once(quads: np.ndarray, ni: int, nj: int) -> bool:
    """True when the quads, as node sets, are the planned cells of an ni x nj grid, each once.

    A planned cell with first node n0 = i + ni j is the node set {n0, n0+1, n0+ni, n0+ni+1}
    (already in increasing order), so sorting each quad's nodes and subtracting the
    pattern identifies its cell by arithmetic: O(cells), no sort of the quad list.
    """
    s = np.sort(quads, axis=1)
    n0 = s[:, 0]
    pattern = np.array([0, 1, ni, ni + 1], dtype=np.int64)
    if not np.array_equal(s - n0[:, None], np.broadcast_to(pattern, s.shape)):
        return False
    i, j = n0 % ni, n0 // ni
    if np.any(i > ni - 2) or np.any(j > nj - 2):
        return False
    hit = np.zeros((ni - 1) * (nj - 1), dtype=bool)
    hit[i + (ni - 1) * j] = True
    return bool(hit.all())  # as many quads as cells (checked before): each cell once


def _check_against_gmsh(mesh: Mesh, plan: Plan, groups_nodes: dict, quads: np.ndarray) -> None:
    if quads.shape[0] != mesh.n_cells:
        raise MeshError(f"gmsh made {quads.shape[0]} quads, the plan has {mesh.n_cells}")
    if not _is_each_planned_cell_once(quads, plan.x.size, plan.y.size):
        raise MeshError("gmsh's quads are not the planned structured cells")
    for g in mesh.groups:
        got = groups_nodes.get(g.name)
        if got is None:
            raise MeshError(f"gmsh has no physical group {g.name!r}")
        if not np.array_equal(got, np.unique(g.facets)):
            raise MeshError(f"gmsh's group {g.name!r} does not hold the planned boundary nodes")


def _check_wall_spacing(mesh: Mesh, plan: Plan) -> None:
    wall = mesh.group(plan.case.names.wall).facets
    base = np.unique(wall)
    dy = mesh.points[base + plan.x.size, 1] - mesh.points[base, 1]
    err = np.abs(dy / plan.first_cell_height - 1.0)
    if err.max() > WALL_SPACING_RTOL:
        raise MeshError(
            f"first wall spacing differs from the plan by {err.max():.2e} relative "
            f"(allowed {WALL_SPACING_RTOL:.0e})"
        )
