"""Stored energy, inductance and energy density of coaxial rectangular-section windings.

Two independent routes to the magnetic energy of a magnet:

1. **Circuit route** ``W = ½ Σᵢⱼ Iᵢ Iⱼ Mᵢⱼ`` with the inductance matrix M of the
   windings. Mᵢⱼ is Maxwell's mutual inductance of two coaxial circular filaments
   (complete elliptic integrals; Maxwell 1873, Art. 701; Grover 1946, Ch. 13,
   Eq. 1) averaged over both rectangular cross-sections::

       Mᵢⱼ = NᵢNⱼ/(AᵢAⱼ) ∫_Ωᵢ ∫_Ωⱼ M_fil(r₁, z₁; r₂, z₂) dA₁ dA₂

   The filament kernel is log-singular where the two filaments coincide
   (M_fil ≈ μ₀ r (ln(8r/d) − 2), d the distance in the (r, z) plane). The singular
   part ``S = −μ₀ (r₁+r₂)/2 · ln d`` is subtracted analytically: its integral over
   two rectangles reduces to the closed-form logarithmic potential of a uniform
   rectangle (Φ = ∫ ln|x−y| dA_y, the function Maxwell used for geometric mean
   distances; Maxwell 1873, Art. 691–692) integrated once more by Gauss–Legendre.
   The remainder ``M_fil − S`` is continuous (its leading non-smooth term is
   O(d² ln d)), so composite Gauss–Legendre over both cross-sections converges fast;
   the convergence is shown in ``tests/test_energy_inductance.py``.

2. **Field route** ``W = ∫ B²/(2μ₀) dV`` (Jackson, *Classical Electrodynamics*,
   3rd ed., Eq. 5.148) over the (ρ, z) half-plane with composite Gauss–Legendre
   panels split at every winding edge, inside a sphere, plus the exact energy of the
   exterior multipole field outside it from the zonal moments of
   :func:`fringe.field.multipole.zonal_moments_Am`.

References
----------
J. C. Maxwell, *A Treatise on Electricity and Magnetism*, 1873, Arts. 691–701.
F. W. Grover, *Inductance Calculations*, Van Nostrand, 1946 (Dover reprint 2004).
S. Babic and C. Akyel, "Improvement in calculation of the self- and mutual
inductance of thin-wall solenoids and disk coils", IEEE Trans. Magn. 36 (2000) 1970.
J. D. Jackson, *Classical Electrodynamics*, 3rd ed., Wiley, 1999, Sec. 5.16–5.17.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from functools import lru_cache

import numpy as np
from scipy.special import ellipe, ellipkm1

from fringe.field.quadrature_rules import composite_rule, gauss_legendre_panels
from fringe.model.constants import DEFAULT_ENVELOPE_MARGIN_M, MU0_T_M_PER_A
from fringe.model.errors import FringeInputError, must_be
from fringe.model.magnet import Coil, Magnet

__all__ = [
    "loop_mutual_inductance_H", "rectangle_log_potential", "coil_pair_inductance_H",
    "inductance_matrix_H", "coil_currents_A", "stored_energy_J", "circuit_inductance_H",
    "center_field_T", "winding_field_local_T", "energy_in_cylinder_J",
    "exterior_energy_outside_sphere_J", "field_energy_J", "envelope_cylinder_m",
    "energy_outside_cylinder_J", "energy_outside_sphere_J", "energy_outside_box_J",
    "check_box", "mutual_energy_J", "site_mutual_energies", "MagnetEnergy", "magnet_energy",
    "DEFAULT_ORDER", "INDUCTANCE_RTOL", "MAX_ORDER", "FIELD_RADIAL_ORDER",
    "DEFAULT_ENVELOPE_MARGIN_M",
]

#: Starting Gauss–Legendre order (nodes per panel and direction) of the adaptive
#: inductance integrals; the order grows by 1.5× until two successive values agree to
#: :data:`INDUCTANCE_RTOL` (at most :data:`MAX_ORDER`).
DEFAULT_ORDER: int = 8

#: Relative agreement of successive orders at which the adaptive inductance stops.
#: The convergence is algebraic (~n⁻⁴, from the O(d² ln d) remainder), so the error of
#: the returned (higher-order) value is about a quarter of this.
INDUCTANCE_RTOL: float = 1e-5

#: Largest order the adaptive inductance integral tries.
MAX_ORDER: int = 40

MU0 = MU0_T_M_PER_A


# -- kernels --------------------------------------------------------------------------

def loop_mutual_inductance_H(r1_m, r2_m, dz_m) -> np.ndarray:
    """Mutual inductance in H of two coaxial circular filaments (Maxwell's formula).

    Parameters
    ----------
    r1_m, r2_m : array_like
        Loop radii in m (> 0), broadcastable.
    dz_m : array_like
        Axial separation in m.

    Returns
    -------
    ndarray
        ``M = μ₀ √(r₁r₂) [(2/k − k) K(k) − (2/k) E(k)]``,
        ``k² = 4r₁r₂ / ((r₁+r₂)² + dz²)``; infinite where the loops coincide.

    Notes
    -----
    scipy's ``ellipk/ellipe`` take the parameter m = k²; K is evaluated through
    ``ellipkm1(1 − m)`` with 1 − m formed directly so that nearly coincident loops keep
    full precision.

    References
    ----------
    Maxwell 1873, Art. 701; Grover 1946, Ch. 13; Jackson 1999, Eq. 5.37 (the loop's
    vector potential A_φ, of which M = 2πr₂A_φ/I₁).
    """
    r1 = np.asarray(r1_m, dtype=float)
    r2 = np.asarray(r2_m, dtype=float)
    dz = np.asarray(dz_m, dtype=float)
    s = (r1 + r2) ** 2 + dz * dz
    p = ((r1 - r2) ** 2 + dz * dz) / s  # 1 - m, formed without cancellation
    m = 1.0 - p  # = 4 r1 r2 / s, never above 1 by rounding
    k = np.sqrt(m)
    with np.errstate(divide="ignore", invalid="ignore"):
        kk = ellipkm1(p)
        ee = ellipe(m)
        return MU0 * np.sqrt(r1 * r2) * ((2.0 / k - k) * kk - 2.0 * ee / k)


def _F(u: np.ndarray, v: np.ndarray) -> np.ndarray:
    """Antiderivative with ∂²F/∂u∂v = ln √(u² + v²) (checked in the tests)."""
    uu, vv = u * u, v * v
    r2 = uu + vv
    with np.errstate(divide="ignore", invalid="ignore"):
        lg = np.where(r2 > 0, np.log(np.where(r2 > 0, r2, 1.0)), 0.0)
        t2 = np.where(u != 0, uu * np.arctan(v / np.where(u != 0, u, 1.0)), 0.0)
        t3 = np.where(v != 0, vv * np.arctan(u / np.where(v != 0, v, 1.0)), 0.0)
    return 0.5 * (u * v * lg - 3.0 * u * v + t2 + t3)


def rectangle_log_potential(x_m, y_m, x0, x1, y0, y1) -> np.ndarray:
    """Logarithmic potential ``∫∫_R ln|p − q| dA_q`` (m²·ln m) of the rectangle R.

    R = [x0, x1] × [y0, y1]; p = (x, y). Closed form from the corner values of
    :func:`_F` (Maxwell 1873, Art. 692, the integral behind the geometric mean
    distance of a rectangle).
    """
    x = np.asarray(x_m, dtype=float)
    y = np.asarray(y_m, dtype=float)
    return (_F(x - x0, y - y0) - _F(x - x1, y - y0) - _F(x - x0, y - y1)
            + _F(x - x1, y - y1))


def _regular_kernel(r1, z1, r2, z2) -> np.ndarray:
    """``M_fil + μ₀ (r₁+r₂)/2 · ln d`` (H): the filament kernel minus its log singularity.

    At coincidence the limit ``μ₀ r (ln 8r − 2)`` is used, from the expansion of Maxwell's
    formula for nearly coincident circles, M ≈ μ₀ r (ln(8r/d) − 2) for d ≪ r (Maxwell
    1873, Arts. 704–705; Grover 1946, Ch. 13). Proof sketch: K(k) = ln(4/k′) + O(k′² ln k′),
    E(k) = 1 + O(k′² ln k′), k′ = d/√((r₁+r₂)² + Δz²), and √(r₁r₂) − (r₁+r₂)/2 = O(d²),
    so the remainder is continuous with an O(d² ln d) leading non-smooth term.
    """
    d2 = (r1 - r2) ** 2 + (z1 - z2) ** 2
    same = d2 <= 1e-28 * (r1 + r2) ** 2
    d2s = np.where(same, 1.0, d2)
    m = np.where(same, 0.0, loop_mutual_inductance_H(r1, r2, np.where(same, 1.0, z1 - z2)))
    reg = m + MU0 * 0.5 * (r1 + r2) * 0.5 * np.log(d2s)
    r = 0.5 * (r1 + r2)
    return np.where(same, MU0 * r * (np.log(8.0 * r) - 2.0), reg)


# -- quadrature over cross-sections ---------------------------------------------------

def _rect_nodes(c: Coil, order: int, cell_m: float):
    """Tensor Gauss–Legendre nodes (r, z, weight) over a coil section.

    Panels no larger than ``cell_m``; ``order`` nodes per panel along a side as long as
    the cell, proportionally fewer (at least 2) along a side much shorter than it (a thin
    wall needs no more: the kernel varies on the scale of the cell there).
    """
    def side(a: float, b: float):
        n_p = max(1, math.ceil((b - a) / cell_m - 1e-9))
        n_o = max(2, min(order, math.ceil(order * (b - a) / n_p / cell_m - 1e-9)))
        return gauss_legendre_panels(a, b, n_o, n_p)

    r, wr = side(c.r_inner_m, c.r_outer_m)
    z, wz = side(c.z_min_m, c.z_max_m)
    R, Z = np.meshgrid(r, z, indexing="ij")
    return R.ravel(), Z.ravel(), np.outer(wr, wz).ravel()


def _cell_size(c: Coil) -> float:
    """Panel size of a section: its smaller side, but at least a quarter of its mean
    radius (the scale on which the filament kernel varies) and at most its larger side."""
    lo, hi = sorted((c.thickness_m, c.length_m))
    return min(hi, max(lo, 0.125 * (c.r_inner_m + c.r_outer_m))) * 1.0000001


def coil_pair_inductance_H(c1: Coil, c2: Coil, order: int | None = None,
                           rtol: float = INDUCTANCE_RTOL) -> float:
    """Mutual (or self, if ``c1 is c2``) inductance in H of two coaxial windings.

    Turns included: ``M = N₁N₂/(A₁A₂) ∫∫ M_fil dA₁ dA₂`` for uniform current density.

    Parameters
    ----------
    c1, c2 : Coil
        Windings in the same local frame (coaxial).
    order : int, optional
        Fixed Gauss–Legendre nodes per panel and direction (used by the convergence
        tests). Default: adaptive — start at :data:`DEFAULT_ORDER` and raise the order
        by 1.5× until two successive values agree to ``rtol`` (stated error ≈ rtol/4,
        see :data:`INDUCTANCE_RTOL`); :data:`MAX_ORDER` caps it.

    References
    ----------
    Maxwell 1873, Arts. 691–701; Grover 1946, Ch. 13 and 16 (averaging the filament
    formula over the cross-sections).
    """
    if order is None:
        n = DEFAULT_ORDER
        prev = _pair_fixed_order(c1, c2, n)
        while True:
            n = min(MAX_ORDER, math.ceil(1.5 * n))
            val = _pair_fixed_order(c1, c2, n)
            if abs(val - prev) <= rtol * abs(val) or n >= MAX_ORDER:
                return val
            prev = val
    return _pair_fixed_order(c1, c2, int(order))


def _pair_fixed_order(c1: Coil, c2: Coil, order: int) -> float:
    """:func:`coil_pair_inductance_H` at one fixed Gauss–Legendre order."""
    r1, z1, w1 = _rect_nodes(c1, order, _cell_size(c1))
    r2, z2, w2 = _rect_nodes(c2, order, _cell_size(c2))
    reg = _regular_kernel(r1[:, None], z1[:, None], r2[None, :], z2[None, :])
    total = w1 @ reg @ w2
    # analytic part: −μ₀/2 [∫_Ω1 r₁ Φ₂ dA₁ + ∫_Ω2 r₂ Φ₁ dA₂]. Φ has (x ln x)-type
    # behaviour at the section corners, so this cheap O(n²) sum uses 4× the order.
    r1, z1, w1 = _rect_nodes(c1, 4 * order, _cell_size(c1))
    r2, z2, w2 = _rect_nodes(c2, 4 * order, _cell_size(c2))
    phi2 = rectangle_log_potential(r1, z1, c2.r_inner_m, c2.r_outer_m, c2.z_min_m, c2.z_max_m)
    phi1 = rectangle_log_potential(r2, z2, c1.r_inner_m, c1.r_outer_m, c1.z_min_m, c1.z_max_m)
    total -= 0.5 * MU0 * (np.sum(w1 * r1 * phi2) + np.sum(w2 * r2 * phi1))
    a1 = c1.thickness_m * c1.length_m
    a2 = c2.thickness_m * c2.length_m
    return float(c1.turns * c2.turns * total / (a1 * a2))


def _check_magnet(magnet: Magnet) -> None:
    if not isinstance(magnet, Magnet):
        raise FringeInputError(f"`magnet` must be a Magnet; got {type(magnet)!r}")
    for i, c in enumerate(magnet.coils):
        if not (c.r_outer_m > c.r_inner_m >= 0 and c.z_max_m > c.z_min_m and c.turns > 0):
            raise FringeInputError(
                f"`magnet.coils[{i}]` must have r_outer > r_inner >= 0, z_max > z_min and "
                f"turns > 0; got {c!r}")


def inductance_matrix_H(magnet: Magnet, order: int | None = None) -> np.ndarray:
    """Inductance matrix (n, n) in H of a magnet's n windings, turns included.

    Diagonal: self-inductances; off-diagonal: mutual inductances (sign by winding
    sense is carried by the currents, not by M). Symmetric by construction. ``order``:
    see :func:`coil_pair_inductance_H` (default adaptive, relative error ~1e-5/4).
    """
    _check_magnet(magnet)
    geometry = tuple((c.r_inner_m, c.r_outer_m, c.z_min_m, c.z_max_m, c.turns)
                     for c in magnet.coils)
    return _matrix_cached(geometry, None if order is None else int(order)).copy()


@lru_cache(maxsize=64)
def _matrix_cached(geometry: tuple, order: int | None) -> np.ndarray:
    """The matrix of :func:`inductance_matrix_H`, cached on the winding geometry
    (currents do not enter M)."""
    coils = [Coil(*g, current_A=1.0) for g in geometry]
    n = len(coils)
    out = np.zeros((n, n))
    for i in range(n):
        for j in range(i, n):
            out[i, j] = out[j, i] = coil_pair_inductance_H(coils[i], coils[j], order)
    out.flags.writeable = False
    return out


def coil_currents_A(magnet: Magnet) -> np.ndarray:
    """Per-turn currents (n,) in A of a magnet's windings."""
    return np.array([c.current_A for c in magnet.coils], dtype=float)


def stored_energy_J(magnet: Magnet, order: int | None = None) -> float:
    """Stored magnetic energy ``W = ½ IᵀMI`` in J (per-coil currents, turns in M)."""
    i = coil_currents_A(magnet)
    return float(0.5 * i @ inductance_matrix_H(magnet, order) @ i)


def circuit_inductance_H(magnet: Magnet, order: int | None = None) -> float | None:
    """Series-circuit inductance ``2W/I²`` in H, or None when coil |currents| differ.

    Defined only when every winding carries the same magnitude of current (one series
    circuit, reversed windings allowed); then L = Σᵢⱼ sᵢsⱼMᵢⱼ with sᵢ = ±1.
    """
    i = np.abs(coil_currents_A(magnet))
    if i.size == 0 or i[0] == 0 or np.any(np.abs(i - i[0]) > 1e-9 * i[0]):
        return None
    return 2.0 * stored_energy_J(magnet, order) / float(i[0]) ** 2


def center_field_T(magnet: Magnet) -> float:
    """Axial flux density B_z in T at the magnet centre (local origin).

    Closed form for a uniform rectangular winding:
    ``B_z(0) = μ₀J/2 [[ z ln(r + √(r² + z²)) ]]`` over the corners, the double integral
    of the loop's on-axis field μ₀Ir²/(2(r²+z²)^{3/2}) (Jackson 1999, Sec. 5.5).
    """
    total = 0.0
    for c in magnet.coils:
        def g(r: float, z: float) -> float:
            return z * math.log(r + math.hypot(r, z)) if z != 0 else 0.0
        val = (g(c.r_outer_m, c.z_max_m) - g(c.r_inner_m, c.z_max_m)
               - g(c.r_outer_m, c.z_min_m) + g(c.r_inner_m, c.z_min_m))
        total += 0.5 * MU0 * c.current_density_A_per_m2 * val
    return float(total)


# -- field route: ∫ B²/2μ₀ dV ---------------------------------------------------------

#: Radial Gauss–Legendre nodes per half-panel in :func:`winding_field_local_T`.
FIELD_RADIAL_ORDER: int = 10


def winding_field_local_T(magnet: Magnet, rho_m, z_m,
                          order: int = FIELD_RADIAL_ORDER) -> tuple[np.ndarray, np.ndarray]:
    """(B_ρ, B_z) in T at local points, accurate inside windings too.

    Like :func:`fringe.field.direct.magnet_field_local_T` each winding is a radial Gauss–Legendre
    sum of axially magnetised cylinders (equivalent current sheets, exact in z; Derby &
    Olbert, Am. J. Phys. 78, 229 (2010)), but the radial integral of every winding is
    split in two panels at a point-dependent radius: at the field point's own ρ when it
    lies inside the winding's radial range (the sheet field jumps there), else at the
    distance of the point from the nearer winding face (graded towards the near-singular
    end). Each panel is then smooth and the sum converges fast everywhere, which the
    energy integral over the windings needs.
    """
    import magpylib as magpy

    kernel = magpy.core.magnet_cylinder_axial_Bfield
    rho = np.asarray(rho_m, dtype=float).ravel()
    z = np.asarray(z_m, dtype=float).ravel()
    t01, w01 = gauss_legendre_panels(0.0, 1.0, order, 1)
    br = np.zeros(rho.size)
    bz = np.zeros(rho.size)
    if rho.size == 0:
        return br, bz
    step = max(1, 400_000 // (2 * order))
    for c in magnet.coils:
        ri, ro = c.r_inner_m, c.r_outer_m
        mid = 0.5 * (ri + ro)
        for a in range(0, rho.size, step):
            sl = slice(a, min(rho.size, a + step))
            p = rho[sl]
            rc = np.where(p >= ro, np.maximum(2 * ro - p, mid),
                          np.where(p <= ri, np.minimum(2 * ri - p, mid), p))
            radii = np.concatenate([ri + (rc - ri)[:, None] * t01,
                                    rc[:, None] + (ro - rc)[:, None] * t01], axis=1)
            wts = np.concatenate([(rc - ri)[:, None] * w01, (ro - rc)[:, None] * w01], axis=1)
            radii = np.where(radii > 0, radii, mid)  # zero-length panel: weight 0
            hl = 0.5 * c.length_m
            zc = 0.5 * (c.z_min_m + c.z_max_m)
            out = np.asarray(kernel((hl / radii).ravel(), (p[:, None] / radii).ravel(),
                                    ((z[sl, None] - zc) / radii).ravel())).reshape(3, *radii.shape)
            pol = MU0 * c.current_density_A_per_m2 * wts
            br[sl] += np.sum(pol * out[0], axis=1)
            bz[sl] += np.sum(pol * out[2], axis=1)
    return br, bz


def _breaks(lo: float, hi: float, cuts, max_panel_m: float) -> np.ndarray:
    """Sorted panel edges in [lo, hi] at every cut inside, panels no longer than max."""
    pts = sorted({lo, hi, *(float(c) for c in cuts if lo < c < hi)})
    edges = [pts[0]]
    for a, b in zip(pts[:-1], pts[1:], strict=True):
        n = max(1, math.ceil((b - a) / max_panel_m - 1e-9))
        edges.extend(np.linspace(a, b, n + 1)[1:].tolist())
    return np.asarray(edges)


def energy_in_cylinder_J(magnet: Magnet, radius_m: float, z_min_m: float, z_max_m: float,
                         order: int = 8, max_panel_m: float | None = None,
                         field_order: int = FIELD_RADIAL_ORDER) -> float:
    """Field energy ``∫ B²/(2μ₀) 2πρ dρ dz`` in J inside a coaxial cylinder (local frame).

    The cylinder is 0 ≤ ρ ≤ radius_m, z_min_m ≤ z ≤ z_max_m in the magnet's frame.
    Composite Gauss–Legendre panels split at every winding edge (the field is
    continuous but its derivative jumps there) and no longer than ``max_panel_m``
    (default: a tenth of the enclosing radius).
    """
    rmax = magnet.enclosing_radius_m
    hmax = max_panel_m if max_panel_m is not None else 0.1 * rmax
    rc = [v for c in magnet.coils for v in (c.r_inner_m, c.r_outer_m)]
    zc = [v for c in magnet.coils for v in (c.z_min_m, c.z_max_m)]
    rr, wr = composite_rule(_breaks(0.0, radius_m, rc, hmax), order)
    zz, wz = composite_rule(_breaks(z_min_m, z_max_m, zc, hmax), order)
    R, Z = np.meshgrid(rr, zz, indexing="ij")
    br, bz = winding_field_local_T(magnet, R.ravel(), Z.ravel(), field_order)
    u = (br * br + bz * bz) / (2 * MU0)
    return float(np.sum(u.reshape(R.shape) * (2 * math.pi * R) * np.outer(wr, wz)))


def exterior_energy_outside_sphere_J(q_Am: np.ndarray, radius_m: float) -> float:
    """Energy in J of the exterior multipole field outside a sphere of radius_m.

    For B = −μ₀∇Φ, Φ = (1/4π) Σ q_l P_l(cosθ)/r^{l+1} the multipoles are orthogonal
    on the sphere (∫P_l² dΩ = 4π/(2l+1), ∫(dP_l/dθ)² dΩ = 4π l(l+1)/(2l+1); Jackson
    1999, Sec. 3.2) and ``W_l = μ₀ q_l² (l+1) / (8π (2l+1) R^{2l+1})``; l = 1 gives the
    dipole value μ₀m²/(12πR³). Valid for R at or beyond the enclosing sphere.
    """
    q = np.asarray(q_Am, dtype=float)
    ls = np.arange(q.size, dtype=float)
    terms = MU0 * q * q * (ls + 1) / (8 * math.pi * (2 * ls + 1) * radius_m ** (2 * ls + 1))
    return float(np.sum(terms[1:]))


def _energy_between_cylinder_and_sphere_J(magnet: Magnet, radius_m: float, z_min_m: float,
                                          z_max_m: float, sphere_m: float, order: int,
                                          field_order: int) -> float:
    """∫ u dV over the part of a ball (radius sphere_m) outside a coaxial cylinder.

    The region is swept by rays from the origin through the cylinder's three faces
    (side, top, bottom): x = t·p, p on a face, 1 ≤ t ≤ sphere/|p|, area element in the
    (ρ, z) plane ``t·d dt ds`` with d the face's distance from the origin; smooth
    integrand (no windings there), tensor Gauss–Legendre.
    """
    faces = [  # (points along the face as functions of s, distance d, s-range)
        (lambda s: (np.full_like(s, radius_m), s), radius_m, (z_min_m, z_max_m)),
        (lambda s: (s, np.full_like(s, z_max_m)), z_max_m, (0.0, radius_m)),
        (lambda s: (s, np.full_like(s, z_min_m)), -z_min_m, (0.0, radius_m)),
    ]
    total = 0.0
    for face, d, (s0, s1) in faces:
        s, ws = composite_rule(np.linspace(s0, s1, 5), order)
        pr, pz = face(s)
        tmax = sphere_m / np.hypot(pr, pz)
        y01, wy01 = composite_rule(np.linspace(0.0, 1.0, 4), order)
        t = np.exp(np.log(tmax)[:, None] * y01[None, :])  # t = e^y, dt = t dy
        wt = np.log(tmax)[:, None] * wy01[None, :] * t
        rho = t * pr[:, None]
        z = t * pz[:, None]
        br, bz = winding_field_local_T(magnet, rho.ravel(), z.ravel(), field_order)
        u = ((br * br + bz * bz) / (2 * MU0)).reshape(rho.shape)
        total += float(np.sum(u * 2 * math.pi * rho * t * d * wt * ws[:, None]))
    return total


def field_energy_J(magnet: Magnet, order: int = 8, l_max: int = 40,
                   field_order: int = FIELD_RADIAL_ORDER) -> float:
    """Total energy ``∫ B²/(2μ₀) dV`` in J by direct integration of the field.

    Three parts: a coaxial cylinder around the windings (panels split at winding edges,
    :func:`energy_in_cylinder_J`), the rest of a ball of 1.5× the enclosing radius
    (rays through the cylinder faces), and everything outside that ball in closed form
    from the zonal moments (:func:`exterior_energy_outside_sphere_J`). The cross-check
    of :func:`stored_energy_J`.
    """
    from fringe.field.multipole import zonal_moments_Am

    _check_magnet(magnet)
    rho_b, z0, z1 = _envelope(magnet, 0.1 * magnet.enclosing_radius_m)
    sphere = 1.5 * max(magnet.enclosing_radius_m, math.hypot(rho_b, max(-z0, z1)))
    w_in = energy_in_cylinder_J(magnet, rho_b, z0, z1, order, field_order=field_order)
    w_mid = _energy_between_cylinder_and_sphere_J(magnet, rho_b, z0, z1, sphere, order,
                                                  field_order)
    w_out = exterior_energy_outside_sphere_J(zonal_moments_Am(magnet, l_max), sphere)
    return w_in + w_mid + w_out


def _envelope(magnet: Magnet, margin_m: float) -> tuple[float, float, float]:
    """Smallest coaxial cylinder around the windings grown by margin: (ρ, z_min, z_max).

    It always holds the centre strictly inside (at least 1 % of the enclosing radius
    from its end faces), which the ray construction of the outside region needs.
    """
    rho = max(c.r_outer_m for c in magnet.coils) + margin_m
    z0 = min(c.z_min_m for c in magnet.coils) - margin_m
    z1 = max(c.z_max_m for c in magnet.coils) + margin_m
    eps = max(margin_m, 0.01 * magnet.enclosing_radius_m)
    return rho, min(z0, -eps), max(z1, eps)




def envelope_cylinder_m(magnet: Magnet,
                        margin_m: float = DEFAULT_ENVELOPE_MARGIN_M) -> tuple[float, float, float]:
    """The cryostat envelope: smallest coaxial cylinder around the windings plus margin.

    Returns ``(radius_m, z_min_m, z_max_m)`` in the magnet's local frame (always
    containing the centre).
    """
    if not (math.isfinite(margin_m) and margin_m >= 0):
        raise FringeInputError(f"`margin_m` must be a number >= 0; got {margin_m!r}")
    return _envelope(magnet, margin_m)


def energy_outside_cylinder_J(magnet: Magnet, radius_m: float, z_min_m: float, z_max_m: float,
                              order: int = 8, l_max: int = 40,
                              field_order: int = FIELD_RADIAL_ORDER) -> float:
    """Field energy in J outside a coaxial cylinder that contains every winding.

    Integrated directly (not as a difference of totals, so small fringe fractions keep
    their relative accuracy): rays from the centre through the cylinder faces out to a
    sphere of 1.5× the larger of the enclosing radius and the cylinder's corner
    distance, then the exact exterior multipole energy beyond it.
    """
    from fringe.field.multipole import zonal_moments_Am

    _check_magnet(magnet)
    for c in magnet.coils:
        if c.r_outer_m > radius_m or c.z_min_m < z_min_m or c.z_max_m > z_max_m:
            raise FringeInputError(
                f"`cylinder` must contain every winding of {magnet.name!r}; got radius "
                f"{radius_m} m, z {z_min_m}..{z_max_m} m")
    if not (z_min_m < 0 < z_max_m):
        raise FringeInputError(f"`cylinder` must contain the magnet centre; got z "
                               f"{z_min_m}..{z_max_m} m")
    sphere = 1.5 * max(magnet.enclosing_radius_m, math.hypot(radius_m, max(-z_min_m, z_max_m)))
    mid = _energy_between_cylinder_and_sphere_J(magnet, radius_m, z_min_m, z_max_m, sphere,
                                                order, field_order)
    return mid + exterior_energy_outside_sphere_J(zonal_moments_Am(magnet, l_max), sphere)


def energy_outside_sphere_J(magnet: Magnet, radius_m: float, l_max: int = 40) -> float:
    """Field energy in J outside a centred sphere at or beyond the enclosing radius.

    Closed form from the zonal moments (:func:`exterior_energy_outside_sphere_J`);
    the neglected terms fall like (R_enc/R)^{2 l_max + 3}.
    """
    from fringe.field.multipole import zonal_moments_Am

    _check_magnet(magnet)
    if not radius_m >= magnet.enclosing_radius_m:
        raise FringeInputError(
            f"`radius_m` must be at least the enclosing radius "
            f"{magnet.enclosing_radius_m:.4g} m; got {radius_m!r}")
    return exterior_energy_outside_sphere_J(zonal_moments_Am(magnet, l_max), radius_m)


def check_box(magnet: Magnet, box_min_m, box_max_m,
              key: str = "box") -> tuple[np.ndarray, np.ndarray]:
    """Check that a site box holds a magnet's centre and windings; return the box
    corners relative to the centre as two (3,) arrays (m). Raises FringeInputError."""
    _check_magnet(magnet)
    lo = np.asarray(box_min_m, dtype=float).ravel() - np.asarray(magnet.center_m)
    hi = np.asarray(box_max_m, dtype=float).ravel() - np.asarray(magnet.center_m)
    got = f"{[float(v) for v in np.ravel(box_min_m)]} .. {[float(v) for v in np.ravel(box_max_m)]}"
    if lo.shape != (3,) or hi.shape != (3,) or not np.all(lo < 0) or not np.all(hi > 0):
        raise FringeInputError(must_be(key, f"a box (min corner, max corner) around the centre "
                                       f"of {magnet.name!r}", got))
    phi = np.linspace(0, 2 * math.pi, 48, endpoint=False)
    ring = []
    for c in magnet.coils:
        for z in (c.z_min_m, c.z_max_m):
            ring.append(np.column_stack([c.r_outer_m * np.cos(phi), c.r_outer_m * np.sin(phi),
                                         np.full_like(phi, z)]))
    rel = magnet.vectors_to_site(np.concatenate(ring))
    if np.any(rel < lo) or np.any(rel > hi):
        raise FringeInputError(must_be(key, f"a box holding every winding of {magnet.name!r}",
                                       got))
    return lo, hi


def energy_outside_box_J(magnet: Magnet, box_min_m, box_max_m, order: int = 6,
                         l_max: int = 40) -> float:
    """Energy in J of one magnet's field outside an axis-aligned site box.

    The box (site frame, m) must contain the magnet's windings and centre. The region
    between the box and a centred sphere of 1.5× the larger of the enclosing radius
    and the farthest box corner is swept by rays through the six faces
    (x = t·p, p on a face at distance d, volume element t² d dt da db; tensor
    Gauss–Legendre, smooth integrand); beyond the sphere the exterior multipole energy
    is exact. Field from :func:`fringe.field.evaluate.field_at`.
    """
    from fringe.field.evaluate import field_at
    from fringe.field.multipole import zonal_moments_Am

    lo, hi = check_box(magnet, box_min_m, box_max_m)
    corners = np.array([[x, y, z] for x in (lo[0], hi[0]) for y in (lo[1], hi[1])
                        for z in (lo[2], hi[2])])
    sphere = 1.5 * max(magnet.enclosing_radius_m, float(np.max(np.linalg.norm(corners, axis=1))))
    y01, wy01 = composite_rule(np.linspace(0.0, 1.0, 4), order)
    total = 0.0
    for axis in range(3):
        others = [k for k in range(3) if k != axis]
        a, wa = composite_rule(np.linspace(lo[others[0]], hi[others[0]], 4), order)
        b, wb = composite_rule(np.linspace(lo[others[1]], hi[others[1]], 4), order)
        A, B = np.meshgrid(a, b, indexing="ij")
        WAB = np.outer(wa, wb).ravel()
        for d_signed in (lo[axis], hi[axis]):
            p = np.zeros((A.size, 3))
            p[:, axis] = d_signed
            p[:, others[0]] = A.ravel()
            p[:, others[1]] = B.ravel()
            lt = np.log(sphere / np.linalg.norm(p, axis=1))
            t = np.exp(lt[:, None] * y01[None, :])
            wt = lt[:, None] * wy01[None, :] * t
            pts = (t[:, :, None] * p[:, None, :]).reshape(-1, 3) + np.asarray(magnet.center_m)
            bb = field_at(magnet, pts)
            u = (np.sum(bb * bb, axis=1) / (2 * MU0)).reshape(t.shape)
            total += float(np.sum(u * t * t * abs(d_signed) * wt * WAB[:, None]))
    return total + exterior_energy_outside_sphere_J(zonal_moments_Am(magnet, l_max), sphere)


# -- coupling between magnets ---------------------------------------------------------

def mutual_energy_J(magnet_a: Magnet, magnet_b: Magnet, order: int = 8,
                    n_phi: int = 24, method: str = "direct") -> float:
    """Interaction energy in J of two magnets: ``∫ B_a·B_b/μ₀ dV``.

    Computed as the flux of magnet a's field linked by magnet b's windings,
    ``W_ab = Σ_j J_j ∫_Ωj Φ_a(r, z) dA`` with Φ_a(r, z) the flux of B_a through the
    loop of radius r at z in b's frame (Neumann/Maxwell: W_int = ∫ A_a·J_b dV = Σ I Φ;
    Jackson 1999, Sec. 5.17). Swapping the order of integration,
    ``∫_{ri}^{ro} Φ dr = ∫_0^{ro} (ro − max(r', ri)) r' dr' ∫ B_a·n dφ``; Gauss–Legendre
    in z and r' (split at ri where the weight kinks) and the trapezoid rule in φ
    (spectrally accurate for a periodic integrand). General orientation; the magnets
    must not overlap. The total energy of both is W_a + W_b + W_ab. ``method`` is passed
    to :func:`fringe.field.evaluate.field_at` ("direct": reference sheet sum).
    """
    from fringe.field.evaluate import field_at

    _check_magnet(magnet_a)
    _check_magnet(magnet_b)
    gap = float(np.linalg.norm(np.subtract(magnet_a.center_m, magnet_b.center_m)))
    if gap < magnet_a.enclosing_radius_m + magnet_b.enclosing_radius_m:
        raise FringeInputError(
            f"`magnets` {magnet_a.name!r} and {magnet_b.name!r} must not overlap (centres "
            f"farther apart than the sum of enclosing radii); got {gap:.3g} m")
    phi = np.linspace(0.0, 2 * math.pi, n_phi, endpoint=False)
    normal = magnet_b.vectors_to_site(np.array([[0.0, 0.0, 1.0]]))[0]
    total = 0.0
    for c in magnet_b.coils:
        z, wz = composite_rule(np.array([c.z_min_m, c.z_max_m]), order)
        r, wr = composite_rule(np.array([0.0, c.r_inner_m, c.r_outer_m]) if c.r_inner_m > 0
                           else np.array([0.0, c.r_outer_m]), order)
        wr = wr * r * (c.r_outer_m - np.maximum(r, c.r_inner_m))
        R, Z, P = np.meshgrid(r, z, phi, indexing="ij")
        loc = np.column_stack([(R * np.cos(P)).ravel(), (R * np.sin(P)).ravel(), Z.ravel()])
        bn = field_at(magnet_a, magnet_b.to_site(loc), method=method) @ normal
        w = (wr[:, None, None] * wz[None, :, None]
             * np.full(n_phi, 2 * math.pi / n_phi)[None, None, :]).ravel()
        total += c.current_density_A_per_m2 * float(np.sum(bn * w))
    return total


# -- per-magnet summary ---------------------------------------------------------------

@dataclass(frozen=True)
class MagnetEnergy:
    """Energy summary of one magnet (what ``fringe energy`` prints).

    Attributes
    ----------
    name : str
    stored_energy_J : float
        ½ IᵀMI.
    center_field_T : float
        B_z at the centre.
    inductance_matrix_H : ndarray (n, n)
    circuit_inductance_H : float or None
        2W/I² when every winding carries the same |current|.
    coil_currents_A : ndarray (n,)
    envelope_m : (float, float, float)
        Cryostat envelope cylinder (radius, z_min, z_max) in the local frame, m.
    energy_outside_envelope_J : float
    zonal_moments_Am : dict
        {"dipole_Am2": q1, "l3_Am4": q3, "l5_Am6": q5}.
    field_energy_J : float or None
        ∫B²/2μ₀ dV (only with ``verify``).
    energy_outside_box_J : float or None
        Energy outside a user site box, when one was given.
    """

    name: str
    stored_energy_J: float
    center_field_T: float
    inductance_matrix_H: np.ndarray
    circuit_inductance_H: float | None
    coil_currents_A: np.ndarray
    envelope_m: tuple[float, float, float]
    energy_outside_envelope_J: float
    zonal_moments_Am: dict
    field_energy_J: float | None = None
    energy_outside_box_J: float | None = None

    @property
    def verify_relative_difference(self) -> float | None:
        """(field route − circuit route) / circuit route, or None without ``verify``."""
        if self.field_energy_J is None or self.stored_energy_J == 0:
            return None
        return self.field_energy_J / self.stored_energy_J - 1.0


def magnet_energy(magnet: Magnet, *, envelope_margin_m: float = DEFAULT_ENVELOPE_MARGIN_M,
                  verify: bool = False, box_m=None) -> MagnetEnergy:
    """Compute the :class:`MagnetEnergy` summary of one magnet.

    ``box_m``: optional ((xmin, ymin, zmin), (xmax, ymax, zmax)) site box for
    :func:`energy_outside_box_J`.
    """
    from fringe.field.multipole import zonal_moments_Am

    _check_magnet(magnet)
    mat = inductance_matrix_H(magnet)
    cur = coil_currents_A(magnet)
    w = float(0.5 * cur @ mat @ cur)
    ia = np.abs(cur)
    circ = (float(2 * w / ia[0] ** 2) if ia.size and ia[0] > 0 and np.all(np.abs(ia - ia[0])
                                                                    <= 1e-9 * ia[0]) else None)
    env = envelope_cylinder_m(magnet, envelope_margin_m)
    q = zonal_moments_Am(magnet, 5)
    return MagnetEnergy(
        name=magnet.name, stored_energy_J=w, center_field_T=center_field_T(magnet),
        inductance_matrix_H=mat, circuit_inductance_H=circ, coil_currents_A=cur,
        envelope_m=env, energy_outside_envelope_J=energy_outside_cylinder_J(magnet, *env),
        zonal_moments_Am={"dipole_Am2": float(q[1]), "l3_Am4": float(q[3]),
                          "l5_Am6": float(q[5])},
        field_energy_J=field_energy_J(magnet) if verify else None,
        energy_outside_box_J=(energy_outside_box_J(magnet, box_m[0], box_m[1])
                              if box_m is not None else None))


def site_mutual_energies(site) -> list[tuple[str, str, float]]:
    """Interaction energy W_ab (J) of every pair of magnets of a site (a < b)."""
    from fringe.field.evaluate import as_magnets

    mags = as_magnets(site)
    return [(mags[i].name, mags[j].name, mutual_energy_J(mags[i], mags[j]))
            for i in range(len(mags)) for j in range(i + 1, len(mags))]
