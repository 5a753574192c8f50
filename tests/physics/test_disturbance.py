"""The moving-steel disturbance, worked by hand (issue 17, item 6).

The model: a solid soft-steel sphere of the object's mass, magnetised to
M = min(3H₀, M_s) along the applied field (Jackson, *Classical Electrodynamics*, 3rd ed.,
Sec. 5.11: M = 3(μ−μ₀)/(μ+2μ₀)·H₀ → 3H₀ for μ → ∞; saturation: Cullity & Graham 2009),
whose outside field is that of a point dipole m = M·V at its centre (Jackson Sec. 5.10),
B = μ₀/(4π)·[3r̂(r̂·m) − m]/r³ (Jackson Eq. 5.56).
"""

from __future__ import annotations

import math

import numpy as np
import pytest

from fringe.model.constants import MU0_T_M_PER_A
from fringe.physics.attraction import MATERIALS
from fringe.physics.disturbance import (
    DEFAULT_STEEL,
    dipole_field_T,
    disturbance_ppm,
    disturbance_T,
    sphere_magnetization_A_per_m,
    sphere_radius_m,
    sphere_volume_m3,
)

RHO = 7870.0      # kg/m³, iron (CRC Handbook; the attraction zone's value, issue 17)
M_S = 1.71e6      # A/m, iron at room temperature (Cullity & Graham 2009, from memory)


def test_the_steel_is_the_attraction_zones():
    # issue 17: "ρ = 7870 kg/m³, M_s = 1.71 MA/m, the attraction zone's values"
    assert DEFAULT_STEEL is MATERIALS["iron"]
    assert DEFAULT_STEEL.density_kg_per_m3 == RHO
    assert DEFAULT_STEEL.saturation_A_per_m == M_S


def test_lift_car_in_the_earths_field_worked_by_hand():
    """1000 kg of steel, 5 m from the isocentre on the magnet's axis, in 50 µT along it.

    By hand (Jackson Secs. 5.6, 5.10, 5.11):
      V  = m/ρ = 1000 / 7870                 = 0.127065 m³
      a  = (3V/4π)^(1/3)                     = 0.31187 m (a < 5 m: the point is outside)
      H₀ = B₀/μ₀ = 50e-6 / 1.25663706e-6     = 39.789 A/m
      M  = 3 H₀ (3H₀ ≪ M_s = 1.71e6 A/m)     = 119.37 A/m
      m  = M·V                               = 15.168 A·m²
      on the dipole's axis: B = μ₀ m/(2π r³) = 2e-7 · 15.168 / 125 = 2.4268e-8 T
      ΔB in ppm of a 1.5 T centre field      = 1e6 · 2.4268e-8 / 1.5 = 0.016179 ppm
    """
    V = 1000.0 / RHO
    assert sphere_volume_m3(1000.0) == pytest.approx(0.127065, rel=1e-5)  # m/ρ
    assert sphere_radius_m(1000.0) == pytest.approx(0.31187, rel=1e-4)  # (3V/4π)^(1/3)
    B0 = 50e-6
    H0 = B0 / MU0_T_M_PER_A
    assert H0 == pytest.approx(39.789, rel=1e-4)
    M = sphere_magnetization_A_per_m([0.0, 0.0, B0])
    np.testing.assert_allclose(M, [0.0, 0.0, 3.0 * H0], rtol=1e-12)  # Jackson 5.11, μ → ∞
    assert M[2] == pytest.approx(119.37, rel=1e-4)
    m = M[2] * V
    assert m == pytest.approx(15.168, rel=1e-4)
    expected = MU0_T_M_PER_A * m / (2.0 * math.pi * 5.0 ** 3)  # on axis, Jackson Eq. 5.56
    assert expected == pytest.approx(2.4268e-8, rel=1e-4)
    dB = disturbance_T([[0.0, 0.0, 5.0]], [[0.0, 0.0, B0]], (0.0, 0.0, 0.0), (0, 0, 1), 1000.0)
    assert dB.shape == (1,)
    assert dB[0] == pytest.approx(expected, rel=1e-12)
    assert float(disturbance_ppm(dB, 1.5)[0]) == pytest.approx(0.016179, rel=1e-4)
    # beside the magnet, across the moment: B = −μ₀ m/(4π r³) (Jackson Eq. 5.56)
    dB = disturbance_T([[5.0, 0.0, 0.0]], [[0.0, 0.0, B0]], (0.0, 0.0, 0.0), (0, 0, 1), 1000.0)
    assert dB[0] == pytest.approx(-MU0_T_M_PER_A * m / (4.0 * math.pi * 125.0), rel=1e-12)
    assert dB[0] == pytest.approx(-1.2134e-8, rel=1e-4)


