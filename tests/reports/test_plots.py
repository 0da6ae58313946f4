"""Pictures: files, format, pixel size, thinning, zoom window and text layout.

Outside sources: the PNG signature and IHDR layout from the PNG specification (W3C /
ISO 15948); pixel sizes read back with matplotlib.image (and PIL when installed).
"""

from __future__ import annotations

import struct
from itertools import combinations

import matplotlib.image as mpimg
import numpy as np
import pytest
from test_quality import geometric, plate_mesh, sheared, unstructured_order

from meshgen.meshing.mesh import extrude
from meshgen.physics import correlations as bl
from meshgen.reports import plots
from meshgen.reports import quality as q
from meshgen.reports.boundary_layer import boundary_layer_report

PNG_SIGNATURE = b"\x89PNG\r\n\x1a\n"  # PNG specification, section 5.2
U, NU, L = 2.0, 1.5e-5, 1.0


def plate_case(nx: int = 81, three_d: bool = False):
    cf = bl.skin_friction(bl.reynolds_x(L, U, NU), "blasius")
    dy1 = float(bl.wall_spacing(1.0, U, NU, cf))
    x = 0.5 * L * (1 - np.cos(np.pi * np.linspace(0, 1, nx)))
    m = plate_mesh(x, geometric(dy1, 1.12, 45), upstream=np.linspace(-0.3, -0.3 / 20, 20))
    m = extrude(m, np.array([0.0, 0.05])) if three_d else m
    report = q.quality_report(m, boundary_layer_report(m, "wall", U, NU, "laminar", None, 1.0))
    return m, report


def png_size(path) -> tuple[int, int]:
    """Width and height from the IHDR chunk (PNG specification, section 11.2.2)."""
    head = path.read_bytes()[:24]
    assert head[:8] == PNG_SIGNATURE and head[12:16] == b"IHDR"
    return struct.unpack(">II", head[16:24])


def check_png(path) -> None:
    assert path.is_file() and path.stat().st_size > 10_000
    assert png_size(path) == plots.FIG_SIZE_PX
    img = mpimg.imread(path)
    assert img.shape[:2] == (plots.FIG_SIZE_PX[1], plots.FIG_SIZE_PX[0])
    assert img[..., :3].std() > 0.02  # something is drawn
    try:
        from PIL import Image
    except ImportError:
        return
    with Image.open(path) as im:
        assert im.format == "PNG" and im.size == plots.FIG_SIZE_PX


@pytest.mark.parametrize("three_d", [False, True])
def test_pictures_are_pngs_of_the_fixed_size(tmp_path, three_d):
    m, report = plate_case(three_d=three_d)
    paths = plots.make_pictures(m, report, "flat plate", tmp_path)
    assert [p.name for p in paths] == ["mesh.png", "spacing.png", "y_plus.png"]
    for p in paths:
        check_png(p)
    assert sorted(p.name for p in tmp_path.iterdir()) == ["mesh.png", "spacing.png", "y_plus.png"]


def test_unstructured_mesh_gets_the_mesh_picture_only(tmp_path):
    m = unstructured_order(sheared(0.3))
    paths = plots.make_pictures(m, q.quality_report(m), "sheared", tmp_path)
    assert [p.name for p in paths] == ["mesh.png"]
    check_png(paths[0])


def test_large_grid_is_thinned_and_says_so():
    x = np.linspace(0, L, 481)
    y = geometric(1e-4, 1.01, 359)
    m = plate_mesh(x, y)
    fig = plots.mesh_figure(m, q.quality_report(m), "big")
    overview = fig.axes[0]
    ni, nj = m.shape
    k_i, k_j = int(np.ceil(ni / plots.MAX_LINES)), int(np.ceil(nj / plots.MAX_LINES))
    assert f"1 in {k_i} i-lines" in overview.get_title() and f"1 in {k_j} j-lines" in overview.get_title()
    grid_lines = [len(c.get_segments()) for c in overview.collections if c.get_label() in ("", None)
                  or c.get_label().startswith("_")]
    assert max(grid_lines) <= plots.MAX_LINES + 1


