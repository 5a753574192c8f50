"""CAD plan exchange (DXF, through ezdxf): room outlines in, zone layers read back.

Reading
-------
:func:`read_dxf_plan` takes the closed polylines (LWPOLYLINE and 2-D POLYLINE, arcs from
bulges flattened to 0.5 mm) of a drawing's model space. A *layer map* says what each
layer holds: ``"controlled"`` or ``"open"`` rooms (the access class of
:data:`fringe.model.building.ACCESS_CLASSES`), ``"wall"`` outlines (kept for drawing, never
checked) or ``"ignore"``. A room's name is the topmost TEXT/MTEXT whose anchor lies
inside it (the smallest containing outline wins when outlines nest), else its layer
name. Drawing units come from the ``$INSUNITS`` header and are scaled to metres; a
``rotation_deg`` (counter-clockwise, about the drawing origin) then turns the drawing and
an ``offset_m`` moves it into the site frame:
``site_xy = R(rotation_deg) · drawing_xy × metres_per_unit + offset_m``.

:func:`load_dxf_rooms` is the room-file loader registered as
``fringe.io.scenario.ROOM_LOADERS["dxf"]``; its options are the keys of
:data:`DXF_ROOM_OPTION_KEYS`.

Zone drawings
-------------
Zone drawings (footprints and the attraction zone on ``FRINGE-…`` layers) are drawn
by :func:`fringe.render.dxf.write_zones_dxf`; :func:`read_dxf_polygons` reads such a
layer back (rings nested by the even-odd rule). Layers named ``FRINGE-…``
(:data:`LAYER_PREFIX`) are never read as rooms.

Any file ezdxf cannot read raises :class:`fringe.model.errors.ScenarioError` naming the file.

References
----------
Autodesk, *DXF Reference* (AutoCAD 2012 and later): header variable ``$INSUNITS``,
entities LWPOLYLINE, POLYLINE, TEXT, MTEXT. ezdxf documentation, https://ezdxf.mozman.at.
"""

from __future__ import annotations

import fnmatch
import math
from collections.abc import Mapping
from dataclasses import dataclass
from pathlib import Path
from typing import Any

import numpy as np
import shapely
import shapely.affinity

from fringe.io.unit_slips import check_outline_size, check_site_span
from fringe.model.building import ACCESS_CLASSES, Room
from fringe.model.errors import ScenarioError, must_be

__all__ = ["DxfPlan", "read_dxf_plan", "load_dxf_rooms", "read_dxf_polygons",
           "metres_per_unit", "DXF_ROOM_OPTION_KEYS", "LAYER_ROLES", "UNIT_CHOICES",
           "LAYER_PREFIX"]

#: Option keys understood by the DXF room loader (the ``[[room_file]]`` keys that the
#: scenario passes through when ``format = "dxf"``).
DXF_ROOM_OPTION_KEYS: tuple[str, ...] = ("floor", "layers", "units", "offset_m", "name_from",
                                         "rotation_deg")

#: What a layer can hold: room access classes, wall outlines, or nothing of interest.
LAYER_ROLES: tuple[str, ...] = (*ACCESS_CLASSES, "wall", "ignore")

#: Unit names accepted in ``units`` → ``$INSUNITS`` code (DXF Reference).
UNIT_CHOICES: dict[str, int] = {"in": 1, "ft": 2, "mm": 4, "cm": 5, "m": 6, "dm": 14}

#: Prefix of every layer fringe writes (so a re-export replaces only our own layers).
LAYER_PREFIX: str = "FRINGE-"

#: Chord tolerance when flattening arcs (bulges), m.
_FLATTEN_M: float = 5e-4

_NAME_FROM = ("text", "layer")


def metres_per_unit(insunits: int) -> float:
    """Metres per drawing unit for a ``$INSUNITS`` code (``nan`` for unitless/unknown)."""
    from ezdxf.units import METER_FACTOR

    try:
        f = METER_FACTOR[int(insunits)]
    except (IndexError, ValueError, TypeError):
        return math.nan
    return math.nan if not f else 1.0 / f


# -- reading ----------------------------------------------------------------------------

