"""Magnetic flux density B of a site's magnets at arbitrary points.

Three tiers, magpylib-style:

* :func:`magnet_field_local_T` — kernel: one magnet, local-frame points, direct sum of
  its current sheets through magpylib's closed-form cylinder kernel.
* :func:`field_at` — checked public function: any number of magnets (superposed),
  site-frame points, chunked so memory stays bounded; ``method="auto"`` goes through
  the fast axisymmetric path of :mod:`fringe.field.fast` with a per-point error check.
* :func:`field_at_magpylib` — the reference: the same sheets as magpylib objects
  summed by ``magpylib.getB``; used by tests and benchmarks.
"""

from __future__ import annotations

from collections.abc import Iterable

import numpy as np

from fringe.field._quadrature import coil_field_local_T
from fringe.model.constants import MAX_COORDINATE_M, MU0_T_M_PER_A
from fringe.model.errors import FringeInputError
from fringe.model.magnet import DEFAULT_RADIAL_ORDER, Magnet, magpylib_sources

__all__ = ["field_at", "field_gradient_at", "field_at_magpylib", "magnet_field_local_T",
           "energy_density_J_per_m3", "points_in_windings", "as_magnets", "as_points",
           "METHODS"]

#: Evaluation methods accepted by :func:`field_at` (one list, checked everywhere).
METHODS: tuple[str, ...] = ("auto", "direct")


def as_magnets(site_or_magnets) -> tuple[Magnet, ...]:
    """Normalise a Site, a Magnet or an iterable of Magnets to a tuple of Magnets."""
    if isinstance(site_or_magnets, Magnet):
        return (site_or_magnets,)
    mags = getattr(site_or_magnets, "magnets", site_or_magnets)
    if not isinstance(mags, Iterable):
        raise FringeInputError(
            f"`site` must be a Site, a Magnet or a sequence of Magnets; got {type(mags)!r}")
    out = tuple(mags)
    for m in out:
        if not isinstance(m, Magnet):
            raise FringeInputError(f"`site.magnets` must hold Magnet objects; got {type(m)!r}")
    return out


def coordinate_range_problem(points_m: np.ndarray, key: str) -> str | None:
    """The message for points beyond ±:data:`~fringe.model.constants.MAX_COORDINATE_M`, else None.

    Such coordinates overflow the field kernels (and magpylib's elliptic-integral
    iteration then never ends); every entry point refuses them with this one message,
    naming its own ``key`` (``points_m``, ``--at``, ``--points``).
    """
    far = float(np.max(np.abs(points_m), initial=0.0))
    if far > MAX_COORDINATE_M:
        return (f"`{key}` must be site coordinates within ±{MAX_COORDINATE_M:g} m; "
                f"got a coordinate of {far:g} m")
    return None


def as_points(points_m) -> np.ndarray:
    """Site points as a float array (N, 3), checked: one point (3,) or an (N, 3) array,
    finite and within ±:data:`~fringe.model.constants.MAX_COORDINATE_M`; else
    :class:`~fringe.model.errors.FringeInputError` naming ``points_m``."""
    p = np.asarray(points_m, dtype=float)
    if p.ndim == 1 and p.shape == (3,):
        p = p[None, :]
    if p.ndim != 2 or p.shape[1] != 3:
        raise FringeInputError(f"`points_m` must be an array of shape (N, 3); got shape {p.shape}")
    if not np.all(np.isfinite(p)):
        raise FringeInputError("`points_m` must be finite; got NaN or inf")
    if problem := coordinate_range_problem(p, "points_m"):
        raise FringeInputError(problem)
    return p


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


def _magnet_field_site_T(magnet: Magnet, points_m: np.ndarray, **kw) -> np.ndarray:
    loc = magnet.to_local(points_m)
    rho = np.hypot(loc[:, 0], loc[:, 1])
    b_rho, b_z = magnet_field_local_T(magnet, rho, loc[:, 2], **kw)
    with np.errstate(invalid="ignore", divide="ignore"):
        c = np.where(rho > 0, loc[:, 0] / rho, 0.0)
        s = np.where(rho > 0, loc[:, 1] / rho, 0.0)
    b_loc = np.stack([b_rho * c, b_rho * s, b_z], axis=1)
    return magnet.vectors_to_site(b_loc)


