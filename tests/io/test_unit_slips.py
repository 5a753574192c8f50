"""Geometry whose size only makes sense in millimetres or centimetres is refused, naming the
likely unit (room outlines from [[room]], GeoJSON and DXF; floor elevations; magnet centre z).

Thresholds: rooms up to 200 m, sites up to 2000 m, elevations within ±300 m (common
practice, no source)."""

from __future__ import annotations

import json
import tomllib

import pytest

from fringe.io.dxf import read_dxf_plan
from fringe.io.scenario import parse_site as _parse_site
from fringe.io.unit_slips import likely_unit
from fringe.model.errors import ScenarioError
from tests.io.test_dxf import LAYERS, make_mm_plan


def parse_site(text: str):
    return _parse_site(tomllib.loads(text))

MAGNET = """\
[[magnet]]
name = "m1"
center_m = [0.0, 0.0, {z}]
axis = [0, 0, 1]
  [[magnet.coil]]
  r_inner_m = 0.30
  r_outer_m = 0.32
  z_min_m = -0.20
  z_max_m = 0.20
  turns = 1000
  current_A = 100.0
"""


def _site(rooms: str = "", floors: str = "", z: float = 1.0) -> str:
    return '[site]\nname = "unit slips (invented)"\n\n' + MAGNET.format(z=z) + floors + rooms


def test_room_outline_in_millimetres_is_refused_naming_the_unit():
    # the case: a 7.2 m x 5.5 m room typed in millimetres
    rooms = """
[[room]]
name = "magnet room"
outline_m = [[0, 0], [7200, 0], [7200, 5500], [0, 5500]]
"""
    with pytest.raises(ScenarioError) as e:
        parse_site(_site(rooms))
    msg = str(e.value)
    assert "`room[0].outline_m` spans 7200 m" in msg
    assert "it looks like millimetres (7.2 m if so)" in msg and "give metres" in msg


def test_rooms_in_centimetres_are_refused_by_the_site_span():
    # a 22.5 m wing in centimetres: each room under 200 "m", together 2250 "m"
    rooms = "".join(f"""
[[room]]
name = "room {i}"
outline_m = [[{i * 150}, 0], [{i * 150 + 150}, 0], [{i * 150 + 150}, 100], [{i * 150}, 100]]
""" for i in range(15))
    with pytest.raises(ScenarioError, match=r"the room outlines span 2250 m together.*"
                                            r"it looks like centimetres \(22.5 m if so\)"):
        parse_site(_site(rooms))


def test_plausible_rooms_pass():
    rooms = """
[[room]]
name = "hall"
outline_m = [[0, 0], [150, 0], [150, 80], [0, 80]]
"""
    assert parse_site(_site(rooms)).rooms[0].name == "hall"


def test_geojson_room_in_millimetres_is_refused(write_file):
    gj = {"type": "FeatureCollection", "features": [{
        "type": "Feature", "properties": {"name": "MR"},
        "geometry": {"type": "Polygon",
                     "coordinates": [[[0, 0], [7200, 0], [7200, 5500], [0, 5500], [0, 0]]]}}]}
    write_file(json.dumps(gj), "rooms.geojson")
    scen = write_file(_site('\n[[room_file]]\npath = "rooms.geojson"\n'))
    from fringe.io.scenario import load_site

    with pytest.raises(ScenarioError, match=r"features\[0\]\.geometry\.coordinates .*spans "
                                            r"7200 m.*millimetres"):
        load_site(scen)


def test_dxf_scaled_as_metres_but_drawn_in_millimetres_is_refused(tmp_path):
    f = make_mm_plan(tmp_path / "clinic.dxf")  # drawn in mm, header says mm
    with pytest.raises(ScenarioError, match=r"room 'Magnet room'` spans 7200 m.*millimetres.*"
                                            r"scaled as 'm'.*units = \"mm\""):
        read_dxf_plan(f, {"floor": "ground", "layers": LAYERS, "units": "m"})
    assert read_dxf_plan(f, {"floor": "ground", "layers": LAYERS}).rooms  # header right: fine


@pytest.mark.parametrize("elev,unit", [(3600, "millimetres"), (-3000, "millimetres"),
                                        (360, "centimetres")])
def test_floor_elevation_beyond_300_m_is_refused(elev, unit):
    floors = f'\n[[floor]]\nname = "ground"\nelevation_m = 0.0\n\n[[floor]]\nname = "first"\n' \
             f"elevation_m = {elev}\n"
    with pytest.raises(ScenarioError, match=rf"`floor\[1\]\.elevation_m` is {elev} m, beyond "
                                            rf"±300 m.*looks like {unit}"):
        parse_site(_site(floors=floors))


def test_magnet_centre_height_beyond_300_m_is_refused():
    with pytest.raises(ScenarioError, match=r"`magnet\[0\]\.center_m\[2\]` is 1100 m.*"
                                            r"millimetres \(1.1 m if so\)"):
        parse_site(_site(z=1100.0))
    assert parse_site(_site(z=-12.0)).magnets[0].center_m[2] == -12.0


def test_likely_unit_guess():
    assert likely_unit(7200, "room") == ("millimetres", pytest.approx(7.2))
    assert likely_unit(1500, "room") == ("centimetres", pytest.approx(15.0))
    assert likely_unit(360, "elevation") == ("centimetres", pytest.approx(3.6))


def test_a_room_in_centimetres_is_refused_naming_centimetres():
    # common practice, no source: a 9.5 m × 8 m room typed in centimetres (950 × 800)
    rooms = """
[[room]]
name = "scan"
outline_m = [[0, 0], [950, 0], [950, 800], [0, 800]]
"""
    with pytest.raises(ScenarioError, match=r"room\[0\]\.outline_m.*centimetres \(9\.5 m"):
        parse_site(_site(rooms))
