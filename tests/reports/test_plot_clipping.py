"""Nothing in the mesh picture is cut off or drawn over another text: the legend's note on
the spanwise faces of a 3-D mesh, and the zoom's power-of-ten offset beside its title."""

from itertools import combinations

import pytest
from test_plots import plate_case, text_boxes

from meshgen.reports import plots


@pytest.mark.parametrize("three_d", [False, True])
def test_mesh_picture_texts_inside_the_canvas_and_apart(three_d):
    m, report = plate_case(three_d=three_d)
    fig = plots.mesh_figure(m, report, "case")
    boxes = text_boxes(fig)
    r = fig.canvas.get_renderer()
    # the offset text ("1e-4") of tiny wall distances, drawn above the zoom's y axis
    boxes += [(f"offset {t.get_text()}", t.get_window_extent(r)) for ax in fig.axes
              for t in (ax.yaxis.get_offset_text(), ax.xaxis.get_offset_text()) if t.get_text()]
    assert any(name.startswith("offset") for name, _ in boxes)  # the zoom has one
    for legend in fig.legends:  # the legend's title, e.g. "not drawn (spanwise faces): back, front"
        boxes.append(("legend title", legend.get_title().get_window_extent(r)))
    width, height = plots.FIG_SIZE_PX
    for name, box in boxes:
        assert box.x0 >= -1 and box.y0 >= -1 and box.x1 <= width + 1 and box.y1 <= height + 1, name
    for (a, ba), (b, bb) in combinations(boxes, 2):
        if "legend" in (a, b) and "legend title" in (a, b):
            continue  # a legend holds its title
        assert not ba.overlaps(bb), f"{a!r} overlaps {b!r}"
