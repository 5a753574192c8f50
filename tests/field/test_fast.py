"""Fast axisymmetric field path: bounded error against the direct sum.

The fast path (fringe.field.fast, used by ``field_at(method="auto")``) promises
|B_auto − B_direct| ≤ 1e-4 |B_direct| at every point. These tests check that promise on
seeded random points at all distances and directions around a shielded magnet (the
demo magnet, whose dipole nearly cancels), an unshielded whole-body solenoid and a small
lab solenoid, plus points chosen next to zeros of the field, and check the pieces
(zonal moments, series truncation bound) against published formulas.
"""

from __future__ import annotations

import math
import tracemalloc

import numpy as np
import pytest

from fringe import Coil, Magnet
from fringe.field.evaluate import field_at
from fringe.field.fast import (
    L_BIG,
    RELATIVE_TOLERANCE,
    axisymmetric_model,
    exterior_tail_bounds_scaled,
    series_field_scaled,
    sheet_zonal_moments_Am,
)
from fringe.field.multipole import zonal_moments_Am
from fringe.model.constants import MU0_T_M_PER_A as MU0
from fringe.model.errors import FringeInputError

TOL = RELATIVE_TOLERANCE  # 1e-4: the bound stated by the fast path (issue 6)


def unshielded_solenoid() -> Magnet:
    """Invented unshielded whole-body solenoid, 0.5 T class, axis y, off the origin."""
    coils = (Coil(0.50, 0.56, -0.80, 0.80, 9000, 60.0),)
    return Magnet("unshielded", (2.0, -1.0, 0.5), (0.0, 1.0, 0.0), coils)


def lab_solenoid() -> Magnet:
    """Invented small lab solenoid (bore 4 cm), tilted axis."""
    coils = (Coil(0.020, 0.032, -0.05, 0.05, 1500, 3.0),)
    return Magnet("lab", (0.3, 0.2, 0.9), (1.0, 1.0, 1.0), coils)


def rel_err(a, b):
    return np.linalg.norm(a - b, axis=1) / np.linalg.norm(b, axis=1)


def random_points(magnet: Magnet, n: int, seed: int, r_min_factor=0.02, r_max_factor=60.0):
    """Points log-uniform in distance (r_min..r_max × R_enc), isotropic directions, plus
    exact on-axis and mid-plane points (where components vanish by symmetry)."""
    rng = np.random.default_rng(seed)
    R = magnet.enclosing_radius_m
    d = rng.normal(size=(n, 3))
    d /= np.linalg.norm(d, axis=1)[:, None]
    k = n // 8
    d[:k] = [0.0, 0.0, 1.0] * rng.choice([-1.0, 1.0], size=(k, 1))          # on axis
    phi = rng.uniform(0, 2 * math.pi, k)
    d[k:2 * k] = np.column_stack([np.cos(phi), np.sin(phi), np.zeros(k)])  # mid-plane
    r = R * np.exp(rng.uniform(math.log(r_min_factor), math.log(r_max_factor), n))
    return magnet.to_site(d * r[:, None])


@pytest.fixture(autouse=True)
def always_fast(monkeypatch):
    """Exercise the fast path even for the few points of a test (normally a new coil set
    is summed directly until 2·10⁴ points have been asked of it)."""
    from fringe.field import fast as fastfield

    monkeypatch.setattr(fastfield, "BUILD_AFTER_POINTS", 0)


@pytest.fixture(scope="module")
def magnets(demo_site):
    return {"demo-shielded": demo_site.magnets[0], "unshielded": unshielded_solenoid(),
            "lab": lab_solenoid()}


