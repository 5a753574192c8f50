"""Moving-steel paths on plan sheets and DXF drawings (issue 17, item 6: "draw the paths on
the plans, coloured by disturbance"). Drawing contract checks (common practice, no source)."""

from __future__ import annotations

import numpy as np
import shapely
from matplotlib.collections import LineCollection, PathCollection
from matplotlib.text import Text

from fringe.render import drawing as dr
from fringe.render.paths import MovingSteelMark, dxf_path_lines, mark_geometries


def _sheet(marks):
    x = np.linspace(-5, 5, 41)
    y = np.linspace(-4, 4, 33)
    X, Y = np.meshgrid(x, y)
    B = 1e-3 / (0.3 + X ** 2 + Y ** 2) ** 1.5  # a smooth invented map, T
    info = dr.SheetInfo(title="test plan", site_name="invented")
    return dr.plan_sheet(x, y, B, info, thresholds_mT=[0.1, 0.5], moving_steel=marks)


def _map_axes(fig):
    return max(fig.axes, key=lambda a: a.get_position().width * a.get_position().height)


def test_paths_drawn_coloured_and_labelled():
    lorry = MovingSteelMark("lorry", np.array([[-4.0, 3.0], [0.0, 3.0], [4.0, 3.0]]),
                            np.array([0.01, 0.06, 0.02]), 0.05, "lorry: up to 0.06 ppm",
                            exceeds=True)
    lift = MovingSteelMark("lift", np.array([[3.0, -3.0], [3.0, -3.0]]),
                           np.array([0.001, 0.002]), 0.01, "lift: up to 0.002 ppm")
    fig = _sheet([lorry, lift])
    ax = _map_axes(fig)
    cols = [c for c in ax.collections if isinstance(c, LineCollection)]
    coloured = [c for c in cols if len(c.get_segments()) == 2 and len(
        {tuple(np.round(v, 6)) for v in c.get_colors()}) == 2]
    assert coloured, "the lorry's two segments in two colours"
    assert any(isinstance(c, PathCollection) for c in ax.collections)  # discs/rings
    texts = [t.get_text() for t in ax.texts]
    assert "LORRY: UP TO 0.06 PPM" in texts  # exceeds: upper case
    assert "lift: up to 0.002 ppm" in texts
    inset = [t.get_text() for a in ax.child_axes for t in a.texts]
    assert any("0 to 0.05 ppm" in t for t in inset)  # the colour bar's range
    legend = [t.get_text() for t in fig.findobj(Text)]
    assert any("moving steel path" in t for t in legend)
    # without paths: no colour bar, no entry
    fig = _sheet([])
    ax = _map_axes(fig)
    assert not ax.child_axes


def test_dxf_geometry_of_paths():
    marks = [MovingSteelMark("a", np.array([[0.0, 0.0], [2.0, 0.0]]), np.array([1, 2.0]),
                             2.0, "a: up to 2 ppm\n(no limit given)"),
             MovingSteelMark("b", np.array([[5.0, 5.0], [5.0, 5.0]]), np.array([1, 3.0]),
                             3.0, "b")]
    g = mark_geometries(marks)
    assert g[0].geom_type == "LineString" and g[1].geom_type == "Point"
    lines, texts = dxf_path_lines(marks)
    assert isinstance(lines, shapely.MultiLineString) and len(lines.geoms) == 2
    assert lines.geoms[1].is_ring  # a circle for the path seen end-on
    assert texts[0][0] == "a: up to 2 ppm (no limit given)"
    assert texts[0][1][0] > 2.0  # beside the worst point (the end at x = 2)
