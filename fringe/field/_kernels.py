"""Compiled kernel of the exterior series (private): numba, GIL released, both cores.

:func:`series_site_field` does for the points beyond ``TABLE_RADIUS_FACTOR``·R_enc of one
magnet what :func:`fringe.field.fast.fast_field_site_T` does with numpy — site → local
frame, distance band, zonal series of the band's degree, tail bound, local → site —
in one pass per point, in the same order of floating-point operations (equal to the
numpy path to rounding; tested to 1e-12 relative). Points inside the table sphere are
only flagged: they are the only points that can lie in a winding (every winding lies
within R_enc), so the winding check needs to look at these few points alone.

The kernel is compiled by numba (``nogil=True``, ``cache=True``: compiled once per
machine, then loaded from numba's cache) and run on contiguous slices of the points in
one Python thread per core; a thread per call (no pool kept) is safe under ``fork`` and
when several caller threads evaluate at once (numba's own parallel layer is not).
Importing numba costs ~0.5–1 s, so :func:`fringe.field.evaluate.field_at` loads the
kernel only once a process has asked :data:`KERNEL_MIN_POINTS` points (:func:`wanted`).
The kernel's results equal the numpy path's bit for bit (same operations in the same
order, no fast-math), so which path served a call never changes a result.

References
----------
The series and its recurrences: :mod:`fringe.field.fast` (Jackson, *Classical
Electrodynamics*, 3rd ed., Sec. 3.3; Abramowitz & Stegun 22.7.10, 22.8.5).
"""

from __future__ import annotations

import math
import os
import threading
import warnings
from concurrent.futures import ThreadPoolExecutor

import numpy as np

__all__ = ["available", "loaded", "wanted", "prepare", "series_site_field",
           "declined_points", "workers", "thread_count", "KERNEL_MIN_POINTS",
           "CHUNK_PER_THREAD"]

#: The kernel is loaded once this many points have been asked of the fast path in one
#: process (importing numba, ~0.5–1 s, costs about as much as the numpy path on
#: 3–5·10⁶ points); once loaded it serves every call of ≥ :data:`CHUNK_PER_THREAD` points.
KERNEL_MIN_POINTS: int = 4_000_000
#: Fewest points per thread (fewer: the calling thread alone does the slice).
CHUNK_PER_THREAD: int = 16_384

_KERNEL = None
_DECLINED = None
_FAILED = False
_LOCK = threading.Lock()


def _series_kernel(p, out, err, code, c, mat_in, mat_out, dcz, dcg, beta_s, beta_f,
                   edges_sq, band_lmax, band_err, t2, abs_amps):  # pragma: no cover - compiled
    """Add one magnet's series field (site frame, T) to ``out`` and its bound to ``err``.

    ``code[i]`` becomes 1 where the point lies in the table sphere (nothing added), else 0.
    """
    n = p.shape[0]
    nb = edges_sq.shape[0]
    for i in range(n):
        d0 = p[i, 0] - c[0]
        d1 = p[i, 1] - c[1]
        d2 = p[i, 2] - c[2]
        x = d0 * mat_in[0, 0] + mat_in[0, 1] * d1
        x = x + mat_in[0, 2] * d2
        y = d0 * mat_in[1, 0] + mat_in[1, 1] * d1
        y = y + mat_in[1, 2] * d2
        z = d0 * mat_in[2, 0] + mat_in[2, 1] * d1
        z = z + mat_in[2, 2] * d2
        r2 = x * x + y * y
        r2 = r2 + z * z
        if r2 < t2:
            code[i] = 1
            continue
        code[i] = 0
        k = 0
        for e in range(1, nb):
            if r2 >= edges_sq[e]:
                k += 1
        lmax = band_lmax[k]
        w = 1.0 / r2
        t = math.sqrt(w)
        u = z * w
        s_prev = t
        s_cur = u * t
        f_prev = 0.0
        f_cur = t * w
        bz = 0.0
        g = 0.0
        for l in range(1, lmax + 1):
            s_next = u * s_cur - (w * s_prev) * beta_s[l]
            f_next = u * f_cur - (w * f_prev) * beta_f[l]
            if dcz[l] != 0.0:
                bz = bz + s_next * dcz[l]
                g = g + f_next * dcg[l]
            s_prev = s_cur
            s_cur = s_next
            f_prev = f_cur
            f_cur = f_next
        bx = x * g
        by = y * g
        # tail bound: band_err[k] * (r'_k² / r'²)^((L+3)/2), by repeated squaring
        q = edges_sq[k] / r2
        m = lmax + 3
        pw = math.sqrt(q) if m % 2 else 1.0
        h = m // 2
        base = q
        while h:
            if h & 1:
                pw = pw * base
            h >>= 1
            if h:
                base = base * base
        err[i] += (band_err[k] * pw) * abs_amps
        for j in range(3):
            v = bx * mat_out[j, 0] + mat_out[j, 1] * by
            out[i, j] += v + mat_out[j, 2] * bz


