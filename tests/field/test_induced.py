"""The induced field of solved steel cells (fringe.field.induced) and its place in field_at."""

from __future__ import annotations

from dataclasses import replace

import magpylib as magpy
import numpy as np
import pytest
from scipy.spatial.transform import Rotation

from fringe.field.evaluate import field_at, field_gradient_at
from fringe.field.induced import InducedCells, cells_field_direct_T, cells_field_fast_T
from fringe.model.constants import MU0_T_M_PER_A
from fringe.model.magnet import Coil, Magnet
from fringe.model.site import Site


def _plate_cells(n: int = 16, yaw: float = 30.0) -> InducedCells:
    """An n × n × 1 plate of 2 m × 2 m × 5 mm with a smooth invented polarisation."""
    h, t = 2.0 / n, 0.005
    xs = (np.arange(n) + 0.5) * h - 1.0
    x, y = np.meshgrid(xs, xs, indexing="ij")
    a = np.radians(yaw)
    cx = x.ravel() * np.cos(a) - y.ravel() * np.sin(a)
    cy = x.ravel() * np.sin(a) + y.ravel() * np.cos(a)
    centers = np.column_stack([cx + 0.3, cy - 0.2, np.full(cx.size, 1.5)])
    pol = np.column_stack([0.5 + 0.2 * x.ravel(), 0.1 * y.ravel(), np.full(cx.size, 0.05)])
    return InducedCells(centers, np.tile([h, h, t], (cx.size, 1)), np.full(cx.size, yaw), pol)


def test_direct_sum_is_magpylibs_cuboid_sum():
    # the reference is magpylib's own object sum (getB over rotated Cuboid objects)
    cells = _plate_cells(4)
    pts = np.array([[0.1, 0.2, 1.7], [1.5, -0.3, 1.2], [0.37, -0.21, 1.501]])
    objs = []
    for c, s, y, j in zip(cells.centers_m, cells.sizes_m, cells.yaw_deg,
                          cells.polarization_T, strict=True):
        turn = Rotation.from_euler("z", y, degrees=True)
        objs.append(magpy.magnet.Cuboid(dimension=tuple(s), position=tuple(c), orientation=turn,
                                        polarization=tuple(turn.inv().apply(np.array(j)))))
    ref = magpy.getB(objs, pts, sumup=True)
    assert np.allclose(cells_field_direct_T(cells, pts), ref, rtol=1e-12, atol=1e-15)


def test_far_field_of_a_cell_is_its_dipole():
    # Jackson, Classical Electrodynamics 3rd ed., Eq. 5.56: far from a uniformly
    # magnetised body its field is that of the dipole m = M V = J V / mu0
    cells = InducedCells([[0.0, 0.0, 0.0]], [[0.1, 0.08, 0.02]], [20.0], [[0.3, -0.1, 0.7]])
    pts = np.array([[3.0, 1.0, -2.0], [0.0, 0.0, 5.0]])
    dip = magpy.misc.Dipole(moment=cells.moments_Am2[0])
    assert np.allclose(cells_field_direct_T(cells, pts), dip.getB(pts), rtol=2e-3)


def test_fast_sum_matches_direct_sum_within_1e3():
    # issue 17: the fast induced field within 1e-3 of the direct sum over the cells
    # (multipole sum of Gauss-point dipoles + exact near cells; fmm3dpy's kernel sign and
    # 4 pi convention are fixed by this comparison)
    cells = _plate_cells(16, yaw=30.0)
    rng = np.random.default_rng(7)
    far = rng.uniform([-2.0, -2.0, 0.5], [2.5, 2.0, 2.5], (400, 3))
    near = cells.centers_m[rng.integers(0, cells.count, 300)] + rng.uniform(
        [-0.1, -0.1, -0.03], [0.1, 0.1, 0.03], (300, 3))
    pts = np.concatenate([far, near])
    ref = cells_field_direct_T(cells, pts)
    fast = cells_field_fast_T(cells, pts, direct_pairs=0)
    err = np.linalg.norm(fast - ref, axis=1) / np.linalg.norm(ref, axis=1)
    assert err.max() <= 1e-3


@pytest.fixture(scope="module")
def small_site():
    coil = Coil(0.30, 0.32, -0.2, 0.2, 1000, 100.0)
    return Site("t", (Magnet("m1", (0.0, 0.0, 1.0), (0.0, 0.0, 1.0), (coil,)),))


def test_field_at_adds_a_sites_induced_field_only(small_site):
    # the superposition the issue asks for: B = B_magnets + B_induced; a bare Magnet or
    # magnet list stays free space (common practice, no source)
    cells = _plate_cells(4)
    site = replace(small_site, induced=cells)
    pts = np.array([[0.5, 0.5, 2.0], [1.0, -0.5, 1.0]])
    free = field_at(small_site, pts, method="direct")
    assert np.allclose(field_at(site, pts, method="direct"),
                       free + cells_field_direct_T(cells, pts), rtol=1e-12, atol=0)
    assert np.array_equal(field_at(site.magnets, pts, method="direct"), free)
    assert np.array_equal(field_at(site.magnets[0], pts, method="direct"), free)


def test_field_gradient_with_steel_is_curl_and_divergence_free(small_site):
    # outside the steel and the windings dB/dx is symmetric and traceless
    # (Jackson Eqs. 5.5, 5.22); the induced Jacobian is central differences
    cells = _plate_cells(4)
    site = replace(small_site, induced=cells)
    pts = np.array([[0.5, 0.5, 2.2], [1.0, -0.5, 0.8]])
    b, jac = field_gradient_at(site, pts, method="direct")
    b0, jac0 = field_gradient_at(small_site, pts, method="direct")
    ji = jac - jac0
    assert np.allclose(b - b0, cells_field_direct_T(cells, pts), rtol=1e-9, atol=0)
    scale = np.abs(ji).max()
    assert scale > 0
    assert np.abs(ji - ji.transpose(0, 2, 1)).max() <= 1e-4 * scale
    assert np.abs(np.trace(ji, axis1=1, axis2=2)).max() <= 1e-4 * scale


def test_moments_are_polarisation_times_volume():
    # m = M V, J = mu0 M (definition)
    cells = InducedCells([[0, 0, 0]], [[0.1, 0.2, 0.3]], [0.0], [[0.0, 0.0, 1.0]])
    assert cells.moments_Am2[0, 2] == pytest.approx(0.006 / MU0_T_M_PER_A, rel=1e-12)
