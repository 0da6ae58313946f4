"""Quality metrics, boundary-layer report and the MSH / VTU readers.

Outside sources named beside the checks:
- Verdict: Verdict Library Reference Manual, Stimpson et al., Sandia SAND2007-2853P (2007),
  quadrilateral and hexahedron metric definitions, as listed in shared/references.md.
- Blasius: delta99 = 4.91 x / sqrt(Re_x), Cf = 0.664 / sqrt(Re_x) (Howarth 1938, as
  tabulated in Schlichting, Boundary-Layer Theory; shared/references.md).
- Wall units: y+ = y u_tau / nu, u_tau = U sqrt(Cf / 2) (shared/references.md).
- MSH 2.2: gmsh reference manual, "MSH file format" (legacy version 2). VTU FieldData:
  VTK file formats, "XML file formats".
"""

from __future__ import annotations

import base64
import json
import math
from pathlib import Path

import meshio
import numpy as np
import pytest

from meshgen.core.errors import InputError, ReadError
from meshgen.io.readers.msh import read_msh
from meshgen.io.readers.vtu import read_vtu
from meshgen.io.writers import FORMATS
from meshgen.io.writers.vtu import group_ids
from meshgen.meshing.mesh import Block, Group, Mesh, Patch, extrude, structured_mesh
from meshgen.meshing.verify import verify_mesh
from meshgen.physics import correlations as bl
from meshgen.reports import quality as q
from meshgen.reports.boundary_layer import boundary_layer_report
from meshgen.reports.cell_metrics import cell_metrics
from meshgen.reports.markdown import quality_markdown
from meshgen.reports.structure import growth_ratios, non_orthogonality, recover_structure

# --- helpers ----------------------------------------------------------------------------

SQ3 = math.sqrt(3.0)


def one_cell(corners) -> Mesh:
    """A single quad from four (x, y) corners, in the order given."""
    p = np.zeros((4, 3))
    p[:, :2] = corners
    return Mesh(points=p, cells=np.array([[0, 1, 2, 3]]), groups=())


def plate_groups(i0: int, i1: int, n: int) -> list:
    sym = tuple(p for p in (Patch("jmin", 0, i0), Patch("jmin", i1, n)) if p.i1 > p.i0)
    groups = [("inlet", "inlet", (Patch("imin"),)), ("outlet", "outlet", (Patch("imax"),)),
              ("wall", "wall", (Patch("jmin", i0, i1),)), ("farfield", "farfield", (Patch("jmax", 0, n),))]
    return groups + ([("symmetry", "symmetry", sym)] if sym else [])


def plate_mesh(x_plate: np.ndarray, y: np.ndarray, upstream=(-0.2, -0.1)) -> Mesh:
    """Upstream block (``upstream`` nodes, x < 0), plate (``x_plate`` from 0) and no wake."""
    upstream = np.asarray(upstream, dtype=float)
    x = np.concatenate([upstream, x_plate])
    i0, n = upstream.size, x.size - 1
    blocks = (Block("upstream", 0, i0), Block("plate", i0, n))
    return structured_mesh(x, y, blocks, plate_groups(i0, n, n))


def small_mesh() -> Mesh:
    """The rules file's synthetic mesh: upstream, plate and wake blocks, 12 quads."""
    x = np.array([-1, 0, 0.5, 1, 2.0])
    y = np.array([0, 0.1, 0.3, 1.0])
    blocks = (Block("upstream", 0, 1), Block("plate", 1, 3), Block("wake", 3, 4))
    return structured_mesh(x, y, blocks, plate_groups(1, 3, 4))


def geometric(first: float, ratio: float, n: int) -> np.ndarray:
    return np.concatenate([[0.0], np.cumsum(first * ratio ** np.arange(n))])


def sheared(shear: float, ni: int = 6, nj: int = 5) -> Mesh:
    """A structured grid whose j-lines lean: x = i + shear * j, y = j."""
    i, j = np.meshgrid(np.arange(ni, dtype=float), np.arange(nj, dtype=float))
    pts = np.stack([(i + shear * j).ravel(), j.ravel(), np.zeros(i.size)], axis=1)
    groups = [("inlet", "inlet", (Patch("imin"),)), ("outlet", "outlet", (Patch("imax"),)),
              ("wall", "wall", (Patch("jmin", 0, ni - 1),)),
              ("farfield", "farfield", (Patch("jmax", 0, ni - 1),))]
    return structured_mesh(np.arange(ni), np.arange(nj), (Block("plate", 0, ni - 1),), groups, points=pts)


