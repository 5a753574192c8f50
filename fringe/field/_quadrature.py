"""Radial quadrature of one coil's field, refined near and inside the winding.

A coil of uniform current density J is the radial integral of cylindrical current
sheets, B(P) = ∫ B_sheet(r; P) dr over r_inner..r_outer (Sec. "coil model" of
docs/field.md). Each sheet's field is closed form (magpylib's axially magnetised
cylinder, Derby & Olbert 2010), so only the radial integral is numerical:

* far from the winding (distance d from its cross-section ≥ the half-width h of a
  quadrature panel) a fixed composite Gauss-Legendre rule of :data:`DEFAULT_RADIAL_ORDER`
  nodes per panel is used. The integrand's nearest complex singularity then lies at
  least h from the panel, and Gauss-Legendre converges geometrically (Trefethen,
  *Approximation Theory and Approximation Practice*, Thm 19.3); the measured error at
  d = h is below 1e-6 (tests/test_field_core.py);
* near the winding or inside it, each point gets its own rule: the interval is split
  at the point's own radius (clipped to the winding) and each side is covered by a
  geometrically graded mesh toward the split (ratio σ = 0.2, up to :data:`NEAR_LEVELS` levels,
  fewer for a point outside the winding: :func:`near_levels`;
  Schwab, *p- and hp-Finite Element Methods*, 1998, Sec. 4.4 for graded meshes
  resolving end-point singularities). This resolves the near-singular integrand down
  to about σ^NEAR_LEVELS of the winding thickness, and integrates across the kink
  of B at the point's own radius when the point lies inside the winding.
"""

from __future__ import annotations

import math
from functools import lru_cache

import numpy as np

from fringe.field.quadrature_rules import composite_rule, gauss_legendre_panels
from fringe.field.sources import DEFAULT_RADIAL_ORDER
from fringe.model.constants import MU0_T_M_PER_A
from fringe.model.magnet import Coil

__all__ = ["coil_field_local_T", "distance_to_winding_m", "near_levels", "NEAR_LEVELS",
           "NEAR_RATIO"]

#: Graded levels on each side of the split point in the near-field rule.
NEAR_LEVELS: int = 14
#: Geometric grading ratio of the near-field rule.
NEAR_RATIO: float = 0.2

#: Upper bound on kernel elements per call (bounds peak memory, ~30 arrays of this size).
_BATCH = 1_000_000


def _kernel():
    import magpylib as magpy

    return magpy.core.magnet_cylinder_axial_Bfield


def distance_to_winding_m(coil: Coil, rho_m: np.ndarray, z_m: np.ndarray) -> np.ndarray:
    """Distance (m) in the (ρ, z) half-plane from points to the coil cross-section (0 inside)."""
    dr = np.maximum(np.maximum(coil.r_inner_m - rho_m, rho_m - coil.r_outer_m), 0.0)
    dz = np.maximum(np.maximum(coil.z_min_m - z_m, z_m - coil.z_max_m), 0.0)
    return np.hypot(dr, dz)


def default_panels(coil: Coil) -> int:
    """Radial panels of the far rule: panels no thicker than half the coil length."""
    return max(1, math.ceil(coil.thickness_m / (coil.length_m / 2)))


