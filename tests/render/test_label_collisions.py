"""Labels that never collide, checked on the sheets users get (issue 16, item 1).

Every map sheet of the report of the demo site and of both shipped scenarios
(scenarios/harbour-lab.toml, scenarios/larkfield-clinic.toml), and the placement sheet of
the demo, is drawn; then, from the rendered text extents (``get_window_extent`` after
drawing the canvas), no two labels on a map may overlap, none may leave the drawing,
and on floor plans none may cross a wall (room outlines, DXF walls), a magnet's outline
(footprint, cryostat envelope, the outline of a magnet on another floor) or cover an
equipment marker. The walls, outlines and markers are taken from the scenario itself, not
from the drawing code. These are rules of this project's drawings (common practice, no
source).
"""

from __future__ import annotations

from importlib import resources
from pathlib import Path

import numpy as np
import pytest
import shapely
from matplotlib.text import Annotation, Text

from fringe.analysis.geometry import envelope_plan_outline, magnet_plan_outline
from fringe.analysis.report import compute_report
from fringe.io.scenario import load_site
from fringe.render.report import build_sheets

ROOT = Path(__file__).resolve().parents[2]
SCENARIOS = {
    "demo": None,  # the shipped demo, fringe/data/demo_site.toml
    "harbour-lab": ROOT / "scenarios" / "harbour-lab.toml",
    "larkfield-clinic": ROOT / "scenarios" / "larkfield-clinic.toml",
}
#: Texts placed on the map: room, magnet, equipment and line labels (and, on sections,
#: the floor names); the scale bar's texts sit outside the drawing.
LABEL_GIDS = {"room-label", "magnet-label", "equipment-label", "contour-label", "path-label"}
TOL_PX = 0.5  # rounding of the rendered extents
MARKER_PX = 9.0  # side of an equipment marker's diamond (6-7 pt at the canvas dpi)


def _site(name: str):
    path = SCENARIOS[name]
    if path is None:
        with resources.as_file(resources.files("fringe") / "data" / "demo_site.toml") as p:
            return load_site(p)
    return load_site(path)


@pytest.fixture(scope="module", params=list(SCENARIOS))
def report_sheets(request):
    r = compute_report(_site(request.param))
    sheets = [(stem, fig) for stem, fig in build_sheets(r) if not isinstance(fig, list)]
    return request.param, r, sheets


def _map_axes(fig):
    return next((a for a in fig.axes if a.get_label() == "map"), None)


def _box(t, renderer):
    if isinstance(t, Annotation):
        t.update_positions(renderer)
    b = Text.get_window_extent(t, renderer)
    return (b.x0, b.y0, b.x1, b.y1)


def map_labels(fig) -> tuple[object, list[tuple[str, str, tuple]]]:
    """(map axes, [(gid, text, display box)]) of the labels drawn on a map sheet."""
    ax = _map_axes(fig)
    fig.draw_without_rendering()
    renderer = fig.canvas.get_renderer()
    out = []
    for t in ax.texts:
        gid = t.get_gid()
        if not t.get_visible() or not t.get_text().strip():
            continue
        if gid in LABEL_GIDS or (gid is None and t.get_clip_on()):  # floor names
            out.append((gid or "text", t.get_text(), _box(t, renderer)))
    return ax, out


def _overlap(a, b) -> float:
    w = min(a[2], b[2]) - max(a[0], b[0])
    h = min(a[3], b[3]) - max(a[1], b[1])
    return w * h if (w > TOL_PX and h > TOL_PX) else 0.0


def overlapping_pairs(labels) -> list[tuple[str, str]]:
    return [(labels[i][1], labels[j][1]) for i in range(len(labels))
            for j in range(i + 1, len(labels)) if _overlap(labels[i][2], labels[j][2]) > 0]


def outside_drawing(ax, labels) -> list[str]:
    bb = ax.get_window_extent()
    return [text for _g, text, b in labels
            if b[0] < bb.x0 - TOL_PX or b[1] < bb.y0 - TOL_PX or b[2] > bb.x1 + TOL_PX
            or b[3] > bb.y1 + TOL_PX]


def _display_lines(ax, geoms) -> list:
    out = []
    for g in geoms:
        for part in getattr(g, "geoms", [g]):
            rings = ([part.exterior, *part.interiors] if part.geom_type == "Polygon"
                     else [part])
            for ring in rings:
                xy = np.asarray(ring.coords)[:, :2]
                out.append(shapely.LineString(ax.transData.transform(xy)))
    return out


