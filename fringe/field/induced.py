"""The field of solved steel: uniformly polarised cuboid cells, summed fast.

A steel model solved by :mod:`fringe.physics.steel` is a set of cuboid cells, each with
one uniform polarisation J (T). Its field at a point is the sum of the closed-form field
of every cell (magnetic surface charges; magpylib's cuboid kernel,
``magpylib.core.magnet_cuboid_Bfield``, after Yang 1990 and Engel-Herbert 2005). With
thousands of cells and a million points that direct sum costs ~10¹⁰ kernel calls, so
:meth:`InducedCells.field_T` evaluates instead

* **far cells as point dipoles** through the Laplace fast multipole method
  (``fmm3dpy.lfmm3d``, Greengard & Rokhlin 1987; the library's kernel is
  u = Σ v·∇(1/4π|x − x_j|) and B = −μ₀ ∇u for dipole moments v in A·m², checked against
  magpylib's dipole in tests/field/test_induced.py). Each cell is split into
  Gauss–Legendre quadrature points (two per axis along every edge longer than a third of
  the cell's longest edge, one otherwise): the field of a uniformly polarised cell is the
  volume integral of a dipole density, and the product Gauss rule integrates it with an
  error falling as (a/r)⁴ along the split edges (a: edge, r: distance), (c/r)² along a
  thin unsplit edge c;
* **near cells exactly**: for every point closer than :data:`NEAR_FACTOR` cell diagonals
  to a cell's centre the cell's quadrature dipoles are subtracted and its exact cuboid
  field added (pairs from a k-d tree, scipy's ``cKDTree.sparse_distance_matrix``).

Below :data:`DIRECT_PAIRS` point–cell pairs the exact sum is cheaper and is used.
:func:`cells_field_direct_T` is the exact sum, the reference the benchmark compares with.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from fringe.model.constants import MU0_T_M_PER_A

__all__ = ["InducedCells", "cells_field_direct_T", "cells_field_fast_T", "NEAR_FACTOR",
           "DIRECT_PAIRS", "FMM_EPS"]

#: A point within NEAR_FACTOR × (cell diagonal) of a cell's centre gets that cell's exact
#: field instead of its quadrature dipoles.
NEAR_FACTOR: float = 2.0
#: Fewer point–cell pairs than this are summed exactly (no multipole overhead).
DIRECT_PAIRS: int = 4_000_000
#: Requested relative precision of the fast multipole sums.
FMM_EPS: float = 1e-6
#: Point–cell pairs per call of the exact kernel (bounds memory: ~1 kB per pair).
_PAIRS_PER_CALL: int = 200_000


def _rotation_z(yaw_deg: float) -> np.ndarray:
    """Rotation matrix about z by ``yaw_deg`` (cell frame → site frame)."""
    a = np.radians(yaw_deg)
    c, s = np.cos(a), np.sin(a)
    return np.array([[c, -s, 0.0], [s, c, 0.0], [0.0, 0.0, 1.0]])


@dataclass(frozen=True, eq=False)
class InducedCells:
    """Solved steel cells: uniformly polarised cuboids, and their field at site points.

    Attributes
    ----------
    centers_m : ndarray, shape (n, 3)
        Cell centres in the site frame, m.
    sizes_m : ndarray, shape (n, 3)
        Cell edge lengths along the cell's own axes, m.
    yaw_deg : ndarray, shape (n,)
        Rotation of each cell about the site's vertical, degrees.
    polarization_T : ndarray, shape (n, 3)
        Polarisation J = μ₀M of each cell in the site frame, T.
    """

    centers_m: np.ndarray
    sizes_m: np.ndarray
    yaw_deg: np.ndarray
    polarization_T: np.ndarray
    _groups: list = field(default_factory=list, repr=False, compare=False)

    def __post_init__(self) -> None:
        for key in ("centers_m", "sizes_m", "polarization_T"):
            a = np.ascontiguousarray(getattr(self, key), dtype=float).reshape(-1, 3)
            a.setflags(write=False)
            object.__setattr__(self, key, a)
        yaw = np.ascontiguousarray(self.yaw_deg, dtype=float).reshape(-1)
        yaw.setflags(write=False)
        object.__setattr__(self, "yaw_deg", yaw)
        n = len(self.centers_m)
        if not (len(self.sizes_m) == len(self.polarization_T) == len(yaw) == n):
            raise ValueError("cell arrays must have one row per cell")

    @property
    def count(self) -> int:
        """Number of cells."""
        return len(self.centers_m)

    @property
    def moments_Am2(self) -> np.ndarray:
        """Magnetic moment of each cell, m = J V / μ₀ in A·m², shape (n, 3)."""
        vol = np.prod(self.sizes_m, axis=1)
        return self.polarization_T * (vol / MU0_T_M_PER_A)[:, None]

    def field_T(self, points_m) -> np.ndarray:
        """Induced B in T at site points (N, 3): fast sum (module docstring)."""
        return cells_field_fast_T(self, points_m)

    def field_gradient_T(self, points_m, step_m: float = 1e-4) -> tuple[np.ndarray, np.ndarray]:
        """Induced B (T) and its Jacobian ∂B_i/∂x_j (T/m) by central differences of
        :meth:`field_T` with step ``step_m``, shapes (N, 3) and (N, 3, 3)."""
        p = np.asarray(points_m, dtype=float).reshape(-1, 3)
        n = len(p)
        offsets = np.concatenate([np.zeros((1, 3)), step_m * np.eye(3), -step_m * np.eye(3)])
        b = self.field_T((p[None, :, :] + offsets[:, None, :]).reshape(-1, 3)).reshape(7, n, 3)
        jac = ((b[1:4] - b[4:7]) / (2.0 * step_m)).transpose(1, 2, 0)
        return b[0], jac

    def groups(self) -> list[tuple[np.ndarray, np.ndarray, float]]:
        """Cells sharing one size and yaw: (indices, size (3,), yaw) per group."""
        if not self._groups and self.count:
            key = np.column_stack([self.sizes_m, self.yaw_deg])
            uniq, inverse = np.unique(key, axis=0, return_inverse=True)
            for g, row in enumerate(uniq):
                self._groups.append((np.flatnonzero(inverse.ravel() == g), row[:3].copy(),
                                     float(row[3])))
        return self._groups


def _exact_pairs(cells: InducedCells, idx_cell: np.ndarray, pts: np.ndarray,
                 size: np.ndarray, yaw: float) -> np.ndarray:
    """Exact B (T) of cells ``idx_cell`` (one size and yaw) at ``pts``, pair by pair (k, 3)."""
    from magpylib.core import magnet_cuboid_Bfield

    rot = _rotation_z(yaw)
    out = np.empty((len(pts), 3))
    for a in range(0, len(pts), _PAIRS_PER_CALL):
        sl = slice(a, a + _PAIRS_PER_CALL)
        rel = (pts[sl] - cells.centers_m[idx_cell[sl]]) @ rot  # site → cell frame
        pol = cells.polarization_T[idx_cell[sl]] @ rot
        dims = np.broadcast_to(size, rel.shape)
        out[sl] = magnet_cuboid_Bfield(rel, np.ascontiguousarray(dims), pol) @ rot.T
    return out


def cells_field_direct_T(cells: InducedCells, points_m) -> np.ndarray:
    """Exact B (T) of every cell at site points (N, 3): the direct sum of magpylib's
    closed-form cuboid field over all cells (the reference for the fast sum)."""
    p = np.asarray(points_m, dtype=float).reshape(-1, 3)
    out = np.zeros_like(p)
    if cells.count == 0 or len(p) == 0:
        return out
    for idx, size, yaw in cells.groups():
        # pairs ordered cell-major inside chunks of points
        per = max(1, _PAIRS_PER_CALL // max(1, len(idx)))
        for a in range(0, len(p), per):
            sub = p[a:a + per]
            pts = np.repeat(sub, len(idx), axis=0)
            ic = np.tile(idx, len(sub))
            out[a:a + per] += _exact_pairs(cells, ic, pts, size, yaw).reshape(
                len(sub), len(idx), 3).sum(axis=1)
    return out


def _quadrature(size: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Gauss–Legendre points (cell frame, m) and weights (sum 1) of a cell of ``size``."""
    axes_pts, axes_w = [], []
    for edge in size:
        if edge > max(size) / 3.0:
            axes_pts.append(np.array([-0.5, 0.5]) / np.sqrt(3.0) * edge)
            axes_w.append(np.array([0.5, 0.5]))
        else:
            axes_pts.append(np.zeros(1))
            axes_w.append(np.ones(1))
    gx, gy, gz = np.meshgrid(*axes_pts, indexing="ij")
    wx, wy, wz = np.meshgrid(*axes_w, indexing="ij")
    return (np.column_stack([gx.ravel(), gy.ravel(), gz.ravel()]),
            (wx * wy * wz).ravel())