def _declined_kernel(out, err, flag, factor):  # pragma: no cover - compiled
    """``flag[i] = 1`` where ``err[i] <= factor·|out[i]|`` fails (NaN fails too)."""
    for i in range(out.shape[0]):
        b = out[i, 0] * out[i, 0] + out[i, 1] * out[i, 1]
        b = math.sqrt(b + out[i, 2] * out[i, 2])
        flag[i] = 0 if err[i] <= factor * b else 1


def _compile():
    """The compiled kernel, or None (numba missing or failing: the numpy path serves)."""
    global _KERNEL, _DECLINED, _FAILED
    with _LOCK:
        if _KERNEL is not None or _FAILED:
            return _KERNEL
        try:
            import numba

            try:
                jit = numba.njit(nogil=True, cache=True, error_model="numpy")
                kernel, declined = jit(_series_kernel), jit(_declined_kernel)
            except RuntimeError:  # no writable cache location: compile in memory
                jit = numba.njit(nogil=True, error_model="numpy")
                kernel, declined = jit(_series_kernel), jit(_declined_kernel)
            _warm_up(kernel, declined)
            _KERNEL, _DECLINED = kernel, declined
        except Exception:  # noqa: BLE001 - any failure of the optional compiler
            _FAILED = True
        return _KERNEL


def _warm_up(kernel, declined) -> None:
    """Compile (or load from numba's cache) now, on no points, so that a failing
    compiler shows here and not halfway through a call."""
    e = np.zeros(0)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        kernel(np.zeros((0, 3)), np.zeros((0, 3)), e, np.zeros(0, np.int8), np.zeros(3),
               np.eye(3), np.eye(3), np.zeros(2), np.zeros(2), np.zeros(2), np.zeros(2),
               np.ones(1), np.zeros(1, np.int64), np.zeros(1), 1.0, 1.0)
        declined(np.zeros((0, 3)), e, np.zeros(0, np.int8), 1.0)


def available() -> bool:
    """True if numba can be imported (it is not imported by this check)."""
    if _KERNEL is not None:
        return True
    if _FAILED:
        return False
    import importlib.util

    return importlib.util.find_spec("numba") is not None


_demand = [0]


def wanted(n_points: int) -> bool:
    """Whether a call of ``n_points`` should use the kernel: once it is loaded, or once
    the points asked in this process reach :data:`KERNEL_MIN_POINTS` (so that the import
    of numba pays for itself), and numba is installed."""
    if _KERNEL is not None:
        return True
    _demand[0] += int(n_points)
    return _demand[0] >= KERNEL_MIN_POINTS and available()


def loaded() -> bool:
    """True once the kernel is compiled or loaded in this process."""
    return _KERNEL is not None


def thread_count() -> int:
    """Threads used per call: the cores this process may run on."""
    try:
        return max(1, len(os.sched_getaffinity(0)))
    except AttributeError:  # not Linux
        return max(1, os.cpu_count() or 1)


