"""Benchmark: ``fringe probe --points`` end to end against the direct magpylib sum.

One run, the same points throughout: N points (default 10⁶) 1–30 m from the centre of
the demo magnet (isotropic directions, distance uniform, seed 2026), written to a .npy
file. Printed:

* the compiled series kernel (:mod:`fringe.field._kernels`) alone on all those points at
  once: points/s with one thread (per core) and with one thread per core (in all), best
  of ``--repeat``, with the process CPU time beside the wall time;
* ``field_at`` (fast path, error check, direct sum for the declined points) with the
  kernel and with the numpy path;
* ``fringe probe SCENARIO --points FILE.npy --out OUT.npy`` called in this process
  (reading and checking the points, the scenario, the field with its winding check,
  writing the result): best of ``--repeat`` once the kernel is loaded, and its first
  call in a fresh interpreter (``python -m fringe.cli …``, interpreter start and every
  import included, the kernel not yet loaded);
* the time to load the kernel in a fresh interpreter (numba's import and its cache);
* the direct magpylib sum (:func:`fringe.field.evaluate.field_at_magpylib`) of the same
  points, once, and the ratios (target of issue 20: probe end to end ≥ 100× the sum).

Usage::

    python benchmarks/bench_probe.py [--n 1000000] [--repeat 5] [--no-direct]
"""

from __future__ import annotations

import argparse
import contextlib
import io
import os
import subprocess
import sys
import tempfile
import time
from importlib import resources
from pathlib import Path

import numpy as np

from fringe.cli.main import main as fringe_main
from fringe.field import _kernels
from fringe.field.evaluate import field_at, field_at_magpylib
from fringe.field.fast import _model_and_scale, prepare_models
from fringe.field.sources import DEFAULT_RADIAL_ORDER
from fringe.io.model_cache import install as install_model_cache
from fringe.io.scenario import load_site

ROOT = Path(__file__).resolve().parent.parent


def best(fn, repeat: int) -> tuple[float, float]:
    """(best wall s, CPU s of that run) of ``fn()`` over ``repeat`` runs."""
    runs = []
    for _ in range(repeat):
        t0, c0 = time.perf_counter(), time.process_time()
        fn()
        runs.append((time.perf_counter() - t0, time.process_time() - c0))
    return min(runs)


def fresh_s(code: list[str]) -> float:
    """Wall time of a fresh interpreter running ``code`` (argv after the interpreter)."""
    env = dict(os.environ)
    env["PYTHONPATH"] = str(ROOT) + os.pathsep + env.get("PYTHONPATH", "")
    t0 = time.perf_counter()
    subprocess.run([sys.executable, *code], env=env, check=True, stdout=subprocess.DEVNULL,
                   stderr=subprocess.DEVNULL)
    return time.perf_counter() - t0


