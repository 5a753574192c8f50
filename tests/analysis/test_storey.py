"""The whole storey: [[floor]] ceiling_m / slab_m, full-height maps per floor, rooms
flagged ceiling_exceeds (fringe.analysis.storey)."""

from __future__ import annotations

import csv
import io
import tomllib

import numpy as np
import pytest

from fringe.analysis.report import compute_report
from fringe.analysis.storey import full_height_map
from fringe.analysis.zones import floor_map, plan_axes_m
from fringe.field.evaluate import field_at
from fringe.io.report_files import rooms_csv, summary_dict
from fringe.io.scenario import parse_site
from fringe.model.errors import ScenarioError

MAGNET = """
[[magnet]]
name = "m1"
center_m = [0.0, 0.0, 1.0]
axis = [0, 0, 1]
  [[magnet.coil]]
  r_inner_m = 0.30
  r_outer_m = 0.32
  z_min_m = -0.20
  z_max_m = 0.20
  turns = 1000
  current_A = 100.0
"""


def _floors(text: str):
    return parse_site(tomllib.loads(MAGNET + text), "s.toml").floors


def test_default_ceiling_is_the_next_floor_less_the_slab():
    # the rule of the scenario key (docs/scenario.md): next elevation − slab_m (0.3 m)
    fl = _floors("""
[[floor]]
name = "basement"
elevation_m = -3.5
[[floor]]
name = "ground"
elevation_m = 0.0
slab_m = 0.5
[[floor]]
name = "first"
elevation_m = 4.0
[[floor]]
name = "roof plant"
elevation_m = 8.0
ceiling_m = 3.0
""")
    by = {f.name: f for f in fl}
    assert by["basement"].ceiling_m == pytest.approx(3.2)
    assert by["ground"].ceiling_m == pytest.approx(3.5)
    assert by["first"].ceiling_m == pytest.approx(3.7)
    assert by["roof plant"].ceiling_m == pytest.approx(3.0)   # given
    assert by["basement"].full_height_z_m == pytest.approx((-3.5, -0.3))


def test_top_floor_defaults_to_its_band_top():
    # no storey height is assumed above the top floor
    (f,) = _floors("""
[[floor]]
name = "only"
elevation_m = 0.0
occupied_band_m = [0.0, 2.2]
""")
    assert f.ceiling_m == pytest.approx(2.2)
    assert f.full_height_z_m == f.band_z_m


@pytest.mark.parametrize("bad", ["ceiling_m = 1.5", "ceiling_m = -1", "slab_m = -0.1",
                                 "ceiling_m = \"high\""])
def test_bad_ceiling_or_slab_names_the_key(bad):
    with pytest.raises(ScenarioError) as e:
        _floors(f"""
[[floor]]
name = "g"
elevation_m = 0.0
{bad}
""")
    assert f"floor[0].{bad.split()[0]}" in str(e.value)


def test_full_height_maximum_matches_an_independent_scan(demo_site):
    # independent: |B| at 1 cm steps from the basement floor to its ceiling at three plan
    # points under the magnet (plain scan, no parabola); common practice, no source
    x, y = plan_axes_m(((3.0, 2.0), (7.0, 6.0)), 0.5)
    basement = next(f for f in demo_site.floors if f.name == "basement")
    band = floor_map(demo_site, basement, x, y, 0.25)
    whole = full_height_map(demo_site, band, 0.25)
    assert np.all(whole.envelope_T >= band.envelope_T)
    z = np.arange(basement.full_height_z_m[0], basement.full_height_z_m[1] + 1e-9, 0.01)
    for i, j in [(4, 4), (2, 4), (6, 2)]:
        pts = np.column_stack([np.full(z.size, x[i]), np.full(z.size, y[j]), z])
        scan = np.linalg.norm(field_at(demo_site, pts), axis=1).max()
        assert whole.envelope_T[j, i] == pytest.approx(scan, rel=2e-3)
    # the ceiling void under the ground-floor slab: 13–37 mT (issue 15)
    assert 0.013 <= whole.envelope_T.max() <= 0.04
    assert band.envelope_T.max() < 1e-3


