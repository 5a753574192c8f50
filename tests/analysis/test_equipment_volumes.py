"""Equipment volumes and classes, the 0.1 mT default line, equipment limits drawn as lines
(fringe.io.scenario_plan.parse_equipment, fringe.analysis.verdicts.check_equipment,
fringe.model.equipment_classes)."""

from __future__ import annotations

import csv
import io
import json
import tomllib

import numpy as np
import pytest
import shapely

from fringe.analysis.report import compute_report
from fringe.analysis.verdicts import check_equipment, volume_samples_m
from fringe.analysis.zones import field_magnitude_T
from fringe.io.report_files import equipment_csv, summary_dict, zones_geojson
from fringe.io.scenario import parse_site
from fringe.model.building import Equipment, Floor
from fringe.model.constants import DEFAULT_THRESHOLDS_MT
from fringe.model.equipment_classes import EQUIPMENT_CLASSES, NO_SOURCE
from fringe.model.errors import ScenarioError
from fringe.model.site import default_settings, site_plan
from fringe.model.verdict import Verdict

MAGNET = """
[site]
name = "equipment test site (invented)"
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
[[floor]]
name = "ground"
elevation_m = 0.0
[[floor]]
name = "first"
elevation_m = 4.0
"""

VOLUME = """
[[equipment]]
name = "PET"
outline_m = [[2.5, -1], [4, -1], [4, 1], [2.5, 1]]
floor = "ground"
height_m = 2.0
class = "PET scanner"
"""


def _site(extra: str):
    return parse_site(tomllib.loads(MAGNET + extra), "s.toml")


@pytest.mark.parametrize("extra,expected", [
    ('[[equipment]]\nname = "a"\nlimit_mT = 0.1\n',
     "`equipment[0].position_m` must be given for equipment 'a' exactly when "
     "`equipment[0].outline_m` is not"),
    ('[[equipment]]\nname = "a"\nlimit_mT = 0.1\nposition_m = [1, 0, 1]\n'
     'outline_m = [[0, 0], [1, 0], [1, 1]]\nheight_m = 1\n',
     "`equipment[0].position_m` must be given for equipment 'a' exactly when"),
    ('[[equipment]]\nname = "a"\nlimit_mT = 0.1\nposition_m = [1, 0, 1]\nfloor = "ground"\n',
     "`equipment[0].floor` must be given only with `equipment[0].outline_m`"),
    ('[[equipment]]\nname = "a"\nlimit_mT = 0.1\nposition_m = [1, 0, 1]\nheight_m = 2\n',
     "`equipment[0].height_m` must be given only with `equipment[0].outline_m`"),
    ('[[equipment]]\nname = "a"\nlimit_mT = 0.1\noutline_m = [[0, 0], [1, 0], [1, 1]]\n'
     'floor = "ground"\n', "`equipment[0].height_m`"),
    ('[[equipment]]\nname = "a"\nlimit_mT = 0.1\noutline_m = [[0, 0], [1, 0], [1, 1]]\n'
     'floor = "ground"\nheight_m = -1\n', "`equipment[0].height_m` must be"),
    ('[[equipment]]\nname = "a"\nlimit_mT = 0.1\noutline_m = [[0, 0], [1, 0], [1, 1]]\n'
     'floor = "roof"\nheight_m = 1\n', "`equipment[0].floor` must be one of the floors"),
    ('[[equipment]]\nname = "a"\nlimit_mT = 0.1\noutline_m = [[0, 0], [1, 1], [1, 0], [0, 1]]\n'
     'floor = "ground"\nheight_m = 1\n',
     "`equipment[0].outline_m` must be a valid simple polygon"),
    ('[[equipment]]\nname = "a"\nposition_m = [1, 0, 1]\nclass = "CT scaner"\n',
     "`equipment[0].class` must be one of"),
    ('[[equipment]]\nname = "a"\nposition_m = [1, 0, 1]\n', "`equipment[0].limit_mT`"),
])
def test_parse_errors_name_the_key_path(extra, expected):
    with pytest.raises(ScenarioError) as ei:
        _site(extra)
    assert expected in str(ei.value)


def test_unknown_class_suggests_the_near_name():
    with pytest.raises(ScenarioError, match="did you mean 'CT scanner'"):
        _site('[[equipment]]\nname = "a"\nposition_m = [1, 0, 1]\nclass = "CT scaner"\n')


def test_class_fills_the_limit_and_an_explicit_limit_overrides():
    s = _site(VOLUME + '[[equipment]]\nname = "b"\nposition_m = [5, 0, 1]\n'
                       'class = "CT scanner"\nlimit_mT = 0.3\n')
    pet, b = s.equipment
    assert pet.class_name == "PET scanner" and pet.is_volume and pet.position_m is None
    assert pet.limit_mT == EQUIPMENT_CLASSES["PET scanner"].limit_mT
    assert pet.floor == "ground" and pet.height_m == 2.0
    assert b.limit_mT == 0.3 and b.class_name == "CT scanner" and not b.is_volume


def test_class_registry_is_complete():
    assert len(EQUIPMENT_CLASSES) >= 6
    for key, c in EQUIPMENT_CLASSES.items():
        assert c.name == key
        assert 0 < c.limit_mT <= 10 and c.description
        # each with a cited source or "common practice, no source"
        assert c.source == NO_SOURCE or len(c.source) > 10
    # the most sensitive imaging equipment is kept at 0.1 mT (common practice, no source)
    assert EQUIPMENT_CLASSES["gamma camera"].limit_mT == 0.1


