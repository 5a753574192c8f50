"""``fringe survey``: the terminal table, the JSON keys the issue fixes, the output folder,
and the calibrated scenario running through ``fringe report``. Checks of the command's
contract (common practice, no source), except where a source is named."""

from __future__ import annotations

import json
import tomllib
from importlib import resources

import numpy as np
import pytest

from fringe.field.evaluate import field_at
from fringe.io.scenario import load_site
from fringe.model.constants import ADVISORY_NOTICE
from tests.conftest import SMALL_SCENARIO_TOML

GEOJSON = json.dumps({"type": "FeatureCollection", "features": [{
    "type": "Feature", "properties": {"name": "lab", "floor": "ground"},
    "geometry": {"type": "Polygon",
                 "coordinates": [[[-4, -4], [4, -4], [4, 4], [-4, 4], [-4, -4]]]}}]})


@pytest.fixture(scope="module")
def demo_files():
    base = resources.files("fringe") / "data"
    with resources.as_file(base / "demo_site.toml") as s, \
            resources.as_file(base / "demo_readings.csv") as r:
        yield s, r


@pytest.fixture
def small(tmp_path):
    """The small scenario (with a room file given by a relative path) and readings of its
    magnet with every current × 0.95 plus an Earth's field, 1 % noise, one reading 60 %
    high."""
    d = tmp_path / "site"
    d.mkdir()
    (d / "rooms.geojson").write_text(GEOJSON, "utf-8")
    scen = d / "small.toml"
    scen.write_text("# a comment that must survive\n" + SMALL_SCENARIO_TOML
                    + '\n[[floor]]\nname = "ground"\nelevation_m = 0.0\n'
                      '\n[[room_file]]\npath = "rooms.geojson"\n', "utf-8")
    site = load_site(scen)
    rng = np.random.default_rng(4)
    ang, rad = rng.uniform(0, 2 * np.pi, 24), rng.uniform(1.0, 3.0, 24)
    pts = np.c_[rad * np.cos(ang), rad * np.sin(ang), rng.uniform(0.2, 2.0, 24)]
    earth = np.array([0.0, 19e-6, -45e-6])  # invented; a meter reads the total field
    b = np.linalg.norm(field_at(site.magnets[0].scaled(0.95), pts) + earth, axis=1)
    b *= np.exp(rng.normal(0, 0.01, len(b)))
    b[3] *= 1.6
    rows = ["x_m,y_m,z_m,B_mT,label"] + [
        f"{x:.4f},{y:.4f},{z:.4f},{v * 1e3:.6g},P{i}"
        for i, ((x, y, z), v) in enumerate(zip(pts, b, strict=True))]
    rd = d / "readings.csv"
    rd.write_text("\n".join(rows) + "\n", "utf-8")
    return scen, rd, tmp_path


def test_demo_text_table_calibration_and_uncertainty_line(run_cli, demo_files):
    scen, rd = demo_files
    code, out, err = run_cli("survey", scen, "--readings", rd, "--calibrate", "--quiet")
    assert code == 0, err
    lines = out.splitlines()
    head = next(i for i, s in enumerate(lines) if s.startswith("label"))
    assert lines[head].split() == ["label", "x,", "y,", "z", "(m)", "measured", "mT",
                                   "model", "mT", "ratio", "flag"]
    # the ratio column lines up on every row
    col = lines[head].index("ratio") + len("ratio")
    rows = lines[head + 1:head + 31]
    assert all(r[col - 6:col].strip().replace(".", "").isdigit() for r in rows)
    assert sum("OUTLIER" in r for r in rows) == 2  # the two faults put into the demo file
    assert "current scale 0.97" in out or "current scale 0.96" in out
    assert "± " in out
    assert any(s.startswith("field_uncertainty = 0.0") for s in lines)
    assert out.rstrip().endswith(ADVISORY_NOTICE)


def test_demo_json_keys_and_figures(run_cli, demo_files):
    """The invented truth of the demo readings: currents × 0.97, centre moved by
    (+0.04, −0.02, 0) m, an Earth's field (0, 19, −45) µT, 2 % noise (the file's header)."""
    scen, rd = demo_files
    code, out, _ = run_cli("survey", scen, "--readings", rd, "--calibrate", "--json")
    assert code == 0
    d = json.loads(out)
    assert {"points", "rms_log_residual", "calibration", "boundaries_calibrated",
            "advisory", "suggested_field_uncertainty"} <= set(d)
    assert d["advisory"] == ADVISORY_NOTICE
    assert set(d["points"][0]) == {"label", "point_m", "measured_T", "model_T", "ratio",
                                   "flag"}
    assert {p["label"] for p in d["points"] if p["flag"] == "outlier"} == {"MR-15", "CO-02"}
    c = d["calibration"][0]
    assert {"magnet", "current_scale", "current_scale_std", "center_offset_m",
            "rms_log_residual_after"} <= set(c)
    assert abs(c["current_scale"] - 0.97) < 3 * c["current_scale_std"]
    assert abs(c["center_offset_m"][0] - 0.04) < 3 * c["center_offset_std_m"][0]
    assert c["rms_log_residual_after"] < d["rms_log_residual"]
    assert set(d["boundaries_calibrated"][0]) == {"magnet", "threshold_mT",
                                                  "axial_extent_m", "radial_extent_m"}
    assert 0 < d["suggested_field_uncertainty"] < 0.2
    # the demo scenario states the readings' Earth's field ([site] background_field_uT),
    # so it is part of the model and not fitted
    assert d["background_field_uT"] is None


