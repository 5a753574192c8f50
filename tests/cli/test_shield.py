"""``fringe shield`` (issue 17, item 5): options, JSON keys, the table, usage errors.

The sweep itself is tested in tests/analysis/test_steel_site.py; here the command's
contract (exit 2 naming the option, JSON keys as the issue fixes them).
"""

from __future__ import annotations

import json

from fringe.analysis.steel import ShieldOption
from fringe.cli.shield import result_dict, text_summary
from fringe.io.scenario import load_site
from fringe.model.constants import ADVISORY_NOTICE
from tests.analysis.test_steel_site import SHIELD_TOML

OPTIONS = (ShieldOption(2.0, 141.66, 3.2, {"upper": 3.2}, 2.05, True),
           ShieldOption(20.0, 1416.6, 0.0, {"upper": 0.0}, 0.31, False))


def test_unknown_steel_exits_2_naming_the_option_and_the_parts(write_file, run_cli):
    path = write_file(SHIELD_TOML)
    code, out, err = run_cli("shield", path, "--steel", "wall", "--thickness-mm", "2,5")
    assert code == 2 and out == ""
    assert "--steel" in err and "'plate'" in err and "'wall'" in err
    assert "Traceback" not in err


def test_bad_thickness_list_exits_2(write_file, run_cli):
    path = write_file(SHIELD_TOML)
    for bad in ("two", "0", "-5,5"):
        code, _, err = run_cli("shield", path, "--steel", "plate", f"--thickness-mm={bad}")
        assert code == 2 and "--thickness-mm" in err, (bad, err)


def test_json_keys_are_the_issues(write_file):
    site = load_site(write_file(SHIELD_TOML))
    doc = json.loads(json.dumps(result_dict(site, "plate", 0.5, OPTIONS)))
    assert doc["advisory"] == ADVISORY_NOTICE
    assert doc["site"] == site.name and doc["steel"] == "plate"
    assert [set(o) for o in doc["options"]] == [{"thickness_mm", "mass_kg", "spill_area_m2",
                                                 "max_field_in_steel_T", "saturated"}] * 2
    assert doc["options"][0]["saturated"] is True and doc["options"][1]["thickness_mm"] == 20


def test_text_table_is_aligned(write_file):
    site = load_site(write_file(SHIELD_TOML))
    text = text_summary(site, "plate", 0.5, OPTIONS)
    lines = text.splitlines()
    head = next(i for i, s in enumerate(lines) if s.startswith("thickness mm"))
    rows = lines[head:head + 3]
    # right-aligned numeric columns: every row ends its thickness and mass at one column
    w = len("thickness mm")
    assert all(r[w - 1] != " " and r[w:w + 2] == "  " for r in rows), rows
    assert "thinnest without spill: 20 mm" in text and ADVISORY_NOTICE in text
