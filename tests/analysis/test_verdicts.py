"""Room and equipment verdicts (fringe.analysis.verdicts) on a hand-built site."""

from __future__ import annotations

import json
import tomllib

import numpy as np
import pytest
import shapely

from fringe.analysis.report import compute_report
from fringe.analysis.verdicts import VERDICTS, boundary_outside_controlled_m2, room_limit, verdict
from fringe.field.evaluate import field_at
from fringe.field.extents import threshold_extents_m
from fringe.io.scenario import parse_site
from fringe.model.building import Boundary, Room
from fringe.model.verdict import Verdict

# A compact solenoid at (0, 0, 1.2), axis east: its 0.5 mT line reaches ≈ 2.3 m along the
# axis and ≈ 1.8 m across (point-dipole estimate; checked below with extents).
SITE_TOML = """
[site]
name = "hand-built test site"
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
[plan]
grid_step_m = 0.1
[[floor]]
name = "ground"
elevation_m = 0.0
[[room]]
name = "scan room"
floor = "ground"
access = "controlled"
outline_m = [[-1.5, -1.5], [1.5, -1.5], [1.5, 1.5], [-1.5, 1.5]]
[[room]]
name = "inner office"
floor = "ground"
outline_m = [[0.5, 0.5], [1.2, 0.5], [1.2, 1.2], [0.5, 1.2]]
[[room]]
name = "far office"
floor = "ground"
outline_m = [[6, -1], [8, -1], [8, 1], [6, 1]]
[[room]]
name = "strict store"
floor = "ground"
limit_mT = 0.01
outline_m = [[4, -1], [5, -1], [5, 1], [4, 1]]
[[room]]
name = "lax office"
floor = "ground"
limit_mT = 50.0
outline_m = [[-1.2, 0.5], [-0.5, 0.5], [-0.5, 1.2], [-1.2, 1.2]]
[[room]]
name = "controlled lab with a limit"
floor = "ground"
access = "controlled"
limit_mT = 0.05
outline_m = [[-8, -1], [-6, -1], [-6, 1], [-8, 1]]
[[equipment]]
name = "near console"
position_m = [1.5, 0.0, 1.2]
limit_mT = 1.0
[[equipment]]
name = "far scanner"
position_m = [10.0, 0.0, 1.2]
limit_mT = 0.1
"""


@pytest.fixture(scope="module")
def result():
    site = parse_site(tomllib.loads(SITE_TOML), "hand.toml")
    return compute_report(site)


def _abs_B(site, p):
    return float(np.linalg.norm(field_at(site, np.asarray([p], float))[0]))


def test_verdict_rule():
    # issue 3 rule: reaching the limit (≥) exceeds; controlled rooms without a limit of
    # their own are "controlled"
    assert verdict(5e-4, 5e-4) == "exceeds"
    assert verdict(4.999e-4, 5e-4) == "within"
    assert verdict(1.0, None) == "controlled"
    # each word a check produces is a Verdict and prints as the bare word that users'
    # scripts read in summary.json and rooms.csv
    produced = (verdict(5e-4, 5e-4), verdict(4.6e-4, 5e-4, 0.1), verdict(4.999e-4, 5e-4),
                verdict(1.0, None))
    assert all(isinstance(v, Verdict) for v in produced) and set(produced) == set(VERDICTS)
    assert json.dumps(produced) == '["exceeds", "marginal", "within", "controlled"]'
    assert f"{produced[0]}" == "exceeds"
    b = Boundary(0.5, "src")
    sq = shapely.box(0, 0, 1, 1)
    assert room_limit(Room("a", "g", sq, "open"), b)[0] == pytest.approx(5e-4)
    assert room_limit(Room("a", "g", sq, "controlled"), b)[0] is None
    assert room_limit(Room("a", "g", sq, "controlled", 2.0), b)[0] == pytest.approx(2e-3)
    # issue 3: an open room exceeds when it reaches the boundary "or its own limit_mT":
    # the lower of the two rules, so a lax room limit cannot hide a boundary breach
    assert room_limit(Room("a", "g", sq, "open", 0.1), b)[0] == pytest.approx(1e-4)
    lax, why = room_limit(Room("a", "g", sq, "open", 50.0), b)
    assert lax == pytest.approx(5e-4) and "below the room's own limit_mT = 50" in why


