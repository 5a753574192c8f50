"""Drawing sheets: floor plans and sections of a field (or any scalar map), in mT.

Plans and sections are filled-band maps with labelled threshold lines, the controlled
access area boundary drawn emphasised, rooms with verdicts, magnet outlines, equipment
markers, extra layers (attraction zone, energy-density lines), scale bar and north arrow,
on the common sheet frame of :mod:`fringe.render.sheet` (title block, key column, advisory
notice). This module also re-exports the rest of the sheet set (curves, tables, cover,
saving, PDF sets), so one import serves every caller.

The functions take plain numpy arrays, shapely geometries and the small frozen
dataclasses below; they know nothing of magpylib or the field engine.

Public functions
----------------
``map_sheet``       generic filled-band map (any quantity, any unit) in plan x-y
``plan_sheet``      field map of a floor in mT (thin wrapper of ``map_sheet``)
``section_sheet``   vertical section with floors, windings and exposure lines
``curve_sheet``, ``table_sheet``, ``tables_sheets``, ``cover_sheet``, ``save_figure``,
``write_pdf``, ``number_sheets``
                    from :mod:`fringe.render.sheet`
"""

from __future__ import annotations

import dataclasses
import math
import textwrap
from collections.abc import Sequence
from dataclasses import dataclass
from typing import Any

import matplotlib
import numpy as np
import shapely
from matplotlib import patheffects
from matplotlib.figure import Figure
from matplotlib.lines import Line2D
from matplotlib.patches import Patch, PathPatch, Rectangle
from matplotlib.path import Path as MplPath
from matplotlib.text import Annotation, Text
from matplotlib.transforms import Affine2D, Bbox, ScaledTranslation, blended_transform_factory
from shapely.geometry import LineString, Point, Polygon, box
from shapely.ops import polylabel

from fringe.analysis.geometry import footprint_rectangle
from fringe.model.constants import DEFAULT_THRESHOLDS_MT
from fringe.model.errors import FringeInputError, must_be
from fringe.model.verdict import Verdict
from fringe.render.sheet import (
    _HALO,
    _INK,
    A3_LANDSCAPE_IN,
    PNG_DPI,
    Curve,
    CurvePanel,
    SheetInfo,
    _draw_frame,
    _draw_key_column,
    _new_figure,
    _renderer,
    _short,
    cover_sheet,
    curve_sheet,
    format_field,
    format_mT,
    format_value,
    number_sheets,
    save_figure,
    table_sheet,
    tables_sheets,
    write_pdf,
)
from fringe.render.style import HAZARD_COLOR, STEEL_COLOR, threshold_color

__all__ = [
    "SheetInfo", "RoomMark", "EquipmentMark", "MagnetOutline", "Overlay", "FloorLevel",
    "ExposureLine", "Curve", "CurvePanel", "OVERLAY_KINDS", "ICNIRP_2009_EXPOSURE_LINES",
    "exposure_lines_from_registry",
    "A3_LANDSCAPE_IN", "PNG_DPI", "map_sheet", "plan_sheet",
    "section_sheet", "curve_sheet", "table_sheet", "tables_sheets", "cover_sheet",
    "save_figure", "write_pdf", "number_sheets", "footprint_rectangle", "format_value",
    "format_field", "format_mT",
    "scale_bar_length_m",
]


_EXPOSURE_COLOR = HAZARD_COLOR
_EXPOSURE_STYLES = [(0, (7, 2, 1.5, 2)), (0, (4, 1.5)), (0, (1.2, 1.5)), (0, (9, 3))]
_MAIN = (0.055, 0.185, 0.655, 0.775)


@dataclass(frozen=True)
class RoomMark:
    """A room as drawn on a plan.

    Parameters
    ----------
    name : str
    polygon : shapely.Polygon or shapely.MultiPolygon
        Outline in site x-y metres (holes allowed).
    access : str
        "controlled" or "open"; controlled rooms are labelled so.
    verdict : str or None
        Free text from the checks (e.g. "ok", "exceeds"); ``"exceeds"`` is drawn
        hatched with a bold outline and upper-case text.
    max_field_T : float or None
        Largest |B| in the room's occupied band, T (printed in mT, in T from 1 T).
    limit_T : float or None
        The limit the verdict was made against, T (printed in mT).
    note : str
        A short extra line under the label (e.g. "above band: exceeds at ceiling").
    """

    name: str
    polygon: Any
    access: str = "open"
    verdict: str | None = None
    max_field_T: float | None = None
    limit_T: float | None = None
    note: str = ""


@dataclass(frozen=True)
class EquipmentMark:
    """A piece of sensitive equipment as drawn on a plan.

    Parameters
    ----------
    name : str
    xy_m : tuple of float
        Position in the drawing's coordinates, m (plan: site x, y).
    field_T : float or None
        |B| there, T (printed in mT, in T from 1 T).
    limit_T : float or None
        Its tolerance, T (printed in mT).
    verdict : str or None
        Free text; ``"exceeds"`` is drawn with a filled marker and upper-case text.
    outline : shapely.Polygon or None
        The plan outline of a volume of equipment, drawn dash-dotted (hatched when it
        exceeds); the marker stands at ``xy_m`` (e.g. where its largest field is).
    """

    name: str
    xy_m: tuple[float, float]
    field_T: float | None = None
    limit_T: float | None = None
    verdict: str | None = None
    outline: Any = None


@dataclass(frozen=True)
class MagnetOutline:
    """A magnet's winding footprint (plan) or winding cross-section (section), and
    optionally its cryostat envelope (plan outline or cut), drawn beneath as not
    accessible."""

    name: str
    polygon: Any
    envelope: Any = None


#: Styles of extra line layers; the key is ``Overlay.kind``.
#: hazard  : hatched area with a bold outline (e.g. the attraction-hazard zone);
#: outline : dashed line (e.g. an extra footprint, a proposed wall);
#: contour : dotted line (e.g. energy-density contours);
#: wall    : solid heavy grey line (walls read from a CAD drawing; grey, so it is never
#:           mistaken for the black boundary line).
#: steel   : grey outline hatched with fine diagonals (a steel part of the building), its
#:           name written at its top left corner (``Overlay.name``).
OVERLAY_KINDS: dict[str, dict[str, Any]] = {
    "wall": {"hatch": None, "edgecolor": "0.6", "linewidth": 3.4, "linestyle": "-",
             "zorder": 2.2},  # under the field lines, above the bands
    "hazard": {"hatch": "xx", "edgecolor": HAZARD_COLOR, "linewidth": 1.6, "linestyle": "-"},
    "steel": {"hatch": "////", "edgecolor": STEEL_COLOR, "linewidth": 1.3, "linestyle": "-"},
    "outline": {"hatch": None, "edgecolor": "0.1", "linewidth": 1.2, "linestyle": (0, (6, 3))},
    "contour": {"hatch": None, "edgecolor": HAZARD_COLOR, "linewidth": 1.0,
                "linestyle": (0, (1, 1.5))},
    # regions where an implant condition's limit is passed: one line style per condition
    "condition-1": {"hatch": "///", "edgecolor": HAZARD_COLOR, "linewidth": 1.5,
                    "linestyle": (0, (5, 1.5, 1, 1.5))},
    "condition-2": {"hatch": "\\\\\\", "edgecolor": HAZARD_COLOR, "linewidth": 1.5,
                    "linestyle": (0, (10, 2.5))},
    "condition-3": {"hatch": "...", "edgecolor": HAZARD_COLOR, "linewidth": 1.5,
                    "linestyle": (0, (1, 1.5))},
}


@dataclass(frozen=True)
class Overlay:
    """An extra layer: a labelled shapely geometry drawn in one of :data:`OVERLAY_KINDS`.

    ``label`` goes into the legend (once, however many overlays share it); ``name``, if
    given, is written on the drawing at the geometry's top left corner.
    """

    label: str
    geometry: Any
    kind: str = "hazard"
    name: str = ""


@dataclass(frozen=True)
class FloorLevel:
    """A floor on a section: slab level and occupied band (same fields as ``plan.Floor``).

    Parameters
    ----------
    name : str
    elevation_m : float
        Finished-floor level, site z, m.
    band_bottom_m, band_top_m : float
        Occupied band above the floor, m.
    """

    name: str
    elevation_m: float
    band_bottom_m: float = 0.0
    band_top_m: float = 2.0


@dataclass(frozen=True)
class ExposureLine:
    """A static-field exposure value drawn as a labelled line on a section.

    Parameters
    ----------
    value_T : float
        |B| of the line, T.
    label : str
        Short label printed on the line.
    source : str
        Publication the value comes from, printed in the notes.
    """

    value_T: float
    label: str
    source: str


def exposure_lines_from_registry(names=None) -> tuple[ExposureLine, ...]:
    """Exposure lines of :data:`fringe.physics.exposure.EXPOSURE_LIMITS` (the one registry of the
    values and their sources), lowest field first; ``names`` picks registry keys."""
    from fringe.physics.exposure import exposure_limits

    return tuple(ExposureLine(e.field_T, e.line_label, e.source)
                 for e in exposure_limits(names))


