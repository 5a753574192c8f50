"""Field maps and zones: plan grids per floor, occupied-band envelopes, footprints as
polygons, and vertical sections through each magnet.

A floor's **footprint** of a threshold b is the set of plan points (x, y) where the
largest |B| over the floor's occupied band, max_{z in band} |B(x, y, z)|, reaches b.
The band is sampled at evenly spaced levels no further apart than ``band_step_m`` (plus
each magnet's centre height); the maximum between samples is estimated by the vertex of
the parabola through the largest sample and its two neighbours (three-point parabolic
interpolation, Press et al., *Numerical Recipes*, 3rd ed., Sec. 10.3, Eq. 10.3.1). Where
that correction exceeds 0.1 %, the bracket around the peak is re-sampled more finely
(only those points), up to three times. The envelope is never below the sampled
maximum, so it errs on the side of a larger footprint; the remaining correction is
reported as the estimated band-sampling error.

Threshold lines are traced with marching squares on the grid (``contourpy``, the
contouring engine of matplotlib; linear interpolation between nodes) and become shapely
polygons, holes kept. Nothing here draws; :mod:`fringe.render.drawing` does.
"""

from __future__ import annotations

import math
from collections.abc import Callable, Sequence
from dataclasses import dataclass

import numpy as np
import shapely

from fringe.field.evaluate import as_magnets, field_at, points_in_envelopes
from fringe.model.building import Floor
from fringe.model.errors import FringeInputError
from fringe.model.magnet import Magnet

__all__ = ["FloorMap", "Footprint", "Section", "plan_axes_m", "band_levels_m",
           "band_envelope", "band_max_T", "BAND_REFINE_TOL", "field_magnitude_T",
           "occupied_field_T", "points_in_steel", "slice_map_T", "floor_map",
           "band_max_at_xy_T", "superlevel_polygons", "footprints", "magnet_sections",
           "section_directions", "default_extent_m", "reach_m", "field_reversal_m"]

Progress = Callable[[str], None] | None


# -- grids -----------------------------------------------------------------------------

def plan_axes_m(extent_m, step_m: float) -> tuple[np.ndarray, np.ndarray]:
    """Grid node coordinates x (nx,), y (ny,) in m over ``((x0, y0), (x1, y1))``.

    Nodes start at the lower-left corner and are ``step_m`` apart; the upper edge is
    extended to the next whole step so the window is always covered.
    """
    (x0, y0), (x1, y1) = extent_m
    if not (step_m > 0 and x1 > x0 and y1 > y0):
        raise FringeInputError(f"`extent_m` must be ((x0, y0), (x1, y1)) with x1 > x0, y1 > y0 "
                               f"and `step_m` > 0; got {extent_m!r}, {step_m!r}")
    nx = int(math.ceil((x1 - x0) / step_m - 1e-9)) + 1
    ny = int(math.ceil((y1 - y0) / step_m - 1e-9)) + 1
    return x0 + step_m * np.arange(nx), y0 + step_m * np.arange(ny)


def band_levels_m(floor: Floor, band_step_m: float, include_m: Sequence[float] = ()
                  ) -> np.ndarray:
    """Ascending absolute heights (m) sampling ``floor``'s occupied band.

    Evenly spaced, no further apart than ``band_step_m``, both band edges included and
    at least 3 levels (so the parabolic refinement always has neighbours); heights in
    ``include_m`` that fall strictly inside the band are added (e.g. magnet centres:
    for an axis parallel or perpendicular to the floor, the magnet's centre plane is a
    mirror plane of |B| and so holds the largest value over z near the magnet).
    """
    lo, hi = floor.band_z_m
    n = max(3, int(math.ceil((hi - lo) / band_step_m - 1e-9)) + 1)
    z = np.linspace(lo, hi, n)
    gap = 1e-3 * (hi - lo)
    extra = [float(h) for h in include_m
             if lo + gap < h < hi - gap and np.min(np.abs(z - h)) > gap]
    return np.unique(np.concatenate([z, extra])) if extra else z


