"""Attraction hazard: gradients of |B|, pull over weight, zone extents and maps."""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy.optimize import brentq
from scipy.special import ellipe, ellipk

from fringe.analysis.attraction import (
    floor_attraction,
    plan_attraction,
    section_attraction,
    site_attraction,
)
from fringe.field.evaluate import field_at
from fringe.field.extents import threshold_extents_m
from fringe.model.errors import FringeInputError
from fringe.model.magnet import Coil, Magnet
from fringe.physics.attraction import (
    DEFAULT_OBJECT,
    DEFAULT_STEP_M,
    MATERIALS,
    OBJECT_KINDS,
    REACH_FACTOR,
    attraction_at,
    attraction_extents_m,
    axial_field_T,
    axial_gradient_T_per_m,
    criterion_text,
    field_and_gradient,
    loop_axial_field_T,
    loop_axial_gradient_T_per_m,
    prolate_demag_factor,
    pull_ratio,
    saturation_field_T,
)

MU0 = 4e-7 * math.pi  # μ₀ to 1e-9 relative (CODATA 2018: 1.00000000055 × 4π·10⁻⁷)


def thin_loop(radius_m: float, ampere_turns: float, center=(0.0, 0.0, 0.0), axis=(0, 0, 1),
              a_m: float = 1e-3) -> Magnet:
    """A 1 mm × 1 mm winding standing in for a filament loop (error O((a/R)²) ~ 1e-7)."""
    c = Coil(radius_m - a_m / 2, radius_m + a_m / 2, -a_m / 2, a_m / 2, 1000.0, ampere_turns / 1000)
    return Magnet("loop", center, axis, (c,))


@pytest.fixture(scope="module")
def demo_magnet(demo_site):
    return demo_site.magnets[0]


# -- gradients ------------------------------------------------------------------------

def test_loop_on_axis_gradient_matches_textbook_derivative():
    # source: B_z = μ₀IR²/(2(R²+z²)^{3/2}) (Jackson 3rd ed. Eq. 5.40), differentiated by
    # hand: dB_z/dz = −3μ₀IR²z/(2(R²+z²)^{5/2}). Off-centre, turned magnet on purpose.
    R, NI = 0.8, 2.0e5
    centre = np.array([1.0, -2.0, 0.5])
    axis = np.array([1.0, 1.0, 0.0]) / math.sqrt(2)
    loop = thin_loop(R, NI, tuple(centre), tuple(axis))
    z = np.array([0.2, 0.45, 0.9, 1.7, 3.5])
    pts = centre + z[:, None] * axis
    bmag, grad = field_and_gradient(loop, pts, step_m=0.005, method="direct")
    expected = loop_axial_gradient_T_per_m(R, NI, z)
    # tolerance 2e-6: thin-winding stand-in (~1e-7) + O(h⁴) difference error (~1e-7)
    np.testing.assert_allclose(grad @ axis, expected, rtol=2e-6)
    np.testing.assert_allclose(np.linalg.norm(grad, axis=1), np.abs(expected), rtol=2e-6)
    np.testing.assert_allclose(bmag, loop_axial_field_T(R, NI, z), rtol=2e-6)
    # hand formula re-derived independently of fringe at one point, z = R:
    # dB/dz = −3μ₀NI R³/(2(2R²)^{5/2}) = −3μ₀NI/(2·2^{5/2}·R²)
    z_eq_R = loop_axial_gradient_T_per_m(R, NI, R)
    assert z_eq_R == pytest.approx(-3 * MU0 * NI / (2 * 2**2.5 * R**2), rel=1e-8)


def test_closed_form_axial_gradient_reduces_to_loop():
    # source: Jackson Eq. 5.40 (loop) — the thick-coil closed form of Montgomery (1969)
    # must tend to it for a thin winding; the difference is O((a/R)²) = 1e-6 here.
    R, NI = 0.5, 1.0e5
    loop = thin_loop(R, NI)
    z = np.array([-2.0, -0.3, 0.0, 0.1, 0.5, 4.0])
    np.testing.assert_allclose(axial_field_T(loop, z), loop_axial_field_T(R, NI, z), rtol=1e-6)
    np.testing.assert_allclose(axial_gradient_T_per_m(loop, z),
                               loop_axial_gradient_T_per_m(R, NI, z), rtol=1e-6, atol=1e-12)


