"""3-D field maps on a regular grid, streamed in blocks to ``.npz`` or VTK ``.vti``.

A map is B (T) and |B| (T) at every node of a regular grid (:mod:`fringe.field.grid`:
VTK ImageData point order, x fastest, arrays ``(nz, ny, nx)`` in C order). The grid is
evaluated in blocks of at most ``block_points`` points
(:func:`fringe.field.grid.map_blocks`) and each block is written out as soon as it is
ready, so peak memory is set by the block size, not by the map size (the arrays are
never held whole in memory).

With the optional ``fringe[cluster]`` extra (dask) the same blocks become the chunks of
a ``dask.array`` built with ``map_blocks``; blocks are computed in order, a few at a
time, by whatever scheduler is chosen (``"synchronous"``, ``"threads"``,
``"processes"`` or the address of a ``dask.distributed`` scheduler).

Output formats
--------------
``.npz``
    NumPy zip (uncompressed members, ZIP64): ``B_T`` (nz, ny, nx, 3), ``B_abs_T``
    (nz, ny, nx), ``origin_m`` (3,), ``step_m`` (), ``shape_zyx`` (3,),
    ``advisory_notice`` (str). Read with ``numpy.load``.
``.vti``
    VTK XML ImageData (Kitware, *VTK File Formats*, "XML File Formats: ImageData"):
    point data ``B_abs_T`` (scalars) and ``B_T`` (3-component vectors), inline
    base64 ``binary`` DataArrays with a UInt64 byte-count header, little endian.
    Readable by ParaView, VisIt and any VTK-based viewer; it is plain XML, so an XML
    parser reads it back (see tests/test_map.py).
"""

from __future__ import annotations

import base64
import contextlib
import os
import tempfile
import time
import zipfile
from collections.abc import Callable, Iterator
from pathlib import Path

import numpy as np

from fringe.field.evaluate import as_magnets
from fringe.field.grid import (
    DEFAULT_BLOCK_POINTS,
    Grid,
    block_bounds,
    block_field,
    checked_block_points,
    map_blocks,
    map_fast_model,
)
from fringe.io.atomic import atomic_file
from fringe.model.constants import ADVISORY_NOTICE, MAP_FORMATS
from fringe.model.errors import ArgumentError, FringeInputError, must_be

__all__ = ["scheduled_blocks", "write_map", "read_vti", "check_scheduler", "MAP_FORMATS"]



def scheduled_blocks(site, grid: Grid, *, block_points: int = DEFAULT_BLOCK_POINTS,
                     scheduler: str | None = None, dtype=np.float32,
                     parallel_blocks: int = 4) -> Iterator[tuple[int, np.ndarray]]:
    """:func:`fringe.field.grid.map_blocks`, optionally computed by dask.

    Yields ``(start, block)`` in point order; ``block`` is (M, 4): B_x, B_y, B_z, |B| (T).

    Parameters
    ----------
    site : Site, Magnet or sequence of Magnet
    grid : Grid
    block_points : int
        Points per block; peak memory is a few blocks (``parallel_blocks`` with dask).
    scheduler : str, optional
        ``None``: plain numpy in this process. Otherwise dask is used (requires the
        ``fringe[cluster]`` extra): ``"synchronous"``, ``"threads"``, ``"processes"`` or
        a ``dask.distributed`` scheduler address such as ``tcp://10.0.0.5:8786``.
    dtype : numpy dtype
        Output precision (float32 keeps 7 digits, far below the 1e-4 field tolerance).
    parallel_blocks : int
        With dask, blocks computed at once (then written in order).
    """
    if scheduler is None:
        yield from map_blocks(site, grid, block_points=block_points, dtype=dtype)
        return
    mags = as_magnets(site)
    if getattr(site, "induced", None) is not None:  # a Site with solved steel: it counts
        mags = site
    bounds = block_bounds(grid.n_points, checked_block_points(block_points))
    yield from _dask_blocks(mags, grid, bounds, scheduler, dtype, max(1, parallel_blocks))


_LOCAL_SCHEDULERS = ("synchronous", "sync", "single-threaded", "threads", "threading",
                     "processes")


#: What a scheduler may be (the error text when it is none of these).
_SCHEDULER_CHOICES = ("synchronous, threads, processes, or a dask scheduler address such as "
                      "tcp://127.0.0.1:8786 (which needs the `distributed` package, extra "
                      "`fringe[cluster]`)")

#: How long to try reaching a scheduler address before giving up.
CONNECT_TIMEOUT: str = "5s"


def _scheduler_error(expectation: str, scheduler) -> ArgumentError:
    """The one error for an unusable ``scheduler`` (the CLI names its option)."""
    return ArgumentError(must_be("scheduler", expectation, scheduler), "scheduler")


