"""The whole storey: field from a floor's level up to its ceiling, not only the band.

A floor's verdict looks at its occupied band (0–2 m above the floor by default). People
also reach the rest of the storey: a worker on a ladder in the ceiling void, cable trays
under the slab above. For each floor this module maps the largest |B| over the **full
height**, from the floor level up to the ceiling (:attr:`fringe.model.building.Floor.
full_height_z_m`), with the same machinery as the band (:func:`fringe.analysis.zones.
floor_map`: levels no further apart than the band step, parabolic refinement). Only the
parts of the storey outside the band are sampled anew; the full-height envelope is the
larger of the band envelope and theirs (the maximum over a union of intervals is the
larger of the maxima over each).

The full height informs; it does not change a floor's or room's verdict. A room is
flagged ``ceiling_exceeds`` when its full-height maximum reaches its limit and is larger
than its band maximum (the largest field in the room lies outside the occupied band):
a room within limits in its band but not above it, or a room whose ceiling void is worse
than the band that already exceeds. With a field uncertainty u (``[plan]
field_uncertainty``) the same rule as the verdicts applies: a room whose full-height
maximum lies outside its band, stays below its limit, but × (1 + u) reaches it is flagged
``ceiling_marginal``.
"""

from __future__ import annotations

from collections.abc import Callable, Mapping, Sequence
from dataclasses import dataclass

import numpy as np

from fringe.analysis.attraction import (
    AttractionMap,
    FloorAttraction,
    plan_attraction,
    zone_geometry,
)
from fringe.analysis.verdicts import RoomCheck, room_max_field
from fringe.analysis.zones import BAND_REFINE_TOL, FloorMap, floor_map, superlevel_polygons
from fringe.model.building import Floor, Room

__all__ = ["FullHeight", "RoomCeiling", "full_height_map", "full_height", "room_ceilings",
           "CEILING_MARGIN_REL"]

Progress = Callable[[str], None] | None

#: A room's full-height maximum must exceed its band maximum by more than this (relative)
#: to count as lying outside the band (both maps sample the band's top edge; their
#: refinements may differ by up to the band refinement tolerance).
CEILING_MARGIN_REL: float = BAND_REFINE_TOL


def _outside_band_floors(floor: Floor) -> list[Floor]:
    """The parts of the storey outside the occupied band, as floors with those bands."""
    lo, hi = floor.full_height_z_m
    b_lo, b_hi = floor.band_z_m
    parts = []
    if b_lo - lo > 1e-6:
        parts.append(Floor(floor.name, floor.elevation_m, 0.0, floor.band_bottom_m,
                           floor.ceiling_m))
    if hi - b_hi > 1e-6:
        parts.append(Floor(floor.name, floor.elevation_m, floor.band_top_m,
                           hi - floor.elevation_m, floor.ceiling_m))
    return parts


def full_height_map(site, band_map: FloorMap, band_step_m: float,
                    thresholds_T: Sequence[float] = (5e-4,), progress: Progress = None
                    ) -> FloorMap:
    """Largest |B| over the whole storey of ``band_map.floor`` on the same grid.

    Parameters
    ----------
    site : Site or magnets
    band_map : FloorMap
        The floor's occupied-band map (its envelope is reused).
    band_step_m : float
        Largest step between sampled heights, m (as for the band).
    thresholds_T : sequence of float
        As for :func:`fringe.analysis.zones.floor_map` (which nodes are refined).

    Returns
    -------
    FloorMap
        ``floor`` is the floor with its band widened to the full height
        (:meth:`fringe.model.building.Floor.full_height`); ``z_levels_m`` the union of
        every sampled level; ``envelope_T``/``sampled_T`` the larger of the band's and
        the other parts' values. The band map itself when the storey is the band.
    """
    parts = _outside_band_floors(band_map.floor)
    if not parts:
        return band_map
    env, sampled = band_map.envelope_T.copy(), band_map.sampled_T.copy()
    z = [band_map.z_levels_m]
    err, corr = band_map.band_error_rel, band_map.band_correction_rel
    for part in parts:
        fm = floor_map(site, part, band_map.x_m, band_map.y_m, band_step_m, thresholds_T,
                       progress=progress)
        env = np.maximum(env, fm.envelope_T)
        sampled = np.maximum(sampled, fm.sampled_T)
        z.append(fm.z_levels_m)
        err, corr = max(err, fm.band_error_rel), max(corr, fm.band_correction_rel)
    return FloorMap(band_map.floor.full_height(), band_map.x_m, band_map.y_m,
                    np.unique(np.concatenate(z)), env, sampled, err, corr)


@dataclass(frozen=True)
class FullHeight:
    """One floor's whole storey, as summary.json reports it.

    Attributes
    ----------
    floor : str
    z_m : (float, float)
        Absolute heights covered (floor level, ceiling), m.
    map : FloorMap
        Full-height maximum of |B| (:func:`full_height_map`).
    max_field_T : float
        Its largest value, T.
    boundary_area_m2 : float
        Plan area where the full-height maximum reaches the boundary value, m².
    boundary_geometry : shapely geometry
    attraction_area_m2 : float or None
        Plan area where the pull ratio reaches 1 anywhere over the full height, m²
        (None when the site has no attraction zone).
    attraction_geometry : shapely geometry or None
    """

    floor: str
    z_m: tuple[float, float]
    map: FloorMap
    max_field_T: float
    boundary_area_m2: float
    boundary_geometry: object
    attraction_area_m2: float | None = None
    attraction_geometry: object = None


