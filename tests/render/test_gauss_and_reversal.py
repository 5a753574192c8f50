"""``[plan] show_gauss`` (field values also in gauss) and the field-reversal note on sections.

1 mT = 10 G by the definition of the units (1 T = 10⁴ G; common practice, no source).
The actively shielded demo magnet's centre-plane field passes through zero outside its
shield coils, where the shield pair's return field cancels the main coils' field (the
design aim of active shielding: common practice, no source); a lone solenoid's field
outside its winding only falls with distance (dipole far field, Jackson, Classical
Electrodynamics, 3rd ed., §5.6).
"""

from __future__ import annotations

import io

import matplotlib
import numpy as np
import pytest

from fringe.analysis.zones import field_reversal_m, magnet_sections
from fringe.io.scenario import load_site
from fringe.model.errors import ScenarioError
from fringe.render import drawing as dr
from fringe.render.report import _reversal_note
from fringe.render.sheet import format_field, format_mT
from tests.conftest import SMALL_SCENARIO_TOML


def _svg_text(fig) -> str:
    buf = io.StringIO()
    with matplotlib.rc_context({"svg.fonttype": "none"}):
        fig.savefig(buf, format="svg")
    return buf.getvalue()


def test_show_gauss_parses_as_a_boolean_default_false(write_file):
    assert load_site(write_file(SMALL_SCENARIO_TOML)).plan.show_gauss is False
    on = load_site(write_file(SMALL_SCENARIO_TOML + "\n[plan]\nshow_gauss = true\n"))
    assert on.plan.show_gauss is True
    off = load_site(write_file(SMALL_SCENARIO_TOML + "\n[plan]\nshow_gauss = false\n"))
    assert off.plan.show_gauss is False


@pytest.mark.parametrize("value", ['"yes"', "1", "[true]"])
def test_show_gauss_rejects_non_booleans_naming_the_key(write_file, value):
    with pytest.raises(ScenarioError, match=r"plan\.show_gauss"):
        load_site(write_file(SMALL_SCENARIO_TOML + f"\n[plan]\nshow_gauss = {value}\n"))


def test_gauss_formatting():
    # 1 mT = 10 G (definition of the units)
    assert format_mT(0.5, 1, show_gauss=True) == "0.5 to 1 mT (5 to 10 G)"
    assert format_mT(0.5, show_gauss=True) == "0.5 mT (5 G)"
    assert format_mT(0.5) == "0.5 mT"
    assert format_field(0.0005, show_gauss=True) == "0.5 mT (5 G)"
    assert format_field(1.5, show_gauss=True) == "1.5 T (15000 G)"
    assert format_field(0.0005) == "0.5 mT"


def _dipole_plan():
    x = np.linspace(-4.0, 4.0, 81)
    y = np.linspace(-3.0, 3.0, 61)
    X, Y = np.meshgrid(x, y)
    r = np.hypot(X, Y) + 0.3
    return x, y, 2e-3 / r ** 3  # |B| in T falling as 1/r³, 2 mT at 1 m


@pytest.mark.parametrize("on", [True, False])
def test_gauss_text_on_a_plan_sheet_only_when_asked(on):
    x, y, b = _dipole_plan()
    info = dr.SheetInfo(title="Floor plan: test", site_name="test site")
    svg = _svg_text(dr.plan_sheet(x, y, b, info, thresholds_mT=(0.5, 1, 3),
                                  boundary_mT=0.5, show_gauss=on))
    for text in ("0.5 to 1 mT (5 to 10 G)", "at least 3 mT (30 G)",
                 "0.5 mT (5 G): controlled access area boundary"):
        assert (text in svg) is on, text
    assert "0.5 to 1 mT" in svg


@pytest.fixture(scope="module")
def demo_sections(demo_site):
    m = demo_site.magnets[0]
    c = m.center_m
    along, across = magnet_sections(demo_site, m, 5.0, (c[2] - 2.0, c[2] + 2.0), 0.2)
    return m, along, across


def test_reversal_note_on_the_shielded_demo_across_section(demo_sections):
    m, _along, across = demo_sections
    note = _reversal_note(across, m)
    assert len(note) == 1
    assert "passes through zero" in note[0] and "not a gap in the calculation" in note[0]
    d = field_reversal_m(across.s_m, across.z_m, across.field_T, across.origin_m[2], 1.2)
    assert d is not None and 1.5 < d < 3.5  # outside the shield coils (r ≤ 0.96 m)
    info = dr.SheetInfo(title="Section across the axis", site_name="test site")
    svg = _svg_text(dr.section_sheet(across.s_m, across.z_m, across.field_T, info,
                                     notes=note))
    assert "passes through zero" in svg


def test_no_reversal_note_for_an_unshielded_solenoid(write_file):
    site = load_site(write_file(SMALL_SCENARIO_TOML))
    m = site.magnets[0]
    for sec in magnet_sections(site, m, 4.0, (-1.0, 3.0), 0.1):
        assert _reversal_note(sec, m) == []