def reach_m(magnet: Magnet, threshold_T: float) -> float:
    """A distance (m) from the magnet centre beyond which the plan window need not go
    for ``threshold_T``: 1.15 × the larger of the axial and radial extents (oblique
    lobes of shielded magnets may reach a little further than either), at least the
    magnet's enclosing radius."""
    from fringe.field.extents import threshold_extents_m

    ax, rad = threshold_extents_m(magnet, threshold_T)
    return max(1.15 * max(ax, rad), magnet.enclosing_radius_m)


def default_extent_m(magnets: Sequence[Magnet], rooms=(), equipment=(), threshold_T=5e-4,
                     margin_m: float = 1.0, step_m: float = 0.1
                     ) -> tuple[tuple[float, float], tuple[float, float]]:
    """Plan window ((x0, y0), (x1, y1)) in m covering every room, equipment point and
    each magnet's reach for the smallest threshold, plus ``margin_m``, snapped outward
    to whole multiples of ``step_m``."""
    xs: list[float] = []
    ys: list[float] = []
    for m in magnets:
        r = reach_m(m, threshold_T)
        xs += [m.center_m[0] - r, m.center_m[0] + r]
        ys += [m.center_m[1] - r, m.center_m[1] + r]
    for room in rooms:
        bx0, by0, bx1, by1 = room.outline.bounds
        xs += [bx0, bx1]
        ys += [by0, by1]
    for e in equipment:
        if getattr(e, "outline", None) is not None:  # a volume: its outline's corners
            x0, y0, x1, y1 = e.outline.bounds
            xs += [x0, x1]
            ys += [y0, y1]
        else:
            xs.append(e.position_m[0])
            ys.append(e.position_m[1])
    if not xs:
        raise FringeInputError("`site` must have a magnet, a room or equipment to size a plan")
    x0 = math.floor((min(xs) - margin_m) / step_m) * step_m
    y0 = math.floor((min(ys) - margin_m) / step_m) * step_m
    x1 = math.ceil((max(xs) + margin_m) / step_m) * step_m
    y1 = math.ceil((max(ys) + margin_m) / step_m) * step_m
    return ((x0, y0), (x1, y1))


# -- field magnitude ---------------------------------------------------------------------

def field_magnitude_T(site, points_m) -> np.ndarray:
    """|B| in T at site points (N, 3), all magnets superposed.

    See :func:`fringe.field.evaluate.field_at`.
    """
    return np.linalg.norm(field_at(site, points_m), axis=1)


def occupied_field_T(site, points_m) -> np.ndarray:
    """|B| in T at site points, NaN at points inside a magnet's cryostat envelope or inside
    a steel part (:func:`points_in_steel`).

    Nobody can stand inside a cryostat (:attr:`fringe.model.magnet.Magnet.envelope`;
    :func:`fringe.field.evaluate.points_in_envelopes`), so plan maps, room and floor
    maxima leave those points out and report what a person can meet (in the bore, at the
    cryostat's surface); sections show the full field.
    """
    p = np.asarray(points_m, dtype=float).reshape(-1, 3)
    out = points_in_envelopes(as_magnets(site), p) | points_in_steel(site, p)
    b = np.full(len(p), np.nan)
    if (~out).any():
        b[~out] = field_magnitude_T(site, p[~out])
    return b


def points_in_steel(site, points_m: np.ndarray) -> np.ndarray:
    """True for site points (N, 3) inside one of ``site``'s ``[[steel]]`` parts (nobody
    stands inside a steel plate; the field there is the flux in the steel). A magnet or
    magnets (no ``steel``): all False."""
    p = np.asarray(points_m, dtype=float).reshape(-1, 3)
    inside = np.zeros(len(p), dtype=bool)
    for part in getattr(site, "steel", ()):
        d = p - np.asarray(part.center_m, dtype=float)
        c, s = math.cos(math.radians(part.yaw_deg)), math.sin(math.radians(part.yaw_deg))
        u = c * d[:, 0] + s * d[:, 1]  # the part's own x and y (turned back by its yaw)
        v = -s * d[:, 0] + c * d[:, 1]
        h = 0.5 * np.asarray(part.size_m, dtype=float)
        inside |= (np.abs(u) <= h[0]) & (np.abs(v) <= h[1]) & (np.abs(d[:, 2]) <= h[2])
    return inside


