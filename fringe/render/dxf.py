"""DXF zone drawings (through ezdxf): footprints and the attraction zone as layers.

:func:`write_zones_dxf` writes shapely (multi)polygons — footprints per threshold,
holes kept, and the attraction zone — as closed LWPOLYLINEs (one per ring) on layers
named by :func:`zone_layer_name` (``FRINGE-0_5MT``, ``FRINGE-ATTRACTION``), in the units
of a template drawing (the user's own plan, copied with every entity it had) or of
the ``units`` asked for. An MTEXT on ``FRINGE-NOTES`` carries the advisory notice.
Each layer's true colour comes from :mod:`fringe.render.style` (:func:`layer_rgb`): a
threshold has the same colour here as on the sheets, on every floor.
:func:`fringe.io.dxf.read_dxf_polygons` reads a layer back.

References
----------
Autodesk, *DXF Reference* (AutoCAD 2012 and later): header variable ``$INSUNITS``,
entities LWPOLYLINE, MTEXT, layer true colour. ezdxf documentation, https://ezdxf.mozman.at.
"""

from __future__ import annotations

import math
import re
from collections.abc import Mapping
from pathlib import Path
from typing import Any

import numpy as np

from fringe.io.atomic import atomic_file
from fringe.io.dxf import (
    LAYER_PREFIX,
    UNIT_CHOICES,
    _affine,
    _polygons,
    _read_doc,
    _ring_xy,
    metres_per_unit,
)
from fringe.model.constants import ADVISORY_NOTICE, FIELD_BASIS_NOTE
from fringe.model.errors import FringeInputError, FringeIOError, must_be
from fringe.render.style import HAZARD_COLOR, INK_COLOR, STEEL_COLOR, hex_to_rgb, threshold_rgb

__all__ = ["write_zones_dxf", "zone_layer_name", "layer_threshold_mT", "layer_rgb",
           "ATTRACTION_LAYER", "NOTES_LAYER", "ROOMS_LAYER", "EQUIPMENT_LAYER",
           "ENVELOPE_LAYER", "MAGNET_LAYER", "STEEL_LAYER", "BOUNDARY_LINEWEIGHT", "LINEWEIGHT",
           "LABEL_HEIGHT_M"]

#: Layer of the attraction zone.
ATTRACTION_LAYER: str = "FRINGE-ATTRACTION"
#: Layer of the advisory notice and legend text.
NOTES_LAYER: str = "FRINGE-NOTES"
#: Layer of the room outlines and names (whatever the room source).
ROOMS_LAYER: str = "FRINGE-ROOMS"
#: Layer of the equipment outlines (a diamond marker for a point) and names.
EQUIPMENT_LAYER: str = "FRINGE-EQUIPMENT"
#: Layer of the cryostat envelopes' plan outlines.
ENVELOPE_LAYER: str = "FRINGE-ENVELOPE"
#: Layer of the magnets' plan outlines (the windings).
MAGNET_LAYER: str = "FRINGE-MAGNET"
#: Layer of the steel parts' plan outlines and names ([[steel]]; docs/steel.md).
STEEL_LAYER: str = "FRINGE-STEEL"
#: Lineweight of the controlled-area boundary's layer and lines, 1/100 mm (0.70 mm).
BOUNDARY_LINEWEIGHT: int = 70
#: Lineweight of every other layer fringe writes, 1/100 mm (0.25 mm).
LINEWEIGHT: int = 25
#: Height of the value labels and names, metres on site (scaled to the drawing units).
LABEL_HEIGHT_M: float = 0.25

_ZONE_LAYER = re.compile(re.escape(LAYER_PREFIX) + r"([0-9_eE+-]+)MT")


def zone_layer_name(threshold_mT: float) -> str:
    """Layer name for a footprint: ``FRINGE-0_5MT`` for 0.5 mT, ``FRINGE-200MT`` for 200 mT.

    >>> zone_layer_name(0.5), zone_layer_name(3), zone_layer_name(0.25)
    ('FRINGE-0_5MT', 'FRINGE-3MT', 'FRINGE-0_25MT')
    """
    t = float(threshold_mT)
    if not (math.isfinite(t) and t > 0):
        raise FringeInputError(must_be("threshold_mT", "a positive number", threshold_mT))
    return f"{LAYER_PREFIX}{f'{t:g}'.replace('.', '_')}MT"


def layer_threshold_mT(name: str) -> float | None:
    """The threshold (mT) of a footprint layer named by :func:`zone_layer_name`, else None.

    >>> layer_threshold_mT("FRINGE-0_5MT"), layer_threshold_mT("FRINGE-ATTRACTION")
    (0.5, None)
    """
    m = _ZONE_LAYER.fullmatch(name)
    if m is None:
        return None
    try:
        return float(m.group(1).replace("_", "."))
    except ValueError:
        return None



