"""The response of steel parts to the magnets' field: method of moments with saturation.

:func:`solve_steel` cuts every :class:`~fringe.model.steel.SteelPart` into uniformly
polarised cuboid cells (``magpylib_material_response.meshing.mesh_Cuboid``) and solves
the self-consistent polarisations with ``magpylib_material_response.demag.apply_demag``
(version 0.6: point matching, Chadebec et al. 2006; dense LU or FFT-accelerated GMRES):

    J_i = χ_i (B_ext(r_i) + Σ_j T_ij J_j)

where B_ext is the magnets' field plus a uniform background, both in T (μ₀H). The
magnets' field at each cell centre comes from fringe's own coil model
(:func:`fringe.field.evaluate.field_at`, the same field every map uses) and is handed to
the library as each cell's ``H_ext`` attribute (the library takes it as μ₀H in T, per
cell), so no magpylib copy of the coils is made.

**Saturation.** A cell's polarisation follows the anhysteretic curve

    J(H) = J_s tanh(χ₀ μ₀H / J_s),    χ₀ = μ_r − 1

(slope χ₀ at low field, J → J_s at high field; a common smooth soft-iron curve, no
source for its exact shape). The solve is repeated with each cell's secant
susceptibility χ_i = J(H_i)/(μ₀H_i), H_i the field in the cell of the last solve,
geometrically damped, until every cell's polarisation lies within
:data:`SATURATION_SETTLE` · J_s of the curve. A part is *saturated* where some cell
reaches :data:`SATURATED_FRACTION` of J_s.

**Mesh rule.** Each part starts with its longest edge in :data:`START_DIVISIONS` cells
and the others cut into as many cells of the same edge as fit (at least one); every
refinement halves the cell edge. The solve stops at the first mesh whose every part's
moment and whose induced field at control points (two on each part's thinnest axis, a
quarter of its longest edge off each face) changed by less than ``tolerance`` against
the previous mesh, or at :data:`MAX_CELLS` cells (``converged`` False).

**Force.** The force on a part is the sum over its cells of the force on a point dipole
m = J V/μ₀ in the field of every other source (magnets and the other parts):
F = ∇(m·B) = (∂B/∂x)ᵀ m (Jackson, *Classical Electrodynamics*, 3rd ed., Eq. 5.69).
tests/physics/test_steel.py checks it against the virtual work dW/dx of the interaction
energy W = ½ Σ m·B_ext of a linear part (Jackson Eq. 5.72 and §6.2, the ½ of an induced
moment).

References
----------
Chadebec, Coulomb, Janet, "A review of magnetostatic moment method", IEEE Trans. Magn.
42 (2006) 515. Jackson, *Classical Electrodynamics*, 3rd ed. (1999), §5.6, §5.10–5.12.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass, field

import numpy as np

from fringe.field.evaluate import as_magnets, field_at, field_gradient_at
from fringe.field.induced import InducedCells
from fringe.model.errors import FringeInputError
from fringe.model.steel import SteelPart

__all__ = ["solve_steel", "SteelSolution", "PartResult", "solve_cells", "mesh_divisions",
           "START_DIVISIONS", "MAX_CELLS", "SATURATION_SETTLE", "SATURATED_FRACTION",
           "magnetization_curve_T", "clear_cache"]

#: Cells along a part's longest edge on the first mesh.
START_DIVISIONS: int = 10
#: Most cells a solve may use; refinement stops there (``converged`` False).
MAX_CELLS: int = 20_000
#: The saturation loop stops when every cell's polarisation is within this fraction of
#: J_s of the curve J(H).
SATURATION_SETTLE: float = 1e-3
#: A part is reported saturated where a cell's |J| reaches this fraction of J_s.
SATURATED_FRACTION: float = 0.9
#: Most solves of the saturation loop per mesh.
MAX_SATURATION_STEPS: int = 60
#: Relative precision asked of the library's iterative solver.
_SOLVER_TOL: float = 1e-8


def magnetization_curve_T(mu0H_T, chi0, saturation_T) -> np.ndarray:
    """Polarisation J = J_s tanh(χ₀ μ₀H / J_s) in T for the field μ₀H (T) in the steel.

    The curve of :mod:`fringe.physics.steel` (no hysteresis, no remanence): slope χ₀ at
    low field, J_s at high field. Common practice, no source for the exact shape.

    Examples
    --------
    >>> round(float(magnetization_curve_T(1e-4, 999.0, 2.1)), 4)
    0.0999
    """
    h = np.asarray(mu0H_T, dtype=float)
    js = np.asarray(saturation_T, dtype=float)
    return js * np.tanh(np.asarray(chi0, dtype=float) * h / js)


@dataclass(frozen=True)
class PartResult:
    """What the solve says about one steel part.

    Attributes
    ----------
    name : str
    mass_kg : float
        Density × volume, kg.
    max_field_in_steel_T : float
        Largest |B| = |μ₀H + J| over the part's cells, T.
    saturated : bool
        Some cell's |J| reached ``SATURATED_FRACTION`` of the material's J_s.
    force_N : (float, float, float)
        Force on the part from the magnets and the other parts, site frame, N.
    cells : int
        Cells of the part in the final mesh.
    """

    name: str
    mass_kg: float
    max_field_in_steel_T: float
    saturated: bool
    force_N: tuple[float, float, float]
    cells: int = 0


@dataclass(frozen=True, eq=False)
class SteelSolution:
    """Solved steel: the induced field (an :class:`~fringe.model.steel.InducedField`) and
    the per-part results.

    Attributes
    ----------
    parts : tuple of PartResult
        One per part, in the order given.
    cells : InducedCells
        The solved cells of the final mesh (all parts).
    part_index : ndarray, shape (n,)
        Index into ``parts`` of each cell.
    converged : bool
        The mesh met ``tolerance`` before ``MAX_CELLS``.
    mesh_change : float
        Largest relative change of the quantities of interest at the last refinement
        (0 when a single mesh sufficed because nothing is magnetised).
    saturation_steps : int
        Solves of the saturation loop on the final mesh.
    tolerance : float
    history : tuple of (int, float)
        (cells, change) of every mesh tried.
    """

    parts: tuple[PartResult, ...]
    cells: InducedCells
    part_index: np.ndarray
    converged: bool = True
    mesh_change: float = 0.0
    saturation_steps: int = 0
    tolerance: float = 0.01
    history: tuple[tuple[int, float], ...] = field(default=())

    def field_T(self, points_m) -> np.ndarray:
        """Induced B in T at site points (N, 3) → (N, 3)."""
        p = np.asarray(points_m, dtype=float)
        return self.cells.field_T(p.reshape(-1, 3)).reshape(p.shape)

    def field_gradient_T(self, points_m) -> tuple[np.ndarray, np.ndarray]:
        """Induced B (T) and ∂B_i/∂x_j (T/m) at site points (central differences)."""
        return self.cells.field_gradient_T(points_m)

    @property
    def saturated_parts(self) -> tuple[str, ...]:
        """Names of the parts that saturate."""
        return tuple(p.name for p in self.parts if p.saturated)


# ── meshing ─────────────────────────────────────────────────────────────────────────


def mesh_divisions(size_m, level: int, start: int = START_DIVISIONS) -> tuple[int, int, int]:
    """Cells along each edge of a part of ``size_m`` at refinement ``level`` (0, 1, …).

    The cell edge is h = max(size)/(start·2^level); each edge is cut into
    max(1, round(edge/h)) cells, so cells are as near cubes as the part allows and a thin
    plate keeps one layer until h reaches its thickness.
    """
    size = np.asarray(size_m, dtype=float)
    h = float(size.max()) / (start * 2 ** level)
    n = np.maximum(1, np.round(size / h)).astype(int)
    return (int(n[0]), int(n[1]), int(n[2]))


def _mesh(parts: Sequence[SteelPart], level: int):
    """Cells of every part at ``level``: (collection, centres, sizes, yaw, part index)."""
    import magpylib as magpy
    from magpylib_material_response.meshing import mesh_Cuboid
    from scipy.spatial.transform import Rotation

    colls, centers, sizes, yaws, index = [], [], [], [], []
    for k, part in enumerate(parts):
        div = mesh_divisions(part.size_m, level)
        body = magpy.magnet.Cuboid(polarization=(0.0, 0.0, 0.0), dimension=part.size_m,
                                   position=part.center_m,
                                   orientation=Rotation.from_euler("z", part.yaw_deg,
                                                                   degrees=True))
        coll = mesh_Cuboid(body, div)
        colls.append(coll)
        cells = coll.sources_all
        centers.append(np.array([c.position for c in cells]).reshape(-1, 3))
        cell_size = np.asarray(part.size_m, dtype=float) / np.asarray(div)
        sizes.append(np.tile(cell_size, (len(cells), 1)))
        yaws.append(np.full(len(cells), float(part.yaw_deg)))
        index.append(np.full(len(cells), k))
    return (colls, np.concatenate(centers), np.concatenate(sizes), np.concatenate(yaws),
            np.concatenate(index))


# ── the solve ───────────────────────────────────────────────────────────────────────


def _linear_solve(cell_objs: list, chi: np.ndarray, b_ext_T: np.ndarray) -> np.ndarray:
    """One linear solve of the library: polarisations (n, 3) in the site frame, T."""
    import magpylib as magpy
    from magpylib_material_response import disable_logging
    from magpylib_material_response.demag import apply_demag

    disable_logging()
    for c, b in zip(cell_objs, b_ext_T, strict=True):
        c.polarization = (0.0, 0.0, 0.0)
        c.H_ext = (float(b[0]), float(b[1]), float(b[2]))
    coll = magpy.Collection(*cell_objs, override_parent=True)
    apply_demag(coll, susceptibility=np.asarray(chi, dtype=float), inplace=True,
                solver_tol=_SOLVER_TOL)
    return np.array([c.orientation.apply(c.polarization) for c in cell_objs]).reshape(-1, 3)


def solve_cells(cell_objs: list, chi0: np.ndarray, saturation_T: np.ndarray,
                b_ext_T: np.ndarray) -> tuple[np.ndarray, np.ndarray, int, bool]:
    """Polarisations of magpylib cuboid cells with saturation (module docstring).

    Parameters
    ----------
    cell_objs : list of magpylib.magnet.Cuboid
        The cells (positions and orientations in the site frame, m).
    chi0 : ndarray, shape (n,)
        Low-field susceptibility μ_r − 1 of each cell.
    saturation_T : ndarray, shape (n,)
        J_s of each cell, T.
    b_ext_T : ndarray, shape (n, 3)
        Applied field μ₀H_ext at each cell centre, T.

    Returns
    -------
    J_T : ndarray, shape (n, 3)
        Polarisation of each cell, site frame, T.
    mu0H_T : ndarray, shape (n, 3)
        μ₀H in each cell (applied plus all cells), T.
    steps : int
        Linear solves made.
    settled : bool
        The saturation loop met :data:`SATURATION_SETTLE`.
    """
    chi0 = np.asarray(chi0, dtype=float)
    js = np.asarray(saturation_T, dtype=float)
    b_ext = np.asarray(b_ext_T, dtype=float).reshape(-1, 3)
    active = chi0 > 0
    if not np.any(active) or not np.any(b_ext):
        j = np.zeros_like(b_ext)
        return j, b_ext.copy(), 0, True
    chi = chi0.copy()
    steps, settled = 0, False
    while True:
        j = _linear_solve(cell_objs, chi, b_ext)
        steps += 1
        h = _mu0H(cell_objs, j, chi, b_ext)
        h_abs = np.linalg.norm(h, axis=1)
        target = magnetization_curve_T(h_abs, chi0, js)
        miss = np.abs(np.linalg.norm(j, axis=1) - target) / js
        if np.all(miss[active] <= SATURATION_SETTLE):
            settled = True
            break
        if steps >= MAX_SATURATION_STEPS:
            break
        with np.errstate(divide="ignore", invalid="ignore"):
            secant = np.where(h_abs > 0, target / h_abs, chi0)
        chi = np.where(active, np.sqrt(chi * secant), 0.0)
    return j, h, steps, settled


def _mu0H(cell_objs, j: np.ndarray, chi: np.ndarray, b_ext: np.ndarray) -> np.ndarray:
    """μ₀H at each cell centre: J/χ where χ > 0 (point matching), else applied + cells."""
    h = np.empty_like(j)
    pos = chi > 0
    h[pos] = j[pos] / chi[pos, None]
    if np.any(~pos):
        centers = np.array([c.position for c in cell_objs]).reshape(-1, 3)
        sizes = np.array([c.dimension for c in cell_objs]).reshape(-1, 3)
        yaw = np.array([c.orientation.as_euler("zyx", degrees=True)[0] for c in cell_objs])
        cells = InducedCells(centers, sizes, yaw, j)
        h[~pos] = b_ext[~pos] + cells.field_T(centers[~pos])
    return h


_CACHE: dict = {}


def clear_cache() -> None:
    """Forget every solution kept in this process."""
    _CACHE.clear()


def solve_steel(magnets, parts: Sequence[SteelPart], *, tolerance: float = 0.01,
                background_T=(0.0, 0.0, 0.0)) -> SteelSolution:
    """Solve the magnetisation of steel parts in the field of magnets (module docstring).

    Parameters
    ----------
    magnets : Site, Magnet or sequence of Magnet
        The sources (:func:`fringe.field.evaluate.as_magnets`); may be empty.
    parts : sequence of SteelPart
    tolerance : float
        Relative change of every quantity of interest between two meshes below which the
        mesh is accepted (0.01: 1 %).
    background_T : (float, float, float)
        Uniform applied field added to the magnets' (e.g. the Earth's), T.

    Returns
    -------
    SteelSolution
        Kept in memory per (magnets, parts, tolerance, background): a second call with
        the same inputs returns the same object.

    References
    ----------
    Chadebec et al., IEEE Trans. Magn. 42 (2006) 515; Jackson, *Classical
    Electrodynamics*, 3rd ed., Eq. 5.69.
    """
    mags = as_magnets(magnets)
    parts = tuple(parts)
    for p in parts:
        if not isinstance(p, SteelPart):
            raise FringeInputError(f"`parts` must hold SteelPart objects; got {type(p)!r}")
    if not (isinstance(tolerance, (int, float)) and math.isfinite(tolerance)
            and 0 < tolerance < 1):
        raise FringeInputError(f"`tolerance` must be a number in (0, 1); got {tolerance!r}")
    bg = tuple(float(v) for v in np.asarray(background_T, dtype=float).reshape(3))
    key = (mags, parts, float(tolerance), bg)
    if key in _CACHE:
        return _CACHE[key]
    sol = _solve(mags, parts, float(tolerance), np.asarray(bg))
    _CACHE[key] = sol
    return sol


def _external_field(mags, points: np.ndarray, bg: np.ndarray) -> np.ndarray:
    """Magnets' field plus the background at points (n, 3), T."""
    b = field_at(mags, points) if mags and len(points) else np.zeros_like(points)
    return b + bg


