"""Field-line extents: outermost crossing along and across the axis."""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy.optimize import brentq

from fringe.field.direct import magnet_field_local_T
from fringe.field.extents import extents_from_moments, field_bound_radius_m, threshold_extents_m
from fringe.field.multipole import zonal_moments_Am
from fringe.model.constants import MU0_T_M_PER_A
from fringe.model.errors import FringeInputError
from fringe.model.magnet import Coil, Magnet


def _direct_root(magnet: Magnet, threshold_T: float, axial: bool, lo: float, hi: float):
    """Independent root-find: scipy brentq on the direct current-sheet sum."""
    def f(s):
        rho, z = (0.0, s) if axial else (s, 0.0)
        b = magnet_field_local_T(magnet, np.array([rho]), np.array([z]))
        return float(np.hypot(b[0][0], b[1][0])) - threshold_T
    return brentq(f, lo, hi, xtol=1e-6)


def _shielded_magnet() -> Magnet:
    """Invented actively shielded layout (main pairs + reversed shield pair)."""
    coils = []
    for zc, hz, n in ((0.15, 0.1, 2180), (0.39, 0.09, 852), (0.65, 0.1, 4709)):
        coils += [Coil(0.46, 0.52, zc - hz, zc + hz, n, 220.0),
                  Coil(0.46, 0.52, -zc - hz, -zc + hz, n, 220.0)]
    coils += [Coil(0.92, 0.96, 0.45, 0.70, 2106, -220.0),
              Coil(0.92, 0.96, -0.70, -0.45, 2106, -220.0)]
    return Magnet("s", (0, 0, 0), (0, 0, 1), tuple(coils))


@pytest.mark.parametrize("threshold_mT", [0.5, 3.0])
def test_extents_match_independent_brentq(threshold_mT):
    m = _shielded_magnet()
    thr = threshold_mT * 1e-3
    ax, rad = threshold_extents_m(m, thr)
    # independent check: scipy brentq on the direct sum, bracketing by hand
    assert ax == pytest.approx(_direct_root(m, thr, True, 1.3, 10.0), abs=0.01)
    assert rad == pytest.approx(_direct_root(m, thr, False, 1.3, 10.0), abs=0.01)


def test_unshielded_extents_match_independent_brentq_and_are_symmetric():
    m = Magnet("u", (0, 0, 0), (0, 0, 1),
               (Coil(0.45, 0.50, -0.6, 0.6, 20000, 100.0),))
    ax, rad = threshold_extents_m(m, 5e-4)
    assert ax == pytest.approx(_direct_root(m, 5e-4, True, 1.0, 30.0), abs=0.01)  # independent
    assert rad == pytest.approx(_direct_root(m, 5e-4, False, 1.0, 30.0), abs=0.01)
    # an asymmetric magnet: the axial extent is the larger of the two directions
    m2 = Magnet("a", (0, 0, 0), (0, 0, 1), (Coil(0.45, 0.50, 0.2, 0.6, 20000, 100.0),))
    ax2, _ = threshold_extents_m(m2, 5e-4)
    up = _direct_root(m2, 5e-4, True, 0.7, 30.0)
    assert ax2 == pytest.approx(up, abs=0.01)  # independent brentq, +z side is farther


def test_pure_dipole_extent_ratio_is_cube_root_of_two():
    # |B| = μ₀m/(4πr³)·sqrt(1+3cos²θ) (Jackson Eq. 5.56): axial/radial = 2^{1/3}
    m_Am2 = 1.0e5
    q = np.array([0.0, m_Am2])
    thr = 5e-4
    ax, rad = extents_from_moments(q, thr, r_min_m=0.01)
    assert ax / rad == pytest.approx(2 ** (1 / 3), rel=1e-4)  # textbook dipole field
    r_eq = (MU0_T_M_PER_A * m_Am2 / (4 * math.pi * thr)) ** (1 / 3)
    assert rad == pytest.approx(r_eq, rel=1e-4)  # textbook dipole field, equator


def test_small_loop_coil_behaves_as_dipole():
    # a thin 5 cm loop seen from metres away is a dipole: ratio 2^{1/3} (Jackson 5.56)
    m = Magnet("loop", (0, 0, 0), (0, 0, 1), (Coil(0.05, 0.0501, -0.0001, 0.0001, 1, 2.0e5),))
    ax, rad = threshold_extents_m(m, 1e-4)
    assert ax / rad == pytest.approx(2 ** (1 / 3), rel=2e-3)  # textbook dipole field


def test_pure_l3_extent_ratio():
    # Zonal field (Jackson Sec. 5.12): B_r = k(l+1)q P_l/r^{l+2}, B_θ = k q sinθ P_l'/r^{l+2}.
    # l = 3: on axis |B| = 4kq/r⁵; equator P_3(0) = 0, P_3'(0) = −3/2 so |B| = 1.5kq/r⁵.
    # Ratio axial/radial = (4/1.5)^{1/5} = (8/3)^{1/5} (derived from the textbook field).
    q = np.array([0.0, 0.0, 0.0, 2.0e5])
    ax, rad = extents_from_moments(q, 5e-4, r_min_m=0.01)
    assert ax / rad == pytest.approx((8 / 3) ** 0.2, rel=1e-4)


def test_threshold_never_reached_gives_zero():
    m = _shielded_magnet()
    assert threshold_extents_m(m, 1e3) == (0.0, 0.0)  # convention documented in extents.py


def test_start_bound_really_bounds_the_field():
    m = _shielded_magnet()
    r0 = field_bound_radius_m(m, 5e-4)
    th = np.linspace(0, math.pi, 19)
    br, bz = magnet_field_local_T(m, r0 * np.sin(th), r0 * np.cos(th))
    assert np.all(np.hypot(br, bz) < 5e-4)  # common practice, no source (bound property)


def test_series_route_agrees_with_direct_route():
    m = _shielded_magnet()
    q = zonal_moments_Am(m, 40)
    ax, rad = extents_from_moments(q, 5e-4, 1.4 * m.enclosing_radius_m)
    ax2, rad2 = threshold_extents_m(m, 5e-4)
    assert (ax, rad) == pytest.approx((ax2, rad2), abs=2e-3)  # consistency


def test_bad_threshold_rejected():
    with pytest.raises(FringeInputError, match="`threshold_T` must be"):
        threshold_extents_m(_shielded_magnet(), -1.0)
