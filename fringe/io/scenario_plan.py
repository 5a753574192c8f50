"""Scenario sections of the building: ``[plan]``, ``[[floor]]``, ``[[room]]``,
``[[room_file]]`` and ``[[equipment]]``; plus the GeoJSON room loader.

:func:`fringe.io.scenario.parse_site` calls these parsers in turn; their results are
the building fields of :class:`fringe.model.site.Site` (gathered by
:func:`fringe.model.site.site_plan` into one :class:`~fringe.model.site.SitePlan`).

See ``docs/scenario.md`` ("Floors, rooms, equipment") for every key.
"""

from __future__ import annotations

import dataclasses
import difflib
import json
import warnings
from collections.abc import Callable, Mapping
from pathlib import Path
from typing import Any

import shapely

from fringe.io.reader import Reader, finite_number
from fringe.io.unit_slips import check_elevation, check_outline_size, check_site_span
from fringe.model.building import (
    ACCESS_CLASSES,
    BOUNDARY_CHOICES,
    DEFAULT_SLAB_M,
    Boundary,
    Equipment,
    Floor,
    Room,
)
from fringe.model.constants import DEFAULT_GRADIENT_LINES_T_PER_M, DEFAULT_THRESHOLDS_MT
from fringe.model.equipment_classes import EQUIPMENT_CLASSES
from fringe.model.errors import FringeWarning, ScenarioError, must_be
from fringe.model.site import (
    DEFAULT_BAND_M,
    DEFAULT_BAND_STEP_M,
    DEFAULT_BOUNDARY,
    DEFAULT_FLOOR,
    DEFAULT_GRID_STEP_M,
    PlanSettings,
    RoomDrawing,
    default_settings,
    with_boundary,
)

__all__ = ["parse_plan", "parse_floors", "parse_rooms", "parse_equipment", "outline_polygon",
           "load_geojson_rooms", "GEOJSON_ROOM_PROPERTIES"]

def _band(r: Reader, name: str, default: tuple[float, float]) -> tuple[float, float]:
    if not r.has(name):
        r.raw(name, None)
        return default
    lo, hi = r.vector(name, 2)
    if not (lo >= 0.0 and hi > lo):
        r.fail(r.key(name), "[bottom, top] in m above the floor with 0 ≤ bottom < top",
               [lo, hi])
    return (lo, hi)


# -- [plan] -------------------------------------------------------------------------

