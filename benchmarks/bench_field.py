"""Benchmark: fast field path (``field_at(method="auto")``) against the direct magpylib sum.

Prints, for the same random points, the wall time of both, the speed-up, the fast path's
max and 95th-percentile relative error |ΔB|/|B| against ``magpylib.getB`` over the magnet's
current sheets (:func:`fringe.field.field_at_magpylib`), and points per second.

Cases
-----
mix   : N points 1–30 m from the centre of the shielded demo magnet, distance uniform,
        direction isotropic (the issue's target: ≥ 100× at ≤ 1e-4).
far   : N points 5–30 m away (far field; target ≥ 5·10⁶ points/s on one core).
near  : N points 0.6–3 m away, log-uniform distance (hardest mix; informative only).

Usage::

    nice -n 5 python benchmarks/bench_field.py --n 1000000 --cases mix far
    OMP_NUM_THREADS=1 ... for the one-core figure (numpy here is single-threaded except
    for BLAS, which the fast path barely uses).

The model build (table of the coil set, once per coil set per process, then cached) is
timed separately and reported both apart and included.
"""

from __future__ import annotations

import argparse
import os
import resource
import time
from importlib import resources

import numpy as np

from fringe.field import field_at, field_at_magpylib
from fringe.scenario import load_site


def points(magnet, n, r_lo, r_hi, law, seed):
    rng = np.random.default_rng(seed)
    d = rng.normal(size=(n, 3))
    d /= np.linalg.norm(d, axis=1)[:, None]
    if law == "uniform":
        r = rng.uniform(r_lo, r_hi, n)
    else:
        r = np.exp(rng.uniform(np.log(r_lo), np.log(r_hi), n))
    return np.asarray(magnet.center_m) + d * r[:, None]


CASES = {"mix": (1.0, 30.0, "uniform"), "far": (5.0, 30.0, "uniform"),
         "near": (0.6, 3.0, "log")}


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--n", type=int, default=1_000_000)
    ap.add_argument("--cases", nargs="+", default=["mix", "far"], choices=sorted(CASES))
    ap.add_argument("--no-direct", action="store_true", help="skip the direct sum (speed only)")
    args = ap.parse_args()
    with resources.as_file(resources.files("fringe") / "data" / "demo_site.toml") as p:
        site = load_site(p)
    m = site.magnets[0]
    print(f"magnet: {m.name}; load average at start: {os.getloadavg()}")
    t0 = time.perf_counter()
    field_at(m, np.asarray(m.center_m)[None, :] + 10.0)      # builds and caches the model
    t_build = time.perf_counter() - t0
    print(f"model build (once per coil set, cached): {t_build:.2f} s")
    for case in args.cases:
        r_lo, r_hi, law = CASES[case]
        pts = points(m, args.n, r_lo, r_hi, law, seed=2026)
        t0 = time.perf_counter()
        fast = field_at(site, pts)
        t_fast = time.perf_counter() - t0
        line = (f"[{case}] N={args.n:.0e} r={r_lo}-{r_hi} m ({law}) | fast {t_fast:.3f} s "
                f"= {args.n / t_fast:.3g} points/s")
        if not args.no_direct:
            t0 = time.perf_counter()
            ref = field_at_magpylib(site, pts)
            t_ref = time.perf_counter() - t0
            rel = np.linalg.norm(fast - ref, axis=1) / np.linalg.norm(ref, axis=1)
            line += (f" | direct magpylib {t_ref:.1f} s = {args.n / t_ref:.3g} points/s"
                     f" | speed-up {t_ref / t_fast:.0f}x (incl. build {t_ref / (t_fast + t_build):.0f}x)"
                     f" | rel. error max {rel.max():.2e}, p95 {np.percentile(rel, 95):.2e}")
        print(line, flush=True)
    rss = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024
    print(f"peak RSS {rss:.0f} MB; load average at end: {os.getloadavg()}")


if __name__ == "__main__":
    main()
