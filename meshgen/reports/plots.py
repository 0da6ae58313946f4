"""Pictures of a mesh and its quality report: PNG files drawn with matplotlib (Agg).

Three pictures, each FIG_SIZE_PX pixels (16 x 10 in at 100 dpi):

- ``mesh.png``: the whole domain with every boundary group in its own colour and a
  legend, and a zoom at the leading edge (x = 0, y = 0) whose window follows from the
  first-cell height (height) and the plate length (width). Big grids draw every k-th
  grid line and say so. A panel whose vertical scale is stretched says by how much.
- ``spacing.png``: wall-normal spacing (at the reference station) and streamwise spacing
  (along the wall row) against the node index, log scale, with the growth ratio
  (larger / smaller neighbouring interval) on a second axis.
- ``y_plus.png``: the estimated first-cell y+ along the plate against the target band
  (only when the report has a boundary-layer section).

Grid lines are LineCollections built from whole numpy arrays (no loop over cells).
"""

from __future__ import annotations

from pathlib import Path

import numpy as np

from ..io.atomic import atomic_file
from ..meshing.mesh import Mesh, bounds, node_coordinates, plane_grid
from .structure import recover_structure

DPI = 100
FIG_SIZE_PX = (1600, 1000)
#: Most grid lines drawn per index direction in the overview before thinning.
MAX_LINES = 120
#: Displayed height / width below which a panel's vertical scale is stretched.
MIN_DISPLAY_RATIO = 0.33
#: Leading-edge zoom: height in first-cell heights, width as a share of the plate, and
#: the fewest cells beside the leading edge it shows across.
ZOOM_HEIGHTS, ZOOM_WIDTH, ZOOM_CELLS = 30.0, 0.04, 6.0
#: Margin around a panel's window, as a fraction of its size, so edge lines show whole.
MARGIN = 0.015
#: Gap [points] between the zoom panel and its title, above the y axis's offset text.
ZOOM_TITLE_PAD = 20

#: Titles sit at the top of their axes (a given height spares matplotlib measuring every
#: tick label to place them).
TITLE_Y = 1.0
#: Subplot margins and gaps (fractions of the figure) of a one-axes picture; the mesh and
#: spacing pictures have their own.
MARGINS = {"left": 0.07, "right": 0.98, "bottom": 0.07, "top": 0.9}
MESH_MARGINS = {"left": 0.06, "right": 0.82, "bottom": 0.06, "top": 0.91, "hspace": 0.28}
SPACING_MARGINS = {"left": 0.07, "right": 0.93, "bottom": 0.07, "top": 0.85, "wspace": 0.38}
INK = "#2b2f33"
GRID = "#97a1ab"
FACE = "#fbfaf7"
GROUP_COLOURS = ("#2f6f8f", "#c2693e", "#4f8a4c", "#8d5a97", "#b8942e", "#a34a5b", "#5b6770", "#3f9c9a")
SIZE_COLOUR = "#2f6f8f"
RATIO_COLOUR = "#c2693e"
BAND_COLOUR = "#cfe3d4"


def _figure(ncols: int = 1, nrows: int = 1, margins: dict | None = None, **kw):
    """A figure of FIG_SIZE_PX with fixed margins (fractions of the figure; matplotlib's
    constrained layout measured every text several times and took half of a picture's
    time), its axes coloured as the house style."""
    import matplotlib

    matplotlib.use("Agg")
    import matplotlib.pyplot as plt

    fig, axes = plt.subplots(nrows, ncols, figsize=(FIG_SIZE_PX[0] / DPI, FIG_SIZE_PX[1] / DPI),
                             dpi=DPI, gridspec_kw=margins or MARGINS, **kw)
    for ax in np.atleast_1d(axes).ravel():
        ax.set_facecolor(FACE)
        ax.tick_params(colors=INK, labelsize=11)
    return fig, axes


def _save(fig, target: Path) -> Path:
    import matplotlib.pyplot as plt

    with atomic_file(target) as tmp:
        fig.savefig(tmp, format="png", dpi=DPI)
    plt.close(fig)
    return Path(target)


# --- mesh picture -----------------------------------------------------------------------