@pytest.fixture(scope="module")
def demo_report(demo_site):
    return compute_report(demo_site, grid_step_m=0.2)


def test_demo_basement_ceiling_void_is_assessed_and_flagged(demo_report):
    r = demo_report
    d = summary_dict(r)
    floors = {f["name"]: f for f in d["floors"]}
    for f in floors.values():
        assert set(f["full_height"]) == {"max_field_T", "boundary_area_m2",
                                         "attraction_area_m2"}
    b = floors["basement"]
    assert 0.013 <= b["full_height"]["max_field_T"] <= 0.04
    assert b["full_height"]["boundary_area_m2"] > 5 * b["footprints"][1]["area_m2"]
    assert b["full_height"]["attraction_area_m2"] > 0      # the zone reaches below ground
    assert floors["basement"]["verdict"] == r.floor_verdict("basement")  # band verdict kept
    rooms = {x["name"]: x for x in d["rooms"]}
    assert rooms["plant room"]["ceiling_exceeds"] is True
    assert rooms["office"]["ceiling_exceeds"] is False      # top floor: the band only
    table = list(csv.reader(io.StringIO(rooms_csv(r))))
    assert table[0][-1] == "ceiling_exceeds"
    assert {row[0]: row[-1] for row in table[1:]}["plant room"] == "true"


def test_terminal_names_the_ceiling_room_and_prints_the_reach(demo_report):
    from fringe.cli.report import terminal_summary

    text = terminal_summary(demo_report, "out")
    assert "plant room (basement)" in text and "ceiling" in text
    assert "0.5 mT line reaches 2.71 m from the axis (2.12 m in the centre plane)" in text


def test_summary_boundaries_carry_the_reach(demo_report):
    # reach ≥ centre-plane and on-axis extents (they are points of the same line)
    for m in summary_dict(demo_report)["magnets"]:
        for b in m["boundaries"]:
            assert b["max_reach_m"] >= b["radial_extent_m"]
            assert b["max_reach_axial_m"] >= b["axial_extent_m"]


def test_room_within_its_limit_in_the_band_but_not_at_the_ceiling_is_flagged():
    # the issue's own case: a store room under the magnet, within its limit over its
    # occupied band (0-2 m) but not up to the slab above (ceiling void). The limit is set
    # between |B| at the band top and at the ceiling, read with the direct field
    # (independent of fringe.analysis.storey).
    b_band = float(np.linalg.norm(field_at(parse_site(tomllib.loads(MAGNET), "m.toml"),
                                           [[0.0, 0.0, -1.5]], method="direct")))
    b_ceil = float(np.linalg.norm(field_at(parse_site(tomllib.loads(MAGNET), "m.toml"),
                                           [[0.0, 0.0, -0.3]], method="direct")))
    assert b_ceil > 3 * b_band  # the case is a real one
    limit_mT = 1e3 * (b_band * b_ceil) ** 0.5
    text = MAGNET + f"""
[plan]
grid_step_m = 0.2
[[floor]]
name = "basement"
elevation_m = -3.5
[[floor]]
name = "ground"
elevation_m = 0.0
[[room]]
name = "store"
floor = "basement"
limit_mT = {limit_mT:.6g}
outline_m = [[-1, -1], [1, -1], [1, 1], [-1, 1]]
[[room]]
name = "magnet room"
floor = "ground"
access = "controlled"
outline_m = [[-3, -3], [3, -3], [3, 3], [-3, 3]]
"""
    r = compute_report(parse_site(tomllib.loads(text), "store.toml"))
    store = next(c for c in r.rooms if c.name == "store")
    assert store.verdict == "within" and store.max_field_T < limit_mT * 1e-3
    assert r.ceilings["store"].ceiling_exceeds
    assert r.ceilings["store"].max_field_T == pytest.approx(b_ceil, rel=2e-3)
    row = next(x for x in summary_dict(r)["rooms"] if x["name"] == "store")
    assert row["ceiling_exceeds"] is True
