"""Zones written back into a turned DXF plan (``[[room_file]] rotation_deg``) land where
the rooms were read from (fringe.render.report, fringe.render.dxf, fringe.io.dxf)."""

from __future__ import annotations

from types import SimpleNamespace

import shapely

from fringe.io.dxf import read_dxf_plan, read_dxf_polygons
from fringe.render.dxf import write_zones_dxf, zone_layer_name
from fringe.render.report import _unturned
from tests.io.test_scenario_drawing import _plan


def test_zones_go_back_into_the_turned_drawing(tmp_path):
    src = _plan(tmp_path / "plan.dxf")
    rot, off = 35.0, (12.0, -4.0)
    plan = read_dxf_plan(src, {"floor": "g", "layers": {"ROOM": "open"},
                               "rotation_deg": rot, "offset_m": list(off)})
    room = plan.rooms[0].outline  # site metres
    zone = room.buffer(-0.5)  # a footprint inside the room, site metres
    layer = zone_layer_name(0.5)
    source = SimpleNamespace(rotation_deg=rot, offset_m=off)
    c = room.centroid
    zones, texts = _unturned({layer: zone}, {"FRINGE-ROOMS": [("scan", (c.x, c.y))]}, source)
    # a name turns with its outline: it stays at the outline's centre
    (name, xy), = texts["FRINGE-ROOMS"]
    assert name == "scan" and shapely.Point(xy).distance(zones[layer].centroid) < 1e-9
    out = tmp_path / "zones.dxf"
    write_zones_dxf(out, zones, template=src, offset_m=off)
    back = read_dxf_polygons(out, layer, offset_m=off, rotation_deg=rot)
    # common practice, no source: the round trip keeps the zone to well under 1 mm
    assert shapely.hausdorff_distance(back, zone) < 1e-6
    # in the drawing's own frame (mm, unturned) the zone sits inside the drawn room
    raw = read_dxf_polygons(out, layer)
    assert shapely.box(0, 0, 4, 2).contains(raw)
