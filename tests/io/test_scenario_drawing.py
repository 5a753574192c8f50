"""`[drawing]` (title-block fields, paper, scale), `[plan] north_deg` and the DXF room
import's `rotation_deg` (fringe.io.scenario_drawing, fringe.io.scenario_plan, fringe.io.dxf)."""

from __future__ import annotations

import math
import tomllib

import ezdxf
import pytest
import shapely

from fringe.io.dxf import read_dxf_plan, read_dxf_polygons
from fringe.io.scenario import TOP_LEVEL_KEYS, parse_site
from fringe.io.scenario_drawing import parse_scale
from fringe.model.errors import ScenarioError
from fringe.model.site import DrawingSettings

MAGNET = """
[[magnet]]
name = "m"
center_m = [0, 0, 1.2]
[[magnet.coil]]
r_inner_m = 0.30
r_outer_m = 0.32
z_min_m = -0.25
z_max_m = 0.25
turns = 100
current_A = 100.0
"""


def site_of(extra: str):
    return parse_site(tomllib.loads(MAGNET + extra), "s.toml")


def test_drawing_table_is_read_whole():
    s = site_of("""
[drawing]
number = "FR-0101"
revision = "B"
status = "for approval"
drawn_by = "A. Planner"
checked_by = "B. Checker"
paper = "A1"
scale = "1:200"
""")
    assert "drawing" in TOP_LEVEL_KEYS
    assert s.drawing == DrawingSettings(number="FR-0101", revision="B", status="for approval",
                                        drawn_by="A. Planner", checked_by="B. Checker",
                                        approved_by="", paper="A1", scale=200)


def test_drawing_defaults_without_the_table():
    s = site_of("")
    assert s.drawing == DrawingSettings()
    assert s.drawing.paper == "A3" and s.drawing.scale is None  # the sheets' paper today
    assert s.plan.north_deg == 0.0


@pytest.mark.parametrize(("text", "n"), [("1:100", 100), (" 1 : 50 ", 50), ("1:1", 1),
                                         ("1/100", None), ("100", None), ("2:1", None),
                                         ("1:0", None), ("1:-5", None), ("1:1.5", None)])
def test_scale_notation(text, n):
    assert parse_scale(text) == n


@pytest.mark.parametrize(("table", "key", "found"), [
    ('paper = "A5"', "drawing.paper", "'A5'"),
    ('paper = "a3"', "drawing.paper", "'a3'"),
    ('scale = "1/100"', "drawing.scale", "'1/100'"),
    ("scale = 100", "drawing.scale", "100"),
    ("number = 12", "drawing.number", "12"),
])
def test_bad_drawing_values_name_file_key_expected_and_found(table, key, found):
    with pytest.raises(ScenarioError) as e:
        site_of(f"[drawing]\n{table}\n")
    msg = str(e.value)
    assert "s.toml" in msg and f"`{key}`" in msg and found in msg and "must be" in msg


def test_misspelt_drawing_key_is_refused_with_a_hint():
    with pytest.raises(ScenarioError, match=r"drawing.drawnby.*did you mean `drawing.drawn_by`"):
        site_of('[drawing]\ndrawnby = "X"\n')


def test_north_deg_is_read_and_checked():
    assert site_of("[plan]\nnorth_deg = -30\n").plan.north_deg == -30.0
    with pytest.raises(ScenarioError, match=r"`plan.north_deg`.*≤ 360.*400"):
        site_of("[plan]\nnorth_deg = 400\n")


# -- DXF rotation ---------------------------------------------------------------------

def _plan(path):
    """A 4 m × 2 m room in millimetres with its corner at the drawing origin."""
    doc = ezdxf.new("R2010", units=4)
    doc.layers.add("ROOM")
    msp = doc.modelspace()
    msp.add_lwpolyline([(0, 0), (4000, 0), (4000, 2000), (0, 2000)], close=True,
                       dxfattribs={"layer": "ROOM"})
    msp.add_lwpolyline([(0, 3000), (4000, 3000)], dxfattribs={"layer": "WALL"})
    doc.saveas(str(path))
    return path


def test_rotation_turns_the_drawing_about_its_origin_before_the_offset(tmp_path):
    p = _plan(tmp_path / "p.dxf")
    opts = {"floor": "ground", "layers": {"ROOM": "open", "WALL": "wall"},
            "rotation_deg": 90.0, "offset_m": [10.0, 5.0]}
    plan = read_dxf_plan(p, opts)
    # turned 90° counter-clockwise: (4, 0) → (0, 4), (4, 2) → (−2, 4); then shifted
    expect = shapely.Polygon([(10, 5), (10, 9), (8, 9), (8, 5)])
    got = plan.rooms[0].outline
    assert got.symmetric_difference(expect).area < 1e-9  # common practice, no source
    assert plan.rotation_deg == 90.0
    wall = plan.walls[0]
    assert shapely.equals_exact(wall, shapely.LineString([(7, 5), (7, 9)]), tolerance=1e-9)


def test_rotation_keeps_areas_and_composes_with_offset(tmp_path):
    p = _plan(tmp_path / "p.dxf")
    a = math.radians(30.0)
    plan = read_dxf_plan(p, {"floor": "g", "rotation_deg": 30, "offset_m": [1.0, 2.0],
                             "layers": {"ROOM": "open"}})
    o = plan.rooms[0].outline
    assert o.area == pytest.approx(8.0, rel=1e-12)  # common practice, no source
    xs = sorted(o.exterior.coords[:-1])
    corner = (1.0 + 4 * math.cos(a), 2.0 + 4 * math.sin(a))  # the drawing's (4 m, 0)
    assert any(math.dist(c, corner) < 1e-9 for c in xs)
    # reading a layer back with the same transform gives the same outline
    back = read_dxf_polygons(p, "ROOM", offset_m=(1.0, 2.0), rotation_deg=30.0)
    assert back.symmetric_difference(o).area < 1e-9


@pytest.mark.parametrize("bad", ["90", True, 720.0, float("nan")])
def test_bad_rotation_is_refused_naming_the_key(tmp_path, bad):
    p = _plan(tmp_path / "p.dxf")
    with pytest.raises(ScenarioError, match=r"`room_file.rotation_deg` must be a number of "
                                            r"degrees"):
        read_dxf_plan(p, {"floor": "g", "rotation_deg": bad})


def test_scenario_passes_rotation_through(tmp_path):
    _plan(tmp_path / "p.dxf")
    scen = MAGNET.replace('center_m = [0, 0, 1.2]', 'center_m = [20, 20, 1.2]') + """
[[floor]]
name = "ground"
elevation_m = 0.0
[[room_file]]
path = "p.dxf"
format = "dxf"
floor = "ground"
rotation_deg = -90
layers = { ROOM = "open" }
"""
    (tmp_path / "s.toml").write_text(scen)
    s = parse_site(tomllib.loads(scen), tmp_path / "s.toml")
    assert s.room_drawings[0].rotation_deg == -90.0
    b = s.rooms[0].outline.bounds  # (4, 0) → (0, −4): the room lies below the x axis
    assert b == pytest.approx((0.0, -4.0, 2.0, 0.0), abs=1e-9)
