"""The survey fit (fringe.analysis.survey): readings made from the model itself with known
currents, centre and noise, and what the fit must recover from them."""

from __future__ import annotations

import math
import tomllib
from dataclasses import replace

import numpy as np
import pytest

from fringe.analysis import survey as sv
from fringe.field.evaluate import field_at
from fringe.field.extents import threshold_extents_m
from fringe.io.scenario import parse_site
from fringe.model.errors import ArgumentError, ScenarioError
from fringe.model.readings import Readings
from tests.conftest import SMALL_SCENARIO_TOML


@pytest.fixture(scope="module")
def site():
    """The small site with its background field known to be zero (readings made from the
    model alone), so that no Earth's-field term enters the weights."""
    return replace(parse_site(tomllib.loads(SMALL_SCENARIO_TOML), "small.toml"),
                   background_field_uT=(0.0, 0.0, 0.0))


def around(n: int, rng, r=(1.0, 3.0), z_spread=1.5) -> np.ndarray:
    """``n`` points 1–3 m from the small magnet (centre (0, 0, 1)), all round it."""
    d = rng.normal(size=(n, 3))
    d[:, 2] *= z_spread
    d /= np.linalg.norm(d, axis=1)[:, None]
    return d * rng.uniform(*r, n)[:, None] + [0.0, 0.0, 1.0]


def readings_from(magnet, pts, noise, rng, factor=1.0) -> Readings:
    """|B| of ``magnet`` with every current × factor, times exp(normal(0, noise))."""
    b = np.linalg.norm(field_at(magnet.scaled(factor), pts), axis=1)
    return Readings.of(pts, b * np.exp(rng.normal(0.0, noise, len(b))))


def test_compare_gives_model_and_ratio(site):
    rng = np.random.default_rng(0)
    pts = around(12, rng)
    r = readings_from(site.magnets[0], pts, 0.0, rng, factor=1.1)
    res = sv.survey(site, r)
    model = np.linalg.norm(field_at(site, pts), axis=1)
    np.testing.assert_allclose([p.model_T for p in res.points], model, rtol=1e-12)
    # B is linear in the current (Biot–Savart; Jackson Sec. 5.2): every ratio is the factor
    np.testing.assert_allclose([p.ratio for p in res.points], 1.1, rtol=1e-9)
    assert res.rms_log_residual == pytest.approx(math.log(1.1), rel=1e-9)
    assert res.calibration == () and res.calibrated_site is None


def test_fit_returns_the_scale_within_its_standard_error(site):
    """Least-squares theory (Press et al., Numerical Recipes 3rd ed., Sec. 15.4–15.5):
    over many noisy surveys (ŝ − s)/σ̂ is about standard normal, so its mean square is
    near 1 and about 68 % of surveys land within one standard error."""
    z = []
    for seed in range(40):
        rng = np.random.default_rng(100 + seed)
        r = readings_from(site.magnets[0], around(40, rng), 0.03, rng, factor=0.93)
        c = sv.survey(site, r, calibrate=True).calibration[0]
        z.append((c.current_scale - 0.93) / c.current_scale_std)
    z = np.array(z)
    assert np.all(np.abs(z) < 4.0)
    assert 0.5 <= float(np.mean(z**2)) <= 1.6
    assert 0.5 <= float(np.mean(np.abs(z) < 1.0)) <= 0.86


