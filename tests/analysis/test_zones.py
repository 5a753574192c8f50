"""Plan grids, band envelopes, contours → polygons, sections (fringe.analysis.zones)."""

from __future__ import annotations

import math

import numpy as np
import pytest
import shapely

from fringe.analysis.zones import (
    band_envelope,
    band_levels_m,
    band_max_T,
    field_magnitude_T,
    floor_map,
    footprints,
    magnet_sections,
    plan_axes_m,
    section_directions,
    slice_map_T,
    superlevel_polygons,
)
from fringe.model.building import Floor
from fringe.model.constants import MU0_T_M_PER_A
from fringe.model.errors import FringeInputError
from fringe.model.magnet import Coil, Magnet

# A compact solenoid: 1e5 ampere-turns at r ≈ 0.31 m, so the 0.5 mT line lies ~2 m out.
SOLENOID = Magnet("test solenoid", (0.0, 0.0, 1.3), (1.0, 0.0, 0.0),
                  (Coil(0.30, 0.32, -0.25, 0.25, 1000, 100.0),))


def _dipole_abs_B_T(x, z, m_Am2):
    """|B| of a point dipole along +x at the origin (Jackson 3rd ed., Eq. 5.56)."""
    r = np.hypot(x, z)
    cos_t = np.divide(x, r, out=np.zeros_like(r), where=r > 0)
    with np.errstate(divide="ignore"):
        return MU0_T_M_PER_A * m_Am2 / (4 * np.pi * r**3) * np.sqrt(1 + 3 * cos_t**2)


def test_dipole_contour_extent_ratio_analytic_array():
    # textbook dipole field (Jackson Eq. 5.56): the |B| = b line reaches 2^(1/3) times
    # further along the moment than across it.
    x = np.linspace(-2.0, 2.0, 401)
    z = np.linspace(-2.0, 2.0, 401)
    X, Z = np.meshgrid(x, z)
    m = 1.0e4
    b = MU0_T_M_PER_A * m / (4 * np.pi) * 2 / 1.5**3  # axial extent 1.5 m by construction
    poly = superlevel_polygons(x, z, _dipole_abs_B_T(X, Z, m), b)
    x0, z0, x1, z1 = poly.bounds
    assert x1 == pytest.approx(1.5, rel=1e-3)  # construction above; grid 0.01 m
    assert (x1 / z1) == pytest.approx(2 ** (1 / 3), rel=2e-3)  # textbook dipole
    assert (-x0 / -z0) == pytest.approx(2 ** (1 / 3), rel=2e-3)  # textbook dipole


def test_dipole_contour_extent_ratio_tiny_loop_magnet():
    # textbook dipole field: a loop of radius a ≪ r is a dipole to O((a/r)²).
    loop = Magnet("loop", (0.0, 0.0, 0.0), (1.0, 0.0, 0.0),
                  (Coil(0.0100, 0.0101, -0.00005, 0.00005, 1.0, 1.0e4),))
    m = loop.dipole_moment_Am2
    b = MU0_T_M_PER_A * m / (4 * np.pi) * 2 / 0.8**3  # axial extent 0.8 m for a dipole
    along, _ = magnet_sections(loop, loop, 1.0, (-1.0, 1.0), 0.02)
    poly = superlevel_polygons(along.s_m, along.z_m, along.field_T, b)
    s0, z0, s1, z1 = poly.bounds
    assert s1 == pytest.approx(0.8, rel=2e-3)  # dipole formula; (a/r)² ~ 2e-4
    assert s1 / z1 == pytest.approx(2 ** (1 / 3), rel=3e-3)  # textbook dipole


def test_superlevel_polygons_keep_holes():
    # analytic geometry: the set 0.5 ≤ exp(-(r-1)²/0.1) is the annulus |r-1| ≤ √(0.1 ln 2)
    x = np.linspace(-2, 2, 401)
    X, Y = np.meshgrid(x, x)
    v = np.exp(-((np.hypot(X, Y) - 1.0) ** 2) / 0.1)
    g = superlevel_polygons(x, x, v, 0.5)
    w = math.sqrt(0.1 * math.log(2))
    assert g.geom_type == "Polygon" and len(g.interiors) == 1
    assert g.area == pytest.approx(math.pi * ((1 + w) ** 2 - (1 - w) ** 2), rel=5e-3)
    assert g.is_valid
    assert not g.contains(shapely.Point(0, 0))  # the hole is kept


def test_superlevel_polygons_empty_and_shape_errors():
    x = np.linspace(0, 1, 5)
    assert superlevel_polygons(x, x, np.zeros((5, 5)), 1.0).is_empty
    with pytest.raises(FringeInputError, match="shape"):
        superlevel_polygons(x, x, np.zeros((4, 5)), 1.0)


def test_band_envelope_parabola_exact():
    # three-point parabola (Numerical Recipes Eq. 10.3.1) is exact for a parabola,
    # whatever the (uneven) spacing and wherever the vertex lies between samples.
    z = np.array([0.0, 0.3, 0.5, 1.1, 1.25, 2.0])
    vertices = np.array([0.05, 0.41, 0.8, 1.9, 1.2])
    vals = 5.0 - 3.0 * (z[:, None] - vertices[None, :]) ** 2
    sampled, refined = band_envelope(vals, z)
    np.testing.assert_allclose(refined, 5.0, rtol=1e-12)
    assert np.all(sampled < 5.0)
    # monotone data: the maximum is the end sample, nothing added
    mono = np.exp(-z)[:, None] * np.ones((1, 3))
    s2, r2 = band_envelope(mono, z)
    np.testing.assert_array_equal(s2, r2)
    with pytest.raises(FringeInputError):
        band_envelope(vals[:2], z[:2])


