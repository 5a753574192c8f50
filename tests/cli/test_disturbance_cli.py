"""``fringe disturbance`` and moving steel in ``fringe report`` (issue 17, item 6).

The JSON form is fixed by the issue; exit codes by the package's contract (2 bad input,
3 a verdict ``exceeds``). The values themselves are checked in
tests/physics/test_disturbance.py (Jackson, *Classical Electrodynamics*, 3rd ed.,
Secs. 5.6, 5.10, 5.11); here the command must agree with the library it wires.
"""

from __future__ import annotations

import json
import math

import numpy as np
import pytest

from fringe.model.constants import ADVISORY_NOTICE
from tests.conftest import SMALL_SCENARIO_TOML

BG = 'background_field_uT = [0.0, 19.5, -44.0]\n'
WITH_BG = SMALL_SCENARIO_TOML.replace('name = "small test site (invented)"\n',
                                      'name = "small test site (invented)"\n' + BG)
SECOND = """
[[magnet]]
name = "m2"
center_m = [20.0, 0.0, 1.0]
  [[magnet.coil]]
  r_inner_m = 0.30
  r_outer_m = 0.32
  z_min_m = -0.20
  z_max_m = 0.20
  turns = 1000
  current_A = 100.0
"""
ARGS = ("--mass-kg", 1000, "--from", 3, 0, -2, "--to", 3, 0, 4)


def test_json_keys_exact_and_values_follow_the_library(run_cli, write_file):
    from fringe.analysis.moving_steel import path_disturbance, segment_points
    from fringe.io.scenario import load_site

    p = write_file(WITH_BG)
    code, out, err = run_cli("disturbance", p, *ARGS, "--steps", 7, "--json")
    assert code == 0, err
    d = json.loads(out)
    assert set(d) == {"magnet", "mass_kg", "center_field_T", "points", "max_abs_delta_B_ppm",
                      "advisory", "background_field_uT", "background_source"}
    assert d["advisory"] == ADVISORY_NOTICE
    assert d["magnet"] == "m1" and d["mass_kg"] == 1000.0  # the only magnet: --magnet optional
    assert d["background_source"] == "scenario"
    assert d["background_field_uT"] == pytest.approx([0.0, 19.5, -44.0])
    assert len(d["points"]) == 7
    assert all(set(q) == {"position_m", "delta_B_T", "delta_B_ppm"} for q in d["points"])
    ref = path_disturbance(load_site(p), "m1", 1000.0, segment_points((3, 0, -2), (3, 0, 4), 7))
    np.testing.assert_allclose([q["delta_B_T"] for q in d["points"]], ref.delta_B_T, rtol=1e-12)
    ppm = [q["delta_B_ppm"] for q in d["points"]]
    np.testing.assert_allclose(ppm, 1e6 * np.array([q["delta_B_T"] for q in d["points"]])
                               / d["center_field_T"], rtol=1e-12)  # the definition
    assert d["max_abs_delta_B_ppm"] == pytest.approx(max(abs(v) for v in ppm))
    assert d["points"][0]["position_m"] == [3.0, 0.0, -2.0]
    assert "warning" not in err


def test_background_option_and_warning(run_cli, write_file):
    p = write_file(SMALL_SCENARIO_TOML)
    code, out, err = run_cli("disturbance", p, *ARGS, "--json")
    assert code == 0
    assert "fringe: warning: no background field given" in err
    d = json.loads(out)
    assert d["background_source"] == "none" and d["background_field_uT"] == [0, 0, 0]
    assert len(d["points"]) == 21  # the default
    code, out2, err = run_cli("disturbance", p, *ARGS, "--background-uT", 0, 0, 50, "--json")
    assert code == 0 and "warning" not in err
    d2 = json.loads(out2)
    assert d2["background_source"] == "option"
    assert d2["max_abs_delta_B_ppm"] != d["max_abs_delta_B_ppm"]