def _layer(mesh: Mesh) -> np.ndarray | None:
    """(nj, ni, 2) node grid of the first z layer, or None when not structured."""
    if mesh.shape is None:
        return None
    return plane_grid(mesh)[..., :2]


def _thinned(n: int, limit: int) -> tuple[np.ndarray, int]:
    """Every k-th index of 0..n-1 (the last always kept) and k."""
    k = max(1, int(np.ceil(n / limit)))
    idx = np.arange(0, n, k)
    return (idx if idx[-1] == n - 1 else np.append(idx, n - 1)), k


def _thin_note(ki: int, kj: int) -> str:
    """'drawn: 1 in k i-lines ...' for the thinned directions, '' when none is."""
    thin = [f"1 in {k} {d}-lines" for k, d in ((ki, "i"), (kj, "j")) if k > 1]
    return f"drawn: {' and '.join(thin)}" if thin else ""


def _grid_lines(ax, grid: np.ndarray, ii: np.ndarray, jj: np.ndarray) -> None:
    from matplotlib.collections import LineCollection

    sub = grid[jj[0]: jj[-1] + 1, ii[0]: ii[-1] + 1]
    i_lines = sub[:, ii - ii[0]].transpose(1, 0, 2)  # lines of constant i
    j_lines = sub[jj - jj[0]]  # lines of constant j
    for lines in (i_lines, j_lines):
        ax.add_collection(LineCollection(lines, colors=GRID, linewidths=0.5, zorder=1))


def _edge_lines(ax, mesh: Mesh) -> None:
    """All cell edges of an unstructured mesh (first z layer in 3-D)."""
    from matplotlib.collections import LineCollection

    quads = mesh.cells[:, :4]
    if mesh.dim == 3:
        z = mesh.points[:, 2]
        quads = quads[np.all(np.isclose(z[quads], z.min()), axis=1)]
    e = np.sort(quads[:, [0, 1, 1, 2, 2, 3, 3, 0]].reshape(-1, 2), axis=1)
    e = np.unique(e, axis=0)
    ax.add_collection(LineCollection(mesh.points[e][..., :2], colors=GRID, linewidths=0.5, zorder=1))


def _group_segments(mesh: Mesh, facets: np.ndarray) -> np.ndarray:
    """(n, 2, 2) line segments of a group in the drawing plane (z = z_min in 3-D)."""
    if mesh.dim == 2:
        return node_coordinates(mesh, facets)[..., :2]
    edges = facets[:, [0, 1, 1, 2, 2, 3, 3, 0]].reshape(-1, 2)
    z0 = bounds(mesh)[0][2]
    p = node_coordinates(mesh, edges)
    if np.all(np.isclose(p[..., 2], z0)):  # the whole group lies in the plane (back face)
        return np.empty((0, 2, 2))
    return p[np.isclose(p[..., 2], z0).all(axis=1)][..., :2]


def group_label(name: str, role: str) -> str:
    """A group's legend entry: its name, and its role only when the name differs from it
    (``hull (wall)``, not ``inlet (inlet)``)."""
    return name if name == role else f"{name} ({role})"


def _groups(ax, mesh: Mesh, labelled: bool = True) -> list[str]:
    """Draw every boundary group; return the names of groups not in the drawing plane."""
    from matplotlib.collections import LineCollection

    hidden = []
    for k, g in enumerate(mesh.groups):  # a handful of groups, each drawn in one call
        seg = _group_segments(mesh, g.facets)
        if not len(seg):
            hidden.append(g.name)
            continue
        ax.add_collection(LineCollection(seg, colors=GROUP_COLOURS[k % len(GROUP_COLOURS)], linewidths=3.0,
                                         label=group_label(g.name, g.role) if labelled else None,
                                         zorder=3, capstyle="round"))
    return hidden


def _frame(ax, x0: float, x1: float, y0: float, y1: float) -> str:
    """Set limits; stretch the vertical scale if the panel would be too flat; say how."""
    mx, my = MARGIN * (x1 - x0), MARGIN * (y1 - y0)
    ax.set_xlim(x0 - mx, x1 + mx)
    ax.set_ylim(y0 - my, y1 + my)
    stretch = max(1.0, MIN_DISPLAY_RATIO * (x1 - x0) / (y1 - y0))
    ax.set_aspect(stretch)
    ax.set_xlabel("x [m]", color=INK, fontsize=12)
    ax.set_ylabel("y [m]", color=INK, fontsize=12)
    return "" if stretch == 1.0 else f", vertical scale x{stretch:.3g}"