def test_band_levels_include_magnet_centre():
    f = Floor("g", 0.0, 0.0, 2.0)
    z = band_levels_m(f, 0.25, include_m=[1.3, 7.0])
    assert z[0] == 0.0 and z[-1] == 2.0 and 1.3 in z and np.all(np.diff(z) <= 0.25 + 1e-12)
    assert band_levels_m(f, 5.0).size == 3


def test_band_max_matches_independent_maximisation():
    # independent route: 81-level scan then scipy's bounded Brent search (Brent 1973,
    # ch. 5) per point; the adaptive envelope must agree to its 0.1 % refinement tolerance.
    from scipy.optimize import minimize_scalar

    f = Floor("g", 0.0, 0.0, 2.0)
    xy = np.column_stack([np.linspace(0.5, 3.0, 8), np.linspace(0.4, 1.5, 8)])
    z = band_levels_m(f, 0.25)  # no magnet-centre level: the harder case
    env, sampled, err = band_max_T(SOLENOID, xy, z)
    zf = np.linspace(0, 2, 81)
    pf = np.concatenate([np.column_stack([xy, np.full(len(xy), zi)]) for zi in zf])
    scan = field_magnitude_T(SOLENOID, pf).reshape(zf.size, -1)
    for j, (x, y) in enumerate(xy):
        k = int(np.argmax(scan[:, j]))
        lo, hi = zf[max(k - 1, 0)], zf[min(k + 1, zf.size - 1)]
        res = minimize_scalar(lambda zz, x=x, y=y: -field_magnitude_T(SOLENOID, [[x, y, zz]])[0],
                              bounds=(lo, hi), method="bounded", options={"xatol": 1e-5})
        true = max(-res.fun, scan[:, j].max())
        assert env[j] == pytest.approx(true, rel=1e-3)  # BAND_REFINE_TOL
        assert env[j] >= sampled[j]
    assert np.all(err <= 1e-3)
    assert np.max((env - sampled) / env) > 1e-3  # the refinement mattered here


@pytest.fixture(scope="module")
def solenoid_floor():
    f = Floor("g", 0.0, 0.0, 2.0)
    x, y = plan_axes_m(((-3.5, -3.0), (3.5, 3.0)), 0.1)
    return floor_map(SOLENOID, f, x, y, 0.25, (5e-4,), include_m=())


def test_footprint_contains_every_slice(solenoid_floor):
    # containment (issue 3): the band envelope's footprint contains each single slice's,
    # at the sampled levels and half-way between them.
    fm = solenoid_floor
    env = superlevel_polygons(fm.x_m, fm.y_m, fm.envelope_T, 5e-4)
    zs = list(fm.z_levels_m) + list(0.5 * (fm.z_levels_m[1:] + fm.z_levels_m[:-1]))
    areas = []
    for zi in zs:
        sl = superlevel_polygons(fm.x_m, fm.y_m, slice_map_T(SOLENOID, fm.x_m, fm.y_m, zi), 5e-4)
        areas.append(sl.area)
        assert env.buffer(1e-6).contains(sl), zi
    assert env.area > max(areas)  # the envelope is not just one slice


def test_footprints_areas_and_clipping(solenoid_floor):
    fps = footprints(solenoid_floor, [1.0, 0.5, 0.05])
    assert [f.threshold_mT for f in fps] == [0.05, 0.5, 1.0]
    assert fps[1].area_m2 > fps[2].area_m2 > 0
    assert fps[1].area_m2 >= fps[1].sampled_area_m2
    assert not fps[1].clipped and fps[0].clipped  # 0.05 mT reaches past a 3 m window
    assert fps[1].geometry.is_valid


def test_plan_axes_cover_window():
    x, y = plan_axes_m(((0.0, 0.0), (1.05, 0.5)), 0.1)
    assert x[0] == 0.0 and x[-1] >= 1.05 and y.size == 6
    with pytest.raises(FringeInputError):
        plan_axes_m(((0, 0), (0, 1)), 0.1)


def test_section_directions_and_symmetry():
    d = section_directions(SOLENOID)
    np.testing.assert_allclose(d["along"], [1, 0, 0])
    np.testing.assert_allclose(d["across"], [0, 1, 0])
    vert = SOLENOID.moved(axis=(0, 0, 1))
    np.testing.assert_allclose(section_directions(vert)["along"], [1, 0, 0])
    along, across = magnet_sections(SOLENOID, SOLENOID, 2.0, (0.0, 2.6), 0.2)
    assert along.field_T.shape == (along.z_m.size, along.s_m.size)
    # mirror symmetry of a symmetric solenoid about its centre plane and its axis
    np.testing.assert_allclose(along.field_T, along.field_T[:, ::-1], rtol=1e-9)
    np.testing.assert_allclose(across.field_T, across.field_T[::-1, :], rtol=1e-9)
