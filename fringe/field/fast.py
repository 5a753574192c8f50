"""Fast evaluation of one magnet's axisymmetric field with a per-point error estimate.

A magnet's field is axisymmetric in its own frame, so it is a function of two
coordinates (ρ, z) only. This module replaces the direct sum over current sheets
(:func:`fringe.field.direct.magnet_field_local_T`, ~0.5 µs per point per sheet) by

* **exterior zonal series** for r ≥ ``TABLE_RADIUS_FACTOR``·R_enc (R_enc: radius of the
  origin-centred sphere enclosing every winding), truncated per distance band at the
  smallest degree whose rigorous tail bound is below the tolerance;
* **a (ρ, z) table** inside that sphere, interpolated with tensor-product quintic
  (6-point) Lagrange polynomials on a uniform mesh, with a per-cell error estimate from
  the sixth differences of the tabulated field, replaced by a measured error (direct
  sum at the cell centre and edge midpoints) where that estimate is near the threshold;
  cells whose stencil reaches into a winding get an infinite estimate;

and returns with every B an absolute error estimate in T. :func:`fringe.field.evaluate.field_at`
adds the estimates of all magnets and sends every point whose estimate exceeds
``RELATIVE_TOLERANCE / SAFETY_FACTOR`` of the local |B| to the direct sum, so the
result is within ``RELATIVE_TOLERANCE`` of the direct sum at every point (including
near zeros of the field, where the direct sum is used).

Both the series moments and the table are computed from the *same current sheets* as
the direct sum (same radial quadrature), so the fast path reproduces the direct sum,
not some other model of the coils. Everything is cached per coil set, in memory and in
an optional store (:func:`set_model_store`; the program installs a disk store from
:mod:`fringe.io.model_cache`), so moving or turning a magnet costs nothing.
:func:`fast_gradient_site` gives the Jacobian of B the same way (analytic in the series,
differentiated interpolant in the table).

Series in local coordinates scaled by R_enc (x' = x/R_enc, r' = r/R_enc) with
u = z'/r'², w = 1/r'² and the exterior solid harmonics S_l = P_l(cosθ)/r'^(l+1),
F_l = P_l'(cosθ)/r'^(l+2) (Jackson, *Classical Electrodynamics*, 3rd ed., Sec. 3.3)::

    S_{l+1} = ((2l+1) u S_l − l w S_{l−1}) / (l+1)          (A&S 22.7.10)
    F_{l+1} = ((2l+1) u F_l − (l+1) w F_{l−1}) / l          (A&S 22.7.10, 22.8.5)
    B_z = Σ_l d_l (l+1) S_{l+1},   B_x = x' Σ_l d_l F_{l+1},   B_y = y' Σ_l d_l F_{l+1}

with d_l = μ₀ q_l / (4π R_enc^(l+2)) and q_l the zonal moments. These follow from
B = −∇ψ, ψ = μ₀/4π Σ q_l P_l(cosθ)/r^(l+1), and the identities
∂_z(P_l/r^(l+1)) = −(l+1) P_{l+1}/r^(l+2), ∂_ρ(P_l/r^(l+1)) = −ρ P'_{l+1}/r^(l+3)
(Hobson, *The Theory of Spherical and Ellipsoidal Harmonics*, 1931, Ch. III).
"""

from __future__ import annotations

import hashlib
import math
from dataclasses import dataclass
from functools import cached_property, lru_cache
from typing import Protocol

import numpy as np

from fringe.field.direct import magnet_field_local_T
from fringe.field.multipole import legendre_P_dP
from fringe.field.quadrature_rules import gauss_legendre_panels
from fringe.field.sources import DEFAULT_RADIAL_ORDER, current_sheets
from fringe.model.constants import MU0_T_M_PER_A
from fringe.model.magnet import Coil, Magnet

__all__ = ["RELATIVE_TOLERANCE", "SAFETY_FACTOR", "TABLE_RADIUS_FACTOR", "AxisymmetricModel",
           "axisymmetric_model", "prepare_models", "model_wanted", "fast_gradient_site",
           "BUILD_AFTER_POINTS", "sheet_zonal_moments_Am", "series_field_scaled",
           "fast_field_site_T", "exterior_tail_bounds_scaled", "ModelStore",
           "set_model_store", "model_store", "model_key"]

#: Bound on |B_fast − B_direct| / |B_direct| at every point where the fast path is used.
RELATIVE_TOLERANCE: float = 1e-4
#: A point keeps its fast value only if its error estimate is below
#: RELATIVE_TOLERANCE / SAFETY_FACTOR of the local |B|.
SAFETY_FACTOR: float = 4.0
#: Table radius in units of R_enc; the exterior series is used beyond it.
TABLE_RADIUS_FACTOR: float = 1.6
#: Table nodes per R_enc (uniform mesh step R_enc / TABLE_NODES_PER_RADIUS).
TABLE_NODES_PER_RADIUS: int = 100
#: Highest series degree kept in the model (used for table nodes and error bounds).
L_BIG: int = 120
#: Exterior distance bands start as geometric intervals r'_k = 1.6 · 1.15^k (k < 60),
#: merged where they need the same series degree.
_BAND_RATIO: float = 1.15
_RAW_BANDS: int = 60
#: Points per direction of the tensor-product Lagrange stencil (6: quintic). The cell
#: [x_0, x_1] is interpolated from nodes x_{-2}..x_3.
STENCIL: int = 6
#: Coefficient of the interpolation error estimate from sixth differences:
#: max |ω(s)|/6! = 3.515625/720 ≈ 0.00488 at the centre of the middle cell of a 6-point
#: stencil (Lagrange remainder, A&S 25.2.2; Δ⁶f ≈ h⁶ f⁽⁶⁾), times 1.5. On 2·10⁴ random
#: points around the demo magnet the estimate exceeded the actual error wherever the
#: latter mattered; acceptance adds SAFETY_FACTOR on top.
_DIFF_COEFF: float = 1.5 * 3.515625 / 720.0
#: Cells whose difference estimate exceeds the acceptance threshold by less than this
#: factor get their error measured (see _measure_doubtful_cells). Points 0.5–8 table
#: steps from the windings of the demo and six random coil sets: 60–79 % then pass,
#: worst error 1.2e-5 (checked by hand; tests/test_fastfield.py keeps a light version).
_MEASURE_UP_TO: float = 10000.0
_K: float = MU0_T_M_PER_A / (4 * math.pi)


