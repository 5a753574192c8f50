"""Implant figures at a point (|∇|B||, |B|·|∇|B||) and the peak helium flow.

Independent references: the elliptic-integral field of a circular loop (Smythe, *Static
and Dynamic Electricity*, 2nd ed. 1950, §7.10; Jackson, *Classical Electrodynamics*,
3rd ed., §5.5), differentiated here by central differences with scipy's elliptic
integrals, not with fringe's code; the on-axis loop field B_z = μ₀Ia²/(2(a²+z²)^{3/2})
(Jackson Eq. 5.40 region) and its exact derivative; the point-dipole field (Jackson
Eq. 5.56); and the exponential discharge W(t) = W·e^(−2t/τ) worked by hand.
"""

from __future__ import annotations

import json
import math

import numpy as np
import pytest
from scipy.special import ellipe, ellipk

from fringe.field.evaluate import field_gradient_at, grad_abs_B_T_per_m
from fringe.model.constants import MU0_T_M_PER_A
from fringe.model.magnet import Coil, Magnet
from fringe.physics.quench import (
    peak_helium_flow_kg_per_s,
    quench_budget,
    vent_gas_velocity_m_per_s,
)

A_M = 0.5          # loop radius, m (invented)
I_A = 1000.0       # loop current, A (invented)
THIN_M = 1e-4      # winding cross-section of the stand-in loop, m


def _loop_magnet() -> Magnet:
    """A winding 0.1 mm square at radius 0.5 m: a circular loop to (0.1 mm/d)² ~ 1e-7."""
    coil = Coil(A_M - THIN_M / 2, A_M + THIN_M / 2, -THIN_M / 2, THIN_M / 2, 1, I_A)
    return Magnet("loop", (0.0, 0.0, 0.0), (0.0, 0.0, 1.0), (coil,))


def _loop_B(points: np.ndarray) -> np.ndarray:
    """B (T) of the loop at points (N, 3), from the complete elliptic integrals."""
    x, y, z = points.T
    rho = np.hypot(x, y)
    s = (A_M + rho) ** 2 + z**2
    m = 4 * A_M * rho / s
    K, E = ellipk(m), ellipe(m)
    d = (A_M - rho) ** 2 + z**2
    c = MU0_T_M_PER_A * I_A / (2 * math.pi * np.sqrt(s))
    bz = c * (K + (A_M**2 - rho**2 - z**2) / d * E)
    b_rho = c * z / rho * (-K + (A_M**2 + rho**2 + z**2) / d * E)
    return np.column_stack([b_rho * x / rho, b_rho * y / rho, bz])


def _fd_grad_abs_B(points: np.ndarray, h: float = 1e-4) -> np.ndarray:
    """Central differences of |B| of :func:`_loop_B` (error ~ h² |B'''|)."""
    out = np.empty_like(points)
    for j in range(3):
        e = np.zeros(3)
        e[j] = h
        up = np.linalg.norm(_loop_B(points + e), axis=1)
        dn = np.linalg.norm(_loop_B(points - e), axis=1)
        out[:, j] = (up - dn) / (2 * h)
    return out


OFF_AXIS = np.array([[0.3, 0.1, 0.25], [0.8, -0.2, 0.1], [0.1, 0.45, -0.4],
                     [1.2, 0.7, 0.9], [0.35, 0.0, 0.2]])


@pytest.mark.parametrize("method", ["auto", "direct"])
def test_loop_gradient_off_axis_matches_differences_of_the_elliptic_field(method):
    """Off axis: fringe's ∇|B| (analytic on the fast path, differences of the direct sum
    otherwise) against central differences of the elliptic-integral loop field."""
    B, J = field_gradient_at(_loop_magnet(), OFF_AXIS, method=method)
    got = grad_abs_B_T_per_m(B, J)
    want = _fd_grad_abs_B(OFF_AXIS)
    # tolerance: fringe's documented gradient accuracy (1e-3 of |J| + |B|/R) bounds it;
    # the stand-in loop and the reference's differences add ~1e-7
    scale = np.linalg.norm(want, axis=1) + np.linalg.norm(_loop_B(OFF_AXIS), axis=1) / A_M
    assert np.all(np.linalg.norm(got - want, axis=1) <= 1e-3 * scale)
    assert np.allclose(got, want, rtol=2e-3, atol=0)


def test_reference_differences_converge():
    """The reference's step is small enough: halving it changes ∇|B| by < 1e-6."""
    g1 = _fd_grad_abs_B(OFF_AXIS, 2e-4)
    g2 = _fd_grad_abs_B(OFF_AXIS, 1e-4)
    assert np.allclose(g1, g2, rtol=1e-6)


