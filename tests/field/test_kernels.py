"""The compiled series kernel (fringe.field._kernels) against the numpy fast path.

The kernel promises the numpy path's values (same operations, same order): compared
here to 1e-12 relative (common practice, no source: rounding only), on a shielded
magnet, a tilted off-centre solenoid with a current that is not the model's, and the
two superposed, in one thread and in two. The winding mask that comes with it must be
the plain test of every point against every winding.
"""

from __future__ import annotations

import threading

import numpy as np
import pytest

from fringe import Coil, Magnet
from fringe.field import _kernels
from fringe.field.evaluate import field_at, points_in_windings

pytestmark = pytest.mark.skipif(not _kernels.available(), reason="numba not installed")

N = 2 * _kernels.CHUNK_PER_THREAD + 7     # two threads' worth, not a round number


def tilted_solenoid() -> Magnet:
    """Invented unshielded solenoid, axis tilted, off the origin, 83 A (not the model's 1 A)."""
    return Magnet("tilted", (3.0, -2.0, 0.4), (0.3, 1.0, 0.2),
                  (Coil(0.50, 0.56, -0.80, 0.80, 9000, 83.0),))


def mixed_points(magnet: Magnet, n: int, seed: int) -> np.ndarray:
    """Isotropic directions, distances uniform 0.3–30 m (some inside the windings)."""
    rng = np.random.default_rng(seed)
    d = rng.normal(size=(n, 3))
    d /= np.linalg.norm(d, axis=1)[:, None]
    return np.asarray(magnet.center_m) + d * rng.uniform(0.3, 30.0, n)[:, None]


def numpy_path(site, pts):
    """field_at with the kernel out of the way (every call on the numpy path)."""
    saved = (_kernels._KERNEL, _kernels._FAILED)
    _kernels._KERNEL, _kernels._FAILED = None, True
    try:
        return field_at(site, pts)
    finally:
        _kernels._KERNEL, _kernels._FAILED = saved


@pytest.fixture
def kernel_on(monkeypatch):
    """Serve every call of ≥ CHUNK_PER_THREAD points through the kernel."""
    from fringe.field import fast

    monkeypatch.setattr(_kernels, "KERNEL_MIN_POINTS", 0)
    monkeypatch.setattr(fast, "BUILD_AFTER_POINTS", 0)
    assert _kernels._compile() is not None


@pytest.mark.parametrize("case", ["demo", "tilted", "both"])
@pytest.mark.parametrize("threads", [1, 2])
def test_kernel_equals_numpy_path(kernel_on, demo_site, monkeypatch, case, threads):
    demo = demo_site.magnets[0]
    mags = {"demo": [demo], "tilted": [tilted_solenoid()],
            "both": [demo, tilted_solenoid()]}[case]
    pts = mixed_points(mags[-1], N, seed=11)
    monkeypatch.setattr(_kernels, "thread_count", lambda: threads)
    calls = []
    real = _kernels.series_site_field
    monkeypatch.setattr(_kernels, "series_site_field",
                        lambda *a, **k: calls.append(1) or real(*a, **k))
    inside = np.ones(N, dtype=bool)
    got = field_at(mags, pts, inside=inside)
    assert len(calls) == len(mags)                       # the kernel served the call
    ref = numpy_path(mags, pts)
    scale = np.linalg.norm(ref, axis=1)
    assert np.all(np.linalg.norm(got - ref, axis=1) <= 1e-12 * scale)
    brute = np.zeros(N, dtype=bool)
    for m in mags:
        brute |= m.contains_points(pts)
    assert brute.any() and not brute.all()
    assert np.array_equal(inside, brute)


def test_callers_in_two_threads_get_the_same_field(kernel_on, demo_site):
    pts = mixed_points(demo_site.magnets[0], N, seed=12)
    ref = numpy_path(demo_site, pts)
    results: dict[int, np.ndarray] = {}

    def work(k: int) -> None:
        results[k] = field_at(demo_site, pts)

    ts = [threading.Thread(target=work, args=(k,)) for k in range(2)]
    for t in ts:
        t.start()
    for t in ts:
        t.join()
    for k in range(2):
        assert np.allclose(results[k], ref, rtol=1e-12, atol=0.0)


def test_small_calls_stay_on_numpy_until_enough_points_were_asked(monkeypatch):
    monkeypatch.setattr(_kernels, "_KERNEL", None)
    monkeypatch.setattr(_kernels, "_demand", [0])
    monkeypatch.setattr(_kernels, "KERNEL_MIN_POINTS", 1000)
    assert not _kernels.wanted(600)
    assert _kernels.wanted(600)          # 1200 points asked in all


@pytest.mark.parametrize("margin", [0.0, 0.05])
def test_winding_mask_equals_the_test_of_every_point(demo_site, margin):
    demo = demo_site.magnets[0]
    mags = [demo, tilted_solenoid()]
    pts = np.concatenate([mixed_points(demo, 20_000, seed=5),
                          mixed_points(mags[1], 20_000, seed=6)])
    brute = np.zeros(len(pts), dtype=bool)
    for m in mags:
        brute |= m.contains_points(pts, margin)
    assert brute.sum() > 10
    assert np.array_equal(points_in_windings(mags, pts, margin), brute)


def test_inside_on_the_numpy_and_direct_paths(demo_site):
    pts = mixed_points(demo_site.magnets[0], 3000, seed=7)
    for method in ("auto", "direct"):
        inside = np.zeros(len(pts), dtype=bool)
        field_at(demo_site, pts, method=method, inside=inside)
        assert np.array_equal(inside, demo_site.magnets[0].contains_points(pts))


def test_kernel_path_memory_does_not_grow_with_points(kernel_on, demo_site):
    # common practice, no source: as on the numpy path (tests/field/test_fast.py), the
    # memory beyond the output is the same for 50k and 200k points: chunk by chunk
    import tracemalloc

    m = demo_site.magnets[0]
    rng = np.random.default_rng(3)

    def extra(n):
        pts = np.asarray(m.center_m) + rng.uniform(3.0, 20.0, (n, 3))
        tracemalloc.start()
        field_at(m, pts)
        _, peak = tracemalloc.get_traced_memory()
        tracemalloc.stop()
        return peak - n * 3 * 8

    field_at(m, mixed_points(m, N, seed=1))          # the model and the kernel, loaded
    small, large = extra(50_000), extra(200_000)
    assert large < 1.5 * small + 1e6


def test_inside_of_the_wrong_shape_or_type_is_refused(demo_site):
    from fringe.model.errors import FringeInputError

    pts = np.zeros((4, 3)) + 5.0
    for bad in (np.zeros(3, dtype=bool), np.zeros(4), [False] * 4):
        with pytest.raises(FringeInputError, match="`inside` must be a boolean array"):
            field_at(demo_site, pts, inside=bad)