@pytest.mark.parametrize("upstream, width, words", [
    (np.linspace(-0.3, -0.3 / 20, 20), 6 * 0.3 / 20, "6 cells at the leading edge wide"),  # coarse upstream
    (-np.geomspace(0.3, 1e-3, 30), 0.04 * L, "4 % of the plate wide"),  # fine upstream: 4 % of L
])
def test_zoom_window_follows_first_cell_height_and_plate_length(upstream, width, words):
    cf = bl.skin_friction(bl.reynolds_x(L, U, NU), "blasius")
    dy1 = float(bl.wall_spacing(1.0, U, NU, cf))
    x = 0.5 * L * (1 - np.cos(np.pi * np.linspace(0, 1, 81)))
    m = plate_mesh(x, geometric(dy1, 1.12, 45), upstream=upstream)
    report = q.quality_report(m, boundary_layer_report(m, "wall", U, NU, "laminar", None, 1.0))
    zoom = plots.mesh_figure(m, report, "zoom").axes[1]
    y0, y1 = zoom.get_ylim()
    x0, x1 = zoom.get_xlim()
    margin = 1 + 2 * plots.MARGIN
    assert (y1 - y0) == pytest.approx(30 * dy1 * margin, rel=1e-9)
    assert (x1 - x0) == pytest.approx(width * margin, rel=1e-9)
    assert x0 + x1 == pytest.approx(0.0, abs=1e-12)  # centred on the leading edge
    assert words in zoom.get_title()


def test_y_plus_picture_draws_the_report():
    _, report = plate_case()
    fig = plots.y_plus_figure(report, "yplus")
    ax = fig.axes[0]
    line = next(ln for ln in ax.get_lines() if ln.get_label() == "estimated first-cell y+")
    assert np.array_equal(line.get_xdata(), report["boundary_layer"]["y_plus"]["x_m"])
    assert np.array_equal(line.get_ydata(), report["boundary_layer"]["y_plus"]["y_plus"])
    assert "y+" in ax.get_ylabel() and "[m]" in ax.get_xlabel()


def text_boxes(fig):
    """Window extents of the titles, axis labels and legends of a drawn figure."""
    fig.canvas.draw()
    r = fig.canvas.get_renderer()
    items = [fig._suptitle] + list(fig.legends)
    for ax in fig.axes:
        items += [ax.title, ax.xaxis.label, ax.yaxis.label, ax.get_legend()]
    shown = [t for t in items if t is not None and t.get_visible()
             and (not hasattr(t, "get_text") or t.get_text())]
    return [(str(getattr(t, "get_text", lambda: "legend")()), t.get_window_extent(r)) for t in shown]


@pytest.mark.parametrize("which", ["mesh", "spacing", "y_plus"])
def test_no_overlapping_text(which):
    m, report = plate_case()
    fig = {"mesh": lambda: plots.mesh_figure(m, report, "case"),
           "spacing": lambda: plots.spacing_figure(m, report, "case"),
           "y_plus": lambda: plots.y_plus_figure(report, "case")}[which]()
    boxes = text_boxes(fig)
    assert len(boxes) >= 4
    for (a, ba), (b, bb) in combinations(boxes, 2):
        assert not ba.overlaps(bb), f"{a!r} overlaps {b!r}"
    r = fig.canvas.get_renderer()
    for legend in fig.legends:  # a figure legend stands beside the panels, never on them
        for ax in fig.axes:
            assert not legend.get_window_extent(r).overlaps(ax.get_window_extent(r))
    width, height = plots.FIG_SIZE_PX
    for name, box in boxes:  # inside the canvas
        assert box.x0 >= -1 and box.y0 >= -1 and box.x1 <= width + 1 and box.y1 <= height + 1, name
