"""calibrated.toml writing (fringe.io.scenario_edit): the original text kept, the changed
values put in, and the result a scenario that loads to exactly those values. Checks of
the package's own contract (common practice, no source)."""

from __future__ import annotations

import tomllib

import pytest

from fringe.io.scenario import load_site
from fringe.io.scenario_edit import edited_scenario_toml
from tests.conftest import SMALL_SCENARIO_TOML

DATASHEET = """\
# a data-sheet magnet
[[magnet]]
name = "ds"
center_m = [0.0, 0.0, 1.0]
axis = [0, 0, 1]
  [magnet.datasheet]
  center_field_T = 1.5
  warm_bore_m = 0.6
    [[magnet.datasheet.line]]
    threshold_mT = 0.5
    axial_m = 4.0
    radial_m = 2.5
"""


def test_coil_magnet_edited_line_by_line(write_file, tmp_path):
    src = write_file("# keep me\n" + SMALL_SCENARIO_TOML.replace(
        "center_m = [0.0, 0.0, 1.0]", "center_m = [0.0,\n            0.0, 1.0]   # split"))
    coil = {"r_inner_m": 0.30, "r_outer_m": 0.32, "z_min_m": -0.2, "z_max_m": 0.2,
            "turns": 1000, "current_A": 97.5}
    text = edited_scenario_toml(src, {"m1": ([0.01, -0.02, 1.003], [coil])},
                                out_dir=tmp_path / "out", header=["fitted", ""])
    assert text.startswith("# fitted\n#\n# keep me\n")
    assert "current_A = 97.5  # was 100.0" in text
    assert "center_m = [0.01, -0.02, 1.003]  # was [0.0, 0.0, 1.0]" in text
    assert "written from the scenario's values" not in text
    p = write_file(text, "cal.toml")
    m = load_site(p).magnets[0]
    assert m.center_m == (0.01, -0.02, 1.003) and m.coils[0].current_A == 97.5


def test_datasheet_magnet_written_as_its_coils(write_file, tmp_path):
    src = write_file(DATASHEET)
    site = load_site(src)
    m = site.magnets[0].scaled(0.9)
    coils = [{"r_inner_m": c.r_inner_m, "r_outer_m": c.r_outer_m, "z_min_m": c.z_min_m,
              "z_max_m": c.z_max_m, "turns": c.turns, "current_A": c.current_A}
             for c in m.coils]
    text = edited_scenario_toml(src, {"ds": ([0.0, 0.0, 1.0], coils)}, out_dir=tmp_path)
    assert "comments of the original are not kept" in text
    data = tomllib.loads(text)
    assert "datasheet" not in data["magnet"][0]
    got = load_site(write_file(text, "cal.toml")).magnets[0]
    assert [c.current_A for c in got.coils] == pytest.approx([c.current_A for c in m.coils])