def slice_map_T(site, x_m: np.ndarray, y_m: np.ndarray, z_m: float) -> np.ndarray:
    """|B| in T on the horizontal grid (ny, nx) at height ``z_m`` (NaN inside envelopes,
    see :func:`occupied_field_T`)."""
    X, Y = np.meshgrid(x_m, y_m)
    pts = np.column_stack([X.ravel(), Y.ravel(), np.full(X.size, float(z_m))])
    return occupied_field_T(site, pts).reshape(X.shape)


def band_envelope(values: np.ndarray, z_m: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Largest value over sampled levels, and its parabolic refinement.

    Parameters
    ----------
    values : ndarray, shape (nz, ...)
        A quantity (e.g. |B| in T) at ``nz`` ascending levels (nz ≥ 3).
    z_m : ndarray, shape (nz,) or the shape of ``values``
        The levels, m: shared by every column, or one ascending set per column.

    Returns
    -------
    sampled : ndarray, shape (...)
        ``values.max(axis=0)``.
    refined : ndarray, shape (...)
        ``max(sampled, vertex)`` where vertex is the peak of the parabola through the
        largest sample and its neighbours (at an end sample: the three end samples,
        vertex kept only if it lies between the end and its neighbour), and the
        parabola is concave.

    References
    ----------
    Press, Teukolsky, Vetterling & Flannery, *Numerical Recipes*, 3rd ed. (2007),
    Sec. 10.3, Eq. 10.3.1 (parabola through three points).
    """
    v = np.asarray(values, dtype=float)
    nz = v.shape[0]
    z = np.asarray(z_m, dtype=float)
    if nz < 3 or not (z.shape == (nz,) or z.shape == v.shape):
        raise FringeInputError(f"`values` must have nz ≥ 3 levels matching `z_m`; got "
                               f"{v.shape} and {z.shape}")
    if z.ndim == 1:
        z = np.broadcast_to(z.reshape((nz,) + (1,) * (v.ndim - 1)), v.shape)

    def at(arr, idx):
        return np.take_along_axis(arr, idx[None], axis=0)[0]

    k = np.argmax(v, axis=0)
    sampled = at(v, k)
    c = np.clip(k, 1, nz - 2)  # centre of the triple used
    f0, f1, f2 = at(v, c - 1), at(v, c), at(v, c + 1)
    z0, z1, z2 = at(z, c - 1), at(z, c), at(z, c + 1)
    d01 = (f1 - f0) / (z1 - z0)
    d12 = (f2 - f1) / (z2 - z1)
    a = (d12 - d01) / (z2 - z0)  # p(z) = f0 + d01 (z - z0) + a (z - z0)(z - z1)
    with np.errstate(divide="ignore", invalid="ignore"):
        zs = 0.5 * (z0 + z1) - d01 / (2.0 * a)  # p'(zs) = 0
        peak = f0 + d01 * (zs - z0) + a * (zs - z0) * (zs - z1)  # [NR] Eq. 10.3.1
    lo = at(z, np.where(k == nz - 1, nz - 2, np.maximum(k - 1, 0)))
    hi = at(z, np.where(k == 0, 1, np.minimum(k + 1, nz - 1)))
    ok = (a < 0) & np.isfinite(peak) & (zs >= lo) & (zs <= hi)
    refined = np.where(ok, np.maximum(sampled, peak), sampled)
    return sampled, refined


#: Relative size of the parabolic correction above which a band maximum is re-sampled
#: more finely around its peak (:func:`band_max_T`).
BAND_REFINE_TOL: float = 1e-3


def _bracket(z: np.ndarray, v: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Heights (lo, hi) of the samples either side of each column's largest sample."""
    nz = v.shape[0]
    k = np.argmax(v, axis=0)
    zz = np.broadcast_to(z.reshape((nz,) + (1,) * (v.ndim - 1)), v.shape) if z.ndim == 1 else z
    lo = np.take_along_axis(zz, np.maximum(k - 1, 0)[None], axis=0)[0]
    hi = np.take_along_axis(zz, np.minimum(k + 1, nz - 1)[None], axis=0)[0]
    return lo, hi


def band_max_T(site, xy_m: np.ndarray, z_levels_m: np.ndarray, *,
               values_T: np.ndarray | None = None, relevant_T: float = 0.0,
               tol_rel: float = BAND_REFINE_TOL, n_sub: int = 9, rounds: int = 3
               ) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Largest |B| over a vertical band at plan points, adaptively refined.

    Points inside cryostat envelopes are left out (:func:`occupied_field_T`); no parabola is
    fitted through them, and a point whose every sample lies in an envelope gets 0.

    The band is sampled at ``z_levels_m``; where the parabolic correction of
    :func:`band_envelope` exceeds ``tol_rel`` (relative) and the value is at least
    ``relevant_T``, the bracket around the peak is re-sampled at ``n_sub`` levels, up to
    ``rounds`` times (only those points are re-evaluated).

    Parameters
    ----------
    site : Site, Magnet or magnets
    xy_m : ndarray (N, 2)
        Plan points, m.
    z_levels_m : ndarray (nz,)
        Ascending heights sampling the band, m (nz ≥ 3).
    values_T : ndarray (nz, N), optional
        |B| already computed at those levels (saves the first evaluation).

    Returns
    -------
    envelope_T : ndarray (N,)
        The refined band maximum, T.
    sampled_T : ndarray (N,)
        The largest value at ``z_levels_m`` alone, T.
    error_rel : ndarray (N,)
        Remaining relative parabolic correction at the last sampling of each point:
        the estimated error of ``envelope_T``.
    """
    xy = np.asarray(xy_m, dtype=float).reshape(-1, 2)
    z = np.asarray(z_levels_m, dtype=float)
    if values_T is None:
        pts = np.concatenate([np.column_stack([xy, np.full(len(xy), zi)]) for zi in z])
        values_T = occupied_field_T(site, pts).reshape(z.size, len(xy))
    v = np.asarray(values_T, dtype=float).reshape(z.size, len(xy))
    v = np.where(np.isnan(v), -np.inf, v)  # envelopes: never the maximum, no parabola
    with np.errstate(divide="ignore", invalid="ignore"):
        sampled, env = band_envelope(v, z)
        err = np.where(env > 0, (env - sampled) / env, 0.0)
    lo, hi = _bracket(z, v)
    todo = np.flatnonzero((err > tol_rel) & (env >= relevant_T))
    t = np.linspace(0.0, 1.0, n_sub)
    for _ in range(rounds):
        if todo.size == 0:
            break
        zz = lo[todo, None] + (hi[todo] - lo[todo])[:, None] * t[None, :]  # (M, n_sub)
        pts = np.column_stack([np.repeat(xy[todo], n_sub, axis=0), zz.ravel()])
        vals = occupied_field_T(site, pts).reshape(todo.size, n_sub).T  # (n_sub, M)
        vals = np.where(np.isnan(vals), -np.inf, vals)
        with np.errstate(divide="ignore", invalid="ignore"):
            s2, r2 = band_envelope(vals, zz.T)
            err[todo] = np.where(r2 > 0, (r2 - s2) / r2, 0.0)
        best = np.maximum(env[todo], r2)
        env[todo] = best
        lo2, hi2 = _bracket(zz.T, vals)
        lo[todo], hi[todo] = lo2, hi2
        todo = todo[err[todo] > tol_rel]
    env = np.where(np.isfinite(env), env, 0.0)
    sampled = np.where(np.isfinite(sampled), sampled, 0.0)
    return env, sampled, err


# -- floor maps ----------------------------------------------------------------------------

@dataclass(frozen=True)
class FloorMap:
    """Largest |B| over one floor's occupied band on a plan grid.

    Attributes
    ----------
    floor : Floor
    x_m, y_m : ndarray (nx,), (ny,)
        Grid node coordinates, m.
    z_levels_m : ndarray (nz,)
        Sampled absolute heights of the band, m (refinement adds more where needed).
    envelope_T : ndarray (ny, nx)
        Band maximum of |B| (see :func:`band_max_T`), T.
    sampled_T : ndarray (ny, nx)
        Largest |B| at ``z_levels_m`` alone, T (≤ envelope_T).
    band_error_rel : float
        Estimated remaining relative error of ``envelope_T`` (largest last parabolic
        correction) over nodes whose envelope lies within [½ × smallest, 2 × largest]
        threshold.
    band_correction_rel : float
        Largest (envelope − sampled)/envelope over those nodes: what sampling the
        levels alone would have missed.
    """

    floor: Floor
    x_m: np.ndarray
    y_m: np.ndarray
    z_levels_m: np.ndarray
    envelope_T: np.ndarray
    sampled_T: np.ndarray
    band_error_rel: float
    band_correction_rel: float = 0.0

    @property
    def step_m(self) -> float:
        """Grid step in m."""
        return float(self.x_m[1] - self.x_m[0]) if self.x_m.size > 1 else 0.0


def _max_in_range(q, env, thresholds_T) -> float:
    if not len(thresholds_T):
        return 0.0
    m = (env >= 0.5 * min(thresholds_T)) & (env <= 2.0 * max(thresholds_T))
    return float(np.max(q[m])) if m.any() else 0.0


def floor_map(site, floor: Floor, x_m: np.ndarray, y_m: np.ndarray, band_step_m: float,
              thresholds_T: Sequence[float] = (5e-4,), progress: Progress = None,
              include_m: Sequence[float] | None = None) -> FloorMap:
    """Band envelope of |B| for ``floor`` on the grid ``x_m`` × ``y_m``.

    Levels from :func:`band_levels_m` (``include_m`` defaults to the magnets' centre
    heights); one :func:`fringe.field.evaluate.field_at` call per level, ``progress(message)``
    after each; then :func:`band_max_T` refines the nodes whose field is at least half
    the smallest threshold.
    """
    if include_m is None:
        include_m = [m.center_m[2] for m in as_magnets(site)]
    z = band_levels_m(floor, band_step_m, include_m)
    stack = np.empty((z.size, y_m.size, x_m.size))
    for i, zi in enumerate(z):
        stack[i] = slice_map_T(site, x_m, y_m, zi)
        if progress:
            progress(f"floor {floor.name!r}: level {i + 1}/{z.size} (z = {zi:.2f} m)")
    X, Y = np.meshgrid(x_m, y_m)
    relevant = 0.5 * min(thresholds_T) if len(thresholds_T) else 0.0
    env, sampled, err = band_max_T(site, np.column_stack([X.ravel(), Y.ravel()]), z,
                                   values_T=stack.reshape(z.size, -1), relevant_T=relevant)
    env = env.reshape(X.shape)
    sampled = sampled.reshape(X.shape)
    with np.errstate(divide="ignore", invalid="ignore"):
        corr = np.where(env > 0, (env - sampled) / env, 0.0)
    return FloorMap(floor, np.asarray(x_m, float), np.asarray(y_m, float), z, env, sampled,
                    _max_in_range(err.reshape(X.shape), env, thresholds_T),
                    _max_in_range(corr, env, thresholds_T))


def band_max_at_xy_T(site, xy_m: np.ndarray, z_levels_m: np.ndarray) -> np.ndarray:
    """Band maximum of |B| (T) at plan points ``xy_m`` (N, 2) over heights ``z_levels_m``
    (e.g. ``FloorMap.z_levels_m``), adaptively refined (:func:`band_max_T`)."""
    xy = np.asarray(xy_m, dtype=float).reshape(-1, 2)
    if len(xy) == 0:
        return np.zeros(0)
    return band_max_T(site, xy, z_levels_m)[0]


# -- contours → polygons -----------------------------------------------------------------

def superlevel_polygons(x_m: np.ndarray, y_m: np.ndarray, values: np.ndarray,
                        level: float) -> shapely.Geometry:
    """The region where ``values`` ≥ ``level`` as a shapely (Multi)Polygon, holes kept.

    Parameters
    ----------
    x_m, y_m : ndarray (nx,), (ny,)
        Grid coordinates, ascending.
    values : ndarray (ny, nx)
        Values at the nodes (e.g. |B| in T). NaN nodes are treated as outside.
    level : float

    Returns
    -------
    shapely.Polygon or shapely.MultiPolygon
        Valid, possibly empty. Boundaries follow marching squares (linear
        interpolation along cell edges); where the region meets the grid edge, the
        edge closes it.
    """
    import contourpy

    v = np.asarray(values, dtype=float)
    if v.shape != (len(y_m), len(x_m)):
        raise FringeInputError(f"`values` must have shape (ny, nx) = {(len(y_m), len(x_m))}; "
                               f"got {v.shape}")
    finite = np.isfinite(v)
    if not np.any(v[finite] >= level):
        return shapely.MultiPolygon()
    z = v if finite.all() else np.ma.masked_invalid(v)
    gen = contourpy.contour_generator(x_m, y_m, z, fill_type="OuterOffset")
    pts_list, offs_list = gen.filled(level, np.inf)
    polys = []
    for pts, offs in zip(pts_list, offs_list, strict=True):
        rings = [pts[offs[i]:offs[i + 1]] for i in range(len(offs) - 1)]
        rings = [r for r in rings if len(r) >= 4]
        if not rings:
            continue
        polys.append(shapely.Polygon(rings[0], rings[1:]))
    if not polys:
        return shapely.MultiPolygon()
    geom = shapely.union_all([shapely.make_valid(p) for p in polys])
    geom = shapely.make_valid(geom)
    if geom.geom_type == "GeometryCollection":  # keep areal parts only
        geom = shapely.union_all([g for g in geom.geoms if g.geom_type in
                                  ("Polygon", "MultiPolygon")])
    return geom


def _touches_edge(values: np.ndarray, level: float) -> bool:
    v = np.asarray(values)
    edge = np.concatenate([v[0], v[-1], v[:, 0], v[:, -1]])
    return bool(np.any(edge >= level))


@dataclass(frozen=True)
class Footprint:
    """Where one floor's band envelope reaches one threshold.

    Attributes
    ----------
    floor : str
    threshold_mT : float
    geometry : shapely Polygon or MultiPolygon (site x-y, m)
    area_m2 : float
        Area of ``geometry`` (from the refined envelope), m².
    sampled_area_m2 : float
        The same from the sampled maximum alone; ``area_m2 - sampled_area_m2`` shows
        the effect of band sampling.
    clipped : bool
        True when the footprint reaches the edge of the plan window (its true extent
        is larger than drawn; enlarge ``plan.extent_m``).
    """

    floor: str
    threshold_mT: float
    geometry: object
    area_m2: float
    sampled_area_m2: float
    clipped: bool


def footprints(fmap: FloorMap, thresholds_mT: Sequence[float]) -> tuple[Footprint, ...]:
    """Footprint polygons of ``fmap`` for each threshold (mT), ascending."""
    out = []
    for t in sorted(thresholds_mT):
        level = t * 1e-3
        g = superlevel_polygons(fmap.x_m, fmap.y_m, fmap.envelope_T, level)
        gs = superlevel_polygons(fmap.x_m, fmap.y_m, fmap.sampled_T, level)
        out.append(Footprint(fmap.floor.name, float(t), g, float(g.area), float(gs.area),
                             _touches_edge(fmap.envelope_T, level)))
    return tuple(out)


# -- vertical sections ---------------------------------------------------------------------

def section_directions(magnet: Magnet) -> dict[str, np.ndarray]:
    """Horizontal unit vectors (3,) of the two section planes through a magnet centre.

    ``along``: the horizontal projection of the axis (site x for a vertical axis);
    ``across``: ``along`` turned 90° anticlockwise about z.
    """
    a = np.asarray(magnet.axis, dtype=float)
    h = np.array([a[0], a[1], 0.0])
    n = np.linalg.norm(h)
    along = h / n if n > 1e-9 else np.array([1.0, 0.0, 0.0])
    across = np.array([-along[1], along[0], 0.0])
    return {"along": along, "across": across}


@dataclass(frozen=True)
class Section:
    """|B| on a vertical plane through a magnet centre.

    Attributes
    ----------
    magnet : str
    direction : str
        ``"along"`` or ``"across"`` the magnet axis.
    origin_m : ndarray (3,)
        The magnet centre, m; s = 0 there.
    unit : ndarray (3,)
        Horizontal unit vector of increasing s in the site frame.
    s_m : ndarray (ns,)
        Signed horizontal distance from the centre along ``unit``, m.
    z_m : ndarray (nz,)
        Absolute height, m.
    field_T : ndarray (nz, ns)
        |B| of all magnets superposed, T.
    """

    magnet: str
    direction: str
    origin_m: np.ndarray
    unit: np.ndarray
    s_m: np.ndarray
    z_m: np.ndarray
    field_T: np.ndarray


def magnet_sections(site, magnet: Magnet, half_width_m: float, z_range_m: tuple[float, float],
                    step_m: float, progress: Progress = None) -> tuple[Section, Section]:
    """Sections along and across ``magnet``'s axis through its centre.

    Parameters
    ----------
    site : Site or magnets
        Every magnet contributes.
    half_width_m : float
        Horizontal half-width of each section, m.
    z_range_m : (float, float)
        Absolute height range, m.
    step_m : float
        Grid step, m.
    """
    c = np.asarray(magnet.center_m, dtype=float)
    ns = int(math.ceil(half_width_m / step_m))
    s = step_m * np.arange(-ns, ns + 1)
    z0, z1 = z_range_m
    nzz = int(math.ceil((z1 - z0) / step_m - 1e-9)) + 1
    z = z0 + step_m * np.arange(nzz)
    out = []
    for name, u in section_directions(magnet).items():
        S, Z = np.meshgrid(s, z)
        pts = np.column_stack([c[0] + S.ravel() * u[0], c[1] + S.ravel() * u[1], Z.ravel()])
        vals = np.full(len(pts), np.nan)  # NaN inside steel parts (the flux in the steel)
        free = ~points_in_steel(site, pts)
        vals[free] = field_magnitude_T(site, pts[free])  # the site: steel counts
        vals = vals.reshape(S.shape)
        out.append(Section(magnet.name, name, c, u, s, z, vals))
        if progress:
            progress(f"section {name} the axis of {magnet.name!r}")
    return out[0], out[1]


def field_reversal_m(s_m, z_m, field_T, centre_z_m: float,
                     beyond_m: float = 0.0) -> float | None:
    """Distance from the centre where |B| on the row through the centre has an interior dip.

    Walking outward from the centre (both ways) along the grid row nearest
    ``centre_z_m``, beyond ``beyond_m`` (outside the windings) and beyond the last
    undefined node, |B| of an unshielded coil only falls. A local minimum followed
    further out by a rise to at least 1.3 times its value is the field reversal of an
    actively shielded magnet: there the shield coils' field cancels the main field and
    |B| passes through zero (sampled on the grid, the minimum is only near zero).

    Parameters
    ----------
    s_m : (ns,) float
        Horizontal coordinate of the section, m, 0 at the magnet centre.
    z_m : (nz,) float
        Heights of the section rows, m.
    field_T : (nz, ns) float
        |B| on the section, T; NaN inside windings.
    centre_z_m : float
        Height of the magnet centre, m.
    beyond_m : float
        Only nodes farther than this from the centre count, m (the windings' reach:
        |B| also passes through zero inside a winding).

    Returns
    -------
    float or None
        |s| of the nearest such minimum, m, or None when the field has no reversal there.
    """
    s = np.asarray(s_m, float)
    row = np.asarray(field_T, float)[int(np.argmin(np.abs(np.asarray(z_m, float)
                                                          - centre_z_m)))]
    found = []
    for side in (s >= 0, s <= 0):
        idx = np.flatnonzero(side & (np.abs(s) > beyond_m))
        idx = idx[np.argsort(np.abs(s[idx]))]
        b = row[idx]
        bad = np.flatnonzero(~np.isfinite(b))
        start = bad[-1] + 1 if bad.size else 0
        for k in range(start + 1, len(b) - 1):
            if b[k] < b[k - 1] and b[k] <= b[k + 1] and np.max(b[k + 1:]) >= 1.3 * b[k]:
                found.append(abs(float(s[idx[k]])))
                break
    return min(found) if found else None