def _control_points(parts: Sequence[SteelPart]) -> np.ndarray:
    """Two points per part on its thinnest axis, a quarter of its longest edge off each face."""
    pts = []
    for p in parts:
        size = np.asarray(p.size_m, dtype=float)
        ax = int(np.argmin(size))
        off = np.zeros(3)
        off[ax] = size[ax] / 2 + size.max() / 4
        a = np.radians(p.yaw_deg)
        rot = np.array([[math.cos(a), -math.sin(a), 0], [math.sin(a), math.cos(a), 0], [0, 0, 1]])
        c = np.asarray(p.center_m, dtype=float)
        pts += [c + rot @ off, c - rot @ off]
    return np.array(pts).reshape(-1, 3)


def _solve(mags, parts: tuple[SteelPart, ...], tolerance: float, bg: np.ndarray) -> SteelSolution:
    """The refinement loop of :func:`solve_steel`."""
    if not parts:
        return SteelSolution((), InducedCells(np.zeros((0, 3)), np.zeros((0, 3)), np.zeros(0),
                                              np.zeros((0, 3))), np.zeros(0, dtype=int),
                             tolerance=tolerance)
    control = _control_points(parts)
    history: list[tuple[int, float]] = []
    prev = None
    level = 0
    while True:
        colls, centers, sizes, yaws, index = _mesh(parts, level)
        cell_objs = [c for coll in colls for c in coll.sources_all]
        chi0 = np.array([parts[k].mu_r - 1.0 for k in index])
        js = np.array([parts[k].material.saturation_T for k in index])
        b_ext = _external_field(mags, centers, bg)
        j, h, steps, _ = solve_cells(cell_objs, chi0, js, b_ext)
        cells = InducedCells(centers, sizes, yaws, j)
        qoi = _quantities(cells, index, len(parts), control)
        change = _change(prev, qoi)
        history.append((cells.count, change))
        done = change < tolerance
        nxt = sum(int(np.prod(mesh_divisions(p.size_m, level + 1))) for p in parts)
        if done or nxt > MAX_CELLS:
            break
        prev = qoi
        level += 1
    results = _part_results(mags, parts, cells, index, h, bg)
    return SteelSolution(results, cells, index, converged=bool(done), mesh_change=change,
                         saturation_steps=steps, tolerance=tolerance, history=tuple(history))