def parse_plan(root: Reader) -> PlanSettings:
    """Parse the optional ``[plan]`` table (see docs/scenario.md)."""
    r = root.table("plan")
    if r is None:
        return default_settings()
    if r.has("boundary") and (r.has("boundary_mT") or r.has("boundary_source")):
        r.fail(r.key("boundary"), "absent when `plan.boundary_mT` and "
               "`plan.boundary_source` give a value of your own", r.raw("boundary"))
    if r.has("boundary_mT"):
        v = r.number("boundary_mT", low=0.0, low_open=True)
        if not r.has("boundary_source"):
            raise ScenarioError("`plan.boundary_source` is missing; a numeric "
                                "`plan.boundary_mT` needs the source it comes from", r.file)
        boundary = Boundary(v, r.string("boundary_source"))
    else:
        if r.has("boundary_source"):
            r.fail(r.key("boundary_source"), "given only together with `plan.boundary_mT`",
                   r.raw("boundary_source"))
        key = r.string("boundary", DEFAULT_BOUNDARY, choices=tuple(BOUNDARY_CHOICES))
        boundary = Boundary(*BOUNDARY_CHOICES[key])
    th = _positive_numbers(r, "thresholds_mT", DEFAULT_THRESHOLDS_MT, "mT")
    if len(set(th)) != len(th):
        r.fail(r.key("thresholds_mT"), "free of repeated values", th)
    step = r.number("grid_step_m", DEFAULT_GRID_STEP_M, low=0.0, low_open=True, high=5.0)
    band_step = r.number("band_step_m", DEFAULT_BAND_STEP_M, low=0.0, low_open=True)
    band = _band(r, "occupied_band_m", DEFAULT_BAND_M)
    extent = None
    if r.has("extent_m"):
        e = r.raw("extent_m")
        ok = (isinstance(e, list) and len(e) == 2
              and all(isinstance(c, list) and len(c) == 2 for c in e)
              and all(isinstance(x, (int, float)) and not isinstance(x, bool)
                      and finite_number(x) for c in e for x in c))
        if not ok or not (e[1][0] > e[0][0] and e[1][1] > e[0][1]):
            r.fail(r.key("extent_m"), "[[x_min, y_min], [x_max, y_max]] in m with "
                   "x_max > x_min and y_max > y_min", e)
        extent = ((float(e[0][0]), float(e[0][1])), (float(e[1][0]), float(e[1][1])))
        n = ((extent[1][0] - extent[0][0]) / step) * ((extent[1][1] - extent[0][1]) / step)
        if n > 4e6:
            r.fail(r.key("grid_step_m"), f"coarse enough for at most 4 million plan nodes "
                   f"over `plan.extent_m` (this step gives {n:.3g})", step)
    exposure = None
    if r.has("exposure_lines"):
        from fringe.physics.exposure import EXPOSURE_LIMITS

        ex = r.raw("exposure_lines")
        if not isinstance(ex, list) or not all(isinstance(x, str) for x in ex):
            r.fail(r.key("exposure_lines"), "an array of exposure-limit names", ex)
        for i, x in enumerate(ex):
            if x not in EXPOSURE_LIMITS:
                r.fail(f"{r.key('exposure_lines')}[{i}]",
                       f"one of {', '.join(map(repr, EXPOSURE_LIMITS))}", x)
        exposure = tuple(dict.fromkeys(ex))
    gradient_lines = _gradient_lines(r)
    show_gauss = r.boolean("show_gauss", False)
    north = r.number("north_deg", 0.0, low=-360.0, high=360.0)
    uncertainty = r.number("field_uncertainty", 0.0, low=0.0)
    if uncertainty >= 1.0:
        r.fail(r.key("field_uncertainty"), "a fraction ≥ 0 and < 1 (0.10 for ±10 %)",
               uncertainty)
    r.finish()
    return PlanSettings(boundary, with_boundary(th, boundary.value_mT), step, band_step,
                        band, extent, exposure, gradient_lines_T_per_m=gradient_lines,
                        show_gauss=show_gauss, north_deg=float(north),
                        field_uncertainty=uncertainty)


def _positive_numbers(r: Reader, key: str, default, unit: str) -> list:
    """``key`` of this table as a non-empty array of finite positive numbers (as given)."""
    v = r.raw(key, list(default))
    if (not isinstance(v, list) or not v
            or any(isinstance(x, bool) or not isinstance(x, (int, float)) for x in v)
            or not all(finite_number(x) and x > 0 for x in v)):
        r.fail(r.key(key), f"a non-empty array of positive numbers ({unit})", v)
    return v


def _gradient_lines(r: Reader) -> tuple[float, ...]:
    """``[plan] gradient_lines_T_per_m``: positive numbers, T/m (sorted, repeats dropped)."""
    v = _positive_numbers(r, "gradient_lines_T_per_m", DEFAULT_GRADIENT_LINES_T_PER_M, "T/m")
    return tuple(sorted({float(x) for x in v}))


# -- [[floor]] ------------------------------------------------------------------------