def test_closed_form_axial_field_agrees_with_field_engine(demo_magnet):
    # consistency: closed-form on-axis field vs the current-sheet sum (field engine,
    # radial quadrature error < 1e-4 relative by tests/test_field_core.py)
    local = demo_magnet.moved(center_m=(0, 0, 0), axis=(0, 0, 1))
    z = np.array([0.0, 0.6, 1.2, 2.5, 6.0])
    pts = np.stack([np.zeros_like(z), np.zeros_like(z), z], axis=1)
    np.testing.assert_allclose(axial_field_T(local, z), field_at(local, pts)[:, 2], rtol=1e-4)


def test_gradient_step_converges(demo_magnet):
    # consistency: finite differences of field_at against the closed-form gradient
    # (Montgomery 1969) of the demo magnet on its axis. Plain central differences are
    # O(h²) (error ratio 4 per halving), Richardson O(h⁴) (ratio 16): Press et al.,
    # Numerical Recipes 3rd ed., Sec. 5.7.
    local = demo_magnet.moved(center_m=(0, 0, 0), axis=(0, 0, 1))
    z = np.array([1.2, 2.0])
    pts = np.stack([np.zeros_like(z), np.zeros_like(z), z], axis=1)
    exact = np.abs(axial_gradient_T_per_m(local, z))
    errs = {}
    for rich in (False, True):
        for h in (0.04, 0.02):
            _, g = field_and_gradient(local, pts, step_m=h, richardson=rich, method="direct")
            errs[rich, h] = np.abs(np.linalg.norm(g, axis=1) / exact - 1)
    np.testing.assert_allclose(errs[False, 0.04] / errs[False, 0.02], 4.0, rtol=0.05)
    np.testing.assert_allclose(errs[True, 0.04] / errs[True, 0.02], 16.0, rtol=0.15)
    _, g = field_and_gradient(local, pts, method="direct")  # the default step
    # tolerance 1e-6 relative: the converged Richardson error at h = DEFAULT_STEP_M
    np.testing.assert_allclose(np.linalg.norm(g, axis=1), exact, rtol=1e-6)
    assert DEFAULT_STEP_M == 0.01


def test_fast_engine_gradient_agrees_with_direct_sum(demo_magnet):
    # consistency: the fast field path (error ≤ 1e-4·|B|, fringe.field.fast) differenced
    # at the default step against the direct sheet sum. An engine error ε|B| can move a
    # Richardson difference by ≤ 1.5ε|B|/h, i.e. ≤ 1.5ε·r/(n·h) relative to |∇|B|| ≈ n|B|/r
    # (worst case 2e-2 at r = 4 m, n = 3); measured ≤ 7e-5 on these points, so 1e-3
    # flags a real regression without flaking.
    rng = np.random.default_rng(20261202)
    d = rng.normal(size=(60, 3))
    pts = d / np.linalg.norm(d, axis=1)[:, None] * rng.uniform(1.0, 4.0, 60)[:, None]
    local = demo_magnet.moved(center_m=(0, 0, 0), axis=(0, 0, 1))
    _, g_direct = field_and_gradient(local, pts, method="direct")
    _, g_auto = field_and_gradient(local, pts, method="auto")
    err = np.linalg.norm(g_auto - g_direct, axis=1) / np.linalg.norm(g_direct, axis=1)
    assert np.max(err) < 1e-3


# -- pull over weight -------------------------------------------------------------------

def test_material_constants_have_sources():
    iron = MATERIALS["iron"]
    # ρ(iron) = 7.874 g/cm³ (CRC Handbook of Chemistry and Physics; from memory), 7870 used
    assert iron.density_kg_per_m3 == pytest.approx(7874, rel=1e-3)
    # μ₀M_s(iron, room temperature) = 2.15 T (Chikazumi 1997; Cullity & Graham 2009:
    # M_s = 1714 emu/cm³ = 1.714 MA/m; from memory)
    assert iron.saturation_polarization_T == pytest.approx(2.15, rel=0.01)
    assert "Cullity" in iron.source and "CRC" in iron.source


