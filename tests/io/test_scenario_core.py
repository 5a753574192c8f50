"""Scenario loading (magnets) and the `fringe probe` command: the core contract."""

from __future__ import annotations

import json

import numpy as np
import pytest

from fringe import ScenarioError, field_at, load_site
from fringe.cli.main import main
from fringe.model.constants import ADVISORY_NOTICE

MAGNET = """
[site]
name = "Test bench (invented)"

[[magnet]]
name = "bay-2 research magnet"
center_m = [6.0, 4.0, 1.1]
axis = [2, 0, 0]
[[magnet.coil]]
r_inner_m = 0.45
r_outer_m = 0.50
z_min_m = -0.30
z_max_m = 0.30
turns = 1200
current_A = 400.0
"""


def write(tmp_path, text, name="s.toml"):
    p = tmp_path / name
    p.write_text(text, encoding="utf-8")
    return p


def test_loads_issue_example_keys_and_normalises_axis(tmp_path):
    site = load_site(write(tmp_path, MAGNET))
    m = site.magnets[0]
    assert site.name == "Test bench (invented)"
    assert m.name == "bay-2 research magnet"
    assert m.axis == (1.0, 0.0, 0.0)
    assert m.center_m == (6.0, 4.0, 1.1)
    c = m.coils[0]
    assert c.current_density_A_per_m2 == pytest.approx(1200 * 400 / (0.05 * 0.6))


def test_bore_axis_points_along_site_x(tmp_path):
    # The field at the centre of a solenoid points along its axis (right-hand rule).
    site = load_site(write(tmp_path, MAGNET))
    B = field_at(site, [6.0, 4.0, 1.1])[0]
    assert B[0] > 0 and abs(B[1]) < 1e-12 and abs(B[2]) < 1e-12


@pytest.mark.parametrize("old,new,key", [
    ("r_outer_m = 0.50", "r_outer_m = 0.40", "magnet[0].coil[0].r_outer_m"),
    ("z_max_m = 0.30", "z_max_m = -0.40", "magnet[0].coil[0].z_max_m"),
    ("turns = 1200", "turns = 0", "magnet[0].coil[0].turns"),
    ("turns = 1200", 'turns = "many"', "magnet[0].coil[0].turns"),
    ("current_A = 400.0", "current_A = nan", "magnet[0].coil[0].current_A"),
    ("axis = [2, 0, 0]", "axis = [0, 0, 0]", "magnet[0].axis"),
    ("axis = [2, 0, 0]", "axis = [1, 0]", "magnet[0].axis"),
    ("center_m = [6.0, 4.0, 1.1]", "center_m = [6.0, inf, 1.1]", "magnet[0].center_m"),
])
def test_bad_values_name_file_and_key_path(tmp_path, old, new, key):
    p = write(tmp_path, MAGNET.replace(old, new))
    with pytest.raises(ScenarioError) as e:
        load_site(p)
    msg = str(e.value)
    assert str(p) in msg and f"`{key}`" in msg and "must be" in msg


def test_unknown_key_gets_did_you_mean(tmp_path):
    p = write(tmp_path, MAGNET.replace("current_A = 400.0", "curent_A = 400.0"))
    with pytest.raises(ScenarioError) as e:
        load_site(p)
    # current_A is then missing: the first error names what is missing.
    assert "magnet[0].coil[0].current_A" in str(e.value)
    p = write(tmp_path, MAGNET.replace("turns = 1200", "turns = 1200\ncurrent = 3"))
    with pytest.raises(ScenarioError) as e:
        load_site(p)
    assert "`magnet[0].coil[0].current` is not a known key" in str(e.value)
    assert "did you mean `magnet[0].coil[0].current_A`" in str(e.value)


def test_cli_bad_scenario_exit_2_without_traceback(tmp_path, capsys):
    p = write(tmp_path, MAGNET.replace("r_outer_m = 0.50", "r_outer_m = 0.45"))
    assert main(["probe", str(p), "--at", "0", "0", "0"]) == 2
    err = capsys.readouterr().err
    assert "magnet[0].coil[0].r_outer_m" in err and "Traceback" not in err


def test_probe_json_has_exact_schema(tmp_path, capsys):
    p = write(tmp_path, MAGNET)
    assert main(["probe", str(p), "--at", "6", "4", "1.1", "--at", "9", "4", "1.1",
                 "--json"]) == 0
    data = json.loads(capsys.readouterr().out)
    assert list(data) == ["points", "field_basis", "advisory"] and len(data["points"]) == 2
    assert data["advisory"] == ADVISORY_NOTICE and "Earth" in data["field_basis"]
    row = data["points"][1]
    assert list(row) == ["point_m", "B_T", "B_abs_T", "energy_density_J_per_m3",
                         "grad_abs_B_T_per_m", "force_product_T2_per_m"]
    B = np.array(row["B_T"])
    assert row["B_abs_T"] == pytest.approx(np.linalg.norm(B))
    # u = B²/2μ0 (Jackson Eq. 5.148)
    assert row["energy_density_J_per_m3"] == pytest.approx(
        np.dot(B, B) / (2 * 4e-7 * np.pi), rel=1e-6)
    np.testing.assert_allclose(B, field_at(load_site(p), [[9, 4, 1.1]])[0], rtol=1e-12)


def test_probe_points_files_and_out(tmp_path, capsys):
    p = write(tmp_path, MAGNET)
    pts = np.array([[8.0, 4.0, 1.1], [6.0, 7.0, 1.1], [6.0, 4.0, 5.0]])
    np.save(tmp_path / "p.npy", pts)
    np.savetxt(tmp_path / "p.csv", pts, delimiter=",", header="x_m,y_m,z_m", comments="")
    assert main(["probe", str(p), "--points", str(tmp_path / "p.npy"),
                 "--out", str(tmp_path / "B.npy")]) == 0
    assert main(["probe", str(p), "--points", str(tmp_path / "p.csv"),
                 "--out", str(tmp_path / "B.csv")]) == 0
    a = np.load(tmp_path / "B.npy")
    b = np.loadtxt(tmp_path / "B.csv", delimiter=",", skiprows=1)
    np.testing.assert_allclose(a, field_at(load_site(p), pts), rtol=1e-12)
    np.testing.assert_allclose(b, a, rtol=1e-12)
    assert main(["probe", str(p), "--points", str(tmp_path / "p.csv")]) == 0
    out = capsys.readouterr().out
    assert "|B|_mT" in out and "ADVISORY" in out


def test_probe_warns_inside_winding(tmp_path, capsys):
    p = write(tmp_path, MAGNET)
    assert main(["probe", str(p), "--at", "6", "4", str(1.1 + 0.47)]) == 0
    assert "inside a winding" in capsys.readouterr().err
