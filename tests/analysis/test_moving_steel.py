"""Moving steel at a site: the background-only case by hand, paths, verdicts (issue 17).

Formulas as in tests/physics/test_disturbance.py: M = 3H₀ for a sphere of μ → ∞
(Jackson, *Classical Electrodynamics*, 3rd ed., Sec. 5.11), its outside field a dipole
m = M·V (Sec. 5.10), on the dipole's axis B = μ₀ m/(2π r³) (Eq. 5.56).
"""

from __future__ import annotations

import dataclasses
import math
import warnings

import numpy as np
import pytest

from fringe.analysis.moving_steel import (
    check_moving_steel,
    nearest_magnet,
    path_disturbance,
    path_points,
    segment_points,
)
from fringe.field.evaluate import field_at
from fringe.io.scenario import parse_site
from fringe.model.errors import ArgumentError, FringeWarning
from fringe.model.steel import MovingSteel
from fringe.model.verdict import Verdict
from tests.conftest import SMALL_SCENARIO_TOML

RHO = 7870.0  # kg/m³ (the attraction zone's iron; issue 17)


@pytest.fixture(scope="module")
def small_site():
    import tomllib

    return parse_site(tomllib.loads(SMALL_SCENARIO_TOML), "small.toml")


def test_background_only_far_from_the_magnet(small_site):
    """100 m out on the axis the magnet's own field (~1e-8 T) is negligible beside a
    50 µT background, so M = 3B₀/μ₀ and ΔB = μ₀·(3B₀/μ₀)·V/(2π r³) = 3B₀V/(2π r³)."""
    site = dataclasses.replace(small_site, background_field_uT=(0.0, 0.0, 50.0))
    p = np.array([[0.0, 0.0, 101.0]])  # magnet centre at z = 1 m: r = 100 m
    assert np.linalg.norm(field_at(site, p)) < 2e-4 * 50e-6  # negligible: adds < 2e-4
    d = path_disturbance(site, "m1", 2000.0, p)
    V = 2000.0 / RHO
    expected = 3.0 * 50e-6 * V / (2.0 * math.pi * 100.0 ** 3)
    assert d.delta_B_T[0] == pytest.approx(expected, rel=1e-3)
    assert d.delta_B_ppm[0] == pytest.approx(1e6 * expected / d.center_field_T, rel=1e-3)
    # the centre field: the site's field at the magnet's centre along its axis
    assert d.center_field_T == pytest.approx(field_at(site, [[0.0, 0.0, 1.0]])[0, 2])
    # the option overrides the scenario's background: reversed, ΔB changes sign
    d2 = path_disturbance(site, "m1", 2000.0, p, background_uT=(0.0, 0.0, -50.0))
    assert d2.delta_B_T[0] == pytest.approx(-expected, rel=1e-3)


def test_no_background_warns_and_uses_the_magnets_field(small_site):
    p = np.array([[0.0, 0.0, 4.0]])
    with pytest.warns(FringeWarning, match="background"):
        d = path_disturbance(small_site, "m1", 100.0, p)
    B = field_at(small_site, p)[0]  # along the axis here: ΔB = 3|B|V/(2π r³), r = 3 m
    assert abs(B[2]) < 0.716  # unsaturated (μ₀M_s/3, Jackson 5.11 with saturation)
    assert d.delta_B_T[0] == pytest.approx(3 * B[2] * (100.0 / RHO) / (2 * math.pi * 27.0),
                                           rel=1e-9)


def test_points_along_paths():
    pts = segment_points((0, 0, 0), (0, 0, 2), 5)
    np.testing.assert_allclose(pts[:, 2], [0, 0.5, 1.0, 1.5, 2.0])
    for bad in (1, 0, 2.5, True):
        with pytest.raises(ArgumentError, match="`steps`"):
            segment_points((0, 0, 0), (0, 0, 1), bad)
    pp = path_points([(0, 0, 0), (0, 0, 1), (1, 0, 1)], 0.3)
    assert len(pp) == 1 + 4 + 4 and np.all(np.linalg.norm(np.diff(pp, axis=0), axis=1) <= 0.3)
    np.testing.assert_allclose(pp[[0, 4, -1]], [[0, 0, 0], [0, 0, 1], [1, 0, 1]])


def test_unknown_magnet_and_bad_mass(small_site):
    with pytest.raises(ArgumentError, match="`magnet`"):
        path_disturbance(small_site, "nope", 1.0, [[0, 0, 5.0]], (0, 0, 50))
    with pytest.raises(ArgumentError, match="`mass_kg`"):
        path_disturbance(small_site, "m1", -1.0, [[0, 0, 5.0]], (0, 0, 50))


def test_verdicts_against_the_limit(small_site):
    path = ((3.0, 0.0, -2.0), (3.0, 0.0, 4.0))
    site = dataclasses.replace(small_site, background_field_uT=(0.0, 20.0, -44.0),
                               moving_steel=(MovingSteel("car", 1000.0, path, 1e-6),
                                             MovingSteel("bed", 1000.0, path, 1e6),
                                             MovingSteel("cart", 1000.0, path)))
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        car, bed, cart = check_moving_steel(site)
    assert car.verdict == Verdict.EXCEEDS and bed.verdict == Verdict.WITHIN
    assert cart.verdict is None  # no limit: nothing checked
    assert car.max_abs_delta_B_ppm == bed.max_abs_delta_B_ppm > 0
    assert car.disturbance.magnet == "m1"
    assert len(car.disturbance.positions_m) == 61  # 6 m at ≤ 0.1 m


def test_nearest_magnet(demo_site):
    two = dataclasses.replace(demo_site, magnets=(
        demo_site.magnets[0],
        dataclasses.replace(demo_site.magnets[0], name="far", center_m=(40.0, 4.0, 1.1))))
    assert nearest_magnet(two, [(30.0, 0.0, 0.0), (30.0, 10.0, 0.0)]) == "far"
    assert nearest_magnet(two, [(10.0, 0.0, 0.0), (10.0, 10.0, 0.0)]) == demo_site.magnets[0].name