def _sheet_sum(coil: Coil, radius: np.ndarray, weight: np.ndarray, rho: np.ndarray,
               z: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Σ_k w_k·B_sheet(r_k) for per-point node sets: radius/weight shape (N, K)."""
    n, k = radius.shape
    b_rho = np.zeros(n)
    b_z = np.zeros(n)
    if n == 0:
        return b_rho, b_z
    kernel = _kernel()
    h = coil.length_m / 2
    zc = (coil.z_min_m + coil.z_max_m) / 2
    scale = MU0_T_M_PER_A * coil.current_density_A_per_m2
    step = max(1, _BATCH // k)
    for a in range(0, n, step):
        sl = slice(a, min(n, a + step))
        r = radius[sl]
        out = np.asarray(kernel((h / r).ravel(), (rho[sl, None] / r).ravel(),
                                ((z[sl, None] - zc) / r).ravel())).reshape(3, *r.shape)
        w = weight[sl] * scale
        b_rho[sl] = np.sum(np.where(w != 0, w * out[0], 0.0), axis=1)
        b_z[sl] = np.sum(np.where(w != 0, w * out[2], 0.0), axis=1)
    return b_rho, b_z


def _far_rule(coil: Coil, order: int, panels: int) -> tuple[np.ndarray, np.ndarray]:
    return gauss_legendre_panels(coil.r_inner_m, coil.r_outer_m, order, panels)


@lru_cache(maxsize=64)
def _graded_unit_rule(order: int, levels: int, ratio: float) -> tuple[np.ndarray, np.ndarray]:
    """Nodes/weights on [0, 1] graded geometrically toward 0 (panel edges 0, σ^levels, …, σ, 1)."""
    edges = np.concatenate([[0.0], ratio ** np.arange(levels, -1, -1)])
    return composite_rule(edges, order)


def near_levels(coil: Coil, distance_m: np.ndarray) -> np.ndarray:
    """Graded levels the near rule needs for points at ``distance_m`` from the winding.

    The integrand's singularities lie at least the point's distance d from the winding's
    cross-section, so graded panels much shorter than d add nothing: the innermost panel
    [0, σ^K·t] (t the winding thickness) is kept no longer than σ·d, i.e.
    K = ⌈log(d/t)/log σ⌉ + 1, between 1 and :data:`NEAR_LEVELS` (all levels inside the
    winding, d = 0). The other panels are those of the full rule, so each keeps the
    full rule's ratio of distance to length (the convergence argument of the module
    docstring); only the innermost one changes, toward a more favourable ratio.
    """
    d = np.asarray(distance_m, float)
    with np.errstate(divide="ignore", invalid="ignore"):
        k = np.ceil(np.log(d / coil.thickness_m) / math.log(NEAR_RATIO)) + 1.0
    k = np.where(np.isfinite(k), k, NEAR_LEVELS)
    return np.clip(k, 1, NEAR_LEVELS).astype(np.intp)


def _near_rule(coil: Coil, rho: np.ndarray, order: int,
               levels: int = NEAR_LEVELS) -> tuple[np.ndarray, np.ndarray]:
    """Per-point nodes (N, K) and weights: split at clip(ρ), graded toward the split."""
    t, wt = _graded_unit_rule(order, int(levels), NEAR_RATIO)
    s = np.clip(rho, coil.r_inner_m, coil.r_outer_m)[:, None]
    left = s - coil.r_inner_m
    right = coil.r_outer_m - s
    nodes = np.concatenate([s - left * t, s + right * t], axis=1)
    weights = np.concatenate([left * wt, right * wt], axis=1)
    # A side of zero length (point at or beyond a winding face, or a solid coil's axis)
    # has zero weights; park its nodes at the mid radius so the kernel never sees a
    # sheet through the point itself (singular) or of zero radius.
    mid = 0.5 * (coil.r_inner_m + coil.r_outer_m)
    nodes = np.where(weights > 0, nodes, mid)
    return nodes, weights


def coil_field_local_T(coil: Coil, rho_m: np.ndarray, z_m: np.ndarray,
                       order: int = DEFAULT_RADIAL_ORDER, panels: int | None = None,
                       refine: bool = True) -> tuple[np.ndarray, np.ndarray]:
    """(B_rho, B_z) in T of one coil at local cylindrical points (ρ, z) in m.

    Parameters
    ----------
    coil : Coil
    rho_m, z_m : ndarray, shape (N,)
    order : int
        Gauss-Legendre nodes per panel.
    panels : int, optional
        Panels of the far rule (default :func:`default_panels`).
    refine : bool
        Use the per-point graded rule for points closer to the winding than a panel
        half-width (default). ``False`` gives the plain fixed-sheet sum, identical to
        the magpylib object model of :func:`fringe.field.sources.magpylib_sources`.

    References
    ----------
    Derby, N. & Olbert, S. (2010). Cylindrical magnets and ideal solenoids.
    Am. J. Phys. 78, 229-235 (closed-form sheet field, via magpylib).
    """
    rho = np.asarray(rho_m, dtype=float).ravel()
    z = np.asarray(z_m, dtype=float).ravel()
    p = panels if panels is not None else default_panels(coil)
    nodes, weights = _far_rule(coil, order, p)
    if not refine:
        near = np.zeros(rho.size, dtype=bool)
    else:
        half_width = coil.thickness_m / (2 * p)
        dist = distance_to_winding_m(coil, rho, z)
        near = dist < half_width
    b_rho = np.empty(rho.size)
    b_z = np.empty(rho.size)
    far = ~near
    nf = int(far.sum())
    b_rho[far], b_z[far] = _sheet_sum(coil, np.broadcast_to(nodes, (nf, nodes.size)),
                                      np.broadcast_to(weights, (nf, nodes.size)),
                                      rho[far], z[far])
    if near.any():
        idx = np.flatnonzero(near)
        levels = near_levels(coil, dist[idx])
        for k in np.unique(levels):              # one kernel call per level count
            sel = idx[levels == k]
            nn, wn = _near_rule(coil, rho[sel], order, int(k))
            b_rho[sel], b_z[sel] = _sheet_sum(coil, nn, wn, rho[sel], z[sel])
    return b_rho, b_z