def test_volume_maximum_matches_brute_force_sampling():
    # the largest |B| over the prism, against a brute-force fine sampling of the same
    # prism (numerical check of the sampling, no outside source)
    site = _site(VOLUME)
    (e,) = site.equipment
    (chk,) = check_equipment(site, site.equipment, floors=site.floors, step_m=0.1,
                             band_step_m=0.25)
    xs = np.linspace(2.5, 4.0, 61)
    ys = np.linspace(-1.0, 1.0, 81)
    zs = np.linspace(0.0, 2.0, 41)
    X, Y, Z = np.meshgrid(xs, ys, zs, indexing="ij")
    brute = float(field_magnitude_T(site, np.column_stack([X.ravel(), Y.ravel(),
                                                           Z.ravel()])).max())
    assert chk.field_T == pytest.approx(brute, rel=1e-3)
    # coarser samples cannot exceed the fine max, up to the field engine's stated 1e-4
    # (the fast path or the direct sum may serve either call: docs/field.md)
    assert chk.field_T <= brute * (1 + 2e-4)
    # the maximum is where it says, inside the prism
    x, y, z = chk.position_m
    assert shapely.contains_xy(e.outline.buffer(1e-9), x, y) and 0.0 <= z <= 2.0
    at = float(field_magnitude_T(site, np.array([chk.position_m]))[0])
    assert at == pytest.approx(chk.field_T, rel=2e-4)  # stated accuracy, as above
    # nearest the magnet: the wall facing it, at the magnet's height band
    assert x == pytest.approx(2.5) and chk.floor == "ground"
    assert chk.verdict == (Verdict.EXCEEDS if chk.field_T >= 0.5e-3 else Verdict.WITHIN)


def test_volume_reads_more_than_a_point_inside_it():
    # the case: a point in the middle of a gantry reads far less than the volume
    site = _site(VOLUME)
    pt = Equipment("centre", (3.25, 0.0, 1.0), 0.5)
    vol, centre = check_equipment(site, (*site.equipment, pt), lambda z: site.floors[0],
                                  floors=site.floors)
    assert vol.field_T > 1.5 * centre.field_T


def test_volume_samples_cover_corners_and_levels():
    poly = shapely.Polygon([(0, 0), (1, 0), (1, 0.5), (0, 0.5)])
    p = volume_samples_m(poly, 4.0, 1.0, 0.1, 0.25)
    assert set(np.round(np.unique(p[:, 2]), 9)) == {4.0, 4.25, 4.5, 4.75, 5.0}
    for cx, cy in [(0, 0), (1, 0), (1, 0.5), (0, 0.5)]:
        assert np.any(np.hypot(p[:, 0] - cx, p[:, 1] - cy) < 1e-9)
    assert shapely.contains_xy(poly.buffer(1e-9), p[:, 0], p[:, 1]).all()


def test_volume_on_an_undeclared_floor_names_the_argument():
    from fringe.model.errors import ArgumentError

    site = _site(VOLUME)
    with pytest.raises(ArgumentError, match="`floors`"):
        check_equipment(site, site.equipment, floors=(Floor("other", 0.0),))


def test_default_lines_include_0_1_mT_and_equipment_limits_are_drawn():
    # 0.1 mT: common practice for the most sensitive equipment, no source
    assert 0.1 in DEFAULT_THRESHOLDS_MT
    assert 0.1 in default_settings().thresholds_mT
    s = _site('[[equipment]]\nname = "a"\nposition_m = [6, 0, 1]\nlimit_mT = 0.37\n'
              '[plan]\nthresholds_mT = [0.5, 3]\n')
    assert site_plan(s).settings.thresholds_mT == (0.37, 0.5, 3.0)
    assert site_plan(_site("")).settings.thresholds_mT[0] == 0.1


def test_report_outputs_keep_their_keys_and_add_class(tmp_path):
    site = _site(VOLUME + '[[equipment]]\nname = "pc"\nposition_m = [6, 0, 1]\n'
                          'limit_mT = 1\n[plan]\ngrid_step_m = 0.25\nthresholds_mT = [0.5]\n')
    r = compute_report(site)
    d = summary_dict(r)
    json.dumps(d, allow_nan=False)
    pet, pc = d["equipment"]
    assert {"name", "position_m", "floor", "field_T", "limit_T", "verdict", "note"} <= set(pet)
    assert pet["class"] == "PET scanner" and "class" not in pc
    assert pet["height_m"] == 2.0 and len(pet["outline_m"]) == 5
    assert r.thresholds_mT == (0.5, 1.0)  # the limits 0.5 and 1 mT are lines
    rows = list(csv.DictReader(io.StringIO(equipment_csv(r))))
    assert rows[0]["class"] == "PET scanner" and rows[1]["class"] == ""
    gj = zones_geojson(r)
    eq = [f for f in gj["features"] if f["properties"]["kind"] == "equipment"]
    assert eq[0]["geometry"]["type"] == "Polygon" and eq[1]["geometry"]["type"] == "Point"
    assert eq[0]["properties"]["class"] == "PET scanner"