def _zoom_window(grid: np.ndarray, wall_i: np.ndarray, plate_length: float) -> tuple[tuple, str]:
    """Leading-edge window (x0, x1, y0, y1): ZOOM_HEIGHTS first-cell heights tall and
    ZOOM_WIDTH of the plate wide, or wider to show ZOOM_CELLS of the cells beside the
    leading edge; and a phrase saying which."""
    i_le = wall_i[0]
    h1 = float(grid[1, i_le, 1] - grid[0, i_le, 1])
    height = min(ZOOM_HEIGHTS * h1, float(grid[-1, i_le, 1] - grid[0, i_le, 1]))
    dx = float(np.abs(np.diff(grid[0, max(i_le - 1, 0): i_le + 2, 0])).max())
    width = max(ZOOM_WIDTH * plate_length, ZOOM_CELLS * dx)
    wide = (f"{100 * ZOOM_WIDTH:g} % of the plate wide" if width == ZOOM_WIDTH * plate_length
            else f"{ZOOM_CELLS:g} cells at the leading edge wide")
    x_le, y_w = float(grid[0, i_le, 0]), float(grid[0, i_le, 1])
    window = (x_le - 0.5 * width, x_le + 0.5 * width, y_w, y_w + height)
    return window, f"{ZOOM_HEIGHTS:g} first-cell heights tall, {wide}"


def _wall_nodes(mesh: Mesh, report: dict) -> np.ndarray | None:
    """Sorted i indices of the wall nodes on j = 0 (structured meshes), or None."""
    name = report.get("boundary_layer", {}).get("wall_group")
    walls = [g for g in mesh.groups if g.name == name] or [g for g in mesh.groups if g.role == "wall"]
    if mesh.shape is None or not walls:
        return None
    ni = mesh.shape[0]
    nodes = np.unique(walls[0].facets)
    nodes = nodes[nodes < ni]  # the j = 0 row of the first layer
    return nodes if nodes.size >= 2 else None


def mesh_figure(mesh: Mesh, report: dict, case_name: str):
    """The mesh picture as a matplotlib Figure (structured meshes get the zoom)."""
    fig, (ax, zx) = _figure(nrows=2, margins={**MESH_MARGINS, "height_ratios": [1.25, 1]})
    grid = _layer(mesh)
    lo, hi = bounds(mesh)
    note = ""
    if grid is not None:
        nj, ni = grid.shape[:2]
        ii, ki = _thinned(ni, MAX_LINES)
        jj, kj = _thinned(nj, MAX_LINES)
        _grid_lines(ax, grid, ii, jj)
        note = f"; {_thin_note(ki, kj)}" if _thin_note(ki, kj) else ""
    else:
        _edge_lines(ax, mesh)
    hidden = _groups(ax, mesh)
    stretch = _frame(ax, lo[0], hi[0], lo[1], hi[1])
    layer = "; first z layer shown" if mesh.dim == 3 else ""
    ax.set_title(f"whole domain: {mesh.n_cells:,} {mesh.cell_type} cells{layer}{note}{stretch}",
                 color=INK, fontsize=13, y=TITLE_Y)
    wall_i = _wall_nodes(mesh, report)
    if grid is not None and wall_i is not None:
        length = report.get("boundary_layer", {}).get("plate_length_m") or float(np.ptp(grid[0, wall_i, 0]))
        (x0, x1, y0, y1), window = _zoom_window(grid, wall_i, length)
        inx = np.nonzero((grid[0, :, 0] >= x0) & (grid[0, :, 0] <= x1))[0]
        iny = np.nonzero(grid[:, wall_i[0], 1] <= y1)[0]
        ii = np.arange(max(inx.min() - 1, 0), min(inx.max() + 2, grid.shape[1]))
        jj = np.arange(0, min(iny.max() + 2, grid.shape[0]))
        (si, ki), (sj, kj) = _thinned(ii.size, 2 * MAX_LINES), _thinned(jj.size, 2 * MAX_LINES)
        _grid_lines(zx, grid, ii[si], jj[sj])
        _groups(zx, mesh, labelled=False)
        stretch = _frame(zx, x0, x1, y0, y1)
        # tiny wall distances: a power-of-ten offset instead of long tick labels
        zx.ticklabel_format(axis="y", style="sci", scilimits=(-2, 3))
        x_le = grid[0, wall_i[0], 0] + 0.0  # + 0.0 turns -0.0 into 0.0
        # pad: the offset ("1e-4") stands above the y axis, under the title's left end
        zx.set_title(f"leading edge (x = {x_le:.3g} m), {_thin_note(ki, kj) or 'every grid line'}: "
                     f"{window}{stretch}", color=INK, fontsize=13, y=TITLE_Y, pad=ZOOM_TITLE_PAD)
    else:
        zx.set_axis_off()
        zx.text(0.5, 0.5, "no leading-edge zoom: needs a structured mesh with a wall on j = 0",
                ha="center", va="center", color=INK, fontsize=13, transform=zx.transAxes)
    # one name a line: the legend has the figure's right margin only (0.17 of its width)
    extra = "\nnot drawn (spanwise faces):\n" + "\n".join(hidden) if hidden else ""
    fig.legend(loc="upper left", bbox_to_anchor=(MESH_MARGINS["right"] + 0.01, MESH_MARGINS["top"]),
               title="boundary groups" + extra,
               fontsize=11, title_fontsize=11, frameon=False)
    fig.suptitle(f"{case_name}: mesh", color=INK, fontsize=16)
    return fig


