"""Magnetic flux density B of a site's magnets at arbitrary points.

Three tiers, magpylib-style:

* :func:`fringe.field.direct.magnet_field_local_T` — kernel: one magnet, local-frame
  points, direct sum of its current sheets through magpylib's closed-form cylinder kernel.
* :func:`field_at` — checked public function: any number of magnets (superposed),
  site-frame points, chunked so memory stays bounded; ``method="auto"`` goes through
  the fast axisymmetric path of :mod:`fringe.field.fast` with a per-point error check.
* :func:`field_at_magpylib` — the reference: the same sheets as magpylib objects
  summed by ``magpylib.getB``; used by tests and benchmarks.
"""

from __future__ import annotations

from collections.abc import Iterable

import numpy as np

from fringe.field.direct import direct_gradient, magnet_field_site_T, magpylib_field_site_T
from fringe.field.fast import (
    RELATIVE_TOLERANCE,
    SAFETY_FACTOR,
    fast_field_site_T,
    fast_gradient_site,
    model_wanted,
)
from fringe.field.sources import DEFAULT_RADIAL_ORDER
from fringe.model.constants import MAX_COORDINATE_M, MU0_T_M_PER_A
from fringe.model.errors import FringeInputError
from fringe.model.magnet import Magnet

__all__ = ["field_at", "field_gradient_at", "grad_abs_B_T_per_m", "field_at_magpylib",
           "energy_density_J_per_m3", "points_in_windings", "points_in_envelopes",
           "as_magnets", "as_points",
           "coordinate_range_problem", "METHODS"]

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
    naming its own ``key`` (the Python argument, e.g. ``points_m``; the command line passes
    its option name).
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
        :func:`fringe.field.direct.magnet_field_local_T`; ``fast_model`` (True/False)
        fixes the choice of the fast path for every magnet (building its model if
        needed) instead of the per-process demand above, so that several processes
        computing parts of one job (a map's blocks on dask workers) agree bit for bit.

    Returns
    -------
    ndarray, shape (N, 3)
        B in the site frame, T. When ``site`` is a Site whose ``induced`` is set (solved
        steel, :func:`fringe.physics.steel.solve_steel`), its induced field is added;
        the 1e-4 bound above is on the magnets' part (the induced part has its own,
        :mod:`fringe.field.induced`).
    """
    if method not in METHODS:
        raise FringeInputError(f"`method` must be one of {', '.join(METHODS)}; got {method!r}")
    mags = as_magnets(site)
    p = as_points(points_m)
    if not isinstance(chunk_size, (int, np.integer)) or chunk_size < 1:
        raise FringeInputError(f"`chunk_size` must be a positive integer; got {chunk_size!r}")
    out = np.zeros_like(p)
    fast = _fast_flags(mags, len(p), method, options, options.pop("fast_model", None))
    fallback: list[np.ndarray] = []
    for a in range(0, len(p), chunk_size):
        sl = slice(a, a + chunk_size)
        if any(fast):
            out[sl], bad = _fast_chunk(mags, fast, p[sl], options)
            if bad.size:
                fallback.append(bad + a)
        else:
            for m in mags:
                out[sl] += magnet_field_site_T(m, p[sl], **options)
    # points the fast path declined, evaluated together (fewer, larger kernel calls)
    idx = np.concatenate(fallback) if fallback else np.zeros(0, dtype=np.intp)
    for a in range(0, idx.size, chunk_size):
        sub = idx[a:a + chunk_size]
        direct = np.zeros((sub.size, 3))
        for m in mags:
            direct += magnet_field_site_T(m, p[sub], **options)
        out[sub] = direct
    induced = _induced_of(site)
    if induced is not None and len(p):
        out += np.asarray(induced.field_T(p), dtype=float).reshape(p.shape)
    return out


def _induced_of(site):
    """The solved steel a Site carries (``site.induced``), else None (free space).

    A bare Magnet or a sequence of magnets has no steel.
    """
    if isinstance(site, Magnet) or not hasattr(site, "magnets"):
        return None
    return getattr(site, "induced", None)


def _induced_gradient(induced, p: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Induced B and its Jacobian: the model's own ``field_gradient_T`` if it has one,
    else central differences of ``field_T`` (step 1e-4 m)."""
    grad = getattr(induced, "field_gradient_T", None)
    if grad is not None:
        b, jac = grad(p)
        return np.asarray(b, dtype=float), np.asarray(jac, dtype=float)
    h = 1e-4
    offsets = np.concatenate([np.zeros((1, 3)), h * np.eye(3), -h * np.eye(3)])
    b = np.asarray(induced.field_T((p[None] + offsets[:, None]).reshape(-1, 3)),
                   dtype=float).reshape(7, len(p), 3)
    return b[0], ((b[1:4] - b[4:7]) / (2 * h)).transpose(1, 2, 0)


