"""``fringe map``: B and |B| on a regular 3-D grid, written to ``.npz`` or VTK ``.vti``."""

from __future__ import annotations

from fringe.cli.progress import ProgressBar
from fringe.model.constants import ADVISORY_NOTICE, DEFAULT_BLOCK_POINTS, MAP_FORMATS
from fringe.model.errors import FringeInputError, ScenarioError


def register(sub) -> None:
    p = sub.add_parser(
        "map", help="3-D field map on a regular grid (.npz or .vti)",
        description=("B and |B| in T at every node of a regular grid over a box, written "
                     "block by block (bounded memory) to .npz (numpy) or .vti (VTK XML "
                     "image data, for ParaView and other viewers). " + ADVISORY_NOTICE))
    p.add_argument("scenario", help="scenario TOML file")
    p.add_argument("--box", nargs=6, type=float, required=True,
                   metavar=("X0", "Y0", "Z0", "X1", "Y1", "Z1"),
                   help="low and high corners of the box in the site frame, m")
    p.add_argument("--step", type=float, required=True, metavar="S",
                   help="node spacing in m (same along x, y, z)")
    p.add_argument("--out", required=True, metavar="FILE",
                   help="output file: " + " or ".join(MAP_FORMATS) + " (chosen by suffix)")
    p.add_argument("--scheduler", metavar="ADDRESS", default=None,
                   help=("run the blocks through dask (extra fringe[cluster]): "
                         "'synchronous', 'threads', 'processes' or a dask.distributed "
                         "scheduler address such as tcp://10.0.0.5:8786"))
    p.add_argument("--block-points", type=int, default=DEFAULT_BLOCK_POINTS, metavar="N",
                   help=f"points per block (default {DEFAULT_BLOCK_POINTS}); sets peak memory")
    p.add_argument("--float64", action="store_true",
                   help="write float64 instead of float32 values")
    p.add_argument("--max-points", type=float, default=2e9, metavar="N",
                   help="refuse grids with more nodes than this (default 2e9)")
    p.add_argument("--quiet", action="store_true", help="no progress bar on stderr")
    p.set_defaults(func=run, flags={"scheduler": "--scheduler", "path": "--out"})


def run(args) -> int:
    import numpy as np

    from fringe.analysis.steel import with_solved_steel
    from fringe.field.grid import grid_from_box
    from fringe.io.atomic import check_output_file
    from fringe.io.gridmap import write_map
    from fringe.io.scenario import load_site

    check_output_file(args.out, suffixes=MAP_FORMATS, name="--out")  # before any computation
    site = with_solved_steel(load_site(args.scenario))[0]  # its steel counts, if any
    try:
        grid = grid_from_box(args.box, args.step, box_key="--box", step_key="--step")
    except FringeInputError as e:
        raise ScenarioError(str(e)) from None
    if grid.n_points > args.max_points:
        raise ScenarioError(
            f"`--box`/`--step` must give at most {args.max_points:.3g} nodes (raise it with "
            f"--max-points); got {grid.n_points:.3g} ({' x '.join(map(str, grid.shape_xyz))})")
    if args.block_points < 1:
        raise ScenarioError(f"`--block-points` must be a positive integer; got {args.block_points}")
    info = write_map(site, grid, args.out, block_points=args.block_points,
                     scheduler=args.scheduler,
                     dtype=np.float64 if args.float64 else np.float32,
                     progress=None if args.quiet else ProgressBar())
    nx, ny, nz = grid.shape_xyz
    print(f"site: {site.name}")
    print(f"map: {nx} x {ny} x {nz} = {grid.n_points} nodes, step {grid.step_m} m, "
          f"origin {list(grid.origin_m)} m")
    print(f"max |B| on the grid: {info['max_B_abs_T'] * 1e3:.6g} mT")
    print(f"wrote {info['path']} in {info['seconds']:.2f} s "
          f"({grid.n_points / max(info['seconds'], 1e-9):.3g} points/s)")
    print(ADVISORY_NOTICE)
    return 0
