"""The steel solve (fringe.physics.steel): outside checks against closed-form results.

Every mesh here is coarse on purpose (the suite must stay quick); each tolerance is the
mesh error measured at that mesh, stated beside it.
"""

from __future__ import annotations

from dataclasses import replace

import magpylib as magpy
import numpy as np
import pytest

from fringe.field.evaluate import field_at
from fringe.field.induced import InducedCells, cells_field_direct_T
from fringe.model.constants import MU0_T_M_PER_A
from fringe.model.magnet import Coil, Magnet
from fringe.model.site import Site
from fringe.model.steel import MATERIALS, SteelPart
from fringe.physics.steel import (
    SATURATION_SETTLE,
    magnetization_curve_T,
    mesh_divisions,
    solve_cells,
    solve_mesh,
    solve_steel,
)

STEEL = MATERIALS["low-carbon-steel"]


@pytest.fixture(scope="module")
def small_site():
    """One invented solenoid (≈ 0.17 T at its centre at z = 1 m)."""
    coil = Coil(0.30, 0.32, -0.2, 0.2, 1000, 100.0)
    return Site("t", (Magnet("m1", (0.0, 0.0, 1.0), (0.0, 0.0, 1.0), (coil,)),))


def _voxels(inside, half_width_m: float, n: int):
    """magpylib Cuboid cells of an n³ grid over [-w, w]³ whose centres satisfy ``inside``."""
    h = 2 * half_width_m / n
    xs = (np.arange(n) + 0.5) * h - half_width_m
    g = np.array(np.meshgrid(xs, xs, xs, indexing="ij")).reshape(3, -1).T
    g = g[inside(np.linalg.norm(g, axis=1))]
    return [magpy.magnet.Cuboid(dimension=(h, h, h), position=tuple(p),
                                polarization=(0.0, 0.0, 0.0)) for p in g], g, h


def test_unit_permeability_changes_nothing(small_site):
    # chi = mu_r - 1 = 0: no magnetisation, the field is the free-space one to rounding
    # (definition of the susceptibility; common practice, no source)
    part = SteelPart("air plate", (0.2, 0.1, 1.7), (0.6, 0.4, 0.01), STEEL,
                     relative_permeability=1.0)
    sol = solve_steel(small_site, [part], start_divisions=4)
    assert not np.any(sol.cells.polarization_T)
    site = replace(small_site, steel=(part,), induced=sol)
    pts = np.array([[0.2, 0.1, 1.8], [0.5, 0.5, 1.0], [1.0, 0.0, 2.0]])
    assert np.array_equal(field_at(site, pts, method="direct"),
                          field_at(small_site, pts, method="direct"))
    assert sol.parts[0].force_N == (0.0, 0.0, 0.0)
    assert not sol.parts[0].saturated


def test_high_permeability_cube_takes_3VH_within_its_demag_factor_error():
    # uniform-magnetisation model: a cube's magnetometric demagnetising factor is 1/3 by
    # symmetry (Chen, Brug & Goldfarb, IEEE Trans. Magn. 27 (1991) 3601), so m = 3 V H0
    # for chi -> inf. A cube's magnetisation is not uniform, and its true limit is the
    # polarisability of a perfectly conducting cube, 3.6442 V H0 (Hubbard & Douglas,
    # Phys. Rev. E 47 (1993) R2983; from memory): 21 % above 3VH0, the error of the 1/3
    # factor. The 8^3 point-matched mesh rises towards it (1.14 at 4^3, 1.19 at 8^3
    # times 3VH0, measured); tolerance 4 % of the conducting-cube value.
    b0 = 1e-3
    cube = SteelPart("cube", (0.0, 0.0, 0.0), (0.1, 0.1, 0.1), STEEL,
                     relative_permeability=1e4)
    sol = solve_mesh((), [cube], 1, background_T=(0.0, 0.0, b0), start_divisions=4)
    m = sol.cells.moments_Am2.sum(axis=0)
    uniform = 3 * cube.volume_m3 * b0 / MU0_T_M_PER_A
    assert 1.0 < m[2] / uniform < 1.0 + 0.25
    assert m[2] / (uniform * 3.6442 / 3) == pytest.approx(1.0, abs=0.04)
    assert abs(m[0]) < 1e-6 * uniform and abs(m[1]) < 1e-6 * uniform