def sheet_zonal_moments_Am(radius_m, z_center_m, half_length_m, polarization_T,
                           l_max: int) -> np.ndarray:
    """Exterior zonal moments q_l (A·m^(l+1)), l = 0..l_max, of coaxial current sheets.

    A sheet of radius a over z₀ ∈ [z_c − h, z_c + h] with surface current K = J_p/μ₀
    (A/m) is a continuum of loops dI = K dz₀ with loop moments
    q_l = 2π I a² R₀^(l−1) P_l'(z₀/R₀)/(l+1), R₀ = √(a² + z₀²) (Smythe, *Static and
    Dynamic Electricity*, 3rd ed., Sec. 7.13). R₀^(l−1) P_l'(z₀/R₀) is a polynomial of
    degree l − 1 in z₀, so Gauss-Legendre quadrature with ⌊l_max/2⌋ + 2 nodes is exact
    (A&S 25.4.29).
    """
    x, w = gauss_legendre_panels(-1.0, 1.0, l_max // 2 + 2, 1)
    a = np.repeat(np.asarray(radius_m, float), x.size)
    z0 = (np.asarray(z_center_m, float)[:, None] + np.asarray(half_length_m, float)[:, None]
          * x[None, :]).ravel()
    cur = (np.asarray(polarization_T, float)[:, None] / MU0_T_M_PER_A
           * np.asarray(half_length_m, float)[:, None] * w[None, :]).ravel()
    r0 = np.hypot(a, z0)
    _, dP = legendre_P_dP(l_max, z0 / r0)
    ls = np.arange(l_max + 1)
    q = (2 * math.pi * (cur * a**2 * r0 ** (-1.0)) * r0[None, :] ** ls[:, None] * dP).sum(
        axis=1) / (ls + 1.0)
    q[0] = 0.0
    return q


def series_field_scaled(d: np.ndarray, l_max: int, x: np.ndarray, y: np.ndarray,
                        z: np.ndarray) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Exterior series (B_x, B_y, B_z) in T at scaled local points, degrees 1..l_max.

    Parameters
    ----------
    d : ndarray
        Scaled coefficients d_l = μ₀ q_l / (4π R_enc^(l+2)) in T.
    l_max : int
        Highest degree kept.
    x, y, z : ndarray, shape (N,)
        Local coordinates divided by R_enc (dimensionless), |(x, y, z)| > 1.

    Notes
    -----
    Recurrences of the module docstring, rescaled (:func:`_scaled_recurrence`) to
    8 array operations per degree plus 4 for each non-zero moment; no division by ρ
    (so the axis needs no special case).
    """
    w = x * x
    w += y * y
    w += z * z
    np.reciprocal(w, out=w)             # 1/r²
    t = np.sqrt(w)                       # 1/r
    u = z * w                            # z/r²
    beta_s, beta_f, c_z, c_g = _scaled_recurrence(l_max)
    # scaled harmonics S̃_l = S_l/γ_l, F̃_l = F_l/δ_l obey X̃_{l+1} = u X̃_l − β_l w X̃_{l−1}
    s_prev = t                           # S̃_0
    s_cur = u * t                        # S̃_1
    f_prev = np.zeros_like(t)            # F̃_0
    f_cur = t * w                        # F̃_1
    s_next = np.empty_like(t)            # rotating buffers: no allocation per degree
    f_next = np.empty_like(t)
    bz = np.zeros_like(t)
    g = np.zeros_like(t)
    tmp = np.empty_like(t)
    for l in range(1, l_max + 1):
        np.multiply(u, s_cur, out=s_next)
        np.multiply(w, s_prev, out=tmp)
        tmp *= beta_s[l]
        s_next -= tmp
        np.multiply(u, f_cur, out=f_next)
        np.multiply(w, f_prev, out=tmp)
        tmp *= beta_f[l]
        f_next -= tmp
        dl = d[l]
        if dl != 0.0:
            np.multiply(s_next, dl * c_z[l], out=tmp)
            bz += tmp
            np.multiply(f_next, dl * c_g[l], out=tmp)
            g += tmp
        s_prev, s_cur, s_next = s_cur, s_next, s_prev
        f_prev, f_cur, f_next = f_cur, f_next, f_prev
    return x * g, y * g, bz


@lru_cache(maxsize=8)
def _scaled_recurrence(l_max: int):
    """Coefficients of the rescaled recurrences used by :func:`series_field_scaled`.

    With S_{l+1} = a_l u S_l − b_l w S_{l−1}, a_l = (2l+1)/(l+1), b_l = l/(l+1) and
    S_l = γ_l S̃_l, γ_{l+1} = a_l γ_l, the scaled S̃ obey S̃_{l+1} = u S̃_l − β_l w S̃_{l−1}
    with β_l = b_l γ_{l−1}/γ_{l+1} (one multiplication fewer per degree); likewise F with
    a'_m = (2m+1)/m, b'_m = (m+1)/m. Returns β^S, β^F and the factors (l+1)γ_{l+1},
    δ_{l+1} that turn S̃_{l+1}, F̃_{l+1} back into the terms of B_z and B_ρ/ρ.
    """
    n = l_max + 2
    gam = np.ones(n + 1)
    dlt = np.ones(n + 1)
    beta_s = np.zeros(n)
    beta_f = np.zeros(n)
    for l in range(1, n):
        gam[l + 1] = gam[l] * (2 * l + 1) / (l + 1)
        dlt[l + 1] = dlt[l] * (2 * l + 1) / l
    for l in range(1, n):
        beta_s[l] = (l / (l + 1)) * gam[l - 1] / gam[l + 1]
        beta_f[l] = ((l + 1) / l) * dlt[l - 1] / dlt[l + 1]
    ls = np.arange(n)
    c_z = (ls + 1.0) * gam[1:n + 1]
    c_g = dlt[1:n + 1].copy()
    return beta_s, beta_f, c_z, c_g


def _max_abs_assoc_legendre(l_max: int) -> np.ndarray:
    """max over θ of |sinθ P_l'(cosθ)| for l = 0..l_max (dense sampling, +1 %)."""
    th = np.linspace(0.0, math.pi, 4001)
    _, dP = legendre_P_dP(l_max, np.cos(th))
    return 1.01 * np.max(np.abs(np.sin(th)[None, :] * dP), axis=1)


def exterior_tail_bounds_scaled(d: np.ndarray, big_d: float,
                                r_scaled: np.ndarray) -> np.ndarray:
    """Upper bounds (T) on |B| of all series terms of degree > L, for L = 0..len(d)-1.

    Term l contributes B_z = d_l (l+1) P_{l+1}/r'^(l+2) and B_ρ = d_l sinθ P'_{l+1}/r'^(l+2),
    so its magnitude is at most |d_l| √((l+1)² + M_{l+1}²) / r'^(l+2) with
    M_l = max |sinθ P_l'| (|P_l| ≤ 1, A&S 22.14.7). Degrees above the last use
    |d_l| ≤ big_d · l (from |P_l'| ≤ l(l+1)/2, A&S 22.14.7, and R₀ ≤ R_enc) and
    M_l ≤ l(l+1)/2, summed 3000 terms further (geometric for r' ≥ 1.1).

    Returns
    -------
    ndarray, shape (len(d), len(r_scaled))
        Row L: bound on the truncation error of the series cut after degree L.
    """
    r = np.atleast_1d(np.asarray(r_scaled, float))
    l_big = len(d) - 1
    m = _max_abs_assoc_legendre(l_big + 1)
    ls = np.arange(0, l_big + 1)
    coef = np.abs(d) * np.sqrt((ls + 1.0) ** 2 + m[ls + 1] ** 2)
    lr = np.log(r)[None, :]
    terms = coef[:, None] * np.exp(-(ls[:, None] + 2.0) * lr)        # (l, r)
    lx = np.arange(l_big + 1, l_big + 3001, dtype=float)
    rem_coef = big_d * lx * np.sqrt((lx + 1) ** 2 + ((lx + 1) * (lx + 2) / 2) ** 2)
    rem = np.sum(np.exp(np.log(rem_coef)[:, None] - (lx[:, None] + 2.0) * lr), axis=0)
    # tail after L = Σ_{l > L} terms + rem: reverse cumulative sum shifted by one
    rev = np.cumsum(terms[::-1], axis=0)[::-1]                        # Σ_{l ≥ L}
    tails = np.empty_like(terms)
    tails[:-1] = rev[1:]
    tails[-1] = 0.0
    return tails + rem[None, :]


@dataclass(frozen=True, eq=False)
class _Table:
    rho0: float            # scaled ρ of node row 0 (negative: ghost rows)
    z0: float              # scaled z of node column 0
    inv_h: float
    n_rho: int
    n_z: int
    values: np.ndarray     # (n_rho * n_z, 2): B_rho, B_z in T
    error: np.ndarray      # (n_rho * n_z,): error estimate (T) of the cell at that low corner


@dataclass(frozen=True, eq=False)
class AxisymmetricModel:
    """Everything precomputed for the fast field of one coil set (local frame).

    Attributes
    ----------
    scale_m : float
        R_enc in m; local coordinates are divided by it.
    d : ndarray
        Scaled series coefficients (T), degrees 0..L_BIG.
    band_edges : ndarray
        Scaled radii r'_k (increasing, first = TABLE_RADIUS_FACTOR).
    band_lmax : ndarray of int
        Series degree used for r'_k ≤ r' < r'_{k+1} (last band: to infinity).
    band_err : ndarray
        Tail bound (T) at r'_k for that degree; scaled by (r'_k/r')^(L+3) beyond.
    table : _Table
    """

    scale_m: float
    d: np.ndarray
    band_edges: np.ndarray
    band_lmax: np.ndarray
    band_err: np.ndarray
    table: _Table
    windings_scaled: np.ndarray  # (C, 4): rho_lo, rho_hi, z_lo, z_hi (scaled)

    @cached_property
    def band_edges_sq(self) -> np.ndarray:
        """Squared band edges (compared with r'² to avoid a square root per point)."""
        return self.band_edges**2

    def band_of(self, r2: np.ndarray) -> np.ndarray:
        """Band index (int16) of each scaled r'² ≥ r'_0²: equal to
        ``searchsorted(band_edges_sq, r2, "right") - 1``, computed as a count of the
        edges passed (a dozen vectorised comparisons cost less than a binary search per
        point)."""
        band = np.zeros(np.shape(r2), dtype=np.int16)
        for e in self.band_edges_sq[1:]:
            band += r2 >= e
        return band

    def to_arrays(self) -> dict[str, np.ndarray]:
        """The model as named arrays (e.g. for ``numpy.savez``); see :meth:`from_arrays`."""
        t = self.table
        return {"scale_m": np.asarray(self.scale_m), "d": self.d,
                "band_edges": self.band_edges, "band_lmax": self.band_lmax,
                "band_err": self.band_err, "windings": self.windings_scaled,
                "t_values": t.values, "t_error": t.error,
                **{"t_" + f: np.asarray(getattr(t, f)) for f in _TABLE_FIELDS}}

    @classmethod
    def from_arrays(cls, arrays) -> AxisymmetricModel:
        """The model from the arrays of :meth:`to_arrays` (any mapping of name → array).

        Raises ``KeyError`` or ``ValueError`` if an array is missing or malformed.
        """
        a = arrays
        tab = _Table(*(np.asarray(a["t_" + f]).item() for f in _TABLE_FIELDS),
                     np.array(a["t_values"], dtype=float), np.array(a["t_error"], dtype=float))
        return cls(float(np.asarray(a["scale_m"])), np.array(a["d"], dtype=float),
                   np.array(a["band_edges"], dtype=float), np.array(a["band_lmax"]),
                   np.array(a["band_err"], dtype=float), tab, np.array(a["windings"], dtype=float))


_TABLE_FIELDS = ("rho0", "z0", "inv_h", "n_rho", "n_z")


def _direct_local(magnet: Magnet, rho_m, z_m, order, panels):
    """Direct sum at table nodes. Nodes on the axis are moved 1e-9 R_enc off it: the
    field changes by O(ρ²) there, and the radial quadrature of a winding that reaches
    the axis (r_inner = 0) has nodes at r = 0 that a point on the axis cannot use."""
    rho = np.maximum(np.asarray(rho_m, float), 1e-9 * magnet.enclosing_radius_m)
    return magnet_field_local_T(magnet, rho, z_m, order=order, panels=panels)


def _field_floor(d: np.ndarray, radii: np.ndarray) -> np.ndarray:
    """Per scaled radius: min over directions of |B| from the full series, floored at
    1e-3 of the max (near zeros of |B| the per-point check uses the direct sum)."""
    th = np.linspace(0.0, math.pi, 181)
    r = np.asarray(radii, float)[:, None]
    x = (r * np.sin(th)[None, :]).ravel()
    z = (r * np.cos(th)[None, :]).ravel()
    bx, _, bz = series_field_scaled(d, len(d) - 1, x, np.zeros_like(x), z)
    b = np.hypot(bx, bz).reshape(r.shape[0], th.size)
    return np.maximum(b.min(axis=1), 1e-3 * b.max(axis=1))


def _choose_bands(d: np.ndarray, big_d: float):
    """Distance bands and the series degree each needs (see AxisymmetricModel)."""
    edges = TABLE_RADIUS_FACTOR * _BAND_RATIO ** np.arange(0, _RAW_BANDS)   # to ~7000 R_enc
    floors = _field_floor(d, edges)
    target = RELATIVE_TOLERANCE / SAFETY_FACTOR / 2.0
    tails = exterior_tail_bounds_scaled(d, big_d, edges)              # (L, k)
    ok = tails <= target * floors[None, :]
    ok[0] = False
    lmax = np.where(ok.any(axis=0), np.argmax(ok, axis=0), len(d) - 1)
    errs = tails[lmax, np.arange(edges.size)]
    # merge bands with equal degree (keep the first edge: the bound there is the larger)
    keep = np.r_[True, lmax[1:] != lmax[:-1]]
    return edges[keep], lmax[keep], errs[keep]


def _mirror_symmetric(coils) -> bool:
    """True if the coil set is unchanged by z → −z (each coil has a mirror twin)."""
    key = sorted((c.r_inner_m, c.r_outer_m, c.z_min_m, c.z_max_m, c.ampere_turns) for c in coils)
    mirrored = sorted((c.r_inner_m, c.r_outer_m, -c.z_max_m, -c.z_min_m, c.ampere_turns)
                      for c in coils)
    return bool(np.allclose(np.array(key), np.array(mirrored), rtol=1e-12, atol=1e-12))


def _table_nodes():
    """Node count and coordinates (units of R_enc) of the (ρ, z) table, ghost rows included."""
    h = 1.0 / TABLE_NODES_PER_RADIUS
    g = STENCIL                             # ghost/margin nodes for stencils and Δ⁶
    n_r = int(math.ceil(TABLE_RADIUS_FACTOR / h)) + 2 * g + 1
    n_z = 2 * (int(math.ceil(TABLE_RADIUS_FACTOR / h)) + g) + 1
    rho_nodes = (np.arange(n_r) - g) * h
    z_nodes = (np.arange(n_z) - (n_z - 1) / 2) * h
    return h, g, n_r, n_z, rho_nodes, z_nodes


def _series_radius(d: np.ndarray, big_d: float) -> float:
    """Smallest scaled radius beyond which the L_BIG series is exact to ~1e-3 of tolerance."""
    l_big = len(d) - 1
    r_try = np.linspace(1.05, TABLE_RADIUS_FACTOR + 0.2, 60)
    tail = exterior_tail_bounds_scaled(d, big_d, r_try)[l_big]
    ok = tail <= 1e-3 * RELATIVE_TOLERANCE * _field_floor(d, r_try)
    return r_try[np.argmax(ok)] if ok.any() else np.inf


def _node_field(magnet: Magnet, d: np.ndarray, big_d: float, rho_nodes, z_nodes,
                scale: float, order, panels):
    """B_ρ and B_z at the table nodes (series far out, direct sum near), and the mirror flag."""
    n_z = len(z_nodes)
    R, Z = np.meshgrid(np.abs(rho_nodes), z_nodes, indexing="ij")
    r = np.hypot(R, Z)
    # nodes far enough out: the L_BIG series is exact to ~1e-3 of the tolerance there
    l_big = len(d) - 1
    use_series = r >= _series_radius(d, big_d)
    br = np.zeros_like(r)
    bz = np.zeros_like(r)
    if use_series.any():
        bx_s, _, bz_s = series_field_scaled(d, l_big, R[use_series], np.zeros(use_series.sum()),
                                            Z[use_series])
        br[use_series], bz[use_series] = bx_s, bz_s
    direct = ~use_series
    # only non-negative ρ rows are evaluated; ghost rows (ρ < 0) mirror them. A coil set
    # symmetric under z → −z has B_ρ odd and B_z even in z: evaluate z ≥ 0 only.
    mirror = _mirror_symmetric(magnet.coils)
    direct_pos = direct & (rho_nodes[:, None] >= 0)
    if mirror:
        direct_pos &= Z >= 0
    b1, b2 = _direct_local(magnet, R[direct_pos] * scale, Z[direct_pos] * scale, order, panels)
    br[direct_pos], bz[direct_pos] = b1, b2
    if mirror:
        low = direct & (rho_nodes[:, None] >= 0) & (Z < 0)
        ii, jj = np.nonzero(low)
        br[ii, jj] = -br[ii, n_z - 1 - jj]
        bz[ii, jj] = bz[ii, n_z - 1 - jj]
    return br, bz, mirror


def _fill_ghost_rows(br: np.ndarray, bz: np.ndarray, g: int) -> None:
    """Set the axis row and the ρ < 0 ghost rows from ρ symmetry, in place."""
    br[g] = 0.0                              # on the axis B_rho = 0 by symmetry
    for i in range(g):                       # B_rho odd, B_z even in ρ
        br[i] = -br[2 * g - i]
        bz[i] = bz[2 * g - i]


def _sixth_differences(br: np.ndarray, bz: np.ndarray):
    """Sixth differences of the field along ρ and z (vector magnitude), inf at the edges."""
    dr = np.full(br.shape, np.inf)
    dz = np.full(br.shape, np.inf)
    coeffs = (1.0, -6.0, 15.0, -20.0, 15.0, -6.0, 1.0)
    q = len(coeffs) - 1

    def diff(f, axis):
        n = f.shape[axis]
        acc = 0.0
        for k, c in enumerate(coeffs):
            acc = acc + c * np.take(f, np.arange(k, n - q + k), axis=axis)
        return acc

    dr[q // 2:-(q // 2), :] = np.hypot(diff(br, 0), diff(bz, 0))
    dz[:, q // 2:-(q // 2)] = np.hypot(diff(br, 1), diff(bz, 1))
    return dr, dz


def _cell_error_estimate(dr: np.ndarray, dz: np.ndarray) -> np.ndarray:
    """Interpolation error estimate of each cell from the largest differences in its stencil."""
    # cell (i, j) = [ρ_i, ρ_{i+1}] × [z_j, z_{j+1}]; stencil rows i-lo..i+hi (lo = P/2-1)
    from scipy.ndimage import maximum_filter

    lo = STENCIL // 2 - 1
    foot = np.ones((STENCIL, STENCIL), bool)
    # window i-lo..i+hi: scipy centres a window of size P at P//2, so shift by lo-P//2
    org = (lo - STENCIL // 2, lo - STENCIL // 2)
    mr = maximum_filter(dr, footprint=foot, mode="constant", cval=np.inf, origin=org)
    mz = maximum_filter(dz, footprint=foot, mode="constant", cval=np.inf, origin=org)
    return _DIFF_COEFF * (mr + mz)


def _exclude_windings(err: np.ndarray, magnet: Magnet, rho_nodes, z_nodes, h: float,
                      scale: float) -> np.ndarray:
    """Mark cells whose stencil reaches into a winding unusable; return scaled windings."""
    lo, hi = STENCIL // 2 - 1, STENCIL // 2
    windings = []
    for c in magnet.coils:
        wr = np.array([c.r_inner_m, c.r_outer_m, c.z_min_m, c.z_max_m]) / scale
        windings.append(wr)
        hit_r = ((rho_nodes + hi * h) >= wr[0]) & ((rho_nodes - lo * h) <= wr[1])
        hit_z = ((z_nodes + hi * h) >= wr[2]) & ((z_nodes - lo * h) <= wr[3])
        err[np.ix_(hit_r, hit_z)] = np.inf
    return np.array(windings).reshape(-1, 4)


def _build_table(magnet: Magnet, d: np.ndarray, big_d: float, scale: float, order, panels):
    """Interpolation table of the field in units of R_enc, with per-cell error estimates."""
    h, g, n_r, n_z, rho_nodes, z_nodes = _table_nodes()
    br, bz, mirror = _node_field(magnet, d, big_d, rho_nodes, z_nodes, scale, order, panels)
    _fill_ghost_rows(br, bz, g)
    err = _cell_error_estimate(*_sixth_differences(br, bz))
    # cells whose stencil reaches into a winding are never used
    windings = _exclude_windings(err, magnet, rho_nodes, z_nodes, h, scale)
    err[~np.isfinite(err)] = np.inf
    vals = np.ascontiguousarray(np.stack([br.ravel(), bz.ravel()], axis=1))
    table = _Table(float(rho_nodes[0]), float(z_nodes[0]), 1.0 / h, n_r, n_z, vals,
                   err.ravel().copy())
    _measure_doubtful_cells(table, magnet, np.hypot(br, bz), rho_nodes, z_nodes, mirror,
                            scale, order, panels)
    return table, windings


def _measure_doubtful_cells(tab: _Table, magnet: Magnet, b_abs: np.ndarray, rho_nodes,
                            z_nodes, mirror: bool, scale: float, order, panels) -> None:
    """Replace the fourth-difference estimate by a measured one where it is doubtful.

    Cells whose estimate lies between the acceptance threshold and 100× it (typically a
    band 3–20 table steps from the windings) get the direct sum at their centre and edge
    midpoints, where the interpolation error polynomial of a smooth function peaks
    (ω(s) = (s+1)s(s−1)(s−2) is largest at s = ½; A&S 25.2.2). Their estimate becomes
    twice the largest measured error. Updates ``tab.error`` in place.
    """
    thr = RELATIVE_TOLERANCE / SAFETY_FACTOR
    n_r, n_z = tab.n_rho, tab.n_z
    err = tab.error.reshape(n_r, n_z)
    bmin = b_abs.copy()
    bmin[:-1] = np.minimum(bmin[:-1], b_abs[1:])
    bmin[:, :-1] = np.minimum(bmin[:, :-1], bmin[:, 1:])
    used = (rho_nodes[:, None] >= 0) & (np.hypot(rho_nodes[:, None], z_nodes[None, :])
                                        < TABLE_RADIUS_FACTOR + 2 / tab.inv_h)
    if mirror:
        used &= z_nodes[None, :] >= -0.5 / tab.inv_h
    doubt = used & np.isfinite(err) & (err > thr * bmin) & (err < _MEASURE_UP_TO * thr * bmin)
    ii, jj = np.nonzero(doubt)
    if ii.size == 0:
        return
    h = 1.0 / tab.inv_h
    offsets = ((0.5, 0.5), (0.5, 0.0), (0.0, 0.5), (1.0, 0.5), (0.5, 1.0))
    # unique sample points on the half-step lattice
    lattice = np.concatenate([np.column_stack([2 * ii + int(2 * a), 2 * jj + int(2 * b)])
                              for a, b in offsets])
    uniq, inverse = np.unique(lattice, axis=0, return_inverse=True)
    rho = rho_nodes[0] + uniq[:, 0] * (h / 2)
    z = z_nodes[0] + uniq[:, 1] * (h / 2)
    d_rho, d_z = _direct_local(magnet, rho * scale, z * scale, order, panels)
    i_rho, i_z, _ = _table_field(tab, rho, z)
    miss = np.hypot(i_rho - d_rho, i_z - d_z)[inverse.ravel()].reshape(len(offsets), -1)
    measured = 2.0 * miss.max(axis=0)
    err[ii, jj] = np.minimum(err[ii, jj], measured)
    if mirror:                          # cells below the mid-plane mirror those above
        jm = n_z - 2 - jj
        ok = (jm >= 0) & (jm != jj)
        err[ii[ok], jm[ok]] = np.minimum(err[ii[ok], jm[ok]], measured[ok])


@lru_cache(maxsize=32)
def axisymmetric_model(coils: tuple[Coil, ...], order: int = DEFAULT_RADIAL_ORDER,
                       panels: int | None = None) -> AxisymmetricModel:
    """Precomputed fast model of a coil set (cached; independent of position and axis).

    Cached in memory per process and in the installed model store, if any
    (:func:`set_model_store`), under :func:`model_key`. Building costs one direct
    evaluation of the table nodes inside ~1.3 R_enc (about 1–2 s for the 64-sheet demo
    magnet).
    """
    _memory_keys.add((tuple(coils), int(order), panels))
    key = model_key(coils, order, panels)
    store = _STORE
    if store is not None:
        cached = store.load(key)
        if cached is not None:
            return cached
    magnet = Magnet("fast-model", (0.0, 0.0, 0.0), (0.0, 0.0, 1.0), tuple(coils))
    s = current_sheets(magnet, order, panels)
    scale = magnet.enclosing_radius_m
    q = sheet_zonal_moments_Am(s.radius_m, s.z_center_m, s.half_length_m, s.polarization_T,
                               L_BIG)
    ls = np.arange(L_BIG + 1)
    d = _K * q / scale ** (ls + 2.0)
    if _mirror_symmetric(coils):
        d[0::2] = 0.0               # even moments vanish by symmetry (rounding otherwise)
    # |q_l| ≤ 2π Σ|I| a² R^(l−1) · l/2  ⇒ |d_l| ≤ big_d · l
    amp = np.sum(np.abs(s.polarization_T) / MU0_T_M_PER_A * 2 * s.half_length_m * s.radius_m**2)
    big_d = _K * math.pi * amp / scale**3
    edges, lmax, errs = _choose_bands(d, big_d)
    table, windings = _build_table(magnet, d, big_d, scale, order, panels)
    model = AxisymmetricModel(scale, d, edges, lmax, errs, table, windings)
    if store is not None:
        store.save(key, model)
    return model


class ModelStore(Protocol):
    """Where built models are kept between processes (e.g. a disk cache).

    Keys come from :func:`model_key`; a store may extend them (for instance with a
    digest of the engine's source, so a changed engine never reads an old table).
    ``load`` returns None for a missing or unreadable model; ``save`` must not raise.
    """

    def has(self, key: str) -> bool:
        """Whether a model is stored under ``key`` (without reading it)."""

    def load(self, key: str) -> AxisymmetricModel | None:
        """The model stored under ``key``, or None."""

    def save(self, key: str, model: AxisymmetricModel) -> None:
        """Keep ``model`` under ``key`` (silently skipped if it cannot be kept)."""


#: The installed model store (None: models are kept in memory only).
_STORE: ModelStore | None = None


def set_model_store(store: ModelStore | None) -> ModelStore | None:
    """Install ``store`` for the models of :func:`axisymmetric_model`; returns the previous one.

    ``None`` keeps models in memory only. Models already in memory are not affected.
    """
    global _STORE
    previous, _STORE = _STORE, store
    return previous


def model_store() -> ModelStore | None:
    """The installed model store, or None."""
    return _STORE


def model_key(coils, order: int = DEFAULT_RADIAL_ORDER, panels: int | None = None) -> str:
    """Key of a coil set's model: a hash of the coils, the quadrature and numpy's major version."""
    text = repr((tuple((c.r_inner_m, c.r_outer_m, c.z_min_m, c.z_max_m, c.turns, c.current_A)
                       for c in coils), int(order), panels, np.__version__[:1]))
    return hashlib.sha256(text.encode()).hexdigest()[:32]


def _table_field(tab: _Table, rho: np.ndarray, z: np.ndarray):
    """Tensor-product Lagrange interpolation of (B_rho, B_z) and the cell error estimate."""
    fi = (rho - tab.rho0) * tab.inv_h
    fj = (z - tab.z0) * tab.inv_h
    i = fi.astype(np.intp)
    j = fj.astype(np.intp)
    s = fi - i
    t = fj - j
    lo = STENCIL // 2 - 1
    base = (i - lo) * tab.n_z + (j - lo)
    err = tab.error[i * tab.n_z + j]
    ws = _lagrange_weights(s)
    wt = _lagrange_weights(t)
    vr, vz = tab.values[:, 0].copy(), tab.values[:, 1].copy()   # small: ~0.5 MB each
    acc_r = np.zeros(rho.size)
    acc_z = np.zeros(rho.size)
    row_r = np.empty(rho.size)
    row_z = np.empty(rho.size)
    tmp = np.empty(rho.size)
    idx = np.empty(rho.size, dtype=np.intp)
    for a in range(STENCIL):
        row_r[:] = 0.0
        row_z[:] = 0.0
        for b in range(STENCIL):
            np.add(base, a * tab.n_z + b, out=idx)
            np.multiply(wt[b], vr.take(idx), out=tmp)
            row_r += tmp
            np.multiply(wt[b], vz.take(idx), out=tmp)
            row_z += tmp
        row_r *= ws[a]
        row_z *= ws[a]
        acc_r += row_r
        acc_z += row_z
    return acc_r, acc_z, err


def _lagrange_weights(s: np.ndarray) -> list[np.ndarray]:
    """Lagrange basis at nodes -lo..hi (lo = STENCIL/2 - 1) for offsets s in [0, 1)."""
    nodes = np.arange(STENCIL) - (STENCIL // 2 - 1)
    diffs = [s - k for k in nodes]
    out = []
    for k, xk in enumerate(nodes):
        w = None
        for m in range(STENCIL):
            if m != k:
                w = diffs[m] if w is None else w * diffs[m]
        out.append(w * (1.0 / np.prod([xk - xm for xm in nodes if xm != xk])))
    return out


def _power_half(q: np.ndarray, m: int) -> np.ndarray:
    """q^(m/2) for a positive integer m by repeated squaring (faster than np.power)."""
    out = np.sqrt(q) if m % 2 else np.ones_like(q)
    k = m // 2
    base = q
    while k:
        if k & 1:
            out = out * base
        k >>= 1
        if k:
            base = base * base
    return out


def fast_local_field(model: AxisymmetricModel, x: np.ndarray, y: np.ndarray, z: np.ndarray):
    """(B_x, B_y, B_z, error) in T at local points scaled by R_enc (arrays (N,))."""
    n = x.size
    bx = np.empty(n)
    by = np.empty(n)
    bz = np.empty(n)
    err = np.empty(n)
    r2 = x * x + y * y + z * z
    in_table = r2 < TABLE_RADIUS_FACTOR**2
    idx_t = np.flatnonzero(in_table)
    if idx_t.size:
        xt, yt, zt = x[idx_t], y[idx_t], z[idx_t]
        rho = np.hypot(xt, yt)
        b_rho, b_z, e = _table_field(model.table, rho, zt)
        with np.errstate(invalid="ignore", divide="ignore"):
            inv = np.where(rho > 0, 1.0 / rho, 0.0)
        bx[idx_t] = b_rho * xt * inv
        by[idx_t] = b_rho * yt * inv
        bz[idx_t] = b_z
        err[idx_t] = e
    if idx_t.size == n:
        return bx, by, bz, err
    band = model.band_of(r2)
    band[idx_t] = -1
    counts = np.bincount(band + 1, minlength=model.band_edges.size + 1)[1:]
    present = np.flatnonzero(counts)
    for k in present:
        if counts[k] == n:
            sel = slice(None)                 # every point in one band: no gather
            xs, ys, zs, rr = x, y, z, r2
        else:
            sel = np.flatnonzero(band == k)
            xs, ys, zs, rr = x[sel], y[sel], z[sel], r2[sel]
        L = int(model.band_lmax[k])
        gx, gy, gz = series_field_scaled(model.d, L, xs, ys, zs)
        bx[sel], by[sel], bz[sel] = gx, gy, gz
        # tail bound at the band's inner edge; every omitted term decays at least as
        # r'^-(L+3), so the bound scales by (r'_k/r')^(L+3) inside the band
        err[sel] = model.band_err[k] * _power_half(model.band_edges_sq[k] / rr, L + 3)
    return bx, by, bz, err


def fast_field_site_T(magnet: Magnet, points_3n: np.ndarray, order: int = DEFAULT_RADIAL_ORDER,
                      panels: int | None = None) -> tuple[np.ndarray, np.ndarray]:
    """Fast field of one magnet at site points given as a (3, N) array.

    Returns
    -------
    B_T : ndarray, shape (3, N)
        Flux density in the site frame, T.
    error_T : ndarray, shape (N,)
        Estimated absolute error in T (``inf`` where the fast path does not apply).
    """
    model, amps = _model_and_scale(magnet.coils, order, panels)
    rot = magnet.rotation.as_matrix()            # local → site
    loc = _to_scaled_local(rot, magnet.center_m, model.scale_m, points_3n)
    bx, by, bz, err = fast_local_field(model, loc[0], loc[1], loc[2])
    b = _rotate(rot * amps, (bx, by, bz))
    if amps != 1.0:
        err *= abs(amps)
    return b, err


def _rotate(mat: np.ndarray, v) -> np.ndarray:
    """``mat @ v`` for a 3×3 matrix and three rows of N values, in element-wise numpy.

    Avoids a BLAS call per chunk: with its threads on, the matrix products of the fast
    path ran slower, not faster (the work is memory-bound; docs/performance.md).
    """
    out = np.empty((3, v[0].size))
    for i in range(3):
        np.multiply(v[0], mat[i, 0], out=out[i])
        out[i] += mat[i, 1] * v[1]
        out[i] += mat[i, 2] * v[2]
    return out


def _to_scaled_local(rot: np.ndarray, center_m, scale_m: float,
                     points_3n: np.ndarray) -> np.ndarray:
    """Local coordinates divided by ``scale_m`` of site points (3, N); ``rot``: local → site."""
    c = np.asarray(center_m, float)
    d = [points_3n[j] - c[j] for j in range(3)]
    return _rotate(rot.T / scale_m, d)


#: A coil set gets its fast model once this many points have been asked of it (or at
#: once if the model is already cached): building costs about as much as the direct sum
#: at ~2·10⁴ points, so a handful of points on a new coil set (a fit, a probe) stays on
#: the direct sum.
BUILD_AFTER_POINTS: int = 20_000
_demand: dict[str, int] = {}


def _normalised(coils) -> tuple[tuple[Coil, ...], float]:
    """Coils with currents divided by the first non-zero current, and that current (A).

    B is linear in the currents, so coil sets differing only by a common current factor
    (e.g. a ramped or scaled magnet) share one model.
    """
    amps = next((c.current_A for c in coils if c.current_A != 0.0), 1.0)
    if amps == 1.0:
        return tuple(coils), 1.0
    return tuple(Coil(c.r_inner_m, c.r_outer_m, c.z_min_m, c.z_max_m, c.turns,
                      c.current_A / amps) for c in coils), float(amps)


def _model_and_scale(coils, order, panels) -> tuple[AxisymmetricModel, float]:
    norm, amps = _normalised(coils)
    return axisymmetric_model(norm, int(order), panels), amps


def prepare_models(magnets, order: int = DEFAULT_RADIAL_ORDER,
                   panels: int | None = None) -> None:
    """Build (or read from the model store) the fast model of each magnet's coil set now.

    Useful before timing, or before a search that will ask many points of one magnet.
    """
    for m in magnets:
        _model_and_scale(m.coils, order, panels)


def model_wanted(coils, n_points: int, order: int = DEFAULT_RADIAL_ORDER,
                 panels: int | None = None) -> bool:
    """Whether the fast path should serve ``n_points`` more points of this coil set.

    True if the model is in memory or in the installed model store, or once the points
    asked of this coil set in this process reach :data:`BUILD_AFTER_POINTS`.
    """
    norm, _ = _normalised(coils)
    args = (norm, int(order), panels)
    if _in_memory(args):
        return True
    key = model_key(*args)
    total = _demand.get(key, 0) + int(n_points)
    _demand[key] = total
    if total >= BUILD_AFTER_POINTS:
        return True
    store = _STORE
    return store is not None and store.has(key)


def _in_memory(args) -> bool:
    """True if :func:`axisymmetric_model` already holds these arguments."""
    try:
        return args in _memory_keys
    except TypeError:
        return False


_memory_keys: set = set()


# -- gradient -------------------------------------------------------------------------

def series_gradient_scaled(d: np.ndarray, l_max: int, x: np.ndarray, y: np.ndarray,
                           z: np.ndarray):
    """Exterior series of B and of its derivatives at scaled local points.

    Returns ``(G, B_z, D_zz, M)`` in T (per unit scaled length for the derivatives):
    G = B_ρ/ρ = Σ d_l F_{l+1}, B_z = Σ d_l (l+1) S_{l+1},
    D_zz = ∂_z B_z = −Σ d_l (l+1)(l+2) S_{l+2} and M = ∂_ρ B_z/ρ = −Σ d_l (l+1) F_{l+2},
    from ∂_z(P_l/r^(l+1)) = −(l+1) P_{l+1}/r^(l+2) and ∂_ρ(P_l/r^(l+1)) = −ρ P'_{l+1}/r^(l+3)
    (Hobson 1931, Ch. III) applied to the terms of B. The remaining derivatives follow
    from ∇·B = 0 and ∇×B = 0 (Jackson Eqs. 5.5, 5.22): ∂_ρB_ρ = −D_zz − G, ∂_zB_ρ = ρM.
    """
    w = x * x + y * y + z * z
    np.reciprocal(w, out=w)
    t = np.sqrt(w)
    u = z * w
    beta_s, beta_f, c_z, c_g = _scaled_recurrence(l_max + 1)
    gam = c_z / (np.arange(c_z.size) + 1.0)       # γ_{l+1}
    s_prev, s_cur = t, u * t
    f_prev, f_cur = np.zeros_like(t), t * w
    g = np.zeros_like(t)
    bz = np.zeros_like(t)
    dzz = np.zeros_like(t)
    mm = np.zeros_like(t)
    for l in range(1, l_max + 2):
        s_next = u * s_cur - beta_s[l] * (w * s_prev)        # S̃_{l+1}
        f_next = u * f_cur - beta_f[l] * (w * f_prev)        # F̃_{l+1}
        if l <= l_max and d[l] != 0.0:
            bz += (d[l] * c_z[l]) * s_next
            g += (d[l] * c_g[l]) * f_next
        k = l - 1                                            # term d_k with S_{k+2} = S_{l+1}
        if k >= 1 and d[k] != 0.0:
            dzz -= (d[k] * (k + 1) * (k + 2) * gam[l]) * s_next
            mm -= (d[k] * (k + 1) * c_g[l]) * f_next
        s_prev, s_cur = s_cur, s_next
        f_prev, f_cur = f_cur, f_next
    return g, bz, dzz, mm


def _lagrange_derivative_weights(s: np.ndarray) -> list[np.ndarray]:
    """d/ds of the Lagrange basis of :func:`_lagrange_weights`."""
    nodes = np.arange(STENCIL) - (STENCIL // 2 - 1)
    diffs = [s - k for k in nodes]
    out = []
    for k, xk in enumerate(nodes):
        denom = np.prod([xk - xm for xm in nodes if xm != xk])
        acc = np.zeros_like(s)
        for m in range(STENCIL):
            if m == k:
                continue
            prod = np.ones_like(s)
            for n in range(STENCIL):
                if n not in (k, m):
                    prod = prod * diffs[n]
            acc += prod
        out.append(acc / denom)
    return out


def _table_field_and_derivatives(tab: _Table, rho: np.ndarray, z: np.ndarray):
    """(B_ρ, B_z) and their ρ- and z-derivatives (per scaled length) from the table."""
    fi = (rho - tab.rho0) * tab.inv_h
    fj = (z - tab.z0) * tab.inv_h
    i = fi.astype(np.intp)
    j = fj.astype(np.intp)
    s = fi - i
    t = fj - j
    lo = STENCIL // 2 - 1
    base = (i - lo) * tab.n_z + (j - lo)
    ws, wt = _lagrange_weights(s), _lagrange_weights(t)
    dws, dwt = _lagrange_derivative_weights(s), _lagrange_derivative_weights(t)
    out = np.zeros((6, rho.size))      # Bρ, Bz, ∂ρBρ, ∂ρBz, ∂zBρ, ∂zBz
    for a in range(STENCIL):
        for b in range(STENCIL):
            v = tab.values[base + (a * tab.n_z + b)]
            vr, vz = v[:, 0], v[:, 1]
            w0 = ws[a] * wt[b]
            wr = dws[a] * wt[b]
            wz = ws[a] * dwt[b]
            out[0] += w0 * vr
            out[1] += w0 * vz
            out[2] += wr * vr
            out[3] += wr * vz
            out[4] += wz * vr
            out[5] += wz * vz
    out[2:] *= tab.inv_h
    return out


def fast_gradient_local(model: AxisymmetricModel, x: np.ndarray, y: np.ndarray,
                        z: np.ndarray):
    """B (3, N) in T, Jacobian (3, 3, N) in T/m and error estimate of B (N,) in T.

    Local frame, points scaled by R_enc. J[i, j] = ∂B_i/∂x_j. For an axisymmetric field
    with c = x/ρ, s = y/ρ, G = B_ρ/ρ and A = ∂_ρB_ρ − G::

        J_xx = G + A c², J_yy = G + A s², J_xy = A c s,
        J_xz = ∂_zB_ρ c, J_zx = ∂_ρB_z c, (y likewise), J_zz = ∂_zB_z

    (chain rule on B_x = B_ρ cos φ, B_y = B_ρ sin φ); on the axis c = 1, s = 0, G = ∂_ρB_ρ.
    """
    n = x.size
    rho = np.hypot(x, y)
    with np.errstate(invalid="ignore", divide="ignore"):
        c = np.where(rho > 0, x / rho, 1.0)
        sn = np.where(rho > 0, y / rho, 0.0)
    r2 = x * x + y * y + z * z
    G = np.empty(n)
    bz = np.empty(n)
    drr = np.empty(n)      # ∂ρBρ
    dzr = np.empty(n)      # ∂zBρ (= ∂ρBz)
    dzz = np.empty(n)
    err = np.empty(n)
    in_table = r2 < TABLE_RADIUS_FACTOR**2
    it = np.flatnonzero(in_table)
    if it.size:
        v = _table_field_and_derivatives(model.table, rho[it], z[it])
        rr = rho[it]
        tiny = rr < 1e-9
        with np.errstate(invalid="ignore", divide="ignore"):
            G[it] = np.where(tiny, v[2], v[0] / np.where(tiny, 1.0, rr))
        bz[it] = v[1]
        drr[it] = v[2]
        dzr[it] = 0.5 * (v[3] + v[4])
        dzz[it] = v[5]
        err[it] = _table_field(model.table, rr, z[it])[2]
    ie = np.flatnonzero(~in_table)
    if ie.size:
        xe, ye, ze, re2 = x[ie], y[ie], z[ie], r2[ie]
        k0 = int(model.band_of(re2).min())        # innermost band present: its degree
        L = int(model.band_lmax[k0])
        g_, bz_, dzz_, m_ = series_gradient_scaled(model.d, L, xe, ye, ze)
        G[ie] = g_
        bz[ie] = bz_
        dzz[ie] = dzz_
        drr[ie] = -dzz_ - g_
        dzr[ie] = rho[ie] * m_
        err[ie] = model.band_err[k0] * _power_half(model.band_edges_sq[k0] / re2, L + 3)
    A = drr - G
    inv = 1.0 / model.scale_m
    J = np.empty((3, 3, n))
    J[0, 0] = G + A * c * c
    J[1, 1] = G + A * sn * sn
    J[0, 1] = J[1, 0] = A * c * sn
    J[0, 2] = J[2, 0] = dzr * c
    J[1, 2] = J[2, 1] = dzr * sn
    J[2, 2] = dzz
    J *= inv
    B = np.stack([G * x, G * y, bz])
    return B, J, err


def fast_gradient_site(magnet: Magnet, points_3n: np.ndarray, order: int = DEFAULT_RADIAL_ORDER,
                       panels: int | None = None) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Site-frame B (3, N) T, Jacobian (3, 3, N) T/m and B's error estimate (N,) T."""
    model, amps = _model_and_scale(magnet.coils, order, panels)
    rot = magnet.rotation.as_matrix()
    loc = _to_scaled_local(rot, magnet.center_m, model.scale_m, points_3n)
    B, J, err = fast_gradient_local(model, loc[0], loc[1], loc[2])
    b = _rotate(rot * amps, B)
    js = amps * np.einsum("ia,abn,jb->ijn", rot, J, rot)
    return b, js, abs(amps) * err