@dataclass(frozen=True)
class DxfPlan:
    """What :func:`read_dxf_plan` found.

    Attributes
    ----------
    rooms : tuple of Room
        In site metres.
    walls : tuple of shapely geometry
        Outlines on ``"wall"`` layers (LineString or Polygon), site metres.
    insunits : int
        The ``$INSUNITS`` code used.
    metres_per_unit : float
    offset_m : (float, float)
    layers : tuple of str
        Every layer name the drawing declares (for messages and mapping help).
    rotation_deg : float
        Turn of the drawing about its origin before the offset, degrees counter-clockwise.
    """

    rooms: tuple[Room, ...]
    walls: tuple[Any, ...]
    insunits: int
    metres_per_unit: float
    offset_m: tuple[float, float]
    layers: tuple[str, ...]
    rotation_deg: float = 0.0


def _read_doc(path: Path, file_for_errors: str):
    import ezdxf

    if not path.is_file():
        raise ScenarioError("cannot read the DXF drawing: no such file", file_for_errors)
    try:
        return ezdxf.readfile(str(path))
    except Exception as e:  # noqa: BLE001 - any parser failure is a broken input file
        detail = str(e).strip().splitlines()[0] if str(e).strip() else type(e).__name__
        raise ScenarioError(f"not a readable DXF drawing ({detail})", file_for_errors) from None


def _options(options: Mapping | None, file: str):
    o = dict(options or {})
    unknown = [k for k in o if k not in DXF_ROOM_OPTION_KEYS]
    if unknown:
        raise ScenarioError(must_be(f"room_file.{unknown[0]}", "one of the DXF options "
                                    f"{', '.join(DXF_ROOM_OPTION_KEYS)}", unknown[0]), file)
    layers = o.get("layers")
    if layers is not None:
        if (not isinstance(layers, Mapping) or not layers
                or not all(isinstance(k, str) and isinstance(v, str) for k, v in layers.items())):
            raise ScenarioError(must_be("room_file.layers", "a table of layer name (or "
                                        "pattern) = role", layers), file)
        for k, v in layers.items():
            if v not in LAYER_ROLES:
                raise ScenarioError(must_be(f"room_file.layers.{k}",
                                            f"one of {', '.join(map(repr, LAYER_ROLES))}", v),
                                    file)
    units = o.get("units")
    if units is not None and units not in UNIT_CHOICES:
        raise ScenarioError(must_be("room_file.units",
                                    f"one of {', '.join(map(repr, UNIT_CHOICES))}", units), file)
    off = o.get("offset_m", (0.0, 0.0))
    if (not isinstance(off, (list, tuple)) or len(off) != 2
            or any(isinstance(x, bool) or not isinstance(x, (int, float)) or not math.isfinite(x)
                   for x in off)):
        raise ScenarioError(must_be("room_file.offset_m", "an array of 2 numbers (m)", off), file)
    name_from = o.get("name_from", "text")
    if name_from not in _NAME_FROM:
        raise ScenarioError(must_be("room_file.name_from",
                                    f"one of {', '.join(map(repr, _NAME_FROM))}", name_from), file)
    floor = o.get("floor")
    if floor is not None and (not isinstance(floor, str) or not floor):
        raise ScenarioError(must_be("room_file.floor", "a floor name", floor), file)
    rot = o.get("rotation_deg", 0.0)
    if (isinstance(rot, bool) or not isinstance(rot, (int, float)) or not math.isfinite(rot)
            or abs(rot) > 360.0):
        raise ScenarioError(must_be("room_file.rotation_deg", "a number of degrees from -360 "
                                    "to 360 (counter-clockwise)", rot), file)
    return floor, layers, units, (float(off[0]), float(off[1])), name_from, float(rot)


def _role(layer: str, layers: Mapping[str, str] | None) -> str:
    if layers is None:
        return "open"
    low = layer.lower()
    for pat, role in layers.items():  # exact names first, then patterns, in given order
        if pat.lower() == low:
            return role
    for pat, role in layers.items():
        if fnmatch.fnmatchcase(low, pat.lower()):
            return role
    return "ignore"