#: ICNIRP 2009 static-field exposure limits (Table 1 of the guideline): 400 mT general
#: public; 2 T occupational, head and trunk; 8 T occupational, limbs — read from
#: :data:`fringe.physics.exposure.EXPOSURE_LIMITS`.
ICNIRP_2009_EXPOSURE_LINES: tuple[ExposureLine, ...] = exposure_lines_from_registry()


def scale_bar_length_m(span_m: float) -> float:
    """A round scale-bar length (1, 2 or 5 × 10ᵏ m) of at most a quarter of ``span_m``.

    >>> scale_bar_length_m(20.0), scale_bar_length_m(60.0), scale_bar_length_m(7.0)
    (5.0, 10.0, 1.0)
    """
    target = span_m / 4.0
    k = math.floor(math.log10(target))
    for m in (5, 2, 1):
        if m * 10**k <= target:
            return float(m * 10**k)
    return float(10**k)


def _polygon_path(geom) -> MplPath:
    """A matplotlib path for a (Multi)Polygon, holes kept (even-odd compound path)."""
    polys = _polygons_of(geom)
    verts, codes = [], []
    for p in polys:
        for ring in (p.exterior, *p.interiors):
            xy = np.asarray(ring.coords)
            if len(xy) < 3:
                continue
            verts.append(xy)
            c = np.full(len(xy), MplPath.LINETO, dtype=MplPath.code_type)
            c[0] = MplPath.MOVETO
            c[-1] = MplPath.CLOSEPOLY
            codes.append(c)
    if not verts:
        return MplPath(np.zeros((0, 2)))
    return MplPath(np.concatenate(verts), np.concatenate(codes))


def _polygons_of(geom) -> list[Polygon]:
    if geom is None or geom.is_empty:
        return []
    if geom.geom_type == "Polygon":
        return [geom]
    if hasattr(geom, "geoms"):
        out: list[Polygon] = []
        for g in geom.geoms:
            out.extend(_polygons_of(g))
        return out
    return []


def _lines_of(geom) -> list[np.ndarray]:
    if geom is None or geom.is_empty:
        return []
    t = geom.geom_type
    if t in ("LineString", "LinearRing"):
        return [np.asarray(geom.coords)]
    if t == "Polygon":
        return [np.asarray(r.coords) for r in (geom.exterior, *geom.interiors)]
    if hasattr(geom, "geoms"):
        out: list[np.ndarray] = []
        for g in geom.geoms:
            out.extend(_lines_of(g))
        return out
    return []


def _check_geometry(key: str, geom, *, area: bool) -> None:
    ok = isinstance(geom, shapely.Geometry) and not geom.is_empty
    if ok and area:
        ok = geom.geom_type in ("Polygon", "MultiPolygon")
    if not ok:
        what = "a non-empty shapely Polygon or MultiPolygon" if area else \
            "a non-empty shapely geometry"
        raise FringeInputError(must_be(key, what, geom if not isinstance(
            geom, shapely.Geometry) else geom.wkt[:60]))


def _check_axis(key: str, a) -> np.ndarray:
    arr = np.asarray(a, dtype=float)
    if arr.ndim != 1 or arr.size < 2 or not np.all(np.isfinite(arr)) \
            or not np.all(np.diff(arr) > 0):
        raise FringeInputError(must_be(key, "a 1-D strictly increasing array of at least "
                                       "2 finite values in metres",
                                       _short(arr)))
    return arr


def _check_levels(key: str, levels, *, positive: bool) -> np.ndarray:
    try:
        lv = np.asarray(levels, dtype=float).ravel()
    except (TypeError, ValueError):
        raise FringeInputError(must_be(key, "a list of numbers", levels)) from None
    if lv.size == 0:
        raise FringeInputError(must_be(key, "a non-empty list of levels", list(lv)))
    if not np.all(np.isfinite(lv)) or (positive and np.any(lv <= 0)):
        raise FringeInputError(must_be(key, "finite" + (" positive" if positive else "")
                                       + " numbers", list(lv)))
    lv = np.unique(lv)
    return lv


def _band_colors(cmap: str | None, levels: Sequence[float], palette=None) -> list:
    """One colour per level: ``palette(level)`` when given (e.g.
    :func:`fringe.render.style.threshold_color`, a colour fixed by the value), else evenly
    spaced along the perceptually uniform colormap ``cmap``, lowest band lightest."""
    if palette is not None:
        return [palette(float(v)) for v in levels]
    n = len(levels)
    cm = matplotlib.colormaps[cmap]
    ts = np.linspace(0.0, 0.78, n) if n > 1 else np.array([0.0])
    return [cm(float(t)) for t in ts]


def _log_or_linear(values, log: bool) -> np.ndarray:
    v = np.asarray(values, float)
    if not log:
        return v
    with np.errstate(divide="ignore", invalid="ignore"):
        return np.where(v > 0, np.log10(np.where(v > 0, v, 1.0)), np.nan)


@dataclass
class _LineSet:
    """Contour lines waiting for labels: placed after rooms so they avoid room names."""

    cs: Any
    labels: list[str]
    short_labels: list[str]
    fontsize: float
    weight: str
    color: Any
    beside: bool = False  # label alongside the line (line left unbroken), not inline
    near_fallback: list[str] | None = None  # level labels set next to small loops


def _draw_bands(ax, x, y, values, levels, *, unit: str, boundary_level: float | None,
                boundary_label: str | None, cmap: str | None, band_alpha: float,
                log_contours: bool, palette=None,
                show_gauss: bool = False) -> tuple[list, list[_LineSet]]:
    """Filled bands between consecutive levels, contour lines, emphasised boundary.

    Returns legend entries (handle, label) and the unlabelled line sets (boundary first).
    With ``show_gauss`` (and ``unit`` "mT") every level also reads in gauss, in brackets.
    """
    def lab(lo: float, hi: float | None = None) -> str:
        if unit == "mT":
            return format_mT(lo, hi, show_gauss)
        if hi is None:
            return f"{format_value(lo)} {unit}"
        return f"{format_value(lo)} to {format_value(hi)} {unit}"

    vals = np.asarray(values, float)
    finite = vals[np.isfinite(vals)]
    vmax = float(finite.max()) if finite.size else -np.inf
    vmin = float(finite.min()) if finite.size else np.inf
    fill_levels = list(levels)
    if vmax > levels[-1]:
        fill_levels.append(vmax * (1.0 + 1e-9) if vmax > 0 else vmax + 1e-12)
    n_bands = len(fill_levels) - 1
    colors = _band_colors(cmap, levels, palette)  # one colour per "at least level i" band
    Z = _log_or_linear(vals, log_contours)
    entries: list = []
    if n_bands >= 1 and vmax > levels[0]:
        ax.contourf(x, y, Z, levels=_log_or_linear(fill_levels, log_contours),
                    colors=colors[:n_bands], alpha=band_alpha, zorder=1, antialiased=True)
    for i in range(len(levels) - 1, -1, -1):  # legend: highest band first
        lo = levels[i]
        if i == len(levels) - 1:
            text = f"at least {lab(lo)}"
        else:
            text = lab(lo, levels[i + 1])
        entries.append((Patch(facecolor=colors[i], alpha=band_alpha, edgecolor="0.4",
                              linewidth=0.5), text))
    entries.append((Patch(facecolor="white", edgecolor="0.4", linewidth=0.5),
                    f"below {lab(levels[0])} (no fill)"))
    sets: list[_LineSet] = []
    if boundary_level is not None:
        blabel = boundary_label or lab(boundary_level)
        if vmin < boundary_level < vmax:
            csb = ax.contour(x, y, Z, levels=_log_or_linear([boundary_level], log_contours),
                             colors=_INK, linewidths=2.6, linestyles="solid", zorder=4)
            short = lab(boundary_level)
            sets.append(_LineSet(csb, [blabel], [short + " boundary"], 8.5, "bold", _INK,
                                 beside=True, near_fallback=[short]))
        reached = vmin < boundary_level < vmax
        entries.append((Line2D([], [], color=_INK, linewidth=2.6),
                        blabel if reached else blabel + " (not reached on this sheet)"))
    plain = [lv for lv in levels if vmin < lv < vmax and (boundary_level is None or not
             math.isclose(lv, boundary_level, rel_tol=1e-9))]
    if plain:
        cs = ax.contour(x, y, Z, levels=_log_or_linear(plain, log_contours), colors=_INK,
                        linewidths=0.7, linestyles="solid", zorder=3)
        texts = [lab(v) for v in plain]
        sets.append(_LineSet(cs, texts, texts, 7.5, "normal", _INK))
    entries.append((Line2D([], [], color=_INK, linewidth=0.7),
                    f"threshold lines, labelled in {unit}"))
    return entries, sets


def _text_size_px(ax, renderer, text: str, fontsize: float, weight: str) -> tuple[float, float]:
    t = ax.text(0, 0, text, fontsize=fontsize, fontweight=weight)
    bb = t.get_window_extent(renderer)
    t.remove()
    return bb.width, bb.height


def _clearance(box: Bbox, occupied: list[Bbox]) -> float:
    """Smallest gap in px between ``box`` and any occupied box (0 if overlapping)."""
    best = math.inf
    for o in occupied:
        dx = max(o.x0 - box.x1, box.x0 - o.x1, 0.0)
        dy = max(o.y0 - box.y1, box.y0 - o.y1, 0.0)
        best = min(best, math.hypot(dx, dy))
    return best


