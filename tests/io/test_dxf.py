"""DXF exchange: rooms read from drawings the tests make with ezdxf, zones written back."""

from __future__ import annotations

import math

import ezdxf
import pytest
import shapely
import shapely.affinity

from fringe.io.dxf import read_dxf_plan, read_dxf_polygons
from fringe.io.scenario import ROOM_LOADERS
from fringe.model.constants import ADVISORY_NOTICE
from fringe.model.errors import ScenarioError
from fringe.render.dxf import ATTRACTION_LAYER, NOTES_LAYER, write_zones_dxf, zone_layer_name

MM = 1e-3  # round-trip tolerance: 1 mm (issue requirement; common practice, no source)

LAYERS = {"A-MRI": "controlled", "A-ROOM*": "open", "A-WALL": "wall", "A-FURN": "ignore"}


def make_mm_plan(path, *, insunits=4, scale=1000.0):
    """A small clinic plan drawn in millimetres (or in another unit via ``scale``)."""
    doc = ezdxf.new("R2010", units=insunits)
    msp = doc.modelspace()
    for name in ("A-MRI", "A-ROOM-1", "A-ROOM-2", "A-WALL", "A-FURN", "A-TEXT"):
        doc.layers.add(name)

    def s(pts):
        return [(x * scale, y * scale) for x, y in pts]

    msp.add_lwpolyline(s([(0, 0), (7.2, 0), (7.2, 5.5), (0, 5.5)]), close=True,
                       dxfattribs={"layer": "A-MRI"})
    msp.add_text("Magnet room", dxfattribs={"layer": "A-TEXT", "height": 0.3 * scale}) \
        .set_placement((3.6 * scale, 2.7 * scale),
                       align=ezdxf.enums.TextEntityAlignment.MIDDLE_CENTER)
    msp.add_text("41 m²", dxfattribs={"layer": "A-TEXT", "height": 0.2 * scale}) \
        .set_placement((3.6 * scale, 2.2 * scale))
    # control room: last point repeats the first instead of the closed flag
    msp.add_lwpolyline(s([(7.2, 0), (10.35, 0), (10.35, 5.5), (7.2, 5.5), (7.2, 0)]),
                       dxfattribs={"layer": "A-ROOM-1"})
    msp.add_mtext("Control\\Proom", dxfattribs={"layer": "A-TEXT", "insert":
                                                (8.0 * scale, 4.0 * scale)})
    # corridor with no label, as an old-style 2-D POLYLINE
    msp.add_polyline2d(s([(0, 5.5), (10.35, 5.5), (10.35, 7.3), (0, 7.3)]), close=True,
                       dxfattribs={"layer": "A-ROOM-2"})
    # waiting bay with a semicircular end (bulge 1 = half circle of radius 1.25 m)
    bay = [(10.35, 0, 0.0), (13.0, 0, 1.0), (13.0, 2.5, 0.0), (10.35, 2.5, 0.0)]
    msp.add_lwpolyline([(x * scale, y * scale, 0, 0, b) for x, y, b in bay],
                       format="xyseb", close=True, dxfattribs={"layer": "A-ROOM-2"})
    msp.add_lwpolyline(s([(1, 1), (2, 1), (2, 2), (1, 2)]), close=True,
                       dxfattribs={"layer": "A-FURN"})  # a table: ignored
    msp.add_line((0, -0.2 * scale), (10.35 * scale, -0.2 * scale), dxfattribs={"layer": "A-WALL"})
    doc.saveas(str(path))
    return path


EXPECTED_M = {
    "Magnet room": shapely.box(0, 0, 7.2, 5.5),
    "Control room": shapely.box(7.2, 0, 10.35, 5.5),
    "A-ROOM-2 1": shapely.box(0, 5.5, 10.35, 7.3),
    "A-ROOM-2 2": shapely.union(shapely.box(10.35, 0, 13.0, 2.5),
                                shapely.Point(13.0, 1.25).buffer(1.25, quad_segs=256)),
}


def test_rooms_from_a_millimetre_drawing(tmp_path):
    plan = read_dxf_plan(make_mm_plan(tmp_path / "clinic.dxf"),
                         {"floor": "ground", "layers": LAYERS})
    assert plan.insunits == 4 and plan.metres_per_unit == pytest.approx(1e-3)
    got = {r.name: r for r in plan.rooms}
    assert set(got) == set(EXPECTED_M)
    for name, poly in EXPECTED_M.items():
        # 1 mm: outlines read back equal what was drawn (issue requirement); arcs are
        # flattened to 0.5 mm chords
        assert shapely.hausdorff_distance(got[name].outline, poly) < MM, name
        assert got[name].floor == "ground"
    assert got["Magnet room"].access == "controlled"
    assert got["Control room"].access == "open"
    # semicircle area π r²/2 by hand: 2.65 × 2.5 + π·1.25²/2 = 6.625 + 2.4544 = 9.0794 m²
    assert got["A-ROOM-2 2"].outline.area == pytest.approx(9.0794, abs=2e-3)
    assert len(plan.walls) == 1 and plan.walls[0].length == pytest.approx(10.35)