def _dipoles(cells: InducedCells) -> tuple[np.ndarray, np.ndarray, list]:
    """Quadrature dipoles of every cell: positions (K, 3), moments (K, 3) and per group
    (cell indices, local points (q, 3) site-rotated, weights (q,))."""
    m = cells.moments_Am2
    pos, mom, info = [], [], []
    for idx, size, yaw in cells.groups():
        q, w = _quadrature(size)
        q = q @ _rotation_z(yaw).T
        pos.append((cells.centers_m[idx][:, None, :] + q[None, :, :]).reshape(-1, 3))
        mom.append((m[idx][:, None, :] * w[None, :, None]).reshape(-1, 3))
        info.append((idx, q, w))
    return np.concatenate(pos), np.concatenate(mom), info


def _dipole_B(rel: np.ndarray, moment: np.ndarray) -> np.ndarray:
    """B (T) of point dipoles ``moment`` (A·m²) at displacements ``rel`` (m), pairwise."""
    r2 = np.einsum("ij,ij->i", rel, rel)
    r = np.sqrt(r2)
    with np.errstate(divide="ignore", invalid="ignore"):
        mr = np.einsum("ij,ij->i", moment, rel)
        b = (3.0 * rel * (mr / r2)[:, None] - moment) / (r2 * r)[:, None]
    b[r == 0.0] = 0.0
    return b * (MU0_T_M_PER_A / (4.0 * np.pi))