def parse_floors(root: Reader, settings: PlanSettings) -> tuple[Floor, ...]:
    """Parse ``[[floor]]`` tables: ``name``, ``elevation_m``, optional ``occupied_band_m``
    (default: the ``[plan]`` band of ``settings``), ``ceiling_m`` and ``slab_m``.

    ``ceiling_m`` is the height of the underside of the slab above, measured from the
    floor's own level (m, at least the band top). Default: the next floor up's
    elevation less ``slab_m`` (default :data:`fringe.model.building.DEFAULT_SLAB_M`,
    0.3 m), but not below the band top; the top floor's default is its band top (no
    storey height is assumed).
    """
    out: list[tuple[Floor, Reader, float | None, float]] = []
    for fr in root.tables("floor"):
        name = fr.string("name")
        if any(f.name == name for f, *_ in out):
            fr.fail(fr.key("name"), "unique among floors", name)
        elev = fr.number("elevation_m")
        check_elevation(elev, fr.key("elevation_m"), fr.file)
        lo, hi = _band(fr, "occupied_band_m", settings.band_m)
        ceiling = fr.number("ceiling_m", None, low=0.0, low_open=True)
        if ceiling is not None and ceiling < hi:
            fr.fail(fr.key("ceiling_m"), f"at least the occupied band's top ({hi:g} m above "
                    "the floor; the ceiling is measured from the floor's own level)", ceiling)
        slab = fr.number("slab_m", DEFAULT_SLAB_M, low=0.0)
        fr.finish()
        out.append((Floor(name, elev, lo, hi), fr, ceiling, slab))
    floors = []
    for f, _fr, ceiling, slab in out:
        if ceiling is None:
            above = [g.elevation_m for g, *_ in out if g.elevation_m > f.elevation_m]
            ceiling = (max(min(above) - f.elevation_m - slab, f.band_top_m) if above
                       else f.band_top_m)
        floors.append(dataclasses.replace(f, ceiling_m=float(ceiling)))
    return tuple(floors)


# -- [[room]] and [[room_file]] -------------------------------------------------------

def _ring(value: Any) -> list[tuple[float, float]] | None:
    if not isinstance(value, list) or len(value) < 3:
        return None
    pts = []
    for p in value:
        if (not isinstance(p, list) or len(p) not in (2, 3)
                or any(isinstance(x, bool) or not isinstance(x, (int, float)) for x in p)
                or not all(finite_number(x) for x in p)):
            return None
        pts.append((float(p[0]), float(p[1])))
    return pts


def outline_polygon(shell: Any, holes: Any, key_path: str, file: str | None,
                    room: str | None = None) -> shapely.Polygon:
    """A validated shapely Polygon from coordinate arrays, or :class:`ScenarioError`.

    Parameters
    ----------
    shell : list of [x, y]
        Outer ring in site metres (closing point optional).
    holes : list of rings or None
        Inner rings (courtyards, shafts), same form.
    key_path : str
        Key path named in any error, e.g. ``room[2].outline_m``.
    file : str or None
        File named in any error.
    room : str, optional
        Name of the room, also named in any error.

    Raises
    ------
    ScenarioError
        For fewer than 3 points, non-numbers, zero area, an invalid polygon (the
        shapely reason, e.g. ``Self-intersection[4 3]``, is quoted), or an outline wider
        than any room (a unit slip: the message names the likely unit,
        :func:`fringe.io.unit_slips.check_outline_size`).
    """
    of = "" if room is None else f" for room {room!r}"
    ring = _ring(shell)
    if ring is None:
        raise ScenarioError(must_be(key_path, f"an array of at least 3 [x, y] points in m{of}",
                                    shell), file)
    inner = []
    for i, h in enumerate(holes or []):
        hr = _ring(h)
        if hr is None:
            raise ScenarioError(must_be(f"{key_path} hole[{i}]",
                                        f"an array of at least 3 [x, y] points in m{of}", h),
                                file)
        inner.append(hr)
    poly = shapely.Polygon(ring, inner)
    if not shapely.is_valid(poly):
        reason = shapely.is_valid_reason(poly)
        raise ScenarioError(must_be(key_path, f"a valid simple polygon{of} (shapely: {reason})",
                                    shell), file)
    if not poly.area > 0.0:
        raise ScenarioError(must_be(key_path, f"a polygon of non-zero area{of}", shell), file)
    check_outline_size(poly.bounds, key_path, file)
    return shapely.normalize(poly)


#: Feature properties the GeoJSON room loader reads.
GEOJSON_ROOM_PROPERTIES: tuple[str, ...] = ("name", "floor", "access", "limit_mT")