def crossings(labels, lines) -> list[str]:
    """Labels whose box (less the rounding tolerance) any of ``lines`` passes through."""
    bad = []
    for _g, text, b in labels:
        inner = shapely.box(b[0] + TOL_PX, b[1] + TOL_PX, b[2] - TOL_PX, b[3] - TOL_PX)
        if any(inner.intersects(ln) for ln in lines):
            bad.append(text)
    return bad


def plan_obstacles(r, floor: str, ax) -> tuple[list, list]:
    """Walls and magnet outlines (display lines) and marker boxes of floor ``floor``,
    from the scenario."""
    walls = [room.outline for room in r.plan.rooms if room.floor == floor]
    walls += [w for d in r.site.room_drawings if floor in d.floors for w in d.walls]
    for m in r.site.magnets:
        walls.append(envelope_plan_outline(m))
        if r.plan.floor_of_point(m.center_m[2]).name == floor:
            walls.append(magnet_plan_outline(m))
    markers = []
    for e in r.equipment:
        if e.floor == floor:
            x, y = ax.transData.transform((e.position_m[0], e.position_m[1]))
            h = MARKER_PX / 2
            markers.append((x - h, y - h, x + h, y + h))
    return _display_lines(ax, walls), markers


def test_no_two_labels_overlap_on_any_map_sheet(report_sheets):
    name, _r, sheets = report_sheets
    checked = 0
    for stem, fig in sheets:
        if _map_axes(fig) is None:
            continue
        ax, labels = map_labels(fig)
        title = stem or fig.axes[0].get_label()
        assert overlapping_pairs(labels) == [], (name, title)
        assert outside_drawing(ax, labels) == [], (name, title)
        checked += 1
    assert checked >= 4  # plans, sections and the other maps were all looked at


def test_no_label_crosses_a_wall_or_magnet_outline_or_marker_on_plans(report_sheets):
    name, r, sheets = report_sheets
    plans = [fig for stem, fig in sheets if stem and stem.startswith("plan-")]
    assert len(plans) == len(r.floor_maps)  # one plan per floor, in the floors' order
    for floor, fig in zip(r.floor_maps, plans, strict=True):
        ax, labels = map_labels(fig)
        texts = [" ".join(t.split()) for g, t, _b in labels if g == "room-label"]
        for room in (x.name for x in r.rooms if x.floor == floor):  # every room is named
            assert any(t.startswith(room) for t in texts), (name, floor, room)
        lines, markers = plan_obstacles(r, floor, ax)
        assert crossings(labels, lines) == [], (name, floor)
        covered = [t for _g, t, b in labels if any(_overlap(b, m) > 0 for m in markers)]
        assert covered == [], (name, floor)


def test_title_block_text_stays_inside_its_box(report_sheets):
    name, _r, sheets = report_sheets
    for stem, fig in sheets:
        block = next(a for a in fig.axes if a.get_label() == "title block")
        fig.draw_without_rendering()
        renderer = fig.canvas.get_renderer()
        bb = block.get_window_extent(renderer)
        for t in block.texts:
            b = _box(t, renderer)
            assert bb.x0 < b[0] and b[2] < bb.x1 - 1.0, (name, stem, t.get_text())


def test_placement_sheet_labels_clear(demo_site):
    from fringe.analysis.placement import search_placement
    from fringe.cli.place import equipment_effect
    from fringe.render.placement import placement_sheet

    result = search_placement(demo_site, "hall-A 1.5 T", "magnet room")
    fig = placement_sheet(demo_site, result, equipment_effect(demo_site, result))
    ax, labels = map_labels(fig)
    assert overlapping_pairs(labels) == []
    assert outside_drawing(ax, labels) == []
    # the best placement's floor: rooms and equipment of the scenario
    from fringe.model.site import site_plan

    plan = site_plan(demo_site)
    floor = plan.floor_of_point(result.best.center_m[2]).name
    walls = [room.outline for room in plan.rooms if room.floor == floor]
    assert crossings(labels, _display_lines(ax, walls)) == []
    # the boundary is labelled, beside its line (within two label heights of it)
    boundary = [b for g, t, b in labels if g == "contour-label" and "0.5 mT" in t]
    assert boundary
