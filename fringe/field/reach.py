"""How far a field line reaches anywhere: its largest distance from the axis and along it.

:func:`fringe.field.extents.threshold_extents_m` measures a line on two lines only (the
axis and the centre-plane radius). Off the centre plane a shielded magnet's line often
bulges further out (oblique lobes), so the headline distance of a line is the largest
distance of *any* of its points from the axis. :func:`threshold_reach_m` finds it by a
2-D search in the magnet's own (ρ, z) half-plane, where the field is axisymmetric:

1. **Coarse grid.** |B| on a uniform (ρ, z) grid of step h = R / ``REACH_GRID_NODES``
   over 0 ≤ ρ ≤ R, −R ≤ z ≤ R, with R the distance beyond which |B| < threshold is
   guaranteed (:func:`fringe.field.extents.field_bound_radius_m`), evaluated by the fast
   field (:func:`fringe.field.evaluate.field_at`, within 1e-4 of the direct sum).
   For each row (z) the outermost node with |B| ≥ threshold, and for each column (ρ) the
   outermost node above and below the centre plane.
2. **Refinement.** Around the best row (and column), the outermost crossing
   ρ*(z) of |B| = threshold is found by an inward scan of step h/8 from beyond the
   coarse crossing and Brent's method (``scipy.optimize.brentq``, 1e-5 m) on the direct
   sum (:func:`fringe.field.direct.magnet_field_local_T`); ρ*(z) is then maximised over
   z within ±2h of that row by a bounded Brent search (``scipy.optimize.minimize_scalar``,
   ``xatol`` 1e-4 m). The same for the largest |z| over ρ.
3. The result is never below the centre-plane and on-axis extents (they are points of
   the same line).

Tolerance: the reach is found to about 0.1 mm once the coarse grid has located the
outermost part of the line; a lobe narrower than h (a few cm for a clinical magnet)
could be missed by the coarse grid, in which case the error is at most about h.
Tests compare it with an independent brute-force grid maximum.
"""

from __future__ import annotations

import math

import numpy as np
from scipy.optimize import minimize_scalar

from fringe.field.evaluate import field_at
from fringe.field.extents import field_bound_radius_m, threshold_extents_m
from fringe.model.errors import FringeInputError
from fringe.model.magnet import Magnet

__all__ = ["threshold_reach_m", "REACH_GRID_NODES", "REACH_TOL_M"]

#: Coarse-grid nodes along ρ (2× along z); the grid step is R / this.
REACH_GRID_NODES: int = 240

#: Tolerance of the position of the farthest point along the other coordinate, m (the
#: reach itself is stationary there, so its error is far smaller).
REACH_TOL_M: float = 1e-3


def _abs_B_local(magnet: Magnet, rho, z) -> np.ndarray:
    """|B| in T at local (ρ, z) points (fast field, within 1e-4 of the direct sum)."""
    rho, z = np.broadcast_arrays(np.atleast_1d(np.asarray(rho, dtype=float)),
                                 np.atleast_1d(np.asarray(z, dtype=float)))
    local = np.column_stack([np.abs(rho).ravel(), np.zeros(rho.size), z.ravel()])
    return np.linalg.norm(field_at(magnet, magnet.to_site(local)), axis=1)


def _outermost(f, start: float, step: float, stop: float = 0.0) -> float:
    """Outermost s in [stop, start] with f(s) ≥ 0, scanning inward from ``start``
    (f(start) < 0 assumed) in steps of ``step``, then narrowing the bracket 16-fold per
    round (vectorised bisection) to below 1e-6 m; nan if f < 0 everywhere scanned."""
    s = np.zeros(0)
    above = np.zeros(0, dtype=int)
    window = 48 * step  # scan a window at a time: the crossing is usually in the first
    hi = start
    while hi > stop and above.size == 0:
        lo = max(stop, hi - window)
        n = max(2, int(math.ceil((hi - lo) / step)) + 1)
        s = np.linspace(hi, lo, n)
        above = np.flatnonzero(f(s) >= 0.0)
        if above.size == 0:
            hi = lo
    if above.size == 0:
        return math.nan
    k = int(above[0])
    if k == 0:
        if s[0] >= start:
            return float(start)
        s = np.array([s[0] + step, s[0]])  # crossing between this window and the last
        k = 1
    a, b = float(s[k]), float(s[k - 1])  # f(a) ≥ 0 > f(b), a < b
    while b - a > 1e-6:
        t = np.linspace(b, a, 17)
        v = f(t)
        j = int(np.flatnonzero(v >= 0.0)[0]) if np.any(v >= 0.0) else 16
        a, b = float(t[j]), float(t[max(j - 1, 0)])
        if j == 0:
            break
    return a