def test_soft_iron_sphere_threshold_worked_by_hand():
    # Hand calculation (Cullity & Graham 2009: F = (χ_eff V/2μ₀)∇B², sphere χ_eff = 1/N = 3):
    #   ρg = 7870 kg/m³ × 9.80665 m/s² = 77 178.3 N/m³
    #   μ₀ρg = 1.256637e-6 × 77 178.3 = 0.0969857 T²/m
    #   threshold B·dB/dz = μ₀ρg/χ_eff = 0.0969857/3 = 0.0323286 T²/m
    # valid while unsaturated: B < μ₀M_s/3 = 1.2566e-6 × 1.71e6 / 3 = 0.7163 T.
    hand_T2_per_m = 0.0323286
    hand_bsat_T = 0.7163
    sphere = OBJECT_KINDS["sphere"]
    iron = MATERIALS["iron"]
    assert sphere.effective_susceptibility == pytest.approx(3.0)
    assert saturation_field_T(3.0, iron.saturation_A_per_m) == pytest.approx(hand_bsat_T,
                                                                               rel=1e-4)
    # a point where B·dB/dz equals the hand threshold exactly: on a loop's axis, with the
    # textbook B(z) of Jackson Eq. 5.40; B·|dB/dz| = 3z B²/(R²+z²) → solve for z.
    R, NI = 0.5, 1.0e6
    def excess(z):
        return (loop_axial_field_T(R, NI, z) * -loop_axial_gradient_T_per_m(R, NI, z)
                - hand_T2_per_m)
    z_star = brentq(excess, 0.5, 5.0, xtol=1e-12)  # the outer root (excess falls with z)
    assert loop_axial_field_T(R, NI, z_star) < hand_bsat_T  # unsaturated there
    loop = thin_loop(R, NI)
    pts = np.array([[0.0, 0.0, z_star * 0.999], [0.0, 0.0, z_star], [0.0, 0.0, z_star * 1.001]])
    a = attraction_at(loop, pts, "sphere")
    # tolerance: 1e-4 on the ratio (hand threshold printed to 6 digits, thin-loop model 1e-6)
    assert a.ratio[1] == pytest.approx(1.0, abs=1e-4)
    assert a.ratio[0] > 1.0 > a.ratio[2]
    # force product B·|∇|B|| at the crossing equals the hand threshold
    assert a.force_product_T2_per_m[1] == pytest.approx(hand_T2_per_m, rel=1e-4)
    # the sphere's axial extent is that crossing (outermost; 0.1 mm Brent tolerance)
    ax, _ = attraction_extents_m(loop, "sphere")
    assert ax == pytest.approx(z_star, abs=2e-4)


def test_saturated_regime_and_any_shape_bound():
    # saturated: F/V = M_s|∇|B|| (Cullity & Graham 2009) → threshold gradient by hand
    # ρg/M_s = 77 178.3 / 1.71e6 = 0.0451335 T/m, for any shape and any field.
    hand_T_per_m = 0.0451335
    iron = MATERIALS["iron"]
    assert iron.gradient_threshold_T_per_m == pytest.approx(hand_T_per_m, rel=1e-5)
    for b in (1e-3, 0.1, 1.0, 3.0):
        assert pull_ratio(b, hand_T_per_m, "any-shape") == pytest.approx(1.0, rel=1e-5)
    # the sphere above its saturation field follows the same rule, below it the linear one
    assert pull_ratio(1.0, hand_T_per_m, "sphere") == pytest.approx(1.0, rel=1e-5)
    assert pull_ratio(0.1, hand_T_per_m, "sphere") == pytest.approx(3 * 0.1 / MU0 / 1.71e6,
                                                                    rel=1e-6)
    # ordering: any shape ≥ needle ≥ sphere at every field (M non-decreasing in χ_eff)
    b = np.geomspace(1e-4, 5.0, 50)
    r_any, r_needle, r_sph = (pull_ratio(b, 0.1, k) for k in ("any-shape", "needle", "sphere"))
    assert np.all(r_any >= r_needle) and np.all(r_needle >= r_sph)
    assert np.any(r_needle > r_sph)
    assert DEFAULT_OBJECT == "any-shape"