def load_geojson_rooms(path: str | Path, options: dict, file_for_errors: str) -> list[Room]:
    """Rooms from a GeoJSON (RFC 7946) FeatureCollection of Polygon features.

    Coordinates are read as site-frame metres (x east, y north), not longitude and
    latitude: a local plan frame "by prior arrangement" (RFC 7946, Sec. 4). Each
    feature's ``properties`` give ``name`` (required), ``floor`` (or ``options["floor"]``),
    ``access`` (default ``"open"``) and optional ``limit_mT``.

    Parameters
    ----------
    path : str or Path
        The GeoJSON file.
    options : dict
        ``{"floor": default floor name or None}``.
    file_for_errors : str
        Name used in error messages (the GeoJSON file).

    References
    ----------
    H. Butler et al., "The GeoJSON Format", RFC 7946, IETF, 2016.
    """
    feats = _read_features(Path(path), file_for_errors)
    rooms: list[Room] = []
    for i, f in enumerate(feats):
        rooms.append(_geojson_room(i, f, options, file_for_errors))
    return rooms


def _read_features(p: Path, file_for_errors: str) -> list:
    """The ``features`` array of a GeoJSON FeatureCollection (a lone Feature is wrapped)."""
    try:
        data = json.loads(p.read_text(encoding="utf-8"))
    except OSError as e:
        raise ScenarioError(f"cannot read the room file: {e.strerror or e}", str(p)) from None
    except (UnicodeDecodeError, json.JSONDecodeError) as e:
        raise ScenarioError(f"not valid UTF-8 JSON: {e}", str(p)) from None
    except RecursionError:
        raise ScenarioError("not a usable GeoJSON file: arrays nested too deeply", str(p)) from None
    if isinstance(data, dict) and data.get("type") == "Feature":
        data = {"type": "FeatureCollection", "features": [data]}
    if not isinstance(data, dict) or data.get("type") != "FeatureCollection":
        raise ScenarioError(must_be("type", "'FeatureCollection' (or 'Feature')",
                                    data.get("type") if isinstance(data, dict) else data),
                            file_for_errors)
    feats = data.get("features")
    if not isinstance(feats, list):
        raise ScenarioError(must_be("features", "an array of Features", feats), file_for_errors)
    return feats


def _geojson_room(i: int, f, options: dict, file_for_errors: str) -> Room:
    """The room of feature ``i`` of a GeoJSON room file, checked."""
    kp = f"features[{i}]"
    if not isinstance(f, dict):
        raise ScenarioError(must_be(kp, "a Feature object", f), file_for_errors)
    props = f.get("properties") or {}
    geom = f.get("geometry") or {}
    if not isinstance(props, dict):
        raise ScenarioError(must_be(f"{kp}.properties", "an object", props), file_for_errors)
    if not isinstance(geom, dict) or geom.get("type") != "Polygon":
        raise ScenarioError(must_be(f"{kp}.geometry.type", "'Polygon'",
                                    geom.get("type") if isinstance(geom, dict) else geom),
                            file_for_errors)
    coords = geom.get("coordinates")
    if not isinstance(coords, list) or not coords:
        raise ScenarioError(must_be(f"{kp}.geometry.coordinates",
                                    "an array of linear rings", coords), file_for_errors)
    name = props.get("name")
    if not isinstance(name, str) or not name.strip():
        raise ScenarioError(must_be(f"{kp}.properties.name", "a non-empty string", name),
                            file_for_errors)
    _warn_near_miss_properties(props, kp, name, file_for_errors)
    poly = outline_polygon(coords[0], coords[1:], f"{kp}.geometry.coordinates "
                           f"(room {name!r})", file_for_errors)
    floor, access, limit = _room_properties(props, kp, options, file_for_errors)
    return Room(name, floor, poly, access, None if limit is None else float(limit))


