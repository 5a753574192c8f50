"""How far a magnet's field reaches: the extent of a field line along and across its axis.

A data sheet gives, for each field line (e.g. 0.5 mT), how far it reaches along the bore
axis and across it in the centre plane. :func:`threshold_extents_m` computes the same two
numbers for a coil model; :func:`extents_from_moments` does it from the exterior zonal
multipole moments alone (the fast route used by the equivalent-coil fit).

Method
------
Along each line (the axis in both directions; the centre-plane radius) the magnitude
|B|(s) is evaluated on a geometric grid scanned inward from a distance where a rigorous
bound guarantees |B| < threshold, and the outermost sign change of |B| − threshold is
refined with Brent's method (``scipy.optimize.brentq``) to 0.1 mm. Only the outermost
crossing counts: near shield coils |B| need not fall monotonically.

Beyond ``SERIES_SAFE_FACTOR × R_enc`` (R_enc the radius of the sphere enclosing every
winding) |B| comes from the exterior zonal series (:mod:`fringe.field.multipole`, exact there
up to a truncation below 1e-4 relative at l ≤ ``SERIES_L_MAX``); closer in, from the
direct current-sheet sum :func:`fringe.field.direct.magnet_field_local_T`.

Start bound: for a loop of radius a at distance R₀ ≤ R from the centre,
|q_l| ≤ 2π I a² R₀^{l−1} |P_l'|/(l+1) ≤ π l I a² R^{l−1} (|P_l'(x)| ≤ l(l+1)/2 on
[−1, 1], Abramowitz & Stegun 22.14.7 with P_l' = C^{3/2}_{l−1}), and
|sinθ P_l'(cosθ)| ≤ l (Bernstein's inequality). With M = Σ |N I| r_outer² over the coils
and x = R/r this gives |B| ≤ μ₀ M/(4 r³) Σ_l l(2l+1) x^{l−1}
= μ₀ M/(4 r³) [2(1+x)/(1−x)³ + 1/(1−x)²].

Convention: an extent is 0.0 when the threshold is not reached anywhere on that line
(for example a threshold above every field value on the line, centre included).
"""

from __future__ import annotations

import math

import numpy as np
from scipy.optimize import brentq

from fringe.field.direct import magnet_field_local_T
from fringe.field.multipole import legendre_P_dP, zonal_moments_Am
from fringe.model.constants import MU0_T_M_PER_A
from fringe.model.errors import FringeInputError
from fringe.model.magnet import Magnet

__all__ = ["threshold_extents_m", "extents_from_moments", "field_bound_radius_m",
           "threshold_extent_ranges_m", "SERIES_SAFE_FACTOR", "SERIES_L_MAX"]

#: The exterior series is used only beyond this multiple of the enclosing radius.
#: Truncation error there is below ~l_max·(1/1.4)^l_max ≈ 6e-5 of the summed loop
#: moments' scale (geometric tail of the series).
SERIES_SAFE_FACTOR: float = 1.4

#: Highest zonal degree used by the exterior series.
SERIES_L_MAX: int = 40

#: Ratio between successive distances on the inward scan (1 % steps); two crossings
#: closer than this can be merged, the outermost one is never missed by more.
_GRID_RATIO: float = 1.01

#: Grid points evaluated at once on the inward scan.
_BLOCK = 48

#: Brent's method absolute tolerance on an extent, m.
_XTOL_M: float = 1e-4


def field_bound_radius_m(magnet: Magnet, threshold_T: float) -> float:
    """Distance in m beyond which |B| < ``threshold_T`` is guaranteed (see module notes)."""
    m_abs = sum(abs(c.ampere_turns) * c.r_outer_m**2 for c in magnet.coils)
    r_enc = magnet.enclosing_radius_m
    if m_abs == 0.0:
        return r_enc

    def bound(r: float) -> float:
        x = r_enc / r
        return MU0_T_M_PER_A * m_abs / (4 * r**3) * (2 * (1 + x) / (1 - x) ** 3 + 1 / (1 - x) ** 2)

    r = 2.0 * r_enc
    while bound(r) >= threshold_T:
        r *= 1.5
    return r


def _line_coefficients(q_Am: np.ndarray) -> tuple[tuple[np.ndarray, np.ndarray], ...]:
    """Series coefficients of B_r and B_θ on the +axis, −axis and centre plane.

    On those lines the Legendre factors are constants — P_l(±1) = (±1)^l, sinθ = 0 on
    the axis; P_l(0), P_l'(0) in the centre plane (A&S 22.4) — so along each line
    B_r = μ₀/4π Σ c_r,l / r^{l+2} and B_θ = μ₀/4π Σ c_θ,l / r^{l+2} (Jackson Sec. 5.12).
    """
    q = np.asarray(q_Am, dtype=float)
    ls = np.arange(len(q))
    p0, dp0 = legendre_P_dP(len(q) - 1, np.array(0.0))
    zero = np.zeros_like(q)
    return (((ls + 1) * q, zero),
            ((ls + 1) * q * (-1.0) ** ls, zero),
            ((ls + 1) * q * p0, q * dp0))