def layer_rgb(name: str) -> tuple[int, int, int]:
    """The true colour of a layer fringe writes, (r, g, b) 0–255, from :mod:`fringe.render.style`.

    A footprint layer (:func:`zone_layer_name`) takes the colour of its threshold — the
    colour of that threshold's band on the plan and section sheets, the same in every
    floor's drawing; the attraction zone takes the hazard colour, the notes the ink.
    """
    if name == ATTRACTION_LAYER:
        return hex_to_rgb(HAZARD_COLOR)
    if name == STEEL_LAYER:
        return hex_to_rgb(STEEL_COLOR)
    t = layer_threshold_mT(name)
    return hex_to_rgb(INK_COLOR) if t is None else threshold_rgb(t)


def _drawing(template, units: str | None):
    """The drawing to write into and its ``$INSUNITS``: a copy of ``template`` without
    its ``FRINGE-`` entities (units set when it has none), or a new drawing in ``units``."""
    import ezdxf

    if template is None:
        insunits = UNIT_CHOICES[units or "m"]
        return ezdxf.new("R2010", setup=False, units=insunits), insunits
    doc = _read_doc(Path(template), str(template))
    insunits = int(doc.header.get("$INSUNITS", 0) or 0)
    if not math.isfinite(metres_per_unit(insunits)):
        insunits = UNIT_CHOICES[units or "m"]
        doc.header["$INSUNITS"] = insunits
    msp = doc.modelspace()
    for e in list(msp):
        if e.dxf.layer.upper().startswith(LAYER_PREFIX):
            msp.delete_entity(e)
    return doc, insunits


def _add_outlines(msp, layer: str, g, lineweight: int = LINEWEIGHT) -> np.ndarray:
    """LWPOLYLINEs of geometry ``g`` (drawing units) on ``layer``: one closed polyline per
    polygon ring, one open polyline per line. Returns the lowest (x, y) drawn (inf if
    none)."""
    lo = np.array([np.inf, np.inf])
    for poly in _polygons(g):
        for ring in (poly.exterior, *poly.interiors):
            xy = _ring_xy(ring)
            msp.add_lwpolyline(xy.tolist(), close=True,
                               dxfattribs={"layer": layer, "lineweight": lineweight})
            lo = np.minimum(lo, xy.min(axis=0))
    if g is not None and g.geom_type in ("LineString", "MultiLineString"):
        for line in getattr(g, "geoms", [g]):
            xy = np.asarray(line.coords)[:, :2]
            msp.add_lwpolyline(xy.tolist(), dxfattribs={"layer": layer,
                                                        "lineweight": lineweight})
            lo = np.minimum(lo, xy.min(axis=0))
    return lo


def _label_points(g) -> list[tuple[float, float]]:
    """Where a threshold line's value labels go (drawing units): on the outer ring of each
    polygon at least a quarter the area of the layer's largest, at its vertex with the
    largest y — the top of the line, where nested lines of a magnet are stacked apart
    vertically, so labels centred there stay clear of one another."""
    polys = _polygons(g)
    if not polys:
        return []
    big = max(p.area for p in polys)
    pts = []
    for poly in polys:
        xy = _ring_xy(poly.exterior)
        if len(xy) and poly.area >= 0.25 * big:
            x, y = xy[int(np.argmax(xy[:, 1]))]
            pts.append((float(x), float(y)))
    return pts


def _set_extents(doc, msp) -> None:
    """``$EXTMIN``/``$EXTMAX`` from the model space's bounding box (ezdxf.bbox); set on
    the model space layout too, which ezdxf copies into the header when saving."""
    from ezdxf import bbox

    box = bbox.extents(msp, fast=True)
    if box.has_data:
        lo, hi = (box.extmin.x, box.extmin.y, 0.0), (box.extmax.x, box.extmax.y, 0.0)
        msp.dxf.extmin, msp.dxf.extmax = lo, hi
        doc.header["$EXTMIN"], doc.header["$EXTMAX"] = lo, hi