@pytest.mark.parametrize("name", ["demo-shielded", "unshielded", "lab"])
def test_auto_within_bound_of_direct_sum_at_random_points(magnets, name):
    # Source: consistency with the direct sum (fringe.field.direct.magnet_field_local_T), the
    # reference the fast path promises to match within 1e-4 relative to |B|.
    m = magnets[name]
    pts = random_points(m, 2500, seed={"demo-shielded": 1, "unshielded": 2, "lab": 3}[name])
    auto = field_at(m, pts)
    ref = field_at(m, pts, method="direct")
    err = rel_err(auto, ref)
    assert np.all(np.isfinite(auto))
    assert err.max() <= TOL, (name, err.max(), pts[np.argmax(err)])


def test_demo_magnet_far_points_use_the_fast_path(magnets):
    # common practice, no source: the far field must not silently fall back to the direct
    # sum everywhere (that would meet the bound but not the purpose). Count fast points by
    # the error estimate the fast path returns.
    from fringe.field.fast import SAFETY_FACTOR, fast_field_site_T

    m = magnets["demo-shielded"]
    pts = random_points(m, 2000, seed=5, r_min_factor=1.7, r_max_factor=30.0)
    b, e = fast_field_site_T(m, np.ascontiguousarray(pts.T))
    accepted = e <= TOL / SAFETY_FACTOR * np.linalg.norm(b, axis=0)
    assert accepted.mean() > 0.99


def test_points_next_to_zeros_of_the_field(magnets):
    # Source: consistency with the direct sum. In the mid-plane of the shielded demo magnet
    # B_rho = 0 by symmetry and B_z changes sign between the main coils and the shield, so
    # |B| has a zero ring there; relative error is hardest next to it. Locate the zero with
    # the direct sum (bisection), then probe points 1e-2..1e-7 m from it.
    m = magnets["demo-shielded"]

    def bz(rho):
        p = m.to_site(np.array([[rho, 0.0, 0.0]]))
        return (field_at(m, p, method="direct") @ np.asarray(m.axis))[0]

    offs = np.array([1e-2, 1e-3, 1e-4, 1e-5, 1e-7])
    # two zeros: just outside the main winding (ρ ≈ 0.53 m) and beyond the shield (≈ 2.3 m)
    for lo, hi in ((0.5205, 0.6), (2.0, 2.6)):
        assert np.sign(bz(lo)) != np.sign(bz(hi))
        for _ in range(50):
            mid = 0.5 * (lo + hi)
            lo, hi = (mid, hi) if np.sign(bz(mid)) == np.sign(bz(lo)) else (lo, mid)
        rho0 = 0.5 * (lo + hi)
        loc = np.concatenate([np.column_stack([rho0 + offs, 0 * offs, 0 * offs]),
                              np.column_stack([rho0 - offs, 0 * offs, 0 * offs]),
                              np.column_stack([rho0 + 0 * offs, 0 * offs, offs])])
        pts = m.to_site(loc)
        err = rel_err(field_at(m, pts), field_at(m, pts, method="direct"))
        assert err.max() <= TOL, rho0


def test_superposed_magnets_that_cancel():
    # Source: consistency with the direct sum. Two identical magnets with opposite currents
    # side by side: on the mirror plane their axial fields cancel exactly, so each magnet's
    # own error must be judged against the *total* |B|.
    a = unshielded_solenoid().moved(center_m=(-2.0, 0.0, 0.0), axis=(0, 0, 1))
    b = a.scaled(-1.0).moved(center_m=(2.0, 0.0, 0.0))
    rng = np.random.default_rng(11)
    pts = np.column_stack([rng.uniform(-1e-3, 1e-3, 300), rng.uniform(-8, 8, 300),
                           rng.uniform(-8, 8, 300)])
    pts = np.concatenate([pts, rng.uniform(-10, 10, (300, 3))])
    err = rel_err(field_at([a, b], pts), field_at([a, b], pts, method="direct"))
    assert err.max() <= TOL


