"""Property-based invariants of the field engine (hypothesis).

Random small magnets (1-3 coils, never a winding through the axis) and random points
outside the windings. Random draws are hypothesis-controlled; the points come from a
numpy generator seeded by a hypothesis-drawn integer, so every failure is reproducible.

* superposition: coils split over two magnets give the same field as one magnet;
  a site of two magnets is the sum of each (also through the fast path);
* linearity in current (and sign reversal);
* translation and rotation invariance: moving/turning a magnet moves/turns its field;
* Maxwell: ∇·B = 0 everywhere and ∇×B = 0 outside windings (finite differences);
* the closed-form centre field used by the scenario's plausibility warning agrees
  with the engine.

The direct sum (``method="direct"``) is used for random magnets: the fast path builds a
table per new coil set (~1 s), which only pays off for a fixed magnet.
"""

from __future__ import annotations

import numpy as np
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st
from scipy.spatial.transform import Rotation

from fringe.field.evaluate import field_at
from fringe.model.magnet import Coil, Magnet

SETTINGS = settings(max_examples=20, deadline=None,
                    suppress_health_check=[HealthCheck.too_slow])

# Round-off tolerance for two evaluations of the same sum in different frames: float64
# coordinates (≈1e-16 relative) amplified by the closed-form kernel near its sheets.
# Common practice, no source.
RTOL_ROUNDOFF = 1e-9


@st.composite
def coils(draw):
    r_in = draw(st.floats(0.05, 1.0))
    thick = draw(st.floats(0.005, 0.2))
    z0 = draw(st.floats(-0.8, 0.6))
    length = draw(st.floats(0.05, 0.6))
    turns = draw(st.integers(1, 3000))
    current = draw(st.floats(1.0, 300.0)) * draw(st.sampled_from([-1.0, 1.0]))
    return Coil(r_in, r_in + thick, z0, z0 + length, float(turns), current)


finite = st.floats(-1.0, 1.0)
axes = st.tuples(finite, finite, finite).filter(lambda a: np.linalg.norm(a) > 0.1)
centres = st.tuples(*(st.floats(-5.0, 5.0),) * 3)


@st.composite
def magnets(draw, max_coils=3):
    return Magnet("h", draw(centres), draw(axes),
                  tuple(draw(st.lists(coils(), min_size=1, max_size=max_coils))))


def points_around(magnets_, seed: int, n: int = 16, margin_m: float = 0.01) -> np.ndarray:
    """n points 0.1–4 m from the first magnet's centre, none inside (or near) a winding."""
    rng = np.random.default_rng(seed)
    c = np.asarray(magnets_[0].center_m)
    d = rng.normal(size=(4 * n, 3))
    d /= np.linalg.norm(d, axis=1)[:, None]
    p = c + d * rng.uniform(0.1, 4.0, size=(4 * n, 1))
    ok = np.ones(len(p), dtype=bool)
    for m in magnets_:
        ok &= ~m.contains_points(p, margin_m)
    return p[ok][:n]


def assert_close_fields(actual, expected, rtol):
    scale = np.max(np.linalg.norm(expected, axis=1))
    np.testing.assert_allclose(actual, expected, rtol=rtol, atol=rtol * scale)


@SETTINGS
@given(m=magnets(max_coils=3), seed=st.integers(0, 2**32 - 1))
def test_superposition_over_coils(m, seed):
    p = points_around([m], seed)
    parts = [Magnet(f"part{i}", m.center_m, m.axis, (c,)) for i, c in enumerate(m.coils)]
    whole = field_at(m, p, method="direct")
    summed = sum(field_at(q, p, method="direct") for q in parts)
    # superposition of linear fields (Jackson Sec. 5.3), round-off only
    assert_close_fields(whole, summed, RTOL_ROUNDOFF)
    assert_close_fields(field_at(parts, p, method="direct"), summed, RTOL_ROUNDOFF)


@SETTINGS
@given(m=magnets(), k=st.floats(-20.0, 20.0).filter(lambda k: abs(k) > 1e-3),
       seed=st.integers(0, 2**32 - 1))
def test_linear_in_current(m, k, seed):
    p = points_around([m], seed)
    b1 = field_at(m, p, method="direct")
    bk = field_at(m.scaled(k), p, method="direct")
    # B is linear in the source current (Biot-Savart law, Jackson Eq. 5.14)
    assert_close_fields(bk, k * b1, RTOL_ROUNDOFF)


@SETTINGS
@given(m=magnets(), shift=st.tuples(*(st.floats(-20.0, 20.0),) * 3),
       seed=st.integers(0, 2**32 - 1))
def test_translation_invariance(m, shift, seed):
    p = points_around([m], seed)
    d = np.asarray(shift)
    moved = m.moved(center_m=tuple(np.asarray(m.center_m) + d))
    # translating source and points together leaves B unchanged (homogeneity of space)
    assert_close_fields(field_at(moved, p + d, method="direct"),
                        field_at(m, p, method="direct"), RTOL_ROUNDOFF)


@SETTINGS
@given(m=magnets(), rot_seed=st.integers(0, 2**32 - 1), seed=st.integers(0, 2**32 - 1))
def test_rotation_invariance(m, rot_seed, seed):
    R = Rotation.random(random_state=rot_seed)
    c = np.asarray(m.center_m)
    p = points_around([m], seed)
    turned = m.moved(axis=tuple(R.apply(np.asarray(m.axis))))
    b = field_at(m, p, method="direct")
    b_turned = field_at(turned, c + R.apply(p - c), method="direct")
    # B is a vector field: turning the source turns the field with it (isotropy of space)
    assert_close_fields(b_turned, R.apply(b), RTOL_ROUNDOFF)