def unstructured_order(mesh: Mesh, seed: int = 3) -> Mesh:
    """The same mesh with points and cells shuffled and the layout forgotten."""
    rng = np.random.default_rng(seed)
    perm = rng.permutation(mesh.n_points)  # new id of each old point
    points = np.empty_like(mesh.points)
    points[perm] = mesh.points
    cells = perm[mesh.cells][rng.permutation(mesh.n_cells)]
    groups = tuple(Group(g.name, g.role, perm[g.facets]) for g in mesh.groups)
    return Mesh(points=points, cells=cells, groups=groups)


def leaves(obj):
    if isinstance(obj, dict):
        for v in obj.values():
            yield from leaves(v)
    elif isinstance(obj, list):
        for v in obj:
            yield from leaves(v)
    else:
        yield obj


# --- Verdict quad metrics: hand checks from the definitions -----------------------------


def test_unit_square_has_the_ideal_values():
    m = cell_metrics(one_cell([(0, 0), (1, 0), (1, 1), (0, 1)]))[0]
    # Verdict, "q for unit square" column: aspect 1, edge ratio 1, skew 0, scaled Jacobian 1.
    assert m["aspect_ratio"][0] == pytest.approx(1.0)
    assert m["edge_ratio"][0] == pytest.approx(1.0)
    assert m["skew"][0] == pytest.approx(0.0)
    assert m["scaled_jacobian"][0] == pytest.approx(1.0)
    assert m["area"][0] == pytest.approx(1.0)


def test_one_by_two_rectangle():
    m = cell_metrics(one_cell([(0, 0), (2, 0), (2, 1), (0, 1)]))[0]
    # Verdict aspect ratio Lmax (L0+L1+L2+L3) / (4A) = 2 * 6 / 8 = 1.5; edge ratio 2 / 1.
    assert m["aspect_ratio"][0] == pytest.approx(1.5, rel=1e-12)
    assert m["edge_ratio"][0] == pytest.approx(2.0, rel=1e-12)
    assert m["skew"][0] == pytest.approx(0.0, abs=1e-15)
    assert m["scaled_jacobian"][0] == pytest.approx(1.0, rel=1e-12)
    assert m["area"][0] == pytest.approx(2.0, rel=1e-12)


def test_sixty_degree_unit_rhombus():
    m = cell_metrics(one_cell([(0, 0), (1, 0), (1.5, SQ3 / 2), (0.5, SQ3 / 2)]))[0]
    # Verdict: skew = |cos 60| = 0.5; scaled Jacobian = sin 60 = 0.866 (shared/references.md).
    assert m["skew"][0] == pytest.approx(0.5, rel=1e-12)
    assert m["scaled_jacobian"][0] == pytest.approx(0.8660254, rel=1e-7)
    # aspect ratio from the same definition: 1 * 4 / (4 * sin 60), area sin 60
    assert m["aspect_ratio"][0] == pytest.approx(2 / SQ3, rel=1e-12)
    assert m["area"][0] == pytest.approx(SQ3 / 2, rel=1e-12)
    assert m["edge_ratio"][0] == pytest.approx(1.0, rel=1e-12)


def test_right_trapezoid_by_hand():
    m = cell_metrics(one_cell([(0, 0), (2, 0), (1.5, 1), (0, 1)]))[0]
    # Verdict definitions by hand: edges 2, sqrt(1.25), 1.5, 1; area 1.75;
    # X1 = (3.5, 0), X2 = (-0.5, 2); corner sines 1, 2/sqrt(5), 2/sqrt(5), 1
    assert m["area"][0] == pytest.approx(1.75, rel=1e-12)
    assert m["aspect_ratio"][0] == pytest.approx(2 * (4.5 + math.sqrt(1.25)) / 7.0, rel=1e-12)
    assert m["edge_ratio"][0] == pytest.approx(2.0, rel=1e-12)
    assert m["skew"][0] == pytest.approx(0.5 / math.sqrt(4.25), rel=1e-12)
    assert m["scaled_jacobian"][0] == pytest.approx(2 / math.sqrt(5), rel=1e-12)


@pytest.mark.parametrize(
    "corners",
    [[(0, 0), (0, 1), (1, 1), (1, 0)],  # clockwise: the square's mirror image
     [(0, 0), (2, 0), (0.5, 0.5), (0, 2)]],  # arrowhead: reflex corner at node 2
)
def test_inverted_cell_is_negative_and_an_error(corners):
    mesh = one_cell(corners)
    sj = cell_metrics(mesh)[0]["scaled_jacobian"][0]
    assert sj < 0  # Verdict: scaled Jacobian below 0 is an inverted element
    report = q.quality_report(mesh)
    assert report["inverted_cells"] == 1
    assert any("inverted" in e for e in report["errors"])
    assert "inverted" in quality_markdown(report, "bad", [])