def _label_lines(ax, renderer, line_sets: Sequence[_LineSet], occupied: list[Bbox],
                 max_per_level: int = 2, walls=None) -> list:
    """Label contour lines inline where the label is clear of everything already placed.

    For each level, candidate points are sampled along every line piece long enough to
    carry the label; a point is accepted where the rotated label box stays inside the
    axes and clear of ``occupied`` (preferring the lower left, so labels of nested lines
    line up). The long label of a set falls back to its short form when no piece can
    carry it. Every placed label box is appended to ``occupied``.
    """
    axbb = ax.get_window_extent(renderer)
    inner = Bbox.from_extents(axbb.x0 + 4, axbb.y0 + 4, axbb.x1 - 4, axbb.y1 - 4)
    out = []
    for ls in line_sets:
        fmt, plan = _plan_line_set(ax, renderer, ls, inner, occupied, max_per_level, walls)
        if not plan:
            if ls.beside and ls.near_fallback:
                out.extend(_label_near_pieces(ax, renderer, ls, inner, occupied, walls,
                                              max_per_level))
            continue
        if ls.beside:
            out.extend(_draw_beside_labels(ax, ls, plan))
            continue
        out.extend(_draw_inline_labels(ls, fmt, plan))
    return out


def _label_forms(ls: _LineSet, i: int) -> list[str]:
    """Label texts of level ``i`` to try, longest first (long, wrapped if beside, short)."""
    forms = [ls.labels[i], ls.short_labels[i]]
    if ls.beside and len(ls.labels[i]) > 20:  # a long label may go on two lines
        forms.insert(1, textwrap.fill(ls.labels[i], math.ceil(len(ls.labels[i]) / 2)))
    return forms


def _plan_line_set(ax, renderer, ls: _LineSet, inner: Bbox, occupied: list[Bbox],
                   max_per_level: int, walls):
    """Label text by level and the label spots (px point, angle, text) of one line set."""
    cs = ls.cs
    fmt: dict[float, str] = {}
    plan: list[tuple[float, float]] = []
    for i, path in enumerate(cs.get_paths()):
        if i >= len(ls.labels):
            break
        pieces = [np.asarray(p) for p in path.to_polygons(closed_only=False)
                  if len(p) >= 2]
        pieces.sort(key=lambda p: -len(p))
        for text in dict.fromkeys(_label_forms(ls, i)):
            w, h = _text_size_px(ax, renderer, text, ls.fontsize, ls.weight)
            chosen = _spots_on_pieces(ax, pieces, w, h, inner, occupied, max_per_level,
                                      (h / 2 + 3) if ls.beside else 0.0, walls)
            if chosen:
                fmt[float(cs.levels[i])] = text
                for p, ang, b in chosen:
                    plan.append((p, ang, text))
                    occupied.append(b)
                break
    return fmt, plan


def _spots_on_pieces(ax, pieces, w, h, inner: Bbox, occupied: list[Bbox],
                     max_per_level: int, offset_px: float, walls) -> list:
    """Up to ``max_per_level`` label spots, one per piece, clear of each other."""
    chosen = []
    for piece in pieces:
        if len(chosen) >= max_per_level:
            break
        pt = _best_point_on_piece(ax, piece, w, h, inner, occupied + [
            c[2] for c in chosen], offset_px=offset_px, walls=walls)
        if pt is not None:
            chosen.append(pt)
    return chosen


def _draw_beside_labels(ax, ls: _LineSet, plan) -> list:
    """Draw the planned labels as upright-turned texts beside their line."""
    out = []
    to_data = ax.transData.inverted()
    for p, ang, text in plan:
        deg = math.degrees(ang)
        deg = deg - 180 if deg > 90 else (deg + 180 if deg < -90 else deg)
        xd, yd = to_data.transform(p)
        out.append(ax.text(xd, yd, text, rotation=deg, rotation_mode="anchor",
                           ha="center", va="center", fontsize=ls.fontsize,
                           multialignment="center", linespacing=1.05,
                           fontweight=ls.weight, color=ls.color, zorder=8,
                           path_effects=_HALO, gid="contour-label"))
    return out


def _draw_inline_labels(ls: _LineSet, fmt: dict[float, str], plan) -> list:
    """Draw the planned labels inline, breaking their contour lines."""
    out = []
    cs = ls.cs
    cs.clabel(levels=list(fmt), fmt=fmt, fontsize=ls.fontsize, inline=True,
              inline_spacing=3, manual=[], colors=[ls.color] * len(fmt))
    for (px, py), _ang, _text in plan:
        cs.add_label_near(px, py, inline=True, inline_spacing=3, transform=False)
    for t in cs.labelTexts:
        t.set_gid("contour-label")
        t.set_fontweight(ls.weight)
        t.set_path_effects(_HALO)
        t.set_zorder(8)
        out.append(t)
    return out


def _label_near_pieces(ax, renderer, ls: _LineSet, inner: Bbox, occupied: list[Bbox],
                       walls, max_per_level: int) -> list:
    """Horizontal labels just outside small closed loops (above, below, right, left).

    Used when a line is too short or too curved for a label alongside it; the line is
    left unbroken.
    """
    out = []
    inv = ax.transData.inverted()
    sx, _ = _display_per_metre(ax)
    for i, path in enumerate(ls.cs.get_paths()):
        if i >= len(ls.near_fallback):
            break
        text = ls.near_fallback[i]
        w, h = _text_size_px(ax, renderer, text, ls.fontsize, ls.weight)
        pieces = sorted((np.asarray(p) for p in path.to_polygons(closed_only=False)
                         if len(p) >= 2), key=lambda p: -len(p))
        for piece in pieces[:max_per_level]:
            d = ax.transData.transform(piece)
            d = d[np.all(np.isfinite(d), axis=1)]
            if len(d) < 2:
                continue
            x0, y0 = d.min(axis=0)
            x1, y1 = d.max(axis=0)
            cx, cy = (x0 + x1) / 2, (y0 + y1) / 2
            best = None
            for px, py in ((cx, y1 + h / 2 + 3), (cx, y0 - h / 2 - 3),
                           (x1 + w / 2 + 4, cy), (x0 - w / 2 - 4, cy)):
                b = Bbox.from_bounds(px - w / 2 - 2, py - h / 2 - 2, w + 4, h + 4)
                if b.x0 < inner.x0 or b.x1 > inner.x1 or b.y0 < inner.y0 or b.y1 > inner.y1:
                    continue
                c = _clearance(b, occupied)
                if c <= 0:
                    continue
                cost = 0.0
                if walls is not None and not walls.is_empty:
                    lo, hi = inv.transform([(b.x0, b.y0), (b.x1, b.y1)])
                    cost = walls.intersection(box(lo[0], lo[1], hi[0], hi[1])).length * sx
                if best is None or cost < best[0]:
                    best = (cost, (px, py), b)
            if best is None:
                continue
            occupied.append(best[2])
            xd, yd = inv.transform(best[1])
            out.append(ax.text(xd, yd, text, ha="center", va="center", fontsize=ls.fontsize,
                               fontweight=ls.weight, color=ls.color, zorder=8,
                               path_effects=_HALO, gid="contour-label"))
    return out


def _best_point_on_piece(ax, piece, w, h, inner: Bbox, occupied: list[Bbox],
                         offset_px: float = 0.0, walls=None):
    """Best label spot on one contour piece: ((x, y) px, angle rad, box) or None.

    With ``offset_px`` the label centre is moved off the line along its normal, to the
    convex side (where a straight label clears a curved line).
    """
    d = ax.transData.transform(piece)
    good = np.all(np.isfinite(d), axis=1)
    d = d[good]
    if len(d) < 2:
        return None
    seg = np.hypot(*np.diff(d, axis=0).T)
    length = float(seg.sum())
    if length < 2.2 * w:
        return None
    s = np.concatenate([[0.0], np.cumsum(seg)])
    closed = np.allclose(d[0], d[-1], atol=1.0)
    margin = 0.0 if closed else 0.7 * w
    ts = np.arange(margin, length - margin + 1e-9, max(w / 4.0, 4.0))
    if ts.size == 0:
        return None
    c = _piece_candidates(d, s, length, ts, w)
    bad = np.zeros(ts.shape, dtype=bool)
    side_cost = np.zeros(ts.shape)
    if offset_px:
        c, bad, side_cost = _offset_candidates(d, s, length, closed, c, offset_px)
    ts, ta, tb, px, py, ang, nx, ny, sag = c
    wall_px = np.zeros(ts.shape)
    if walls is not None and not walls.is_empty:
        wall_px = _wall_under_labels_px(ax, walls, px, py, ang, w, h)
    return _best_candidate(px, py, ang, sag, w, h, inner, occupied, bad, side_cost, wall_px,
                           offset_px)