def test_demag_factors():
    # Osborn, Phys. Rev. 67, 351 (1945): sphere N = 1/3; prolate spheroid m = 10 gives
    # N = 0.0203 (tabulated value, from memory); asymptote N → (ln 2m − 1)/m² for m ≫ 1.
    assert prolate_demag_factor(1.0) == pytest.approx(1 / 3)
    assert prolate_demag_factor(1.0 + 1e-4) == pytest.approx(1 / 3, rel=1e-3)
    assert prolate_demag_factor(10.0) == pytest.approx(0.0203, abs=5e-5)
    m = 1000.0
    assert prolate_demag_factor(m) == pytest.approx((math.log(2 * m) - 1) / m**2, rel=1e-3)
    with pytest.raises(FringeInputError, match="aspect_ratio"):
        prolate_demag_factor(0.5)


def test_registry_errors_name_the_choices():
    with pytest.raises(FringeInputError, match="`object` must be one of 'any-shape'"):
        pull_ratio(1.0, 1.0, "paperclip")
    with pytest.raises(FringeInputError, match="`material` must be one of 'iron'"):
        pull_ratio(1.0, 1.0, "sphere", "steel")
    with pytest.raises(FringeInputError, match="step_m"):
        field_and_gradient(thin_loop(1.0, 1.0), [[0, 0, 1.0]], step_m=0.0)
    assert "45.1 mT/m" in criterion_text()
    assert "0.03233 T²/m" in criterion_text("sphere")


# -- extents and maps ----------------------------------------------------------------------

def test_loop_centre_plane_extent_against_elliptic_integrals():
    # source: loop field in its plane, B_z(ρ, 0) = μ₀I/(2π)·[K(k) + (R²−ρ²)/(R−ρ)²·E(k)]/(R+ρ),
    # k² = 4Rρ/(R+ρ)² (Jackson Eq. 5.37 evaluated at z = 0; Smythe Sec. 7.10);
    # B_ρ = 0 and ∂|B|/∂z = 0 there, so |∇|B|| = |dB_z/dρ| (central differences of the
    # elliptic formula with scipy's K, E — independent of fringe's field engine).
    R, NI = 0.5, 1.0e6

    def bz(rho):
        k2 = 4 * R * rho / (R + rho) ** 2
        return (MU0 * NI / (2 * math.pi) / (R + rho)
                * (ellipk(k2) + (R * R - rho * rho) / (R - rho) ** 2 * ellipe(k2)))

    def excess(rho, h=1e-5):
        g = (bz(rho + h) - bz(rho - h)) / (2 * h)
        iron = MATERIALS["iron"]
        return iron.saturation_A_per_m * abs(g) / iron.weight_per_volume_N_per_m3 - 1


    rho_star = brentq(excess, 0.8, 6.0, xtol=1e-9)
    _, rad = attraction_extents_m(thin_loop(R, NI), "any-shape")
    assert rad == pytest.approx(rho_star, abs=5e-4)  # 0.1 mm Brent + thin-winding model


def test_demo_zone_lies_inside_the_3_mT_footprint(demo_magnet):
    # Physical ordering (common practice, no source; estimate in docs/hazards.md): at the
    # zone edge |∇|B|| = ρg/M_s = 45 mT/m, and |B| = r|∇|B||/n with n = r|∇|B||/|B| the
    # local fall-off exponent (3 for a dipole, l+2 for a degree-l multipole). At the
    # 1.5–2.5 m where a shielded whole-body magnet's zone ends, |B| < 3 mT would need
    # n > 25; so the zone lies inside the 3 mT line (the common-practice line for loose
    # ferromagnetic objects), but need not lie inside 10 mT (the demo's centre-plane
    # edge sits near 9 mT: steep shielded fall-off).
    ax, rad = attraction_extents_m(demo_magnet)
    ax3, rad3 = threshold_extents_m(demo_magnet, 3e-3)
    assert 0.9 < ax < ax3 and 0.9 < rad < rad3
    # every object kind's zone lies inside the default (any-shape) zone
    for k in ("needle", "sphere"):
        a, r = attraction_extents_m(demo_magnet, k)
        assert a <= ax and r <= rad
    # the ratio is 1 at the extents (consistency of the two gradient routes on the axis)
    c, e = np.asarray(demo_magnet.center_m), np.asarray(demo_magnet.axis)
    perp = np.cross(e, [0.0, 0.0, 1.0])
    perp /= np.linalg.norm(perp)
    s = attraction_at(demo_magnet, np.array([c + ax * e, c - ax * e, c + rad * perp]))
    np.testing.assert_allclose(s.ratio, 1.0, atol=2e-3)  # 0.1 mm Brent tolerance × slope