def test_sheet_moments_equal_exact_coil_moments_at_low_degree(magnets):
    # Source: the coil's zonal moments (fringe.field.multipole, exact Gauss-Legendre integration
    # of Smythe's loop formula, Sec. 7.13): the sheet rule integrates r^(l+1) exactly for
    # l ≤ 14 (8-node Gauss-Legendre, A&S 25.4.29), so both agree to rounding there.
    from fringe.field.sources import current_sheets

    m = magnets["demo-shielded"]
    s = current_sheets(m)
    q_sheet = sheet_zonal_moments_Am(s.radius_m, s.z_center_m, s.half_length_m,
                                     s.polarization_T, 13)
    q_exact = zonal_moments_Am(m, 13)
    scale = np.abs(q_exact).max()
    np.testing.assert_allclose(q_sheet, q_exact, rtol=1e-9, atol=1e-12 * scale)
    assert q_sheet[1] == pytest.approx(m.dipole_moment_Am2, rel=1e-9)


def test_series_far_field_is_the_dipole():
    # Source: dipole field B = μ0/4π (3(m·r̂)r̂ − m)/r³ (Jackson, 3rd ed., Eq. 5.56) for a
    # single loop, moment m = I π a², at r = 400 a (next term smaller by (a/r)² ~ 1e-5).
    a, current = 0.3, 50.0
    loop = Coil(a - 1e-6, a + 1e-6, -1e-6, 1e-6, 1.0, current)
    model = axisymmetric_model((loop,))
    rng = np.random.default_rng(3)
    d = rng.normal(size=(50, 3))
    d /= np.linalg.norm(d, axis=1)[:, None]
    r = 400 * a
    x, y, z = (d * r / model.scale_m).T
    got = np.column_stack(series_field_scaled(model.d, 5, x, y, z))
    mom = np.array([0, 0, current * math.pi * a**2])
    exp = MU0 / (4 * math.pi) * (3 * (d @ mom)[:, None] * d - mom) / r**3
    assert rel_err(got, exp).max() < 3e-5


def test_tail_bound_bounds_the_truncation_error(magnets):
    # Source: consistency; the bound is derived from |P_l| ≤ 1 and max|sinθ P_l'|
    # (A&S 22.14.7). The truncated series may differ from the full one by at most the bound.
    m = magnets["demo-shielded"]
    model = axisymmetric_model(m.coils)
    rng = np.random.default_rng(4)
    n = 400
    d = rng.normal(size=(n, 3))
    d /= np.linalg.norm(d, axis=1)[:, None]
    r = np.exp(rng.uniform(math.log(1.3), math.log(40.0), n))
    x, y, z = (d * r[:, None]).T
    full = np.column_stack(series_field_scaled(model.d, L_BIG, x, y, z))
    tails = exterior_tail_bounds_scaled(model.d, 1.0, r)
    for L in (3, 7, 15, 31):
        cut = np.column_stack(series_field_scaled(model.d, L, x, y, z))
        assert np.all(np.linalg.norm(cut - full, axis=1) <= tails[L] * (1 + 1e-9) + 1e-300)


def test_axis_and_isocentre_are_finite_and_symmetric(magnets):
    # Source: symmetry, no source needed (common practice): on the axis B is along the
    # axis; at the isocentre of a symmetric magnet likewise.
    m = magnets["demo-shielded"]
    zs = np.array([0.0, 0.2, 1.0, 1.5, 3.0, 40.0])
    pts = m.to_site(np.column_stack([0 * zs, 0 * zs, zs]))
    b = field_at(m, pts)
    ax = np.asarray(m.axis)
    perp = b - (b @ ax)[:, None] * ax
    assert np.all(np.linalg.norm(perp, axis=1) <= 1e-9 * np.linalg.norm(b, axis=1))


def test_chunk_size_does_not_change_the_result(magnets):
    # common practice, no source: chunking is an implementation detail.
    m = magnets["unshielded"]
    pts = random_points(m, 700, seed=8)
    a, b = field_at(m, pts, chunk_size=97), field_at(m, pts)
    np.testing.assert_allclose(a, b, rtol=1e-12, atol=1e-15 * np.abs(b).max())