def _piece_candidates(d: np.ndarray, s: np.ndarray, length: float, ts: np.ndarray, w: float):
    """Candidate label centres at arc lengths ``ts``, with direction, normal and sag."""
    px = np.interp(ts, s, d[:, 0])
    py = np.interp(ts, s, d[:, 1])
    # local direction over about one label width (the chord under the label)
    ta = np.clip(ts - w / 2, 0, length)
    tb = np.clip(ts + w / 2, 0, length)
    ax_, ay_ = np.interp(ta, s, d[:, 0]), np.interp(ta, s, d[:, 1])
    bx_, by_ = np.interp(tb, s, d[:, 0]), np.interp(tb, s, d[:, 1])
    ang = np.arctan2(by_ - ay_, bx_ - ax_)
    nx, ny = -np.sin(ang), np.cos(ang)
    sag = (px - (ax_ + bx_) / 2) * nx + (py - (ay_ + by_) / 2) * ny  # curvature under label
    return ts, ta, tb, px, py, ang, nx, ny, sag


def _offset_candidates(d: np.ndarray, s: np.ndarray, length: float, closed: bool, c,
                       offset_px: float):
    """Candidates moved off the line to both sides, with crossing flags and side costs."""
    ts, ta, tb, px, py, ang, nx, ny, sag = c
    if closed:  # outward side of a closed loop, from its orientation (shoelace)
        area2 = float(np.sum(d[:-1, 0] * d[1:, 1] - d[1:, 0] * d[:-1, 1]))
        sign = np.full(ts.shape, -1.0 if area2 > 0 else 1.0)
    else:
        sign = np.where(sag >= 0, 1.0, -1.0)
    # both sides are candidates; the outward (convex) side is preferred a little
    n0 = ts.size
    ts, ta, tb = (np.concatenate([v, v]) for v in (ts, ta, tb))
    px, py, ang, nx, ny, sag = (np.concatenate([v, v]) for v in (px, py, ang, nx, ny,
                                                                 sag))
    sign = np.concatenate([sign, -sign])
    side_cost = np.concatenate([np.zeros(n0), np.full(n0, 4.0)])
    # a straight label beside the line must not be crossed by the line itself: no
    # point of the line under the label may bulge towards it past the anchor point
    u = np.linspace(0.0, 1.0, 9)
    tu = np.clip(ta[:, None] + (tb - ta)[:, None] * u[None, :], 0, length)
    qx = np.interp(tu, s, d[:, 0])
    qy = np.interp(tu, s, d[:, 1])
    dev = (qx - px[:, None]) * nx[:, None] + (qy - py[:, None]) * ny[:, None]
    bad = (sign[:, None] * dev).max(axis=1) > 2.0
    px = px + sign * offset_px * nx
    py = py + sign * offset_px * ny
    return (ts, ta, tb, px, py, ang, nx, ny, sag), bad, side_cost


def _wall_under_labels_px(ax, walls, px, py, ang, w, h) -> np.ndarray:
    """Length of wall (display px) under each candidate's rotated label rectangle."""
    # labels keep off walls (the label's own rotated rectangle, not its axis-aligned box)
    inv = ax.transData.inverted()
    tx, ty = np.cos(ang), np.sin(ang)
    hw, hh = w / 2 + 3, h / 2 + 3
    corners = np.stack([np.column_stack([px + a * hw * tx - b * hh * ty,
                                         py + a * hw * ty + b * hh * tx])
                        for a, b in ((-1, -1), (1, -1), (1, 1), (-1, 1), (-1, -1))],
                       axis=1)
    corners = inv.transform(corners.reshape(-1, 2)).reshape(corners.shape)
    boxes = shapely.polygons(corners)
    sx, _ = _display_per_metre(ax)
    return shapely.length(shapely.intersection(walls, boxes)) * sx


def _best_candidate(px, py, ang, sag, w, h, inner: Bbox, occupied: list[Bbox], bad,
                    side_cost, wall_px, offset_px: float):
    """Highest-scoring candidate inside the axes and clear of ``occupied``, or None."""
    ew = np.abs(w * np.cos(ang)) + np.abs(h * np.sin(ang)) + 6
    eh = np.abs(w * np.sin(ang)) + np.abs(h * np.cos(ang)) + 6
    cap = 1.5 * h
    best = None
    for k in range(px.size):
        # a label set beside a line must not touch a wall (it would read as the wall's)
        if bad[k] or (offset_px and wall_px[k] > 0):
            continue
        b = Bbox.from_bounds(px[k] - ew[k] / 2, py[k] - eh[k] / 2, ew[k], eh[k])
        if b.x0 < inner.x0 or b.x1 > inner.x1 or b.y0 < inner.y0 or b.y1 > inner.y1:
            continue
        c = min(_clearance(b, occupied), cap)
        if c <= 0:
            continue
        score = (c - 0.5 * abs(sag[k]) - 0.25 * wall_px[k] - side_cost[k]
                 - 1e-4 * (px[k] + py[k]))
        if best is None or score > best[0]:
            best = (score, (px[k], py[k]), float(ang[k]), b)
    return None if best is None else best[1:]


def _add_polygon(ax, geom, **kw):
    patch = PathPatch(_polygon_path(geom), **kw)
    ax.add_patch(patch)
    return patch


def _fit_label(ax, renderer, poly, lines: list[str], bold_first: bool,
               avoid=(), fs_max: float = 7.5, fs_min: float = 5.0):
    """Place a multi-line label inside ``poly``, shrinking, wrapping or turning it to fit.

    ``avoid`` is a sequence of geometries in decreasing order of strictness: the label
    is centred on the pole of inaccessibility of ``poly`` minus the first of them that
    leaves at least 15 % of the room (else of ``poly`` itself), and clipped to ``poly``
    whatever happens.
    """
    region = poly
    for geom in avoid:
        if geom is None or geom.is_empty:
            continue
        rest = poly.difference(geom)
        if not rest.is_empty and rest.area > 0.15 * poly.area:
            region = rest
            break
    parts = _polygons_of(region) or _polygons_of(poly)
    core = max(parts, key=lambda p: p.area)
    span = max(core.bounds[2] - core.bounds[0], core.bounds[3] - core.bounds[1])
    p = polylabel(core, tolerance=max(span * 1e-3, 1e-6))
    x0, y0, x1, y1 = core.bounds
    hseg = _segment_through(core, LineString([(x0 - 1, p.y), (x1 + 1, p.y)]), p)
    cx = (hseg[0] + hseg[1]) / 2 if hseg else p.x
    vseg = _segment_through(core, LineString([(cx, y0 - 1), (cx, y1 + 1)]), Point(cx, p.y))
    cy = (vseg[0] + vseg[1]) / 2 if vseg else p.y
    w_m = (hseg[1] - hseg[0]) if hseg else 0.0
    h_m = (vseg[1] - vseg[0]) if vseg else 0.0
    sx, sy = _display_per_metre(ax)
    avail = (0.92 * w_m * sx, 0.88 * h_m * sy)

    t = ax.text(cx, cy, "", ha="center", va="center", color=_INK, zorder=7,
                path_effects=_HALO, linespacing=1.1, gid="room-label")
    if bold_first:
        t.set_fontweight("bold")
    patch = PathPatch(_polygon_path(poly), transform=ax.transData, visible=False)
    ax.add_patch(patch)
    t.set_clip_path(patch)
    rotations = (0, 90) if h_m > 1.3 * w_m else (0,)
    name = lines[0]
    name_forms = [name] + [textwrap.fill(name, max(6, math.ceil(len(name) / k)))
                           for k in (2, 3) if len(name) > 12]
    chosen = False
    for n_keep in range(len(lines), 0, -1):
        fs = fs_max
        while fs >= fs_min - 1e-9 and not chosen:
            t.set_fontsize(fs)
            for form in dict.fromkeys(name_forms):
                t.set_text("\n".join([form, *lines[1:n_keep]]))
                for rot in rotations:
                    t.set_rotation(rot)
                    bb = t.get_window_extent(renderer)
                    if bb.width <= avail[0] and bb.height <= avail[1]:
                        chosen = True
                        break
                if chosen:
                    break
            if not chosen:
                fs -= 0.5
        if chosen:
            break
    if not chosen:  # does not fit: smallest size, clipped to the room
        t.set_text(name_forms[-1])
        t.set_rotation(rotations[-1])
        t.set_fontsize(fs_min - 0.5)
    return t


def _segment_through(poly, line, p) -> tuple[float, float] | None:
    """Extent (min, max along the line's direction) of the piece of ``poly ∩ line`` at p."""
    inter = poly.intersection(line)
    horizontal = abs(line.coords[0][1] - line.coords[-1][1]) < 1e-12
    best = None
    for seg in _lines_of(inter):
        ls = LineString(seg)
        if ls.distance(p) < 1e-9 * max(1.0, ls.length) + 1e-9:
            c = seg[:, 0] if horizontal else seg[:, 1]
            best = (float(c.min()), float(c.max()))
    return best


def _display_per_metre(ax) -> tuple[float, float]:
    t = ax.transData
    o = t.transform((0.0, 0.0))
    ex = t.transform((1.0, 0.0))
    ey = t.transform((0.0, 1.0))
    return float(abs(ex[0] - o[0])), float(abs(ey[1] - o[1]))