def _quantities(cells: InducedCells, index: np.ndarray, n_parts: int,
                control: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Moment of each part (n_parts, 3) and induced field at the control points."""
    m = cells.moments_Am2
    moments = np.zeros((n_parts, 3))
    np.add.at(moments, index, m)
    return moments, cells.field_T(control)


def _change(prev, qoi) -> float:
    """Largest relative change of the quantities of interest (inf without a previous mesh;
    0 when nothing is magnetised)."""
    mom, fld = qoi
    scale_b = float(np.max(np.linalg.norm(fld, axis=1), initial=0.0))
    mom_abs = np.linalg.norm(mom, axis=1)
    if scale_b == 0.0 and not np.any(mom_abs):
        return 0.0
    if prev is None:
        return math.inf
    pm, pf = prev
    rel_m = np.linalg.norm(mom - pm, axis=1) / np.where(mom_abs > 0, mom_abs, 1.0)
    rel_b = float(np.max(np.linalg.norm(fld - pf, axis=1))) / scale_b if scale_b else 0.0
    return float(max(np.max(rel_m, initial=0.0), rel_b))


def _part_results(mags, parts, cells: InducedCells, index: np.ndarray, h: np.ndarray,
                  bg: np.ndarray) -> tuple[PartResult, ...]:
    """Mass, largest |B| in the steel, saturation flag and force of every part."""
    j = cells.polarization_T
    b_in = np.linalg.norm(h + j, axis=1)
    j_abs = np.linalg.norm(j, axis=1)
    forces = part_forces_N(mags, cells, index, len(parts))
    out = []
    for k, part in enumerate(parts):
        sel = index == k
        out.append(PartResult(
            name=part.name, mass_kg=float(part.mass_kg),
            max_field_in_steel_T=float(np.max(b_in[sel], initial=0.0)),
            saturated=bool(np.any(j_abs[sel] >= SATURATED_FRACTION
                                  * part.material.saturation_T)),
            force_N=tuple(float(v) for v in forces[k]),
            cells=int(np.count_nonzero(sel))))
    return tuple(out)


def part_forces_N(mags, cells: InducedCells, index: np.ndarray, n_parts: int) -> np.ndarray:
    """Force (n_parts, 3) in N on each part: Σ over its cells of (∂B/∂x)ᵀ m, with B the
    field of the magnets and of the other parts' cells (Jackson Eq. 5.69). A uniform
    background exerts no force."""
    m = cells.moments_Am2
    forces = np.zeros((n_parts, 3))
    if cells.count == 0 or not np.any(m):
        return forces
    if mags:
        _, jac = field_gradient_at(mags, cells.centers_m)
    else:
        jac = np.zeros((cells.count, 3, 3))
    for k in range(n_parts):
        sel = index == k
        if n_parts > 1:
            others = InducedCells(cells.centers_m[~sel], cells.sizes_m[~sel],
                                  cells.yaw_deg[~sel], cells.polarization_T[~sel])
            _, jo = others.field_gradient_T(cells.centers_m[sel])
            jk = jac[sel] + jo
        else:
            jk = jac[sel]
        forces[k] = np.einsum("nji,nj->i", jk, m[sel])
    return forces