def test_clockwise_square_is_minus_one_and_arrowhead_reflex_sine():
    cw = cell_metrics(one_cell([(0, 0), (0, 1), (1, 1), (1, 0)]))[0]
    assert cw["scaled_jacobian"][0] == pytest.approx(-1.0)
    arrow = cell_metrics(one_cell([(0, 0), (2, 0), (0.5, 0.5), (0, 2)]))[0]
    # by hand: the reflex corner at (0.5, 0.5) has edges (1.5, -0.5) and (-0.5, 1.5), an
    # interior angle of 360 - 126.87 = 233.13 deg, whose sine is -0.8
    assert arrow["scaled_jacobian"][0] == pytest.approx(-0.8, rel=1e-12)


# --- hexahedra -------------------------------------------------------------------------


def hex_mesh(top_shift=(0.0, 0.0), base=((0, 0), (1, 0), (1, 1), (0, 1))) -> Mesh:
    b = np.array(base, dtype=float)
    p = np.zeros((8, 3))
    p[:4, :2] = b
    p[4:, :2] = b + np.asarray(top_shift)
    p[4:, 2] = 1.0
    return Mesh(points=p, cells=np.arange(8)[None, :], groups=())


def test_unit_cube_and_extruded_rhombus():
    cube = cell_metrics(hex_mesh())[0]
    assert cube["scaled_jacobian"][0] == pytest.approx(1.0)  # Verdict, unit cube
    assert cube["volume"][0] == pytest.approx(1.0)
    rh = cell_metrics(hex_mesh(base=((0, 0), (1, 0), (1.5, SQ3 / 2), (0.5, SQ3 / 2))))[0]
    # an extrusion keeps the base quad's corner sines: Verdict hex scaled Jacobian = sin 60
    assert rh["scaled_jacobian"][0] == pytest.approx(SQ3 / 2, rel=1e-12)
    assert rh["skew"][0] == pytest.approx(0.5, rel=1e-12)
    assert rh["volume"][0] == pytest.approx(SQ3 / 2, rel=1e-12)


def test_extruded_trapezoid_takes_the_smallest_corner():
    m = cell_metrics(hex_mesh(base=((0, 0), (2, 0), (1.5, 1), (0, 1))))[0]
    # Verdict hex: minimum normalised Jacobian; corners of a z-extrusion are the base
    # corner sines (1, 2/sqrt 5, 2/sqrt 5, 1), the centre is sin(X1, X2) = 2/sqrt(4.25)
    assert m["scaled_jacobian"][0] == pytest.approx(2 / math.sqrt(5), rel=1e-12)
    assert m["volume"][0] == pytest.approx(1.75, rel=1e-12)


def test_leaning_hex_is_not_an_extrusion():
    m, notes = cell_metrics(hex_mesh(top_shift=(1.0, 0.0)))
    # side edges lean 45 deg: normalised Jacobian at corner 0 = det(x, y, (1,0,1)) / sqrt 2
    assert m["scaled_jacobian"][0] == pytest.approx(1 / math.sqrt(2), rel=1e-12)
    assert m["volume"][0] == pytest.approx(1.0, rel=1e-12)  # base 1 x height 1
    assert "aspect_ratio" not in m and any("not an extrusion" in n for n in notes)


def test_mirrored_hex_is_inverted():
    m = hex_mesh()
    flipped = Mesh(points=m.points, cells=m.cells[:, [4, 5, 6, 7, 0, 1, 2, 3]], groups=())
    assert q.quality_report(flipped)["inverted_cells"] == 1


# --- growth ratio and non-orthogonality ----------------------------------------------------


def test_growth_ratio_of_geometric_grid_is_its_ratio():
    x = geometric(0.01, 1.2, 12)
    y = geometric(0.001, 1.15, 9)
    m = structured_mesh(x, y, (Block("plate", 0, 12),), plate_groups(0, 12, 12))
    g = growth_ratios(m)
    # a geometric series of ratio r has neighbouring sizes in ratio r (definition)
    assert np.allclose(g["i"], 1.2, rtol=1e-12) and g["i"].size == 11 * 9
    assert np.allclose(g["j"], 1.15, rtol=1e-12) and g["j"].size == 12 * 8
    g3 = growth_ratios(extrude(m, geometric(0.1, 1.3, 3)))
    assert np.allclose(g3["i"], 1.2) and np.allclose(g3["j"], 1.15) and np.allclose(g3["k"], 1.3)
    # shrinking cells count the same: larger / smaller across each face
    xs = np.concatenate([x, x[-1] + np.cumsum(np.diff(x)[::-1])])
    m2 = structured_mesh(xs, y, (Block("plate", 0, 24),), plate_groups(0, 24, 24))
    gi = growth_ratios(m2)["i"].reshape(9, 23)
    assert np.allclose(np.delete(gi, 11, axis=1), 1.2) and np.allclose(gi[:, 11], 1.0)