def test_peak_memory_does_not_grow_with_points(magnets):
    # common practice, no source: bounded memory means the extra memory beyond the
    # output is the same for 50k and 200k points (tracemalloc sees numpy's buffers).
    m = magnets["demo-shielded"]
    field_at(m, np.zeros((1, 3)) + 10.0)            # build the cached model first
    rng = np.random.default_rng(2)

    def extra(n):
        pts = np.asarray(m.center_m) + rng.uniform(3.0, 20.0, (n, 3))
        tracemalloc.start()
        field_at(m, pts)
        _, peak = tracemalloc.get_traced_memory()
        tracemalloc.stop()
        return peak - n * 3 * 8

    small, large = extra(50_000), extra(200_000)
    assert large < 1.5 * small + 1e6


def test_unknown_method_is_refused_with_the_choices():
    # common practice, no source: one message form naming the valid choices.
    with pytest.raises(FringeInputError, match="`method` must be one of auto, direct"):
        field_at(lab_solenoid(), [[0, 0, 1.0]], method="fast-ish")


def test_disk_cache_round_trip(tmp_path, monkeypatch):
    # common practice, no source: a model read back from the disk cache gives the same
    # field as the one built; "off" disables the cache.
    from fringe.field import fast as fastfield
    from fringe.io.model_cache import DiskModelStore

    monkeypatch.setattr(fastfield, "_STORE", DiskModelStore())

    coils = (Coil(0.011, 0.013, -0.02, 0.03, 300, 2.0),)      # asymmetric, tiny
    pts = np.array([[0.0, 0.0, 0.0], [0.01, 0.0, 0.05], [0.1, 0.2, -0.3]])
    m = Magnet("c", (0.0, 0.0, 0.0), (0.0, 0.0, 1.0), coils)
    monkeypatch.setenv("FRINGE_CACHE_DIR", str(tmp_path))
    fastfield.axisymmetric_model.cache_clear()
    built = field_at(m, pts)
    assert len(list(tmp_path.glob("model-*.npz"))) == 1
    fastfield.axisymmetric_model.cache_clear()
    np.testing.assert_array_equal(field_at(m, pts), built)
    monkeypatch.setenv("FRINGE_CACHE_DIR", "off")
    fastfield.axisymmetric_model.cache_clear()
    for f in tmp_path.glob("model-*.npz"):
        f.unlink()
    np.testing.assert_array_equal(field_at(m, pts), built)
    assert not list(tmp_path.glob("model-*.npz"))
    fastfield.axisymmetric_model.cache_clear()


@pytest.mark.parametrize("name", ["demo-shielded", "lab"])
def test_gradient_matches_differences_of_the_direct_sum(magnets, name):
    # Source: consistency with central differences of the direct sum (fringe.field.evaluate);
    # outside windings J must also be symmetric and traceless: ∇×B = 0 and ∇·B = 0
    # (Jackson, 3rd ed., Eqs. 5.22 and 5.5).
    from fringe.field.evaluate import field_gradient_at, points_in_windings

    m = magnets[name]
    pts = random_points(m, 600, seed=21, r_min_factor=0.05, r_max_factor=40.0)
    pts = pts[~points_in_windings(m, pts, margin_m=0.02 * m.enclosing_radius_m)]
    b, jac = field_gradient_at(m, pts)
    b_ref, jac_ref = field_gradient_at(m, pts, method="direct")
    # gradient scale: |J| plus |B|/R_enc (near the isocentre the field is nearly uniform,
    # J → 0, and interpolation noise of ~1e-7 |B| dominates a purely relative measure)
    size = (np.linalg.norm(jac_ref, axis=(1, 2))
            + np.linalg.norm(b_ref, axis=1) / m.enclosing_radius_m)
    assert np.max(np.linalg.norm(jac - jac_ref, axis=(1, 2)) / size) < 1e-3
    assert rel_err(b, b_ref).max() <= TOL
    assert np.max(np.abs(np.trace(jac, axis1=1, axis2=2)) / size) < 1e-3
    assert np.max(np.linalg.norm(jac - jac.transpose(0, 2, 1), axis=(1, 2)) / size) < 1e-3