@pytest.mark.parametrize("z_m", [0.05, 0.3, 0.7, 1.5])
def test_loop_gradient_on_axis_matches_the_analytic_derivative(z_m):
    """On the axis |B| = μ₀Ia²/(2(a²+z²)^{3/2}); d|B|/dz = −3μ₀Ia²z/(2(a²+z²)^{5/2})."""
    B, J = field_gradient_at(_loop_magnet(), [[0.0, 0.0, z_m]])
    g = grad_abs_B_T_per_m(B, J)[0]
    want = -3 * MU0_T_M_PER_A * I_A * A_M**2 * z_m / (2 * (A_M**2 + z_m**2) ** 2.5)
    assert g[2] == pytest.approx(want, rel=1e-4)
    assert abs(g[0]) + abs(g[1]) <= 1e-6 * abs(want)


@pytest.mark.parametrize("direction", [(0.0, 0.0, 1.0), (1.0, 0.0, 0.0)])
def test_force_product_of_the_far_field_is_the_dipole_law(direction):
    """Far away the loop is a dipole m = IπA²: |B| ∝ r⁻³ f(θ), and on the axis and in
    the equatorial plane ∂f/∂θ = 0, so |B|·|∇|B|| = 3|B|²/r (Jackson Eq. 5.56)."""
    r = 20 * A_M
    p = np.array([direction]) * r
    B, J = field_gradient_at(_loop_magnet(), p)
    g = np.linalg.norm(grad_abs_B_T_per_m(B, J), axis=1)[0]
    m = I_A * math.pi * A_M**2
    b_dipole = MU0_T_M_PER_A * m / (4 * math.pi * r**3) * (2.0 if direction[2] else 1.0)
    # the loop's next (octupole) term is ~(a/r)² = 0.25 % of the dipole here
    assert np.linalg.norm(B[0]) * g == pytest.approx(3 * b_dipole**2 / r, rel=1e-2)


def test_peak_helium_flow_worked_by_hand():
    """W = 3 MJ, τ = 150 s, h_fg = 20.75 kJ/kg: P(0) = 2W/τ = 40 kW, so 1.9277 kg/s."""
    assert float(peak_helium_flow_kg_per_s(3.0e6, 150.0, 20.75e3)) == pytest.approx(
        40_000.0 / 20_750.0, rel=1e-12)
    # a 200 mm vent carrying 1 m³/s: v = 1/(π·0.01) = 31.831 m/s
    assert float(vent_gas_velocity_m_per_s(1.0, 0.2)) == pytest.approx(31.830989, rel=1e-7)


def test_budget_carries_the_peak_flow_with_a_dump_circuit():
    """quench_budget: 2W/(τ·h_fg) with τ = L/R and CoolProp's h_fg; gas at room density."""
    b = quench_budget(2.0e6, 1000.0, 150.0, dump_ohm=0.5, inductance_H=80.0,
                      initial_current_A=223.6)
    tau = 80.0 / 0.5
    want = 2 * 2.0e6 / (tau * b.helium.latent_heat_J_per_kg)
    assert b.peak_helium_flow_kg_per_s == pytest.approx(want, rel=1e-12)
    assert b.peak_gas_flow_m3_per_s == pytest.approx(want / b.helium.gas_density_kg_per_m3)
    vented = b.with_vent(0.25)
    assert vented.vent_gas_velocity_m_per_s == pytest.approx(
        b.peak_gas_flow_m3_per_s / (math.pi * 0.25**2 / 4))
    assert any("supplier's design" in c and "denser" in c for c in vented.cautions)
    assert quench_budget(2.0e6, 1000.0, 150.0).peak_helium_flow_kg_per_s is None


def test_quench_json_and_probe_json_carry_the_new_keys(run_cli, demo_site):
    f = demo_site.source_file
    name = demo_site.magnets[0].name
    code, out, err = run_cli("quench", f, "--magnet", name, "--helium-L", "1500",
                             "--room-volume-m3", "200", "--dump-ohm", "0.5",
                             "--vent-diameter-mm", "250", "--json")
    assert code == 0, err
    d = json.loads(out)
    assert d["peak_helium_flow_kg_per_s"] > 0 and d["peak_gas_flow_m3_per_s"] > 0
    assert d["vent_gas_velocity_m_per_s"] == pytest.approx(
        d["peak_gas_flow_m3_per_s"] / (math.pi * 0.25**2 / 4))
    code, out, err = run_cli("quench", f, "--magnet", name, "--helium-L", "1500",
                             "--room-volume-m3", "200", "--vent-diameter-mm", "250")
    assert code == 2 and "`--vent-diameter-mm` must be given with --dump-ohm" in err
    code, out, err = run_cli("probe", f, "--at", "9", "4", "1.1", "--json")
    assert code == 0, err
    row = json.loads(out)["points"][0]
    assert row["force_product_T2_per_m"] == pytest.approx(
        row["B_abs_T"] * row["grad_abs_B_T_per_m"])
    assert row["grad_abs_B_T_per_m"] > 0