def field_at(site, points_m, *, method: str = "auto", chunk_size: int = 65_536,
             **options) -> np.ndarray:
    """Flux density B in T at site points, all magnets superposed.

    Parameters
    ----------
    site : Site, Magnet or sequence of Magnet
    points_m : array_like, shape (N, 3) or (3,)
        Points in the site frame, m.
    method : {"auto", "direct"}
        ``"direct"`` sums every current sheet (reference accuracy, slow);
        ``"auto"`` uses the fast axisymmetric path (:mod:`fringe.field.fast`: exterior
        zonal series and an interpolated (ρ, z) table per coil set) wherever its
        error estimate, summed over magnets, is below
        ``RELATIVE_TOLERANCE / SAFETY_FACTOR`` (1e-4 / 4) of the local |B|, and the
        direct sum elsewhere (near and inside windings, near zeros of |B|). The result
        is within 1e-4 of the direct sum relative to |B| at every point. A coil set not
        seen before is summed directly until 2·10⁴ points have been asked of it in this
        process (building its model costs about that much), unless its model is cached.
    chunk_size : int
        Points evaluated at once; peak memory is independent of N beyond the output.
    **options
        ``order``, ``panels`` (radial quadrature) and ``refine`` passed to
        :func:`magnet_field_local_T`.

    Returns
    -------
    ndarray, shape (N, 3)
        B in the site frame, T.
    """
    if method not in METHODS:
        raise FringeInputError(f"`method` must be one of {', '.join(METHODS)}; got {method!r}")
    mags = as_magnets(site)
    p = as_points(points_m)
    if not isinstance(chunk_size, (int, np.integer)) or chunk_size < 1:
        raise FringeInputError(f"`chunk_size` must be a positive integer; got {chunk_size!r}")
    out = np.zeros_like(p)
    fast = _fast_flags(mags, len(p), method, options)
    fallback: list[np.ndarray] = []
    for a in range(0, len(p), chunk_size):
        sl = slice(a, a + chunk_size)
        if any(fast):
            out[sl], bad = _fast_chunk(mags, fast, p[sl], options)
            if bad.size:
                fallback.append(bad + a)
        else:
            for m in mags:
                out[sl] += _magnet_field_site_T(m, p[sl], **options)
    # points the fast path declined, evaluated together (fewer, larger kernel calls)
    idx = np.concatenate(fallback) if fallback else np.zeros(0, dtype=np.intp)
    for a in range(0, idx.size, chunk_size):
        sub = idx[a:a + chunk_size]
        direct = np.zeros((sub.size, 3))
        for m in mags:
            direct += _magnet_field_site_T(m, p[sub], **options)
        out[sub] = direct
    return out


def _fast_flags(mags, n_points: int, method: str, options: dict) -> list[bool]:
    """Per magnet: use the fast path for this call? (see fastfield.model_wanted)."""
    if method != "auto" or not options.get("refine", True) or n_points == 0:
        return [False] * len(mags)
    from fringe.field.fast import model_wanted

    order = options.get("order", DEFAULT_RADIAL_ORDER)
    return [model_wanted(m.coils, n_points, order, options.get("panels")) for m in mags]


def _fast_chunk(mags, fast, p: np.ndarray, options: dict) -> tuple[np.ndarray, np.ndarray]:
    """Fast path on one chunk: B (n, 3) and the indices whose error estimate is too large.

    Magnets not flagged in ``fast`` are summed directly (error estimate 0).
    """
    from fringe.field.fast import RELATIVE_TOLERANCE, SAFETY_FACTOR, fast_field_site_T

    order = options.get("order", DEFAULT_RADIAL_ORDER)
    panels = options.get("panels")
    pts = np.ascontiguousarray(p.T)
    b = np.zeros_like(pts)
    err = np.zeros(pts.shape[1])
    for m, use in zip(mags, fast, strict=True):
        if use:
            bm, em = fast_field_site_T(m, pts, order, panels)
            b += bm
            err += em
        else:
            b += _magnet_field_site_T(m, p, **options).T
    b_abs = np.sqrt(np.einsum("ij,ij->j", b, b))
    bad = np.flatnonzero(~(err <= (RELATIVE_TOLERANCE / SAFETY_FACTOR) * b_abs))
    return b.T, bad