def _abs_B_series(coef: tuple[np.ndarray, np.ndarray], s_m: np.ndarray) -> np.ndarray:
    """|B| in T at distances s (m) along one line from :func:`_line_coefficients`."""
    s = np.abs(np.atleast_1d(np.asarray(s_m, dtype=float)))
    ls = np.arange(len(coef[0]))
    pw = s[:, None] ** -(ls[None, :] + 2.0)
    return MU0_T_M_PER_A / (4 * math.pi) * np.hypot(pw @ coef[0], pw @ coef[1])


def _abs_B_on_line(magnet: Magnet, coef, r_safe_m: float, axial: bool,
                   s_m: np.ndarray) -> np.ndarray:
    """|B| in T at signed distances s along the axis (axial) or the centre-plane radius.

    Series (``coef`` of the matching line) beyond ``r_safe_m``; direct sum within.
    """
    s = np.atleast_1d(np.asarray(s_m, dtype=float))
    rho = np.zeros_like(s) if axial else np.abs(s)
    z = s if axial else np.zeros_like(s)
    out = np.empty_like(s)
    far = np.abs(s) >= r_safe_m
    if far.any():
        out[far] = _abs_B_series(coef, s[far])
    if (~far).any():
        br, bz = magnet_field_local_T(magnet, rho[~far], z[~far])
        out[~far] = np.hypot(br, bz)
    return out


def _outermost_crossing(f, s_start: float, s_stop: float, include_zero: bool) -> float:
    """Outermost root of f(s) = |B| − threshold on (0, s_start], f(s_start) < 0.

    ``f`` maps an array of distances to values. Returns 0.0 when f < 0 at every grid
    point (threshold never reached) and ``nan`` if the scan stops at ``s_stop`` > 0
    while still below threshold and ``include_zero`` is False (unknown further in).
    """
    n = max(2, math.ceil(math.log(s_start / s_stop) / math.log(_GRID_RATIO)) + 1)
    grid = np.geomspace(s_start, s_stop, n)
    if include_zero:
        grid = np.append(grid, 0.0)
    k = -1
    for a in range(0, grid.size, _BLOCK):  # outside in, stop at the first block with a hit
        above = np.flatnonzero(f(grid[a:a + _BLOCK]) >= 0.0)
        if above.size:
            k = a + int(above[0])
            break
    if k < 0:
        return 0.0 if include_zero else math.nan
    if k == 0:  # only possible if the bound were wrong; never silently clip
        raise FringeInputError("`threshold_T` bound failed: |B| above threshold at the "
                               f"start distance {s_start:.3g} m")
    a, b = grid[k], grid[k - 1]
    return float(brentq(lambda x: float(f(np.array([x]))[0]), a, b, xtol=_XTOL_M, rtol=1e-10))


def _check_threshold(threshold_T: float) -> float:
    t = float(threshold_T)
    if not (math.isfinite(t) and t > 0):
        raise FringeInputError(
            f"`threshold_T` must be a positive finite number; got {threshold_T!r}")
    return t


def threshold_extents_m(magnet: Magnet, threshold_T: float, *,
                        start_m: float | None = None) -> tuple[float, float]:
    """Axial and radial extent in m of the |B| = ``threshold_T`` line of one magnet.

    Parameters
    ----------
    magnet : Magnet
        Evaluated alone, in its own local frame (site position and axis are irrelevant).
    threshold_T : float
        Field-line level in T (e.g. 5e-4 for the 0.5 mT line).
    start_m : float, optional
        A distance beyond which |B| < threshold is already known on both lines (e.g. from
        :func:`extents_from_moments`); by default the rigorous bound
        :func:`field_bound_radius_m`.

    Returns
    -------
    axial_extent_m, radial_extent_m : float
        Largest distance from the magnet centre along the axis (either direction), and
        perpendicular to it in the centre plane, at which |B| ≥ ``threshold_T`` (the
        outermost crossing, to 0.1 mm). 0.0 when the threshold is not reached on that line.

    References
    ----------
    Exterior zonal expansion: Jackson, *Classical Electrodynamics*, 3rd ed., Sec. 3.3, 5.12.
    Brent's method: R. P. Brent, *Algorithms for Minimization without Derivatives* (1973), ch. 4.
    """
    thr = _check_threshold(threshold_T)
    if not magnet.coils:
        return 0.0, 0.0
    q = zonal_moments_Am(magnet, SERIES_L_MAX)
    r_enc = magnet.enclosing_radius_m
    r_safe = SERIES_SAFE_FACTOR * r_enc
    s_start = field_bound_radius_m(magnet, thr) if start_m is None else float(start_m)
    s_stop = max(1e-3, 0.01 * r_enc)
    coefs = _line_coefficients(q)
    out = []
    for axial, lines in ((True, ((1.0, coefs[0]), (-1.0, coefs[1]))), (False, ((1.0, coefs[2]),))):
        best = 0.0
        for sg, coef in lines:
            def f(s, sg=sg, axial=axial, coef=coef):
                return _abs_B_on_line(magnet, coef, r_safe, axial, sg * np.asarray(s)) - thr
            best = max(best, _outermost_crossing(f, s_start, s_stop, include_zero=True))
        out.append(best)
    return out[0], out[1]


