"""Zonal (axisymmetric Legendre) multipole expansions of a magnet's field.

Outside the sphere of radius R_enc that encloses every winding, the field of an
axisymmetric magnet is exactly (Jackson, *Classical Electrodynamics*, 3rd ed.,
Sec. 3.3 and 5.12; Smythe, *Static and Dynamic Electricity*, Sec. 7.13)::

    B_r = μ₀/4π Σ_l (l+1) q_l P_l(cosθ) / r^(l+2)
    B_θ = μ₀/4π Σ_l       q_l sinθ P_l'(cosθ) / r^(l+2)

with zonal moments q_l in A·m^(l+1); q_1 is the dipole moment m. For a circular
loop of radius a at axial position z₀ carrying I, with R₀ = √(a²+z₀²), the
on-axis field μ₀Ia²/(2(a²+(z−z₀)²)^{3/2}) expands through the Gegenbauer generating
function (1−2xt+t²)^{-3/2} = Σ C_n^{3/2}(x) tⁿ with C_n^{3/2} = P'_{n+1}
(Abramowitz & Stegun 22.9.1, 22.5.37) into::

    q_l = 2π I a² R₀^(l−1) P_l'(z₀/R₀) / (l+1)    (exterior, r > R₀)
    b_n = μ₀ I a² P'_{n+1}(z₀/R₀) / (2 R₀^(n+3))   (interior on-axis Taylor
                                                     coefficients, r < R₀)

The exterior moment of a loop is a polynomial of degree l+1 in (a, z₀), so
Gauss-Legendre quadrature over a rectangular winding of order ⌈(l+2)/2⌉ in each
direction gives it exactly.
"""

from __future__ import annotations

import math

import numpy as np

from fringe.field.quadrature_rules import gauss_legendre_panels
from fringe.model.constants import MU0_T_M_PER_A
from fringe.model.magnet import Magnet

__all__ = ["legendre_P_dP", "zonal_moments_Am", "interior_coefficients_T",
           "exterior_field_local_T", "interior_field_local_T"]


def legendre_P_dP(l_max: int, x: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Legendre polynomials P_l(x) and derivatives P_l'(x) for l = 0..l_max.

    Bonnet recurrence (A&S 22.7.10) and P'_{l+1} = P'_{l−1} + (2l+1)P_l (A&S 22.8.5
    combination). Returns two arrays of shape (l_max+1, *x.shape).
    """
    x = np.asarray(x, dtype=float)
    P = np.empty((l_max + 1, *x.shape))
    dP = np.empty_like(P)
    P[0] = 1.0
    dP[0] = 0.0
    if l_max >= 1:
        P[1] = x
        dP[1] = 1.0
    for l in range(1, l_max):
        P[l + 1] = ((2 * l + 1) * x * P[l] - l * P[l - 1]) / (l + 1)
        dP[l + 1] = dP[l - 1] + (2 * l + 1) * P[l]
    return P, dP


def _cross_section_nodes(magnet: Magnet, order: int):
    """Loop radii a, positions z0 and ampere-turn weights I over all windings."""
    a_all, z_all, i_all = [], [], []
    for c in magnet.coils:
        a, wa = gauss_legendre_panels(c.r_inner_m, c.r_outer_m, order, 1)
        z, wz = gauss_legendre_panels(c.z_min_m, c.z_max_m, order, 1)
        A, Z = np.meshgrid(a, z, indexing="ij")
        W = np.outer(wa, wz) * c.current_density_A_per_m2
        a_all.append(A.ravel())
        z_all.append(Z.ravel())
        i_all.append(W.ravel())
    return np.concatenate(a_all), np.concatenate(z_all), np.concatenate(i_all)


def zonal_moments_Am(magnet: Magnet, l_max: int) -> np.ndarray:
    """Exterior zonal moments q_l (A·m^(l+1)), l = 0..l_max, of a magnet in its frame.

    q_0 = 0 (no monopole); q_1 is the dipole moment in A·m². Exact up to rounding
    (polynomial integrand; see module notes).
    """
    a, z0, cur = _cross_section_nodes(magnet, l_max // 2 + 3)
    r0 = np.hypot(a, z0)
    _, dP = legendre_P_dP(l_max, z0 / r0)
    ls = np.arange(l_max + 1)
    q = np.sum(2 * math.pi * cur * a**2 * r0[None, :] ** (ls[:, None] - 1.0) * dP
               / (ls[:, None] + 1.0), axis=1)
    q[0] = 0.0
    return q


def interior_coefficients_T(magnet: Magnet, n_max: int, order: int = 24) -> np.ndarray:
    """On-axis Taylor coefficients b_n (T/mⁿ) of B_z about the centre, n = 0..n_max.

    Valid inside the winding-free sphere of radius ``magnet.bore_radius_m``; b_0 is
    the centre field. Gauss-Legendre quadrature of the loop formula (smooth there).
    """
    a, z0, cur = _cross_section_nodes(magnet, order)
    r0 = np.hypot(a, z0)
    _, dP = legendre_P_dP(n_max + 1, z0 / r0)
    ns = np.arange(n_max + 1)
    return np.sum(MU0_T_M_PER_A * cur * a**2 * dP[1:] / (2 * r0[None, :] ** (ns[:, None] + 3.0)),
                  axis=1)


def exterior_field_local_T(q_Am: np.ndarray, rho_m: np.ndarray,
                           z_m: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """(B_rho, B_z) in T from exterior moments at local points (valid r > R_enc)."""
    rho = np.asarray(rho_m, dtype=float)
    z = np.asarray(z_m, dtype=float)
    r = np.hypot(rho, z)
    ct = z / r
    st = rho / r
    l_max = len(q_Am) - 1
    P, dP = legendre_P_dP(l_max, ct)
    br = np.zeros_like(r)
    bt = np.zeros_like(r)
    inv = 1.0 / r
    pw = inv * inv  # r^-(l+2) at l = 0
    for l in range(1, l_max + 1):
        pw = pw * inv
        if q_Am[l] == 0.0:
            continue
        br += (l + 1) * q_Am[l] * P[l] * pw
        bt += q_Am[l] * st * dP[l] * pw
    k = MU0_T_M_PER_A / (4 * math.pi)
    br *= k
    bt *= k
    # unit vectors: r̂ = (st, ct), θ̂ = (ct, −st) in (rho, z)
    return br * st + bt * ct, br * ct - bt * st


def interior_field_local_T(b_T: np.ndarray, rho_m: np.ndarray,
                           z_m: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """(B_rho, B_z) in T from interior coefficients (valid r < bore radius).

    From the on-axis series B_z = Σ bₙ zⁿ the interior solution is
    B_r = Σ b_{l−1} r^{l−1} P_l(cosθ), B_θ = −Σ b_{l−1} r^{l−1} sinθ P_l'(cosθ)/l.
    """
    rho = np.asarray(rho_m, dtype=float)
    z = np.asarray(z_m, dtype=float)
    r = np.hypot(rho, z)
    with np.errstate(invalid="ignore", divide="ignore"):
        ct = np.where(r > 0, z / r, 1.0)
        st = np.where(r > 0, rho / r, 0.0)
    n_max = len(b_T) - 1
    P, dP = legendre_P_dP(n_max + 1, ct)
    br = np.zeros_like(r)
    bt = np.zeros_like(r)
    pw = np.ones_like(r)
    for l in range(1, n_max + 2):
        br += b_T[l - 1] * pw * P[l]
        bt -= b_T[l - 1] * pw * st * dP[l] / l
        pw = pw * r
    return br * st + bt * ct, br * ct - bt * st