def main() -> None:  # noqa: PLR0915 - one linear report
    install_model_cache()
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--n", type=int, default=1_000_000)
    ap.add_argument("--repeat", type=int, default=5)
    ap.add_argument("--no-direct", action="store_true", help="skip the direct sum")
    a = ap.parse_args()
    print(f"{a.n:.0e} points 1-30 m from the demo magnet; {_kernels.thread_count()} cores; "
          f"load average at start {os.getloadavg()[0]:.1f}")
    with resources.as_file(resources.files("fringe") / "data" / "demo_site.toml") as p:
        scenario = str(p)
        site = load_site(p)
    m = site.magnets[0]
    prepare_models(site.magnets)
    rng = np.random.default_rng(2026)
    d = rng.normal(size=(a.n, 3))
    d /= np.linalg.norm(d, axis=1)[:, None]
    pts = np.asarray(m.center_m) + d * rng.uniform(1.0, 30.0, a.n)[:, None]
    tmp = Path(tempfile.mkdtemp(prefix="fringe-bench-probe-"))
    pfile, ofile = tmp / "points.npy", tmp / "B.npy"
    np.save(pfile, pts)
    argv = ["probe", scenario, "--points", str(pfile), "--out", str(ofile)]

    t_fresh_kernel = fresh_s(["-c", "from fringe.field import _kernels; _kernels._compile()"])
    t_fresh_probe = fresh_s(["-m", "fringe.cli", *argv])
    print(f"fresh interpreter: loading the kernel (numba import + cache) {t_fresh_kernel:.2f} s; "
          f"`fringe probe --points` end to end {t_fresh_probe:.2f} s (interpreter, imports, "
          f"numpy path: the kernel loads only after {_kernels.KERNEL_MIN_POINTS:.0e} points)")

    t0 = time.perf_counter()
    assert _kernels._compile() is not None, "numba kernel unavailable"
    print(f"kernel loaded in this process in {time.perf_counter() - t0:.2f} s")
    model, amps = _model_and_scale(m.coils, DEFAULT_RADIAL_ORDER, None)
    prep = _kernels.prepare(model, m.rotation.as_matrix(), m.center_m, amps)
    out, err = np.zeros_like(pts), np.zeros(a.n)
    rates = {}
    for threads in (1, _kernels.thread_count()):
        def kern(threads=threads):
            out[:] = 0.0
            err[:] = 0.0
            _kernels.series_site_field(pts, out, err, prep, threads=threads)
        w, c = best(kern, a.repeat)
        rates[threads] = a.n / w
        rates_cpu = a.n / c
        print(f"series kernel, {threads} thread(s): best {w:.4f} s wall, {c:.4f} s CPU -> "
              f"{a.n / w:.3g} points/s wall ({a.n / w / threads:.3g} per core), "
              f"{a.n / c:.3g} points per CPU second")

    saved = _kernels._KERNEL
    _kernels._KERNEL, _kernels._FAILED = None, True
    w_np, _ = best(lambda: field_at(site, pts), a.repeat)
    _kernels._KERNEL, _kernels._FAILED = saved, False
    w_k, _ = best(lambda: field_at(site, pts), a.repeat)
    print(f"field_at (fast path, checks, declined points summed directly): kernel {w_k:.3f} s, "
          f"numpy path {w_np:.3f} s ({a.n / w_k:.3g} and {a.n / w_np:.3g} points/s)")

    def probe():
        with contextlib.redirect_stderr(io.StringIO()):
            assert fringe_main(argv) == 0
    w_probe, c_probe = best(probe, a.repeat)
    print(f"`fringe probe --points` in this process (read, check, field, winding check, "
          f"write): best {w_probe:.3f} s wall, {c_probe:.3f} s CPU")

    if not a.no_direct:
        t0, c0 = time.perf_counter(), time.process_time()
        ref = field_at_magpylib(site, pts)
        t_ref, c_ref = time.perf_counter() - t0, time.process_time() - c0
        got = np.load(ofile)
        far = np.linalg.norm(pts - np.asarray(m.center_m), axis=1) > 2.5
        rel = np.linalg.norm(got - ref, axis=1) / np.linalg.norm(ref, axis=1)
        print(f"direct magpylib sum of the same points: {t_ref:.1f} s wall, {c_ref:.1f} s CPU")
        print(f"CPU-time ratios (steadier on a loaded machine): probe end to end "
              f"{c_ref / c_probe:.0f}x, kernel alone {c_ref * rates_cpu / a.n:.0f}x")
        print(f"ratios to the direct sum: probe end to end {t_ref / w_probe:.0f}x "
              f"(fresh interpreter {t_ref / t_fresh_probe:.0f}x); field_at {t_ref / w_k:.0f}x "
              f"(numpy path {t_ref / w_np:.0f}x); kernel alone {t_ref * rates[1] / a.n:.0f}x "
              f"on one thread, {t_ref * max(rates.values()) / a.n:.0f}x on all")
        print(f"max relative difference to the direct sum beyond 2.5 m: {rel[far].max():.1e}")
    print(f"load average at end {os.getloadavg()[0]:.1f}")
    for f in (pfile, ofile):
        f.unlink(missing_ok=True)
    tmp.rmdir()


if __name__ == "__main__":
    main()