def _draw_rooms(ax, renderer, rooms: Sequence[RoomMark], avoid) -> tuple[list, list]:
    """Room outlines (hatched and bold when ``exceeds``) and their fitted labels.

    Rooms wholly outside the drawing get no label.
    """
    texts = []
    (x0, x1), (y0, y1) = ax.get_xlim(), ax.get_ylim()
    view = box(x0, y0, x1, y1)
    any_exceeds = any_controlled = False
    for i, r in enumerate(rooms):
        if not isinstance(r, RoomMark):
            raise FringeInputError(must_be(f"rooms[{i}]", "a fringe.render.drawing.RoomMark", r))
        _check_geometry(f"rooms[{i}].polygon ({r.name})", r.polygon, area=True)
        exceeds = (r.verdict or "").lower() == Verdict.EXCEEDS
        controlled = r.access == "controlled"
        any_exceeds |= exceeds
        any_controlled |= controlled
        if exceeds:
            _add_polygon(ax, r.polygon, facecolor="none", edgecolor=_INK, linewidth=0.0,
                         hatch="//", alpha=0.55, zorder=5)
        _add_polygon(ax, r.polygon, facecolor="none", edgecolor=_INK,
                     linewidth=2.8 if exceeds else (1.5 if controlled else 1.0),
                     linestyle="-", zorder=6)
        lines = [r.name]
        detail = []
        if controlled:
            detail.append("controlled")
        if r.max_field_T is not None:
            detail.append(f"max {format_field(r.max_field_T)}")
        if detail:
            lines.append(", ".join(detail))
        if exceeds:
            lim = (f" {format_value(r.limit_T * 1e3)} mT" if r.limit_T is not None else "")
            lines.append(f"EXCEEDS LIMIT{lim}")
        elif r.verdict and r.verdict.lower() not in {x.lower() for x in detail}:
            lines.append(str(r.verdict))
        if r.note:
            lines.append(str(r.note))
        visible = r.polygon.intersection(view)  # label the part inside the drawing
        if visible.is_empty or visible.area < 1e-9 * view.area:
            continue
        if visible.geom_type not in ("Polygon", "MultiPolygon"):
            visible = shapely.union_all(_polygons_of(visible))
        texts.append(_fit_label(ax, renderer, visible, lines, bold_first=True,
                                avoid=avoid))
    handles, labels = [], []
    if rooms:
        handles.append(Patch(facecolor="none", edgecolor=_INK, linewidth=1.0))
        labels.append("room outline with name and largest field in its occupied band")
    if any_controlled:
        handles.append(Patch(facecolor="none", edgecolor=_INK, linewidth=1.5))
        labels.append("controlled room (may hold fields above the boundary)")
    if any_exceeds:
        handles.append(Patch(facecolor="none", edgecolor=_INK, linewidth=2.8, hatch="//"))
        labels.append("room whose field reaches its limit: hatched, bold, EXCEEDS")
    return texts, list(zip(handles, labels, strict=True))


#: How a cryostat envelope is drawn (plans and sections) and its legend entry.
_ENVELOPE_STYLE: dict[str, Any] = {"facecolor": "0.93", "edgecolor": _INK, "linewidth": 1.0,
                                   "linestyle": (0, (4, 2)), "hatch": "///", "zorder": 6.4}
ENVELOPE_LEGEND = "cryostat envelope (not accessible)"


def _draw_magnets(ax, magnets, *, section: bool = False) -> tuple[list, list]:
    texts = []
    envelopes = False
    for i, m in enumerate(magnets):
        name, poly = (m.name, m.polygon) if isinstance(m, MagnetOutline) else tuple(m)[:2]
        env = m.envelope if isinstance(m, MagnetOutline) else None
        if env is not None and not env.is_empty:
            _check_geometry(f"magnets[{i}].envelope ({name})", env, area=True)
            _add_polygon(ax, env, **_ENVELOPE_STYLE)
            envelopes = True
        _check_geometry(f"magnets[{i}].polygon ({name})", poly, area=True)
        _add_polygon(ax, poly, facecolor="0.35" if section else "white",
                     edgecolor=_INK, linewidth=1.8, zorder=6.5)
        if not section:
            c = poly.centroid
            t = ax.text(c.x, c.y, name, ha="center", va="center", fontsize=7,
                        fontweight="bold", color=_INK, zorder=7.5, path_effects=_HALO,
                        gid="magnet-label")
            patch = PathPatch(_polygon_path(poly), transform=ax.transData, visible=False)
            ax.add_patch(patch)
            t.set_clip_path(patch)
            texts.append(t)
    entries = []
    if envelopes:
        entries.append((Patch(facecolor="0.93", edgecolor=_INK, linewidth=1.0,
                              linestyle=(0, (4, 2)), hatch="///"), ENVELOPE_LEGEND))
    if magnets:
        if section:
            entries.append((Patch(facecolor="0.35", edgecolor=_INK, linewidth=1.5),
                            "magnet windings (cross-section)"))
        else:
            entries.append((Patch(facecolor="white", edgecolor=_INK, linewidth=1.8),
                            "magnet footprint (windings projected on the plan)"))
    return texts, entries


def _magnet_boxes(ax, magnets) -> list[Bbox]:
    """Display boxes of drawn magnets (their envelopes where given), for label avoidance."""
    boxes = []
    for m in magnets:
        poly = m.polygon if isinstance(m, MagnetOutline) else m[1]
        if isinstance(m, MagnetOutline) and m.envelope is not None and not m.envelope.is_empty:
            poly = m.envelope  # it holds the windings
        x0_, y0_, x1_, y1_ = poly.bounds
        boxes.append(Bbox(ax.transData.transform([(x0_, y0_), (x1_, y1_)])))
    return boxes


def _draw_overlays(ax, overlays) -> list:
    entries = []
    for i, ov in enumerate(overlays):
        label, geom, kind = (ov.label, ov.geometry, ov.kind) if isinstance(ov, Overlay) \
            else tuple(ov)
        if kind not in OVERLAY_KINDS:
            raise FringeInputError(must_be(f"overlays[{i}].kind",
                                           f"one of {sorted(OVERLAY_KINDS)}", kind))
        _check_geometry(f"overlays[{i}].geometry ({label})", geom, area=False)
        st = OVERLAY_KINDS[kind]
        polys = _polygons_of(geom)
        if polys and st["hatch"]:
            # white underlay keeps the hatch legible on dark bands
            _add_polygon(ax, geom, facecolor="none", edgecolor="white", linewidth=3.2,
                         zorder=4.4)
            _add_polygon(ax, geom, facecolor="none", edgecolor=st["edgecolor"],
                         hatch=st["hatch"], linewidth=st["linewidth"],
                         linestyle=st["linestyle"], zorder=4.5)
            handle = Patch(facecolor="none", edgecolor=st["edgecolor"], hatch=st["hatch"],
                           linewidth=st["linewidth"])
        else:
            for xy in _lines_of(geom):
                ax.plot(xy[:, 0], xy[:, 1], color=st["edgecolor"],
                        linewidth=st["linewidth"], linestyle=st["linestyle"],
                        zorder=st.get("zorder", 4.5),
                        path_effects=[patheffects.withStroke(linewidth=st["linewidth"] + 2,
                                                             foreground="white")])
            handle = Line2D([], [], color=st["edgecolor"], linewidth=st["linewidth"],
                            linestyle=st["linestyle"])
        name = getattr(ov, "name", "")
        if name and isinstance(geom, shapely.Geometry) and not geom.is_empty:
            x0, _, _, y1 = geom.bounds
            ax.annotate(str(name), (x0, y1), xytext=(2, 2), textcoords="offset points",
                        ha="left", va="bottom", fontsize=6.5, color=st["edgecolor"],
                        style="italic", zorder=4.6, annotation_clip=True,
                        path_effects=[patheffects.withStroke(linewidth=2.2,
                                                             foreground="white")])
        if all(lbl != str(label) for _, lbl in entries):
            entries.append((handle, str(label)))
    return entries


def _text_box(t, renderer) -> Bbox:
    """Display box of a Text or of an Annotation's text alone (without its leader)."""
    if isinstance(t, Annotation):
        t.update_positions(renderer)
    return Text.get_window_extent(t, renderer)


def _overlay_geometries(overlays) -> list:
    out = []
    for ov in overlays:
        geom = ov.geometry if isinstance(ov, Overlay) else tuple(ov)[1]
        if isinstance(geom, shapely.Geometry) and not geom.is_empty:
            out.append(geom)
    return out


def _line_hulls(line_set: _LineSet, pad_m: float) -> list:
    """Convex hulls (padded) of each piece of a line set, in data coordinates."""
    out = []
    for path in line_set.cs.get_paths():
        for piece in path.to_polygons(closed_only=False):
            pts = np.asarray(piece)
            pts = pts[np.all(np.isfinite(pts), axis=1)]
            if len(pts) >= 2:
                out.append(shapely.MultiPoint(pts).convex_hull.buffer(pad_m))
    return out


def _overlap_area(a: Bbox, b: Bbox) -> float:
    w = min(a.x1, b.x1) - max(a.x0, b.x0)
    h = min(a.y1, b.y1) - max(a.y0, b.y0)
    return w * h if (w > 0 and h > 0) else 0.0


_OFFSETS_PT = [(d * cx, d * cy) for d in (9, 18, 30, 44)
               for cx, cy in ((1, 1), (1, -1), (-1, 1), (-1, -1), (1.4, 0), (-1.4, 0),
                              (0, 1.2), (0, -1.2))]


