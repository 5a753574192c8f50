"""The site nouns (fringe.model.site), the verdict enum (fringe.model.verdict) and the
shape of the scenario reader (explicit section order, no registries, no import cycle)."""

from __future__ import annotations

import ast
import csv
import io
import json
from pathlib import Path

import pytest

import fringe
from fringe.io.scenario import MAGNET_BUILDERS, ROOM_LOADERS, TOP_LEVEL_KEYS, parse_site
from fringe.model import building
from fringe.model.errors import ScenarioError
from fringe.model.magnet import Coil, Magnet
from fringe.model.site import (
    DEFAULT_FLOOR,
    QuenchInputs,
    Site,
    default_settings,
    site_plan,
)
from fringe.model.verdict import Verdict
from tests.conftest import SMALL_SCENARIO_TOML

MAGNET = Magnet("m1", (0.0, 0.0, 1.0), (0.0, 0.0, 1.0), (Coil(0.3, 0.32, -0.2, 0.2, 100, 50.0),))


def test_site_built_in_code_has_scenario_defaults():
    site = Site("in code", (MAGNET,))
    assert site.plan == default_settings()
    assert site.floors == site.rooms == site.equipment == site.room_drawings == site.quench == ()
    plan = site_plan(site)
    assert not plan.floors_declared
    assert [f.name for f in plan.floors] == [DEFAULT_FLOOR.name]
    assert site.quench_inputs("m1") is None


def test_site_fields_from_a_scenario():
    toml = SMALL_SCENARIO_TOML + """
[[floor]]
name = "ground"
elevation_m = 0.0

[[room]]
name = "magnet room"
floor = "ground"
access = "controlled"
outline_m = [[-2, -2], [2, -2], [2, 2], [-2, 2]]

[[equipment]]
name = "scope"
position_m = [3.0, 0.0, 1.0]
limit_mT = 0.5

[[quench]]
magnet = "m1"
helium_L = 100.0
room_volume_m3 = 50.0
"""
    import tomllib

    site = parse_site(tomllib.loads(toml), "s.toml")
    assert [f.name for f in site.floors] == ["ground"]
    assert [r.name for r in site.rooms] == ["magnet room"]
    assert [e.name for e in site.equipment] == ["scope"]
    assert site.quench == (QuenchInputs("m1", 100.0, 50.0),)
    assert site.quench_inputs("m1") == site.quench[0]
    assert site.room_drawings == ()
    assert not hasattr(site, "sections") and not hasattr(site, "section")
    assert site_plan(site).floors_declared


def test_site_magnet_names_the_key_and_the_cli_the_option(tmp_path, capsys):
    site = Site("in code", (MAGNET,), "s.toml")
    with pytest.raises(ScenarioError) as e:
        site.magnet("nope")
    assert str(e.value) == ("s.toml: `magnet` must be one of the site's magnets ('m1'); "
                            "got 'nope'")
    from fringe.cli.main import main

    scen = tmp_path / "s.toml"
    scen.write_text(SMALL_SCENARIO_TOML, encoding="utf-8")
    assert main(["energy", str(scen), "--magnet", "nope"]) == 2
    assert "`--magnet` must be one of the site's magnets ('m1'); got 'nope'" in (
        capsys.readouterr().err)


def test_verdict_writes_as_its_word():
    assert [str(v) for v in Verdict] == ["exceeds", "marginal", "within", "controlled"]
    assert json.dumps({"verdict": Verdict.EXCEEDS, Verdict.WITHIN: 1}) == (
        '{"verdict": "exceeds", "within": 1}')
    buf = io.StringIO()
    csv.writer(buf).writerow(["room", Verdict.CONTROLLED])
    assert buf.getvalue() == "room,controlled\r\n"
    assert f"{Verdict.WITHIN}" == "within" and Verdict.EXCEEDS == "exceeds"


def test_reader_has_fixed_tables_and_no_registries():
    assert TOP_LEVEL_KEYS == ("site", "magnet", "plan", "floor", "room", "room_file",
                              "equipment", "quench", "implant_condition", "steel",
                              "moving_steel",
                              "drawing")
    assert set(ROOM_LOADERS) == {"geojson", "dxf"} and set(MAGNET_BUILDERS) == {"datasheet"}
    with pytest.raises(TypeError):
        ROOM_LOADERS["x"] = None  # type: ignore[index]
    assert not hasattr(building, "ROOM_LOADERS")


def _imports(path: Path) -> set[str]:
    out = set()
    for node in ast.walk(ast.parse(path.read_text(encoding="utf-8"))):
        if isinstance(node, ast.ImportFrom) and node.module:
            out.add(node.module)
        elif isinstance(node, ast.Import):
            out.update(a.name for a in node.names)
    return out


def test_section_parsers_do_not_import_the_scenario_reader():
    """The parsers share fringe.io.reader; only fringe.io.scenario imports them (no cycle)."""
    io_dir = Path(fringe.__file__).parent / "io"
    for name in ("reader", "scenario_plan", "scenario_quench", "scenario_datasheet", "dxf",
                 "scenario_drawing"):
        assert "fringe.io.scenario" not in _imports(io_dir / f"{name}.py"), name
    assert not (io_dir / "sections.py").exists()
