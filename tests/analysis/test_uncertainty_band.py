"""The field uncertainty band in a report: [plan] field_uncertainty, the limits of every
line, and the verdict ``marginal`` (docs/uncertainty.md).

Rules (the definition of the feature; common practice, no source): the true |B| lies
within model × (1 ± u); an item below its limit whose model value × (1 + u) reaches the
limit is ``marginal``; only ``exceeds`` fails a report.
"""

from __future__ import annotations

import json
import tomllib

import numpy as np
import pytest

from fringe.analysis.overall import overall_verdict
from fringe.analysis.report import compute_report
from fringe.analysis.verdicts import VERDICTS, check_equipment, verdict
from fringe.field.evaluate import field_at
from fringe.io.report_files import summary_dict
from fringe.io.scenario import parse_site
from fringe.model.errors import ScenarioError
from fringe.model.verdict import Verdict

SITE = """
[site]
name = "band test site"
[[magnet]]
name = "m"
center_m = [0, 0, 1.2]
axis = [1, 0, 0]
[[magnet.coil]]
r_inner_m = 0.30
r_outer_m = 0.32
z_min_m = -0.25
z_max_m = 0.25
turns = 1000
current_A = 100.0
[plan]
grid_step_m = 0.2
thresholds_mT = [0.1, 0.5]
{plan}
[[floor]]
name = "ground"
elevation_m = 0.0
[[room]]
name = "scan room"
floor = "ground"
access = "controlled"
outline_m = [[-4, -4], [4, -4], [4, 4], [-4, 4]]
[[equipment]]
name = "probe point"
position_m = [0.0, 3.0, 1.2]
limit_mT = {limit}
"""

POINT = (0.0, 3.0, 1.2)


def _field_T(site, p=POINT) -> float:
    return float(np.linalg.norm(field_at(site, np.asarray([p], float))[0]))


def _site(plan: str = "", limit_mT: float = 1.0):
    return parse_site(tomllib.loads(SITE.format(plan=plan, limit=limit_mT)), "band.toml")


def test_verdict_marginal_rule():
    # the rule itself, at and around the edges
    assert verdict(4.6e-4, 5e-4, 0.10) == Verdict.MARGINAL       # 0.506 mT ≥ 0.5 mT
    assert verdict(4.6e-4, 5e-4, 0.05) == Verdict.WITHIN         # 0.483 mT < 0.5 mT
    assert verdict(4.6e-4, 5e-4) == Verdict.WITHIN               # u = 0: never marginal
    assert verdict(5e-4, 5e-4, 0.10) == Verdict.EXCEEDS          # reaching it still exceeds
    assert verdict(1.0, None, 0.10) == Verdict.CONTROLLED
    # worst first: marginal between exceeds and within
    assert VERDICTS.index(Verdict.EXCEEDS) < VERDICTS.index(Verdict.MARGINAL) \
        < VERDICTS.index(Verdict.WITHIN)


def test_equipment_marginal_only_with_uncertainty():
    site = _site()
    b = _field_T(site)
    eq = _site(limit_mT=b * 1e3 / 0.95).equipment  # the model field is 95 % of the limit
    assert check_equipment(site, eq)[0].verdict == Verdict.WITHIN
    assert check_equipment(site, eq, uncertainty=0.10)[0].verdict == Verdict.MARGINAL
    assert check_equipment(site, eq, uncertainty=0.04)[0].verdict == Verdict.WITHIN


@pytest.fixture(scope="module")
def reports():
    base = _site()
    limit = _field_T(base) * 1e3 / 0.95
    r0 = compute_report(_site(limit_mT=limit))
    r1 = compute_report(_site("field_uncertainty = 0.10", limit_mT=limit))
    return r0, r1


def test_zero_uncertainty_changes_nothing(reports):
    r0, _ = reports
    d = json.loads(json.dumps(summary_dict(r0)))
    assert d["field_uncertainty"] == 0.0
    assert d["magnets"][0]["fit_spread"] is None  # a magnet given by coils has no spread
    for b in d["magnets"][0]["boundaries"]:
        assert b["axial_extent_range_m"] == [b["axial_extent_m"]] * 2
        assert b["radial_extent_range_m"] == [b["radial_extent_m"]] * 2
    assert d["equipment"][0]["verdict"] == "within"
    assert "marginal" not in d["verdict_counts"]
    assert r0.overall().line().startswith("verdict: nothing exceeds")
    assert "marginal" not in r0.overall().line()


def test_ten_percent_band_and_marginal_verdict(reports):
    r0, r1 = reports
    d = json.loads(json.dumps(summary_dict(r1)))
    assert d["field_uncertainty"] == pytest.approx(0.10)
    for b in d["magnets"][0]["boundaries"]:
        ai, ao = b["axial_extent_range_m"]
        ri, ro = b["radial_extent_range_m"]
        assert ai < b["axial_extent_m"] < ao and ri < b["radial_extent_m"] < ro
        # a solenoid 4+ radii out is nearly a dipole: the limits within a few per cent of
        # extent × (1 ∓ u)^(1/3) (Jackson Eq. 5.56; 3 % for the l = 3 term at 1.5–3 m)
        assert ao / b["axial_extent_m"] == pytest.approx(1.1 ** (1 / 3), rel=0.03)
        assert ai / b["axial_extent_m"] == pytest.approx(0.9 ** (1 / 3), rel=0.03)
    # the model line itself is the same with and without the band
    assert [b[:3] for b in r1.magnets[0].boundaries] == [b[:3] for b in r0.magnets[0].boundaries]
    assert d["equipment"][0]["verdict"] == "marginal"
    assert d["verdict_counts"].get("marginal") == 1
    ov = r1.overall()
    assert not ov.exceeds and not d["exceeds"]      # marginal never fails a report
    assert "1 marginal" in ov.line() and "probe point" in ov.line()


def test_marginal_floor_when_only_the_outer_limit_leaves_the_controlled_rooms():
    # the scan room's outline placed between the boundary line (0.5 mT) and its outer
    # limit (0.5/1.1 mT) along the axis: the line stays inside, its outer limit does not
    base = _site()
    from fringe.field.extents import threshold_extent_ranges_m, threshold_extents_m
    m = base.magnets[0]
    ax = threshold_extents_m(m, 5e-4)[0]
    ax_out = threshold_extent_ranges_m(m, 5e-4, 0.10)[0][1]
    edge = (ax + ax_out) / 2
    toml = SITE.format(plan="field_uncertainty = 0.10", limit=1.0).replace(
        "[[-4, -4], [4, -4], [4, 4], [-4, 4]]",
        f"[[{-edge}, -4], [{edge}, -4], [{edge}, 4], [{-edge}, 4]]")
    r = compute_report(parse_site(tomllib.loads(toml), "band.toml"), grid_step_m=0.05)
    assert r.outside_controlled_m2["ground"] <= 0.01 < r.outside_controlled_outer_m2["ground"]
    assert r.floor_verdict("ground") == Verdict.MARGINAL
    assert not overall_verdict(r).exceeds


@pytest.mark.parametrize("value, expected", [
    ("1.0", "< 1"), ("1.5", "< 1"), ("-0.1", "≥ 0"), ('"10 %"', "a number")])
def test_bad_field_uncertainty_names_the_key(value, expected):
    with pytest.raises(ScenarioError) as e:
        _site(f"field_uncertainty = {value}")
    msg = str(e.value)
    assert "plan.field_uncertainty" in msg and expected in msg and "band.toml" in msg
