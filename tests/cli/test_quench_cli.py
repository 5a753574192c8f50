"""`fringe quench`: JSON keys, scenario section, option overrides, exit codes, cautions."""

from __future__ import annotations

import json
import math
import re

import pytest

from fringe import ScenarioError, load_site
from fringe.cli.main import main
from fringe.model.constants import ADVISORY_NOTICE
from fringe.model.site import QuenchInputs
from fringe.physics.energy import circuit_inductance_H, stored_energy_J
from fringe.physics.quench import QUENCH_CAUTIONS, helium_properties

ONE_COIL = """
[site]
name = "Cryo test bay (invented)"

[[magnet]]
name = "bench solenoid"
center_m = [2.0, 2.0, 1.0]
[[magnet.coil]]
r_inner_m = 0.20
r_outer_m = 0.24
z_min_m = -0.25
z_max_m = 0.25
turns = 3000
current_A = 150.0
"""

QUENCH_TABLE = """
[[quench]]
magnet = "bench solenoid"
helium_L = 120.0
room_volume_m3 = 90.0
dump_ohm = 2.0
room_temperature_C = 15.0
"""

TWO_CURRENTS = """
[[magnet]]
name = "split pair"
center_m = [8.0, 2.0, 1.0]
[[magnet.coil]]
r_inner_m = 0.30
r_outer_m = 0.33
z_min_m = 0.10
z_max_m = 0.20
turns = 800
current_A = 100.0
[[magnet.coil]]
r_inner_m = 0.30
r_outer_m = 0.33
z_min_m = -0.20
z_max_m = -0.10
turns = 800
current_A = 60.0
"""

REQUIRED_KEYS = {"stored_energy_J", "helium_boiled_kg", "helium_boiled_L", "gas_volume_m3",
                 "inventory_gas_volume_m3", "oxygen_fraction_worst_case", "oxygen_thresholds",
                 "time_constant_s", "peak_voltage_V", "inputs", "helium_properties",
                 "advisory", "cautions", "room_volume_m3_for_19_5_percent"}


def write(tmp_path, text, name="q.toml"):
    p = tmp_path / name
    p.write_text(text, encoding="utf-8")
    return p


def run_json(capsys, argv):
    code = main(argv + ["--json"])
    out = capsys.readouterr().out
    assert code == 0, out
    return json.loads(out)


def test_json_keys_and_values_from_options(tmp_path, capsys):
    path = write(tmp_path, ONE_COIL)
    d = run_json(capsys, ["quench", str(path), "--magnet", "bench solenoid", "--helium-L", "200",
                          "--room-volume-m3", "150", "--dump-ohm", "1.5"])
    assert REQUIRED_KEYS <= d.keys()
    site = load_site(path)
    m = site.magnets[0]
    W = stored_energy_J(m)
    L_H = circuit_inductance_H(m)
    he = helium_properties(293.15, 101325.0)
    assert d["stored_energy_J"] == pytest.approx(W, rel=1e-12)
    # Hand route from the printed numbers: m = W/h_fg, V = m/ρ_gas (CoolProp values).
    assert d["helium_boiled_kg"] == pytest.approx(W / he.latent_heat_J_per_kg, rel=1e-12)
    assert d["inventory_gas_volume_m3"] == pytest.approx(
        0.2 * he.liquid_density_kg_per_m3 / he.gas_density_kg_per_m3, rel=1e-12)
    assert d["oxygen_fraction_worst_case"] == pytest.approx(
        0.2095 * math.exp(-d["inventory_gas_volume_m3"] / 150.0), rel=1e-12)
    # τ = L/R, peak voltage I0·R (Wilson 1983 ch. 9); I0 = the common coil current.
    assert d["time_constant_s"] == pytest.approx(L_H / 1.5, rel=1e-12)
    assert d["peak_voltage_V"] == pytest.approx(150.0 * 1.5, rel=1e-12)
    # With R_magnet = 0 the dump resistor takes the whole stored energy W.
    assert d["dump_circuit"]["energy_into_resistor_J"] == pytest.approx(W, rel=1e-9)
    assert [t["threshold"] for t in d["oxygen_thresholds"]] == ["19.5%", "18%"]
    for t in d["oxygen_thresholds"]:
        assert t["worst_case"] in ("stays above", "falls below")
        assert t["energy_limited"] in ("stays above", "falls below")
    assert d["cautions"] == list(QUENCH_CAUTIONS)
    assert d["advisory"] == ADVISORY_NOTICE
    assert d["inputs"]["helium_L"] == 200.0 and d["inputs"]["room_volume_m3"] == 150.0


