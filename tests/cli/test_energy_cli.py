"""``fringe energy`` through the argparse entry point."""

from __future__ import annotations

import json
from importlib import resources

import pytest

from fringe.cli.main import main
from fringe.model.constants import ADVISORY_NOTICE


@pytest.fixture(scope="module")
def demo_path():
    with resources.as_file(resources.files("fringe") / "data" / "demo_site.toml") as p:
        yield str(p)


def test_json_keys_and_verify(demo_path, capsys):
    assert main(["energy", demo_path, "--json", "--verify"]) == 0
    out = json.loads(capsys.readouterr().out)
    rec = out["magnets"][0]
    for key in ("name", "stored_energy_J", "center_field_T", "inductance_matrix_H",
                "circuit_inductance_H"):  # the keys, exactly
        assert key in rec
    assert rec["name"] == "hall-A 1.5 T"
    n = len(rec["inductance_matrix_H"])
    assert n == 8 and all(len(row) == n for row in rec["inductance_matrix_H"])
    # both routes W = ½IᵀMI and ∫B²/2μ₀ dV agree to 0.1 % (the issue; Jackson Eq. 5.148)
    assert abs(rec["verify_relative_difference"]) < 1e-3
    assert rec["circuit_inductance_H"] == pytest.approx(2 * rec["stored_energy_J"] / 220**2)
    assert set(rec["zonal_moments"]) == {"dipole_Am2", "l3_Am4", "l5_Am6"}
    assert 0 < rec["energy_outside_envelope_fraction"] < 0.1
    assert out["advisory"] == ADVISORY_NOTICE
    assert out["total_energy_J"] == pytest.approx(rec["stored_energy_J"])


def test_text_output_has_units_and_notice(demo_path, capsys):
    assert main(["energy", demo_path]) == 0
    text = capsys.readouterr().out
    assert "2.47403 MJ" in text and " kJ " in text and "circuit inductance" in text
    assert "energy outside envelope" in text and "centre field" in text
    assert ADVISORY_NOTICE in text


def test_unequal_currents_give_null_circuit_inductance(tmp_path, capsys):
    scen = tmp_path / "two.toml"
    scen.write_text(
        '[site]\nname = "Invented two-magnet test bench"\n'
        '[[magnet]]\nname = "a"\ncenter_m = [0, 0, 1]\naxis = [0, 0, 1]\n'
        '  [[magnet.coil]]\n  r_inner_m = 0.3\n  r_outer_m = 0.35\n  z_min_m = -0.2\n'
        '  z_max_m = 0.2\n  turns = 1000\n  current_A = 100.0\n'
        '  [[magnet.coil]]\n  r_inner_m = 0.5\n  r_outer_m = 0.55\n  z_min_m = -0.2\n'
        '  z_max_m = 0.2\n  turns = 300\n  current_A = -50.0\n'
        '[[magnet]]\nname = "b"\ncenter_m = [4, 0, 1]\naxis = [1, 0, 0]\n'
        '  [[magnet.coil]]\n  r_inner_m = 0.3\n  r_outer_m = 0.35\n  z_min_m = -0.2\n'
        '  z_max_m = 0.2\n  turns = 1000\n  current_A = 100.0\n', encoding="utf-8")
    assert main(["energy", str(scen), "--json"]) == 0
    out = json.loads(capsys.readouterr().out)
    a, b = out["magnets"]
    assert a["circuit_inductance_H"] is None  # coil |currents| differ: not a series circuit
    assert b["circuit_inductance_H"] is not None
    (pair,) = out["mutual_energies"]
    assert pair["magnets"] == ["a", "b"]
    # total = W_a + W_b + W_ab (energy of superposed fields; Jackson 1999, Sec. 5.16)
    assert out["total_energy_J"] == pytest.approx(
        a["stored_energy_J"] + b["stored_energy_J"] + pair["interaction_energy_J"])


@pytest.mark.parametrize("argv, words", [
    (["--box", "0", "0", "0", "1", "1", "1"], "--box"),  # box without the windings
    (["--box", "9", "0", "0", "1", "1", "1"], "--box"),  # min > max
    (["--magnet", "nope"], "--magnet"),
    (["--envelope-margin-m", "-1"], "--envelope-margin-m"),
    (["--levels", "0", "10"], "--levels"),
])
def test_bad_input_exit_2(demo_path, capsys, argv, words):
    assert main(["energy", demo_path, *argv]) == 2
    err = capsys.readouterr().err
    assert words in err and "Traceback" not in err


def test_maps_written(demo_path, tmp_path, capsys):
    out_dir = tmp_path / "maps"
    assert main(["energy", demo_path, "--maps", str(out_dir), "--json"]) == 0
    names = sorted(p.name for p in out_dir.iterdir())
    assert names == ["energy-plan-hall-a-1-5-t.png", "energy-section-hall-a-1-5-t.png"]
    assert len(json.loads(capsys.readouterr().out)["maps"]) == 2


def test_maps_into_a_file_is_input_error(demo_path, tmp_path, capsys):
    f = tmp_path / "plain-file"
    f.write_text("x", encoding="utf-8")
    assert main(["energy", demo_path, "--maps", str(f / "sub")]) == 2
    assert "`--maps` must be" in capsys.readouterr().err


def test_energy_outside_a_radius_tends_to_the_dipole_tail(tmp_path, capsys):
    # far out only the dipole is left: B² = (μ₀m/4πr³)²(1 + 3cos²θ), so the energy
    # outside a sphere of radius R is μ₀m²/(12πR³) (textbook dipole field, integrated by
    # hand: ∫(1 + 3cos²θ)dΩ = 8π). At R = 20 m ≫ 0.3 m coil the l = 3 term is < 1e-6.
    import math

    from fringe.io.scenario import load_site
    from fringe.model.constants import MU0_T_M_PER_A as MU0
    from tests.conftest import SMALL_SCENARIO_TOML

    scen = tmp_path / "s.toml"
    scen.write_text(SMALL_SCENARIO_TOML, encoding="utf-8")
    assert main(["energy", str(scen), "--json", "--radius-m", "20"]) == 0
    rec = json.loads(capsys.readouterr().out)["magnets"][0]["energy_outside_radius"]
    m = load_site(scen).magnets[0].dipole_moment_Am2
    assert rec["radius_m"] == 20.0
    assert rec["energy_J"] == pytest.approx(MU0 * m * m / (12 * math.pi * 20.0**3), rel=1e-4)
    assert 0 < rec["energy_fraction"] < 1e-3
    # inside the sphere enclosing the windings the closed form does not hold: refused
    assert main(["energy", str(scen), "--radius-m", "0.1"]) == 2
    assert "`--radius-m` must be a radius of at least" in capsys.readouterr().err
