"""Every output states what the limits are compared with (the field the magnets add; the
Earth's field comes on top), and corrected wording: h_fg above 1 atm, the oxygen figures,
the attraction criterion."""

from __future__ import annotations

import tomllib

import pytest

from fringe.analysis.report import compute_report
from fringe.io.report_files import summary_dict
from fringe.io.scenario import parse_site
from fringe.model.constants import FIELD_BASIS_NOTE
from tests.analysis.test_report import BASE, EAST_BAY
from tests.conftest import SMALL_SCENARIO_TOML


@pytest.fixture(scope="module")
def result():
    return compute_report(parse_site(tomllib.loads(BASE + EAST_BAY), "small.toml"))


def test_note_names_the_added_field_and_the_earth_field():
    # Earth's surface field 25-65 µT: NOAA/BGS World Magnetic Model
    assert "the field the magnets add" in FIELD_BASIS_NOTE
    assert "25-65 µT" in FIELD_BASIS_NOTE and "0.1 mT" in FIELD_BASIS_NOTE


def test_summary_json_cover_plan_notes_and_terminal_carry_the_note(result):
    from fringe.cli.report import terminal_summary
    from fringe.render.report import _cover_facts, _plan_notes

    assert summary_dict(result)["field_basis"] == FIELD_BASIS_NOTE
    assert ("Field basis", FIELD_BASIS_NOTE) in _cover_facts(result)
    for name, fm in result.floor_maps.items():
        assert FIELD_BASIS_NOTE in _plan_notes(result, name, fm)
    assert FIELD_BASIS_NOTE in terminal_summary(result, "out").splitlines()


def test_probe_terminal_carries_the_note(write_file, run_cli):
    code, out, err = run_cli("probe", write_file(SMALL_SCENARIO_TOML), "--at", "2", "0", "1")
    assert code == 0, err
    assert FIELD_BASIS_NOTE in out


def test_latent_heat_falls_a_little_above_one_atmosphere():
    # CoolProp 8.0.0 (Helium, Ortiz-Vega et al. EOS): h_fg 20.56 kJ/kg at 101.325 kPa,
    # -2.1 % at +7 kPa, -6.4 % at +20 kPa (the numbers quoted in docs/quench.md)
    from fringe.physics.quench import helium_properties

    h0 = helium_properties().latent_heat_J_per_kg
    assert h0 == pytest.approx(20.56e3, rel=1e-3)
    h7 = helium_properties(boil_pressure_Pa=101325.0 + 7e3).latent_heat_J_per_kg
    h20 = helium_properties(boil_pressure_Pa=101325.0 + 20e3).latent_heat_J_per_kg
    assert 100 * (h7 / h0 - 1) == pytest.approx(-2.1, abs=0.05)
    assert 100 * (h20 / h0 - 1) == pytest.approx(-6.4, abs=0.1)


def test_well_mixed_whole_inventory_is_not_called_the_worst_case():
    from fringe.cli.quench import format_budget
    from fringe.physics.quench import budget_table_rows, oxygen_model_text, quench_budget
    from fringe.render.quench import _MODEL_NOTES

    # invented numbers of the order of a whole-body magnet (2.5 MJ, 1500 L, 180 m³)
    b = quench_budget(2.5e6, 1500.0, 180.0)
    # displacement 0.2095(1 - V/V_room) <= 0.2095 exp(-V/V_room) since 1 - x <= e^-x
    assert b.oxygen_fraction_worst_case_displacement <= b.oxygen_fraction_worst_case
    rows = budget_table_rows(b)
    text = " ".join(str(c) for row in rows for c in row) + format_budget(b)
    assert "worst case" not in text and "worst-case" not in text
    assert "harsher" in text and "harsher" in oxygen_model_text()
    assert "not the worst case" in " ".join(_MODEL_NOTES)


def test_attraction_criterion_says_sliding_starts_at_mu_weight():
    from fringe.physics.attraction import criterion_text

    # sliding starts when the horizontal pull exceeds μ·weight (Coulomb friction,
    # common practice, no source)
    assert "μ·weight" in criterion_text() and "pull exceeds weight" in criterion_text()
