"""The ``[[steel]]`` scenario section (issue 17, item 1): keys, defaults, errors.

Errors name the file, the key path, what was expected and what was found (the package's
error contract; common practice, no source).
"""

from __future__ import annotations

import pytest

from fringe.io.scenario import TOP_LEVEL_KEYS, load_site
from fringe.model.errors import ScenarioError
from fringe.model.steel import DEFAULT_STEEL_MATERIAL, MATERIALS
from tests.conftest import SMALL_SCENARIO_TOML

PLATE = """
[[steel]]
name = "ceiling plate"
center_m = [5.0, 4.0, 3.6]
size_m = [6.0, 5.0, 0.01]
yaw_deg = 0.0
material = "low-carbon-steel"
relative_permeability = 1000.0
"""


def test_section_is_registered():
    assert "steel" in TOP_LEVEL_KEYS


def test_issue_example_parses_every_key(write_file):
    site = load_site(write_file(SMALL_SCENARIO_TOML + PLATE))
    (p,) = site.steel
    assert p.name == "ceiling plate"
    assert p.center_m == (5.0, 4.0, 3.6)
    assert p.size_m == (6.0, 5.0, 0.01)
    assert p.yaw_deg == 0.0
    assert p.material is MATERIALS["low-carbon-steel"]
    assert p.mu_r == 1000.0
    # density × volume (definition of mass)
    assert p.mass_kg == pytest.approx(MATERIALS["low-carbon-steel"].density_kg_per_m3 * 0.3)


def test_defaults_and_override(write_file):
    toml = SMALL_SCENARIO_TOML + """
[[steel]]
name = "beam"
center_m = [1.0, 0.0, 3.0]
size_m = [0.2, 4.0, 0.3]

[[steel]]
name = "slab"
center_m = [0.0, 0.0, 3.2]
size_m = [8.0, 8.0, 0.25]
yaw_deg = 30
material = "rebar-steel"
relative_permeability = 5.0
"""
    beam, slab = load_site(write_file(toml)).steel
    assert beam.material.name == DEFAULT_STEEL_MATERIAL
    assert beam.yaw_deg == 0.0 and beam.relative_permeability is None
    assert beam.mu_r == MATERIALS[DEFAULT_STEEL_MATERIAL].relative_permeability
    assert slab.yaw_deg == 30.0 and slab.mu_r == 5.0
    assert slab.material.relative_permeability != 5.0  # the override, not the material


def test_no_steel_is_free_space(write_file):
    site = load_site(write_file(SMALL_SCENARIO_TOML))
    assert site.steel == () and site.induced is None


def test_unknown_material_lists_the_registry(write_file):
    path = write_file(SMALL_SCENARIO_TOML + PLATE.replace('"low-carbon-steel"', '"cast-iron"'))
    with pytest.raises(ScenarioError) as e:
        load_site(path)
    msg = str(e.value)
    assert str(path) in msg and "steel[0].material" in msg and "cast-iron" in msg
    for name in MATERIALS:
        assert repr(name) in msg


@pytest.mark.parametrize(("old", "new", "key", "expected"), [
    ("size_m = [6.0, 5.0, 0.01]", "size_m = [6.0, 5.0, 0.0]", "steel[0].size_m", "edge"),
    ("size_m = [6.0, 5.0, 0.01]", "size_m = [6.0, 5.0]", "steel[0].size_m", "3 numbers"),
    ("center_m = [5.0, 4.0, 3.6]", 'center_m = "middle"', "steel[0].center_m", "3 numbers"),
    ("relative_permeability = 1000.0", "relative_permeability = 0.5",
     "steel[0].relative_permeability", "≥ 1"),
    ("yaw_deg = 0.0", "yaw_deg = true", "steel[0].yaw_deg", "number"),
    ('name = "ceiling plate"', 'name = ""', "steel[0].name", "non-empty"),
])
def test_bad_values_name_file_key_expected_found(write_file, old, new, key, expected):
    path = write_file(SMALL_SCENARIO_TOML + PLATE.replace(old, new))
    with pytest.raises(ScenarioError) as e:
        load_site(path)
    msg = str(e.value)
    assert str(path) in msg and key in msg and expected in msg


def test_missing_key_and_unknown_key_and_duplicate(write_file):
    with pytest.raises(ScenarioError, match=r"steel\[0\]\.size_m` is missing"):
        load_site(write_file(SMALL_SCENARIO_TOML + PLATE.replace(
            "size_m = [6.0, 5.0, 0.01]", "")))
    with pytest.raises(ScenarioError, match=r"steel\[0\]\.thickness_m` is not a known key"):
        load_site(write_file(SMALL_SCENARIO_TOML + PLATE + "thickness_m = 0.01\n"))
    with pytest.raises(ScenarioError, match=r"steel\[1\]\.name.*unique"):
        load_site(write_file(SMALL_SCENARIO_TOML + PLATE + PLATE))


def test_misspelt_section_gets_did_you_mean(write_file):
    with pytest.raises(ScenarioError, match="did you mean `steel`"):
        load_site(write_file(SMALL_SCENARIO_TOML + PLATE.replace("[[steel]]", "[[steels]]")))