def test_sphere_of_cells_matches_the_analytic_sphere():
    # Jackson, Classical Electrodynamics 3rd ed., §5.10-5.11: a sphere of permeability
    # mu in a uniform B0 takes M = 3 (mu - 1)/(mu + 2) H0. The staircase sphere of
    # 10^3-grid voxels (V taken as the voxels' volume) is within 5 % (its mesh error,
    # measured ~2 %).
    mu, b0 = 10.0, 1e-3
    cells, centres, h = _voxels(lambda r: r <= 0.1, 0.1, 10)
    n = len(cells)
    j, _, _, settled = solve_cells(cells, np.full(n, mu - 1), np.full(n, 2.0),
                                   np.tile([0.0, 0.0, b0], (n, 1)))
    assert settled
    m = j.sum(axis=0) * h**3 / MU0_T_M_PER_A
    expected = 3 * (mu - 1) / (mu + 2) * b0 / MU0_T_M_PER_A * n * h**3
    assert abs(m[2] / expected - 1) < 0.05


def test_thick_spherical_shell_shields_as_jackson_5_12():
    # Jackson §5.12: inside a shell of radii a < b and permeability mu in a uniform B0
    # the field is B0 * 9 mu / ((2 mu + 1)(mu + 2) - 2 (a/b)^3 (mu - 1)^2).
    # Mesh stated in docs/steel.md: 12^3 grid over the outer sphere (776 voxels),
    # a/b = 0.5, mu = 5: measured 13 % above the formula (staircase surfaces leak; 9 % on
    # a 16^3 grid), tolerance 15 %.
    mu, b0, b, a = 5.0, 1e-3, 0.12, 0.06
    cells, centres, h = _voxels(lambda r: (r >= a) & (r <= b), b, 12)
    n = len(cells)
    j, _, _, _ = solve_cells(cells, np.full(n, mu - 1), np.full(n, 2.0),
                             np.tile([0.0, 0.0, b0], (n, 1)))
    solved = InducedCells(centres, np.full((n, 3), h), np.zeros(n), j)
    inside = b0 + cells_field_direct_T(solved, [[0.0, 0.0, 0.0]])[0, 2]
    expected = 9 * mu / ((2 * mu + 1) * (mu + 2) - 2 * (a / b) ** 3 * (mu - 1) ** 2)
    assert inside < b0
    assert abs((inside / b0) / expected - 1) < 0.15


def test_field_behind_a_plate_converges_to_the_tolerance(small_site):
    # issue 17 mesh rule: the field behind the plate changes by less than the tolerance
    # between the chosen mesh and one twice as fine (common practice, no source). The
    # suite checks it at 5 % on a small plate to stay quick (the 1 % default is shown on
    # the 2 m plate by benchmarks/bench_steel.py, docs/steel.md): point matching
    # converges at first order (7 %, 3 %, 1.2 % from 64 to 1024 cells here, measured).
    plate = SteelPart("plate", (0.1, 0.0, 1.5), (0.4, 0.4, 0.01), MATERIALS["rebar-steel"])
    sol = solve_steel(small_site, [plate], tolerance=0.05, start_divisions=4, max_cells=1100)
    assert sol.converged
    level = len(sol.history) - 1
    finer = solve_mesh(small_site, [plate], level + 1, start_divisions=4)
    behind = np.array([[0.1, 0.0, 1.6], [0.2, 0.1, 1.65]])
    b1, b2 = sol.field_T(behind), finer.field_T(behind)
    assert np.max(np.linalg.norm(b1 - b2, axis=1) / np.linalg.norm(b2, axis=1)) < 0.05


