"""Direct sum of a magnet's current sheets: the reference every fast path is checked against.

Kernels without argument checks (callers check): :func:`magnet_field_local_T` (one magnet,
local cylindrical points), :func:`magnet_field_site_T` (site-frame points),
:func:`direct_gradient` (central differences of the direct sum) and
:func:`magpylib_field_site_T` (the same sheets as magpylib objects, summed by
``magpylib.getB``). The checked public functions are in :mod:`fringe.field.evaluate`.
"""

from __future__ import annotations

import numpy as np

from fringe.field._quadrature import coil_field_local_T
from fringe.field.sources import DEFAULT_RADIAL_ORDER, magpylib_sources
from fringe.model.magnet import Magnet

__all__ = ["magnet_field_local_T", "magnet_field_site_T", "direct_gradient",
           "magpylib_field_site_T"]


def magnet_field_local_T(magnet: Magnet, rho_m: np.ndarray, z_m: np.ndarray,
                         order: int = DEFAULT_RADIAL_ORDER,
                         panels: int | None = None,
                         refine: bool = True) -> tuple[np.ndarray, np.ndarray]:
    """Axisymmetric field of one magnet in its local cylindrical frame (direct sum).

    Parameters
    ----------
    magnet : Magnet
    rho_m, z_m : ndarray, shape (N,)
        Local cylindrical radius and axial coordinate, m.
    order, panels : int
        Radial quadrature (see :func:`fringe.field._quadrature.coil_field_local_T`).
    refine : bool
        Per-point graded quadrature near and inside windings (default True).

    Returns
    -------
    B_rho_T, B_z_T : ndarray, shape (N,)
        Radial and axial flux density in T.

    Notes
    -----
    Sum over coils of the radial integral of closed-form sheet fields (Derby & Olbert,
    Am. J. Phys. 78, 229 (2010), as implemented in ``magpylib.core``); points near or
    inside a winding get a graded per-point rule (:mod:`fringe.field._quadrature`).
    """
    rho = np.asarray(rho_m, dtype=float).ravel()
    z = np.asarray(z_m, dtype=float).ravel()
    b_rho = np.zeros(rho.size)
    b_z = np.zeros(rho.size)
    with np.errstate(divide="ignore", invalid="ignore"):
        for coil in magnet.coils:
            br, bz = coil_field_local_T(coil, rho, z, order, panels, refine)
            b_rho += br
            b_z += bz
        # A point exactly on a winding's corner or end edge meets a sheet end where the
        # closed-form kernel divides by zero. B is continuous there (volume current), so
        # evaluate 1e-9 R_enc away instead.
        bad = np.flatnonzero(~(np.isfinite(b_rho) & np.isfinite(b_z)))
        if bad.size:
            eps = 1e-9 * magnet.enclosing_radius_m
            b_rho[bad] = 0.0
            b_z[bad] = 0.0
            for coil in magnet.coils:
                br, bz = coil_field_local_T(coil, rho[bad] + eps, z[bad] + eps, order, panels,
                                            refine)
                b_rho[bad] += br
                b_z[bad] += bz
    return b_rho, b_z


def magnet_field_site_T(magnet: Magnet, points_m: np.ndarray, **kw) -> np.ndarray:
    """B (N, 3) in T of one magnet at site points (N, 3) in m (direct sum).

    ``kw``: ``order``, ``panels``, ``refine`` of :func:`magnet_field_local_T`.
    """
    loc = magnet.to_local(points_m)
    rho = np.hypot(loc[:, 0], loc[:, 1])
    b_rho, b_z = magnet_field_local_T(magnet, rho, loc[:, 2], **kw)
    with np.errstate(invalid="ignore", divide="ignore"):
        c = np.where(rho > 0, loc[:, 0] / rho, 0.0)
        s = np.where(rho > 0, loc[:, 1] / rho, 0.0)
    b_loc = np.stack([b_rho * c, b_rho * s, b_z], axis=1)
    return magnet.vectors_to_site(b_loc)


def direct_gradient(mags, p: np.ndarray, options: dict) -> tuple[np.ndarray, np.ndarray]:
    """B and central-difference Jacobian of the direct sum.

    Step per point: 2e-4 of its distance to the nearest magnet centre (at least 1e-6 of
    the largest R_enc): small against the scale on which B varies there, large enough
    that the direct sum's own rounding (~1e-9 relative far away) stays below 1e-4 of J.
    """
    r_min = 1e-6 * max(m.enclosing_radius_m for m in mags)
    dist = np.min([np.linalg.norm(p - np.asarray(m.center_m), axis=1) for m in mags], axis=0)
    h = np.maximum(2e-4 * dist, r_min)[:, None]
    n = len(p)
    allp = np.concatenate([p] + [p + h * e for e in np.eye(3)] + [p - h * e for e in np.eye(3)])
    b = np.zeros_like(allp)
    for m in mags:
        b += magnet_field_site_T(m, allp, **options)
    parts = b.reshape(7, n, 3)
    jac = np.stack([(parts[1 + j] - parts[4 + j]) / (2 * h) for j in range(3)], axis=2)
    return parts[0], jac


def magpylib_field_site_T(magnets, points_m: np.ndarray, order: int = DEFAULT_RADIAL_ORDER,
                          panels: int | None = None) -> np.ndarray:
    """B (N, 3) in T at site points (N, 3) from ``magpylib.getB`` over the magnets' sheets.

    Each magnet becomes :func:`fringe.field.sources.magpylib_sources`; the sum runs
    through magpylib's object interface (the "direct magpylib sum" of the benchmarks).
    """
    import magpylib as magpy

    out = np.zeros_like(points_m)
    for m in magnets:
        col = magpylib_sources(m, order, panels)
        out += np.asarray(magpy.getB(col, points_m, sumup=True)).reshape(-1, 3)
    return out