def write_zones_dxf(path: str | Path, zones: Mapping[str, Any], *,
                    template: str | Path | None = None, units: str | None = None,
                    offset_m: tuple[float, float] = (0.0, 0.0), notes: str = "",
                    colors: Mapping[str, tuple[int, int, int]] | None = None,
                    boundary_layer: str | None = None,
                    texts: Mapping[str, Any] | None = None) -> int:
    """Write zone outlines as DXF layers, atomically.

    Parameters
    ----------
    path : str or Path
        Output ``.dxf``; written to a temporary name and renamed.
    zones : mapping of layer name → shapely geometry
        Site-frame metres; Polygon/MultiPolygon (each ring becomes one closed
        LWPOLYLINE, holes included) or LineString. Layer names must start with
        :data:`LAYER_PREFIX` (use :func:`zone_layer_name` / :data:`ATTRACTION_LAYER`, or
        :data:`ROOMS_LAYER`, :data:`EQUIPMENT_LAYER`, :data:`ENVELOPE_LAYER`,
        :data:`MAGNET_LAYER`). Each polygon of a threshold layer gets a TEXT with its value
        (``"0.5 mT"``) on that layer, bottom centre at the outer ring's vertex with
        the largest y, :data:`LABEL_HEIGHT_M` high (polygons under a quarter of the
        layer's largest are not labelled).
    template : str or Path, optional
        A drawing to copy (the user's plan): its units are used and its entities kept;
        entities already on ``FRINGE-`` layers are replaced.
    units : str, optional
        Key of :data:`UNIT_CHOICES` for a new drawing (default ``"m"``), or for a
        unitless template.
    offset_m : (float, float)
        Site origin offset as in :func:`read_dxf_plan`:
        ``drawing_xy = (site_xy − offset_m) / metres_per_unit``.
    notes : str
        Extra lines for the notes MTEXT (e.g. the attraction criterion); the advisory
        notice is always written.
    colors : mapping, optional
        Layer → (r, g, b) 0–255; by default :func:`layer_rgb` (the threshold's colour
        on the sheets, :func:`fringe.render.style.threshold_rgb`).
    boundary_layer : str, optional
        The controlled-area boundary's layer (one of ``zones``): its layer and lines get
        lineweight :data:`BOUNDARY_LINEWEIGHT` (0.70 mm), every other layer
        :data:`LINEWEIGHT` (0.25 mm).
    texts : mapping, optional
        Layer → sequence of ``(text, (x_m, y_m))``: names written as TEXT on that layer
        (e.g. room names at a point inside each room), site-frame metres.

    The drawing extents (``$EXTMIN``, ``$EXTMAX``) are set to the model space's
    bounding box.

    Returns
    -------
    int
        The ``$INSUNITS`` code of the written drawing.
    """
    for name in zones:
        if not isinstance(name, str) or not name.startswith(LAYER_PREFIX):
            raise FringeInputError(must_be("zones", f"keyed by layer names starting with "
                                           f"{LAYER_PREFIX!r}", name))
    if units is not None and units not in UNIT_CHOICES:
        raise FringeInputError(must_be("units", f"one of {', '.join(map(repr, UNIT_CHOICES))}",
                                       units))
    doc, insunits = _drawing(template, units)
    msp = doc.modelspace()
    mpu = metres_per_unit(insunits)
    inv = 1.0 / mpu
    shift = (-offset_m[0] * inv, -offset_m[1] * inv)
    texts = dict(texts or {})
    for name in texts:
        if not isinstance(name, str) or not name.startswith(LAYER_PREFIX):
            raise FringeInputError(must_be("texts", f"keyed by layer names starting with "
                                           f"{LAYER_PREFIX!r}", name))
    names = list(dict.fromkeys([*zones, *texts, NOTES_LAYER]))
    rgb = {name: layer_rgb(name) for name in names}
    rgb.update(colors or {})
    weight = {name: BOUNDARY_LINEWEIGHT if name == boundary_layer else LINEWEIGHT
              for name in names}
    for name in names:
        layer = doc.layers.get(name) if doc.layers.has_entry(name) else doc.layers.add(name)
        layer.rgb = rgb[name]
        layer.dxf.lineweight = weight[name]
    doc.header["$LWDISPLAY"] = 1
    height = LABEL_HEIGHT_M * inv
    lo = np.array([np.inf, np.inf])
    for name, geom in zones.items():
        g = _affine(geom, inv, shift) if geom is not None else None
        lo = np.minimum(lo, _add_outlines(msp, name, g, weight[name]))
        t = layer_threshold_mT(name)
        if t is not None and g is not None:
            for x, y in _label_points(g):
                msp.add_text(f"{t:g} mT", height=height, dxfattribs={
                    "layer": name, "insert": (x, y), "align_point": (x, y),
                    "halign": 1, "valign": 1})  # bottom centre on the line
    for name, items in texts.items():
        for text, (x, y) in items:
            xy = ((x - offset_m[0]) * inv, (y - offset_m[1]) * inv)
            msp.add_text(str(text), height=height, dxfattribs={"layer": name, "insert": xy})
    if not np.all(np.isfinite(lo)):
        lo = np.zeros(2)
    text = (ADVISORY_NOTICE + "\\P" + FIELD_BASIS_NOTE
            + ("\\P" + notes.replace("\n", "\\P") if notes else ""))
    msp.add_mtext(text, dxfattribs={"layer": NOTES_LAYER, "char_height": 0.2 * inv,
                                    "width": 20.0 * inv, "insert": (lo[0], lo[1] - 0.5 * inv),
                                    "attachment_point": 1})
    _set_extents(doc, msp)
    p = Path(path)
    try:
        with atomic_file(p) as tmp:
            doc.saveas(str(tmp))
    except OSError as e:
        raise FringeIOError(f"{p}: cannot write the DXF drawing ({e.strerror or e})") from None
    return insunits