# --- spacing picture --------------------------------------------------------------------


def _spacing_panel(ax, spacing: np.ndarray, title: str, xlabel: str, marks: dict[str, float]) -> None:
    spacing = np.asarray(spacing, dtype=float)
    idx = np.arange(spacing.size)
    dots = {"marker": "o", "ms": 3} if spacing.size <= 150 else {}  # dots only while they stay apart
    ax.semilogy(idx, spacing, color=SIZE_COLOUR, lw=2, label="spacing", **dots)
    ax.set_xlabel(xlabel, color=INK, fontsize=12)
    ax.set_ylabel("node spacing [m]", color=SIZE_COLOUR, fontsize=12)
    ax.set_title(title, color=INK, fontsize=13, pad=30, y=TITLE_Y)
    ax.grid(True, which="major", color="#e3e1db", lw=0.8)
    for label, at in marks.items():  # two or three fixed marks
        ax.axvline(at, color="#7d868f", ls=":", lw=1.5)
        right = at > 0.75 * spacing.size  # label on the left of marks near the right edge
        ax.annotate(label, (at, 1.0), xycoords=("data", "axes fraction"), xytext=(-3 if right else 3, -14),
                    textcoords="offset points", color=INK, fontsize=10, ha="right" if right else "left")
    if spacing.size > 1:
        ratio = np.maximum(spacing[1:], spacing[:-1]) / np.minimum(spacing[1:], spacing[:-1])
        tw = ax.twinx()
        tw.plot(idx[1:] - 0.5, ratio, color=RATIO_COLOUR, lw=1.5, label="growth ratio")
        tw.set_ylabel("growth ratio, larger / smaller [-]", color=RATIO_COLOUR, fontsize=12)
        tw.set_ylim(min(0.95, ratio.min() * 0.98), max(1.35, ratio.max() * 1.05))
        tw.tick_params(colors=INK, labelsize=11)
        lines = ax.get_lines()[:1] + tw.get_lines()
        ax.legend(lines, [ln.get_label() for ln in lines], loc="lower center", bbox_to_anchor=(0.5, 1.0),
                  ncols=2, fontsize=10, frameon=False)


