"""Generic magnet families: centre field, homogeneity, shielding, current density."""

from __future__ import annotations

import math

import numpy as np
import pytest

from fringe.field.direct import magnet_field_local_T
from fringe.field.multipole import zonal_moments_Am
from fringe.model.constants import MU0_T_M_PER_A
from fringe.model.errors import FringeInputError
from fringe.model.magnet import Coil, Magnet
from fringe.physics.families import (
    FAMILIES,
    FIT_FAMILIES,
    family,
    helmholtz_pair,
    shielded_whole_body,
    thick_solenoid,
    unshielded_whole_body,
    vertical_lab_magnet,
)


def _centre_field_direct_T(m: Magnet) -> float:
    """B_z at the centre by the direct current-sheet sum (magpylib closed form)."""
    return float(magnet_field_local_T(m, np.array([0.0]), np.array([0.0]))[1][0])


def test_thin_loop_dipole_moment_is_I_pi_R2():
    # m = I·πR² (Jackson, Classical Electrodynamics 3rd ed., Eq. 5.57)
    R, current = 0.3, 250.0
    loop = Magnet("loop", (0, 0, 0), (0, 0, 1),
                  (Coil(R - 5e-5, R + 5e-5, -5e-5, 5e-5, 1, current),))
    expected = current * math.pi * R**2
    assert loop.dipole_moment_Am2 == pytest.approx(expected, rel=1e-7)  # textbook
    assert zonal_moments_Am(loop, 3)[1] == pytest.approx(expected, rel=1e-7)  # textbook


def test_shielded_magnet_dipole_nearly_cancels():
    m = shielded_whole_body(1.5)
    main = sum(c.dipole_moment_Am2 for c in m.coils if c.current_A > 0)
    # design intent (q1 = 0 up to whole-turn rounding); common practice, no source
    assert abs(m.dipole_moment_Am2) < 1e-3 * main
    u = unshielded_whole_body(1.5)
    assert u.dipole_moment_Am2 > 0.5 * main  # unshielded keeps its dipole (sanity)


@pytest.mark.parametrize("build,b0", [
    (lambda: shielded_whole_body(1.5), 1.5),
    (lambda: shielded_whole_body(3.0, half_length_m=0.85, shield_radius_m=1.0), 3.0),
    (lambda: unshielded_whole_body(1.5), 1.5),
    (lambda: vertical_lab_magnet(9.4), 9.4),
    (lambda: vertical_lab_magnet(9.4, shielded=False), 9.4),
    (lambda: thick_solenoid(1.0), 1.0),
    (lambda: helmholtz_pair(0.01), 0.01),
])
def test_centre_field_by_independent_direct_sum(build, b0):
    m = build()
    # independent route: closed-form cylinder sum (Derby & Olbert 2010 via magpylib)
    assert _centre_field_direct_T(m) == pytest.approx(b0, rel=1e-4)


def test_whole_body_is_homogeneous_to_sixth_order():
    m = shielded_whole_body(1.5)
    z = np.array([0.0, 0.05, 0.10])
    _, bz = magnet_field_local_T(m, np.zeros(3), z)
    # b2 = b4 = 0 design (Garrett, J. Appl. Phys. 38, 2563 (1967)): the residual b6 z⁶
    # over a 20 cm sphere stays at the ppm level; a plain solenoid would be ~1e-2.
    assert np.max(np.abs(bz / bz[0] - 1.0)) < 5e-6


def test_thick_solenoid_matches_montgomery_formula():
    a1, a2, h = 0.05, 0.10, 0.15
    m = thick_solenoid(1.0, a1, a2, h)
    j = m.coils[0].current_density_A_per_m2
    alpha, beta = a2 / a1, h / a1
    # Montgomery, Solenoid Magnet Design (1969), Eq. 1.30 (Fabry factor)
    b0 = MU0_T_M_PER_A * j * a1 * beta * math.log(
        (alpha + math.hypot(alpha, beta)) / (1 + math.hypot(1, beta)))
    assert b0 == pytest.approx(1.0, rel=1e-6)


def test_helmholtz_pair_close_to_thin_loop_formula():
    m = helmholtz_pair(0.01, radius_m=0.3)
    c = m.coils[0]
    r_mean = (c.r_inner_m + c.r_outer_m) / 2
    gap = c.z_min_m + c.z_max_m  # centre-to-centre spacing of the pair
    # thin-loop Helmholtz condition: spacing = radius (Jackson Problem 5.7)
    assert gap == pytest.approx(r_mean, rel=0.05)
    # B0 = (4/5)^{3/2} μ0 NI/R (textbook), finite section within a few per cent
    b_thin = 0.8**1.5 * MU0_T_M_PER_A * c.ampere_turns / r_mean
    assert b_thin == pytest.approx(0.01, rel=0.02)


@pytest.mark.parametrize("name,low,high", [
    ("shielded_whole_body", 3e7, 4e8), ("unshielded_whole_body", 3e7, 4e8),
    ("shielded_lab", 3e7, 4e8), ("unshielded_lab", 3e7, 4e8), ("helmholtz_pair", 1e6, 1e7)])
def test_current_densities_are_realistic(name, low, high):
    m = family(name).build()
    j = np.array([abs(c.current_density_A_per_m2) for c in m.coils])
    # superconducting ~1e8 A/m² (Wilson, Superconducting Magnets, 1983, ch. 1);
    # water-cooled copper 1e6–1e7 A/m² (Montgomery 1969, ch. 2)
    assert np.all((j > low) & (j < high))
    assert len({round(abs(c.current_A), 9) for c in m.coils}) == 1  # one series current


def test_bad_family_input_is_rejected():
    with pytest.raises(FringeInputError, match="`center_field_T` must be"):
        shielded_whole_body(-1.0)
    with pytest.raises(FringeInputError, match="`shield_radius_m` must be"):
        shielded_whole_body(1.5, shield_radius_m=0.48)


def test_main_coils_carry_positive_current_over_the_design_range():
    # the design solve keeps every main winding wound one way over the stated range of
    # shapes (design intent, common practice, no source)
    for hr in (1.0, 1.5, 2.0, 2.5):
        m = unshielded_whole_body(1.5, 0.46, 0.46 * hr)
        assert all(c.current_A > 0 for c in m.coils)
    for a in (0.04, 0.1):
        for hr in (1.5, 4.0, 7.0):
            m = vertical_lab_magnet(9.4, a, a * hr, shielded=False)
            assert all(c.current_A > 0 for c in m.coils)


def test_one_registry_of_families():
    # one spelling per family: the fit's families are registry entries with every fit fact
    assert FIT_FAMILIES == ("shielded_whole_body", "unshielded_whole_body", "shielded_lab",
                            "unshielded_lab")
    for name in FIT_FAMILIES:
        f = FAMILIES[name]
        assert f.name == name and f.shielded in (True, False)
        assert f.fit is not None and f.field_range_T is not None
        assert f.warm_bore_m > 0 and f.cryostat_allowance_m > 0
        n = len(f.fit.parameters)
        assert len(f.fit.lower) == len(f.fit.upper) == len(f.fit.nominal) == n
        assert all(lo <= x <= hi for lo, x, hi in
                   zip(f.fit.lower, f.fit.nominal, f.fit.upper, strict=True))
    with pytest.raises(FringeInputError, match="`family` must be one of"):
        family("vertical_lab")