def _warn_near_miss_properties(props: dict, kp: str, name: str, file_for_errors: str) -> None:
    """Warn of a feature property that looks like a misspelt room property."""
    # other tools' properties are kept quiet, but a near-miss of ours is a typo that
    # would silently turn a controlled room open or drop its limit
    for key in props:
        if key in GEOJSON_ROOM_PROPERTIES:
            continue
        hint = difflib.get_close_matches(key, GEOJSON_ROOM_PROPERTIES, n=1, cutoff=0.75)
        if hint:
            # stacklevel 4: the caller of load_geojson_rooms, as before the split
            warnings.warn(f"{file_for_errors}: `{kp}.properties.{key}` (room {name!r}) is "
                          f"not read; did you mean `{hint[0]}`?", FringeWarning,
                          stacklevel=4)


def _room_properties(props: dict, kp: str, options: dict, file_for_errors: str):
    """Floor, access class and field limit (or None) of a feature, checked."""
    floor = props.get("floor", options.get("floor"))
    if not isinstance(floor, str) or not floor:
        raise ScenarioError(must_be(f"{kp}.properties.floor", "a floor name (or give "
                                    "`floor` in the [[room_file]] table)", floor),
                            file_for_errors)
    access = props.get("access", "open")
    if access not in ACCESS_CLASSES:
        raise ScenarioError(must_be(f"{kp}.properties.access",
                                    f"one of {', '.join(map(repr, ACCESS_CLASSES))}",
                                    access), file_for_errors)
    limit = props.get("limit_mT")
    if limit is not None and (isinstance(limit, bool) or not isinstance(limit, (int, float))
                              or not finite_number(limit) or limit <= 0):
        raise ScenarioError(must_be(f"{kp}.properties.limit_mT", "a positive number",
                                    limit), file_for_errors)
    return floor, access, limit


def parse_rooms(root: Reader, file: Path, floors: tuple[Floor, ...],
                loaders: Mapping[str, Callable[..., Any]],
                ) -> tuple[tuple[Room, ...], tuple[RoomDrawing, ...]]:
    """Parse ``[[room]]`` tables and rooms loaded through ``[[room_file]]``.

    Parameters
    ----------
    root : Reader
        The scenario's top-level table.
    file : Path
        The scenario file; relative ``[[room_file]]`` paths are taken from its folder.
    floors : tuple of Floor
        The declared floors (empty: only the implied :data:`DEFAULT_FLOOR`).
    loaders : mapping
        Room-file loaders by ``format`` name (:data:`fringe.io.scenario.ROOM_LOADERS`).

    Returns
    -------
    rooms : tuple of Room
    drawings : tuple of RoomDrawing
        The DXF drawings rooms were read from.
    """
    floor_names = tuple(f.name for f in floors) or (DEFAULT_FLOOR.name,)
    rooms: list[tuple[Room, str]] = []  # (room, key path for errors)

    def check_floor(floor: str, kp: str, where: str | None) -> None:
        if floor not in floor_names:
            hint = "" if floors else " (no [[floor]] is declared, so only the implied floor)"
            raise ScenarioError(must_be(kp, f"one of the floors {', '.join(map(repr, floor_names))}"
                                        f"{hint}", floor), where)

    for rr in root.tables("room"):
        name = rr.string("name")
        floor = rr.string("floor", floor_names[0] if not floors else ...)
        check_floor(floor, rr.key("floor"), rr.file)
        access = rr.string("access", "open", choices=ACCESS_CLASSES)
        poly = outline_polygon(rr.raw("outline_m"), rr.raw("holes_m", []), rr.key("outline_m"),
                               rr.file, room=name)
        limit = rr.number("limit_mT", None, low=0.0, low_open=True)
        rr.finish()
        rooms.append((Room(name, floor, poly, access, limit), rr.key("name")))

    drawings: list[RoomDrawing] = []
    for fr in root.tables("room_file"):
        rel = fr.string("path")
        fmt = fr.string("format", "geojson", choices=tuple(sorted(loaders)))
        default_floor = fr.string("floor", None)
        if default_floor is not None:
            check_floor(default_floor, fr.key("floor"), fr.file)
        # Further keys are options of the chosen loader, which declares them in its
        # ``option_keys`` attribute and validates their values itself.
        option_keys = tuple(getattr(loaders[fmt], "option_keys", ()))
        options = {k: fr.raw(k) for k in option_keys if k != "floor" and fr.has(k)}
        fr.finish()
        p = Path(rel)
        if not p.is_absolute():
            p = Path(file).parent / p
        result = loaders[fmt](p, {"floor": default_floor, **options}, str(p))
        loaded = list(getattr(result, "rooms", result))
        if fmt == "dxf":  # the report draws its walls and writes its zones back into it
            drawings.append(RoomDrawing(str(p), tuple(sorted({rm.floor for rm in loaded})),
                                        tuple(result.offset_m), tuple(result.walls),
                                        float(getattr(result, "rotation_deg", 0.0))))
        for j, room in enumerate(loaded):
            check_floor(room.floor, f"{fr.key('path')} → room {room.name!r} floor", fr.file)
            rooms.append((room, f"{fr.key('path')} → features[{j}].properties.name"))

    check_site_span([r.outline.bounds for r, _ in rooms], "the room outlines", root.file)
    seen: set[str] = set()
    for room, kp in rooms:
        if room.name in seen:
            raise ScenarioError(must_be(kp, "unique among rooms", room.name), root.file)
        seen.add(room.name)
    return tuple(r for r, _ in rooms), tuple(drawings)


