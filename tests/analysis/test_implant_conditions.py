"""Implant maps, accessible maxima and implant conditions (fringe.analysis.implants).

References: the maximum principle — each Cartesian component of B is harmonic where there
are no currents, so |B| is subharmonic there and its largest value over the accessible
space (outside the cryostat envelope) lies on the envelope's surface (Evans, *Partial
Differential Equations*, 2nd ed., §2.2.3, for harmonic functions; |B| = sup over unit
vectors of harmonic e·B); checked against a brute-force scan of that surface at many
azimuths with fringe's direct sum.
"""

from __future__ import annotations

import json
import math
import tomllib

import numpy as np
import pytest

from fringe.analysis.implants import (
    accessible_maxima,
    check_condition,
    envelope_rz,
    implant_map,
    site_implants,
)
from fringe.field.evaluate import field_at, field_gradient_at, grad_abs_B_T_per_m
from fringe.io.scenario import parse_site
from fringe.model.errors import ScenarioError
from fringe.model.site import ImplantCondition

SITE = """
[site]
name = "implant test site (invented)"
[[magnet]]
name = "m"
center_m = [0.0, 0.0, 1.2]
axis = [1, 0, 0]
  [[magnet.coil]]
  r_inner_m = 0.30
  r_outer_m = 0.34
  z_min_m = -0.25
  z_max_m = 0.25
  turns = 2000
  current_A = 200.0
"""


@pytest.fixture(scope="module")
def site():
    return parse_site(tomllib.loads(SITE), "implants.toml")


@pytest.fixture(scope="module")
def imap(site):
    return implant_map(site, site.magnets[0])


def test_accessible_field_maximum_is_on_the_envelope_surface(site, imap):
    """Maximum principle: a dense scan of the envelope's surface at 12 azimuths (direct
    sum) finds the same largest |B| as fringe's samples, and no map node beats it."""
    mag = site.magnets[0]
    r_in, r_out, z0, z1 = envelope_rz(mag)
    t = np.linspace(0, 1, 1500)
    rz = np.concatenate([np.column_stack([np.full_like(t, r), z0 + (z1 - z0) * t])
                         for r in (r_in, r_out)]
                        + [np.column_stack([r_in + (r_out - r_in) * t, np.full_like(t, z)])
                           for z in (z0, z1)])
    pts = []
    for phi in np.linspace(0, 2 * math.pi, 12, endpoint=False):
        # magnet axis = site +x: local z → site x, local (ρ, φ) → site (y, z)
        pts.append(np.column_stack([rz[:, 1], rz[:, 0] * np.cos(phi),
                                    1.2 + rz[:, 0] * np.sin(phi)]))
    brute = np.linalg.norm(field_at(site, np.concatenate(pts), method="direct"), axis=1).max()
    mx = accessible_maxima(imap)["field_T"]
    assert mx.value == pytest.approx(brute, rel=2e-3)  # 400 vs 1500 samples a side
    assert np.nanmax(np.where(imap.accessible, imap.field_T, np.nan)) <= mx.value * (1 + 1e-9)
    # the point reported is where that value is
    again = np.linalg.norm(field_at(site, [mx.point_m]), axis=1)[0]
    assert again == pytest.approx(mx.value, rel=1e-4)


def test_map_values_are_the_point_figures(site, imap):
    """Consistency: a map node's |∇|B|| is what probe reports at that site point."""
    j, i = 40, 200
    p = imap.site_point(imap.u_m[i], imap.v_m[j])
    B, J = field_gradient_at(site, [p])
    g = np.linalg.norm(grad_abs_B_T_per_m(B, J), axis=1)[0]
    assert imap.grad_T_per_m[j, i] == pytest.approx(g, rel=1e-9)
    assert not np.any(np.isfinite(imap.field_T[~imap.accessible]))


def test_conditions_at_the_isocentre_and_everywhere(site, imap):
    b0 = np.linalg.norm(field_at(site, [site.magnets[0].center_m]), axis=1)
    mx = accessible_maxima(imap)
    figs = (b0, np.zeros(1))
    loose = ImplantCondition("loose", mx["field_T"].value * 1.01,
                             mx["grad_abs_B_T_per_m"].value * 1.01)
    r = check_condition(loose, [imap], figs)
    assert r.holds_at_isocentre and r.holds_everywhere_accessible and r.worst_ratio <= 1
    assert r.regions["m"].is_empty
    strict = ImplantCondition("strict", float(b0[0]) * 0.9)
    r = check_condition(strict, [imap], figs)
    assert not r.holds_at_isocentre and not r.holds_everywhere_accessible
    # the worst point's ratio is |B| there over the limit (recomputed independently)
    bw = np.linalg.norm(field_at(site, [r.worst_point_m]), axis=1)[0]
    assert r.worst_ratio == pytest.approx(bw / strict.max_field_T, rel=1e-4)
    assert not r.regions["m"].is_empty
    grad_only = ImplantCondition("gradient", 100.0, mx["grad_abs_B_T_per_m"].value * 0.5)
    r = check_condition(grad_only, [imap], figs)
    assert r.holds_at_isocentre and not r.holds_everywhere_accessible
    assert r.worst_ratio == pytest.approx(2.0, rel=1e-9)


