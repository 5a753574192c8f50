"""Verdicts for rooms and sensitive equipment.

Rules (``docs/zones.md``):

* an ``open`` room's limit is its own ``limit_mT`` if given, else the site boundary
  value (0.5 mT by default); its verdict is ``exceeds`` when the largest |B| over its
  floor's occupied band anywhere in its outline reaches the limit, else ``within``;
* a ``controlled`` room may hold fields above the boundary: its verdict is
  ``controlled`` — unless it has its own ``limit_mT``, which is then checked as above;
* an equipment point's verdict is ``exceeds`` when |B| at the point reaches its
  ``limit_mT``, else ``within``; a volume of equipment (an outline on a floor, a
  height) is checked with the largest |B| over the volume, sampled at the plan grid
  step across the outline and its edge and at the band step up its height.

"Reaches" means ≥: a field exactly at the limit is not within it.

With a field uncertainty u (``[plan] field_uncertainty``, docs/uncertainty.md) an item
whose model value is below its limit but whose value × (1 + u) reaches it is
``marginal``: a field underestimated by u would exceed. ``marginal`` never changes the
exit code (only ``exceeds`` does).
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from typing import Any

import numpy as np
import shapely

from fringe.analysis.zones import (
    FloorMap,
    Footprint,
    band_max_at_xy_T,
    field_magnitude_T,
    occupied_field_T,
)
from fringe.model.building import Boundary, Equipment, Floor, Room
from fringe.model.errors import ArgumentError, must_be
from fringe.model.site import DEFAULT_BAND_STEP_M, DEFAULT_FLOOR, DEFAULT_GRID_STEP_M
from fringe.model.verdict import Verdict

__all__ = ["VERDICTS", "RoomCheck", "EquipmentCheck", "room_limit", "verdict",
           "room_max_field", "check_rooms", "check_equipment", "boundary_outside_controlled_m2",
           "volume_samples_m", "MAX_VOLUME_SAMPLES"]

#: Most field points sampled in one equipment volume; a larger volume is sampled at a
#: coarser plan step (keeps the check to a few seconds).
MAX_VOLUME_SAMPLES: int = 400_000

#: Every verdict, worst first.
VERDICTS: tuple[Verdict, ...] = tuple(Verdict)


def verdict(field_T: float, limit_T: float | None, uncertainty: float = 0.0) -> Verdict:
    """``exceeds`` if ``field_T`` ≥ ``limit_T``; ``marginal`` if below but
    ``field_T`` × (1 + ``uncertainty``) ≥ ``limit_T``; ``within`` otherwise;
    ``controlled`` if there is no limit (a controlled room without a limit of its own).

    >>> verdict(0.46e-3, 0.5e-3), verdict(0.46e-3, 0.5e-3, 0.10), verdict(0.5e-3, 0.5e-3, 0.1)
    (<Verdict.WITHIN: 'within'>, <Verdict.MARGINAL: 'marginal'>, <Verdict.EXCEEDS: 'exceeds'>)
    """
    if limit_T is None:
        return Verdict.CONTROLLED
    if field_T >= limit_T:
        return Verdict.EXCEEDS
    return Verdict.MARGINAL if field_T * (1.0 + uncertainty) >= limit_T else Verdict.WITHIN


def room_limit(room: Room, boundary: Boundary) -> tuple[float | None, str]:
    """The limit (T) a room is checked against and where it comes from.

    An open room is checked against the lower of the boundary value and its own
    ``limit_mT``; a controlled room against its own ``limit_mT`` if it has one. Returns
    ``(None, "controlled access")`` for a controlled room without its own limit.
    """
    bound = f"boundary {boundary.value_mT:g} mT ({boundary.source})"
    if room.access == "controlled":
        if room.limit_mT is not None:
            return room.limit_mT * 1e-3, f"room limit_mT = {room.limit_mT:g}"
        return None, "controlled access"
    # an open room may hold neither the boundary nor its own limit: the lower one rules
    # (a room limit above the boundary cannot move the controlled access area outward)
    if room.limit_mT is not None and room.limit_mT < boundary.value_mT:
        return room.limit_mT * 1e-3, f"room limit_mT = {room.limit_mT:g}"
    if room.limit_mT is not None:
        return boundary.value_mT * 1e-3, (f"{bound}, below the room's own limit_mT = "
                                         f"{room.limit_mT:g}")
    return boundary.value_mT * 1e-3, bound


def _ring_samples(poly, spacing_m: float) -> np.ndarray:
    rings = [poly.exterior, *poly.interiors]
    pts = []
    for ring in rings:
        n = max(4, int(np.ceil(ring.length / spacing_m - 1e-9)))
        d = np.linspace(0.0, ring.length, n, endpoint=False)
        pts.append(shapely.get_coordinates(shapely.line_interpolate_point(ring, d)))
    return np.concatenate(pts)


def room_max_field(site, room: Room, fmap: FloorMap) -> tuple[float, tuple[float, float]]:
    """Largest band-maximum |B| (T) in a room and where (x, y in m) it occurs.

    The maximum is taken over the plan-grid nodes inside the outline and over points
    on its boundary rings spaced at half the grid step (evaluated directly, so a room
    narrower than the grid step is still sampled).
    """
    X, Y = np.meshgrid(fmap.x_m, fmap.y_m)
    inside = shapely.contains_xy(room.outline, X, Y)
    best, at = -np.inf, (float("nan"), float("nan"))
    if inside.any():
        vals = fmap.envelope_T[inside]
        k = int(np.argmax(vals))
        best, at = float(vals[k]), (float(X[inside][k]), float(Y[inside][k]))
    edge = _ring_samples(room.outline, max(fmap.step_m, 1e-3) / 2.0)
    ev = band_max_at_xy_T(site, edge, fmap.z_levels_m)
    k = int(np.argmax(ev))
    if ev[k] > best:
        best, at = float(ev[k]), (float(edge[k, 0]), float(edge[k, 1]))
    return best, at


@dataclass(frozen=True)
class RoomCheck:
    """The verdict on one room.

    Attributes
    ----------
    name, floor, access : str
    max_field_T : float
        Largest |B| over the floor's occupied band within the outline, T.
    max_at_m : (float, float)
        Plan position of that maximum, m.
    limit_T : float or None
        The limit checked (None for a controlled room without its own limit), T.
    limit_source : str
    verdict : Verdict
    area_above_m2 : tuple of (threshold_mT, area_m2)
        Area of the room inside each footprint, m².
    """

    name: str
    floor: str
    access: str
    max_field_T: float
    max_at_m: tuple[float, float]
    limit_T: float | None
    limit_source: str
    verdict: Verdict
    area_above_m2: tuple[tuple[float, float], ...]


def check_rooms(site, rooms: Sequence[Room], floor_maps: Mapping[str, FloorMap],
                floor_footprints: Mapping[str, Sequence[Footprint]], boundary: Boundary,
                uncertainty: float = 0.0) -> tuple[RoomCheck, ...]:
    """Verdicts for every room (see the module rules; ``uncertainty`` is the field
    uncertainty u that makes a verdict ``marginal``)."""
    out = []
    for room in rooms:
        fmap = floor_maps[room.floor]
        bmax, at = room_max_field(site, room, fmap)
        limit_T, src = room_limit(room, boundary)
        areas = tuple((fp.threshold_mT, float(shapely.intersection(room.outline,
                                                                   fp.geometry).area))
                      for fp in floor_footprints.get(room.floor, ()))
        out.append(RoomCheck(room.name, room.floor, room.access, bmax, at, limit_T, src,
                             verdict(bmax, limit_T, uncertainty), areas))
    return tuple(out)


@dataclass(frozen=True)
class EquipmentCheck:
    """The verdict on one piece of equipment (a point or a volume).

    Attributes
    ----------
    name : str
    position_m : (float, float, float)
        The point; for a volume, where its largest |B| was found.
    floor : str
        The floor it stands on (a point: the highest floor at or below it).
    field_T : float
        |B| at the point, or the largest |B| over the volume, T.
    limit_T : float
    verdict : Verdict
        ``exceeds``, ``marginal`` or ``within``.
    note : str
    outline : shapely.Polygon or None
        A volume's plan outline (None for a point).
    height_m : float or None
        A volume's height above its floor, m.
    class_name : str or None
        Its equipment class, if the scenario gave one.
    """

    name: str
    position_m: tuple[float, float, float]
    floor: str
    field_T: float
    limit_T: float
    verdict: Verdict
    note: str = ""
    outline: Any = None
    height_m: float | None = None
    class_name: str | None = None


def volume_samples_m(outline, z_bottom_m: float, height_m: float, step_m: float,
                     band_step_m: float) -> np.ndarray:
    """Sample points (N, 3) of the prism ``outline`` × [z_bottom, z_bottom + height], m.

    Plan points: the nodes of a grid of ``step_m`` inside the outline (aligned to its
    bounds), points on its rings every ``step_m / 2`` and its vertices; heights: evenly
    spaced levels at most ``band_step_m`` apart, both ends included. A step giving more
    than :data:`MAX_VOLUME_SAMPLES` points is widened.
    """
    x0, y0, x1, y1 = outline.bounds
    nz = max(2, int(np.ceil(height_m / band_step_m - 1e-9)) + 1)
    area_nodes = (x1 - x0) * (y1 - y0) / step_m ** 2
    if area_nodes * nz > MAX_VOLUME_SAMPLES:
        step_m *= float(np.sqrt(area_nodes * nz / MAX_VOLUME_SAMPLES))
    xs = np.arange(x0, x1 + 1e-9, step_m)
    ys = np.arange(y0, y1 + 1e-9, step_m)
    X, Y = np.meshgrid(xs, ys)
    inside = shapely.contains_xy(outline, X, Y)
    xy = np.concatenate([np.column_stack([X[inside], Y[inside]]),
                         _ring_samples(outline, step_m / 2.0),
                         shapely.get_coordinates(outline.exterior)])
    z = np.linspace(z_bottom_m, z_bottom_m + height_m, nz)
    return np.column_stack([np.tile(xy, (nz, 1)), np.repeat(z, len(xy))])


def check_equipment(site, equipment: Sequence[Equipment], floor_of=None, *,
                    floors: Sequence[Floor] = (), step_m: float = DEFAULT_GRID_STEP_M,
                    band_step_m: float = DEFAULT_BAND_STEP_M, uncertainty: float = 0.0
                    ) -> tuple[EquipmentCheck, ...]:
    """|B| at each equipment point, or its largest over each volume, and the verdicts.

    Parameters
    ----------
    site : Site, Magnet or magnets
    equipment : sequence of Equipment
    floor_of : callable, optional
        ``floor_of(z_m) -> Floor`` names the floor of each point.
    floors : sequence of Floor
        The floors volumes stand on (empty: the default floor at level 0).
    step_m, band_step_m : float
        Plan and vertical sampling steps of volumes, m (the plan grid step and the band
        step of the report).
    uncertainty : float
        Field uncertainty u: a value below its limit whose value × (1 + u) reaches it is
        ``marginal``.
    """
    if not equipment:
        return ()
    points = [e for e in equipment if e.outline is None]
    b_pt = iter(field_magnitude_T(site, np.array([e.position_m for e in points], dtype=float))
                if points else ())
    by_name = {f.name: f for f in (floors or (DEFAULT_FLOOR,))}
    out = []
    for e in equipment:
        lim = e.limit_mT * 1e-3
        if e.outline is None:
            bi, at = float(next(b_pt)), tuple(e.position_m)
            fl = floor_of(e.position_m[2]).name if floor_of else ""
        else:
            if e.floor not in by_name:
                raise ArgumentError(must_be("floors", f"to include floor {e.floor!r} of "
                                            f"equipment {e.name!r}", tuple(by_name)), "floors")
            pts = volume_samples_m(e.outline, by_name[e.floor].elevation_m, e.height_m,
                                   step_m, band_step_m)
            b = occupied_field_T(site, pts)  # a cryostat inside the volume is left out
            if not np.any(np.isfinite(b)):
                raise ArgumentError(must_be(f"equipment {e.name!r}", "a volume with some "
                                            "space outside every cryostat envelope",
                                            "a volume wholly inside one"), "equipment")
            k = int(np.nanargmax(b))
            bi, at, fl = float(b[k]), tuple(float(v) for v in pts[k]), e.floor
        out.append(EquipmentCheck(e.name, at, fl, bi, lim, verdict(bi, lim, uncertainty), e.note,
                                  e.outline, e.height_m, e.class_name))
    return tuple(out)


def boundary_outside_controlled_m2(boundary_footprint: Footprint, rooms: Sequence[Room]) -> float:
    """Area (m²) of a floor's boundary footprint outside every controlled room on it.

    Non-zero means the controlled access area must extend beyond the controlled rooms
    drawn (into open rooms, or space no room covers).
    """
    ctrl = [r.outline for r in rooms
            if r.access == "controlled" and r.floor == boundary_footprint.floor]
    g = boundary_footprint.geometry
    if ctrl:
        g = shapely.difference(g, shapely.union_all(ctrl))
    return float(g.area)