def test_units_offset_and_name_from_layer(tmp_path):
    f = make_mm_plan(tmp_path / "feet.dxf", insunits=2, scale=1 / 0.3048)  # drawn in feet
    plan = read_dxf_plan(f, {"floor": "L1", "layers": LAYERS, "offset_m": [100.0, -20.0],
                             "name_from": "layer"})
    got = {r.name: r.outline for r in plan.rooms}
    assert "A-MRI" in got and "Magnet room" not in got
    # 1 ft = 0.3048 m exactly (international foot, 1959 agreement)
    assert shapely.hausdorff_distance(got["A-MRI"], shapely.box(100, -20, 107.2, -14.5)) < MM


def test_unitless_drawing_needs_units(tmp_path):
    f = make_mm_plan(tmp_path / "nounits.dxf", insunits=0)
    with pytest.raises(ScenarioError, match=r"nounits\.dxf: `\$INSUNITS` must be a length unit"):
        read_dxf_plan(f, {"floor": "ground", "layers": LAYERS})
    plan = read_dxf_plan(f, {"floor": "ground", "layers": LAYERS, "units": "mm"})
    assert plan.rooms[0].outline.area == pytest.approx(7.2 * 5.5)


def test_broken_and_bad_drawings_name_the_file(tmp_path):
    bad = tmp_path / "broken.dxf"
    bad.write_text("0\nSECTION\n2\nHEADER\nthis is not a drawing\n")
    with pytest.raises(ScenarioError, match=r"broken\.dxf: not a readable DXF drawing"):
        read_dxf_plan(bad, {"floor": "ground"})
    with pytest.raises(ScenarioError, match=r"missing\.dxf: cannot read the DXF drawing"):
        read_dxf_plan(tmp_path / "missing.dxf", {"floor": "ground"})
    doc = ezdxf.new(units=6)
    doc.modelspace().add_lwpolyline([(0, 0), (2, 2), (2, 0), (0, 2)], close=True,
                                    dxfattribs={"layer": "ROOMS"})  # a bow tie
    doc.saveas(str(tmp_path / "bowtie.dxf"))
    with pytest.raises(ScenarioError, match=r"bowtie\.dxf: `entity #\w+ on layer 'ROOMS'` "
                                            r"must be a valid simple closed outline"):
        read_dxf_plan(tmp_path / "bowtie.dxf", {"floor": "ground"})
    f = make_mm_plan(tmp_path / "clinic.dxf")
    with pytest.raises(ScenarioError, match=r"no closed room outline found .*'A-MRI'"):
        read_dxf_plan(f, {"floor": "ground", "layers": {"NOPE": "open"}})
    with pytest.raises(ScenarioError, match=r"`room_file.layers.A-MRI` must be one of"):
        read_dxf_plan(f, {"floor": "ground", "layers": {"A-MRI": "scan"}})
    with pytest.raises(ScenarioError, match=r"`room_file.floor` is missing"):
        read_dxf_plan(f, {"layers": LAYERS})


def test_zones_round_trip_into_the_users_drawing(tmp_path):
    src = make_mm_plan(tmp_path / "clinic.dxf")
    ring = shapely.Point(4.0, 3.0).buffer(3.5, quad_segs=32)
    footprint = shapely.Polygon(ring.exterior, [shapely.box(3.5, 2.5, 4.5, 3.5).exterior])
    zones = {zone_layer_name(0.5): shapely.MultiPolygon([footprint, shapely.box(20, 0, 21, 1)]),
             zone_layer_name(3.0): shapely.Point(4.0, 3.0).buffer(1.7, quad_segs=32),
             ATTRACTION_LAYER: shapely.Point(4.0, 3.0).buffer(1.2, quad_segs=32)}
    out = tmp_path / "clinic-zones.dxf"
    units = write_zones_dxf(out, zones, template=src, offset_m=(1.0, -2.0),
                            notes="attraction criterion here")
    assert units == 4  # the drawing's own unit (mm) is kept
    for layer, geom in zones.items():
        back = read_dxf_polygons(out, layer, offset_m=(1.0, -2.0))
        # 1 mm round trip (issue requirement); holes kept
        assert shapely.hausdorff_distance(back, geom) < MM, layer
        assert back.area == pytest.approx(geom.area, rel=1e-9)
    assert len(read_dxf_polygons(out, zone_layer_name(0.5)).geoms[0].interiors) == 1
    doc = ezdxf.readfile(str(out))
    coords = [v for e in doc.modelspace().query(f'LWPOLYLINE[layer=="{ATTRACTION_LAYER}"]')
              for v in e.get_points("xy")]
    # drawing coordinates are millimetres: centre (4, 3) m − offset (1, −2) m = (3000, 5000) mm
    xs = [c[0] for c in coords]
    assert (min(xs) + max(xs)) / 2 == pytest.approx(3000.0, abs=1.0)
    notes = " ".join(e.plain_text()
                     for e in doc.modelspace().query(f'MTEXT[layer=="{NOTES_LAYER}"]'))
    assert ADVISORY_NOTICE.split(".")[0] in notes and "attraction criterion" in notes
    # the user's own rooms are still there, and a second export replaces our layers only
    again = tmp_path / "clinic-zones-2.dxf"
    write_zones_dxf(again, {ATTRACTION_LAYER: zones[ATTRACTION_LAYER]}, template=out)
    doc2 = ezdxf.readfile(str(again))
    assert len(doc2.modelspace().query(f'LWPOLYLINE[layer=="{zone_layer_name(0.5)}"]')) == 0
    assert len(doc2.modelspace().query(f'LWPOLYLINE[layer=="{ATTRACTION_LAYER}"]')) == 1
    rooms = read_dxf_plan(again, {"floor": "ground", "layers": LAYERS}).rooms
    assert {r.name for r in rooms} == set(EXPECTED_M)
    # without a layer map every layer holds rooms — except the FRINGE- layers we wrote
    everything = read_dxf_plan(again, {"floor": "ground"}).rooms
    assert len(everything) == 5  # 4 rooms + the table on A-FURN; no zone rings


