"""Scenario keys of moving steel: ``[[moving_steel]]`` and ``[site] background_field_uT``.

Errors name the file, the key path, what was expected and what was found (the package's
error contract; common practice, no source).
"""

from __future__ import annotations

import tomllib

import pytest

from fringe.io.scenario import TOP_LEVEL_KEYS, parse_site
from fringe.model.errors import ScenarioError
from tests.conftest import SMALL_SCENARIO_TOML

LIFT = """
[[moving_steel]]
name = "lift car"
mass_kg = 1200.0
path_m = [[3.0, 0.0, -2.5], [3.0, 0.0, 5.0]]
limit_ppm = 0.01
"""


def _site(text: str):
    return parse_site(tomllib.loads(text), "s.toml")


def test_moving_steel_and_background_parse():
    text = SMALL_SCENARIO_TOML.replace('name = "small test site (invented)"\n',
                                       'name = "small test site (invented)"\n'
                                       "background_field_uT = [0, 19.5, -44]\n")
    site = _site(text + LIFT + '[[moving_steel]]\nname = "bed"\nmass_kg = 80\n'
                 "path_m = [[2, 0, 1], [2, 3, 1], [4, 3, 1]]\n")
    assert "moving_steel" in TOP_LEVEL_KEYS
    assert site.background_field_uT == (0.0, 19.5, -44.0)
    lift, bed = site.moving_steel
    assert (lift.name, lift.mass_kg, lift.limit_ppm) == ("lift car", 1200.0, 0.01)
    assert lift.path_m == ((3.0, 0.0, -2.5), (3.0, 0.0, 5.0))
    assert bed.limit_ppm is None and len(bed.path_m) == 3
    assert _site(SMALL_SCENARIO_TOML).background_field_uT is None
    assert _site(SMALL_SCENARIO_TOML).moving_steel == ()


@pytest.mark.parametrize(("old", "new", "words"), [
    ("mass_kg = 1200.0", "mass_kg = -5", ["moving_steel[0].mass_kg", "> 0", "-5"]),
    ("mass_kg = 1200.0\n", "", ["moving_steel[0].mass_kg", "missing"]),
    ("path_m = [[3.0, 0.0, -2.5], [3.0, 0.0, 5.0]]", "path_m = [[3.0, 0.0, -2.5]]",
     ["moving_steel[0].path_m", "at least 2 points"]),
    ("path_m = [[3.0, 0.0, -2.5], [3.0, 0.0, 5.0]]", "path_m = [[3.0, 0.0], [3.0, 0.0, 5.0]]",
     ["moving_steel[0].path_m[0]", "3 numbers", "[3.0, 0.0]"]),
    ("path_m = [[3.0, 0.0, -2.5], [3.0, 0.0, 5.0]]", 'path_m = [[3.0, 0.0, 1], [3, 0, "x"]]',
     ["moving_steel[0].path_m[1]", "3 numbers"]),
    ("path_m = [[3.0, 0.0, -2.5], [3.0, 0.0, 5.0]]", "path_m = [[3.0, 0.0, 1], [3, 0, 1]]",
     ["moving_steel[0].path_m", "not all the same"]),
    ("limit_ppm = 0.01", "limit_ppm = 0", ["moving_steel[0].limit_ppm", "> 0"]),
    ("limit_ppm = 0.01", "limit_ppm = 0.01\nlimit_pmm = 2", ["moving_steel[0].limit_pmm",
                                                          "not a known key"]),
    ('name = "lift car"', "name = 3", ["moving_steel[0].name", "string"]),
])
def test_moving_steel_errors(old, new, words):
    text = SMALL_SCENARIO_TOML + LIFT
    assert text.count(old) == 1
    with pytest.raises(ScenarioError) as e:
        _site(text.replace(old, new))
    msg = str(e.value)
    assert "s.toml" in msg
    for w in words:
        assert w in msg, (w, msg)


def test_duplicate_names_and_misspelt_section():
    with pytest.raises(ScenarioError, match=r"moving_steel\[1\]\.name.*unique"):
        _site(SMALL_SCENARIO_TOML + LIFT + LIFT)
    with pytest.raises(ScenarioError, match="did you mean `moving_steel`"):
        _site(SMALL_SCENARIO_TOML + LIFT.replace("[[moving_steel]]", "[[moving_steal]]"))


@pytest.mark.parametrize(("value", "words"), [
    ("[0, 50]", ["site.background_field_uT", "3 numbers", "[0, 50]"]),
    ('"50"', ["site.background_field_uT", "3 numbers"]),
    ("[0, 0, 50000]", ["site.background_field_uT", "1000 µT"]),
])
def test_background_errors(value, words):
    text = SMALL_SCENARIO_TOML.replace('name = "small test site (invented)"\n',
                                       'name = "small test site (invented)"\n'
                                       f"background_field_uT = {value}\n")
    with pytest.raises(ScenarioError) as e:
        _site(text)
    for w in words:
        assert w in str(e.value), (w, str(e.value))
