"""`fringe report`: summary.json, zones.geojson, CSV, drawings, exit codes (fringe.analysis.report,
fringe.cli.report)."""

from __future__ import annotations

import json
import math
import tomllib

import pytest
import shapely
from shapely.geometry import shape

from fringe.analysis.report import compute_report
from fringe.cli.main import main
from fringe.io.report_files import summary_dict, zones_geojson
from fringe.io.scenario import parse_site
from fringe.model.constants import ADVISORY_NOTICE
from fringe.model.errors import FringeWarning

BASE = """
[site]
name = "small test site (invented)"
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
grid_step_m = 0.25
thresholds_mT = [0.5, 1, 3]
[[floor]]
name = "ground"
elevation_m = 0.0
[[floor]]
name = "first"
elevation_m = 4.5
[[room]]
name = "scan room"
floor = "ground"
access = "controlled"
outline_m = [[-2, -2], [2, -2], [2, 2], [-2, 2]]
holes_m = [[[-1.95, 1.6], [-1.6, 1.6], [-1.6, 1.95], [-1.95, 1.95]]]
[[room]]
name = "west bay"
floor = "ground"
access = "controlled"
outline_m = [[-3, -1], [-2, -1], [-2, 1], [-3, 1]]
[[room]]
name = "office above"
floor = "first"
outline_m = [[-3, -3], [3, -3], [3, 3], [-3, 3]]
[[equipment]]
name = "far scanner"
position_m = [8.0, 0.0, 1.2]
limit_mT = 0.1
"""

# The 0.5 mT line leaves the scan room along the axis (it reaches ~2.3 m, the walls are
# at ±2 m): westwards into the controlled west bay, eastwards into this bay — or, in
# BASE alone, into space no room covers.
EAST_BAY = """
[[room]]
name = "east bay"
floor = "ground"
access = "controlled"
outline_m = [[2, -1], [3, -1], [3, 1], [2, 1]]
"""

EXCEEDING_ROOM = """
[[room]]
name = "store"
floor = "ground"
outline_m = [[2, -1], [3, -1], [3, 1], [2, 1]]
"""


@pytest.fixture(scope="module")
def result():
    return compute_report(parse_site(tomllib.loads(BASE + EAST_BAY), "small.toml"))


def test_summary_has_required_fields(result):
    d = summary_dict(result)
    json.dumps(d, allow_nan=False)  # strict JSON
    assert d["advisory"] == ADVISORY_NOTICE
    assert d["boundary"]["value_mT"] == 0.5 and "ICNIRP 2009" in d["boundary"]["source"]
    assert d["tool"]["version"] and d["created_utc"].endswith("Z")
    m = d["magnets"][0]
    assert m["name"] == "m" and m["center_field_T"] > 0
    # the equipment's 0.1 mT limit is drawn as a line too
    assert [b["threshold_mT"] for b in m["boundaries"]] == [0.1, 0.5, 1.0, 3.0]
    b05 = m["boundaries"][0]
    assert b05["axial_extent_m"] > b05["radial_extent_m"] > 0
    fl = {f["name"]: f for f in d["floors"]}
    assert set(fl) == {"ground", "first"}
    areas = [fp["area_m2"] for fp in fl["ground"]["footprints"]]
    assert areas[0] > areas[1] > areas[2] > 0  # nested lines
    assert 0 <= fl["ground"]["band_sampling_error_rel"] <= 1e-3
    r = {x["name"]: x for x in d["rooms"]}
    assert r["scan room"]["verdict"] == "controlled"
    assert {"name", "floor", "access", "max_field_T", "verdict"} <= set(r["office above"])
    e = d["equipment"][0]
    assert {"name", "field_T", "limit_T", "verdict"} <= set(e) and e["limit_T"] == 1e-4
    assert d["exceeds"] is False