# -- [[equipment]] --------------------------------------------------------------------

def parse_equipment(root: Reader, floors: tuple[Floor, ...] = ()) -> tuple[Equipment, ...]:
    """Parse ``[[equipment]]`` tables (see docs/scenario.md).

    Keys: ``name``; exactly one of ``position_m`` (a point) or ``outline_m`` (a volume,
    with ``floor`` and ``height_m``); ``limit_mT`` and/or ``class`` (a key of
    :data:`fringe.model.equipment_classes.EQUIPMENT_CLASSES`; an explicit ``limit_mT``
    overrides the class's); optional ``note``. ``floors`` are the declared floors (empty:
    only the implied :data:`DEFAULT_FLOOR`).
    """
    floor_names = tuple(f.name for f in floors) or (DEFAULT_FLOOR.name,)
    out: list[Equipment] = []
    for er in root.tables("equipment"):
        name = er.string("name")
        if any(e.name == name for e in out):
            er.fail(er.key("name"), "unique among equipment", name)
        has_pos, has_outline = er.has("position_m"), er.has("outline_m")
        if has_pos == has_outline:
            er.fail(er.key("position_m"), f"given for equipment {name!r} exactly when "
                    f"`{er.key('outline_m')}` is not (a point or a volume, one of the two)",
                    er.raw("position_m", None))
        pos = outline = floor = height = None
        if has_pos:
            pos = er.vector("position_m", 3)
            for k in ("floor", "height_m"):
                if er.has(k):
                    er.fail(er.key(k), f"given only with `{er.key('outline_m')}` (equipment "
                            f"{name!r} is a point at `{er.key('position_m')}`)", er.raw(k))
        else:
            outline = outline_polygon(er.raw("outline_m"), [], er.key("outline_m"), er.file)
            floor = er.string("floor", floor_names[0] if not floors else ...)
            if floor not in floor_names:
                er.fail(er.key("floor"), f"one of the floors "
                        f"{', '.join(map(repr, floor_names))}", floor)
            height = er.number("height_m", low=0.0, low_open=True)
        cls = er.string("class", None, choices=tuple(EQUIPMENT_CLASSES))
        if cls is None or er.has("limit_mT"):
            limit = er.number("limit_mT", low=0.0, low_open=True)
        else:
            limit = EQUIPMENT_CLASSES[cls].limit_mT
        note = er.string("note", "", nonempty=False)
        er.finish()
        out.append(Equipment(name, pos, limit, note, outline, floor, height, cls))
    return tuple(out)
