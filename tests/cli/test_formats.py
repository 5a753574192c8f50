"""``--formats``: which sheet files report, demo, place and energy write (issue 20)."""

from __future__ import annotations

import pytest

from fringe.cli.main import sheet_formats
from fringe.model.constants import SHEET_FORMATS
from tests.conftest import SMALL_SCENARIO_TOML


def test_formats_value_is_parsed_in_a_fixed_order():
    assert sheet_formats("svg,PDF") == ("pdf", "svg")
    assert sheet_formats(" png ") == ("png",)
    assert sheet_formats(",".join(SHEET_FORMATS)) == SHEET_FORMATS


@pytest.mark.parametrize("command", ["demo", "report", "place", "energy"])
@pytest.mark.parametrize("value", ["bmp", "pdf,jpeg", ","])
def test_unknown_format_is_a_usage_error_naming_the_option(run_cli, command, value):
    extra = {"report": ["x.toml", "--out", "o"], "place": ["x.toml", "--magnet", "m",
                                                            "--region", "r"],
             "energy": ["x.toml"]}.get(command, [])
    code, _out, err = run_cli(command, *extra, f"--formats={value}")
    assert code == 2
    assert "--formats" in err and "pdf,png,svg" in err and "Traceback" not in err


@pytest.mark.parametrize("formats, wanted", [
    ("svg", {"svg"}),
    ("pdf", {"pdf"}),
])
def test_report_writes_only_the_chosen_formats(tmp_path, write_file, run_cli, formats, wanted):
    scen = write_file(SMALL_SCENARIO_TOML + "[plan]\ngrid_step_m = 0.25\n")
    out = tmp_path / "o"
    code, _o, err = run_cli("report", scen, "--out", str(out), "--quiet", "--no-fail",
                            "--formats", formats)
    assert code == 0, err
    kinds = {p.suffix.lstrip(".") for p in out.iterdir()} & set(SHEET_FORMATS)
    assert kinds == wanted
    names = {p.name for p in out.iterdir()}
    assert ("report.pdf" in names) == ("pdf" in wanted)
    if "svg" in wanted:
        assert any(n.startswith("plan-") for n in names)
        assert not any(n.startswith("energy-") and n.endswith(".svg") for n in names)
    assert "summary.json" in names             # the tables do not depend on --formats