def test_non_orthogonality_zero_on_rectangular_grid():
    m = small_mesh()
    angles = non_orthogonality(m)
    assert angles.size == 3 * 3 + 4 * 2  # interior edges of a 4 x 3 cell grid
    assert np.allclose(angles, 0.0, atol=1e-12)
    a3 = non_orthogonality(extrude(m, np.linspace(0, 1, 3)))
    assert a3.size == 17 * 2 + 12 and np.allclose(a3, 0.0, atol=1e-12)


@pytest.mark.parametrize("shear", [0.5, 1 / SQ3])
def test_non_orthogonality_on_sheared_grid(shear):
    # By hand: for x = i + s j, both face families meet the centre line at atan(s).
    angles = non_orthogonality(sheared(shear))
    assert angles.size == 4 * 4 + 5 * 3  # 5 x 4 cells: interior i-faces and j-faces
    assert np.allclose(angles, math.degrees(math.atan(shear)), rtol=1e-12)
    a3 = non_orthogonality(extrude(sheared(shear), np.array([0.0, 1.0, 2.5])))
    expected = np.sort(np.r_[np.full(31 * 2, math.degrees(math.atan(shear))), np.zeros(20)])
    assert np.allclose(np.sort(a3), expected, atol=1e-12)


# --- structure recovery ------------------------------------------------------------------


@pytest.mark.parametrize("three_d", [False, True])
def test_recover_structure_undoes_a_shuffle(three_d):
    m = small_mesh()
    m = extrude(m, np.array([0.0, 0.2, 0.5])) if three_d else m
    back = recover_structure(unstructured_order(m))
    assert back.shape == m.shape
    assert np.array_equal(back.points, m.points)
    assert np.array_equal(back.cells, m.cells)
    verify_mesh(back)
    for name, size in m.group_sizes().items():
        assert np.array_equal(np.sort(np.sort(back.group(name).facets, axis=1), axis=0),
                              np.sort(np.sort(m.group(name).facets, axis=1), axis=0)), name
        assert back.group_sizes()[name] == size


def test_cells_that_are_not_the_grid_cells_are_not_structured():
    i, j = np.meshgrid(np.arange(3.0), np.arange(3.0))
    pts = np.stack([i.ravel(), j.ravel(), np.zeros(9)], axis=1)  # a 3 x 3 tensor grid of nodes
    big = Mesh(points=pts, cells=np.array([[0, 2, 8, 6]] * 4), groups=())  # cells span two steps
    assert recover_structure(big) is big


def test_not_a_tensor_grid_is_left_alone_and_noted():
    m = unstructured_order(sheared(0.3))
    assert recover_structure(m) is m
    report = q.quality_report(m)
    assert report["mesh"]["structure"] == "none"
    assert not any(k.startswith("growth_ratio") for k in report["metrics"])
    assert any("tensor-product" in n for n in report["notes"])
    flow = {"velocity": 1.0, "nu": 1e-5, "regime": "laminar", "correlation": None, "y_plus_target": 1.0}
    assert "omitted" in boundary_layer_report(m, "wall", **flow)


# --- report ---------------------------------------------------------------------------------


def test_report_is_plain_json_and_counts_ranges():
    m = small_mesh()
    r = q.quality_report(m)
    assert all(v is None or type(v) in (int, float, str, bool) for v in leaves(r))
    assert json.loads(json.dumps(r)) == r
    ar = r["metrics"]["aspect_ratio"]
    values = cell_metrics(m)[0]["aspect_ratio"]
    assert ar["outside"] == int(np.sum((values < 1.0) | (values > 1.3)))  # Verdict range 1 to 1.3
    assert ar["min"] <= ar["p1"] <= ar["p50"] <= ar["p99"] <= ar["max"]
    assert r["metrics"]["centre_line_angle"]["acceptable"] == [0.0, 70.0]  # common practice, the default
    assert any("wall layers" in n for n in r["notes"])
    assert r["inverted_cells"] == 0 and r["errors"] == []