def test_geojson_round_trips_through_shapely(result):
    # RFC 7946: FeatureCollection of Features; Polygon rings closed, exterior
    # counter-clockwise, holes clockwise (Sec. 3.1.6); foreign member marks the frame.
    gj = json.loads(json.dumps(zones_geojson(result)))
    assert gj["type"] == "FeatureCollection"
    assert gj["coordinate_frame"]["units"] == "m"
    kinds = {f["properties"]["kind"] for f in gj["features"]}
    assert kinds <= {"footprint", "attraction", "room", "equipment"}
    assert {"footprint", "room", "equipment"} <= kinds
    n_poly = 0
    for f in gj["features"]:
        assert f["type"] == "Feature"
        if f["geometry"] is None:
            assert f["properties"]["kind"] in ("footprint", "attraction")
            assert f["properties"]["area_m2"] == 0
            continue
        g = shape(f["geometry"])
        assert g.is_valid
        if f["properties"]["kind"] == "footprint":
            fp = result.floor_footprint(f["properties"]["floor"], f["properties"]["threshold_mT"])
            # mm precision written (RFC 7946 Sec. 11.2): area agrees to < 0.1 %
            assert g.area == pytest.approx(fp.area_m2, rel=1e-3)
            assert g.symmetric_difference(fp.geometry).area < 1e-3 * fp.area_m2 + 1e-6
        for poly in getattr(g, "geoms", [g]):
            if poly.geom_type != "Polygon":
                continue
            n_poly += 1
            assert poly.exterior.is_ccw
            assert all(not ring.is_ccw for ring in poly.interiors)
            assert tuple(poly.exterior.coords[0]) == tuple(poly.exterior.coords[-1])
    assert n_poly >= 4
    room = next(f for f in gj["features"] if f["properties"].get("name") == "scan room")
    assert len(shape(room["geometry"]).interiors) == 1  # the hole survives


def _write(tmp_path, text, name="s.toml"):
    p = tmp_path / name
    p.write_text(text)
    return str(p)


def test_cli_exit_codes(tmp_path, capsys):
    ok = _write(tmp_path, BASE + EAST_BAY)
    bad = _write(tmp_path, BASE + EXCEEDING_ROOM, "bad.toml")
    out = tmp_path / "out"
    assert main(["report", ok, "--out", str(out), "--no-drawings", "--quiet"]) == 0
    text = capsys.readouterr().out
    assert "verdict: nothing exceeds its limit (" in text and ADVISORY_NOTICE in text
    assert "reaches beyond the controlled rooms" not in text
    assert {"summary.json", "zones.geojson", "rooms.csv", "equipment.csv"} <= {
        p.name for p in out.iterdir()}
    assert main(["report", bad, "--out", str(out), "--no-drawings", "--quiet"]) == 3
    assert "store" in capsys.readouterr().out
    s = json.loads((out / "summary.json").read_text())
    assert s["exceeds"] is True
    assert next(r for r in s["rooms"] if r["name"] == "store")["verdict"] == "exceeds"
    assert main(["report", bad, "--out", str(out), "--no-drawings", "--quiet",
                 "--no-fail"]) == 0


def test_boundary_spilling_into_unmapped_space_fails_the_floor(tmp_path, capsys):
    # no room is over-limit, but the 0.5 mT line leaves the controlled rooms into space
    # no room covers: the controlled access area is not closed, so the floor exceeds
    spill = _write(tmp_path, BASE)
    out = tmp_path / "out"
    assert main(["report", spill, "--out", str(out), "--no-drawings", "--quiet"]) == 3
    text = capsys.readouterr().out
    assert "reaches beyond the controlled rooms on floor ground" in text
    assert ("verdict: 1 item exceeds: 1 floor (ground: 0.5 mT line outside the controlled "
            "rooms)") in text
    s = json.loads((out / "summary.json").read_text())
    fl = {f["name"]: f for f in s["floors"]}
    assert fl["ground"]["verdict"] == "exceeds" and fl["first"]["verdict"] == "within"
    assert fl["ground"]["boundary_outside_controlled_m2"] > 0.1
    assert s["exceeds"] is True


def test_cli_refuses_to_replace_a_foreign_folder(tmp_path, capsys, monkeypatch):
    scen = _write(tmp_path, BASE)
    other = tmp_path / "photos"
    other.mkdir()
    (other / "a.jpg").write_text("x")
    assert main(["report", scen, "--out", str(other), "--no-drawings", "--quiet"]) == 2
    assert "holds other files" in capsys.readouterr().err
    assert (other / "a.jpg").read_text() == "x"
    assert main(["report", scen, "--out", str(tmp_path), "--no-drawings", "--quiet"]) == 2
    assert "scenario file" in capsys.readouterr().err
    monkeypatch.chdir(other)
    assert main(["report", scen, "--out", ".", "--no-drawings", "--quiet"]) == 2
    assert (other / "a.jpg").exists()