def test_site_is_as_described(result):
    m = result.site.magnets[0]
    ax, rad = threshold_extents_m(m, 5e-4)
    # point-dipole estimate (Jackson Eq. 5.56) with m = N I π r²: within 10 %
    mom = m.dipole_moment_Am2
    assert ax == pytest.approx((1e-7 * 2 * mom / 5e-4) ** (1 / 3), rel=0.1)
    assert rad == pytest.approx((1e-7 * mom / 5e-4) ** (1 / 3), rel=0.1)


def test_room_verdicts_inside_and_outside_the_line(result):
    site = result.site
    v = {c.name: c for c in result.rooms}
    ax, rad = threshold_extents_m(site.magnets[0], 5e-4)
    # rooms "clearly" inside/outside: the independent direct field at their nearest
    # point is at least 2× above / below the limit (common practice, no source: margin)
    near_in = _abs_B(site, (0.5, 0.5, 1.2))
    assert near_in > 2 * 5e-4 and v["inner office"].verdict == "exceeds"
    far = _abs_B(site, (6.0, 0.0, 1.2))
    assert 6.0 > 2 * ax and far < 5e-4 / 2 and v["far office"].verdict == "within"
    assert v["scan room"].verdict == "controlled"
    assert v["strict store"].verdict == "exceeds"  # its own 0.01 mT limit
    # a room limit above the boundary does not lift it: the 0.5 mT line still rules
    assert near_in < 5e-2 and v["lax office"].verdict == "exceeds"
    assert v["lax office"].limit_T == pytest.approx(5e-4)
    assert _abs_B(site, (4.0, 0.0, 1.2)) > 2 * 1e-5
    lab = v["controlled lab with a limit"]
    assert lab.verdict == "within" and lab.limit_T == pytest.approx(5e-5)
    assert _abs_B(site, (-6.0, 0.0, 1.2)) < 5e-5 / 1.5
    # consistency: the room maximum is the direct |B| at its nearest point, which lies
    # on its outline at the magnet's centre height (in the band)
    assert v["far office"].max_field_T == pytest.approx(far, rel=1e-4)  # field_at auto path
    assert v["far office"].max_at_m == pytest.approx((6.0, 0.0), abs=1e-6)


def test_room_areas_and_outside_controlled(result):
    fp = result.floor_footprint("ground", 0.5)
    v = {c.name: c for c in result.rooms}
    scan = dict(v["scan room"].area_above_m2)[0.5]
    ctrl = shapely.box(-1.5, -1.5, 1.5, 1.5)
    assert scan == pytest.approx(fp.geometry.intersection(ctrl).area, rel=1e-9)
    # consistency: footprint = part inside controlled rooms + part outside
    out = result.outside_controlled_m2["ground"]
    assert out == pytest.approx(fp.area_m2 - scan, rel=1e-9)
    assert out > 0  # the line passes the 1.5 m scan-room walls (radial extent ≈ 1.8 m)
    assert boundary_outside_controlled_m2(fp, []) == pytest.approx(fp.area_m2)
    # a room's area above a threshold never exceeds the room, and shrinks with threshold
    rooms = {r.name: r for r in result.plan.rooms}
    for c in result.rooms:
        areas = [a for _t, a in c.area_above_m2]
        assert all(a <= rooms[c.name].outline.area + 1e-9 for a in areas)
        assert all(np.diff(areas) <= 1e-12)


def test_equipment_verdicts(result):
    e = {x.name: x for x in result.equipment}
    site = result.site
    near = _abs_B(site, (1.5, 0.0, 1.2))
    assert e["near console"].field_T == pytest.approx(near, rel=1e-12)
    assert near > 1.5e-3 and e["near console"].verdict == "exceeds"
    assert e["far scanner"].field_T < 0.5e-4 and e["far scanner"].verdict == "within"
    assert e["near console"].floor == "ground"
    assert result.exceeds
