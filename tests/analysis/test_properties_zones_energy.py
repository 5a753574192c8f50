"""Property-based invariants of stored energy, field-line extents and footprints.

* stored energy W = ½ IᵀMI is positive for any currents (M positive definite) and
  scales as I²;
* the extents of a field line grow with the current, and scaling the current by k
  moves the line to where the unscaled field is threshold/k;
* footprints are nested: a higher threshold's footprint lies inside a lower one's,
  for arbitrary grids (marching squares) and for a real floor map.
"""

from __future__ import annotations

import numpy as np
import pytest
import shapely
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from fringe.model.magnet import Magnet
from tests.field.test_properties_field import coils

SETTINGS = settings(max_examples=15, deadline=None,
                    suppress_health_check=[HealthCheck.too_slow])


@st.composite
def local_magnets(draw, max_coils=3):
    return Magnet("h", (0.0, 0.0, 0.0), (0.0, 0.0, 1.0),
                  tuple(draw(st.lists(coils(), min_size=1, max_size=max_coils))))


# -- stored energy ---------------------------------------------------------------------

@SETTINGS
@given(m=local_magnets(), currents=st.lists(st.floats(-500.0, 500.0), min_size=3, max_size=3),
       k=st.floats(-30.0, 30.0).filter(lambda k: abs(k) > 1e-3))
def test_stored_energy_positive_and_quadratic(m, currents, k):
    from fringe.model.magnet import Coil
    from fringe.physics.energy import stored_energy_J

    # arbitrary per-coil currents (coils may even overlap): W = ½∫ J·A dV > 0 for any
    # non-zero current distribution (Jackson Sec. 5.16), i.e. M is positive definite
    coils_ = tuple(Coil(c.r_inner_m, c.r_outer_m, c.z_min_m, c.z_max_m, c.turns, i)
                   for c, i in zip(m.coils, currents, strict=False))
    m = Magnet("h", m.center_m, m.axis, coils_)
    w = stored_energy_J(m)
    if any(abs(i) > 1e-100 for i in currents[:len(coils_)]):
        assert w > 0.0
    else:
        assert abs(w) <= 1e-150
    # W = ½ IᵀMI is a quadratic form: W(kI) = k² W(I) to round-off (common practice)
    assert stored_energy_J(m.scaled(k)) == pytest.approx(k * k * w, rel=1e-12, abs=1e-30)


# -- field-line extents ------------------------------------------------------------------

@settings(max_examples=10, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(m=local_magnets(max_coils=2), k=st.floats(1.05, 20.0),
       threshold_mT=st.sampled_from([0.5, 1.0, 3.0]))
def test_extents_grow_with_current(m, k, threshold_mT):
    from fringe.field.extents import threshold_extents_m

    t = threshold_mT * 1e-3
    ax1, rad1 = threshold_extents_m(m, t)
    axk, radk = threshold_extents_m(m.scaled(k), t)
    tol = 2e-4  # extents are refined to 0.1 mm (fringe.field.extents), twice for two routes
    # |B| ∝ I (Biot-Savart), so {|B_k| ≥ t} ⊇ {|B| ≥ t}: the outermost crossing moves out
    assert axk >= ax1 - tol and radk >= rad1 - tol
    # and the scaled magnet's t-line is the unscaled magnet's (t/k)-line
    ax2, rad2 = threshold_extents_m(m, t / k)
    assert axk == pytest.approx(ax2, abs=tol) and radk == pytest.approx(rad2, abs=tol)


# -- footprints nested ----------------------------------------------------------------

@st.composite
def grids(draw):
    nx, ny = draw(st.integers(3, 14)), draw(st.integers(3, 14))
    seed = draw(st.integers(0, 2**32 - 1))
    rng = np.random.default_rng(seed)
    kind = draw(st.sampled_from(["noise", "smooth", "plateaus"]))
    x = np.cumsum(rng.uniform(0.1, 1.0, nx))
    y = np.cumsum(rng.uniform(0.1, 1.0, ny))
    if kind == "noise":
        v = rng.uniform(0.0, 1.0, (ny, nx))
    elif kind == "smooth":
        X, Y = np.meshgrid(x, y)
        v = sum(rng.uniform(0.2, 1.0) / (0.3 + (X - rng.uniform(x[0], x[-1])) ** 2
                                         + (Y - rng.uniform(y[0], y[-1])) ** 2)
                for _ in range(3))
    else:  # exact ties with the levels, the marching-squares edge case
        v = rng.integers(0, 4, (ny, nx)).astype(float)
    return x, y, v


@settings(max_examples=60, deadline=None)
@given(grid=grids(), q=st.tuples(st.floats(0.0, 1.0), st.floats(0.0, 1.0)))
def test_superlevel_footprints_nested(grid, q):
    from fringe.analysis.zones import superlevel_polygons

    x, y, v = grid
    lo, hi = sorted(np.quantile(v, q))
    if np.all(np.mod(v, 1.0) == 0.0):  # plateaus: use the integer levels themselves
        lo, hi = sorted(np.round(np.asarray(q) * 3.0))
    g_lo = superlevel_polygons(x, y, v, lo)
    g_hi = superlevel_polygons(x, y, v, hi)
    assert g_lo.is_valid and g_hi.is_valid
    cell = float(np.min(np.diff(x)) * np.min(np.diff(y)))
    # {v ≥ hi} ⊆ {v ≥ lo}: nesting by definition; marching squares resolves saddles
    # by the cell-centre value, monotone in the level, so the drawn regions nest too.
    # 1e-9 of a cell allows the polygon clean-up's round-off (common practice, no source)
    assert shapely.difference(g_hi, g_lo).area <= 1e-9 * cell
    assert g_hi.area <= g_lo.area + 1e-9 * cell


def test_floor_footprints_nested_for_demo_site(demo_site):
    from fringe.analysis.zones import floor_map, footprints, plan_axes_m
    from fringe.model.building import Floor
    from fringe.model.constants import DEFAULT_THRESHOLDS_MT

    x, y = plan_axes_m(((-1.0, -2.0), (11.0, 10.0)), 0.5)
    fm = floor_map(demo_site, Floor("ground", 0.0), x, y, 0.5,
                   thresholds_T=[t * 1e-3 for t in DEFAULT_THRESHOLDS_MT])
    fps = footprints(fm, DEFAULT_THRESHOLDS_MT)
    assert [f.threshold_mT for f in fps] == sorted(DEFAULT_THRESHOLDS_MT)
    assert fps[0].area_m2 > 1.0  # the 0.5 mT footprint is not empty (≈ 3.9 m along the axis)
    for low, high in zip(fps, fps[1:], strict=False):
        # nesting (definition of a superlevel set); 1e-9 m² for polygon round-off
        assert shapely.difference(high.geometry, low.geometry).area <= 1e-9
        assert high.area_m2 <= low.area_m2 + 1e-9
        assert high.sampled_area_m2 <= high.area_m2 + 1e-9  # envelope ≥ sampled maximum