def _equipment_label(e: EquipmentMark, exceeds: bool) -> str:
    """Name, then field, limit and verdict of an equipment mark."""
    parts = []
    if e.field_T is not None:
        parts.append(f"{format_field(e.field_T)}")
    if e.limit_T is not None:
        parts.append(f"limit {format_value(e.limit_T * 1e3)} mT")
    line2 = ", ".join(parts)
    if exceeds:
        line2 = (line2 + ": " if line2 else "") + "EXCEEDS"
    elif e.verdict:
        line2 = (line2 + ": " if line2 else "") + str(e.verdict)
    return e.name + ("\n" + line2 if line2 else "")


def _draw_equipment(ax, renderer, equipment, occupied: list[Bbox], walls=None
                    ) -> tuple[list, list]:
    """Equipment markers with labels placed by a greedy search over offsets.

    Each label takes the first candidate offset that overlaps no occupied box, stays in
    the axes and crosses no wall (``walls``: room outlines as shapely lines, data m);
    failing that, the candidate of least overlap.
    """
    texts = []
    to_data = ax.transData.inverted()
    sx, _ = _display_per_metre(ax)
    any_exceeds = False
    axbb = ax.get_window_extent(renderer)
    for i, e in enumerate(equipment):
        if not isinstance(e, EquipmentMark):
            raise FringeInputError(must_be(f"equipment[{i}]", "an EquipmentMark",
                                           e))
        xy = np.asarray(e.xy_m, float).ravel()
        if xy.size != 2 or not np.all(np.isfinite(xy)):
            raise FringeInputError(must_be(f"equipment[{i}].xy_m ({e.name})",
                                           "two finite coordinates in metres", e.xy_m))
        exceeds = (e.verdict or "").lower() == Verdict.EXCEEDS
        any_exceeds |= exceeds
        if e.outline is not None:
            ax.add_patch(PathPatch(_polygon_path(e.outline), facecolor="none",
                                   edgecolor=_INK, linewidth=1.2, linestyle="-.",
                                   hatch="////" if exceeds else None, zorder=8.5,
                                   gid="equipment-outline"))
        ax.plot([xy[0]], [xy[1]], marker="D", markersize=7 if exceeds else 6,
                markerfacecolor=_INK if exceeds else "white", markeredgecolor=_INK,
                markeredgewidth=1.4, linestyle="none", zorder=9)
        text = _equipment_label(e, exceeds)
        best = None
        for dx, dy in _OFFSETS_PT:
            ha = "left" if dx > 0 else ("right" if dx < 0 else "center")
            va = "bottom" if dy > 0 else ("top" if dy < 0 else "center")
            ann = ax.annotate(text, xy=(xy[0], xy[1]), xytext=(dx, dy),
                              textcoords="offset points", ha=ha, va=va, fontsize=7,
                              color=_INK, zorder=9.5, path_effects=_HALO,
                              fontweight="bold" if exceeds else "normal",
                              gid="equipment-label",
                              arrowprops={"arrowstyle": "-", "color": _INK, "linewidth": 0.6,
                                          "shrinkA": 0, "shrinkB": 3})
            bb = _text_box(ann, renderer)
            cost = sum(_overlap_area(bb, o) for o in occupied)
            outside = (bb.width * bb.height) - _overlap_area(bb, axbb)
            cost += 4 * outside
            if walls is not None:
                c = to_data.transform([(bb.x0, bb.y0), (bb.x1, bb.y1)])
                crossing = walls.intersection(box(c[0][0], c[0][1], c[1][0], c[1][1])).length
                cost += 0.5 * crossing * sx * bb.height
            if best is None or cost < best[0]:
                if best is not None:
                    best[1].remove()
                best = (cost, ann, bb)
            else:
                ann.remove()
            if cost == 0:
                break
        occupied.append(best[2])
        texts.append(best[1])
    entries = []
    if equipment:
        entries.append((Line2D([], [], marker="D", markerfacecolor="white",
                                markeredgecolor=_INK, linestyle="none", markersize=6),
                        "sensitive equipment: field there and its limit"))
    if any(getattr(e, "outline", None) is not None for e in equipment):
        entries.append((Line2D([], [], color=_INK, linewidth=1.2, linestyle="-."),
                        "equipment volume: its outline (the largest field over it is given)"))
    if any_exceeds:
        entries.append((Line2D([], [], marker="D", markerfacecolor=_INK,
                                markeredgecolor=_INK, linestyle="none", markersize=7),
                        "equipment whose field reaches its limit (EXCEEDS)"))
    return texts, entries


def _below_axes(ax, fig):
    """Transform with x in the axes' data metres and y in inches below the axes' bottom."""
    bottom_in = ax.get_position().y0 * fig.get_figheight()
    return blended_transform_factory(
        ax.transData, Affine2D().translate(0, bottom_in) + fig.dpi_scale_trans)


def _draw_scale_bar(ax, x_range, y_range, renderer) -> Bbox:
    """Scale bar under the lower-left corner of the drawing, outside it.

    The bar is ``scale_bar_length_m`` long in the drawing's data metres (x follows the
    map's data transform exactly), in four alternating segments (artists with gid
    "scale-bar-0" ... "scale-bar-3"), so it stays true at any print size. Returns its
    box in display px.
    """
    del y_range
    fig = ax.get_figure()
    tr = _below_axes(ax, fig)
    span = x_range[1] - x_range[0]
    length = scale_bar_length_m(span)
    x0 = x_range[0]
    y0, h = -0.50, 0.075  # inches below the axes: clear of the tick labels
    n = 4
    segs = []
    for k in range(n):
        r = Rectangle((x0 + k * length / n, y0), length / n, h, transform=tr,
                      facecolor=_INK if k % 2 == 0 else "white", edgecolor=_INK,
                      linewidth=0.8, zorder=11, gid=f"scale-bar-{k}", clip_on=False)
        ax.add_patch(r)
        segs.append(r)
    kw = {"transform": tr, "fontsize": 7.5, "zorder": 11, "clip_on": False}
    ax.text(x0, y0 + h + 0.03, "0", ha="center", va="bottom", **kw)
    ax.text(x0 + length, y0 + h + 0.03, f"{format_value(length)} m", ha="center",
            va="bottom", gid="scale-bar-label", **kw)
    width_in = ax.get_position().width * fig.get_figwidth()
    ratio = span / (width_in * 0.0254)  # metres of site per metre of paper on A3
    ax.text(x0 + length + 0.02 * span, y0 + h / 2, f"scale about 1:{ratio:.0f} on A3 paper",
            ha="left", va="center", color="0.3", gid="scale-ratio", **{**kw,
                                                                      "fontsize": 6.5})
    return Bbox.union([r.get_window_extent(renderer) for r in segs])


def _draw_north_arrow(ax, renderer) -> Bbox:
    """North arrow (site y is north) just right of the drawing's top-right corner."""
    fig = ax.get_figure()
    tr = ax.transAxes + ScaledTranslation(0.16, 0, fig.dpi_scale_trans)
    ax.annotate("", xy=(1.0, 1.0), xytext=(1.0, 1.0), xycoords=tr, textcoords=(
        ax.transAxes + ScaledTranslation(0.16, -0.45, fig.dpi_scale_trans)),
        arrowprops={"arrowstyle": "-|>,head_width=0.4,head_length=0.8", "color": _INK,
                    "linewidth": 1.6, "shrinkA": 0, "shrinkB": 0},
        zorder=11, annotation_clip=False)
    t = ax.text(1.0, 1.0, "N", transform=ax.transAxes + ScaledTranslation(
        0.16, -0.50, fig.dpi_scale_trans), ha="center", va="top", fontsize=10,
        fontweight="bold", zorder=11, clip_on=False)
    return t.get_window_extent(renderer)


def _setup_map_axes(fig, x, y, x_label, y_label):
    ax = fig.add_axes(_MAIN, label="map")
    ax.set_xlim(x[0], x[-1])
    ax.set_ylim(y[0], y[-1])
    ax.set_aspect("equal", adjustable="box", anchor="C")
    ax.set_xlabel(x_label, fontsize=8.5, loc="right")  # the scale bar sits at the left
    ax.set_ylabel(y_label, fontsize=8.5)
    ax.tick_params(labelsize=7.5, direction="in", top=True, right=True)
    ax.grid(True, color="0.6", linewidth=0.3, alpha=0.5, zorder=0)
    ax.set_axisbelow(True)
    ax.apply_aspect()
    return ax


def _map_inputs(x_m, y_m, values, levels, positive: bool):
    x = _check_axis("x_m", x_m)
    y = _check_axis("y_m", y_m)
    v = np.asarray(values, dtype=float)
    if v.shape != (y.size, x.size):
        raise FringeInputError(must_be("values", f"an array of shape (len(y_m), len(x_m)) = "
                                       f"({y.size}, {x.size})", f"shape {v.shape}"))
    lv = _check_levels("levels", levels, positive=positive)
    return x, y, v, lv