def test_cli_bad_input_leaves_output_untouched(tmp_path, capsys):
    out = tmp_path / "out"
    out.mkdir()
    (out / "summary.json").write_text("old")
    broken = _write(tmp_path, BASE.replace("outline_m = [[-2, -2], [2, -2], [2, 2], [-2, 2]]\n"
                                           "holes_m", "outline_m = [[0, 0], [1, 1], [1, 0], "
                                           "[0, 1]]\nholes_m", 1))
    assert main(["report", broken, "--out", str(out), "--quiet"]) == 2
    err = capsys.readouterr().err
    assert "room[0].outline_m" in err and "Self-intersection" in err
    assert [p.name for p in out.iterdir()] == ["summary.json"]
    assert (out / "summary.json").read_text() == "old"
    assert main(["report", str(tmp_path / "missing.toml"), "--out", str(out)]) == 2


def test_cli_full_report_with_drawings(tmp_path, capsys):
    from PIL import Image

    scen = _write(tmp_path, BASE + EAST_BAY)
    out = tmp_path / "rep"
    assert main(["report", scen, "--out", str(out), "--grid-step-m", "0.5"]) == 0
    err = capsys.readouterr().err
    assert "floor 'ground': level" in err  # progress on stderr
    names = {p.name for p in out.iterdir()}
    for n in ("plan-ground.png", "plan-ground.svg", "plan-first.png", "section-m.png",
              "section-m-across.svg", "report.pdf", "summary.json", "zones.geojson"):
        assert n in names
    assert not any(n.startswith(".") for n in names)
    svg = (out / "plan-ground.svg").read_text()
    assert "ADVISORY ESTIMATE ONLY" in svg and "0.5 mT" in svg and "ICNIRP 2009" in svg
    sec = (out / "section-m.svg").read_text()
    # issue 8: ICNIRP 2009 exposure lines with their source on the section sheets
    assert "exposure line 400 mT" in sec and "Health Phys. 96(4):504-514" in sec
    assert "zones-ground.dxf" in names
    with Image.open(out / "plan-ground.png") as im:
        assert im.size[0] > 2000 and "ADVISORY" in im.info.get("Description", "")
    assert (out / "report.pdf").read_bytes()[:5] == b"%PDF-"
    s = json.loads((out / "summary.json").read_text())
    assert s["grid"]["step_m"] == 0.5


def test_boundary_choice_changes_the_line(tmp_path):
    site05 = parse_site(tomllib.loads(BASE), "a.toml")
    site09 = parse_site(tomllib.loads(BASE.replace(
        "[plan]\n", '[plan]\nboundary = "iec-60601-2-33-ed4"\n')), "b.toml")
    # a coarse grid on purpose: the report says so (the warning is part of the contract)
    with pytest.warns(FringeWarning, match="too coarse for the 0.5 mT line"):
        r05 = compute_report(site05, grid_step_m=0.5)
    with pytest.warns(FringeWarning, match="too coarse for the 0.9 mT line"):
        r09 = compute_report(site09, grid_step_m=0.5)
    assert r09.boundary.value_mT == 0.9 and 0.9 in r09.thresholds_mT
    a05 = r05.floor_footprint("ground", 0.5).area_m2
    a09 = r09.floor_footprint("ground", 0.9).area_m2
    assert a09 < a05
    assert math.isclose(summary_dict(r09)["boundary"]["value_mT"], 0.9)
    assert shapely.is_valid(r09.floor_footprint("ground", 0.9).geometry)


def test_demo_always_exits_zero(tmp_path, capsys, demo_site):
    # issue 3: the demo exits 0 whatever its verdicts show (its plant room, below the
    # magnet, is meant to exceed the 0.5 mT boundary)
    out = tmp_path / "demo"
    assert main(["demo", "--out", str(out), "--quiet", "--no-drawings",
                 "--grid-step-m", "0.4"]) == 0
    s = json.loads((out / "summary.json").read_text())
    assert s["site"]["name"] == demo_site.name and s["advisory"] == ADVISORY_NOTICE
    assert s["exceeds"] is True
    assert {f["name"] for f in s["floors"]} >= {"ground", "first"}
    assert ADVISORY_NOTICE in capsys.readouterr().out


def test_grid_step_error_names_the_argument():
    # the library names its argument; `fringe report --grid-step-m` names the option
    from fringe.analysis.report import check_grid_step_m
    from fringe.model.errors import FringeInputError

    assert check_grid_step_m(0.5) == 0.5
    with pytest.raises(FringeInputError, match=r"^`grid_step_m` must be a number in \(0, 5\]"):
        check_grid_step_m(0.0)
    with pytest.raises(FringeInputError, match=r"^`--grid-step-m` must be"):
        check_grid_step_m("x", "--grid-step-m")