def test_gradient_of_the_far_field_is_the_dipole_gradient():
    # Source: gradient of the dipole field B = μ0/4π (3(m·r̂)r̂ − m)/r³ (Jackson Eq. 5.56),
    # differentiated analytically: ∂_j B_i = 3μ0/(4π r⁴)[m_j r̂_i + m_i r̂_j + (m·r̂)(δ_ij
    # − 5 r̂_i r̂_j)] (next multipole smaller by (a/r)² ~ 1e-5 at r = 300 a).
    from fringe.field.evaluate import field_gradient_at

    a, current = 0.2, 40.0
    loop = Magnet("loop", (0.0, 0.0, 0.0), (0.0, 0.0, 1.0),
                  (Coil(a - 1e-6, a + 1e-6, -1e-6, 1e-6, 1.0, current),))
    rng = np.random.default_rng(9)
    d = rng.normal(size=(40, 3))
    d /= np.linalg.norm(d, axis=1)[:, None]
    r = 300 * a
    _, jac = field_gradient_at(loop, d * r)
    mom = np.array([0.0, 0.0, current * math.pi * a**2])
    mr = d @ mom
    eye = np.eye(3)
    exp = 3 * MU0 / (4 * math.pi * r**4) * (
        np.einsum("j,ni->nij", mom, d) + np.einsum("i,nj->nij", mom, d)
        + mr[:, None, None] * (eye[None] - 5 * np.einsum("ni,nj->nij", d, d)))
    err = np.linalg.norm(jac - exp, axis=(1, 2)) / np.linalg.norm(exp, axis=(1, 2))
    assert err.max() < 1e-4


def test_few_points_on_a_new_coil_set_use_the_direct_sum(monkeypatch, tmp_path):
    # common practice, no source: building a model costs about 2·10⁴ direct points, so
    # a handful of points on an unseen coil set (a fit iteration) is summed directly, and
    # the model is built once the points asked of that coil set pass the threshold.
    from fringe.field import fast as fastfield
    from fringe.io.model_cache import DiskModelStore

    monkeypatch.setattr(fastfield, "_STORE", DiskModelStore())
    monkeypatch.setattr(fastfield, "BUILD_AFTER_POINTS", 1000)
    monkeypatch.setenv("FRINGE_CACHE_DIR", str(tmp_path))
    m = Magnet("new", (0.0, 0.0, 0.0), (0.0, 0.0, 1.0),
               (Coil(0.0151, 0.0172, -0.031, 0.029, 123, 1.7),))
    pts = random_points(m, 600, seed=30, r_min_factor=2.0)
    np.testing.assert_array_equal(field_at(m, pts), field_at(m, pts, method="direct"))
    assert not list(tmp_path.glob("model-*.npz"))           # nothing built yet
    b = field_at(m, pts)                                      # 1200 points asked: build
    assert len(list(tmp_path.glob("model-*.npz"))) == 1
    assert rel_err(b, field_at(m, pts, method="direct")).max() <= TOL


def test_scaled_currents_share_one_model(magnets):
    # Source: B is linear in the currents (Biot-Savart); a magnet with all currents
    # scaled by −2.5 reuses the unit-current model and gives −2.5 × the field.
    m = magnets["unshielded"]
    pts = random_points(m, 300, seed=31)
    np.testing.assert_allclose(field_at(m.scaled(-2.5), pts), -2.5 * field_at(m, pts),
                               rtol=1e-12, atol=1e-18)


