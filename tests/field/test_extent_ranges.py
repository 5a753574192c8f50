"""Inner and outer limits of a line for a field known to ±u
(fringe.field.extents.threshold_extent_ranges_m)."""

from __future__ import annotations

import math

import pytest

from fringe.field.extents import threshold_extent_ranges_m, threshold_extents_m
from fringe.model.errors import FringeInputError
from fringe.model.magnet import Coil, Magnet

# A small coil (radius 5 cm, 1000 turns × 100 A: dipole moment m = NIπa² ≈ 790 A·m²)
# and a line far from it: the 0.01 mT line lies near r ≈ (μ0 m / (2π B))^(1/3) ≈ 2.5 m
# on the axis, 50 radii out, where the field is a dipole's to about (a/r)² ≈ 4e-4.
SMALL = Magnet("small coil", (0.0, 0.0, 0.0), (0.0, 0.0, 1.0),
               (Coil(0.05, 0.051, -0.0005, 0.0005, 1000, 100.0),))
THRESHOLD_T = 1e-5


@pytest.mark.parametrize("u", [0.05, 0.10, 0.30])
def test_dipole_far_field_extents_scale_as_cube_root(u):
    """Dipole law (Jackson, Classical Electrodynamics, 3rd ed., Eq. 5.56): |B| = k(θ)/r³
    on every ray, so the line |B| = t lies at r(t) = (k/t)^(1/3). The inner limit is the
    line at t/(1 − u): r_in = (k(1 − u)/t)^(1/3) = r·(1 − u)^(1/3); the outer limit, at
    t/(1 + u): r_out = r·(1 + u)^(1/3). Worked for u = 0.10: (0.9)^(1/3) = 0.9655,
    (1.1)^(1/3) = 1.0323, so a 2.5 m line moves in by 8.6 cm and out by 8.1 cm.

    Tolerance 1e-3 relative: the l = 3 moment of a loop adds a relative term of order
    (a/r)² ≈ 4e-4 to the field at 2.5 m, which changes r(t) by a third of that and the
    ratio r_in/r by much less; the extents are refined to 0.1 mm (4e-5 of 2.5 m).
    """
    ax, rad = threshold_extents_m(SMALL, THRESHOLD_T)
    assert 2.0 < ax < 3.0 and ax / rad == pytest.approx(2 ** (1 / 3), rel=1e-3)  # dipole
    (ax_in, ax_out), (rad_in, rad_out) = threshold_extent_ranges_m(SMALL, THRESHOLD_T, u)
    assert ax_in == pytest.approx(ax * (1 - u) ** (1 / 3), rel=1e-3)
    assert ax_out == pytest.approx(ax * (1 + u) ** (1 / 3), rel=1e-3)
    assert rad_in == pytest.approx(rad * (1 - u) ** (1 / 3), rel=1e-3)
    assert rad_out == pytest.approx(rad * (1 + u) ** (1 / 3), rel=1e-3)
    assert ax_in < ax < ax_out and rad_in < rad < rad_out


def test_worked_numbers_for_ten_percent():
    """The worked factors of the docstring above (arithmetic, no source)."""
    assert (0.9) ** (1 / 3) == pytest.approx(0.9655, abs=1e-4)
    assert (1.1) ** (1 / 3) == pytest.approx(1.0323, abs=1e-4)


def test_no_uncertainty_gives_the_extents_themselves():
    """u = 0: both limits are the extent (definition)."""
    ax, rad = threshold_extents_m(SMALL, THRESHOLD_T)
    assert threshold_extent_ranges_m(SMALL, THRESHOLD_T, 0.0) == ((ax, ax), (rad, rad))
    assert threshold_extent_ranges_m(SMALL, THRESHOLD_T, 0.0, extents_m=(1.0, 2.0)) == \
        ((1.0, 1.0), (2.0, 2.0))


@pytest.mark.parametrize("u", [-0.1, 1.0, 1.5, math.nan])
def test_uncertainty_outside_zero_to_one_is_refused(u):
    with pytest.raises(FringeInputError, match="uncertainty"):
        threshold_extent_ranges_m(SMALL, THRESHOLD_T, u)
