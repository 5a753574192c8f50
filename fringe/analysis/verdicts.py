"""Verdicts for rooms and sensitive equipment.

Rules (``docs/zones.md``):

* an ``open`` room's limit is its own ``limit_mT`` if given, else the site boundary
  value (0.5 mT by default); its verdict is ``exceeds`` when the largest |B| over its
  floor's occupied band anywhere in its outline reaches the limit, else ``within``;
* a ``controlled`` room may hold fields above the boundary: its verdict is
  ``controlled`` — unless it has its own ``limit_mT``, which is then checked as above;
* an equipment point's verdict is ``exceeds`` when |B| at the point reaches its
  ``limit_mT``, else ``within``.

"Reaches" means ≥: a field exactly at the limit is not within it.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from dataclasses import dataclass

import numpy as np
import shapely

from fringe.analysis.zones import FloorMap, Footprint, band_max_at_xy_T, field_magnitude_T
from fringe.model.building import Boundary, Equipment, Room
from fringe.model.verdict import Verdict

__all__ = ["VERDICTS", "RoomCheck", "EquipmentCheck", "room_limit", "verdict",
           "room_max_field", "check_rooms", "check_equipment", "boundary_outside_controlled_m2"]

#: Every verdict, worst first.
VERDICTS: tuple[Verdict, ...] = tuple(Verdict)


def verdict(field_T: float, limit_T: float | None) -> Verdict:
    """``exceeds`` if ``field_T`` ≥ ``limit_T``, ``within`` if below, ``controlled`` if
    there is no limit (a controlled room without a limit of its own)."""
    if limit_T is None:
        return Verdict.CONTROLLED
    return Verdict.EXCEEDS if field_T >= limit_T else Verdict.WITHIN


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
                floor_footprints: Mapping[str, Sequence[Footprint]], boundary: Boundary
                ) -> tuple[RoomCheck, ...]:
    """Verdicts for every room (see the module rules)."""
    out = []
    for room in rooms:
        fmap = floor_maps[room.floor]
        bmax, at = room_max_field(site, room, fmap)
        limit_T, src = room_limit(room, boundary)
        areas = tuple((fp.threshold_mT, float(shapely.intersection(room.outline,
                                                                   fp.geometry).area))
                      for fp in floor_footprints.get(room.floor, ()))
        out.append(RoomCheck(room.name, room.floor, room.access, bmax, at, limit_T, src,
                             verdict(bmax, limit_T), areas))
    return tuple(out)


@dataclass(frozen=True)
class EquipmentCheck:
    """The verdict on one equipment point.

    Attributes
    ----------
    name : str
    position_m : (float, float, float)
    floor : str
        The floor it stands on (highest floor at or below it).
    field_T : float
        |B| at the point, T.
    limit_T : float
    verdict : Verdict
        ``exceeds`` or ``within``.
    note : str
    """

    name: str
    position_m: tuple[float, float, float]
    floor: str
    field_T: float
    limit_T: float
    verdict: Verdict
    note: str = ""


def check_equipment(site, equipment: Sequence[Equipment], floor_of=None
                    ) -> tuple[EquipmentCheck, ...]:
    """|B| at each equipment point (direct evaluation) and its verdict.

    ``floor_of(z_m) -> Floor`` names the floor of each point (optional).
    """
    if not equipment:
        return ()
    pts = np.array([e.position_m for e in equipment], dtype=float)
    b = field_magnitude_T(site, pts)
    out = []
    for e, bi in zip(equipment, b, strict=True):
        lim = e.limit_mT * 1e-3
        fl = floor_of(e.position_m[2]).name if floor_of else ""
        out.append(EquipmentCheck(e.name, tuple(e.position_m), fl, float(bi), lim,
                                  verdict(float(bi), lim), e.note))
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