def _full_height_attraction(site, band_att: FloorAttraction, fmap: FloorMap,
                            band_levels_m: np.ndarray, obj, mat, step_m) -> FloorAttraction:
    """The attraction zone over the full height: the band's map joined with a map over
    the levels outside the band (same grid, same object and material)."""
    extra = np.setdiff1d(np.round(fmap.z_levels_m, 9), np.round(band_levels_m, 9))
    if extra.size == 0:
        return band_att
    kw = {} if step_m is None else {"step_m": step_m}
    other = plan_attraction(site, fmap.x_m, fmap.y_m, extra, obj, mat, **kw)
    a = band_att.map
    amap = AttractionMap(a.u_m, a.v_m, np.fmax(a.ratio, other.ratio),
                         np.fmax(a.force_product_T2_per_m, other.force_product_T2_per_m),
                         np.fmax(a.field_T, other.field_T), a.criterion)
    geom = zone_geometry(amap)
    return FloorAttraction(band_att.floor, amap, geom, float(geom.area), a.criterion)


def full_height(site, band_map: FloorMap, band_step_m: float, boundary_T: float,
                thresholds_T: Sequence[float] = (5e-4,), *,
                attraction: FloorAttraction | None = None, object_kind=None, material=None,
                attraction_step_m: float | None = None, progress: Progress = None
                ) -> FullHeight:
    """The whole storey of one floor: map, maximum, boundary area, attraction area.

    Parameters
    ----------
    band_map : FloorMap
        The floor's occupied-band map.
    boundary_T : float
        The controlled-area boundary value, T.
    attraction : FloorAttraction, optional
        The floor's band attraction zone (:func:`fringe.analysis.attraction.
        floor_attraction`); with ``object_kind`` and ``material`` (registry names) its
        map is extended to the full height. None: no attraction area.
    """
    fmap = full_height_map(site, band_map, band_step_m, thresholds_T, progress=progress)
    g = superlevel_polygons(fmap.x_m, fmap.y_m, fmap.envelope_T, boundary_T)
    att_area = att_geom = None
    if attraction is not None:
        fa = _full_height_attraction(site, attraction, fmap, band_map.z_levels_m,
                                     object_kind, material, attraction_step_m)
        att_area, att_geom = fa.area_m2, fa.geometry
    return FullHeight(band_map.floor.name, band_map.floor.full_height_z_m, fmap,
                      float(np.max(fmap.envelope_T)), float(g.area), g, att_area, att_geom)


@dataclass(frozen=True)
class RoomCeiling:
    """A room over its whole storey.

    Attributes
    ----------
    name : str
    max_field_T : float
        Largest |B| in the room from the floor level up to the ceiling, T.
    max_at_m : (float, float)
        Plan position of that maximum, m.
    ceiling_exceeds : bool
        The full-height maximum reaches the room's limit and lies outside the occupied
        band (larger than the band maximum by more than :data:`CEILING_MARGIN_REL`).
    ceiling_marginal : bool
        As ``ceiling_exceeds`` but the maximum stays below the limit and only its value
        × (1 + u) reaches it (u: the plan's field uncertainty).
    """

    name: str
    max_field_T: float
    max_at_m: tuple[float, float]
    ceiling_exceeds: bool
    ceiling_marginal: bool = False


def room_ceilings(site, rooms: Sequence[Room], checks: Sequence[RoomCheck],
                  band_maps: Mapping[str, FloorMap], full_maps: Mapping[str, FloorMap],
                  uncertainty: float = 0.0) -> dict[str, RoomCeiling]:
    """Full-height maximum and ``ceiling_exceeds`` of every room (by room name).

    ``checks`` are the band verdicts (:func:`fringe.analysis.verdicts.check_rooms`) of
    the same rooms; ``band_maps`` and ``full_maps`` the band and full-height maps by
    floor name (:func:`full_height_map`). A floor whose
    storey is its band gives each room its band maximum (nothing is re-evaluated).
    """
    by_name = {c.name: c for c in checks}
    out = {}
    for room in rooms:
        c = by_name[room.name]
        fmap = full_maps[room.floor]
        if fmap is band_maps[room.floor]:
            out[room.name] = RoomCeiling(room.name, c.max_field_T, c.max_at_m, False)
            continue
        fmax, at = room_max_field(site, room, fmap)
        if fmax <= c.max_field_T:
            fmax, at = c.max_field_T, c.max_at_m
        above = fmax > c.max_field_T * (1.0 + CEILING_MARGIN_REL)
        flag = c.limit_T is not None and fmax >= c.limit_T and above
        marginal = (c.limit_T is not None and not flag and above
                    and fmax * (1.0 + uncertainty) >= c.limit_T)
        out[room.name] = RoomCeiling(room.name, fmax, at, bool(flag), bool(marginal))
    return out