def threshold_extent_ranges_m(magnet: Magnet, threshold_T: float, uncertainty: float,
                              extents_m: tuple[float, float] | None = None
                              ) -> tuple[tuple[float, float], tuple[float, float]]:
    """Inner and outer limits of a line's axial and radial extents, m, for a field known
    to a relative uncertainty ``uncertainty`` (u, 0 ≤ u < 1).

    If the true |B| lies within model × (1 ± u), the true line of ``threshold_T`` lies
    between the model's line at threshold/(1 − u) (inner limit: the model field
    overestimates by u) and at threshold/(1 + u) (outer limit: it underestimates by u).

    Parameters
    ----------
    magnet : Magnet
    threshold_T : float
        The line's level, T.
    uncertainty : float
        u; 0 returns the extents themselves as both limits.
    extents_m : (float, float), optional
        The line's own (axial, radial) extents, if already computed (used for u = 0).

    Returns
    -------
    (axial_inner_m, axial_outer_m), (radial_inner_m, radial_outer_m)

    References
    ----------
    The limits follow from |B| being monotone along each line beyond its outermost
    crossing (:func:`threshold_extents_m`); for a dipole far field (|B| ∝ r⁻³, Jackson,
    *Classical Electrodynamics*, 3rd ed., Eq. 5.56) they are extent × (1 − u)^(1/3)
    … extent × (1 + u)^(1/3).
    """
    u = float(uncertainty)
    if not (math.isfinite(u) and 0.0 <= u < 1.0):
        raise FringeInputError(f"`uncertainty` must be a fraction ≥ 0 and < 1; got "
                               f"{uncertainty!r}")
    if u == 0.0:
        ax, rad = extents_m if extents_m is not None else threshold_extents_m(magnet,
                                                                               threshold_T)
        return (ax, ax), (rad, rad)
    thr = _check_threshold(threshold_T)
    ax_in, rad_in = threshold_extents_m(magnet, thr / (1.0 - u))
    ax_out, rad_out = threshold_extents_m(magnet, thr / (1.0 + u))
    return (ax_in, ax_out), (rad_in, rad_out)


def extents_from_moments(q_Am: np.ndarray, threshold_T: float, r_min_m: float,
                         r_start_m: float | None = None) -> tuple[float, float]:
    """Axial and radial extent in m of a field line from exterior zonal moments only.

    Parameters
    ----------
    q_Am : ndarray, shape (l_max+1,)
        Exterior zonal moments (A·m^(l+1)), e.g. from
        :func:`fringe.field.multipole.zonal_moments_Am`.
    threshold_T : float
        Field-line level in T.
    r_min_m : float
        Innermost distance searched (where the series is still trusted, e.g. 1.4·R_enc).
    r_start_m : float, optional
        Distance where |B| < threshold is known; by default from the dipole-like bound
        ``(μ₀/4π Σ(2l+1)|q_l| r_min^{-l+1}/threshold)^{1/3}`` grown until it holds.

    Returns
    -------
    axial_extent_m, radial_extent_m : float
        Outermost crossings along the axis (either direction) and in the centre plane;
        ``nan`` when no crossing lies beyond ``r_min_m`` (the line is closer in than the
        series can tell).

    References
    ----------
    Jackson, *Classical Electrodynamics*, 3rd ed., Sec. 5.12 (zonal exterior field).
    """
    thr = _check_threshold(threshold_T)
    q = np.asarray(q_Am, dtype=float)
    if r_start_m is None:
        ls = np.arange(len(q))
        k = MU0_T_M_PER_A / (4 * math.pi)

        def bound(r: float) -> float:  # |B_r| + |B_θ| ≤ k Σ (2l+1)|q_l|/r^{l+2} (Bernstein)
            return float(k * np.sum((2 * ls + 1) * np.abs(q) / r ** (ls + 2.0)))

        r_start_m = max(2.0 * r_min_m, 1e-3)
        while bound(r_start_m) >= thr:
            r_start_m *= 1.5
    coefs = _line_coefficients(q)
    out = []
    for group in ((coefs[0], coefs[1]), (coefs[2],)):
        best = math.nan
        for coef in group:
            def f(s, coef=coef):
                return _abs_B_series(coef, s) - thr
            e = _outermost_crossing(f, r_start_m, r_min_m, include_zero=False)
            if not math.isnan(e):
                best = e if math.isnan(best) else max(best, e)
        out.append(best)
    return out[0], out[1]