def check_scheduler(scheduler: str | None) -> None:
    """Raise :class:`ArgumentError` (argument ``scheduler``) now if ``scheduler`` cannot be
    used here."""
    if scheduler is None:
        return
    try:
        import dask  # noqa: F401
        import dask.array  # noqa: F401
    except ImportError:
        raise _scheduler_error("usable: dask is not installed (install the optional extra "
                               "`fringe[cluster]`)", scheduler) from None
    if scheduler in _LOCAL_SCHEDULERS:
        return
    try:
        import dask.distributed  # noqa: F401
    except ImportError:
        raise _scheduler_error(_SCHEDULER_CHOICES, scheduler) from None


def _dask_blocks(mags, grid, bounds, scheduler, dtype, parallel):
    try:
        import dask
        import dask.array as da
    except ImportError:
        raise _scheduler_error("usable: dask is not installed (install the optional extra "
                               "`fringe[cluster]`)", scheduler) from None
    chunks = tuple(b - a for a, b in bounds)
    idx = da.arange(grid.n_points, chunks=(chunks,), dtype=np.int64)
    arr = idx.map_blocks(block_field, magnets=mags, grid=grid, dtype=dtype,
                         fast_model=map_fast_model(grid),
                         new_axis=1, chunks=(chunks, (4,)), meta=np.empty((0, 4), dtype))
    client = None
    if scheduler in _LOCAL_SCHEDULERS:
        config = {"scheduler": scheduler}
    else:
        try:
            from dask.distributed import Client
        except ImportError:
            raise _scheduler_error(_SCHEDULER_CHOICES, scheduler) from None
        try:
            client = Client(scheduler, timeout=CONNECT_TIMEOUT, set_as_default=False)
        except (OSError, ValueError, TypeError) as e:
            raise _scheduler_error(f"the address of a running dask scheduler (cannot connect: "
                                   f"{e})", scheduler) from None
        config = {"scheduler": client.get}
    try:
        with dask.config.set(**config):
            blocks = arr.to_delayed().ravel()
            for a in range(0, len(blocks), parallel):
                got = dask.compute(*blocks[a:a + parallel])
                for (start, _), block in zip(bounds[a:a + parallel], got, strict=True):
                    yield start, np.asarray(block)
    finally:
        if client is not None:
            client.close()


class _Base64Stream:
    """Streaming base64 encoder: bytes in, ASCII out, no padding until ``close``."""

    def __init__(self, fh) -> None:
        self.fh = fh
        self.rest = b""

    def write(self, data: bytes) -> None:
        data = self.rest + data
        cut = len(data) - len(data) % 3
        self.fh.write(base64.b64encode(data[:cut]))
        self.rest = data[cut:]

    def close(self) -> None:
        self.fh.write(base64.b64encode(self.rest))
        self.rest = b""


def _vti_header(grid: Grid, dtype) -> tuple[bytes, str]:
    nx, ny, nz = grid.shape_xyz
    ext = f"0 {nx - 1} 0 {ny - 1} 0 {nz - 1}"
    o = " ".join(repr(float(v)) for v in grid.origin_m)
    s = repr(float(grid.step_m))
    vtype = "Float32" if np.dtype(dtype) == np.float32 else "Float64"
    notice = ADVISORY_NOTICE.replace("--", "- -")
    head = (
        '<?xml version="1.0"?>\n'
        f"<!-- fringe field map. {notice} -->\n"
        '<VTKFile type="ImageData" version="1.0" byte_order="LittleEndian" '
        'header_type="UInt64">\n'
        f'  <ImageData WholeExtent="{ext}" Origin="{o}" Spacing="{s} {s} {s}">\n'
        f'    <Piece Extent="{ext}">\n'
        '      <PointData Scalars="B_abs_T" Vectors="B_T">\n'
        f'        <DataArray type="{vtype}" Name="B_T" NumberOfComponents="3" '
        'format="binary">\n')
    return head.encode("ascii"), vtype


