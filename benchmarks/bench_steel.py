"""Benchmark: a 2 m × 2 m × 5 mm steel plate near the demo magnet.

Solves the plate (``fringe.physics.steel.solve_steel``, mesh refined to 1 %), then
evaluates its induced field at 10⁶ random points in a box 1 m around the plate with the
fast path (``InducedCells.field_T``: multipole sum of Gauss-point dipoles + exact near
cells) and with the direct magpylib sum over the solved cells
(``fringe.field.induced.cells_field_direct_T``). The direct sum over all 10⁶ points would
take hours, so it runs on a random subset (``--direct-points``) and its time is scaled
to 10⁶ points (it is linear in the points); the error is measured on that subset.

Prints the solve time, the cells, both evaluation times, their ratio (target ≥ 50×) and
the largest relative error of the induced part, |ΔB|/|B_induced| (target ≤ 1e-3), and
the machine's load average (other jobs slow every figure).

Usage::

    python benchmarks/bench_steel.py [--points 1000000] [--direct-points 2000]
"""

from __future__ import annotations

import argparse
import os
import time
from importlib import resources

import numpy as np


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--points", type=int, default=1_000_000)
    ap.add_argument("--direct-points", type=int, default=2000)
    ap.add_argument("--seed", type=int, default=1)
    args = ap.parse_args()

    from fringe.field.induced import cells_field_direct_T
    from fringe.io.scenario import load_site
    from fringe.model.steel import MATERIALS, SteelPart
    from fringe.physics.steel import solve_steel

    with resources.as_file(resources.files("fringe") / "data" / "demo_site.toml") as p:
        site = load_site(p)
    mag = site.magnets[0]
    centre = np.array(mag.center_m) + np.array([0.0, 0.0, 2.5])
    plate = SteelPart("plate", tuple(centre), (2.0, 2.0, 0.005),
                      MATERIALS["low-carbon-steel"])
    print(f"load average before: {os.getloadavg()[0]:.1f} on {os.cpu_count()} cores "
          "(other jobs share the machine; every time below is slowed by them)")
    t0 = time.perf_counter()
    sol = solve_steel(site, [plate])
    t_solve = time.perf_counter() - t0
    print(f"solve: {t_solve:.1f} s, {sol.cells.count} cells, converged={sol.converged}, "
          f"saturation solves on the final mesh {sol.saturation_steps}")
    for cells, d_field, d_moment in sol.history:
        print(f"  mesh {cells:6d} cells: field change {d_field:.4f}, moment change "
              f"{d_moment:.4f}")
    r = sol.parts[0]
    print(f"  mass {r.mass_kg:.1f} kg, max |B| in steel {r.max_field_in_steel_T:.4f} T, "
          f"saturated={r.saturated}, force {np.round(r.force_N, 2)} N")

    rng = np.random.default_rng(args.seed)
    lo = centre - [2.0, 2.0, 1.0]
    hi = centre + [2.0, 2.0, 1.0]
    pts = rng.uniform(lo, hi, (args.points, 3))
    t0 = time.perf_counter()
    fast = sol.field_T(pts)
    t_fast = time.perf_counter() - t0
    sub = rng.choice(args.points, size=min(args.direct_points, args.points), replace=False)
    t0 = time.perf_counter()
    direct = cells_field_direct_T(sol.cells, pts[sub])
    t_direct = (time.perf_counter() - t0) * args.points / len(sub)
    err = np.linalg.norm(fast[sub] - direct, axis=1) / np.linalg.norm(direct, axis=1)
    print(f"induced field at {args.points:.0e} points: fast {t_fast:.1f} s; direct magpylib "
          f"sum {t_direct:.0f} s (measured on {len(sub)} points, scaled); "
          f"ratio {t_direct / t_fast:.0f}x (target >= 50x)")
    print(f"  max relative error of the induced part {err.max():.2e} "
          f"(99.9th percentile {np.percentile(err, 99.9):.2e}; target <= 1e-3)")
    print(f"load average after: {os.getloadavg()[0]:.1f}")


if __name__ == "__main__":
    main()