def test_scenario_section_values_and_cli_overrides(tmp_path, capsys):
    path = write(tmp_path, ONE_COIL + QUENCH_TABLE)
    site = load_site(path)
    assert site.quench == (QuenchInputs("bench solenoid", 120.0, 90.0, 2.0, None,
                                                   15.0, None),)
    d = run_json(capsys, ["quench", str(path)])  # magnet and values from the [[quench]] table
    assert d["inputs"]["helium_L"] == 120.0 and d["inputs"]["dump_ohm"] == 2.0
    assert d["inputs"]["room_temperature_C"] == 15.0
    # 15 °C gas is denser than 20 °C gas: expansion ratio ≈ 737 (issue 5), 0.5 %.
    assert d["helium_properties"]["expansion_ratio"] == pytest.approx(737.0, rel=0.005)
    d2 = run_json(capsys, ["quench", str(path), "--helium-L", "60", "--room-temperature-C", "20"])
    assert d2["inputs"]["helium_L"] == 60.0
    assert d2["inputs"]["room_volume_m3"] == 90.0  # still from the scenario
    # Half the liquid, gas at 20 °C instead of 15 °C: ideal-gas law V ∝ T (Z − 1 < 10⁻³
    # for helium near room temperature, so 10⁻⁴ on the ratio).
    assert d2["inventory_gas_volume_m3"] == pytest.approx(
        d["inventory_gas_volume_m3"] / 2 * 293.15 / 288.15, rel=1e-4)


def test_dump_refused_when_windings_carry_different_currents(tmp_path, capsys):
    path = write(tmp_path, ONE_COIL + TWO_CURRENTS)
    d = run_json(capsys, ["quench", str(path), "--magnet", "split pair", "--helium-L", "50",
                          "--room-volume-m3", "80", "--dump-ohm", "1"])
    assert d["time_constant_s"] is None and d["peak_voltage_V"] is None
    assert "different current" in d["dump_circuit_refused"]
    code = main(["quench", str(path), "--magnet", "split pair", "--helium-L", "50",
                 "--room-volume-m3", "80", "--dump-ohm", "1"])
    out = capsys.readouterr().out
    assert code == 0 and "DUMP RESISTOR: not computed" in out


def test_human_output_prints_cautions_and_advisory(tmp_path, capsys):
    path = write(tmp_path, ONE_COIL)
    code = main(["quench", str(path), "--helium-L", "200", "--room-volume-m3", "150",
                 "--dump-ohm", "1.5"])
    out = capsys.readouterr().out
    assert code == 0
    for c in QUENCH_CAUTIONS:
        assert c in out
    assert ADVISORY_NOTICE in out
    for word in ("WITHOUT WARNING", "cryogenic burns", "fog", "quench pipe", "oxygen monitors",
                 "re-enters", "time constant", "peak terminal voltage", "19.5%", "18%"):
        assert word in out


@pytest.mark.parametrize("extra, message", [
    (["--magnet", "no such magnet", "--helium-L", "100", "--room-volume-m3", "100"],
     "`--magnet` must be one of the site's magnets"),
    (["--helium-L", "100", "--room-volume-m3", "-30"], "`--room-volume-m3` must be"),
    (["--helium-L", "-1", "--room-volume-m3", "30"], "`--helium-L` must be"),
    (["--helium-L", "100", "--room-volume-m3", "30", "--dump-ohm", "0"], "`--dump-ohm` must be"),
    (["--helium-L", "100", "--room-volume-m3", "30", "--room-temperature-C", "500"],
     "`--room-temperature-C` must be"),
    (["--room-volume-m3", "30"], "`--helium-L` must be given"),
    (["--helium-L", "nan", "--room-volume-m3", "30"], "`--helium-L` must be"),
    (["--helium-L", "ten", "--room-volume-m3", "30"], "invalid float value"),
])
def test_bad_inputs_exit_2(tmp_path, capsys, extra, message):
    path = write(tmp_path, ONE_COIL)
    code = main(["quench", str(path)] + extra)
    err = capsys.readouterr().err
    assert code == 2
    assert message in err
    assert "Traceback" not in err


