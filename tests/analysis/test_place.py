"""Placement search (fringe.analysis.placement, fringe.cli.place, fringe.render.placement)."""

from __future__ import annotations

import json
import math
import tomllib

import numpy as np
import pytest
import shapely

from fringe.analysis.placement import (
    OUTSIDE_ROOMS,
    Zone,
    allowed_region,
    axis_at_angle,
    magnet_outline_relative,
    score_footprints,
    search_placement,
)
from fringe.cli.main import main
from fringe.cli.place import best_magnet_toml
from fringe.field.extents import threshold_extents_m
from fringe.io.scenario import parse_site
from fringe.model.magnet import Coil, Magnet

COIL = Coil(0.30, 0.32, -0.25, 0.25, 1000, 100.0)
MAGNET = """
[[magnet]]
name = "m"
center_m = [0.0, 0.0, 1.0]
axis = [1, 0, 0]
[[magnet.coil]]
r_inner_m = 0.30
r_outer_m = 0.32
z_min_m = -0.25
z_max_m = 0.25
turns = 1000
current_A = 100.0

[plan]
thresholds_mT = [0.5, 1]
grid_step_m = 0.1
band_step_m = 0.5
"""


def _room(name, x0, y0, x1, y1, access="open"):
    return (f'[[room]]\nname = "{name}"\naccess = "{access}"\n'
            f"outline_m = [[{x0}, {y0}], [{x1}, {y0}], [{x1}, {y1}], [{x0}, {y1}]]\n")


def _extents(threshold_mT=0.5):
    return threshold_extents_m(Magnet("m", (0, 0, 1.0), (1, 0, 0), (COIL,)),
                               threshold_mT * 1e-3)


def _symmetric_site_text():
    """A controlled room between identical open rooms on all four sides; the room's
    half-sizes make the along-axis and across-axis clearances of the 0.5 mT line equal,
    so the best centre is the room centre and the best bore direction is along x."""
    ax, rad = _extents()
    ly = 3.0
    lx = round(ax + (ly - rad), 3)
    rooms = (_room("scan", -lx, -ly, lx, ly, "controlled") + _room("west", -lx - 4, -ly, -lx, ly)
             + _room("east", lx, -ly, lx + 4, ly)
             + _room("north", -lx - 4, ly, lx + 4, ly + 4)
             + _room("south", -lx - 4, -ly - 4, lx + 4, -ly))
    return MAGNET.replace("[0.0, 0.0, 1.0]", "[0.7, -0.4, 1.0]") + rooms, lx, ly


def _strip_site_text(half_width_m=1.2):
    """A controlled strip narrower than the 0.5 mT line, open rooms either side."""
    w = half_width_m
    return (MAGNET + _room("strip", -5, -w, 5, w, "controlled") + _room("north", -5, w, 5, 5)
            + _room("south", -5, -5, 5, -w))


# -- geometry pieces ---------------------------------------------------------------------

def test_axis_at_angle_keeps_tilt():
    # common practice, no source: turning about the vertical keeps the z component
    a = axis_at_angle((1.0, 0.0, 1.0), 90.0)
    assert a == pytest.approx((0.0, math.sqrt(0.5), math.sqrt(0.5)), abs=1e-12)
    assert axis_at_angle((0, 0, 1), 45.0) == (0.0, 0.0, 1.0)


@pytest.mark.parametrize("angle", [0.0, 90.0, 30.0])
def test_allowed_region_is_the_minkowski_erosion(angle):
    room = shapely.Polygon([(0, 0), (10, 0), (10, 8), (4, 8), (4, 5), (0, 5)])  # L-shape
    m = Magnet("m", (0, 0, 1.0), axis_at_angle((1, 0, 0), angle), (COIL,))
    P = magnet_outline_relative(m)
    A = allowed_region(room, P)
    # brute force (common practice, no source): centres whose moved outline lies in the room
    g = np.linspace(-0.5, 10.5, 56)
    X, Y = np.meshgrid(g, g)
    pts = np.column_stack([X.ravel(), Y.ravel()])
    inside = np.array([room.contains(shapely.affinity.translate(P, *p)) for p in pts])
    got = shapely.contains_xy(A, pts[:, 0], pts[:, 1])
    on_edge = shapely.distance(A.boundary, shapely.points(pts)) < 1e-6
    assert np.array_equal(got[~on_edge], inside[~on_edge])
    if angle == 0.0:  # the rectangle part by hand: half sizes 0.25 (along) and 0.32
        assert A.bounds == pytest.approx((0.25, 0.32, 9.75, 7.68), abs=1e-9)