def field_gradient_at(site, points_m, *, method: str = "auto", chunk_size: int = 65_536,
                      **options) -> tuple[np.ndarray, np.ndarray]:
    """B (T) and its Jacobian ∂B_i/∂x_j (T/m) at site points, all magnets superposed.

    Parameters
    ----------
    site : Site, Magnet or sequence of Magnet
    points_m : array_like, shape (N, 3) or (3,)
    method : {"auto", "direct"}
        ``"auto"``: analytic derivatives of the exterior zonal series and of the table
        interpolant (:mod:`fringe.field.fast`) where the fast B passes its error check,
        central differences of the direct sum elsewhere. ``"direct"``: central
        differences of the direct sum everywhere (step 1e-5 R_enc).
    chunk_size : int
        Points evaluated at once.

    Returns
    -------
    B_T : ndarray, shape (N, 3)
    J_T_per_m : ndarray, shape (N, 3, 3)
        ``J[n, i, j] = ∂B_i/∂x_j`` in the site frame. Outside windings J is symmetric and
        traceless (∇×B = 0, ∇·B = 0; Jackson Eqs. 5.22, 5.5). ∇|B| = Jᵀ B/|B| and
        ∇(B²) = 2 Jᵀ B.

    Notes
    -----
    B itself is within the 1e-4 bound of :func:`field_at`. The gradient has no stated
    bound; tests compare it with central differences of the direct sum: Frobenius error
    ≤ 1e-3 (|J| + |B|/R_enc) at random points outside windings (~1e-6 |J| typical in the
    series region, up to ~1e-3 |J| where J is nearly zero near the isocentre). Inside
    windings J is neither symmetric nor traceless (∇×B = μ₀J).
    """
    if method not in METHODS:
        raise FringeInputError(f"`method` must be one of {', '.join(METHODS)}; got {method!r}")
    mags = as_magnets(site)
    p = as_points(points_m)
    n = len(p)
    B = np.zeros((n, 3))
    J = np.zeros((n, 3, 3))
    fallback: list[np.ndarray] = []
    fast = _fast_flags(mags, 7 * n, method, options)
    if all(fast) and mags:
        from fringe.field.fast import RELATIVE_TOLERANCE, SAFETY_FACTOR, fast_gradient_site

        order = options.get("order", DEFAULT_RADIAL_ORDER)
        panels = options.get("panels")
        for a in range(0, n, chunk_size):
            sl = slice(a, a + chunk_size)
            pts = np.ascontiguousarray(p[sl].T)
            b = np.zeros_like(pts)
            jac = np.zeros((3, 3, pts.shape[1]))
            err = np.zeros(pts.shape[1])
            for m in mags:
                bm, jm, em = fast_gradient_site(m, pts, order, panels)
                b += bm
                jac += jm
                err += em
            B[sl] = b.T
            J[sl] = jac.transpose(2, 0, 1)
            b_abs = np.sqrt(np.einsum("ij,ij->j", b, b))
            bad = np.flatnonzero(~(err <= (RELATIVE_TOLERANCE / SAFETY_FACTOR) * b_abs))
            if bad.size:
                fallback.append(bad + a)
        idx = np.concatenate(fallback) if fallback else np.zeros(0, dtype=np.intp)
    else:
        idx = np.arange(n)
    for a in range(0, idx.size, chunk_size):
        sub = idx[a:a + chunk_size]
        B[sub], J[sub] = _direct_gradient(mags, p[sub], options)
    return B, J


def _direct_gradient(mags, p: np.ndarray, options: dict):
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
        b += _magnet_field_site_T(m, allp, **options)
    parts = b.reshape(7, n, 3)
    jac = np.stack([(parts[1 + j] - parts[4 + j]) / (2 * h) for j in range(3)], axis=2)
    return parts[0], jac


def field_at_magpylib(site, points_m, order: int = DEFAULT_RADIAL_ORDER,
                      panels: int | None = None) -> np.ndarray:
    """Reference B (T) from ``magpylib.getB`` over magpylib Cylinder objects.

    Same physics as :func:`field_at` with ``method="direct"`` but through magpylib's
    object interface; this is the "direct magpylib sum" benchmarks compare against.
    """
    import magpylib as magpy

    p = as_points(points_m)
    out = np.zeros_like(p)
    for m in as_magnets(site):
        col = magpylib_sources(m, order, panels)
        out += np.asarray(magpy.getB(col, p, sumup=True)).reshape(-1, 3)
    return out


def energy_density_J_per_m3(B_T) -> np.ndarray:
    """Magnetic energy density u = |B|²/(2μ₀) in J/m³ (vacuum; Jackson Eq. 5.148)."""
    b = np.asarray(B_T, dtype=float)
    return np.sum(b * b, axis=-1) / (2.0 * MU0_T_M_PER_A)


def points_in_windings(site, points_m, margin_m: float = 0.0) -> np.ndarray:
    """Boolean mask (N,) of points inside (or within margin of) any winding."""
    p = as_points(points_m)
    mask = np.zeros(len(p), dtype=bool)
    for m in as_magnets(site):
        mask |= m.contains_points(p, margin_m)
    return mask