def test_new_drawing_in_metres_and_layer_names():
    assert zone_layer_name(0.5) == "FRINGE-0_5MT" and zone_layer_name(200) == "FRINGE-200MT"
    with pytest.raises(ValueError):
        zone_layer_name(-1)


def test_scenario_room_file_uses_the_dxf_loader(tmp_path):
    from fringe.io.scenario import load_site

    assert ROOM_LOADERS["dxf"].__module__ == "fringe.io.dxf"
    doc = ezdxf.new(units=4)
    doc.modelspace().add_lwpolyline([(0, 0), (4000, 0), (4000, 3000), (0, 3000)], close=True,
                                    dxfattribs={"layer": "ROOMS"})
    doc.modelspace().add_text("Store", dxfattribs={"height": 200}).set_placement((1000, 1000))
    doc.saveas(str(tmp_path / "plan.dxf"))
    scen = tmp_path / "site.toml"
    scen.write_text(
        '[site]\nname = "t"\n[[magnet]]\nname = "m"\ncenter_m = [50, 50, 1]\n'
        '[[magnet.coil]]\nr_inner_m = 0.5\nr_outer_m = 0.6\nz_min_m = -0.5\nz_max_m = 0.5\n'
        'turns = 100\ncurrent_A = 100\n[[floor]]\nname = "ground"\nelevation_m = 0\n'
        '[[room_file]]\npath = "plan.dxf"\nformat = "dxf"\nfloor = "ground"\n')
    site = load_site(scen)
    rooms = site.rooms
    assert [r.name for r in rooms] == ["Store"]
    assert math.isclose(rooms[0].outline.area, 12.0, rel_tol=1e-12)


def test_scenario_room_file_with_layer_map_and_units(tmp_path):
    from fringe.io.scenario import load_site

    make_mm_plan(tmp_path / "clinic.dxf", insunits=0)  # unitless: `units` must be given
    scen = tmp_path / "site.toml"
    scen.write_text(
        '[site]\nname = "t"\n[[magnet]]\nname = "m"\ncenter_m = [50, 50, 1]\n'
        '[[magnet.coil]]\nr_inner_m = 0.5\nr_outer_m = 0.6\nz_min_m = -0.5\nz_max_m = 0.5\n'
        'turns = 100\ncurrent_A = 100\n[[floor]]\nname = "ground"\nelevation_m = 0\n'
        '[[room_file]]\npath = "clinic.dxf"\nformat = "dxf"\nfloor = "ground"\nunits = "mm"\n'
        'offset_m = [10.0, 0.0]\n[room_file.layers]\n"A-MRI" = "controlled"\n'
        '"A-ROOM*" = "open"\n"A-WALL" = "wall"\n')
    rooms = {r.name: r for r in load_site(scen).rooms}
    assert set(rooms) == set(EXPECTED_M)
    assert rooms["Magnet room"].access == "controlled"
    moved = shapely.affinity.translate(EXPECTED_M["Magnet room"], 10.0, 0.0)
    assert shapely.hausdorff_distance(rooms["Magnet room"].outline, moved) < MM
    bad = scen.read_text().replace('"A-WALL" = "wall"', '"A-WALL" = "partition"')
    scen.write_text(bad)
    with pytest.raises(ScenarioError, match=r"clinic\.dxf: `room_file.layers.A-WALL` must be one"):
        load_site(scen)