def test_score_of_a_disk_across_a_wall():
    """A disk footprint of radius 2 m centred 1.5 m from the wall of the controlled room:
    spill = circular segment area r² acos(d/r) − d √(r² − d²) (CRC Standard Mathematical
    Tables, circle segment), depth = r − d, clearance of a room beyond = its distance."""
    r, d = 2.0, 1.5
    disk = shapely.Point(0, 0).buffer(r, quad_segs=256)
    zones = (Zone("open", "g", shapely.box(d, -5, 5, 5), 0.5),
             Zone("far", "g", shapely.box(-9, -5, -4, 5), 0.5))
    ctrl = {"g": shapely.box(-4, -5, d, 5)}

    def fp_at(floor, t):
        arr = np.empty(1, dtype=object)
        arr[0] = disk
        return arr

    sc = score_footprints(fp_at, zones, ctrl, [0.5], 1, 0.05)
    seg = r * r * math.acos(d / r) - d * math.sqrt(r * r - d * d)
    assert sc.spill[0] == pytest.approx(seg, rel=1e-3)  # polygonised circle
    assert sc.depth[0][0] == pytest.approx(r - d, abs=1e-3)
    assert sc.clearance[1][0] == pytest.approx(4.0 - r, abs=1e-3)
    assert sc.margin[0] == pytest.approx(-(r - d), abs=1e-3)


# -- searches --------------------------------------------------------------------------------

def test_symmetric_site_best_at_the_centre():
    text, lx, ly = _symmetric_site_text()
    site = parse_site(tomllib.loads(text), "sym.toml")
    res = search_placement(site, "m", "scan", (0, 90), coarse_points=60)
    best = res.best
    # by symmetry (common practice, no source): centre of the controlled room
    assert abs(best.center_m[0]) < 0.05 and abs(best.center_m[1]) < 0.05
    assert best.center_m[2] == pytest.approx(1.0)
    assert abs(best.axis[0]) == pytest.approx(1.0) and best.spill_area_m2 == 0.0
    ax, rad = _extents()
    # hand calculation from the extents (fringe.field.extents): equal clearances on all sides;
    # 0.03 m: contour interpolation on the 0.1 m grid plus the search tolerance
    assert best.margin_m == pytest.approx(ly - rad, abs=0.03)
    # the scenario placement (0.7, -0.4) is never ranked above the best; its clearance
    # along x shrinks by 0.7 m (hand calculation, as above)
    assert best.key <= res.current.key
    assert res.current.margin_m == pytest.approx(ly - rad - 0.7, abs=0.03)


def test_relative_footprint_extents_match_threshold_extents():
    text, _, _ = _symmetric_site_text()
    site = parse_site(tomllib.loads(text), "sym.toml")
    res = search_placement(site, "m", "scan", (0,), coarse_points=20)
    fp = res.relative[0.0].polygons[("ground", 0.5)]
    ax, rad = _extents()
    x0, y0, x1, y1 = fp.bounds
    # independent computation (Brent root on the axis / centre plane, fringe.field.extents)
    assert (x1 - x0) / 2 == pytest.approx(ax, abs=0.02)
    assert (y1 - y0) / 2 == pytest.approx(rad, abs=0.02)


def test_no_fit_shortfall_matches_hand_calculation():
    w = 1.2
    site = parse_site(tomllib.loads(_strip_site_text(w)), "strip.toml")
    res = search_placement(site, "m", "strip", (0,), coarse_points=40)
    assert not res.fits
    best = res.best
    ax, rad = _extents()
    # hand calculation: the 0.5 mT line reaches rad across the axis, the wall is w away
    assert abs(best.center_m[1]) < 0.05
    assert best.margin_m == pytest.approx(-(rad - w), abs=0.03)
    hit = {b["room"]: b for b in best.spill_by_room if b["area_m2"] > 0}
    assert set(hit) == {"north", "south"}
    for b in hit.values():
        assert b["depth_m"] == pytest.approx(rad - w, abs=0.03)
        assert b["through_floor"] is False
    from fringe.cli.place import shortfall

    sf = shortfall(res)
    assert sf["extra_distance_m"] == pytest.approx(rad - w, abs=0.03)