def _entity_xy(e, flatten_units: float) -> tuple[np.ndarray, bool]:
    """WCS x-y vertices of a polyline (arcs flattened) and whether it is closed."""
    from ezdxf import path as ezpath

    p = ezpath.make_path(e)
    pts = np.array([(v.x, v.y) for v in p.flattening(flatten_units)], dtype=float)
    if e.dxftype() == "LWPOLYLINE":
        closed = bool(e.closed)
    else:
        closed = bool(e.is_closed)
    if len(pts) >= 2 and np.allclose(pts[0], pts[-1], rtol=0.0, atol=flatten_units):
        closed = True
        pts = pts[:-1]
    return pts, closed


def _text_anchor(e) -> tuple[tuple[float, float], str] | None:
    if e.dxftype() == "MTEXT":
        p = e.dxf.insert
        text = e.plain_text()
    else:
        _, p1, p2 = e.get_placement()
        p = p1 if p2 is None else (p1 + p2) / 2
        p = e.ocs().to_wcs(p)
        text = e.plain_text()
    text = " ".join(str(text).split())
    return ((float(p.x), float(p.y)), text) if text else None


def _drawing_scale(doc, units: str | None, file: str) -> tuple[int, float]:
    """The drawing's unit code and metres per drawing unit (``units`` overrides)."""
    insunits = int(doc.header.get("$INSUNITS", 0) or 0)
    if units is not None:
        insunits = UNIT_CHOICES[units]
    mpu = metres_per_unit(insunits)
    if not math.isfinite(mpu):
        raise ScenarioError(must_be("$INSUNITS", "a length unit in the drawing header (or "
                                    f"`units` = one of {', '.join(map(repr, UNIT_CHOICES))} in "
                                    "the room_file table)", insunits), file)
    return insunits, mpu


def _wall_line(e):
    return shapely.LineString([(e.dxf.start.x, e.dxf.start.y), (e.dxf.end.x, e.dxf.end.y)])


def _outline_of(e, layer: str, flatten: float, file: str):
    """Vertices of a polyline and whether it is closed; one clear error if unreadable."""
    try:
        return _entity_xy(e, flatten)
    except Exception as err:  # noqa: BLE001 - malformed entity data
        raise ScenarioError(f"entity #{e.dxf.handle} on layer {layer!r} cannot be read "
                            f"({err})", file) from None


def _room_polygon(e, layer: str, pts, file: str):
    poly = shapely.Polygon(pts)
    if not shapely.is_valid(poly) or not poly.area > 0:
        reason = shapely.is_valid_reason(poly) if poly.area > 0 else "zero area"
        raise ScenarioError(must_be(f"entity #{e.dxf.handle} on layer {layer!r}",
                                    f"a valid simple closed outline (shapely: {reason})",
                                    f"{len(pts)} vertices"), file)
    return poly


def _outlines_and_walls(msp, layers, flatten: float, file: str):
    """Closed room outlines ``(polygon, layer, role, handle)`` and wall geometries."""
    outlines: list[tuple[Any, str, str, str]] = []
    walls: list[Any] = []
    for e in msp.query("LWPOLYLINE POLYLINE LINE"):
        layer = e.dxf.layer
        role = "ignore" if layer.upper().startswith(LAYER_PREFIX) else _role(layer, layers)
        if role == "ignore":  # our own zone layers are never rooms
            continue
        if e.dxftype() == "LINE":
            if role == "wall":
                walls.append(_wall_line(e))
            continue
        if e.dxftype() == "POLYLINE" and not (e.is_2d_polyline or e.is_3d_polyline):
            continue
        pts, closed = _outline_of(e, layer, flatten, file)
        if role == "wall":
            if len(pts) >= 2:
                walls.append(shapely.Polygon(pts) if closed and len(pts) >= 3
                             else shapely.LineString(pts))
        elif closed and len(pts) >= 3:
            outlines.append((_room_polygon(e, layer, pts, file), layer, role, e.dxf.handle))
    return outlines, walls