def test_markdown_has_tables_and_relative_picture_links(tmp_path):
    m = small_mesh()
    b = boundary_layer_report(m, "wall", 1.0, 1e-4, "laminar", None, 1.0)
    text = quality_markdown(q.quality_report(m, b), "demo", [tmp_path / "mesh.png", Path("y_plus.png")])
    assert text.startswith("# Mesh quality: demo")
    assert "| aspect ratio |" in text and "| x/L |" in text
    assert "](mesh.png)" in text and "](y_plus.png)" in text and str(tmp_path) not in text


# --- boundary layer ---------------------------------------------------------------------------

U, NU, L = 2.0, 1.5e-5, 1.0


@pytest.mark.parametrize("regime, correlation, target", [("laminar", "blasius", 1.0),
                                                         ("turbulent", "schlichting", 1.0),
                                                         ("turbulent", "white", 30.0)])
def test_y_plus_at_reference_equals_target(regime, correlation, target):
    x_ref = 0.6 * L
    cf = bl.skin_friction(bl.reynolds_x(x_ref, U, NU), correlation)
    dy1 = float(bl.wall_spacing(target, U, NU, cf))
    m = plate_mesh(np.linspace(0, L, 51), geometric(dy1, 1.1, 40))
    r = boundary_layer_report(m, "wall", U, NU, regime, correlation, target, x_ref=x_ref)
    assert r["reference"]["x_m"] == pytest.approx(x_ref)
    assert r["reference"]["first_cell_height_m"] == pytest.approx(dy1, rel=1e-12)
    # y+ = dy1 u_tau / nu with dy1 = y+ nu / u_tau: the target back (wall-unit definition)
    assert r["reference"]["y_plus"] == pytest.approx(target, rel=1e-10)
    assert np.allclose(r["reference"]["growth_ratio"], 1.1)


def test_y_plus_along_plate_and_band_fraction():
    target = 1.0
    cf = bl.skin_friction(bl.reynolds_x(L, U, NU), "blasius")
    dy1 = float(bl.wall_spacing(target, U, NU, cf))
    # nodes clustered at both plate ends, so shares of length and of nodes differ
    m = plate_mesh(0.5 * L * (1 - np.cos(np.pi * np.linspace(0, 1, 2001))), geometric(dy1, 1.1, 30))
    r = boundary_layer_report(m, "wall", U, NU, "laminar", None, target)
    yp = r["y_plus"]
    x = np.array(yp["x_m"])
    assert x.min() > 0 and x.size == 2000  # x = 0 skipped
    # Blasius Cf = 0.664 Re_x^-1/2 makes u_tau ~ x^-1/4: y+(x) = target (x / L)^-1/4 (computed)
    assert np.allclose(yp["y_plus"], target * (x / L) ** -0.25, rtol=1e-10)
    # band 0.5 .. 1.5 x target holds for x >= 1.5^-4 L: that share of the plate
    assert yp["band"] == [0.5, 1.5]
    assert yp["fraction_in_band"] == pytest.approx(1 - 1.5**-4, abs=1e-3)
    assert yp["fraction_above"] == pytest.approx(1.5**-4, abs=1e-3)
    assert yp["fraction_below"] == 0.0
    given = boundary_layer_report(m, "wall", U, NU, "laminar", None, target, band=(0.0, 2.0))
    assert given["y_plus"]["fraction_in_band"] == pytest.approx(1 - 2.0**-4, abs=1e-3)


def test_cells_in_delta99_at_stations():
    y = geometric(2e-5, 1.08, 80)
    m = plate_mesh(np.linspace(0, L, 101), y)
    r = boundary_layer_report(m, "wall", U, NU, "laminar", None, 1.0)
    assert [s["fraction"] for s in r["stations"]] == [0.1, 0.25, 0.5, 0.75, 1.0]
    for s in r["stations"]:
        re = U * s["x_m"] / NU
        d99 = 4.91 * s["x_m"] / math.sqrt(re)  # Blasius (Howarth 1938, via Schlichting)
        assert s["delta99_m"] == pytest.approx(d99, rel=1e-12)
        assert s["cells_in_delta99"] == int(np.sum(y[1:] <= d99))  # intervals wholly inside
        assert s["cells_in_delta99"] > 10


def test_boundary_layer_on_3d_mesh_matches_2d():
    m = plate_mesh(np.linspace(0, L, 21), geometric(1e-4, 1.2, 20))
    args = ("wall", U, NU, "laminar", None, 1.0)
    r2 = boundary_layer_report(m, *args)
    r3 = boundary_layer_report(extrude(m, np.linspace(0, 0.1, 3)), *args)
    assert r2["stations"] == r3["stations"] and r2["y_plus"] == r3["y_plus"]