def test_region_errors_and_polygon_region(tmp_path, run_cli):
    site = parse_site(tomllib.loads(_strip_site_text()), "strip.toml")
    from fringe.model.errors import ArgumentError

    # the library names its parameter; the command line names its option
    with pytest.raises(ArgumentError, match="`region` must be a room of the scenario"):
        search_placement(site, "m", "nowhere", (0,))
    with pytest.raises(ArgumentError, match="`region` must be large enough"):
        search_placement(site, "m", "0,0;0.3,0;0.3,0.3;0,0.3", (0,))
    with pytest.raises(ArgumentError, match="`boundary_mT` must be a positive number"):
        search_placement(site, "m", "nowhere", (0,), boundary_mT=-1.0)
    scen = tmp_path / "strip.toml"
    scen.write_text(_strip_site_text(), encoding="utf-8")
    code, _, err = run_cli("place", scen, "--magnet", "m", "--region", "nowhere", "--quiet")
    assert code == 2 and "`--region` must be a room of the scenario" in err, err
    code, _, err = run_cli("place", scen, "--magnet", "m", "--region", "nowhere",
                           "--threshold-mT", "-1", "--quiet")
    assert code == 2 and "`--threshold-mT` must be a positive number" in err, err
    res = search_placement(site, "m", "-1,-1;1,-1;1,1;-1,1", (0,), coarse_points=20)
    assert res.region_label == "the given polygon"
    for p in res.candidates:  # centres inside the polygon shrunk by the outline
        assert abs(p.center_m[0]) <= 0.75 + 1e-9 and abs(p.center_m[1]) <= 0.68 + 1e-9


def test_outside_every_room_is_a_zone():
    site = parse_site(tomllib.loads(MAGNET + _room("scan", -2, -1.5, 2, 1.5, "controlled")),
                      "alone.toml")
    res = search_placement(site, "m", "scan", (0,), coarse_points=20)
    names = {b["room"] for b in res.best.spill_by_room if b["area_m2"] > 0}
    assert names == {OUTSIDE_ROOMS}


def test_magnet_block_round_trips():
    site = parse_site(tomllib.loads(_strip_site_text()), "strip.toml")
    res = search_placement(site, "m", "strip", (30,), coarse_points=10)
    block = best_magnet_toml(res)
    assert block.startswith("[[magnet]]\n")
    assert "  turns = 1000\n" in block  # a whole number of turns prints as an integer
    again = parse_site(tomllib.loads(block), "block.toml").magnets[0]
    assert again.coils == res.magnet.coils
    assert again.center_m == pytest.approx(res.best.center_m, abs=1e-4)
    assert again.axis == pytest.approx(res.best.axis, abs=1e-6)


# -- CLI --------------------------------------------------------------------------------------

def test_cli_json_schema(tmp_path, capsys):
    f = tmp_path / "strip.toml"
    f.write_text(_strip_site_text(1.5), "utf-8")
    code = main(["place", str(f), "--magnet", "m", "--region", "strip", "--angles", "0,90",
                 "--json"])
    assert code == 0
    doc = json.loads(capsys.readouterr().out)
    assert set(doc["best"]) == {"center_m", "axis", "spill_area_m2", "margin_m"}
    assert len(doc["best"]["center_m"]) == 3 and len(doc["best"]["axis"]) == 3
    assert doc["candidates"] and doc["candidates"][0]["rank"] == 1
    for k, c in enumerate(doc["candidates"], 1):
        assert set(c) == {"center_m", "axis", "spill_area_m2", "margin_m", "rank",
                          "spill_by_room"}
        assert c["rank"] == k
        for b in c["spill_by_room"]:
            assert {"room", "floor", "area_m2", "depth_m", "clearance_m"} <= set(b)
    assert doc["best"] == {k: doc["candidates"][0][k] for k in doc["best"]}
    assert "ADVISORY" in doc["advisory"]
    assert doc["magnet_block"].startswith("[[magnet]]")


def test_cli_text_and_outputs(tmp_path, capsys):
    f = tmp_path / "strip.toml"
    f.write_text(_strip_site_text(), "utf-8")
    out = tmp_path / "out"
    code = main(["place", str(f), "--magnet", "m", "--region", "strip", "--angles", "0",
                 "--out", str(out), "--quiet"])
    assert code == 0
    text = capsys.readouterr().out
    assert "does not fit" in text and "smallest extra distance needed" in text
    assert "[[magnet]]" in text and "ADVISORY" in text
    assert sorted(p.name for p in out.iterdir()) == ["best-magnet.toml", "place-plan.png",
                                                     "place-plan.svg", "place.json"]
    svg = (out / "place-plan.svg").read_text("utf-8")
    assert "ADVISORY" in svg
    assert ">1 of 1<" in svg and "- of -" not in svg  # a set of one sheet is numbered too


@pytest.mark.parametrize("argv, words", [
    (["--region", "strip", "--angles", "a,b"], "`--angles` must be"),
    (["--region", "1,2;3"], "`--region` must be"),
    (["--region", "strip", "--threshold-mT", "-1"], "`--threshold-mT` must be"),
])
def test_cli_bad_input_exit_2(tmp_path, capsys, argv, words):
    f = tmp_path / "strip.toml"
    f.write_text(_strip_site_text(), "utf-8")
    assert main(["place", str(f), "--magnet", "m", *argv]) == 2
    assert words in capsys.readouterr().err


# -- demo --------------------------------------------------------------------------------------