@pytest.mark.parametrize("table, key", [
    (QUENCH_TABLE.replace("room_volume_m3 = 90.0", "room_volume_m3 = -90.0"),
     "quench[0].room_volume_m3"),
    (QUENCH_TABLE.replace('magnet = "bench solenoid"', 'magnet = "bench solenod"'),
     "quench[0].magnet"),
    (QUENCH_TABLE.replace("helium_L = 120.0", "helium_litres = 120.0"), "quench[0].helium_L"),
    (QUENCH_TABLE + 'room_pressure_kpa = 101.0\n', "quench[0].room_pressure_kpa"),
])
def test_bad_scenario_section_names_key_path(tmp_path, capsys, table, key):
    path = write(tmp_path, ONE_COIL + table)
    with pytest.raises(ScenarioError, match=re.escape(f"`{key}`")):
        load_site(path)
    code = main(["quench", str(path)])
    assert code == 2 and f"`{key}`" in capsys.readouterr().err


def test_two_magnets_need_a_choice(tmp_path, capsys):
    path = write(tmp_path, ONE_COIL + TWO_CURRENTS)
    code = main(["quench", str(path), "--helium-L", "50", "--room-volume-m3", "80"])
    assert code == 2 and "`--magnet` must be given" in capsys.readouterr().err


def test_pdf_sheets_budget_table_and_decay_curves(tmp_path, capsys):
    from fringe.physics.quench import quench_budget
    from fringe.render.quench import quench_decay_sheet, quench_sheets

    no_dump = quench_budget(1e6, 100.0, 100.0, magnet="m")
    assert quench_decay_sheet(no_dump, "site") is None
    assert len(quench_sheets(no_dump, "site", date_iso="2026-01-01")) == 1
    with_dump = quench_budget(1e6, 100.0, 100.0, dump_ohm=0.5, inductance_H=50.0,
                              initial_current_A=200.0, magnet="m")
    fig = quench_decay_sheet(with_dump, "site", date_iso="2026-01-01")
    labels = [ln.get_label() for ax in fig.axes for ln in ax.get_lines()]
    assert "I(t) = I0·exp(−t/τ)" in labels and "energy left in the magnet ½·L·I²" in labels
    path = write(tmp_path, ONE_COIL)
    pdf = tmp_path / "quench.pdf"
    code = main(["quench", str(path), "--helium-L", "50", "--room-volume-m3", "80",
                 "--dump-ohm", "1", "--pdf", str(pdf)])
    capsys.readouterr()
    assert code == 0 and pdf.read_bytes()[:5] == b"%PDF-"
    assert main(["quench", str(path), "--helium-L", "50", "--room-volume-m3", "80",
                 "--pdf", str(tmp_path / "q.png")]) == 2


def test_demo_magnet_budget_every_number_traced(demo_site, capsys):
    """The demo magnet: each JSON number recomputed by an independent route here."""
    from CoolProp.CoolProp import PropsSI

    m = demo_site.magnets[0]
    W = stored_energy_J(m)            # validated in the stored-energy tests
    L_H = circuit_inductance_H(m)     # 2W/I² for one series circuit
    d = run_json(capsys, ["quench", demo_site.source_file, "--magnet", m.name, "--helium-L", "1500",
                          "--room-volume-m3", "180", "--dump-ohm", "0.5"])
    p, T = 101325.0, 293.15
    h_fg = PropsSI("H", "P", p, "Q", 1, "Helium") - PropsSI("H", "P", p, "Q", 0, "Helium")
    rho_l = PropsSI("D", "P", p, "Q", 0, "Helium")
    rho_g = PropsSI("D", "P", p, "T", T, "Helium")
    boiled = min(W / h_fg, 1.5 * rho_l)
    assert d["stored_energy_J"] == pytest.approx(W, rel=1e-12)
    assert d["helium_boiled_kg"] == pytest.approx(boiled, rel=1e-12)
    assert d["helium_boiled_L"] == pytest.approx(boiled / rho_l * 1e3, rel=1e-12)
    assert d["gas_volume_m3"] == pytest.approx(boiled / rho_g, rel=1e-12)
    assert d["inventory_gas_volume_m3"] == pytest.approx(1.5 * rho_l / rho_g, rel=1e-12)
    assert d["oxygen_fraction_worst_case"] == pytest.approx(
        0.2095 * math.exp(-1.5 * rho_l / rho_g / 180.0), rel=1e-10)
    assert d["room_volume_m3_for_19_5_percent"] == pytest.approx(
        1.5 * rho_l / rho_g / math.log(0.2095 / 0.195), rel=1e-12)
    assert d["time_constant_s"] == pytest.approx(L_H / 0.5, rel=1e-12)
    assert d["peak_voltage_V"] == pytest.approx(220.0 * 0.5, rel=1e-12)
    assert d["dump_circuit"]["time_to_1_percent_s"] == pytest.approx(
        L_H / 0.5 * math.log(100.0), rel=1e-12)
    # Energy into the resistor = W (R_magnet = 0), W = ½·L·I0² for the series circuit.
    assert d["dump_circuit"]["energy_into_resistor_J"] == pytest.approx(W, rel=1e-9)


