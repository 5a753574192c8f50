"""A data-sheet magnet in a report: ``fit_spread`` in summary.json, the sheets drawn with
the outermost model, the quench budget with the largest energy (docs/fit.md)."""

from __future__ import annotations

import json
import tomllib

import pytest

from fringe.analysis.fit_spread import largest_energy_magnet, magnet_fit_spread
from fringe.analysis.quench import budget_for_site
from fringe.analysis.report import compute_report
from fringe.field.extents import threshold_extents_m
from fringe.io.report_files import summary_dict
from fringe.io.scenario import parse_site
from fringe.physics.energy import stored_energy_J

SITE = """
[site]
name = "data-sheet test site"
[[magnet]]
name = "ds"
center_m = [0.0, 0.0, 1.1]
axis = [1, 0, 0]
  [magnet.datasheet]
  center_field_T = 1.5
  shielded = true
  warm_bore_m = 0.6
    [[magnet.datasheet.line]]
    threshold_mT = 0.5
    axial_m = 3.9
    radial_m = 2.1
[plan]
grid_step_m = 0.4
thresholds_mT = [0.1, 0.5, 3]
[[quench]]
magnet = "ds"
helium_L = 1500.0
room_volume_m3 = 180.0
"""


@pytest.fixture(scope="module")
def site():
    return parse_site(tomllib.loads(SITE), "ds.toml")


@pytest.fixture(scope="module")
def report(site):
    return compute_report(site)


def test_loaded_magnet_carries_its_data_sheet_and_rounding(site):
    ds = site.magnets[0].datasheet
    assert ds is not None and ds.lines == ((5e-4, 3.9, 2.1),)
    assert ds.tolerances_m == ((0.05, 0.05),) and ds.center_field_tol_T == pytest.approx(0.05)


def test_summary_lists_the_spread_of_every_line(report):
    d = json.loads(json.dumps(summary_dict(report)))
    sp = d["magnets"][0]["fit_spread"]
    assert sp["models"] >= 5 and sp["within_rounding"] is True
    assert [b["threshold_mT"] for b in sp["boundaries"]] == [0.1, 0.5, 3.0]
    for b in sp["boundaries"]:
        assert b["axial_extent_m"][0] <= b["axial_extent_m"][1]
        assert b["radial_extent_m"][0] <= b["radial_extent_m"][1]
    b05 = sp["boundaries"][1]  # the data-sheet line: within its rounding (+2 mm routes)
    assert 3.85 - 2e-3 <= b05["axial_extent_m"][0] and b05["axial_extent_m"][1] <= 3.95 + 2e-3
    e_lo, e_hi = sp["stored_energy_J"]
    assert 0 < e_lo <= e_hi
    lo, hi = sp["attraction_axial_extent_m"]
    assert 0 < lo <= hi


def test_sheets_use_the_outermost_model(site, report):
    sp = magnet_fit_spread(site.magnets[0], report.thresholds_mT)
    drawn = report.site.magnets[0]
    ax, rad = threshold_extents_m(drawn, 1e-4)
    (_, ax_hi), (_, rad_hi) = sp.boundaries[0][1], sp.boundaries[0][2]
    # the drawn model is the one whose 0.1 mT line spans the largest axial × radial
    # product; whole turns and the direct route move its extents by < 1 % (common
    # practice, no source)
    assert rad == pytest.approx(rad_hi, rel=0.01) or ax == pytest.approx(ax_hi, rel=0.01)
    assert rad > threshold_extents_m(site.magnets[0], 1e-4)[1]  # beyond the best fit's
    assert report.magnets[0].boundaries[0][2] == pytest.approx(rad, rel=1e-6)
    assert "fit spread" in drawn.description


def test_quench_budget_uses_the_largest_energy(site, report):
    sp = magnet_fit_spread(site.magnets[0], report.thresholds_mT)
    w = report.quench[0].stored_energy_J
    assert w == pytest.approx(sp.stored_energy_J[1], rel=0.01)  # whole turns vs not
    assert w >= stored_energy_J(site.magnets[0])
    assert budget_for_site(site, site.quench[0]).stored_energy_J == pytest.approx(w)
    assert largest_energy_magnet(report.site.magnets[0]).datasheet is not None
