"""One name per quantity across the machine-readable outputs (issue 16, item 5).

``summary.json``, ``fringe energy --json``, ``fringe quench --json`` and
``fringe probe --json`` on the demo site: each carries the advisory notice under
``advisory``; a key shared by two outputs holds the same value for the same quantity; and
every key (and every rooms.csv/equipment.csv column) is listed in docs/outputs.md.
Consistency checks of the package's own contract (common practice, no source).
"""

from __future__ import annotations

import json
import re
from importlib import resources
from pathlib import Path

import pytest

from fringe.model.constants import ADVISORY_NOTICE

DOC = Path(__file__).resolve().parents[2] / "docs" / "outputs.md"

#: Objects whose keys are data (verdict names), not field names.
OPEN_KEYED = {"verdict_counts"}


def key_names(d, parent: str = "") -> set[str]:
    """Every key name in a JSON value (lists and nested objects walked)."""
    out: set[str] = set()
    if isinstance(d, dict):
        for k, v in d.items():
            if parent in OPEN_KEYED:
                out |= key_names(v, "")
                continue
            out.add(k)
            out |= key_names(v, k)
    elif isinstance(d, list):
        for v in d:
            out |= key_names(v, parent)
    return out


def documented_keys() -> dict[str, set[str]]:
    """Key → the outputs its row of the table in docs/outputs.md names (last column)."""
    rows = {}
    for line in DOC.read_text(encoding="utf-8").splitlines():
        m = re.match(r"\|\s*`([^`]+)`\s*\|(.*)\|\s*$", line)
        if m:
            cell = m.group(2).split("|")[-1]
            rows[m.group(1)] = {w.strip(" `") for w in cell.split(",")}
    return rows


@pytest.fixture(scope="module")
def outputs(demo_site):
    from fringe.analysis.report import compute_report
    from fringe.io.report_files import equipment_csv, rooms_csv, summary_dict

    result = compute_report(demo_site, grid_step_m=0.4)
    out = {"summary.json": json.loads(json.dumps(summary_dict(result)))}
    csv_heads = {"rooms.csv": rooms_csv(result).splitlines()[0].split(","),
                 "equipment.csv": equipment_csv(result).splitlines()[0].split(",")}
    return out, csv_heads


@pytest.fixture(scope="module")
def demo_file():
    with resources.as_file(resources.files("fringe") / "data" / "demo_site.toml") as p:
        yield p


@pytest.fixture
def all_outputs(outputs, run_cli, demo_file):
    out, csv_heads = outputs
    out = dict(out)
    # the optional parts too: energy outside a radius, the dump circuit and the vent
    for name, argv in (("energy", ("energy", demo_file, "--json", "--radius-m", 5)),
                       ("quench", ("quench", demo_file, "--json", "--dump-ohm", 0.5,
                                   "--vent-diameter-mm", 100)),
                       ("probe", ("probe", demo_file, "--at", 1, 0, 0, "--json")),
                       ("disturbance", ("disturbance", demo_file, "--mass-kg", 1000,
                                        "--from", 10.8, 9, -2.5, "--to", 10.8, 9, 5,
                                        "--json")),
                       ("survey", ("survey", demo_file, "--readings",
                                   demo_file.with_name("demo_readings.csv"), "--calibrate",
                                   "--json"))):
        code, text, _err = run_cli(*argv)
        assert code == 0
        out[name] = json.loads(text)
    return out, csv_heads


def test_every_json_output_carries_the_advisory(all_outputs):
    out, _ = all_outputs
    for name, d in out.items():
        assert d["advisory"] == ADVISORY_NOTICE, name
        assert "advisory_notice" not in key_names(d), name


def test_shared_keys_mean_the_same(all_outputs):
    out, _ = all_outputs
    s = out["summary.json"]["magnets"][0]
    e = next(m for m in out["energy"]["magnets"] if m["name"] == s["name"])
    q = out["quench"]
    assert e["stored_energy_J"] == pytest.approx(s["stored_energy_J"], rel=1e-5)
    assert q["stored_energy_J"] == pytest.approx(s["stored_energy_J"], rel=1e-5)
    assert e["center_field_T"] == pytest.approx(s["center_field_T"], rel=1e-5)
    assert set(e["zonal_moments"]) == set(s["zonal_moments"])
    for k, v in s["zonal_moments"].items():
        assert e["zonal_moments"][k] == pytest.approx(v, rel=1e-5), k
    assert s["dipole_moment_Am2"] == pytest.approx(s["zonal_moments"]["dipole_Am2"], rel=1e-5)
    summary_quench = out["summary.json"]["quench"][0]
    for k in ("helium_boiled_kg", "oxygen_fraction_worst_case", "helium_inventory_kg"):
        assert summary_quench[k] == pytest.approx(q[k]), k
    # the circuit inductance 2W/I² under one name in energy and in the dump circuit
    assert q["dump_circuit"]["circuit_inductance_H"] == pytest.approx(
        e["circuit_inductance_H"], rel=1e-5)
    assert q["site"] == out["energy"]["site"] == out["summary.json"]["site"]["name"]


def test_every_key_is_in_docs_outputs(all_outputs):
    out, csv_heads = all_outputs
    doc = documented_keys()
    missing = []
    for name, d in out.items():
        for k in key_names(d):
            if k not in doc or name not in doc[k]:
                missing.append((name, k))
    for name, head in csv_heads.items():
        for k in head:
            if k not in doc or name not in doc[k]:
                missing.append((name, k))
    assert not missing, f"not listed in docs/outputs.md: {sorted(missing)}"
