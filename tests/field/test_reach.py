"""Reach of a field line anywhere (fringe.field.reach): largest distance from the axis
and along it, checked against the dipole law and an independent brute-force grid."""

from __future__ import annotations

import numpy as np
import pytest

from fringe.field.evaluate import field_at
from fringe.field.extents import threshold_extents_m
from fringe.field.reach import threshold_reach_m
from fringe.model.constants import MU0_T_M_PER_A
from fringe.model.magnet import Coil, Magnet


def _brute_reach(magnet: Magnet, threshold_T: float, step_m: float, rho_max: float,
                 z_max: float) -> tuple[float, float]:
    """Largest ρ and |z| of the grid nodes where |B| ≥ threshold: a plain grid scan of
    the (ρ, z) half-plane, no bracketing or refinement."""
    rho = np.arange(0.0, rho_max + step_m / 2, step_m)
    z = np.arange(-z_max, z_max + step_m / 2, step_m)
    R, Z = np.meshgrid(rho, z)
    local = np.column_stack([R.ravel(), np.zeros(R.size), Z.ravel()])
    b = np.linalg.norm(field_at(magnet, magnet.to_site(local)), axis=1).reshape(R.shape)
    inside = b >= threshold_T
    return float(R[inside].max()), float(np.abs(Z[inside]).max())


def test_demo_half_mT_line_reaches_beyond_the_centre_plane(demo_site):
    # independent brute force: a 1 cm grid over the whole half-plane (common practice,
    # no source); the reach must be at least every grid node found and within one step
    m = demo_site.magnets[0]
    thr = 5e-4
    axial, radial = threshold_extents_m(m, thr)
    reach, reach_axial = threshold_reach_m(m, thr)
    assert radial == pytest.approx(2.12, abs=0.01)   # the centre-plane figure of issue 15
    assert reach == pytest.approx(2.70, abs=0.015)    # 27 % further off the centre plane
    assert reach >= radial and reach_axial >= axial
    step = 0.01
    b_rho, b_z = _brute_reach(m, thr, step, 3.2, 4.4)
    assert b_rho - 1e-4 <= reach <= b_rho + step + 1e-4
    assert b_z - 1e-4 <= reach_axial <= b_z + step + 1e-4


@pytest.mark.parametrize("threshold_mT", [0.1, 1.0, 40.0, 200.0])
def test_reach_never_below_the_line_extents_and_matches_brute_force(demo_site, threshold_mT):
    # brute force on a 2 cm grid (common practice, no source)
    m = demo_site.magnets[0]
    thr = threshold_mT * 1e-3
    axial, radial = threshold_extents_m(m, thr)
    reach, reach_axial = threshold_reach_m(m, thr, extents_m=(axial, radial))
    assert reach >= radial and reach_axial >= axial
    step = 0.02
    b_rho, b_z = _brute_reach(m, thr, step, radial + 2.0, axial + 0.5)
    assert b_rho - 1e-4 <= reach <= b_rho + step + 1e-4
    assert b_z - 1e-4 <= reach_axial <= b_z + step + 1e-4


def test_dipole_reach_is_the_centre_plane_and_the_axis():
    # point dipole, Jackson 3rd ed. Eq. 5.56: on |B| = b, r(θ) ∝ (1 + 3cos²θ)^{1/6}, so
    # ρ = r sinθ is largest at θ = 90° (the centre plane) and |z| at θ = 0 (the axis),
    # their ratio 2^{1/3}; a 1 cm loop at 0.8 m is a dipole to O((a/r)²) ≈ 2e-4
    loop = Magnet("loop", (0.0, 0.0, 0.0), (1.0, 0.0, 0.0),
                  (Coil(0.0100, 0.0101, -0.00005, 0.00005, 1.0, 1.0e4),))
    b = MU0_T_M_PER_A * loop.dipole_moment_Am2 / (4 * np.pi) * 2 / 0.8**3
    axial, radial = threshold_extents_m(loop, b)
    reach, reach_axial = threshold_reach_m(loop, b)
    assert reach == pytest.approx(radial, abs=1e-3)
    assert reach_axial == pytest.approx(axial, abs=1e-4)
    assert reach_axial == pytest.approx(0.8, rel=1e-3)
    assert reach_axial / reach == pytest.approx(2 ** (1 / 3), rel=2e-3)


def test_threshold_nowhere_reached_gives_zero():
    # a field line above every value of the field has no points (convention of extents)
    m = Magnet("m", (0.0, 0.0, 0.0), (0.0, 0.0, 1.0),
               (Coil(0.30, 0.32, -0.2, 0.2, 1000, 100.0),))
    assert threshold_reach_m(m, 1e3) == (0.0, 0.0)
