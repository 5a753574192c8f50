"""Scenario sections of the building: [plan], [[floor]], [[room]], [[room_file]],
[[equipment]] (fringe.io.scenario_plan, fringe.model.site)."""

from __future__ import annotations

import json
import tomllib

import pytest

from fringe.io.scenario import ROOM_LOADERS, load_site, parse_site
from fringe.model.building import BOUNDARY_CHOICES
from fringe.model.errors import ScenarioError
from fringe.model.site import site_plan

MAGNET = """
[[magnet]]
name = "m"
center_m = [0, 0, 1.2]
axis = [1, 0, 0]
[[magnet.coil]]
r_inner_m = 0.30
r_outer_m = 0.32
z_min_m = -0.25
z_max_m = 0.25
turns = 1000
current_A = 100.0
"""

FLOORS = """
[[floor]]
name = "ground"
elevation_m = 0.0
[[floor]]
name = "first"
elevation_m = 4.0
occupied_band_m = [0.5, 1.8]
"""


def parse(text: str):
    return parse_site(tomllib.loads(MAGNET + text), "t.toml")


def test_full_building_parses():
    site = parse(FLOORS + """
[plan]
thresholds_mT = [1, 3]
grid_step_m = 0.2
occupied_band_m = [0.0, 2.2]
[[room]]
name = "scan room"
floor = "ground"
access = "controlled"
outline_m = [[0, 0], [8, 0], [8, 6], [0, 6]]
[[room]]
name = "office"
floor = "first"
outline_m = [[0, 0], [8, 0], [8, 6], [0, 6]]
holes_m = [[[1, 1], [2, 1], [2, 2], [1, 2]]]
limit_mT = 0.2
[[equipment]]
name = "CT gantry"
position_m = [14.0, 3.0, 1.0]
limit_mT = 0.1
""")
    plan = site_plan(site)
    assert [f.name for f in plan.floors] == ["ground", "first"]
    assert plan.floor("ground").band_z_m == (0.0, 2.2)  # site-wide band
    assert plan.floor("first").band_z_m == (4.5, 5.8)  # per-floor band
    # the default boundary (0.5 mT) is always among the thresholds
    assert site.plan.thresholds_mT == (0.5, 1.0, 3.0)
    # ... and every equipment limit is drawn as a line (the CT gantry's 0.1 mT)
    assert plan.settings.thresholds_mT == (0.1, 0.5, 1.0, 3.0)
    assert plan.settings.boundary.value_mT == BOUNDARY_CHOICES["icnirp-2009"][0]
    office = plan.rooms[1]
    assert office.access == "open" and office.limit_mT == 0.2
    assert office.outline.area == pytest.approx(48 - 1)
    assert plan.equipment[0].limit_mT == 0.1
    assert plan.floor_of_point(1.0).name == "ground" and plan.floor_of_point(5).name == "first"


def test_defaults_without_building():
    plan = site_plan(parse(""))
    assert [f.name for f in plan.floors] == ["ground"] and not plan.floors_declared
    assert plan.settings.grid_step_m == 0.1 and plan.rooms == () and plan.equipment == ()


def test_boundary_choices_and_custom_value():
    p = site_plan(parse('[plan]\nboundary = "iec-60601-2-33-ed4"\n'))
    assert p.settings.boundary.value_mT == 0.9 and "ed. 4" in p.settings.boundary.source
    assert 0.9 in p.settings.thresholds_mT
    p = site_plan(parse('[plan]\nboundary_mT = 0.7\nboundary_source = "local code X"\n'))
    assert p.settings.boundary.value_mT == 0.7 and p.settings.boundary.source == "local code X"
    with pytest.raises(ScenarioError, match="boundary_source` is missing"):
        parse("[plan]\nboundary_mT = 0.7\n")
    with pytest.raises(ScenarioError, match="`plan.boundary` must be absent"):
        parse('[plan]\nboundary = "icnirp-2009"\nboundary_mT = 0.7\nboundary_source = "x"\n')
    with pytest.raises(ScenarioError, match="did you mean 'icnirp-2009'"):
        parse('[plan]\nboundary = "icnirp-2008"\n')


@pytest.mark.parametrize("outline, reason", [
    ("[[0, 0], [4, 4], [4, 0], [0, 4]]", "Self-intersection"),  # bow tie
    ("[[0, 0], [1, 1], [2, 2]]", "valid simple polygon"),  # zero area (collinear)
    ("[[0, 0], [1, 0]]", "at least 3"),
    ('[[0, 0], [1, "a"], [1, 1]]', "at least 3"),
])
def test_invalid_outline_names_the_room(outline, reason):
    with pytest.raises(ScenarioError) as ei:
        parse(FLOORS + f'[[room]]\nname = "bad"\nfloor = "ground"\noutline_m = {outline}\n')
    msg = str(ei.value)
    assert "t.toml" in msg and "`room[0].outline_m`" in msg and reason in msg