@pytest.mark.parametrize("seed", [3, 9])
def test_random_coil_sets_within_bound(seed):
    # Source: consistency with the direct sum, on invented coil sets drawn from a seeded
    # generator (1–4 coils, thin to thick, short to long, either current sign, half of
    # them with a mirror twin, random axis and centre) — geometry the fixed magnets above
    # do not cover.
    rng = np.random.default_rng(seed)
    coils = []
    for _ in range(int(rng.integers(1, 5))):
        ri = rng.uniform(0.05, 1.0)
        z0, length = rng.uniform(-0.8, 0.8), rng.uniform(0.01, 0.8)
        c = Coil(ri, ri * (1 + rng.uniform(0.005, 0.3)), z0, z0 + length,
                 int(rng.integers(10, 3000)), float(rng.choice([-1, 1]) * rng.uniform(10, 300)))
        coils.append(c)
        if rng.random() < 0.5:
            coils.append(Coil(c.r_inner_m, c.r_outer_m, -c.z_max_m, -c.z_min_m, c.turns,
                              c.current_A))
    m = Magnet("random", tuple(rng.uniform(-3, 3, 3)), tuple(rng.normal(size=3)), tuple(coils))
    pts = np.concatenate([random_points(m, 700, seed=seed, r_min_factor=0.05, r_max_factor=3.0),
                          random_points(m, 200, seed=seed + 1, r_min_factor=3.0,
                                        r_max_factor=300.0)])
    err = rel_err(field_at(m, pts), field_at(m, pts, method="direct"))
    assert err.max() <= TOL


def test_points_just_outside_the_windings(magnets):
    # Source: consistency with the direct sum where the table is hardest to trust: points
    # 0.5–8 table steps (R_enc/100) outside each winding of the shielded demo magnet.
    m = magnets["demo-shielded"]
    rng = np.random.default_rng(12)
    h = m.enclosing_radius_m / 100
    loc = []
    for c in m.coils:
        n = 250
        side = rng.integers(0, 4, n)
        d = rng.uniform(0.5 * h, 8 * h, n)
        rr = np.where(side == 0, c.r_inner_m - d, np.where(
            side == 1, c.r_outer_m + d, rng.uniform(c.r_inner_m - 8 * h, c.r_outer_m + 8 * h, n)))
        zz = np.where(side == 2, c.z_min_m - d, np.where(
            side == 3, c.z_max_m + d, rng.uniform(c.z_min_m - 8 * h, c.z_max_m + 8 * h, n)))
        ph = rng.uniform(0, 2 * math.pi, n)
        loc.append(np.column_stack([rr * np.cos(ph), rr * np.sin(ph), zz]))
    pts = m.to_site(np.concatenate(loc))
    pts = pts[~m.contains_points(pts)]
    err = rel_err(field_at(m, pts), field_at(m, pts, method="direct"))
    assert err.max() <= TOL


def test_points_on_winding_corners_are_finite(magnets):
    # common practice, no source: a grid node exactly on a winding's corner (round
    # coordinates do that) meets a current-sheet end where the closed-form kernel divides
    # by zero; B is continuous there, so the result must be finite and match a point
    # 1e-6 m away to the field's local variation (~1e-5 relative).
    m = magnets["demo-shielded"]
    c = m.coils[0]
    loc = np.array([[c.r_outer_m, 0.0, c.z_max_m], [c.r_inner_m, 0.0, c.z_min_m],
                    [c.r_outer_m, 0.0, 0.5 * (c.z_min_m + c.z_max_m)]])
    b = field_at(m, m.to_site(loc))
    near = field_at(m, m.to_site(loc + 1e-6))
    assert np.all(np.isfinite(b))
    assert rel_err(b, near).max() < 1e-3


class _MemoryStore:
    """A model store in a dict, recording what is asked of it."""

    def __init__(self):
        self.models = {}
        self.calls = []

    def has(self, key):
        self.calls.append(("has", key))
        return key in self.models

    def load(self, key):
        self.calls.append(("load", key))
        return self.models.get(key)

    def save(self, key, model):
        self.calls.append(("save", key))
        self.models[key] = model