def test_boundary_layer_bad_input_names_the_field():
    m = small_mesh()
    with pytest.raises(InputError) as err:
        boundary_layer_report(m, "plate", -1.0, 1e-5, "auto", "nope", 1.0, stations=(0.0, 2.0))
    text = "\n".join(err.value.problems)
    for field in ("wall_group", "velocity", "regime", "correlation", "stations"):
        assert field in text


# --- readers --------------------------------------------------------------------------------


def metric_summaries(mesh: Mesh) -> dict:
    return q.quality_report(mesh)["metrics"]


@pytest.mark.parametrize("fmt", ["msh", "msh2"])
@pytest.mark.parametrize("three_d", [False, True])
def test_msh_round_trip(tmp_path, fmt, three_d):
    m = small_mesh()
    m = extrude(m, np.array([0.0, 0.25, 0.5])) if three_d else m
    (path,) = FORMATS[fmt].write(m, tmp_path, "case")
    r = read_msh(path)
    verify_mesh(r)
    assert np.array_equal(r.points, m.points) and np.array_equal(r.cells, m.cells)
    assert r.group_sizes() == m.group_sizes()
    assert {g.name: g.role for g in r.groups} == {g.name: g.role for g in m.groups}
    for g in m.groups:
        assert np.array_equal(r.group(g.name).facets, g.facets)
    assert r.cell_group == "fluid" and r.shape is None
    assert metric_summaries(r) == metric_summaries(m)


def test_msh_roles_come_from_names(tmp_path):
    m = small_mesh()
    renamed = Mesh(points=m.points, cells=m.cells, groups=tuple(
        Group({"farfield": "top", "wall": "plate"}.get(g.name, g.name), g.role, g.facets) for g in m.groups))
    r = read_msh(FORMATS["msh"].write(renamed, tmp_path, "renamed")[0])
    # documented rule: a name that is a role keeps it, any other name reads as far-field
    assert {g.name: g.role for g in r.groups} == {"inlet": "inlet", "outlet": "outlet", "plate": "farfield",
                                                  "symmetry": "symmetry", "top": "farfield"}


def write_text(path: Path, text: str) -> Path:
    path.write_text(text)
    return path


def msh22(elements: list[str]) -> str:
    """A MSH 2.2 ASCII file (gmsh manual, legacy format) on the unit square's 4 nodes."""
    nodes = "1 0 0 0\n2 1 0 0\n3 1 1 0\n4 0 1 0\n"
    return ("$MeshFormat\n2.2 0 8\n$EndMeshFormat\n$Nodes\n4\n" + nodes + "$EndNodes\n"
            f"$Elements\n{len(elements)}\n" + "".join(e + "\n" for e in elements) + "$EndElements\n")


def test_msh_without_groups_or_with_triangles_is_a_read_error(tmp_path):
    cases = {
        "nogroups.msh": (msh22(["1 3 2 0 0 1 2 3 4"]), "no boundary groups"),
        "triangles.msh": (msh22(["1 2 2 1 1 1 2 3", "2 2 2 1 1 1 3 4"]), "quad"),
        "garbage.msh": ("this is not a mesh\n", "not a readable Gmsh MSH file"),
    }
    for name, (text, words) in cases.items():
        with pytest.raises(ReadError) as err:
            read_msh(write_text(tmp_path / name, text))
        assert words in str(err.value) and "\n" not in str(err.value), name
    with pytest.raises(ReadError, match="no such file"):
        read_msh(tmp_path / "missing.msh")


def meshio_vtu(mesh: Mesh, path: Path) -> Path:
    """Cells, facets and ``group_id`` written by meshio, whose VTU writer stores no FieldData."""
    ids = group_ids(mesh)
    cells = [(mesh.cell_type, mesh.cells)] + [(mesh.facet_type, g.facets) for g in mesh.groups]
    data = [np.zeros(mesh.n_cells, np.int32)] + [np.full(g.facets.shape[0], ids[g.name], np.int32)
                                                  for g in mesh.groups]
    meshio.write(path, meshio.Mesh(mesh.points, cells, cell_data={"group_id": data}), file_format="vtu",
                 compression=None)
    assert "<FieldData>" not in path.read_text()
    return path


def with_field_data(path: Path, ids: dict[str, int], encoding: str) -> Path:
    """Add a VTK XML FieldData section (one Int32 array per name) before the Piece."""
    def array(name: str, value: int) -> str:
        if encoding == "ascii":
            data = str(value)
        else:  # VTK XML binary, meshio's default UInt32 header: base64 of byte count + data
            data = base64.b64encode(np.uint32(4).tobytes() + np.int32(value).tobytes()).decode()
        return (f'<DataArray type="Int32" Name="{name}" NumberOfTuples="1" format="{encoding}">'
                f"{data}</DataArray>")

    text = path.read_text()
    section = "<FieldData>\n" + "\n".join(array(k, v) for k, v in ids.items()) + "\n</FieldData>\n"
    head, tail = text.split("<Piece", 1)
    path.write_text(head + section + "<Piece" + tail)
    return path