def spacing_figure(mesh: Mesh, report: dict, case_name: str):
    """Spacing and growth ratio against the index (structured meshes)."""
    fig, (left, right) = _figure(ncols=2, margins=SPACING_MARGINS)
    bl = report.get("boundary_layer", {})
    grid = _layer(mesh)
    wall_i = _wall_nodes(mesh, report)
    if "reference" in bl:
        ref = bl["reference"]
        dy, where = ref["spacing_m"], f"x = {ref['x_m']:.4g} m (reference station)"
        inside = int(np.count_nonzero(np.cumsum(dy) <= ref["delta99_m"]))
        marks = {"delta99 here": inside - 0.5}
    else:
        col = int(wall_i[wall_i.size // 2]) if wall_i is not None else 0
        dy = np.abs(np.diff(grid[:, col, 1]))
        where, marks = f"x = {grid[0, col, 0]:.4g} m", {}
    _spacing_panel(left, dy, f"wall-normal, at {where}", "wall-normal interval index j [-]", marks)
    sx = report.get("streamwise_spacing", {}).get("spacing_m")
    if sx is None:
        sx = np.linalg.norm(np.diff(grid[0], axis=0), axis=1)
    marks = {} if wall_i is None else {"leading edge": wall_i[0] - 0.5, "trailing edge": wall_i[-1] - 0.5}
    _spacing_panel(right, sx, "streamwise, along the wall row", "streamwise interval index i [-]", marks)
    fig.suptitle(f"{case_name}: node spacing and growth ratio", color=INK, fontsize=16)
    return fig


# --- y+ picture --------------------------------------------------------------------------


def y_plus_figure(report: dict, case_name: str):
    """Estimated first-cell y+ along the plate against the band (needs the boundary layer)."""
    bl = report["boundary_layer"]
    yp = bl["y_plus"]
    x, y = np.asarray(yp["x_m"]), np.asarray(yp["y_plus"])
    lo, hi = yp["band"]
    fig, ax = _figure()
    ax.axhspan(lo, hi, color=BAND_COLOUR, label=f"band {lo:.3g} to {hi:.3g} ({yp['band_rule']}): "
               f"{100 * yp['fraction_in_band']:.1f} % of the plate inside")
    if bl["y_plus_target"] is not None:  # none when the first cell was not sized by a y+
        ax.axhline(bl["y_plus_target"], color="#4f8a4c", ls="--", lw=1.5,
                   label=f"target y+ = {bl['y_plus_target']:.3g}")
    ax.plot(x, y, color=SIZE_COLOUR, lw=2.2, label="estimated first-cell y+")
    ref = bl["reference"]
    if ref.get("y_plus") is not None:
        ax.plot([ref["x_m"]], [ref["y_plus"]], "o", color=RATIO_COLOUR, ms=8,
                label=f"reference station x = {ref['x_m']:.4g} m")
    positive = y[y > 0]
    if positive.size and positive.max() / positive.min() > 30:
        ax.set_yscale("log")
    ax.set_xlim(-0.01 * bl["plate_length_m"], 1.01 * bl["plate_length_m"])
    ax.set_xlabel("distance from the leading edge x [m]", color=INK, fontsize=12)
    ax.set_ylabel("y+ of the first cell [-]", color=INK, fontsize=12)
    ax.grid(True, which="major", color="#e3e1db", lw=0.8)
    ax.legend(loc="upper right", fontsize=11, framealpha=0.95)
    ax.set_title(f"{bl['regime']}, Re_L = {bl['re_l']:.3g}, "
                 f"skin friction {bl['formula']} ({bl['correlation']})",
                 color=INK, fontsize=13, y=TITLE_Y)
    fig.suptitle(f"{case_name}: estimated y+ along the plate", color=INK, fontsize=16)
    return fig


def make_pictures(mesh: Mesh, report: dict, case_name: str, out_dir: Path) -> list[Path]:
    """Write mesh.png, spacing.png (structured meshes) and y_plus.png (with a boundary-layer
    report) into ``out_dir``, each atomically; return the paths written."""
    out_dir = Path(out_dir)
    mesh = recover_structure(mesh)
    paths = [_save(mesh_figure(mesh, report, case_name), out_dir / "mesh.png")]
    if mesh.shape is not None:
        paths.append(_save(spacing_figure(mesh, report, case_name), out_dir / "spacing.png"))
    if "y_plus" in report.get("boundary_layer", {}):
        paths.append(_save(y_plus_figure(report, case_name), out_dir / "y_plus.png"))
    return paths