def test_model_store_is_pluggable_and_asked_whether_it_holds_a_model(monkeypatch):
    # common practice, no source: the field layer keeps models through whatever store is
    # installed (no file access of its own); a model in the store is served at once.
    from fringe.field import fast as fastfield

    store = _MemoryStore()
    monkeypatch.setattr(fastfield, "_STORE", None)
    assert fastfield.set_model_store(store) is None
    assert fastfield.model_store() is store
    coils = (Coil(0.021, 0.024, -0.03, 0.02, 200, 1.0),)
    m = Magnet("s", (0.0, 0.0, 0.0), (0.0, 0.0, 1.0), coils)
    key = fastfield.model_key(coils)
    fastfield.axisymmetric_model.cache_clear()
    built = fastfield.axisymmetric_model(coils)
    assert store.calls == [("load", key), ("save", key)]
    fastfield.axisymmetric_model.cache_clear()
    fastfield._memory_keys.clear()
    assert fastfield.axisymmetric_model(coils) is built          # served by the store
    fastfield.axisymmetric_model.cache_clear()
    fastfield._memory_keys.clear()
    monkeypatch.setattr(fastfield, "BUILD_AFTER_POINTS", 10**9)
    assert fastfield.model_wanted(coils, 1)                     # the store holds it
    assert ("has", key) in store.calls
    assert not fastfield.model_wanted((Coil(0.3, 0.4, -0.1, 0.1, 10, 1.0),), 1)
    fastfield.axisymmetric_model.cache_clear()
    pts = np.array([[0.0, 0.0, 0.5], [0.1, 0.0, 0.3]])
    np.testing.assert_array_equal(field_at(m, pts), field_at(m, pts))


def test_model_arrays_round_trip():
    # common practice, no source: to_arrays/from_arrays keep every number of the model.
    from fringe.field import fast as fastfield

    coils = (Coil(0.011, 0.013, -0.02, 0.03, 300, 1.0),)
    model = fastfield.axisymmetric_model(coils)
    back = fastfield.AxisymmetricModel.from_arrays(model.to_arrays())
    for name in ("d", "band_edges", "band_lmax", "band_err", "windings_scaled"):
        np.testing.assert_array_equal(getattr(back, name), getattr(model, name))
    assert back.scale_m == model.scale_m
    np.testing.assert_array_equal(back.table.values, model.table.values)
    np.testing.assert_array_equal(back.table.error, model.table.error)
    assert (back.table.rho0, back.table.z0, back.table.inv_h, back.table.n_rho,
            back.table.n_z) == (model.table.rho0, model.table.z0, model.table.inv_h,
                                model.table.n_rho, model.table.n_z)


def test_disk_store_is_installed_once_by_the_program_and_the_api(monkeypatch, write_file,
                                                                capsys):
    # common practice, no source: the command line and the first use of the public API
    # install the disk store; installing again keeps whatever store is in place.
    import fringe
    from fringe.cli.main import main
    from fringe.field import fast as fastfield
    from fringe.io.model_cache import DiskModelStore, install
    from tests.conftest import SMALL_SCENARIO_TOML

    monkeypatch.setattr(fastfield, "_STORE", None)
    install()
    first = fastfield.model_store()
    assert isinstance(first, DiskModelStore)
    install()
    assert fastfield.model_store() is first
    monkeypatch.setattr(fastfield, "_STORE", None)
    monkeypatch.delitem(fringe.__dict__, "field_at", raising=False)
    assert callable(fringe.field_at)
    assert isinstance(fastfield.model_store(), DiskModelStore)
    monkeypatch.setattr(fastfield, "_STORE", None)
    assert main(["probe", str(write_file(SMALL_SCENARIO_TOML)), "--at", "0", "0", "3"]) == 0
    assert isinstance(fastfield.model_store(), DiskModelStore)
    capsys.readouterr()