def map_sheet(x_m, y_m, values, levels, info: SheetInfo, *, unit: str,
              quantity: str = "|B|", boundary_level: float | None = None,
              boundary_label: str | None = None, rooms: Sequence[RoomMark] = (),
              equipment: Sequence[EquipmentMark] = (), magnets: Sequence = (),
              overlays: Sequence = (), notes: Sequence[str] = (), cmap: str = "viridis_r",
              windings: Sequence = (),
              band_alpha: float = 0.62, log_contours: bool | None = None,
              x_label: str = "x (east), m", y_label: str = "y (north), m",
              north_arrow: bool = True, palette=None, show_gauss: bool = False) -> Figure:
    """A plan sheet of any scalar map: filled bands between levels and labelled lines.

    Parameters
    ----------
    x_m : (nx,) float
        Grid x (east) coordinates, m, strictly increasing.
    y_m : (ny,) float
        Grid y (north) coordinates, m, strictly increasing.
    values : (ny, nx) float
        The map in the unit ``unit``; NaN where undefined (a NaN node leaves every
        grid cell it touches unfilled).
    levels : sequence of float
        Band edges in ``unit``; the lowest band starts at ``levels[0]`` (no fill below),
        the highest is open above ``levels[-1]``.
    info : SheetInfo
    unit : str
        Unit printed on labels and in the legend ("mT", "J/m³", ...).
    quantity : str
        Symbol of the quantity for the legend title.
    boundary_level : float, optional
        A level drawn as a thick line and labelled ``boundary_label``; added to
        ``levels`` if missing.
    rooms, equipment, magnets, overlays
        :class:`RoomMark`, :class:`EquipmentMark`, :class:`MagnetOutline` or
        ``(name, polygon)``, :class:`Overlay` or ``(label, geometry, kind)``.
    notes : sequence of str
        Extra notes appended after ``info.notes``.
    windings : sequence of MagnetOutline or (name, polygon)
        Winding cross-sections, for a map in a vertical plane (drawn filled, as on
        :func:`section_sheet`).
    cmap : str
        Matplotlib colormap name; the lowest band takes the start of the map (light for
        the reversed perceptually uniform maps "viridis_r", "cividis_r", "magma_r").
        Ignored when ``palette`` is given.
    band_alpha : float
        Opacity of the bands, so room outlines and text stay legible.
    log_contours : bool, optional
        Interpolate the lines on log10(values) (smoother for fields falling as 1/r³).
        Default: when every level and some value is positive.
    palette : callable, optional
        Level → colour of the band at and above it (e.g.
        :func:`fringe.render.style.threshold_color` for levels in mT); overrides ``cmap``.
    show_gauss : bool
        With ``unit`` "mT": levels in the legend and on the lines also in gauss, in
        brackets (``[plan] show_gauss``; 1 mT = 10 G).

    Returns
    -------
    matplotlib.figure.Figure
        A3 landscape; no pyplot state is touched.

    Raises
    ------
    FringeInputError
        Mismatched shapes, empty or non-finite levels, bad geometries or overlay kinds.
    """
    x, y, v, lv = _map_inputs(x_m, y_m, values, levels, positive=False)
    if boundary_level is not None:
        if not math.isfinite(boundary_level):
            raise FringeInputError(must_be("boundary_level", "a finite number",
                                           boundary_level))
        if not np.any(np.isclose(lv, boundary_level, rtol=1e-9, atol=0)):
            lv = np.unique(np.append(lv, boundary_level))
    if log_contours is None:
        log_contours = bool(np.all(lv > 0))
    elif log_contours and np.any(lv <= 0):
        raise FringeInputError(must_be("levels", "all positive when log_contours is True",
                                       list(lv)))
    fig = _new_figure()
    _draw_frame(fig, info, kind="plan")
    ax = _setup_map_axes(fig, x, y, x_label, y_label)
    renderer = _renderer(fig)
    entries, line_sets = _draw_bands(ax, x, y, v, list(lv), unit=unit,
                                     boundary_level=boundary_level,
                                     boundary_label=boundary_label, cmap=cmap,
                                     band_alpha=band_alpha, log_contours=log_contours,
                                     palette=palette, show_gauss=show_gauss)
    entries += _draw_overlays(ax, overlays)
    mag_texts, mag_entries = _draw_magnets(ax, magnets)
    mag_entries += _draw_magnets(ax, windings, section=True)[1]
    sx, _sy = _display_per_metre(ax)
    keep_clear = [m.polygon if isinstance(m, MagnetOutline) else m[1] for m in magnets]
    keep_clear = [g.buffer(6.0 / sx) for g in keep_clear]
    keep_clear += [Point(np.asarray(e.xy_m, float).ravel()[:2]).buffer(14.0 / sx)
                   for e in equipment if isinstance(e, EquipmentMark)]
    basic = shapely.union_all(keep_clear) if keep_clear else None
    # also keep room names off extra layers and off the boundary line and what it encloses
    features = [g.buffer(6.0 / sx) for g in _overlay_geometries(overlays)]
    features += _line_hulls(line_sets[0], 8.0 / sx) if line_sets and line_sets[0].beside \
        else []
    strict = shapely.union_all(features + ([basic] if basic is not None else [])) \
        if features else None
    room_texts, room_entries = _draw_rooms(ax, renderer, rooms, (strict, basic))
    entries += room_entries + mag_entries
    occupied = [t.get_window_extent(renderer) for t in room_texts + mag_texts
                if t.get_text()]
    occupied.append(_draw_scale_bar(ax, (x[0], x[-1]), (y[0], y[-1]), renderer))
    if north_arrow:
        occupied.append(_draw_north_arrow(ax, renderer))
    for e in equipment:
        if isinstance(e, EquipmentMark):
            p = ax.transData.transform(np.asarray(e.xy_m, float).ravel()[:2])
            occupied.append(Bbox.from_bounds(p[0] - 6, p[1] - 6, 12, 12))
    walls = shapely.union_all([r.polygon.boundary for r in rooms]) if rooms else None
    lines_to_avoid = [g.boundary if g.geom_type in ("Polygon", "MultiPolygon") else g
                      for g in _overlay_geometries(overlays)]
    if walls is not None:
        lines_to_avoid.append(walls)
    label_walls = shapely.union_all(lines_to_avoid) if lines_to_avoid else None
    _label_lines(ax, renderer, line_sets, occupied, walls=label_walls)
    if line_sets and line_sets[0].beside:  # equipment labels keep off the boundary too
        lines = [shapely.LineString(p) for path in line_sets[0].cs.get_paths()
                 for p in path.to_polygons(closed_only=False) if len(p) >= 2]
        walls = shapely.union_all(([walls] if walls is not None else []) + lines)
    _eq_texts, eq_entries = _draw_equipment(ax, renderer, equipment, occupied, walls)
    entries += eq_entries
    _draw_key_column(fig, [h for h, _ in entries], [lb for _, lb in entries],
                     f"{quantity} in {unit}", list(info.notes) + list(notes))
    return fig


def _with_boundary_note(info: SheetInfo, boundary_mT: float | None) -> SheetInfo:
    """Every field sheet states its boundary value: fill the note in if the caller did not."""
    if info.boundary_note or boundary_mT is None:
        return info
    return dataclasses.replace(info, boundary_note=f"Controlled access area boundary: "
                               f"{format_value(boundary_mT)} mT (source not given)")


def plan_sheet(x_m, y_m, field_T, info: SheetInfo, *,
               thresholds_mT: Sequence[float] = DEFAULT_THRESHOLDS_MT,
               boundary_mT: float | None = 0.5, boundary_label: str | None = None,
               rooms: Sequence[RoomMark] = (), equipment: Sequence[EquipmentMark] = (),
               magnets: Sequence = (), overlays: Sequence = (), notes: Sequence[str] = (),
               cmap: str | None = None, show_gauss: bool = False) -> Figure:
    """Floor plan of the field magnitude in mT, with rooms, equipment and the boundary.

    Parameters
    ----------
    x_m : (nx,) float
        Site x (east) of the grid columns, m.
    y_m : (ny,) float
        Site y (north) of the grid rows, m.
    field_T : (ny, nx) float
        |B| in tesla (e.g. the largest over the floor's occupied band); NaN allowed.
    info : SheetInfo
    thresholds_mT : sequence of float
        Band edges and labelled lines, mT (default 0.5, 1, 3, 10, 40, 200).
    boundary_mT : float or None
        Controlled access area boundary, mT, drawn thick (added to the thresholds if
        missing). ``None`` draws no boundary line.
    boundary_label : str, optional
        Default "<value> mT: controlled access area boundary".
    rooms, equipment, magnets, overlays, notes
        As :func:`map_sheet`.
    cmap : str, optional
        A matplotlib colormap for the bands; by default each threshold's band takes its
        own fixed colour (:func:`fringe.render.style.threshold_color`, the colour its
        layer has in the DXF zone drawings).
    show_gauss : bool
        Levels in the legend, on the lines and in the boundary label also in gauss, in
        brackets, e.g. "0.5 to 1 mT (5 to 10 G)" (``[plan] show_gauss``; 1 mT = 10 G).

    Returns
    -------
    matplotlib.figure.Figure

    Raises
    ------
    FringeInputError
        Mismatched shapes, empty or non-positive thresholds, bad geometries.
    """
    lv = _check_levels("thresholds_mT", thresholds_mT, positive=True)
    if boundary_mT is not None and not (math.isfinite(boundary_mT) and boundary_mT > 0):
        raise FringeInputError(must_be("boundary_mT", "a positive number of mT or None",
                                       boundary_mT))
    x, y, v, _ = _map_inputs(x_m, y_m, field_T, lv, positive=True)
    info = _with_boundary_note(info, boundary_mT)
    label = boundary_label
    if boundary_mT is not None and label is None:
        label = (format_mT(boundary_mT, show_gauss=show_gauss)
                 + ": controlled access area boundary")
    return map_sheet(x, y, v * 1e3, lv, info, unit="mT", quantity="|B|",
                     boundary_level=boundary_mT, boundary_label=label, rooms=rooms,
                     equipment=equipment, magnets=magnets, overlays=overlays, notes=notes,
                     cmap=cmap, log_contours=True,
                     palette=threshold_color if cmap is None else None,
                     show_gauss=show_gauss)