@SETTINGS
@given(m=magnets(max_coils=2), angle=st.floats(0.0, 2 * np.pi), seed=st.integers(0, 2**32 - 1))
def test_axial_symmetry(m, angle, seed):
    """Turning the points about the magnet's own axis turns B the same way."""
    R = Rotation.from_rotvec(np.asarray(m.axis) * angle)
    c = np.asarray(m.center_m)
    p = points_around([m], seed)
    # the coil model is axisymmetric by construction (uniform azimuthal current)
    assert_close_fields(field_at(m, c + R.apply(p - c), method="direct"),
                        R.apply(field_at(m, p, method="direct")), RTOL_ROUNDOFF)


@settings(max_examples=10, deadline=None)
@given(m=magnets(max_coils=2), seed=st.integers(0, 2**32 - 1))
def test_divergence_and_curl_free_outside_windings(m, seed):
    p = points_around([m], seed, n=6, margin_m=0.1)
    h = 1e-4
    jac = np.zeros((len(p), 3, 3))  # jac[:, i, j] = dB_i/dx_j
    for j in range(3):
        e = np.zeros(3)
        e[j] = h
        jac[:, :, j] = (field_at(m, p + e, method="direct")
                        - field_at(m, p - e, method="direct")) / (2 * h)
    div = np.trace(jac, axis1=1, axis2=2)
    curl = np.stack([jac[:, 2, 1] - jac[:, 1, 2], jac[:, 0, 2] - jac[:, 2, 0],
                     jac[:, 1, 0] - jac[:, 0, 1]], axis=1)
    size = np.linalg.norm(jac, axis=(1, 2))
    # Maxwell: ∇·B = 0, ∇×B = μ0 J = 0 outside the windings (Jackson Eqs. 5.53, 5.22).
    # Central differences with h = 0.1 mm at ≥ 0.1 m from the windings: truncation
    # O((h/d)²) ≈ 1e-6 of |∇B| (common practice, no source); 1e-4 leaves margin.
    assert np.all(np.abs(div) <= 1e-4 * size), div / size
    assert np.all(np.linalg.norm(curl, axis=1) <= 1e-4 * size)


@SETTINGS
@given(m=magnets(max_coils=3))
def test_closed_form_centre_field_matches_engine(m):
    """The closed form behind the scenario's plausibility warning equals the engine."""
    from fringe.physics.energy import center_field_T

    b_engine = field_at(m, np.asarray(m.center_m), method="direct")[0]
    b_axis = float(np.dot(b_engine, m.axis))
    scale = sum(abs(center_field_T(Magnet("c", (0, 0, 0), (0, 0, 1), (c,)))) for c in m.coils)
    # closed-form thick-coil centre field (Jackson Sec. 5.5; Montgomery, Solenoid Magnet
    # Design, 1969, Ch. 1) vs the current-sheet sum; 1e-6 of the coils' summed size
    # covers the radial quadrature error off the windings (tests/test_field_core.py)
    assert abs(center_field_T(m) - b_axis) <= 1e-6 * scale
    assert np.linalg.norm(b_engine - b_axis * np.asarray(m.axis)) <= 1e-9 * scale  # on axis


# -- through the fast path (method="auto"): one fixed magnet, random poses ----------------

@pytest.fixture(scope="module")
def demo_magnet(demo_site):
    return demo_site.magnets[0]


@settings(max_examples=8, deadline=None,
          suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(shift=st.tuples(*(st.floats(-30.0, 30.0),) * 3), rot_seed=st.integers(0, 2**32 - 1),
       seed=st.integers(0, 2**32 - 1))
def test_auto_path_moves_and_turns_with_the_magnet(demo_magnet, shift, rot_seed, seed):
    from fringe.field.fast import RELATIVE_TOLERANCE

    m = demo_magnet
    R = Rotation.random(random_state=rot_seed)
    c = np.asarray(m.center_m)
    d = np.asarray(shift)
    p = points_around([m], seed, n=24)
    other = m.moved(center_m=tuple(c + d), axis=tuple(R.apply(np.asarray(m.axis))))
    b = field_at(m, p)
    b2 = field_at(other, c + d + R.apply(p - c))
    # each evaluation is within RELATIVE_TOLERANCE of the direct sum (fastfield contract)
    err = np.linalg.norm(b2 - R.apply(b), axis=1)
    assert np.all(err <= 2 * RELATIVE_TOLERANCE * np.linalg.norm(b, axis=1) + 1e-15)


@settings(max_examples=6, deadline=None,
          suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(shift=st.tuples(*(st.floats(-3.0, 3.0),) * 3), rot_seed=st.integers(0, 2**32 - 1),
       seed=st.integers(0, 2**32 - 1))
def test_auto_path_superposes_two_magnets(demo_magnet, shift, rot_seed, seed):
    from fringe.field.fast import RELATIVE_TOLERANCE

    m = demo_magnet
    R = Rotation.random(random_state=rot_seed)
    other = m.moved(center_m=tuple(np.asarray(m.center_m) + np.asarray(shift)),
                    axis=tuple(R.apply(np.asarray(m.axis))))
    p = points_around([m, other], seed, n=24)
    b1, b2 = field_at(m, p), field_at(other, p)
    both = field_at([m, other], p)
    bound = RELATIVE_TOLERANCE * (np.linalg.norm(b1, axis=1) + np.linalg.norm(b2, axis=1))
    # superposition; each term within RELATIVE_TOLERANCE of the direct sum
    assert np.all(np.linalg.norm(both - (b1 + b2), axis=1) <= 2 * bound + 1e-15)