def test_demo_background_fitted_when_the_scenario_gives_none(run_cli, demo_files, tmp_path):
    """Without `[site] background_field_uT` the invented Earth's field of the readings,
    (0, 19, −45) µT, is fitted, each component within 3σ (least-squares theory)."""
    scen, rd = demo_files
    text = scen.read_text(encoding="utf-8")
    assert "background_field_uT = [0.0, 19.0, -45.0]" in text
    bare = tmp_path / "demo_no_background.toml"
    bare.write_text(text.replace("background_field_uT = [0.0, 19.0, -45.0]", ""),
                    encoding="utf-8")
    code, out, _ = run_cli("survey", bare, "--readings", rd, "--calibrate", "--json")
    assert code == 0
    d = json.loads(out)
    c = d["calibration"][0]
    assert abs(c["current_scale"] - 0.97) < 3 * c["current_scale_std"]
    for got, sd, want in zip(d["background_field_uT"], d["background_field_std_uT"],
                             (0.0, 19.0, -45.0), strict=True):
        assert abs(got - want) < 3 * sd


def test_compare_only_has_no_calibration(run_cli, demo_files):
    scen, rd = demo_files
    code, out, _ = run_cli("survey", scen, "--readings", rd, "--json")
    d = json.loads(out)
    assert code == 0 and d["calibration"] == [] and d["boundaries_calibrated"] == []
    # the two faults of the demo file stand out without a fit too (with readings the
    # uncalibrated model misses by more than 3σ of their own uncertainty)
    assert {"MR-15", "CO-02"} <= {p["label"] for p in d["points"] if p["flag"] == "outlier"}
    p = d["points"][0]
    assert p["ratio"] == pytest.approx(p["measured_T"] / p["model_T"], rel=1e-5)


def test_out_folder_calibrated_scenario_runs_through_report(run_cli, small):
    scen, rd, tmp = small
    out = tmp / "survey-out"
    code, text, err = run_cli("survey", scen, "--readings", rd, "--calibrate", "--out", out,
                              "--quiet")
    assert code == 0, err
    assert sorted(p.name for p in out.iterdir()) == [
        "calibrated.toml", "survey-measured-model.pdf", "survey-measured-model.png",
        "survey-plan.pdf", "survey-plan.png", "survey.json"]
    doc = json.loads((out / "survey.json").read_text("utf-8"))
    c = doc["calibration"][0]
    assert [p["flag"] for p in doc["points"]].count("outlier") == 1
    text_toml = (out / "calibrated.toml").read_text("utf-8")
    assert "# a comment that must survive" in text_toml  # the original's comments kept
    assert str(rd.resolve()) in text_toml                 # the readings file named
    site = load_site(out / "calibrated.toml")             # the room file found from here
    assert [r.name for r in site.rooms] == ["lab"]
    m = site.magnets[0]
    assert m.coils[0].current_A == pytest.approx(100.0 * c["current_scale"], rel=1e-6)
    offs = [v or 0.0 for v in c["center_offset_m"]]
    assert m.center_m == pytest.approx(np.array([0.0, 0.0, 1.0]) + offs, abs=1e-4)
    raw = tomllib.loads(text_toml)
    assert raw["room_file"][0]["path"] == "../site/rooms.geojson"
    rep = tmp / "report-out"
    code, _, err = run_cli("report", out / "calibrated.toml", "--out", rep, "--grid-step-m",
                           0.25, "--no-drawings", "--no-fail", "--quiet")
    assert code == 0, err
    summary = json.loads((rep / "summary.json").read_text("utf-8"))
    b05 = next(b for b in summary["magnets"][0]["boundaries"] if b["threshold_mT"] == 0.5)
    cal05 = next(b for b in doc["boundaries_calibrated"] if b["threshold_mT"] == 0.5)
    assert b05["radial_extent_m"] == pytest.approx(cal05["radial_extent_m"], abs=2e-4)
    # a second survey may replace its own folder
    code, _, _ = run_cli("survey", scen, "--readings", rd, "--out", out, "--quiet")
    assert code == 0 and not (out / "calibrated.toml").exists()


@pytest.mark.parametrize("argv, message", [
    (("--magnet", "m1"), "`--magnet` must be given only with calibrate"),
    (("--calibrate", "--magnet", "nope"), "`--magnet` must be one of the site's magnets"),
])
def test_option_errors_name_the_option(run_cli, small, argv, message):
    scen, rd, _ = small
    code, _, err = run_cli("survey", scen, "--readings", rd, *argv)
    assert code == 2 and message in err


def test_bad_readings_exit_2_with_file_line_column(run_cli, small, write_file):
    scen, _, _ = small
    bad = write_file("x_m,y_m,z_m,B_mT\n2,0,1,0.5\n2,0,1,oops\n", "bad.csv")
    code, out, err = run_cli("survey", scen, "--readings", bad)
    assert code == 2 and out == ""
    assert f"{bad}: line 3, column 4: `B_mT`" in err and "Traceback" not in err
    inside = write_file("x_m,y_m,z_m,B_mT\n2,0,1,0.5\n0.31,0,1,100\n", "inside.csv")
    code, _, err = run_cli("survey", scen, "--readings", inside)
    assert code == 2 and "line 3 (R2)" in err and "inside the windings or cryostat" in err