def cells_field_fast_T(cells: InducedCells, points_m, *, eps: float = FMM_EPS,
                       near_factor: float = NEAR_FACTOR) -> np.ndarray:
    """B (T) of every cell at site points (N, 3): multipole sum of the far cells'
    quadrature dipoles plus the exact field of near cells (module docstring)."""
    p = np.ascontiguousarray(np.asarray(points_m, dtype=float).reshape(-1, 3))
    if cells.count == 0 or len(p) == 0:
        return np.zeros_like(p)
    if len(p) * cells.count <= DIRECT_PAIRS:
        return cells_field_direct_T(cells, p)
    import fmm3dpy
    from scipy.spatial import cKDTree

    pos, mom, info = _dipoles(cells)
    res = fmm3dpy.lfmm3d(eps=eps, sources=np.ascontiguousarray(pos.T),
                         dipvec=np.ascontiguousarray(mom.T), targets=np.ascontiguousarray(p.T),
                         pgt=2)
    out = -MU0_T_M_PER_A * np.asarray(res.gradtarg).T
    m = cells.moments_Am2
    tree_p = None
    for (idx, size, yaw), (_, q, w) in zip(cells.groups(), info, strict=True):
        radius = near_factor * float(np.linalg.norm(size))
        lo = cells.centers_m[idx].min(axis=0) - radius
        hi = cells.centers_m[idx].max(axis=0) + radius
        inside = np.flatnonzero(np.all((p >= lo) & (p <= hi), axis=1))
        if inside.size == 0:
            continue
        tree_p = cKDTree(p[inside])
        pairs = tree_p.sparse_distance_matrix(cKDTree(cells.centers_m[idx]), radius,
                                              output_type="ndarray")
        if pairs.size == 0:
            continue
        ip = inside[pairs["i"]]
        ic = idx[pairs["j"]]
        corr = _exact_pairs(cells, ic, p[ip], size, yaw)
        for qk, wk in zip(q, w, strict=True):
            corr -= _dipole_B(p[ip] - (cells.centers_m[ic] + qk), m[ic] * wk)
        np.add.at(out, ip, corr)
    return out
