"""Terminal text of ``energy``, ``probe``, ``report`` and ``place``: units scaled to the value,
exact zeros printed as 0, plural forms, labelled and aligned tables, a pasteable block."""

from __future__ import annotations

import re
import tomllib
from pathlib import Path
from types import SimpleNamespace

import numpy as np
import pytest

from fringe.cli.main import main
from fringe.cli.textfmt import ENERGY_ZERO_REL, clean_zero, format_energy_J, plural
from fringe.io.scenario import parse_site

HARBOUR = Path(__file__).resolve().parents[2] / "scenarios" / "harbour-lab.toml"


@pytest.mark.parametrize("value, text", [
    (699.31, "699.3 J"), (0.0, "0 J"), (12_500.0, "12.5 kJ"), (3.2e6, "3.2 MJ"),
    (-4.0e3, "-4 kJ"), (0.5, "0.5 J"),
])
def test_energy_units_scale_with_the_value(value, text):
    assert format_energy_J(value) == text


def test_rounding_noise_of_a_zero_prints_as_zero():
    # -7.5e-19 J between two magnets of ~1e5 J: zero by symmetry (common practice, no source)
    assert format_energy_J(clean_zero(-7.5e-19, 2.7e5, ENERGY_ZERO_REL)) == "0 J"
    assert clean_zero(-12.0, 2.7e5, ENERGY_ZERO_REL) == -12.0  # a real value is kept


def test_plural_forms():
    assert plural(1, "winding") == "1 winding"
    assert plural(2, "winding") == "2 windings"
    assert plural(0, "floor") == "0 floors"


def test_energy_text_of_harbour_lab(capsys):
    assert main(["energy", str(HARBOUR)]) == 0
    text = capsys.readouterr().out
    bench = text[text.index("magnet: bench solenoid"):]
    # 699 J printed in J, not 0.000699 MJ
    assert re.search(r"stored energy W = ½ IᵀMI\s+699(\.\d+)? J\n", bench), bench
    assert "MJ" not in bench.split("interaction")[0]
    assert "1 winding," in bench and "1 windings" not in text
    assert "6 windings," in text
    # the two magnets' interaction is zero by symmetry: no rounding noise such as e-19
    line = next(s for s in text.splitlines() if s.startswith("interaction energy"))
    assert ": 0 J " in line and "e-" not in line
    # labelled inductance matrix: a header of coil labels and each row labelled
    rows = [s for s in text.splitlines() if s.startswith("    coil ")]
    assert [r.split()[1] for r in rows] == ["1", "2", "3", "4", "5", "6", "1"]
    assert any(s.strip().startswith("coil 1") and s.rstrip().endswith("coil 6")
               and s.startswith("        ") for s in text.splitlines())


def test_probe_prints_component_noise_as_zero():
    from fringe.cli.probe import format_table

    B = np.array([[-1.686e-19, 3.0e-20, 0.5], [1e-4, 0.0, 2e-4]])
    table = format_table(np.zeros((2, 3)), B)
    first = table.splitlines()[2]
    assert "e-1" not in first and "-0 " not in first
    cols = first.split("|")[2].split()
    assert cols[:2] == ["0", "0"] and float(cols[2]) == pytest.approx(500.0)
    assert "0.1" in table.splitlines()[3]  # a real small component is kept


def test_report_rooms_table_columns_align():
    from fringe.cli.report import rooms_table
    from fringe.render.sheet import format_field

    rooms = [SimpleNamespace(name="magnet lab", floor="lab floor", access="controlled",
                             max_field_T=1.2, limit_T=None, verdict="controlled"),
             SimpleNamespace(name="seminar room", floor="seminar floor", access="public",
                             max_field_T=2.0e-5, limit_T=5e-4, verdict="ok"),
             SimpleNamespace(name="x", floor="g", access="staff",
                             max_field_T=3.0e-4, limit_T=5e-4, verdict="ok")]
    rows = rooms_table(rooms, format_field)
    for word in ("max", "limit"):
        assert len({r.index(f" {word} ") for r in rows}) == 1, rows
    assert len({r.rindex(" mT  ") for r in rows}) == 1, rows  # the verdict column


STRIP_SITE = """
[[magnet]]
name = "m"
center_m = [0.0, 0.0, 1.0]
axis = [1, 0, 0]
[[magnet.coil]]
r_inner_m = 0.30
r_outer_m = 0.32
z_min_m = -0.25
z_max_m = 0.25
turns = 1000
current_A = 100.0

[plan]
thresholds_mT = [0.5, 1]
grid_step_m = 0.1
band_step_m = 0.5
""" + "".join(
    f'[[room]]\nname = "{n}"\naccess = "{a}"\n'
    f"outline_m = [[{x0}, {y0}], [{x1}, {y0}], [{x1}, {y1}], [{x0}, {y1}]]\n"
    for n, a, x0, y0, x1, y1 in (("strip", "controlled", -5, -1.2, 5, 1.2),
                                 ("north", "open", -5, 1.2, 5, 5),
                                 ("south", "open", -5, -5, 5, -1.2)))


def test_place_text_block_pastes_into_a_scenario(tmp_path, capsys):
    f = tmp_path / "strip.toml"
    f.write_text(STRIP_SITE, "utf-8")
    assert main(["place", str(f), "--magnet", "m", "--region", "strip", "--angles", "0"]) == 0
    text = capsys.readouterr().out
    assert "(s)" not in text
    start = text.index("# scenario block for the best placement")
    block = text[start:text.index("# end of the scenario block", start)]
    body = [s for s in block.splitlines() if s.strip() and not s.startswith("#")]
    assert body[0] == "[[magnet]]"
    assert "turns = 1000" in block and "turns = 1000.0" not in block
    magnet = parse_site(tomllib.loads(block), "pasted.toml").magnets[0]
    assert magnet.name == "m" and magnet.coils[0].turns == 1000


def test_harbour_lab_report_summary_aligned_and_scaled():
    from fringe.analysis.report import compute_report
    from fringe.cli.report import terminal_summary
    from fringe.io.scenario import load_site

    r = compute_report(load_site(HARBOUR))
    text = terminal_summary(r, "out")
    lines = text.splitlines()
    rooms = lines[lines.index("rooms:") + 1:][:len(r.rooms)]
    assert any("seminar floor" in x for x in rooms)
    assert len({x.index(" max ") for x in rooms}) == 1, rooms  # same start column
    bench = next(x for x in lines if x.startswith("magnet bench solenoid"))
    assert re.search(r"stored energy 699 J$", bench), bench  # not 0.000699 MJ
    assert "(s)" not in text