def check_same(r: Mesh, m: Mesh) -> None:
    verify_mesh(r)
    assert np.array_equal(r.points, m.points) and np.array_equal(r.cells, m.cells)
    assert [g.name for g in r.groups] == [g.name for g in m.groups]
    assert r.group_sizes() == m.group_sizes()
    for g in m.groups:
        assert np.array_equal(r.group(g.name).facets, g.facets)
    assert metric_summaries(r) == metric_summaries(m)


@pytest.mark.parametrize("three_d", [False, True])
def test_vtu_round_trip_through_the_writer(tmp_path, three_d):
    m = small_mesh()
    m = extrude(m, np.array([0.0, 0.5])) if three_d else m
    (path,) = FORMATS["vtu"].write(m, tmp_path, "case")
    check_same(read_vtu(path), m)


@pytest.mark.parametrize("encoding", ["ascii", "binary"])
@pytest.mark.parametrize("three_d", [False, True])
def test_vtu_field_data_in_either_encoding(tmp_path, encoding, three_d):
    m = small_mesh()
    m = extrude(m, np.array([0.0, 0.5])) if three_d else m
    path = with_field_data(meshio_vtu(m, tmp_path / "case.vtu"), group_ids(m), encoding)
    check_same(read_vtu(path), m)


def test_vtu_without_names_or_ids_is_a_read_error(tmp_path):
    m = small_mesh()
    cells = [("quad", m.cells), ("line", m.group("wall").facets)]
    no_names = meshio_vtu(m, tmp_path / "nonames.vtu")  # ids without names
    no_ids = tmp_path / "noids.vtu"
    meshio.write(no_ids, meshio.Mesh(m.points, cells))
    for path, words in ((no_names, "no name in the file's FieldData"), (no_ids, "group_id"),
                        (write_text(tmp_path / "bad.vtu", "<VTKFile"), "not a readable VTU file")):
        with pytest.raises(ReadError) as err:
            read_vtu(path)
        assert words in str(err.value) and "\n" not in str(err.value)


# --- fast paths: the same report as the general path ---------------------------------------


def wavy(ni: int = 9, nj: int = 7) -> Mesh:
    """A graded structured grid with curved, leaning lines: non-trivial metrics everywhere."""
    xi = geometric(0.05, 1.1, ni - 1)
    eta = geometric(0.01, 1.3, nj - 1)
    i, j = np.meshgrid(xi, eta)
    pts = np.stack([(i + 0.2 * j + 0.01 * np.sin(7 * j)).ravel(),
                    (j * (1 + 0.1 * np.sin(3 * i))).ravel(), np.zeros(i.size)], axis=1)
    return structured_mesh(xi, eta, (Block("plate", 0, ni - 1),), plate_groups(0, ni - 1, ni - 1),
                           points=pts)


def graded(ni: int = 9, nj: int = 7) -> Mesh:
    """A graded tensor-product grid: its layout can be recovered, so growth ratios compare."""
    x, y = geometric(0.05, 1.1, ni - 1), geometric(0.01, 1.3, nj - 1)
    return structured_mesh(x, y, (Block("plate", 0, ni - 1),), plate_groups(0, ni - 1, ni - 1))


BASES = {"wavy": wavy, "graded": graded}


def forget_layout(mesh: Mesh) -> Mesh:
    """The same points, cells and groups without ``shape``: every fast path is off."""
    return Mesh(points=mesh.points, cells=mesh.cells, groups=mesh.groups)


def assert_same_metrics(fast: dict, general: dict) -> None:
    """Same metric names, counts exact, every figure to 1e-12 relative (the issue's bar).

    A general mesh whose layout cannot be recovered has no growth ratios; only those differ.
    """
    names = list(fast["metrics"])
    if general["mesh"]["structure"] == "none":
        names = [n for n in names if not n.startswith("growth_ratio")]
    assert names == list(general["metrics"])
    for name in names:
        f = fast["metrics"][name]
        g = general["metrics"][name]
        assert f.keys() == g.keys(), name
        for key, a in f.items():
            b = g[key]
            if isinstance(b, float):
                assert math.isclose(a, b, rel_tol=1e-12, abs_tol=1e-300), (name, key, a, b)
            else:
                assert a == b, (name, key, a, b)
    assert fast["inverted_cells"] == general["inverted_cells"]