def test_demo_scenario_budget_as_shipped_every_number_and_the_cautions(demo_site, capsys):
    """Issue 5 "done when": `fringe quench` on the demo magnet with the inputs of the
    demo's own [[quench]] table (no options): every JSON number recomputed here, and
    the cautions printed with the text output."""
    from CoolProp.CoolProp import PropsSI

    m = demo_site.magnets[0]
    q = demo_site.quench[0]
    assert (q.helium_L, q.room_volume_m3, q.dump_ohm) == (1500.0, 180.0, None)
    d = run_json(capsys, ["quench", demo_site.source_file, "--magnet", m.name])
    W = stored_energy_J(m)
    p, T, V_room = 101325.0, 293.15, 180.0
    h_fg = PropsSI("H", "P", p, "Q", 1, "Helium") - PropsSI("H", "P", p, "Q", 0, "Helium")
    rho_l = PropsSI("D", "P", p, "Q", 0, "Helium")
    rho_g = PropsSI("D", "P", p, "T", T, "Helium")
    inv_kg = 1.5 * rho_l                       # 1500 L = 1.5 m³ of saturated liquid
    boiled = W / h_fg                          # energy-limited, below the inventory here
    gas, gas_inv = boiled / rho_g, inv_kg / rho_g
    expected = {
        "stored_energy_J": W, "helium_inventory_kg": inv_kg,
        "helium_boiled_uncapped_kg": boiled, "helium_boiled_kg": boiled,
        "helium_boiled_L": boiled / rho_l * 1e3, "gas_volume_m3": gas,
        "inventory_gas_volume_m3": gas_inv,
        "oxygen_fraction_energy_limited": 0.2095 * math.exp(-gas / V_room),
        "oxygen_fraction_worst_case": 0.2095 * math.exp(-gas_inv / V_room),
        # displacement cross-check x = 0.2095·(1 − V/V_room), floored at 0
        "oxygen_fraction_worst_case_displacement": max(0.0, 0.2095 * (1 - gas_inv / V_room)),
        "room_volume_m3_for_19_5_percent": gas_inv / math.log(0.2095 / 0.195),
    }
    for key, value in expected.items():
        assert d[key] == pytest.approx(value, rel=1e-9, abs=1e-15), key
    assert d["helium_boiled_capped_by_inventory"] is False
    assert d["time_constant_s"] is None and d["peak_voltage_V"] is None  # no dump resistor
    # thresholds 19.5 % (OSHA 29 CFR 1910.146) and 18 %: both passed in the worst case
    th = {t["threshold"]: t for t in d["oxygen_thresholds"]}
    for key, frac in (("19.5%", 0.195), ("18%", 0.18)):
        assert th[key]["fraction"] == frac
        assert th[key]["worst_case"] == "falls below"
        assert th[key]["energy_limited"] == "falls below"
        assert th[key]["room_volume_m3_needed_worst_case"] == pytest.approx(
            gas_inv / math.log(0.2095 / frac), rel=1e-12)
    # the text output carries every caution and the advisory notice
    assert main(["quench", demo_site.source_file, "--magnet", m.name]) == 0
    text = capsys.readouterr().out
    assert all(c in text for c in QUENCH_CAUTIONS) and ADVISORY_NOTICE in text