def prepare(model, rot: np.ndarray, center_m, amps: float) -> tuple | None:
    """The kernel's arguments for one magnet (None if the kernel is unavailable).

    ``model``: the magnet's normalised :class:`~fringe.field.fast.AxisymmetricModel`;
    ``rot``: its local → site rotation matrix; ``amps``: the current factor of the model
    (:func:`fringe.field.fast._model_and_scale`).
    """
    from fringe.field.fast import TABLE_RADIUS_FACTOR, _scaled_recurrence

    if _compile() is None:
        return None
    lmax = int(np.max(model.band_lmax))
    beta_s, beta_f, c_z, c_g = _scaled_recurrence(lmax)
    d = np.zeros(lmax + 1)
    d[:min(lmax + 1, model.d.size)] = model.d[:lmax + 1]
    dcz = np.zeros(beta_s.size)
    dcg = np.zeros(beta_s.size)
    dcz[1:lmax + 1] = d[1:] * c_z[1:lmax + 1]
    dcg[1:lmax + 1] = d[1:] * c_g[1:lmax + 1]
    # numpy skips degrees with d_l = 0: flag them by dcz = 0 (dcg follows)
    dcz[1:lmax + 1][d[1:] == 0.0] = 0.0
    return (np.asarray(center_m, float), np.ascontiguousarray(rot.T / model.scale_m),
            np.ascontiguousarray(rot * amps), dcz, dcg, beta_s, beta_f,
            np.ascontiguousarray(model.band_edges_sq), np.ascontiguousarray(
                model.band_lmax, dtype=np.int64), np.ascontiguousarray(model.band_err),
            float(TABLE_RADIUS_FACTOR) ** 2, abs(float(amps)))


def series_site_field(p: np.ndarray, out: np.ndarray, err: np.ndarray, prepared: tuple,
                      threads: int | None = None, pool=None) -> np.ndarray:
    """Add one magnet's series field at site points ``p`` (N, 3, C-ordered) to ``out``
    (N, 3) and its error bound to ``err`` (N,); return the indices of the points in its
    table sphere (left unevaluated).

    ``prepared``: :func:`prepare` of the magnet; ``pool``: a :func:`workers` pool (else
    threads are started for this call).
    """
    code = np.empty(len(p), dtype=np.int8)
    _run(_KERNEL, (p, out, err, code), prepared, threads, pool)
    return np.flatnonzero(code)


def declined_points(out: np.ndarray, err: np.ndarray, factor: float,
                    threads: int | None = None, pool=None) -> np.ndarray:
    """Indices where ``err`` is not below ``factor``·|B| (``out`` (N, 3), ``err`` (N,))."""
    flag = np.empty(len(out), dtype=np.int8)
    _run(_DECLINED, (out, err, flag), (float(factor),), threads, pool)
    return np.flatnonzero(flag)


def workers(threads: int | None = None) -> ThreadPoolExecutor:
    """A pool of ``threads - 1`` helper threads (default: one per core) for the calls of
    one :func:`~fringe.field.evaluate.field_at`; use it as a context manager, so its
    threads end with the call (nothing is left running at a ``fork``)."""
    return ThreadPoolExecutor(max_workers=max(1, (threads or thread_count()) - 1),
                              thread_name_prefix="fringe-field")


def _run(kernel, sliced: tuple, args: tuple, threads: int | None, pool=None) -> None:
    """``kernel(*sliced, *args)`` on contiguous slices of the arrays in ``sliced`` (all of
    one length): the first slice in the calling thread, the others in ``pool`` (or in
    threads started here)."""
    n = len(sliced[0])
    nt = max(1, min(threads or thread_count(), n // CHUNK_PER_THREAD))
    edges = np.linspace(0, n, nt + 1).astype(int)

    def part(k: int) -> None:
        a, b = int(edges[k]), int(edges[k + 1])
        kernel(*(x[a:b] for x in sliced), *args)

    if nt == 1:
        part(0)
        return
    if pool is not None:
        futures = [pool.submit(part, k) for k in range(1, nt)]
        try:
            part(0)
        finally:
            for f in futures:
                f.exception()         # wait for every slice before raising
        for f in futures:
            f.result()
        return
    errors: list[BaseException] = []

    def guarded(k: int) -> None:
        try:
            part(k)
        except BaseException as e:  # noqa: BLE001 - re-raised in the caller
            errors.append(e)

    started = [threading.Thread(target=guarded, args=(k,)) for k in range(1, nt)]
    for t in started:
        t.start()
    guarded(0)
    for t in started:
        t.join()
    if errors:
        raise errors[0]