def test_zone_reach_is_on_axis_or_centre_plane(demo_magnet):
    # consistency (justifies REACH_FACTOR screening of maps): on a quarter circle in the
    # magnet's (ρ, z) plane just beyond the larger extent, the pull is below the weight in
    # every direction, so the zone's farthest point lies on the axis or in the centre plane.
    ax, rad = attraction_extents_m(demo_magnet)
    local = demo_magnet.moved(center_m=(0, 0, 0), axis=(0, 0, 1))
    th = np.radians(np.arange(0.0, 90.1, 5.0))
    r = 1.01 * max(ax, rad)
    pts = np.stack([r * np.sin(th), np.zeros_like(th), r * np.cos(th)], axis=1)
    assert np.all(attraction_at(local, pts).ratio < 1.0)
    assert REACH_FACTOR >= 1.2


def test_demo_plan_and_section_maps(demo_site, demo_magnet):
    # consistency: on a small plan grid around the magnet at centre height, every node in
    # the zone has |B| ≥ 3 mT (zone inside the 3 mT footprint, see above), and the
    # section along the axis reaches the axial extent to within one grid step.
    c = np.asarray(demo_magnet.center_m)
    x = c[0] + np.linspace(-3.0, 3.0, 25)
    y = c[1] + np.linspace(-2.4, 2.4, 17)
    pm = plan_attraction(demo_site, x, y, [c[2]])
    assert pm.ratio.shape == (17, 25)
    full = plan_attraction(demo_site, x, y, [c[2]], screen=False)
    np.testing.assert_array_equal(pm.ratio >= 1.0, full.ratio >= 1.0)  # screening is exact here
    inside = pm.ratio >= 1.0
    assert inside.any() and not np.isnan(pm.ratio[0, 0])
    assert np.all(pm.field_T[inside] >= 3e-3)
    # the zone polygon spans the axial extent along the axis (site x here), within the
    # marching-squares interpolation on the 0.25 m grid
    fa = floor_attraction(demo_site, "ground", x, y, [c[2]])
    x0, _, x1, _ = fa.geometry.bounds
    ax0, _ = attraction_extents_m(demo_magnet)
    assert x0 == pytest.approx(c[0] - ax0, abs=0.05) and x1 == pytest.approx(c[0] + ax0, abs=0.05)
    assert fa.area_m2 == pytest.approx(fa.geometry.area) and "45.1 mT/m" in fa.criterion
    ax, _ = attraction_extents_m(demo_magnet)
    s = np.linspace(-3.0, 3.0, 61)
    sec = section_attraction(demo_site, c, demo_magnet.axis, s, [c[2] - 0.05, c[2], c[2] + 0.05])
    row = sec.ratio[1]
    reach = np.max(np.abs(s[np.nan_to_num(row) >= 1.0]))
    assert reach == pytest.approx(ax, abs=0.1)  # grid step 0.1 m
    assert "mT/m" in sec.criterion


def test_site_attraction_for_a_report(demo_site, demo_magnet):
    # consistency: the report bundle reuses the zone helper's grids; the section along the
    # axis spans the axial extent, the one across it the radial extent (0.2 m grid, so
    # within the marching-squares interpolation of one step)
    from fringe.analysis.zones import floor_map, magnet_sections
    from fringe.model.building import Floor

    c = np.asarray(demo_magnet.center_m)
    x = c[0] + np.arange(-3.0, 3.01, 0.2)
    y = c[1] + np.arange(-2.4, 2.41, 0.2)
    fm = floor_map(demo_site, Floor("ground", 0.0), x, y, 1.0)
    secs = magnet_sections(demo_site, demo_magnet, 3.0, (c[2] - 2.0, c[2] + 2.0), 0.2)
    sa = site_attraction(demo_site, {"ground": fm}, secs)
    ax, rad = attraction_extents_m(demo_magnet)
    assert sa.extents_m == ((demo_magnet.name, ax, rad),) and sa.object_kind == DEFAULT_OBJECT
    assert sa.floors["ground"].area_m2 > 0
    (along, g_along), (across, g_across) = sa.sections
    s0, _, s1, _ = g_along.bounds
    assert (s1 - s0) / 2 == pytest.approx(ax, abs=0.1)
    s0, _, s1, _ = g_across.bounds
    assert (s1 - s0) / 2 == pytest.approx(rad, abs=0.1)