def test_scenario_conditions_and_errors(tmp_path):
    text = SITE + """
[plan]
gradient_lines_T_per_m = [5, 1, 1]
[[implant_condition]]
name = "pump"
max_field_T = 0.5
max_grad_abs_B_T_per_m = 3
[[implant_condition]]
name = "clip"
max_field_T = 3
max_force_product_T2_per_m = 50
"""
    s = parse_site(tomllib.loads(text), "c.toml")
    assert [c.name for c in s.implant_conditions] == ["pump", "clip"]
    assert s.plan.gradient_lines_T_per_m == (1.0, 5.0)
    si = site_implants(s, s.plan.gradient_lines_T_per_m)
    names = [c.condition.name for c in si.conditions]
    assert names == ["pump", "clip"]
    for bad, msg in [("max_field_T = -1", "implant_condition[0].max_field_T"),
                     ("max_field_T = 1\nmax_gradient = 2", "not a known key"),
                     ("", "implant_condition[0].max_field_T` is missing")]:
        with pytest.raises(ScenarioError, match=msg.replace("[", r"\[").replace("]", r"\]")):
            parse_site(tomllib.loads(SITE + f'[[implant_condition]]\nname = "x"\n{bad}\n'),
                       "bad.toml")
    with pytest.raises(ScenarioError, match="unique"):
        parse_site(tomllib.loads(SITE + '[[implant_condition]]\nname = "x"\nmax_field_T = 1\n'
                                 '[[implant_condition]]\nname = "x"\nmax_field_T = 2\n'), "d")


def test_report_summary_and_sheets_carry_the_implant_figures(tmp_path, run_cli):
    scen = tmp_path / "s.toml"
    scen.write_text(SITE + '[[implant_condition]]\nname = "pump"\nmax_field_T = 0.01\n',
                    encoding="utf-8")
    code, out, err = run_cli("report", scen, "--out", tmp_path / "rep", "--quiet",
                             "--no-fail")
    assert code == 0, err
    s = json.loads((tmp_path / "rep" / "summary.json").read_text())
    mx = s["magnets"][0]["accessible_maxima"]
    assert set(mx) == {"field_T", "grad_abs_B_T_per_m", "force_product_T2_per_m"}
    assert all(len(v["point_m"]) == 3 and v["value"] > 0 for v in mx.values())
    (c,) = s["implant_conditions"]
    assert c["name"] == "pump" and c["holds_at_isocentre"] is False
    assert (tmp_path / "rep" / "implants-m.png").exists()
    pdf_text = (tmp_path / "rep" / "implants-m.svg").read_text()
    assert "Spatial field gradient around m" in pdf_text


def test_condition_marginal_under_the_field_uncertainty(site, imap):
    # the rule of docs/uncertainty.md (definition, no source): holds in the model, fails
    # for a field (1 + u) times it; |∇|B|| scales like |B|, the force product like |B|²
    b0 = np.linalg.norm(field_at(site, [site.magnets[0].center_m]), axis=1)
    mx = accessible_maxima(imap)
    figs = (b0, np.zeros(1))
    field = ImplantCondition("field, 5 % above the maximum", mx["field_T"].value * 1.05)
    assert not check_condition(field, [imap], figs).marginal              # u = 0
    assert check_condition(field, [imap], figs, 0.10).marginal            # 1.10 > 1.05
    assert not check_condition(field, [imap], figs, 0.04).marginal        # 1.04 < 1.05
    force = ImplantCondition("force, 15 % above", 100.0, None,
                             mx["force_product_T2_per_m"].value * 1.15)
    assert check_condition(force, [imap], figs, 0.08).marginal            # 1.08² = 1.166
    assert not check_condition(force, [imap], figs, 0.07).marginal        # 1.07² = 1.145
    strict = ImplantCondition("strict", mx["field_T"].value * 0.5)
    r = check_condition(strict, [imap], figs, 0.10)
    assert not r.holds_everywhere_accessible and not r.marginal  # fails outright
    assert r.to_dict()["marginal"] is False