def test_room_errors():
    room = '[[room]]\nname = "a"\nfloor = "{floor}"\noutline_m = [[0, 0], [1, 0], [1, 1]]\n'
    with pytest.raises(ScenarioError, match=r"`room\[0\].floor` must be one of the floors"):
        parse(FLOORS + room.format(floor="roof"))
    with pytest.raises(ScenarioError, match=r"`room\[1\].name` must be unique"):
        parse(FLOORS + room.format(floor="ground") + room.format(floor="first"))
    with pytest.raises(ScenarioError, match="access` must be one of 'controlled', 'open'"):
        parse(FLOORS + room.format(floor="ground") + 'access = "restricted"\n')
    with pytest.raises(ScenarioError, match="did you mean"):
        parse(FLOORS + room.format(floor="ground") + "limit_mt = 1\n")
    with pytest.raises(ScenarioError, match=r"`floor\[2\].name` must be unique"):
        parse(FLOORS + '[[floor]]\nname = "ground"\nelevation_m = 8\n')
    with pytest.raises(ScenarioError, match="occupied_band_m"):
        parse('[[floor]]\nname = "g"\nelevation_m = 0\noccupied_band_m = [2, 1]\n')
    with pytest.raises(ScenarioError, match=r"`equipment\[1\].name` must be unique"):
        parse('[[equipment]]\nname = "e"\nposition_m = [0, 0, 0]\nlimit_mT = 1\n' * 2)
    with pytest.raises(ScenarioError, match="thresholds_mT"):
        parse("[plan]\nthresholds_mT = [0.5, -1]\n")


def _geojson(features) -> str:
    return json.dumps({"type": "FeatureCollection", "features": features})


def _feature(name, coords, **props):
    return {"type": "Feature", "properties": {"name": name, **props},
            "geometry": {"type": "Polygon", "coordinates": coords}}


def test_geojson_rooms_loaded_through_registry(tmp_path):
    assert "geojson" in ROOM_LOADERS
    sq = [[[0, 0], [4, 0], [4, 3], [0, 3], [0, 0]]]
    (tmp_path / "rooms.geojson").write_text(_geojson([
        _feature("lab", sq, access="controlled"),
        _feature("store", [[[5, 0], [7, 0], [7, 3], [5, 3], [5, 0]]], floor="first",
                 limit_mT=0.3)]))
    (tmp_path / "s.toml").write_text(MAGNET + FLOORS + """
[[room]]
name = "hall"
floor = "ground"
outline_m = [[0, 5], [9, 5], [9, 7], [0, 7]]
[[room_file]]
path = "rooms.geojson"
format = "geojson"
floor = "ground"
""")
    plan = site_plan(load_site(tmp_path / "s.toml"))
    by = {r.name: r for r in plan.rooms}
    assert set(by) == {"hall", "lab", "store"}
    assert by["lab"].floor == "ground" and by["lab"].access == "controlled"
    assert by["lab"].outline.area == pytest.approx(12.0)
    assert by["store"].floor == "first" and by["store"].limit_mT == 0.3


def test_geojson_errors_name_file_and_feature(tmp_path):
    bow = [[[0, 0], [4, 4], [4, 0], [0, 4], [0, 0]]]
    (tmp_path / "r.geojson").write_text(_geojson([_feature("x", bow, floor="ground")]))
    (tmp_path / "s.toml").write_text(MAGNET + FLOORS + '[[room_file]]\npath = "r.geojson"\n')
    with pytest.raises(ScenarioError) as ei:
        load_site(tmp_path / "s.toml")
    msg = str(ei.value)
    assert "r.geojson" in msg and "features[0].geometry.coordinates" in msg and "'x'" in msg
    (tmp_path / "r.geojson").write_text(_geojson([_feature("x", [[[0, 0], [1, 0], [1, 1]]])]))
    with pytest.raises(ScenarioError, match="properties.floor"):
        load_site(tmp_path / "s.toml")
    (tmp_path / "r.geojson").write_text("{not json")
    with pytest.raises(ScenarioError, match="not valid UTF-8 JSON"):
        load_site(tmp_path / "s.toml")
    (tmp_path / "s.toml").write_text(MAGNET + FLOORS + '[[room_file]]\npath = "none.geojson"\n')
    with pytest.raises(ScenarioError, match="cannot read the room file"):
        load_site(tmp_path / "s.toml")


def test_demo_site_building_parses(demo_site):
    plan = site_plan(demo_site)
    assert {"magnet room", "control room", "corridor", "waiting area", "CT room",
            "office"} <= {r.name for r in plan.rooms}
    assert any(r.access == "controlled" for r in plan.rooms)
    assert len(plan.floors) >= 2 and plan.equipment
    assert all("common practice" in e.note for e in plan.equipment)


def test_geojson_property_typos_are_warned_not_swallowed(tmp_path):
    # a misspelt `access` would silently leave a room open: warn with the key meant;
    # properties of other tools (far from ours) stay quiet
    from fringe.model.errors import FringeWarning

    sq = [[[0, 0], [4, 0], [4, 3], [0, 3], [0, 0]]]
    (tmp_path / "r.geojson").write_text(_geojson([
        _feature("lab", sq, acess="controlled", limit_mt=0.2, cad_handle="3F2")]))
    (tmp_path / "s.toml").write_text(MAGNET + FLOORS + '[[room_file]]\npath = "r.geojson"\n'
                                     'floor = "ground"\n')
    with pytest.warns(FringeWarning) as rec:
        load_site(tmp_path / "s.toml")
    text = " ".join(str(w.message) for w in rec)
    assert "`features[0].properties.acess` (room 'lab') is not read; did you mean `access`?" \
        in text
    assert "did you mean `limit_mT`?" in text and "cad_handle" not in text
