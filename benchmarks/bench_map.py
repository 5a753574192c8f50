"""Benchmark: a 3-D map of the demo site written block by block; time and peak memory.

Prints the number of nodes, wall and CPU time, points per second and the peak resident
set size (``resource.getrusage``), which should not grow with the number of nodes
(the map is streamed to disk in blocks).

Usage::

    nice -n 10 python benchmarks/bench_map.py --step 0.0625       # ≈ 1.0e7 nodes
    nice -n 10 python benchmarks/bench_map.py --step 0.029        # ≈ 1.0e8 nodes (1.6 GB file)

The same run through the command line, with /usr/bin/time -v reporting peak RSS::

    /usr/bin/time -v fringe map fringe/data/demo_site.toml --box -6 0 -3.5 20 10 6 \\
        --step 0.029 --out /tmp/map.npz
"""

from __future__ import annotations

import argparse
import os
import resource
import tempfile
import time
from importlib import resources
from pathlib import Path

from fringe.field.grid import grid_from_box
from fringe.io.gridmap import write_map
from fringe.io.model_cache import install as install_model_cache
from fringe.io.scenario import load_site


def main() -> None:
    install_model_cache()  # models on disk, as the program keeps them
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--box", nargs=6, type=float, default=[-6, 0, -3.5, 20, 10, 6])
    ap.add_argument("--step", type=float, default=0.0625)
    ap.add_argument("--format", choices=["npz", "vti"], default="npz")
    ap.add_argument("--scheduler", default=None)
    ap.add_argument("--keep", metavar="FILE", help="keep the map here instead of deleting it")
    args = ap.parse_args()
    with resources.as_file(resources.files("fringe") / "data" / "demo_site.toml") as p:
        site = load_site(p)
    grid = grid_from_box(args.box, args.step)
    print(f"grid {grid.shape_xyz} = {grid.n_points:.4g} nodes; load average {os.getloadavg()}")
    with tempfile.TemporaryDirectory(dir=Path(args.keep).parent if args.keep else None) as d:
        out = Path(args.keep) if args.keep else Path(d) / f"map.{args.format}"
        t0, c0 = time.perf_counter(), time.process_time()
        info = write_map(site, grid, out, scheduler=args.scheduler)
        wall, cpu = time.perf_counter() - t0, time.process_time() - c0
        size = out.stat().st_size
    rss = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024
    print(f"{grid.n_points:.4g} nodes in {wall:.1f} s wall, {cpu:.1f} s CPU "
          f"({grid.n_points / wall:.3g} points/s wall); file {size / 1e9:.2f} GB; "
          f"max |B| {info['max_B_abs_T']:.3g} T; peak RSS {rss:.0f} MB; "
          f"load average {os.getloadavg()}")


if __name__ == "__main__":
    main()