def _fast_flags(mags, n_points: int, method: str, options: dict,
                fast_model: bool | None = None) -> list[bool]:
    """Per magnet: use the fast path for this call? (see :func:`fringe.field.fast.model_wanted`)."""
    if method != "auto" or not options.get("refine", True) or n_points == 0:
        return [False] * len(mags)
    if fast_model is not None:
        return [bool(fast_model)] * len(mags)
    order = options.get("order", DEFAULT_RADIAL_ORDER)
    return [model_wanted(m.coils, n_points, order, options.get("panels")) for m in mags]


def _fast_chunk(mags, fast, p: np.ndarray, options: dict) -> tuple[np.ndarray, np.ndarray]:
    """Fast path on one chunk: B (n, 3) and the indices whose error estimate is too large.

    Magnets not flagged in ``fast`` are summed directly (error estimate 0).
    """
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
            b += magnet_field_site_T(m, p, **options).T
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
    A Site with solved steel (``site.induced``) adds the induced B and its Jacobian
    (central differences of the induced field where the model offers no better).
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
        B[sub], J[sub] = direct_gradient(mags, p[sub], options)
    induced = _induced_of(site)
    if induced is not None and n:
        bi, ji = _induced_gradient(induced, p)
        B += bi
        J += ji
    return B, J


def field_at_magpylib(site, points_m, order: int = DEFAULT_RADIAL_ORDER,
                      panels: int | None = None) -> np.ndarray:
    """Reference B (T) from ``magpylib.getB`` over magpylib Cylinder objects.

    Same physics as :func:`field_at` with ``method="direct"`` but through magpylib's
    object interface; this is the "direct magpylib sum" benchmarks compare against.
    """
    p = as_points(points_m)
    return magpylib_field_site_T(as_magnets(site), p, order, panels)


def grad_abs_B_T_per_m(B_T, J_T_per_m) -> np.ndarray:
    """The spatial gradient of the field magnitude, ∇|B| = Jᵀ·B/|B|, in T/m.

    Parameters
    ----------
    B_T : array_like, shape (N, 3)
        Flux density, T.
    J_T_per_m : array_like, shape (N, 3, 3)
        Its Jacobian ``J[n, i, j] = ∂B_i/∂x_j``, T/m (:func:`field_gradient_at`).

    Returns
    -------
    ndarray, shape (N, 3)
        ∇|B| in T/m; NaN where |B| = 0 (|B| has no gradient at a zero of B).

    Notes
    -----
    ∂|B|/∂x_j = Σ_i B_i ∂B_i/∂x_j / |B| (chain rule on |B| = (B·B)^½). The magnitude
    |∇|B|| is the "spatial field gradient" of implant labelling, and |B|·|∇|B|| the
    force product on a saturable or unsaturated soft-magnetic object
    (ASTM F2052; IEC 60601-2-33).

    Examples
    --------
    >>> grad_abs_B_T_per_m([[0.0, 0.0, 2.0]], [[[0, 0, 0], [0, 0, 0], [0, 0, -3.0]]])
    array([[ 0.,  0., -3.]])
    """
    b = np.asarray(B_T, dtype=float)
    jac = np.asarray(J_T_per_m, dtype=float)
    b_abs = np.linalg.norm(b, axis=-1)
    with np.errstate(invalid="ignore", divide="ignore"):
        return np.einsum("ni,nij->nj", b, jac) / b_abs[:, None]


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




def points_in_envelopes(site, points_m, margin_m: float = 0.0) -> np.ndarray:
    """Boolean mask (N,) of points inside (or within margin of) any magnet's cryostat
    envelope (:attr:`fringe.model.magnet.Magnet.envelope`): where nobody can be.

    The bore and the space beyond the envelope's ends are outside. Room, floor and
    equipment maxima and the attraction zone leave these points out; the field engine
    keeps using :func:`points_in_windings` where it needs the windings themselves.
    """
    p = as_points(points_m)
    mask = np.zeros(len(p), dtype=bool)
    for m in as_magnets(site):
        mask |= m.in_envelope(p, margin_m)
    return mask