def _mean_std(site, n, noise, seeds=12):
    out = []
    for seed in range(seeds):
        rng = np.random.default_rng(1000 + seed)
        base = around(20, np.random.default_rng(7))   # one geometry, replicated
        pts = np.concatenate([base] * (n // 20))
        r = readings_from(site.magnets[0], pts, noise, rng, factor=1.05)
        res = sv.survey(site, r, calibrate=True)
        assert all(v is not None for v in res.calibration[0].center_offset_m)
        out.append(res.calibration[0].current_scale_std)
    return float(np.mean(out))


def test_standard_error_scales_as_noise_over_sqrt_N(site):
    """σ(ŝ) ∝ σ_noise/√N at a fixed geometry (least-squares theory: the covariance is
    σ²(JᵀJ)⁻¹ and JᵀJ grows as N; Bevington & Robinson 3rd ed., Ch. 7)."""
    base = _mean_std(site, 20, 0.01)
    assert _mean_std(site, 80, 0.01) / base == pytest.approx(0.5, rel=0.2)
    assert _mean_std(site, 20, 0.04) / base == pytest.approx(4.0, rel=0.2)


def test_a_gross_error_is_flagged_and_leaves_the_fit_unchanged(site, monkeypatch):
    """One reading 80 % high (steel nearby, a misplaced probe) is flagged by the 3σ rule
    and the fit equals the fit of the other readings alone (common practice, no source)."""
    rng = np.random.default_rng(5)
    pts = around(30, rng)
    clean = readings_from(site.magnets[0], pts, 0.02, rng, factor=0.97)
    bad_pt = np.array([[1.5, 0.5, 1.4]])
    bad_b = 1.8 * np.linalg.norm(field_at(site.magnets[0].scaled(0.97), bad_pt), axis=1)
    both = Readings.of(np.concatenate([clean.points_m, bad_pt]),
                       np.concatenate([clean.field_T, bad_b]))
    a = sv.survey(site, clean, calibrate=True)
    b = sv.survey(site, both, calibrate=True)
    assert [p.flag for p in b.points] == ["ok"] * 30 + ["outlier"]
    ca, cb = a.calibration[0], b.calibration[0]
    assert cb.current_scale == pytest.approx(ca.current_scale, rel=1e-9)
    assert cb.current_scale_std == pytest.approx(ca.current_scale_std, rel=1e-9)
    np.testing.assert_allclose(cb.center_offset_m, ca.center_offset_m, atol=1e-9)
    # the test can fail: without the rule the gross error moves the scale by > 3σ
    monkeypatch.setattr(sv, "FLAG_SIGMAS", math.inf)
    c = sv.survey(site, both, calibrate=True).calibration[0]
    assert abs(c.current_scale - ca.current_scale) > 3 * ca.current_scale_std


def test_centre_offset_recovered_where_constrained(site):
    """Readings of a magnet moved by (3, −2, 4) cm give back the move (within 3σ) and the
    scale (common practice, no source)."""
    rng = np.random.default_rng(11)
    m = site.magnets[0]
    moved = m.moved(center_m=np.asarray(m.center_m) + [0.03, -0.02, 0.04])
    pts = around(60, rng, r=(0.8, 2.0))
    r = readings_from(moved, pts, 0.01, rng, factor=1.02)
    c = sv.survey(site, r, calibrate=True).calibration[0]
    assert abs(c.current_scale - 1.02) < 3 * c.current_scale_std
    for got, s, want in zip(c.center_offset_m, c.center_offset_std_m, (0.03, -0.02, 0.04),
                            strict=True):
        assert got is not None and abs(got - want) < 3 * s + 1e-4
    assert c.calibrated.center_m == pytest.approx(np.asarray(m.center_m) +
                                                  np.array(c.center_offset_m))
    for a, b in zip(c.calibrated.coils, m.coils, strict=True):
        assert a.current_A == pytest.approx(b.current_A * c.current_scale)


def test_an_axis_the_readings_do_not_constrain_is_not_fitted(site):
    """Readings all in the centre plane of a vertical-axis magnet: |B| is even in z there,
    so a vertical shift changes no reading to first order and cannot be fitted."""
    rng = np.random.default_rng(3)
    ang, rad = rng.uniform(0, 2 * np.pi, 30), rng.uniform(1.0, 3.0, 30)
    pts = np.c_[rad * np.cos(ang), rad * np.sin(ang), np.ones(30)]
    r = readings_from(site.magnets[0], pts, 0.02, rng)
    res = sv.survey(site, r, calibrate=True)
    c = res.calibration[0]
    assert c.center_offset_m[2] is None and c.center_offset_std_m[2] is None
    assert any("along z not fitted" in n for n in res.notes)


def test_calibrated_boundaries_follow_the_scale(site):
    """B is linear in the current: the line t of the magnet scaled by s is the line t/s
    of the original (Biot–Savart; Jackson Sec. 5.2)."""
    rng = np.random.default_rng(2)
    r = readings_from(site.magnets[0], around(25, rng), 0.0, rng, factor=1.2)
    res = sv.survey(site, r, calibrate=True)
    s = res.calibration[0].current_scale
    assert s == pytest.approx(1.2, rel=1e-6)
    for b in res.boundaries_calibrated:
        ax, rad = threshold_extents_m(site.magnets[0], b.threshold_mT * 1e-3 / s)
        assert b.axial_extent_m == pytest.approx(ax, abs=2e-4)
        assert b.radial_extent_m == pytest.approx(rad, abs=2e-4)
    assert {b.threshold_mT for b in res.boundaries_calibrated} == set(
        site.plan.thresholds_mT)


def test_suggested_uncertainty_matches_the_noise(site):
    """With ln-normal noise σ the rms residual is σ, and the suggestion is exp(2σ) − 1
    rounded up to 0.01 (GUM, JCGM 100:2008, Sec. 6.3: k = 2)."""
    rng = np.random.default_rng(9)
    r = readings_from(site.magnets[0], around(200, rng), 0.03, rng)
    res = sv.survey(site, r, calibrate=True)
    assert res.suggested_field_uncertainty in (0.06, 0.07, 0.08)
    assert sv.suggested_uncertainty(0.0) == 0.0
    assert sv.suggested_uncertainty(5.0) == 0.99


def test_reading_inside_the_cryostat_is_refused_naming_the_line(site):
    r = Readings.of([[2.0, 0.0, 1.0], [0.31, 0.0, 1.0]], [1e-3, 0.1])
    r = Readings(r.points_m, r.field_T, r.components_T, r.uncertainty_T, ("a", "b"),
                 ("", ""), (4, 7), "s.csv")
    with pytest.raises(ScenarioError, match=r"^s\.csv: line 7 \(b\): .*magnet 'm1'"):
        sv.survey(site, r)


def test_magnet_option_errors(site):
    r = readings_from(site.magnets[0], around(10, np.random.default_rng(1)), 0.0,
                      np.random.default_rng(1))
    with pytest.raises(ArgumentError, match="`magnet` must be one of the site's magnets"):
        sv.survey(site, r, calibrate=True, magnet="nope")
    with pytest.raises(ArgumentError, match="`magnet` must be given only with calibrate"):
        sv.survey(site, r, magnet="m1")
    with pytest.raises(ArgumentError, match="`readings` must be at least 3 readings"):
        sv.survey(site, Readings.of(r.points_m[:2], r.field_T[:2]), calibrate=True)


def test_a_known_background_field_is_part_of_the_model(site):
    """A meter reads |B_magnet + B_background|; with the background given the model is the
    same sum and the scale comes back exactly (vector superposition, Jackson Sec. 5.3)."""
    bg_uT = (0.0, 19.0, -45.0)
    s_bg = replace(site, background_field_uT=bg_uT)
    rng = np.random.default_rng(8)
    pts = around(20, rng, r=(2.0, 5.0))
    b = np.linalg.norm(field_at(site.magnets[0].scaled(0.9), pts) + np.array(bg_uT) * 1e-6,
                       axis=1)
    res = sv.survey(s_bg, Readings.of(pts, b), calibrate=True)
    assert res.calibration[0].current_scale == pytest.approx(0.9, rel=1e-6)
    model = np.linalg.norm(field_at(site, pts) + np.array(bg_uT) * 1e-6, axis=1)
    np.testing.assert_allclose([p.model_T for p in res.points], model, rtol=1e-12)


def test_an_unknown_earth_field_widens_the_weak_readings_uncertainty(site):
    """No background given: each reading's relative uncertainty gains the Earth's field
    50 µT/√3/|B| in quadrature (a vector of random direction changes |B| by its projection,
    ⟨cos²θ⟩ = 1/3; Earth's field 25–65 µT: NOAA/BGS World Magnetic Model)."""
    no_bg = replace(site, background_field_uT=None)
    rng = np.random.default_rng(6)
    pts = around(12, rng, r=(1.0, 6.0))
    r = readings_from(site.magnets[0], pts, 0.0, rng)
    r = Readings(r.points_m, r.field_T, r.components_T, 0.01 * r.field_T, r.labels, r.notes,
                 r.lines)
    res = sv.survey(no_bg, r)
    want = np.hypot(0.01, 50e-6 / math.sqrt(3.0) / r.field_T)
    np.testing.assert_allclose([p.sigma_rel for p in res.points], want, rtol=1e-12)
    assert any("Earth's field" in n for n in res.notes)
    assert all(p.sigma_rel == pytest.approx(0.01) for p in sv.survey(site, r).points)


def test_an_unknown_background_is_fitted_where_the_readings_constrain_it(site):
    """Readings of the total field (magnet × 0.96 plus an invented Earth's field) reaching
    out to where the Earth's field is comparable: the three background components and the
    scale come back within 3σ (vector superposition; least-squares theory as above)."""
    no_bg = replace(site, background_field_uT=None)
    bg_T = np.array([4e-6, 19e-6, -45e-6])
    rng = np.random.default_rng(12)
    pts = around(40, rng, r=(1.2, 6.0))
    b = np.linalg.norm(field_at(site.magnets[0].scaled(0.96), pts) + bg_T, axis=1)
    r = Readings.of(pts, b * np.exp(rng.normal(0.0, 0.01, len(b))))
    res = sv.survey(no_bg, r, calibrate=True)
    c = res.calibration[0]
    assert abs(c.current_scale - 0.96) < 3 * c.current_scale_std
    assert res.background_field_uT is not None
    for got, s, want in zip(res.background_field_uT, res.background_field_std_uT,
                            bg_T * 1e6, strict=True):
        assert got is not None and abs(got - want) < 3 * s
    assert res.n_flagged == 0