def _texts_by_outline(msp, outlines) -> dict[int, list[tuple[float, float, str]]]:
    """Each text goes to the smallest outline containing its anchor."""
    names: dict[int, list[tuple[float, float, str]]] = {}
    order = sorted(range(len(outlines)), key=lambda i: outlines[i][0].area)
    for t in msp.query("TEXT MTEXT"):
        a = _text_anchor(t)
        if a is None:
            continue
        pt = shapely.Point(a[0])
        for i in order:
            if outlines[i][0].covers(pt):
                names.setdefault(i, []).append((-a[0][1], a[0][0], a[1]))
                break
    return names


def _room_names(outlines, names: dict) -> list[str]:
    """A unique name per outline: its text, else its layer (numbered when shared)."""
    per_layer: dict[str, int] = {}
    for _, layer, _, _ in outlines:
        per_layer[layer] = per_layer.get(layer, 0) + 1
    seen_layer: dict[str, int] = {}
    used: dict[str, int] = {}
    out = []
    for i, (_, layer, _, _) in enumerate(outlines):
        seen_layer[layer] = seen_layer.get(layer, 0) + 1
        if i in names:
            name = sorted(names[i])[0][2]
        elif per_layer[layer] > 1:
            name = f"{layer} {seen_layer[layer]}"
        else:
            name = layer
        used[name] = used.get(name, 0) + 1
        if used[name] > 1:
            name = f"{name} ({used[name]})"
        out.append(name)
    return out


def _check_scaled_sizes(rooms, insunits: int, mpu: float, file: str) -> None:
    """Refuse rooms whose size after scaling to metres suggests the wrong drawing unit."""
    read_as = {v: k for k, v in UNIT_CHOICES.items()}.get(insunits, f"$INSUNITS {insunits}")
    fix = (f"the drawing was scaled as {read_as!r} ({mpu:g} m per unit); give the drawing's "
           "unit as `units` in the room_file table, e.g. units = \"mm\"")
    for rm in rooms:
        check_outline_size(rm.outline.bounds, f"room {rm.name!r}", file, fix=fix)
    check_site_span([rm.outline.bounds for rm in rooms], "the drawing's rooms", file, fix=fix)


def read_dxf_plan(path: str | Path, options: Mapping | None = None,
                  file_for_errors: str | None = None) -> DxfPlan:
    """Rooms and walls of a DXF floor plan, in site metres.

    Parameters
    ----------
    path : str or Path
        The DXF drawing.
    options : mapping, optional
        ``floor`` (str, required for rooms), ``layers`` (layer name or fnmatch pattern
        → role in :data:`LAYER_ROLES`; without it every layer holds ``"open"`` rooms;
        layers named ``FRINGE-…`` — the ones fringe writes — are always ignored),
        ``units`` (a key of :data:`UNIT_CHOICES`, overriding ``$INSUNITS``; required
        when the drawing is unitless), ``rotation_deg`` (the drawing turned
        counter-clockwise by this angle about its origin, after scaling; default 0),
        ``offset_m`` ([x, y] added after scaling and turning),
        ``name_from`` (``"text"``, default, or ``"layer"``).
    file_for_errors : str, optional
        Name used in error messages (default: ``path``).

    Returns
    -------
    DxfPlan

    Raises
    ------
    ScenarioError
        Unreadable drawing, missing units, no room outline, an outline that is not a
        valid simple polygon, or a bad option — always naming the file.
    """
    p = Path(path)
    file = file_for_errors or str(p)
    floor, layers, units, offset, name_from, rot = _options(options, file)
    doc = _read_doc(p, file)
    insunits, mpu = _drawing_scale(doc, units, file)
    msp = doc.modelspace()
    all_layers = tuple(sorted(layer.dxf.name for layer in doc.layers))
    outlines, walls = _outlines_and_walls(msp, layers, _FLATTEN_M / mpu, file)
    if not outlines:
        room_layers = [k for k, v in (layers or {}).items() if v in ACCESS_CLASSES]
        mapped = ("all layers" if layers is None
                  else f"layers mapped to rooms: {', '.join(room_layers) or 'none'}")
        raise ScenarioError(f"no closed room outline found ({mapped}; the drawing has "
                            f"layers {', '.join(map(repr, all_layers))})", file)
    if floor is None:
        raise ScenarioError("`room_file.floor` is missing; rooms read from a DXF drawing need "
                            "the floor they stand on", file)
    names = _texts_by_outline(msp, outlines) if name_from == "text" else {}
    rooms = tuple(Room(name, floor, shapely.normalize(_affine(poly, mpu, offset, rot)), role)
                  for name, (poly, _, role, _) in zip(_room_names(outlines, names), outlines,
                                                      strict=True))
    _check_scaled_sizes(rooms, insunits, mpu, file)
    walls_site = tuple(_affine(w, mpu, offset, rot) for w in walls)
    return DxfPlan(rooms, walls_site, insunits, mpu, offset, all_layers, rot)