def test_structured_2d_angles_equal_the_sorted_pairing():
    m = wavy()
    fast, general = non_orthogonality(m), non_orthogonality(forget_layout(m))
    assert fast.size == general.size == 7 * 6 + 8 * 5  # interior i- and j-edges of 8 x 6 cells
    assert np.array_equal(np.sort(fast), np.sort(general))  # same faces, same formulas: bit for bit
    assert general.max() > 5.0  # the grid really is skewed, so the check can fail


@pytest.mark.parametrize("base", list(BASES))
@pytest.mark.parametrize("shuffle", [False, True])
def test_structured_2d_report_matches_general_path(shuffle, base):
    m = BASES[base]()
    other = unstructured_order(m) if shuffle else forget_layout(m)
    fast, general = q.quality_report(m), q.quality_report(other)
    assert general["mesh"]["structure"] == ("recovered" if base == "graded" else "none")
    assert_same_metrics(fast, general)


@pytest.mark.parametrize("base", list(BASES))
def test_exact_extrusion_takes_one_layer_and_matches_every_cell(base):
    # np.linspace planes: the thicknesses differ in the last bits (a few distinct values),
    # which the layered path must count correctly.
    z = np.linspace(0.0, 0.37, 8)
    assert np.unique(np.diff(z)).size > 1
    m = extrude(BASES[base](), z)
    assert q.exact_layers(m) is not None
    fast = q.quality_report(m)
    assert any("exact z-extrusion of 7 uniform layers" in n for n in fast["notes"])
    for other in (forget_layout(m), unstructured_order(m)):
        general = q.quality_report(other)
        assert any("every cell" in n for n in general["notes"])
        assert_same_metrics(fast, general)
    assert fast["metrics"]["volume"]["count"] == 8 * 6 * 7
    assert fast["metrics"]["centre_line_angle"]["count"] == 7 * (7 * 6 + 8 * 5) + 6 * 8 * 6


@pytest.mark.parametrize("base", list(BASES))
@pytest.mark.parametrize("case", ["geometric layers", "one node moved", "one layer"])
def test_other_extrusions_take_the_general_path(case, base):
    if case == "geometric layers":
        m = extrude(BASES[base](), geometric(0.05, 1.4, 5))  # non-uniform: must not be layered
    elif case == "one layer":
        m = extrude(BASES[base](), np.array([0.0, 0.3]))
    else:
        m = extrude(BASES[base](), np.linspace(0.0, 1.0, 5))
        points = m.points.copy()
        points[3 * 9 * 7 + 20, 0] += 1e-3  # a node of plane 3 off the plane-0 xy
        m = Mesh(points, m.cells, m.groups, shape=m.shape, blocks=m.blocks)
    assert q.exact_layers(m) is None
    fast = q.quality_report(m)
    assert any("every cell" in n for n in fast["notes"])
    assert_same_metrics(fast, q.quality_report(forget_layout(m)))


def test_weighted_summary_equals_the_repeated_values():
    # np.percentile's default (linear) method on the repeated array is the definition.
    rng = np.random.default_rng(5)
    a, b = rng.random(37) ** 3, rng.random(11)
    parts = q.summarise("skew", [(a, 4), (b, 3)])
    full = q.summarise("skew", np.concatenate([a, a, a, a, b, b, b]))
    assert parts["count"] == full["count"] == 4 * 37 + 3 * 11
    for key in ("min", "max", "mean", "p1", "p5", "p50", "p95", "p99"):
        assert math.isclose(parts[key], full[key], rel_tol=1e-14), key
    assert parts["outside"] == full["outside"] > 0
    plain = rng.random(1001)
    pct = np.percentile(plain, q.PERCENTILES)
    assert [q.summarise("skew", plain)[f"p{p}"] for p in q.PERCENTILES] == list(pct)


def test_weighted_summary_with_signs_ties_and_zeros_equals_the_repeated_values():
    # np.percentile (linear) on the repeated array is the definition; negative values,
    # zeros and ties across parts exercise the ordering of the weighted ranks.
    rng = np.random.default_rng(11)
    a = np.round(rng.normal(size=53), 1)
    b = np.concatenate([np.zeros(5), -a[:7], [1e-300, -1e-300]])
    c = np.full(4, 0.5)
    parts = q.summarise("skew", [(a, 3), (b, 5), (c, 11)])
    full = q.summarise("skew", np.concatenate([np.tile(a, 3), np.tile(b, 5), np.tile(c, 11)]))
    for key in ("count", "min", "max", "p1", "p5", "p50", "p95", "p99", "outside"):
        assert parts[key] == full[key], key
    assert math.isclose(parts["mean"], full["mean"], rel_tol=1e-14)