def section_sheet(s_m, z_m, field_T, info: SheetInfo, *,
                  thresholds_mT: Sequence[float] = DEFAULT_THRESHOLDS_MT,
                  boundary_mT: float | None = 0.5, boundary_label: str | None = None,
                  floors: Sequence = (), windings: Sequence = (),
                  exposure_lines: Sequence[ExposureLine] = (), overlays: Sequence = (),
                  notes: Sequence[str] = (), s_label: str = "s along the section line, m",
                  cmap: str | None = None, show_gauss: bool = False) -> Figure:
    """Vertical section of |B| in mT: bands, labelled lines, floors, windings, exposure.

    Parameters
    ----------
    s_m : (ns,) float
        Horizontal coordinate along the section line, m (e.g. 0 at the magnet centre).
    z_m : (nz,) float
        Site z (up), m.
    field_T : (nz, ns) float
        |B| in tesla; NaN allowed (e.g. inside windings).
    info : SheetInfo
    thresholds_mT, boundary_mT, boundary_label
        As :func:`plan_sheet`.
    floors : sequence of FloorLevel (or any object with ``name, elevation_m,
        band_bottom_m, band_top_m``, e.g. ``fringe.model.building.Floor``)
        Slab levels drawn as lines; occupied bands shaded lightly.
    windings : sequence of MagnetOutline or (name, polygon)
        Winding cross-sections in (s, z), m.
    exposure_lines : sequence of ExposureLine
        Drawn as dashed labelled lines where |B| equals their value; their sources are
        printed in the notes (e.g. :data:`ICNIRP_2009_EXPOSURE_LINES`).
    overlays, notes, s_label, cmap, show_gauss
        As :func:`map_sheet` and :func:`plan_sheet`; ``s_label`` names the horizontal axis.

    Returns
    -------
    matplotlib.figure.Figure

    Raises
    ------
    FringeInputError
        Mismatched shapes, empty thresholds, bad floors, windings or exposure values.
    """
    lv, s, z, v = _section_inputs(s_m, z_m, field_T, thresholds_mT, boundary_mT)
    label = boundary_label
    if boundary_mT is not None and label is None:
        label = (format_mT(boundary_mT, show_gauss=show_gauss)
                 + ": controlled access area boundary")
    vm = v * 1e3
    info = _with_boundary_note(info, boundary_mT)
    fig = _new_figure()
    _draw_frame(fig, info, kind="section")
    ax = _setup_map_axes(fig, s, z, s_label, "z (up), m")
    renderer = _renderer(fig)
    entries, line_sets = _draw_bands(ax, s, z, vm, list(lv), unit="mT",
                                     boundary_level=boundary_mT, boundary_label=label,
                                     cmap=cmap, band_alpha=0.62, log_contours=True,
                                     palette=threshold_color if cmap is None else None,
                                     show_gauss=show_gauss)
    entries += _draw_overlays(ax, overlays)
    occupied: list[Bbox] = []
    entries += _draw_floor_levels(ax, renderer, floors, s, z, occupied)
    _texts, wentries = _draw_magnets(ax, windings, section=True)
    occupied += _magnet_boxes(ax, windings)
    entries += wentries
    exposure_entries, exposure_sets, sources = _draw_exposure_lines(ax, s, z, vm,
                                                                    exposure_lines)
    entries += exposure_entries
    occupied.append(_draw_scale_bar(ax, (s[0], s[-1]), (z[0], z[-1]), renderer))
    _label_lines(ax, renderer, line_sets[:1] + exposure_sets + line_sets[1:], occupied)
    src_notes = [f"Exposure lines: {src}." for src in sources]
    _draw_key_column(fig, [h for h, _ in entries], [lb for _, lb in entries],
                     "|B| in mT", list(info.notes) + list(notes) + src_notes)
    return fig


def _section_inputs(s_m, z_m, field_T, thresholds_mT, boundary_mT):
    """Checked levels (boundary included), axes and field array of a section sheet."""
    lv = _check_levels("thresholds_mT", thresholds_mT, positive=True)
    if boundary_mT is not None and not (math.isfinite(boundary_mT) and boundary_mT > 0):
        raise FringeInputError(must_be("boundary_mT", "a positive number of mT or None",
                                       boundary_mT))
    s = _check_axis("s_m", s_m)
    z = _check_axis("z_m", z_m)
    v = np.asarray(field_T, float)
    if v.shape != (z.size, s.size):
        raise FringeInputError(must_be("field_T", f"an array of shape (len(z_m), len(s_m)) = "
                                       f"({z.size}, {s.size})", f"shape {v.shape}"))
    if boundary_mT is not None and not np.any(np.isclose(lv, boundary_mT, rtol=1e-9)):
        lv = np.unique(np.append(lv, boundary_mT))
    return lv, s, z, v


def _floor_band(i: int, f) -> tuple[str, float, float, float]:
    """Name, elevation and occupied band (bottom, top above the floor) of ``floors[i]``."""
    try:
        name = str(f.name)
        elev = float(f.elevation_m)
        bb = float(getattr(f, "band_bottom_m", 0.0))
        bt = float(getattr(f, "band_top_m", 2.0))
    except (AttributeError, TypeError, ValueError):
        raise FringeInputError(must_be(f"floors[{i}]", "an object with name and "
                                       "elevation_m (e.g. FloorLevel)", f)) from None
    if not (math.isfinite(elev) and bt > bb):
        raise FringeInputError(must_be(f"floors[{i}] ({name})", "a finite elevation_m "
                                       "and band_top_m > band_bottom_m", (elev, bb, bt)))
    return name, elev, bb, bt


def _draw_floor_levels(ax, renderer, floors: Sequence, s, z, occupied: list[Bbox]) -> list:
    """Draw each floor's slab line, shaded occupied band and name; return key entries."""
    span = s[-1] - s[0]
    for i, f in enumerate(floors):
        name, elev, bb, bt = _floor_band(i, f)
        ax.axhspan(elev + bb, elev + bt, facecolor="0.55", alpha=0.16, edgecolor="none",
                   zorder=0.5)
        ax.axhline(elev, color=_INK, linewidth=1.6, zorder=5)
        text = (f"{name}: floor at {format_value(elev)} m, occupied {format_value(bb)} to "
                f"{format_value(bt)} m above it")
        label_z = None
        if z[0] <= elev <= z[-1] - 0.02 * (z[-1] - z[0]):
            label_z = elev
        elif elev < z[0] < elev + bt:
            label_z, text = z[0], text + " (floor below the view)"
        if label_z is not None:
            t = ax.annotate(text, xy=(s[-1] - 0.01 * span, label_z), xytext=(0, 2.5),
                            textcoords="offset points", fontsize=7, ha="right", va="bottom",
                            color=_INK, zorder=9, path_effects=_HALO,
                            annotation_clip=True)
            occupied.append(_text_box(t, renderer))
    if not floors:
        return []
    return [(Line2D([], [], color=_INK, linewidth=1.6), "floor level"),
            (Patch(facecolor="0.55", alpha=0.16, edgecolor="none"),
             "occupied band of a floor")]


def _draw_exposure_lines(ax, s, z, vm, exposure_lines: Sequence[ExposureLine]):
    """Draw the exposure lines reached in view; key entries, line sets and sources."""
    entries = []
    sources: list[str] = []
    logv = _log_or_linear(vm, True)
    finite = vm[np.isfinite(vm)]
    exposure_sets: list[_LineSet] = []
    for i, e in enumerate(exposure_lines):
        if not isinstance(e, ExposureLine) or not (math.isfinite(e.value_T) and e.value_T > 0):
            raise FringeInputError(must_be(f"exposure_lines[{i}]",
                                           "an ExposureLine with a positive value_T", e))
        val = e.value_T * 1e3
        if e.source not in sources:
            sources.append(e.source)
        style = _EXPOSURE_STYLES[i % len(_EXPOSURE_STYLES)]  # one dash pattern per line
        text = f"exposure line {e.label}"
        if finite.size and finite.min() < val < finite.max():
            cs = ax.contour(s, z, logv, levels=[math.log10(val)], colors=_EXPOSURE_COLOR,
                            linewidths=1.6, linestyles=[style], zorder=4.6)
            short = e.label.split(":")[0].split(" (")[0]
            exposure_sets.append(_LineSet(cs, [short], [short], 7.5, "bold",
                                          _EXPOSURE_COLOR))
        else:
            text += " (not reached in this view)"
        entries.append((Line2D([], [], color=_EXPOSURE_COLOR, linewidth=1.6, linestyle=style),
                        text))
    return entries, exposure_sets, sources