def _refine(cross, centre: float, h: float, lo_bound: float, hi_bound: float) -> float:
    """max over t in [centre − 2h, centre + 2h] ∩ [lo, hi] of cross(t) (bounded Brent)."""
    a, b = max(lo_bound, centre - 2 * h), min(hi_bound, centre + 2 * h)
    best = cross(centre)
    best = 0.0 if math.isnan(best) else best
    if b - a <= REACH_TOL_M:
        return best

    def neg(t):
        v = cross(float(t))
        return 0.0 if math.isnan(v) else -v

    res = minimize_scalar(neg, bounds=(a, b), method="bounded",
                          options={"xatol": REACH_TOL_M})
    return max(best, -float(res.fun), -neg(a), -neg(b))


def threshold_reach_m(magnet: Magnet, threshold_T: float, *,
                      extents_m: tuple[float, float] | None = None) -> tuple[float, float]:
    """Largest distance from the axis, and along it, of the |B| = ``threshold_T`` line.

    Parameters
    ----------
    magnet : Magnet
        Evaluated alone, in its own frame (site position and axis are irrelevant).
    threshold_T : float
        Field-line level in T (e.g. 5e-4 for the 0.5 mT line).
    extents_m : (float, float), optional
        ``threshold_extents_m(magnet, threshold_T)`` if already computed (saves it).

    Returns
    -------
    max_reach_m : float
        max ρ over every point where |B| ≥ ``threshold_T`` (ρ: distance from the axis), m.
        At least the centre-plane extent of :func:`threshold_extents_m`.
    max_reach_axial_m : float
        max |z| over those points (z: along the axis from the centre), m. At least the
        on-axis extent. Both 0.0 when the threshold is reached nowhere.

    Notes
    -----
    Method and tolerance in the module notes (about 0.1 mm once the coarse grid of
    step R/240 has found the outermost part of the line).
    """
    thr = float(threshold_T)
    if not (math.isfinite(thr) and thr > 0):
        raise FringeInputError(
            f"`threshold_T` must be a positive finite number; got {threshold_T!r}")
    axial0, radial0 = (threshold_extents_m(magnet, thr) if extents_m is None
                       else (float(extents_m[0]), float(extents_m[1])))
    if not magnet.coils:
        return 0.0, 0.0
    big_r = field_bound_radius_m(magnet, thr)
    n = REACH_GRID_NODES
    h = big_r / n
    rho = h * np.arange(n + 1)
    z = h * np.arange(-n, n + 1)
    R, Z = np.meshgrid(rho, z)  # (nz, nrho)
    local = np.column_stack([R.ravel(), np.zeros(R.size), Z.ravel()])
    b = np.linalg.norm(field_at(magnet, magnet.to_site(local)), axis=1).reshape(R.shape)
    above = b >= thr
    if not above.any():
        return max(0.0, radial0), max(0.0, axial0)

    # largest rho: per row, the outermost node above threshold
    idx_r = np.where(above, np.arange(rho.size)[None, :], -1).max(axis=1)  # (nz,)
    j = int(np.argmax(idx_r))
    rho_c = rho[idx_r[j]]

    def cross_rho(zz: float) -> float:
        start = min(rho_c + 3 * h, big_r)
        return _outermost(lambda s: _abs_B_local(magnet, s, zz) - thr, start, h / 8)

    reach = _refine(cross_rho, float(z[j]), h, -big_r, big_r)

    # largest |z|: per column, the outermost node above threshold on either side
    axial = 0.0
    for sign in (1.0, -1.0):
        zs = sign * z
        idx_z = np.where(above & (zs[:, None] >= 0), zs[:, None], -np.inf).max(axis=0)
        if not np.isfinite(idx_z).any():
            continue
        i = int(np.argmax(idx_z))
        z_c = float(idx_z[i])

        def cross_z(rr: float, sign=sign, z_c=z_c) -> float:
            start = min(z_c + 3 * h, big_r)
            return _outermost(lambda s: _abs_B_local(magnet, rr, sign * s) - thr, start, h / 8)

        axial = max(axial, _refine(cross_z, float(rho[i]), h, 0.0, big_r))
        axial = max(axial, z_c)
    return max(reach, radial0, float(rho_c)), max(axial, axial0)