def load_dxf_rooms(path: str | Path, options: dict, file_for_errors: str) -> DxfPlan:
    """Room loader for ``[[room_file]] format = "dxf"``: the whole :class:`DxfPlan`
    (rooms, walls, offset), read once (see :func:`read_dxf_plan`)."""
    return read_dxf_plan(path, options, file_for_errors)


#: The scenario keys this loader takes from its ``[[room_file]]`` table (the parser
#: forwards every key listed here that the table has).
load_dxf_rooms.option_keys = DXF_ROOM_OPTION_KEYS  # type: ignore[attr-defined]


# -- geometry helpers ---------------------------------------------------------------------

def _affine(geom, scale: float, offset: tuple[float, float], rotation_deg: float = 0.0):
    """p' = R(rotation_deg)·scale·p + offset (R counter-clockwise about the origin)."""
    a = math.radians(rotation_deg)
    c, s = scale * math.cos(a), scale * math.sin(a)
    return shapely.affinity.affine_transform(geom, [c, -s, s, c, offset[0], offset[1]])


def _polygons(geom) -> list:
    if geom is None or shapely.is_empty(geom):
        return []
    if geom.geom_type == "Polygon":
        return [geom]
    if geom.geom_type in ("MultiPolygon", "GeometryCollection"):
        return [g for part in geom.geoms for g in _polygons(part)]
    return []


def _ring_xy(ring) -> np.ndarray:
    xy = np.asarray(ring.coords, dtype=float)[:, :2]
    return xy[:-1] if len(xy) > 1 and np.array_equal(xy[0], xy[-1]) else xy


def read_dxf_polygons(path: str | Path, layer: str, *, offset_m: tuple[float, float] = (0.0, 0.0),
                      units: str | None = None, rotation_deg: float = 0.0) -> shapely.Geometry:
    """Closed LWPOLYLINEs of one layer as a shapely MultiPolygon in site metres.

    Rings are nested by the even-odd rule (a ring inside an odd number of others is a
    hole of the smallest ring containing it), which inverts
    :func:`fringe.render.dxf.write_zones_dxf`.
    """
    p = Path(path)
    doc = _read_doc(p, str(p))
    insunits = UNIT_CHOICES[units] if units else int(doc.header.get("$INSUNITS", 0) or 0)
    mpu = metres_per_unit(insunits)
    if not math.isfinite(mpu):
        raise ScenarioError(must_be("$INSUNITS", "a length unit", insunits), str(p))
    rings = []
    for e in doc.modelspace().query(f'LWPOLYLINE[layer=="{layer}"]'):
        pts, closed = _entity_xy(e, _FLATTEN_M / mpu)
        if closed and len(pts) >= 3:
            rings.append(shapely.Polygon(pts))
    rings.sort(key=lambda r: r.area, reverse=True)
    depth = [0] * len(rings)
    parent = [-1] * len(rings)
    for i, r in enumerate(rings):
        pt = r.representative_point()
        for j in range(i - 1, -1, -1):  # smallest larger ring first
            if rings[j].contains(pt) and rings[j].area > r.area:
                parent[i] = j
                depth[i] = depth[j] + 1
                break
    shells = []
    for i, r in enumerate(rings):
        if depth[i] % 2 == 0:
            holes = [rings[k].exterior for k in range(len(rings)) if parent[k] == i]
            shells.append(shapely.Polygon(r.exterior, holes))
    return _affine(shapely.MultiPolygon(shells), mpu, offset_m, rotation_deg)