def test_vectorised_over_the_path_and_falls_as_r_cubed():
    # dipole field ∝ 1/r³ (Jackson Eq. 5.56): doubling the distance divides it by 8
    pts = np.array([[0.0, 0.0, 2.0], [0.0, 0.0, 4.0], [0.0, 0.0, 8.0]])
    B = np.tile([0.0, 0.0, 40e-6], (3, 1))
    dB = disturbance_T(pts, B, (0, 0, 0), (0, 0, 2.0), 500.0)  # axis need not be unit
    np.testing.assert_allclose(dB[:-1] / dB[1:], [8.0, 8.0], rtol=1e-12)
    # the axis component: a magnet turned 90° sees the transverse field component only
    dBx = disturbance_T(pts, B, (0, 0, 0), (1, 0, 0), 500.0)
    np.testing.assert_allclose(dBx, 0.0, atol=1e-25)


def test_saturation_branch():
    # 3H₀ = 3B₀/μ₀ reaches M_s at B₀ = μ₀M_s/3 = 0.7163 T (Jackson 5.11 and saturation)
    b_sat = MU0_T_M_PER_A * M_S / 3.0
    assert b_sat == pytest.approx(0.7163, rel=1e-3)
    M = sphere_magnetization_A_per_m([[0.5, 0.0, 0.0], [0.0, 1.0, 0.0], [0.0, 0.0, -3.0]])
    assert M[0, 0] == pytest.approx(3.0 * 0.5 / MU0_T_M_PER_A, rel=1e-12)  # below: 3H₀
    assert M[1, 1] == pytest.approx(M_S, rel=1e-12)  # above: M_s along B
    assert M[2, 2] == pytest.approx(-M_S, rel=1e-12)
    np.testing.assert_array_equal(M - np.diag(np.diag(M)), 0.0)  # along B only
    # the disturbance then stops growing with the applied field
    d1 = disturbance_T([[0, 0, 2.0]], [[0, 0, 1.0]], (0, 0, 0), (0, 0, 1), 100.0)
    d2 = disturbance_T([[0, 0, 2.0]], [[0, 0, 2.0]], (0, 0, 0), (0, 0, 1), 100.0)
    assert d1[0] == d2[0]
    V = 100.0 / RHO
    assert d1[0] == pytest.approx(MU0_T_M_PER_A * M_S * V / (2 * math.pi * 8.0), rel=1e-12)


def test_no_field_no_magnetisation():
    np.testing.assert_array_equal(sphere_magnetization_A_per_m([[0.0, 0.0, 0.0]]), [[0, 0, 0]])


def test_dipole_equals_magpylib_sphere_outside():
    """Outside a uniformly magnetised sphere its field is exactly the dipole's (Jackson
    Sec. 5.10); magpylib's Sphere (an independent closed form) agrees."""
    import magpylib

    a = 0.3
    M = np.array([100.0, -40.0, 250.0])  # A/m
    V = 4.0 / 3.0 * math.pi * a ** 3
    sphere = magpylib.magnet.Sphere(polarization=MU0_T_M_PER_A * M, diameter=2 * a,
                                    position=(1.0, 2.0, 0.5))
    for point in ([4.0, -1.0, 2.0], [1.0, 2.0, 3.0], [0.2, 2.1, 0.5]):
        ours = dipole_field_T([M * V], [(1.0, 2.0, 0.5)], point)[0]
        np.testing.assert_allclose(ours, sphere.getB(point), rtol=1e-9, atol=1e-20)


def test_bad_arguments():
    from fringe.model.errors import FringeInputError

    with pytest.raises(FringeInputError, match="mass_kg"):
        sphere_volume_m3(-1.0)
    with pytest.raises(FringeInputError, match="center_field_T"):
        disturbance_ppm(1e-9, 0.0)
    with pytest.raises(FringeInputError, match="point_m"):
        dipole_field_T([[0, 0, 1.0]], [[0, 0, 0]], [0, 0, 0])
    with pytest.raises(FringeInputError, match="shape"):
        disturbance_T([[0, 0, 1.0]], [[0, 0, 1.0], [0, 0, 1.0]], (0, 0, 0), (0, 0, 1), 1.0)