def write_map(site, grid: Grid, path, *, block_points: int = DEFAULT_BLOCK_POINTS,
              scheduler: str | None = None, dtype=np.float32,
              progress: Callable[[int, int], None] | None = None) -> dict:
    """Evaluate the grid block by block and write it to ``path`` (``.npz`` or ``.vti``).

    The output file appears only when complete (written to a temporary sibling, then
    renamed). |B| is kept in a temporary file during the pass, so memory stays bounded.

    Returns
    -------
    dict
        ``n_points``, ``shape_xyz``, ``seconds``, ``max_B_abs_T``, ``path``.
    """
    path = Path(path)
    fmt = path.suffix.lower()
    if fmt not in MAP_FORMATS:
        raise ArgumentError(must_be("path", "a file name ending in " + " or ".join(MAP_FORMATS),
                                    str(path)), "path")
    dtype = np.dtype(dtype)
    if dtype not in (np.dtype(np.float32), np.dtype(np.float64)):
        raise FringeInputError(must_be("dtype", "float32 or float64", str(dtype)))
    n = grid.n_points
    t0 = time.perf_counter()
    b_max = 0.0
    done = 0
    check_scheduler(scheduler)
    with atomic_file(path) as tmp, tempfile.TemporaryFile(dir=tmp.parent) as abs_tmp, \
            open(tmp, "wb") as fh, contextlib.ExitStack() as stack:
        blocks = scheduled_blocks(site, grid, block_points=block_points, scheduler=scheduler,
                                  dtype=dtype)
        if fmt == ".npz":
            zf = zipfile.ZipFile(fh, "w", compression=zipfile.ZIP_STORED, allowZip64=True)
            stack.enter_context(zf)
            with zf.open("B_T.npy", "w", force_zip64=True) as member:
                np.lib.format.write_array_header_2_0(member, {
                    "descr": np.lib.format.dtype_to_descr(dtype), "fortran_order": False,
                    "shape": (*grid.shape_zyx, 3)})
                for _, block in blocks:
                    member.write(np.ascontiguousarray(block[:, :3]).tobytes())
                    abs_tmp.write(np.ascontiguousarray(block[:, 3]).tobytes())
                    b_max = max(b_max, float(block[:, 3].max(initial=0.0)))
                    done += len(block)
                    if progress:
                        progress(done, n)
            with zf.open("B_abs_T.npy", "w", force_zip64=True) as member:
                np.lib.format.write_array_header_2_0(member, {
                    "descr": np.lib.format.dtype_to_descr(dtype), "fortran_order": False,
                    "shape": grid.shape_zyx})
                abs_tmp.seek(0)
                while chunk := abs_tmp.read(1 << 24):
                    member.write(chunk)
            for name, value in (("origin_m", np.array(grid.origin_m)),
                                ("step_m", np.array(grid.step_m)),
                                ("shape_zyx", np.array(grid.shape_zyx)),
                                ("advisory_notice", np.array(ADVISORY_NOTICE))):
                with zf.open(f"{name}.npy", "w") as member:
                    np.lib.format.write_array(member, value, allow_pickle=False)
            zf.close()                          # central directory, before the fsync
        else:
            head, vtype = _vti_header(grid, dtype)
            fh.write(head)
            fh.write(b"          ")
            enc = _Base64Stream(fh)
            enc.write(np.array([n * 3 * dtype.itemsize], dtype="<u8").tobytes())
            for _, block in blocks:
                enc.write(np.ascontiguousarray(block[:, :3]).astype(dtype.newbyteorder("<"),
                                                                   copy=False).tobytes())
                abs_tmp.write(np.ascontiguousarray(block[:, 3]).tobytes())
                b_max = max(b_max, float(block[:, 3].max(initial=0.0)))
                done += len(block)
                if progress:
                    progress(done, n)
            enc.close()
            fh.write(f'\n        </DataArray>\n        <DataArray type="{vtype}" '
                     'Name="B_abs_T" format="binary">\n          '.encode("ascii"))
            enc = _Base64Stream(fh)
            enc.write(np.array([n * dtype.itemsize], dtype="<u8").tobytes())
            abs_tmp.seek(0)
            while chunk := abs_tmp.read(3 << 22):
                enc.write(chunk)
            enc.close()
            fh.write(b"\n        </DataArray>\n      </PointData>\n    </Piece>\n"
                     b"  </ImageData>\n</VTKFile>\n")
        fh.flush()
        os.fsync(fh.fileno())
    return {"n_points": n, "shape_xyz": list(grid.shape_xyz),
            "seconds": time.perf_counter() - t0, "max_B_abs_T": b_max, "path": str(path)}


def read_vti(path) -> dict:
    """Read a ``.vti`` written by :func:`write_map` (inline base64, UInt64 headers).

    Returns ``{"origin_m", "spacing_m", "shape_xyz", "B_T" (nz, ny, nx, 3),
    "B_abs_T" (nz, ny, nx)}``. Meant for tests and small maps (reads all into memory).
    """
    import xml.etree.ElementTree as ET

    root = ET.parse(path).getroot()
    img = root.find("ImageData")
    ext = [int(v) for v in img.get("WholeExtent").split()]
    nx, ny, nz = ext[1] - ext[0] + 1, ext[3] - ext[2] + 1, ext[5] - ext[4] + 1
    out = {"origin_m": [float(v) for v in img.get("Origin").split()],
           "spacing_m": [float(v) for v in img.get("Spacing").split()],
           "shape_xyz": (nx, ny, nz)}
    for arr in img.iter("DataArray"):
        raw = base64.b64decode("".join(arr.text.split()))
        nbytes = int(np.frombuffer(raw[:8], "<u8")[0])
        dt = np.dtype("<f4" if arr.get("type") == "Float32" else "<f8")
        data = np.frombuffer(raw[8:8 + nbytes], dt)
        comps = int(arr.get("NumberOfComponents", "1"))
        shape = (nz, ny, nx, comps) if comps > 1 else (nz, ny, nx)
        out[arr.get("Name")] = data.reshape(shape)
    return out
