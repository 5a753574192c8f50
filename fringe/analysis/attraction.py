"""The attraction hazard of a site: pull-ratio maps on plans and sections, zone outlines.

What a site asks of :mod:`fringe.physics.attraction` (materials, object kinds, the pull
ratio at points, extents and reach of each magnet): the pull ratio on a floor's plan grid
(largest over its occupied band) and on vertical sections, the zone where it reaches 1 as
polygons, and everything a report shows (:func:`site_attraction`).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
import shapely

from fringe.analysis.zones import points_in_steel, superlevel_polygons
from fringe.field.evaluate import as_magnets, points_in_envelopes
from fringe.model.errors import FringeInputError
from fringe.physics.attraction import (
    DEFAULT_MATERIAL,
    DEFAULT_OBJECT,
    DEFAULT_STEP_M,
    AttractionSample,
    ObjectKind,
    SteelMaterial,
    attraction_at,
    attraction_extents_m,
    attraction_reach_m,
    criterion_text,
    material,
    object_kind,
)

__all__ = ["AttractionMap", "plan_attraction", "section_attraction", "zone_geometry",
           "FloorAttraction", "floor_attraction", "SiteAttraction", "site_attraction"]


@dataclass(frozen=True)
class AttractionMap:
    """Attraction quantities on a 2-D grid (arrays of shape (len(v), len(u))).

    ``ratio`` and ``force_product_T2_per_m`` are the largest values over the sampled
    levels (plan maps) or the values in the plane (section maps). ``ratio`` is NaN
    inside windings and cryostat envelopes and 0 beyond each magnet's
    :func:`fringe.physics.attraction.attraction_reach_m` (not evaluated there, where the
    other arrays are NaN). Contour ``ratio`` at 1 to get the
    zone outline (e.g. :func:`fringe.analysis.zones.superlevel_polygons`).
    """

    u_m: np.ndarray
    v_m: np.ndarray
    ratio: np.ndarray
    force_product_T2_per_m: np.ndarray
    field_T: np.ndarray
    criterion: str


def _screened(site, pts: np.ndarray, obj, mat, step_m: float, screen: bool) -> AttractionSample:
    """:func:`fringe.physics.attraction.attraction_at` on points within reach of a magnet
    (all points if not screen); points inside a cryostat envelope or a steel part are not
    evaluated (NaN: nobody can hold an object there)."""
    shape = pts.shape[:-1]
    flat = pts.reshape(-1, 3)
    mags = as_magnets(site)
    enclosed = points_in_envelopes(mags, flat) | points_in_steel(site, flat)
    near = ~enclosed
    if screen:
        reach = np.zeros(len(flat), dtype=bool)
        for m in mags:
            r = attraction_reach_m(m, obj, mat)
            reach |= np.linalg.norm(flat - np.asarray(m.center_m), axis=1) <= r
        near &= reach
    out = [np.full(len(flat), np.nan) for _ in range(4)]
    if screen:
        out[3][:] = 0.0
    out[3][enclosed] = np.nan
    if near.any():
        a = attraction_at(site, flat[near], obj, mat, step_m=step_m)
        for arr, val in zip(out, (a.field_T, a.gradient_T_per_m, a.force_product_T2_per_m,
                                  a.ratio), strict=True):
            arr[near] = val
    return AttractionSample(*(arr.reshape(shape) for arr in out))


def plan_attraction(site, x_m, y_m, z_levels_m, obj: str | ObjectKind = DEFAULT_OBJECT,
                    mat: str | SteelMaterial = DEFAULT_MATERIAL, *,
                    step_m: float = DEFAULT_STEP_M, screen: bool = True) -> AttractionMap:
    """Plan map of the pull ratio: largest over the given heights (an occupied band).

    Parameters
    ----------
    site : Site, Magnet or sequence of Magnet
    x_m, y_m : array_like, 1-D
        Grid coordinates in the site frame, m.
    z_levels_m : array_like, 1-D
        Absolute heights sampled across the occupied band, m (e.g.
        ``fringe.analysis.zones.FloorMap.z_levels_m``).
    screen : bool
        Evaluate only within :func:`fringe.physics.attraction.attraction_reach_m` of a
        magnet centre.

    Returns
    -------
    AttractionMap
        ``u_m = x_m``, ``v_m = y_m``; arrays of shape (len(y), len(x)).
    """
    x = np.asarray(x_m, dtype=float).ravel()
    y = np.asarray(y_m, dtype=float).ravel()
    z = np.asarray(z_levels_m, dtype=float).ravel()
    if z.size == 0:
        raise FringeInputError("`z_levels_m` must hold at least one height; got none")
    X, Y, Z = np.meshgrid(x, y, z, indexing="ij")
    s = _screened(site, np.stack([X, Y, Z], axis=-1), obj, mat, step_m, screen)

    def env(a):
        with np.errstate(invalid="ignore"):
            all_nan = np.all(np.isnan(a), axis=2)
            out = np.nanmax(np.where(all_nan[..., None], 0.0, a), axis=2)
        return np.where(all_nan, np.nan, out).T

    return AttractionMap(x, y, env(s.ratio), env(s.force_product_T2_per_m), env(s.field_T),
                         criterion_text(obj, mat))


def section_attraction(site, origin_m, direction, s_m, z_m,
                       obj: str | ObjectKind = DEFAULT_OBJECT,
                       mat: str | SteelMaterial = DEFAULT_MATERIAL, *,
                       step_m: float = DEFAULT_STEP_M, screen: bool = True) -> AttractionMap:
    """Pull ratio on a vertical section.

    Parameters
    ----------
    site : Site, Magnet or sequence of Magnet
    origin_m : 3 floats
        A point of the section (e.g. the magnet centre), m; ``z_m`` is absolute height.
    direction : 2 or 3 floats
        Horizontal direction of the section's abscissa (its z component is dropped),
        e.g. ``fringe.analysis.zones.Section.unit``.
    s_m : array_like, 1-D
        Abscissa along ``direction`` from ``origin_m``, m.
    z_m : array_like, 1-D
        Absolute heights, m.
    screen : bool
        Evaluate only within :func:`fringe.physics.attraction.attraction_reach_m` of a
        magnet centre.

    Returns
    -------
    AttractionMap
        ``u_m = s_m``, ``v_m = z_m``; arrays of shape (len(z), len(s)).
    """
    d = np.asarray(direction, dtype=float).ravel()[:2]
    n = float(np.hypot(*d))
    if not (math.isfinite(n) and n > 0):
        raise FringeInputError(
            f"`direction` must have a non-zero horizontal part; got {direction!r}")
    d = d / n
    o = np.asarray(origin_m, dtype=float).ravel()
    s = np.asarray(s_m, dtype=float).ravel()
    z = np.asarray(z_m, dtype=float).ravel()
    S, Zg = np.meshgrid(s, z, indexing="xy")
    pts = np.stack([o[0] + S * d[0], o[1] + S * d[1], Zg], axis=-1)
    a = _screened(site, pts, obj, mat, step_m, screen)
    return AttractionMap(s, z, a.ratio, a.force_product_T2_per_m, a.field_T,
                         criterion_text(obj, mat))


def zone_geometry(amap: AttractionMap) -> shapely.Geometry:
    """The zone (pull ≥ weight) of a map as a shapely (Multi)Polygon in the map's (u, v) m.

    Contoured at ratio 1 by :func:`fringe.analysis.zones.superlevel_polygons` (marching squares,
    holes kept). Nodes inside cryostat envelopes or windings (NaN) count as inside the
    zone, so the zone is drawn across the cryostat rather than with holes at the coils
    (conservative).
    """
    r = np.where(np.isnan(amap.ratio), np.inf, amap.ratio)
    return superlevel_polygons(amap.u_m, amap.v_m, np.minimum(r, 1e6), 1.0)


@dataclass(frozen=True)
class FloorAttraction:
    """The attraction zone on one floor.

    Attributes
    ----------
    floor : str
    map : AttractionMap
        Largest ratio over the floor's sampled band levels.
    geometry : shapely Polygon or MultiPolygon
        Site x-y, m.
    area_m2 : float
    criterion : str
        Which criterion drew it (print it beside the zone).
    """

    floor: str
    map: AttractionMap
    geometry: object
    area_m2: float
    criterion: str


def floor_attraction(site, floor_name: str, x_m, y_m, z_levels_m,
                     obj: str | ObjectKind = DEFAULT_OBJECT,
                     mat: str | SteelMaterial = DEFAULT_MATERIAL, *,
                     step_m: float = DEFAULT_STEP_M) -> FloorAttraction:
    """Plan map, zone polygon and zone area of one floor (e.g. from a
    :class:`fringe.analysis.zones.FloorMap`: ``fm.floor.name, fm.x_m, fm.y_m, fm.z_levels_m``)."""
    amap = plan_attraction(site, x_m, y_m, z_levels_m, obj, mat, step_m=step_m)
    geom = zone_geometry(amap)
    return FloorAttraction(floor_name, amap, geom, float(geom.area), amap.criterion)


@dataclass(frozen=True)
class SiteAttraction:
    """The attraction hazard of a whole site, as a report shows it.

    Attributes
    ----------
    object_kind, material : str
        Registry names of the object and material used.
    criterion : str
        :func:`fringe.physics.attraction.criterion_text` — print it wherever the zone is drawn.
    extents_m : tuple of (magnet name, axial_extent_m, radial_extent_m)
        Each magnet alone (:func:`fringe.physics.attraction.attraction_extents_m`).
    floors : dict of floor name → FloorAttraction
    sections : tuple of (AttractionMap, geometry)
        One per section given, in the same order; geometry in the section's (s, z), m.
    """

    object_kind: str
    material: str
    criterion: str
    extents_m: tuple[tuple[str, float, float], ...]
    floors: dict
    sections: tuple


def site_attraction(site, floor_maps=None, sections=(), obj: str | ObjectKind = DEFAULT_OBJECT,
                    mat: str | SteelMaterial = DEFAULT_MATERIAL, *,
                    step_m: float = DEFAULT_STEP_M) -> SiteAttraction:
    """Extents per magnet, zone per floor and per section, for a report.

    Parameters
    ----------
    site : Site
    floor_maps : dict of floor name → fringe.analysis.zones.FloorMap, optional
        Their grids and band levels are reused, so the zone matches the footprints.
    sections : sequence of fringe.analysis.zones.Section
        Vertical sections (``origin_m``, ``unit``, ``s_m``, ``z_m``).
    """
    o, m = object_kind(obj), material(mat)
    ext = tuple((mg.name, *attraction_extents_m(mg, o, m)) for mg in site.magnets)
    floors = {}
    for name, fm in (floor_maps or {}).items():
        floors[name] = floor_attraction(site, name, fm.x_m, fm.y_m, fm.z_levels_m, o, m,
                                        step_m=step_m)
    secs = []
    for sec in sections:
        amap = section_attraction(site, sec.origin_m, sec.unit, sec.s_m, sec.z_m, o, m,
                                  step_m=step_m)
        secs.append((amap, zone_geometry(amap)))
    return SiteAttraction(o.name, m.name, criterion_text(o, m), ext, floors, tuple(secs))