def test_force_matches_virtual_work(small_site):
    # force on a linear part = derivative of the interaction energy W = 1/2 sum m.B_ext
    # at constant currents (Jackson §5.16 and Eq. 4.93 for induced dipoles); the solve's
    # force is the dipole sum F = sum (dB/dx)^T m (Jackson Eq. 5.69). Tolerance 5 %:
    # both carry the same mesh, their difference is the point-dipole error of the cells.
    def part(dx=0.0, dz=0.0):
        return SteelPart("block", (0.25 + dx, 0.05, 1.45 + dz), (0.1, 0.1, 0.04), STEEL,
                         relative_permeability=50.0)

    sol = solve_mesh(small_site, [part()], 0, start_divisions=4)
    assert not sol.parts[0].saturated
    force = np.array(sol.parts[0].force_N)

    def energy(p):
        s = solve_mesh(small_site, [p], 0, start_divisions=4)
        b = field_at(small_site, s.cells.centers_m)
        return 0.5 * float(np.sum(s.cells.moments_Am2 * b))

    d = 1e-3
    fx = (energy(part(dx=d)) - energy(part(dx=-d))) / (2 * d)
    fz = (energy(part(dz=d)) - energy(part(dz=-d))) / (2 * d)
    assert fx == pytest.approx(force[0], rel=0.05)
    assert fz == pytest.approx(force[2], rel=0.05)
    assert abs(force[2]) > 0.1 * np.linalg.norm(force)


def test_thin_plate_near_a_strong_magnet_saturates(small_site):
    # a 2 mm plate along the return flux just outside the winding: chi0 * mu0 H far above
    # J_s, so the curve J = J_s tanh(chi0 mu0 H / J_s) (common practice) saturates it;
    # the same plate 3 m away does not
    close = SteelPart("close", (0.42, 0.0, 1.0), (0.002, 0.3, 0.3), STEEL)
    far = replace(close, name="far", center_m=(3.0, 0.0, 1.0))
    sol = solve_mesh(small_site, [close], 0, start_divisions=6)
    assert sol.parts[0].saturated
    assert sol.parts[0].max_field_in_steel_T > 0.9 * STEEL.saturation_T
    j = np.linalg.norm(sol.cells.polarization_T, axis=1)
    assert j.max() <= STEEL.saturation_T * (1 + SATURATION_SETTLE)
    assert not solve_mesh(small_site, [far], 0, start_divisions=6).parts[0].saturated


def test_curve_slope_and_limit():
    # J = J_s tanh(chi0 h / J_s): slope chi0 at 0, J_s at infinity (its definition)
    assert float(magnetization_curve_T(1e-9, 999.0, 2.1)) == pytest.approx(999e-9, rel=1e-9)
    assert float(magnetization_curve_T(10.0, 999.0, 2.1)) == pytest.approx(2.1, rel=1e-12)


def test_mesh_divisions_halve_the_cell_edge():
    # the mesh rule of docs/steel.md: longest edge in `start` cells, then halved
    assert mesh_divisions((2.0, 1.0, 0.005), 0, 10) == (10, 5, 1)
    assert mesh_divisions((2.0, 1.0, 0.005), 1, 10) == (20, 10, 1)


def test_solution_is_cached_and_reports_mass(small_site):
    plate = SteelPart("plate", (0.1, 0.0, 1.6), (0.4, 0.3, 0.004), STEEL)
    a = solve_steel(small_site, [plate], tolerance=0.2, start_divisions=4)
    assert solve_steel(small_site, [plate], tolerance=0.2, start_divisions=4) is a
    # mass = density x volume (definition)
    assert a.parts[0].mass_kg == pytest.approx(7870.0 * 0.4 * 0.3 * 0.004, rel=1e-12)
