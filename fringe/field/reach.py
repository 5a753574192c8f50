"""How far a field line reaches anywhere: its largest distance from the axis and along it.

:func:`fringe.field.extents.threshold_extents_m` measures a line on two lines only (the
axis and the centre-plane radius). Off the centre plane a shielded magnet's line often
bulges further out (oblique lobes), so the headline distance of a line is the largest
distance of *any* of its points from the axis. :func:`threshold_reach_m` finds it by a
2-D search in the magnet's own (ρ, z) half-plane, where the field is axisymmetric:

1. **Coarse grid.** |B| on a uniform (ρ, z) grid of step h = R / ``REACH_GRID_NODES``
   over 0 ≤ ρ ≤ R, −R ≤ z ≤ R, evaluated by the fast field
   (:func:`fringe.field.evaluate.field_at`, within 1e-4 of the direct sum; points inside
   windings are left out, as in plan maps). R starts at ``REACH_WINDOW_FACTOR`` × the
   larger 1-D extent and grows 1.5-fold while any node on the window's outer edge is
   above the threshold, up to the distance beyond which |B| < threshold is guaranteed
   (:func:`fringe.field.extents.field_bound_radius_m`).
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

from fringe.field.evaluate import field_at, points_in_windings
from fringe.field.extents import field_bound_radius_m, threshold_extents_m
from fringe.model.errors import FringeInputError
from fringe.model.magnet import Magnet

__all__ = ["threshold_reach_m", "REACH_GRID_NODES", "REACH_WINDOW_FACTOR", "REACH_TOL_M"]

#: Coarse-grid nodes along ρ (2× along z); the grid step is R / this.
REACH_GRID_NODES: int = 160

#: The coarse window's half-size R starts at this multiple of the larger of the on-axis
#: and centre-plane extents and grows 1.5-fold while the line touches its edge (never
#: beyond the rigorous bound :func:`fringe.field.extents.field_bound_radius_m`).
REACH_WINDOW_FACTOR: float = 1.6

#: Tolerance of the position of the farthest point along the other coordinate, m (the
#: reach itself is stationary there, so its error is far smaller).
REACH_TOL_M: float = 1e-3


def _abs_B_local(magnet: Magnet, rho, z) -> np.ndarray:
    """|B| in T at local (ρ, z) points (fast field, within 1e-4 of the direct sum)."""
    rho, z = np.broadcast_arrays(np.atleast_1d(np.asarray(rho, dtype=float)),
                                 np.atleast_1d(np.asarray(z, dtype=float)))
    local = np.column_stack([np.abs(rho).ravel(), np.zeros(rho.size), z.ravel()])
    return np.linalg.norm(field_at(magnet, magnet.to_site(local)), axis=1).reshape(rho.shape)


def _outermost(f, t: np.ndarray, start: float, step: float, stop: float = 0.0) -> np.ndarray:
    """For each t, the outermost s in [stop, start] with f(s, t) ≥ 0.

    ``f(S, T)`` maps equal-shape arrays to |B| − threshold; f(start, t) < 0 is assumed.
    The scan runs inward in steps of ``step`` (a window of 48 steps at a time), then each
    bracket is narrowed 64-fold per round to below 1e-5 m. Returns the inner end of each
    bracket (where f ≥ 0), nan where f < 0 everywhere scanned.
    """
    t = np.asarray(t, dtype=float)
    a = np.full(t.size, np.nan)  # inner end of the bracket, f(a) ≥ 0
    b = np.full(t.size, np.nan)  # outer end, f(b) < 0
    todo = np.ones(t.size, dtype=bool)
    hi = start
    while hi > stop and todo.any():
        lo = max(stop, hi - 48 * step)
        n = max(2, int(math.ceil((hi - lo) / step)) + 1)
        sg = np.linspace(hi, lo, n)
        rows = np.flatnonzero(todo)
        v = f(np.broadcast_to(sg, (rows.size, n)), np.broadcast_to(t[rows, None], (rows.size, n)))
        hit = v >= 0.0
        for i, row in enumerate(rows):
            k = np.flatnonzero(hit[i])
            if k.size == 0:
                continue
            k0 = int(k[0])
            a[row] = sg[k0]
            b[row] = sg[k0 - 1] if k0 > 0 else (sg[0] + step if hi < start else sg[0])
            todo[row] = False
        hi = lo
    rows = np.flatnonzero(np.isfinite(a) & (b > a))
    u = np.linspace(0.0, 1.0, 65)
    while rows.size and np.max(b[rows] - a[rows]) > 1e-5:
        S = b[rows, None] + (a[rows] - b[rows])[:, None] * u[None, :]  # outer → inner
        v = f(S, np.broadcast_to(t[rows, None], S.shape))
        k = np.argmax(v >= 0.0, axis=1)  # first index at or above; the last is f(a) ≥ 0
        k = np.where(np.any(v >= 0.0, axis=1), k, S.shape[1] - 1)
        k = np.maximum(k, 1)
        a[rows] = S[np.arange(rows.size), k]
        b[rows] = S[np.arange(rows.size), k - 1]
    return a


def _refine(cross, candidates: np.ndarray, h: float, lo_bound: float,
            hi_bound: float) -> float:
    """max of cross(t) near the coarse ``candidates`` (every row or column whose coarse
    crossing is within one node of the best): cross at each candidate, then 33 values
    within ±h of the best, zooming 8-fold per round around the best until the spacing is
    below :data:`REACH_TOL_M` (near the farthest point the reach is stationary in t)."""
    t = np.asarray(candidates, dtype=float)
    v = cross(t)
    if not np.any(np.isfinite(v)):
        return 0.0
    k = int(np.nanargmax(v))
    best, centre = float(v[k]), float(t[k])
    span = h
    while span / 16 >= REACH_TOL_M:
        t = np.clip(centre + np.linspace(-span, span, 33), lo_bound, hi_bound)
        v = cross(t)
        if np.any(np.isfinite(v)):
            k = int(np.nanargmax(v))
            if v[k] > best:
                best, centre = float(v[k]), float(t[k])
        span /= 8.0
    return best


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
    step R/160 has found the outermost part of the line).
    """
    thr = float(threshold_T)
    if not (math.isfinite(thr) and thr > 0):
        raise FringeInputError(
            f"`threshold_T` must be a positive finite number; got {threshold_T!r}")
    axial0, radial0 = (threshold_extents_m(magnet, thr) if extents_m is None
                       else (float(extents_m[0]), float(extents_m[1])))
    if not magnet.coils:
        return 0.0, 0.0
    bound = field_bound_radius_m(magnet, thr)
    big_r = min(bound, max(REACH_WINDOW_FACTOR * max(axial0, radial0),
                           1.5 * magnet.enclosing_radius_m))
    n = REACH_GRID_NODES
    while True:
        h = big_r / n
        rho = h * np.arange(n + 1)
        z = h * np.arange(-n, n + 1)
        R, Z = np.meshgrid(rho, z)  # (nz, nrho)
        site_pts = magnet.to_site(np.column_stack([R.ravel(), np.zeros(R.size), Z.ravel()]))
        inside = points_in_windings(magnet, site_pts)
        b = np.zeros(R.size)
        b[~inside] = np.linalg.norm(field_at(magnet, site_pts[~inside]), axis=1)
        above = (b >= thr).reshape(R.shape)  # windings: not part of the line's space
        if big_r >= bound or not (above[0].any() or above[-1].any() or above[:, -1].any()):
            break
        big_r = min(bound, 1.5 * big_r)  # the line touches the window's edge: widen
    if not above.any():
        return max(0.0, radial0), max(0.0, axial0)

    # largest rho: per row, the outermost node above threshold
    idx_r = np.where(above, np.arange(rho.size)[None, :], -1).max(axis=1)  # (nz,)
    rho_c = rho[idx_r.max()]
    rows = z[idx_r >= idx_r.max() - 1]

    def cross_rho(zz: np.ndarray) -> np.ndarray:
        start = min(rho_c + 3 * h, big_r)
        return _outermost(lambda S, T: _abs_B_local(magnet, S, T) - thr, zz, start, h / 8)

    reach = _refine(cross_rho, rows, h, -big_r, big_r)

    # largest |z|: per column, the outermost node above threshold on either side
    axial = 0.0
    for sign in (1.0, -1.0):
        zs = sign * z
        idx_z = np.where(above & (zs[:, None] >= 0), zs[:, None], -np.inf).max(axis=0)
        if not np.isfinite(idx_z).any():
            continue
        z_c = float(idx_z.max())
        cols = rho[idx_z >= z_c - 1.5 * h]

        def cross_z(rr: np.ndarray, sign=sign, z_c=z_c) -> np.ndarray:
            start = min(z_c + 3 * h, big_r)
            return _outermost(lambda S, T: _abs_B_local(magnet, T, sign * S) - thr, rr,
                              start, h / 8)

        axial = max(axial, _refine(cross_z, cols, h, 0.0, big_r))
        axial = max(axial, z_c)
    return max(reach, radial0, float(rho_c)), max(axial, axial0)
