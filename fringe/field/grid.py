"""Regular 3-D grids and the field on them, block by block.

A map is B (T) and |B| (T) at every node of a regular grid (one step in x, y and z).
Points are numbered in VTK ImageData order (x fastest, then y, then z), so the arrays
are ``(nz, ny, nx)`` in C order and a contiguous run of point numbers is a contiguous
run of output. :func:`map_blocks` evaluates the grid in blocks of at most
``block_points`` points with :func:`fringe.field.evaluate.field_at`, so peak memory is
set by the block size, not by the map size. Writing maps (and scheduling the blocks on
dask) is :mod:`fringe.io.gridmap`.
"""

from __future__ import annotations

import math
from collections.abc import Iterator
from dataclasses import dataclass

import numpy as np

from fringe.field.evaluate import as_magnets, field_at
from fringe.field.fast import BUILD_AFTER_POINTS
from fringe.model.constants import DEFAULT_BLOCK_POINTS
from fringe.model.errors import FringeInputError, must_be

__all__ = ["Grid", "grid_from_box", "grid_points", "map_blocks", "map_fast_model", "block_field",
           "block_bounds", "checked_block_points", "DEFAULT_BLOCK_POINTS"]



@dataclass(frozen=True)
class Grid:
    """Regular grid: node (i, j, k) is at ``origin_m + step_m * (i, j, k)``.

    Attributes
    ----------
    origin_m : tuple of 3 float
        First node in the site frame, m.
    step_m : float
        Node spacing in m (same in x, y and z).
    shape_xyz : tuple of 3 int
        Nodes along x, y, z.
    """

    origin_m: tuple[float, float, float]
    step_m: float
    shape_xyz: tuple[int, int, int]

    @property
    def n_points(self) -> int:
        """Total number of nodes."""
        nx, ny, nz = self.shape_xyz
        return nx * ny * nz

    @property
    def shape_zyx(self) -> tuple[int, int, int]:
        """Array shape of a scalar map (C order, x fastest)."""
        nx, ny, nz = self.shape_xyz
        return (nz, ny, nx)


def grid_from_box(box_m, step_m: float, *, box_key: str = "box_m",
                  step_key: str = "step_m") -> Grid:
    """Grid covering the box ``(x0, y0, z0, x1, y1, z1)`` with nodes ``step_m`` apart.

    Nodes start at the low corner; the last node along each axis is the last one not
    beyond the high corner (within 1e-9 of a step). A flat box (x1 = x0) gives one node.
    Errors (:class:`~fringe.model.errors.FringeInputError`) name the box ``box_key`` and
    the step ``step_key`` (the command line passes its option names).
    """
    b = np.asarray(box_m, dtype=float).ravel()
    if b.size != 6 or not np.all(np.isfinite(b)):
        raise FringeInputError(must_be(box_key, "six finite numbers X0 Y0 Z0 X1 Y1 Z1 in m",
                                       list(np.asarray(box_m).ravel())))
    lo, hi = b[:3], b[3:]
    if np.any(hi < lo):
        raise FringeInputError(must_be(box_key, "a box with X1 ≥ X0, Y1 ≥ Y0 and Z1 ≥ Z0",
                                       b.tolist()))
    if not (isinstance(step_m, (int, float, np.floating)) and math.isfinite(step_m)
            and step_m > 0):
        raise FringeInputError(must_be(step_key, "a positive number of metres", step_m))
    n = tuple(int(math.floor((h - l) / step_m + 1e-9)) + 1 for l, h in zip(lo, hi, strict=True))
    return Grid(tuple(float(x) for x in lo), float(step_m), n)


def grid_points(grid: Grid, start: int, stop: int) -> np.ndarray:
    """Site coordinates (m) of points ``start..stop-1`` in VTK order, shape (M, 3)."""
    nx, ny, _ = grid.shape_xyz
    idx = np.arange(start, stop, dtype=np.int64)
    i = idx % nx
    j = (idx // nx) % ny
    k = idx // (nx * ny)
    o = grid.origin_m
    s = grid.step_m
    return np.column_stack([o[0] + s * i, o[1] + s * j, o[2] + s * k])


def block_field(idx: np.ndarray, magnets=(), grid: Grid | None = None,
                dtype=np.float32, fast_model: bool | None = None) -> np.ndarray:
    """Field (M, 4): B_x, B_y, B_z, |B| in T at grid points numbered ``idx`` (contiguous).

    ``fast_model`` is passed to :func:`fringe.field.evaluate.field_at` (see
    :func:`map_fast_model`).
    """
    if idx.size == 0:
        return np.zeros((0, 4), dtype=dtype)
    pts = grid_points(grid, int(idx[0]), int(idx[-1]) + 1)
    b = field_at(magnets, pts, fast_model=fast_model)
    out = np.empty((len(b), 4), dtype=dtype)
    out[:, :3] = b
    out[:, 3] = np.sqrt(np.einsum("ij,ij->i", b, b))
    return out


def block_bounds(n: int, block_points: int) -> list[tuple[int, int]]:
    """Point ranges ``(start, stop)`` (stop excluded) of blocks of at most ``block_points``."""
    return [(a, min(n, a + block_points)) for a in range(0, n, block_points)]


def map_blocks(site, grid: Grid, *, block_points: int = DEFAULT_BLOCK_POINTS,
               dtype=np.float32) -> Iterator[tuple[int, np.ndarray]]:
    """Yield ``(start, block)`` in point order; ``block`` is (M, 4): B_x, B_y, B_z, |B| (T).

    Parameters
    ----------
    site : Site, Magnet or sequence of Magnet
    grid : Grid
    block_points : int
        Points per block; peak memory is about one block.
    dtype : numpy dtype
        Output precision (float32 keeps 7 digits, far below the 1e-4 field tolerance).
    """
    mags = as_magnets(site)
    if getattr(site, "induced", None) is not None:  # a Site with solved steel: it counts
        mags = site
    bounds = block_bounds(grid.n_points, checked_block_points(block_points))
    fast = map_fast_model(grid)
    for a, b in bounds:
        yield a, block_field(np.arange(a, b), magnets=mags, grid=grid, dtype=dtype,
                             fast_model=fast)


def map_fast_model(grid: Grid) -> bool:
    """Whether a map of ``grid`` uses the fast path: decided once for the whole map (by
    its size, as :func:`fringe.field.fast.model_wanted` would), so that every block — in
    this process or on any worker — is computed the same way."""
    return grid.n_points >= BUILD_AFTER_POINTS


def checked_block_points(block_points) -> int:
    """``block_points`` as an int, or :class:`~fringe.model.errors.FringeInputError`."""
    if not isinstance(block_points, (int, np.integer)) or block_points < 1:
        raise FringeInputError(must_be("block_points", "a positive integer", block_points))
    return int(block_points)