def test_terminal_table(run_cli, write_file):
    code, out, _ = run_cli("disturbance", write_file(WITH_BG), *ARGS, "--steps", 4)
    assert code == 0
    assert "ΔB at isocentre" in out and "ΔB_ppm" in out and "largest change:" in out
    assert ADVISORY_NOTICE in out
    rows = [ln for ln in out.splitlines() if ln.strip().startswith("3.000")]
    assert len(rows) == 4
    assert len({len(r) for r in rows}) == 1  # aligned
    assert any(u in out for u in (" nT", " pT", " µT"))  # units scaled


@pytest.mark.parametrize(("argv", "words"), [
    (("--magnet", "nope", *ARGS), ["--magnet", "'m1'", "nope"]),
    ((*ARGS, "--steps", 1), ["--steps", "≥ 2"]),
    ((*ARGS, "--steps", "many"), ["--steps", "invalid int"]),
    (("--mass-kg", 1000, "--from", 3, 0, "--to", 3, 0, 4), ["--from", "expected 3"]),
    (("--mass-kg", 0, "--from", 3, 0, 1, "--to", 3, 0, 4), ["--mass-kg", "positive"]),
    (("--mass-kg", 1, "--from", 3, 0, "nan", "--to", 3, 0, 4), ["--from", "finite"]),
    ((*ARGS[:2], "--from", 0, 0, 1, "--to", 0, 0, 1), ["--from/--to", "centre"]),
])
def test_bad_input_exits_2(run_cli, write_file, argv, words):
    code, out, err = run_cli("disturbance", write_file(WITH_BG), *argv)
    assert code == 2 and out == "" and "Traceback" not in err
    for w in words:
        assert w in err, (w, err)


def test_several_magnets_need_the_option(run_cli, write_file):
    p = write_file(WITH_BG + SECOND)
    code, _, err = run_cli("disturbance", p, *ARGS)
    assert code == 2 and "--magnet" in err and "'m2'" in err
    code, out, _ = run_cli("disturbance", p, "--magnet", "m2", *ARGS, "--json")
    assert code == 0 and json.loads(out)["magnet"] == "m2"


REPORT_SITE = WITH_BG + """
[plan]
grid_step_m = 0.25
thresholds_mT = [0.5, 1]
[[moving_steel]]
name = "lift car"
mass_kg = 1200.0
path_m = [[3.0, 0.0, -1.0], [3.0, 0.0, 3.0]]
limit_ppm = {limit}
[[moving_steel]]
name = "trolley"
mass_kg = 50.0
path_m = [[0.0, 3.0, 1.0], [2.0, 3.0, 1.0]]
"""


def test_report_exits_3_when_a_path_exceeds_its_limit(run_cli, write_file, tmp_path):
    from fringe.analysis.moving_steel import check_moving_steel
    from fringe.io.scenario import load_site

    p = write_file(REPORT_SITE.format(limit=1e-6))
    worst = check_moving_steel(load_site(p))[0].max_abs_delta_B_ppm
    assert worst > 1e-6
    out = tmp_path / "out"
    code, text, _ = run_cli("report", p, "--out", out, "--no-drawings", "--quiet")
    assert code == 3
    assert "1 moving steel path (lift car:" in text
    s = json.loads((out / "summary.json").read_text())
    rows = {r["name"]: r for r in s["moving_steel"]}
    assert {"name", "max_abs_delta_B_ppm", "limit_ppm", "verdict"} <= set(rows["lift car"])
    assert rows["lift car"]["verdict"] == "exceeds" and s["exceeds"] is True
    assert rows["lift car"]["max_abs_delta_B_ppm"] == pytest.approx(worst, rel=1e-6)
    assert rows["trolley"]["verdict"] is None and rows["trolley"]["limit_ppm"] is None
    assert math.isfinite(rows["trolley"]["max_abs_delta_B_ppm"])
    # within its limit: no exit 3 on its account
    p2 = write_file(REPORT_SITE.format(limit=1e3), "ok.toml")
    code, text, _ = run_cli("report", p2, "--out", tmp_path / "out2", "--no-drawings",
                            "--quiet")
    s = json.loads((tmp_path / "out2" / "summary.json").read_text())
    assert s["moving_steel"][0]["verdict"] == "within"
    assert code == (3 if s["exceeds"] else 0)
    assert "moving steel path (lift car" not in text