def test_demo_placement_at_least_as_good_as_the_demo(demo_site):
    res = search_placement(demo_site, "hall-A 1.5 T", "magnet room", (0, 90),
                           coarse_points=80)
    cur = res.current
    assert cur is not None
    # ranking: spill first, then margin (docs/placement.md)
    assert res.best.key <= cur.key
    assert res.best.spill_area_m2 <= cur.spill_area_m2 + 0.005
    if res.best.key[0] == cur.key[0]:  # margin decides only between equal spills
        assert res.best.margin_m >= cur.margin_m - 1e-9
    # not only because the scenario placement is always ranked: the search itself
    # finds one at least as good
    assert any(p.source != "scenario" and p.key <= cur.key for p in res.candidates)
    from fringe.render.placement import why

    assert any("margin" in s for s in why(res))


def test_two_magnets_reported_with_the_combined_field():
    other = MAGNET.split("[plan]")[0].replace('name = "m"', 'name = "other"').replace(
        "[0.0, 0.0, 1.0]", "[4.0, 0.0, 1.0]").replace("current_A = 100.0",
                                                       "current_A = -100.0")
    text = (MAGNET + other + _room("scan", -3, -2.5, 2, 2.5, "controlled")
            + _room("scan2", 2, -2.5, 7, 2.5, "controlled") + _room("north", -3, 2.5, 7, 6)
            + _room("south", -3, -6, 7, -2.5) + _room("west", -7, -2.5, -3, 2.5))
    site = parse_site(tomllib.loads(text), "two.toml")
    res = search_placement(site, "m", "scan", (0,), coarse_points=20)
    assert all(p.exact for p in res.candidates)
    # independent check (common practice, no source): |B| of both magnets superposed
    # (fringe.field.evaluate.field_at) on a plan grid through fringe.analysis.zones, clearance to
    # the north and south rooms measured directly with shapely
    from fringe.analysis.placement import moved_site
    from fringe.analysis.zones import floor_map, footprints, plan_axes_m
    from fringe.model.site import site_plan

    best = res.best
    s2 = moved_site(site, res.magnet, best)
    cx, cy = best.center_m[:2]
    x, y = plan_axes_m(((cx - 3.0, cy - 3.0), (cx + 3.0, cy + 3.0)), 0.1)
    fl = site_plan(site).floors[0]
    fp = footprints(floor_map(s2, fl, x, y, 0.5, [5e-4]), [0.5])[0].geometry
    rooms = {r.name: r.outline for r in site_plan(site).rooms}
    clear = min(fp.distance(rooms[n]) for n in ("north", "south", "west"))
    assert best.margin_m == pytest.approx(clear, abs=0.02)


@pytest.mark.parametrize("axis, which", [((1, 0, 0), 1), ((0, 0, 1), 0)])
def test_vertical_shortfall_matches_the_extents(axis, which):
    """A floor whose occupied band ends 1.5 m below the centre: the 0.5 mT line of a
    short solenoid reaches furthest straight down, so the shortfall is the extent (radial
    for a horizontal axis, axial for a vertical one) minus 1.5 m (hand calculation from
    fringe.field.extents)."""
    from fringe.analysis.placement import vertical_shortfall_m
    from fringe.model.building import Floor

    m = Magnet("m", (0, 0, 1.0), axis, (COIL,))
    ext = _extents()[which]
    below = Floor("below", -2.5, 0.0, 2.0)  # band top at -0.5 m: 1.5 m below the centre
    assert vertical_shortfall_m(m, below, 0.5, 0.1) == pytest.approx(ext - 1.5, abs=2e-3)
    far = Floor("far", -4.0, 0.0, 2.0)
    assert vertical_shortfall_m(m, far, 0.5, 0.1) == 0.0


def test_open_region_room_is_treated_as_controlled():
    site = parse_site(tomllib.loads(_strip_site_text()), "strip.toml")
    res = search_placement(site, "m", "north", (0,), coarse_points=20)
    assert any("treated as controlled" in n for n in res.notes)
    assert "north" not in {b["room"] for b in res.best.spill_by_room}
    assert res.current is not None and res.current.spill_area_m2 > 0


def test_library_errors_name_arguments_and_the_cli_names_options():
    # below the CLI an error names the Python argument; `fringe place` names its option
    from fringe.cli.place import FLAGS, check_angles
    from fringe.model.errors import ArgumentError, ScenarioError

    with pytest.raises(ScenarioError, match="^`--angles` must be comma-separated"):
        check_angles("a,b")
    e = ArgumentError("`angles_deg` must be comma-separated angles; got 'a'", "angles_deg",
                      "x.toml")
    assert e.renamed(FLAGS) == "x.toml: `--angles` must be comma-separated angles; got 'a'"
    other = ArgumentError("`other` must be 1; got 2", "other")
    assert other.renamed(FLAGS) == "`other` must be 1; got 2"  # other arguments unchanged
