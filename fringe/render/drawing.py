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
from shapely.ops import nearest_points, polylabel

from fringe.analysis.geometry import footprint_rectangle
from fringe.model.constants import DEFAULT_THRESHOLDS_MT
from fringe.model.errors import FringeInputError, must_be
from fringe.model.site import STANDARD_SCALES
from fringe.model.verdict import Verdict
from fringe.render import labels as lp
from fringe.render.paths import MovingSteelMark, draw_moving_steel, mark_geometries
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
    paper_size_in,
    save_figure,
    sheet_title,
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
    "scale_bar_length_m", "drawing_scale", "paper_size_in", "sheet_title",
]


_EXPOSURE_COLOR = HAZARD_COLOR
_EXPOSURE_STYLES = [(0, (7, 2, 1.5, 2)), (0, (4, 1.5)), (0, (1.2, 1.5)), (0, (9, 3))]
_MAIN = (0.042, 0.185, 0.670, 0.775)
_KEY_LEFT = 0.738  # left edge of the key column (fringe.render.sheet), figure fraction


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
#:           mistaken for the black boundary line);
#: points  : a small cross at each point (e.g. candidate magnet centres).
#: steel   : grey outline hatched with fine diagonals (a steel part of the building), its
#:           name written at its top left corner (``Overlay.name``).
OVERLAY_KINDS: dict[str, dict[str, Any]] = {
    "wall": {"hatch": None, "edgecolor": "0.6", "linewidth": 3.4, "linestyle": "-",
             "zorder": 2.2},  # under the field lines, above the bands
    "hazard": {"hatch": "xx", "edgecolor": HAZARD_COLOR, "linewidth": 1.6, "linestyle": "-"},
    "points": {"hatch": None, "edgecolor": "0.1", "linewidth": 1.1, "linestyle": "none",
               "marker": "+", "markersize": 6},
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
                show_gauss: bool = False,
                uncertainty: float = 0.0) -> tuple[list, list[_LineSet]]:
    """Filled bands between consecutive levels, contour lines, emphasised boundary.

    Returns legend entries (handle, label) and the unlabelled line sets (boundary first).
    With ``show_gauss`` (and ``unit`` "mT") every level also reads in gauss, in brackets.
    With ``uncertainty`` u > 0 the boundary's uncertainty band (values between
    boundary/(1 + u) and boundary/(1 − u)) is shaded (:func:`_draw_uncertainty_band`).
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
        if uncertainty > 0:
            entries += _draw_uncertainty_band(ax, x, y, Z, boundary_level, uncertainty,
                                              log_contours)
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


#: The uncertainty band of the boundary: a translucent white veil with a sparse dot
#: hatch in the ink colour, so the field bands under it stay readable (our own style).
_UNCERTAINTY_STYLE: dict[str, Any] = {"facecolor": (1.0, 1.0, 1.0, 0.45), "hatch": "..",
                                      "edgecolor": _INK}


def _draw_uncertainty_band(ax, x, y, Z, boundary_level: float, uncertainty: float,
                           log_contours: bool) -> list:
    """Shade where the map lies between boundary/(1 + u) and boundary/(1 − u): the band
    the true boundary line lies in when the field is known to ±u (docs/uncertainty.md).
    Returns its legend entry."""
    lo, hi = boundary_level / (1.0 + uncertainty), boundary_level / (1.0 - uncertainty)
    finite = Z[np.isfinite(Z)]
    zlo, zhi = _log_or_linear([lo, hi], log_contours)
    if finite.size and finite.max() > zlo and finite.min() < zhi:
        cs = ax.contourf(x, y, Z, levels=[zlo, zhi], colors=[_UNCERTAINTY_STYLE["facecolor"]],
                         hatches=[_UNCERTAINTY_STYLE["hatch"]], zorder=3.6)
        cs.set_edgecolor(_UNCERTAINTY_STYLE["edgecolor"])
        cs.set_linewidth(0.0)
        # both limits as fine dotted lines, so a narrow band still shows its edges
        ax.contour(x, y, Z, levels=[zlo, zhi], colors=_INK, linewidths=0.8,
                   linestyles=[(0, (1, 1.2))], zorder=3.7)
    pct = f"{uncertainty * 100:.3g}"
    return [(Patch(**_UNCERTAINTY_STYLE, linewidth=0.8, linestyle=(0, (1, 1.2))),
             f"uncertainty band ±{pct} % (where the boundary may lie)")]


def _text_size_px(ax, renderer, text: str, fontsize: float, weight: str) -> tuple[float, float]:
    t = ax.text(0, 0, text, fontsize=fontsize, fontweight=weight)
    bb = t.get_window_extent(renderer)
    t.remove()
    return bb.width, bb.height


def _bbox_tuple(bb) -> lp.Box:
    return (float(bb.x0), float(bb.y0), float(bb.x1), float(bb.y1))


def _label_lines(ax, renderer, line_sets: Sequence[_LineSet], obs: lp.Obstacles,
                 max_per_level: int = 2) -> list:
    """Label contour lines where the label is clear of everything already placed.

    For each level, candidate points are sampled along every line piece long enough to
    carry the label; a point is accepted where the label's box stays inside the drawing,
    clear of the hard obstacles of ``obs`` (labels, markers, walls, magnet outlines),
    preferring straight stretches, places with no other line under the label and the
    lower left (so labels of nested lines line up). The long label of a set falls back to
    its short form when no piece can carry it. Every placed label box is added to ``obs``.
    """
    out = []
    for ls in line_sets:
        if not ls.beside:
            _fmt, plan = _plan_line_set(ax, renderer, ls, obs, max_per_level, False)
            out.extend(_draw_inline_labels(ax, ls, plan))
            continue
        # beside its line, crossing no other line: any form, else the level alone just
        # outside the loop; only then crossing other lines, in the same order
        for strict in (True, False):
            _fmt, plan = _plan_line_set(ax, renderer, ls, obs, max_per_level, strict)
            if plan:
                out.extend(_draw_beside_labels(ax, ls, plan))
                break
            near = (_label_near_pieces(ax, renderer, ls, obs, max_per_level, strict)
                    if ls.near_fallback else [])
            if near:
                out.extend(near)
                break
    return out


def _label_forms(ls: _LineSet, i: int) -> list[str]:
    """Label texts of level ``i`` to try, longest first (long, wrapped if beside, short)."""
    forms = [ls.labels[i], ls.short_labels[i]]
    if ls.beside and len(ls.labels[i]) > 20:  # a long label may go on two lines
        forms.insert(1, textwrap.fill(ls.labels[i], math.ceil(len(ls.labels[i]) / 2)))
    return forms


def _plan_line_set(ax, renderer, ls: _LineSet, obs: lp.Obstacles, max_per_level: int,
                   strict: bool):
    """Label text by level and the label spots of one line set.

    A spot is (px point, angle, text, level index, piece index, arc length, width). A
    label beside its line tries every form clear of other lines (``strict``) or its last
    form anywhere (not ``strict``).
    """
    cs = ls.cs
    fmt: dict[float, str] = {}
    plan: list[tuple] = []
    for i, path in enumerate(cs.get_paths()):
        if i >= len(ls.labels):
            break
        pieces = _path_pieces(path)
        order = sorted(range(len(pieces)), key=lambda k: -len(pieces[k]))
        forms = list(dict.fromkeys(_label_forms(ls, i)))
        if ls.beside and not strict:
            forms = forms[-1:]
        for text in forms:
            w, h = _text_size_px(ax, renderer, text, ls.fontsize, ls.weight)
            chosen = []
            for k in order:
                if len(chosen) >= max_per_level:
                    break
                pt = _best_point_on_piece(ax, pieces[k], w, h, obs,
                                          offset_px=(h / 2 + 3) if ls.beside else 0.0,
                                          clear_of_lines=ls.beside and strict)
                if pt is not None:
                    chosen.append((k, pt))
                    obs.add_box(pt[3])
            if chosen:
                fmt[float(cs.levels[i])] = text
                for k, (p, ang, t_arc, _b) in chosen:
                    plan.append((p, ang, text, i, k, t_arc, w))
                break
    return fmt, plan


def _path_pieces(path) -> list[np.ndarray]:
    """The pieces (polylines, data coordinates) of one contour level's path."""
    return [np.asarray(p) for p in path.to_polygons(closed_only=False) if len(p) >= 2]


def _upright_deg(ang: float) -> float:
    deg = math.degrees(ang)
    return deg - 180 if deg > 90 else (deg + 180 if deg < -90 else deg)


def _draw_beside_labels(ax, ls: _LineSet, plan) -> list:
    """Draw the planned labels as upright-turned texts beside their line."""
    out = []
    to_data = ax.transData.inverted()
    for p, ang, text, *_ in plan:
        xd, yd = to_data.transform(p)
        out.append(ax.text(xd, yd, text, rotation=_upright_deg(ang), rotation_mode="anchor",
                           ha="center", va="center", fontsize=ls.fontsize,
                           multialignment="center", linespacing=1.05,
                           fontweight=ls.weight, color=ls.color, zorder=8,
                           path_effects=_HALO, gid="contour-label"))
    return out


def _cut_piece(piece: np.ndarray, d: np.ndarray, a: float, b: float) -> list[np.ndarray]:
    """``piece`` (data) without its stretch between display arc lengths ``a`` and ``b``."""
    s = np.concatenate([[0.0], np.cumsum(np.hypot(*np.diff(d, axis=0).T))])
    x, y = piece[:, 0], piece[:, 1]
    out = []
    if a > 0:
        keep = s < a
        head = np.vstack([piece[keep], [np.interp(a, s, x), np.interp(a, s, y)]])
        out.append(head)
    if b < s[-1]:
        keep = s > b
        tail = np.vstack([[np.interp(b, s, x), np.interp(b, s, y)], piece[keep]])
        out.append(tail)
    return [p for p in out if len(p) >= 2]


def _draw_inline_labels(ax, ls: _LineSet, plan) -> list:
    """Draw the planned labels inline, breaking their lines under them."""
    out = []
    to_data = ax.transData.inverted()
    paths = ls.cs.get_paths()
    cuts: dict[int, dict[int, tuple[float, float]]] = {}
    for p, ang, text, i, k, t_arc, w in plan:
        xd, yd = to_data.transform(p)
        out.append(ax.text(xd, yd, text, rotation=_upright_deg(ang), rotation_mode="anchor",
                           ha="center", va="center", fontsize=ls.fontsize,
                           fontweight=ls.weight, color=ls.color, zorder=8,
                           path_effects=_HALO, gid="contour-label"))
        cuts.setdefault(i, {})[k] = (t_arc - w / 2 - 3, t_arc + w / 2 + 3)
    for i, by_piece in cuts.items():
        pieces = _path_pieces(paths[i])
        kept: list[np.ndarray] = []
        for k, piece in enumerate(pieces):
            if k in by_piece:
                kept.extend(_cut_piece(piece, ax.transData.transform(piece), *by_piece[k]))
            else:
                kept.append(piece)
        if kept:
            codes = [np.r_[MplPath.MOVETO, np.full(len(q) - 1, MplPath.LINETO)] for q in kept]
            paths[i] = MplPath(np.concatenate(kept), np.concatenate(codes).astype(
                MplPath.code_type))
        else:
            paths[i] = MplPath(np.zeros((0, 2)))
    ls.cs.stale = True
    return out


def _label_near_pieces(ax, renderer, ls: _LineSet, obs: lp.Obstacles,
                       max_per_level: int, strict: bool = False) -> list:
    """Horizontal labels just outside small closed loops (above, below, right, left).

    Used when a line is too short or too curved for a label alongside it; the line is
    left unbroken. With ``strict`` the label crosses no other line.
    """
    out = []
    inv = ax.transData.inverted()
    for i, path in enumerate(ls.cs.get_paths()):
        if i >= len(ls.near_fallback):
            break
        text = ls.near_fallback[i]
        w, h = _text_size_px(ax, renderer, text, ls.fontsize, ls.weight)
        pieces = sorted(_path_pieces(path), key=lambda p: -len(p))
        if not pieces:
            continue
        middle = ax.transData.transform(np.vstack(pieces)).mean(axis=0)
        for piece in pieces[:max_per_level]:
            d = ax.transData.transform(piece)
            d = d[np.all(np.isfinite(d), axis=1)]
            if len(d) < 2:
                continue
            loop = (*d.min(axis=0), *d.max(axis=0))
            sides = [j for j, dxy in enumerate(lp.AROUND_DIRECTIONS) if 0 in dxy]
            cands = [c for j, c in enumerate(lp.around(loop, w, h, gaps=(2.0, 6.0)))
                     if j % 8 in sides]  # above, below, right, left of the loop
            # outward first: away from the middle of all the level's loops (the magnet)
            cxy = np.array([((c[0] + c[2]) / 2, (c[1] + c[3]) / 2) for c in cands])
            away = np.hypot(*(cxy - middle).T)
            cost = np.repeat([0.0, 5.0], len(sides)) + 0.1 * (away.max() - away)
            k = lp.choose(cands, obs, extra_cost=cost)
            if k is None or (strict and obs.soft_cost(cands[k]) > 0.5):
                continue
            b = cands[k]
            obs.add_box(b)
            xd, yd = inv.transform(((b[0] + b[2]) / 2, (b[1] + b[3]) / 2))
            out.append(ax.text(xd, yd, text, ha="center", va="center", fontsize=ls.fontsize,
                               fontweight=ls.weight, color=ls.color, zorder=8,
                               path_effects=_HALO, gid="contour-label"))
    return out


def _best_point_on_piece(ax, piece, w, h, obs: lp.Obstacles, offset_px: float = 0.0,
                         clear_of_lines: bool = False):
    """Best label spot on one contour piece: ((x, y) px, angle rad, arc length px, box)
    or None.

    With ``offset_px`` the label centre is moved off the line along its normal, to the
    convex side (where a straight label clears a curved line). With ``clear_of_lines``
    no soft line (another threshold, an extra layer) may pass under the label.
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
    if not offset_px:
        margin = max(margin, w / 2 + 4)  # the line is cut under an inline label
    ts = np.arange(margin, length - margin + 1e-9, max(w / 4.0, 4.0))
    if ts.size == 0:
        return None
    c = _piece_candidates(d, s, length, ts, w)
    bad = np.zeros(ts.shape, dtype=bool)
    side_cost = np.zeros(ts.shape)
    if offset_px:
        c, bad, side_cost = _offset_candidates(d, s, length, closed, c, offset_px, h)
    return _best_candidate(c, w, h, obs, bad, side_cost, 1.0 if offset_px else 0.3,
                           clear_of_lines, lp.segments_from_lines([d]))


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
                       offset_px: float, h: float):
    """Candidates moved off the line to both sides, with rejection flags and side costs.

    Rejected: a spot where the line bulges towards the label past the anchor point (it
    would cross the label), or runs away from it by more than the label's height (the
    label would float free of its line).
    """
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
    u = np.linspace(0.0, 1.0, 9)
    tu = np.clip(ta[:, None] + (tb - ta)[:, None] * u[None, :], 0, length)
    qx = np.interp(tu, s, d[:, 0])
    qy = np.interp(tu, s, d[:, 1])
    dev = sign[:, None] * ((qx - px[:, None]) * nx[:, None] + (qy - py[:, None]) * ny[:, None])
    bad = (dev.max(axis=1) > 2.0) | (dev.min(axis=1) < -max(1.3 * h, 12.0))
    px = px + sign * offset_px * nx
    py = py + sign * offset_px * ny
    return (ts, ta, tb, px, py, ang, nx, ny, sag), bad, side_cost


def _best_candidate(c, w, h, obs: lp.Obstacles, bad, side_cost, soft_weight: float,
                    clear_of_lines: bool, own: np.ndarray):
    """Highest-scoring free candidate: ((x, y) px, angle, arc length, box) or None."""
    ts, _ta, _tb, px, py, ang, _nx, _ny, sag = c
    ew = np.abs(w * np.cos(ang)) + np.abs(h * np.sin(ang)) + 4
    eh = np.abs(w * np.sin(ang)) + np.abs(h * np.cos(ang)) + 4
    boxes = np.column_stack([px - ew / 2, py - eh / 2, px + ew / 2, py + eh / 2])
    ok = ~bad
    if ok.any():
        ok[ok] = obs.free_mask(boxes[ok])
    if not ok.any():
        return None
    idx = np.flatnonzero(ok)
    clear = np.minimum(lp.clearances(boxes[idx], obs.boxes), 1.5 * h)
    soft = obs.soft_costs(boxes[idx], minus=own)  # other lines under the label
    score = (clear - 0.5 * np.abs(sag[idx]) - soft_weight * soft - side_cost[idx]
             - 1e-4 * (px[idx] + py[idx]))
    if clear_of_lines:
        score[soft > 0.5] = -np.inf
        if np.all(np.isinf(score)):
            return None
    k = int(idx[int(np.argmax(score))])
    return (float(px[k]), float(py[k])), float(ang[k]), float(ts[k]), tuple(boxes[k])


def _add_polygon(ax, geom, **kw):
    patch = PathPatch(_polygon_path(geom), **kw)
    ax.add_patch(patch)
    return patch


def _label_forms_of_room(lines: list[str], rotations, fs_max: float, fs_min: float):
    """(text, font size, rotation) of a room label to try, largest and fullest first:
    all lines at the largest size, the name wrapped, smaller sizes, then fewer lines."""
    name = lines[0]
    name_forms = [name] + [textwrap.fill(name, max(6, math.ceil(len(name) / k)))
                           for k in (2, 3) if len(name) > 12]
    for n_keep in range(len(lines), 0, -1):
        fs = fs_max
        while fs >= fs_min - 1e-9:
            for form in dict.fromkeys(name_forms):
                for rot in rotations:
                    yield "\n".join([form, *lines[1:n_keep]]), fs, rot
            fs -= 0.5


def _room_spots(ax, poly, pref_xy) -> tuple[np.ndarray, np.ndarray]:
    """Candidate label centres (display px) inside ``poly`` and their distance (px) from
    the preferred point, nearest first."""
    x0, y0, x1, y1 = poly.bounds
    (dx0, dy0), (dx1, dy1) = ax.transData.transform([(x0, y0), (x1, y1)])
    area_px = abs((dx1 - dx0) * (dy1 - dy0))
    step_px = max(5.0, math.sqrt(area_px / 700.0))
    sx, sy = _display_per_metre(ax)
    xs = np.arange(x0, x1 + 1e-12, step_px / sx)
    ys = np.arange(y0, y1 + 1e-12, step_px / sy)
    X, Y = np.meshgrid(xs, ys)
    pts = np.column_stack([X.ravel(), Y.ravel()])
    pts = pts[shapely.contains_xy(poly, pts[:, 0], pts[:, 1])]
    pts = np.vstack([np.asarray(pref_xy, float)[None, :], pts])
    d = ax.transData.transform(pts)
    p0 = d[0]
    dist = np.hypot(d[:, 0] - p0[0], d[:, 1] - p0[1])
    order = np.argsort(dist, kind="stable")
    return d[order], dist[order]


def _fit_label(ax, renderer, poly, lines: list[str], bold_first: bool,
               avoid=(), obs: lp.Obstacles | None = None, fs_max: float = 7.5,
               fs_min: float = 5.0):
    """Place a multi-line label inside ``poly``, shrinking, wrapping or turning it to fit.

    ``avoid`` is a sequence of geometries in decreasing order of strictness: the preferred
    spot is the pole of inaccessibility of ``poly`` minus the first of them that leaves at
    least 15 % of the room (else of ``poly`` itself). The label takes the largest, fullest
    form that has a free spot (see :mod:`fringe.render.labels`: clear of walls, magnet
    outlines, markers and labels already placed) in the room, the spot nearest the
    preferred one with least threshold line under it. Failing that, the smallest form is
    set at the preferred spot; the label is clipped to ``poly`` whatever happens.
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

    t = ax.text(cx, cy, "", ha="center", va="center", color=_INK, zorder=7,
                path_effects=_HALO, linespacing=1.1, gid="room-label")
    if bold_first:
        t.set_fontweight("bold")
    patch = PathPatch(_polygon_path(poly), transform=ax.transData, visible=False)
    ax.add_patch(patch)
    t.set_clip_path(patch)
    rotations = (0, 90) if h_m > 1.3 * w_m else (0,)
    spots, dist = _room_spots(ax, poly, (cx, cy))
    room_w = float(np.ptp(spots[:, 0])) + 1.0 if len(spots) else 0.0
    room_h = float(np.ptp(spots[:, 1])) + 1.0 if len(spots) else 0.0
    form = None
    for text, fs, rot in _label_forms_of_room(lines, rotations, fs_max, fs_min):
        t.set_text(text)
        t.set_fontsize(fs)
        t.set_rotation(rot)
        t.set_position((cx, cy))
        bb = t.get_window_extent(renderer)
        if bb.width > room_w or bb.height > room_h:
            continue
        if obs is None:
            form = (text, fs, rot)
            break
        ox, oy = ax.transData.transform((cx, cy))
        rel = np.array([bb.x0 - ox, bb.y0 - oy, bb.x1 - ox, bb.y1 - oy])
        cands = np.column_stack([spots, spots]) + rel[None, :]
        k = lp.choose(cands, obs, extra_cost=0.15 * dist)
        if k is not None:
            form = (text, fs, rot)
            t.set_position(ax.transData.inverted().transform(spots[k]))
            break
    if form is None:  # does not fit: smallest size at the preferred spot, clipped
        t.set_text(lines[0])
        t.set_rotation(rotations[-1])
        t.set_fontsize(fs_min - 0.5)
        t.set_position((cx, cy))
    if obs is not None:
        obs.add_box(_bbox_tuple(t.get_window_extent(renderer)))
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


def _draw_rooms(ax, renderer, rooms: Sequence[RoomMark], avoid,
                obs: lp.Obstacles | None = None) -> tuple[list, list]:
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
                                avoid=avoid, obs=obs))
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
    """Magnet footprints (plan) or winding cross-sections (section) and their envelopes;
    the names of plan footprints are placed later (:func:`_place_magnet_labels`)."""
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
    return [], entries


def _magnet_parts(m):
    """(name, footprint, envelope or None) of a MagnetOutline or (name, polygon) pair."""
    if isinstance(m, MagnetOutline):
        env = m.envelope if m.envelope is not None and not m.envelope.is_empty else None
        return m.name, m.polygon, env
    name, poly = tuple(m)[:2]
    return name, poly, None


def _place_magnet_labels(ax, renderer, magnets, obs: lp.Obstacles) -> list:
    """Each magnet's name: inside its footprint when it fits there clear of the outline,
    else beside the magnet (outside its envelope) on a leader to the footprint."""
    texts = []
    inv = ax.transData.inverted()
    for m in magnets:
        name, poly, env = _magnet_parts(m)
        c = poly.centroid
        kw = {"fontsize": 7, "fontweight": "bold", "color": _INK, "zorder": 7.5,
              "path_effects": _HALO, "gid": "magnet-label"}
        t = ax.text(c.x, c.y, name, ha="center", va="center", **kw)
        b = _bbox_tuple(t.get_window_extent(renderer))
        if obs.free(b):
            obs.add_box(b)
            texts.append(t)
            continue
        t.remove()
        w, h = b[2] - b[0], b[3] - b[1]
        x0, y0, x1, y1 = (env if env is not None else poly).bounds
        anchor = _bbox_tuple(Bbox(ax.transData.transform([(x0, y0), (x1, y1)])))
        gaps = (4.0, 12.0, 24.0, 40.0, 60.0, 90.0)
        cands = lp.around(anchor, w, h, gaps=gaps)
        k = lp.choose(cands, obs, extra_cost=np.repeat(gaps, 8), soft_weight=0.5)
        if k is None:  # nowhere free: inside, clipped to the footprint
            t = ax.text(c.x, c.y, name, ha="center", va="center", **kw)
            patch = PathPatch(_polygon_path(poly), transform=ax.transData, visible=False)
            ax.add_patch(patch)
            t.set_clip_path(patch)
            texts.append(t)
            continue
        bx = cands[k]
        obs.add_box(bx)
        centre = inv.transform(((bx[0] + bx[2]) / 2, (bx[1] + bx[3]) / 2))
        tip = nearest_points(poly.boundary, Point(*centre))[0]
        texts.append(ax.annotate(name, xy=(tip.x, tip.y), xytext=tuple(centre),
                                 textcoords="data", ha="center", va="center",
                                 arrowprops={"arrowstyle": "-", "color": _INK,
                                             "linewidth": 0.6, "shrinkA": 0, "shrinkB": 0},
                                 **kw))
    return texts


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
        if st.get("marker"):
            xy = shapely.get_coordinates(geom)
            mk = {"marker": st["marker"], "markersize": st["markersize"],
                  "markeredgewidth": st["linewidth"], "color": st["edgecolor"],
                  "linestyle": "none"}
            ax.plot(xy[:, 0], xy[:, 1], zorder=st.get("zorder", 4.5), gid="overlay-points",
                    path_effects=[patheffects.withStroke(linewidth=st["linewidth"] + 2,
                                                         foreground="white")], **mk)
            handle = Line2D([], [], **mk)
        elif polys and st["hatch"]:
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


_MARKER_PX = 12.0  # side of the box an equipment marker keeps clear, display px


def _equipment_xy(i: int, e) -> np.ndarray:
    if not isinstance(e, EquipmentMark):
        raise FringeInputError(must_be(f"equipment[{i}]", "an EquipmentMark", e))
    xy = np.asarray(e.xy_m, float).ravel()
    if xy.size != 2 or not np.all(np.isfinite(xy)):
        raise FringeInputError(must_be(f"equipment[{i}].xy_m ({e.name})",
                                       "two finite coordinates in metres", e.xy_m))
    return xy


def _marker_box(ax, xy) -> lp.Box:
    p = ax.transData.transform(xy)
    return lp.box_around(float(p[0]), float(p[1]), _MARKER_PX, _MARKER_PX)


def _draw_equipment(ax, equipment) -> list:
    """Equipment markers (diamonds, filled when ``exceeds``) and volume outlines; key
    entries. Their labels are placed later (:func:`_place_equipment_labels`)."""
    any_exceeds = False
    for i, e in enumerate(equipment):
        xy = _equipment_xy(i, e)
        exceeds = (e.verdict or "").lower() == Verdict.EXCEEDS
        any_exceeds |= exceeds
        if e.outline is not None:
            ax.add_patch(PathPatch(_polygon_path(e.outline), facecolor="none",
                                   edgecolor=_INK, linewidth=1.2, linestyle="-.",
                                   hatch="////" if exceeds else None, zorder=8.5,
                                   gid="equipment-outline"))
        ax.plot([xy[0]], [xy[1]], marker="D", markersize=7 if exceeds else 6,
                markerfacecolor=_INK if exceeds else "white", markeredgecolor=_INK,
                markeredgewidth=1.4, linestyle="none", zorder=9, gid="equipment-marker")
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
    return entries


#: Gaps (display px) between an equipment marker and its label, ring by ring; beyond the
#: first two rings the label hangs on a leader line.
_EQUIPMENT_GAPS_PX = (2.0, 7.0, 16.0, 28.0, 44.0, 64.0, 90.0, 125.0)


def _label_spot(ax, renderer, text: str, xy, kw: dict, obs: lp.Obstacles, boundary,
                sizes: tuple[float, ...] = (7.0, 6.0, 5.5)) -> tuple[int, list]:
    """The candidate index and candidates for a label on a leader to the plan point ``xy``
    (``kw["fontsize"]`` is set to the size chosen): clear of the hard obstacles and the
    ``boundary`` segments (if any), else of the hard obstacles, at each of ``sizes`` in
    turn, before a label at the first size may cross a wall."""
    near = 0.4 * np.repeat(_EQUIPMENT_GAPS_PX, 8)  # prefer short leaders
    extra_walls = (boundary, None) if boundary is not None else (None,)
    first = None
    for size in sizes:
        kw["fontsize"] = size
        probe = ax.text(0, 0, text, **kw)
        bb = probe.get_window_extent(renderer)
        probe.remove()
        cands = lp.around(_marker_box(ax, xy), bb.width, bb.height, gaps=_EQUIPMENT_GAPS_PX)
        if first is None:
            first = cands
        for more in extra_walls:
            k = lp.choose(cands, obs, soft_weight=0.5, extra_cost=near, more_walls=more)
            if k is not None:
                return k, cands
    kw["fontsize"] = sizes[0]
    k = lp.choose(first, obs, walls=False, soft_weight=0.5, extra_cost=near)
    return (0 if k is None else k), first


def _place_equipment_labels(ax, renderer, equipment, obs: lp.Obstacles,
                            boundary=None) -> list:
    """Each equipment label at the best free spot round its marker, ring by ring
    (:func:`fringe.render.labels.around`), on a leader line to the marker.

    Free: clear of the hard obstacles of ``obs`` and of the ``boundary`` segments
    (display px); failing that, of the hard obstacles only; failing both at 7 pt, the
    same at 6 and 5.5 pt; failing that, of other labels only at 7 pt (the label may then
    cross a wall); else the first spot.
    """
    texts = []
    inv = ax.transData.inverted()
    for i, e in enumerate(equipment):
        xy = _equipment_xy(i, e)
        exceeds = (e.verdict or "").lower() == Verdict.EXCEEDS
        kw = {"fontsize": 7, "color": _INK, "zorder": 9.5, "path_effects": _HALO,
              "fontweight": "bold" if exceeds else "normal", "gid": "equipment-label"}
        k, cands = _label_spot(ax, renderer, _equipment_label(e, exceeds), xy, kw,
                                         obs, boundary)
        b = cands[k]
        obs.add_box(b)
        cx, cy = (b[0] + b[2]) / 2, (b[1] + b[3]) / 2
        dx, _dy = lp.AROUND_DIRECTIONS[k % len(lp.AROUND_DIRECTIONS)]
        align = "left" if dx > 0 else ("right" if dx < 0 else "center")
        texts.append(ax.annotate(_equipment_label(e, exceeds), xy=(xy[0], xy[1]),
                                 xytext=tuple(inv.transform((cx, cy))), textcoords="data",
                                 ha="center", va="center", multialignment=align,
                                 arrowprops={"arrowstyle": "-", "color": _INK,
                                             "linewidth": 0.6, "shrinkA": 0, "shrinkB": 4},
                                 **kw))
    return texts


def _point_label_placer(ax, renderer, obs: lp.Obstacles):
    """A function ``place(text, xy_m, bold) -> Bbox`` that sets a label on a leader at the
    best free spot round the plan point ``xy_m``, as equipment labels are set (clear of
    the hard obstacles of ``obs`` if it can be, else of other labels), and adds its box to
    ``obs``."""
    inv = ax.transData.inverted()

    def place(text: str, xy_m, bold: bool) -> Bbox:
        kw = {"fontsize": 7.5, "color": _INK, "zorder": 9.5, "path_effects": _HALO,
              "fontweight": "bold" if bold else "normal", "gid": "path-label"}
        k, cands = _label_spot(ax, renderer, text, xy_m, kw, obs, None, sizes=(7.5,))
        b = cands[k]
        obs.add_box(b)
        ax.annotate(text, xy=(xy_m[0], xy_m[1]),
                    xytext=tuple(inv.transform(((b[0] + b[2]) / 2, (b[1] + b[3]) / 2))),
                    textcoords="data", ha="center", va="center",
                    arrowprops={"arrowstyle": "-", "color": _INK, "linewidth": 0.6,
                                "shrinkA": 0, "shrinkB": 6}, **kw)
        return Bbox.from_extents(*b)

    return place


#: Extra layers that labels must not cross (like walls); the others only cost.
_HARD_OVERLAY_KINDS = frozenset({"wall", "outline"})


def _px_segments(ax, geoms) -> np.ndarray:
    """Segments (display px, (n, 4)) of the lines and polygon rings of ``geoms``."""
    lines = []
    for g in geoms:
        for xy in _lines_of(g):
            lines.append(ax.transData.transform(np.asarray(xy, float)[:, :2]))
    return lp.segments_from_lines(lines)


def _map_obstacles(ax, renderer, *, rooms, magnets, equipment, overlays,
                   line_sets) -> lp.Obstacles:
    """Obstacles of a map for its labels (:class:`fringe.render.labels.Obstacles`).

    Hard: walls (room outlines, DXF walls), magnet footprints and cryostat envelopes,
    dashed outlines (magnets of other floors), equipment markers. Soft: the threshold
    lines, other extra layers (attraction zone, dotted lines), equipment volumes.
    """
    axbb = ax.get_window_extent(renderer)
    obs = lp.Obstacles(frame=(axbb.x0 + 3, axbb.y0 + 3, axbb.x1 - 3, axbb.y1 - 3))
    hard = [r.polygon for r in rooms]
    for m in magnets:
        _name, poly, env = _magnet_parts(m)
        hard += [poly] + ([env] if env is not None else [])
    soft = [e.outline for e in equipment if getattr(e, "outline", None) is not None]
    for ov in overlays:
        _label, geom, kind = (ov.label, ov.geometry, ov.kind) if isinstance(ov, Overlay) \
            else tuple(ov)
        if not isinstance(geom, shapely.Geometry) or geom.is_empty:
            continue
        if OVERLAY_KINDS.get(kind, {}).get("marker"):
            for xy in shapely.get_coordinates(geom):
                obs.add_box(_marker_box(ax, xy))
        else:
            (hard if kind in _HARD_OVERLAY_KINDS else soft).append(geom)
    obs.add_walls(_px_segments(ax, hard))
    obs.add_soft(_px_segments(ax, soft))
    obs.add_soft(_line_set_segments(ax, line_sets))
    for i, e in enumerate(equipment):
        obs.add_box(_marker_box(ax, _equipment_xy(i, e)))
    return obs


def _line_set_segments(ax, line_sets) -> np.ndarray:
    """Display segments of every contour line of ``line_sets``."""
    lines = [ax.transData.transform(p) for ls in line_sets for path in ls.cs.get_paths()
             for p in _path_pieces(path)]
    return lp.segments_from_lines(lines)


def _below_axes(ax, fig):
    """Transform with x in the axes' data metres and y in inches below the axes' bottom."""
    bottom_in = ax.get_position().y0 * fig.get_figheight()
    return blended_transform_factory(
        ax.transData, Affine2D().translate(0, bottom_in) + fig.dpi_scale_trans)


def _draw_scale_bar(ax, x_range, y_range, renderer, scale_text: str = "") -> Bbox:
    """Scale bar under the lower-left corner of the drawing, outside it.

    The bar is ``scale_bar_length_m`` long in the drawing's data metres (x follows the
    map's data transform exactly), in four alternating segments (artists with gid
    "scale-bar-0" ... "scale-bar-3"), so it stays true at any print size; beside it the
    stated scale ("scale 1:100 at A3, printed at 100 %", gid "scale-ratio"). Returns its
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
    if not scale_text:  # not sized to a scale: say what it comes to on this paper
        width_in = ax.get_position().width * fig.get_figwidth()
        scale_text = f"about 1:{span / (width_in * 0.0254):.0f}"
    ax.text(x0 + length + 0.02 * span, y0 + h / 2,
            f"scale {scale_text}, printed at 100 %",
            ha="left", va="center", color="0.3", gid="scale-ratio", **{**kw,
                                                                      "fontsize": 6.5})
    return Bbox.union([r.get_window_extent(renderer) for r in segs])


def _draw_north_arrow(ax, renderer, north_deg: float = 0.0) -> Bbox:
    """North arrow just right of the drawing's top-right corner, outside it.

    ``north_deg`` is the direction of north measured from the site's +y axis,
    counter-clockwise positive (``[plan] north_deg``): 0 points the arrow up the sheet,
    90 to the left (west of the sheet), -90 to the right. The "N" sits beyond the arrow
    head and stays upright. Returns the box of the "N" in display px.
    """
    fig = ax.get_figure()
    a = math.radians(north_deg)
    ux, uy = -math.sin(a), math.cos(a)  # unit vector of north on the sheet
    half, r_n, n_w = 0.17, 0.30, 0.07  # inches: half the arrow, centre to "N", half its width
    # centred between the drawing and the key column (at most 0.75 in right of the
    # drawing), shrunk down to 55 % when an arrow pointing sideways would not fit
    gap_l = 0.06
    gap_r = min(0.75, (_KEY_LEFT - ax.get_position().x1) * fig.get_figwidth() - 0.06)
    lo = min(-half * ux, half * ux, r_n * ux - n_w)
    hi = max(-half * ux, half * ux, r_n * ux + n_w)
    f = max(0.55, min(1.0, (gap_r - gap_l) / (hi - lo)))
    half, r_n = half * f, r_n * f
    cx = (gap_l + gap_r) / 2 - (lo + hi) * f / 2
    cy = -0.42

    def at(dx: float, dy: float):
        return ax.transAxes + ScaledTranslation(cx + dx, cy + dy, fig.dpi_scale_trans)

    ax.annotate("", xy=(1.0, 1.0), xytext=(1.0, 1.0), xycoords=at(half * ux, half * uy),
                textcoords=at(-half * ux, -half * uy),
                arrowprops={"arrowstyle": "-|>,head_width=0.4,head_length=0.8",
                            "color": _INK, "linewidth": 1.6, "shrinkA": 0, "shrinkB": 0},
                zorder=11, annotation_clip=False, gid="north-arrow")
    t = ax.text(1.0, 1.0, "N", transform=at(r_n * ux, r_n * uy), ha="center",
                va="center", fontsize=10, fontweight="bold", zorder=11, clip_on=False,
                gid="north-label")
    return t.get_window_extent(renderer)


def drawing_scale(info: SheetInfo, x_span_m: float, y_span_m: float
                  ) -> tuple[int, str]:
    """The scale 1:n a map of ``x_span_m`` × ``y_span_m`` is drawn at, and a note.

    The stated ``info.drawing.scale`` when the map fits the drawing area of the paper at
    it; otherwise (or when none is stated) the smallest n of
    :data:`fringe.model.site.STANDARD_SCALES` (the largest drawing) at which it fits. The
    note (empty when the stated scale is kept or none was stated) says why another scale
    was taken. Beyond 1:10000 n is rounded up to a whole number.
    """
    paper = info.drawing.paper
    w_in, h_in = paper_size_in(paper)
    need = max(x_span_m / (_MAIN[2] * w_in * 0.0254), y_span_m / (_MAIN[3] * h_in * 0.0254))
    stated = info.drawing.scale
    if stated is not None and stated >= need * (1 - 1e-9):
        return stated, ""
    n = next((v for v in STANDARD_SCALES if v >= need * (1 - 1e-9)), math.ceil(need))
    note = ("" if stated is None else f"Drawn at 1:{n}: at the stated 1:{stated} this "
            f"drawing ({x_span_m:.3g} m × {y_span_m:.3g} m) does not fit {paper} paper.")
    return n, note


def _setup_map_axes(fig, x, y, x_label, y_label, scale_n: int | None = None):
    """The map axes; with ``scale_n`` sized so that 1 m of the map is 1000/scale_n mm on
    the paper (centred in the drawing area), else fitted to the area."""
    if scale_n is None:
        ax = fig.add_axes(_MAIN, label="map")
    else:
        w_fr = (x[-1] - x[0]) * 1000.0 / scale_n / 25.4 / fig.get_figwidth()
        h_fr = (y[-1] - y[0]) * 1000.0 / scale_n / 25.4 / fig.get_figheight()
        ax = fig.add_axes((_MAIN[0] + (_MAIN[2] - w_fr) / 2, _MAIN[1] + (_MAIN[3] - h_fr) / 2,
                           w_fr, h_fr), label="map")
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
              north_arrow: bool = True, palette=None, show_gauss: bool = False,
              moving_steel: Sequence[MovingSteelMark] = (),
              north_deg: float = 0.0,
              uncertainty: float = 0.0) -> Figure:
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
    moving_steel : sequence of MovingSteelMark
        Moving-steel paths coloured by their disturbance (:mod:`fringe.render.paths`).
    north_deg : float
        Direction of north from the +y axis, degrees counter-clockwise (``[plan]
        north_deg``); turns the north arrow only.
    uncertainty : float
        Relative field uncertainty u (0 ≤ u < 1, ``[plan] field_uncertainty``): with u > 0
        and a ``boundary_level`` the band between the boundary's inner and outer limits
        (values boundary/(1 − u) and boundary/(1 + u)) is shaded.

    Returns
    -------
    matplotlib.figure.Figure
        On ``info.drawing.paper`` (landscape), drawn to scale: the map axes measure
        1000/n mm per metre at the scale 1:n of :func:`drawing_scale`, stated in the
        title block and beside the scale bar; no pyplot state is touched.

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
    scale_n, scale_note = drawing_scale(info, x[-1] - x[0], y[-1] - y[0])
    scale_text = f"1:{scale_n} at {info.drawing.paper}"
    fig = _new_figure(info)
    _draw_frame(fig, info, kind="plan", scale_text=scale_text)
    ax = _setup_map_axes(fig, x, y, x_label, y_label, scale_n)
    renderer = _renderer(fig)
    entries, line_sets = _draw_bands(ax, x, y, v, list(lv), unit=unit,
                                     boundary_level=boundary_level,
                                     boundary_label=boundary_label, cmap=cmap,
                                     band_alpha=band_alpha, log_contours=log_contours,
                                     palette=palette, show_gauss=show_gauss,
                                     uncertainty=_check_uncertainty(uncertainty))
    entries += _draw_overlays(ax, overlays)
    _mag_texts, mag_entries = _draw_magnets(ax, magnets)
    mag_entries += _draw_magnets(ax, windings, section=True)[1]
    entries += _draw_equipment(ax, equipment)
    sx, _sy = _display_per_metre(ax)
    keep_clear = [m.polygon if isinstance(m, MagnetOutline) else m[1] for m in magnets]
    keep_clear = [g.buffer(6.0 / sx) for g in keep_clear]
    keep_clear += [Point(np.asarray(e.xy_m, float).ravel()[:2]).buffer(14.0 / sx)
                   for e in equipment if isinstance(e, EquipmentMark)]
    basic = shapely.union_all(keep_clear) if keep_clear else None
    # also keep room names off extra layers and off the boundary line and what it encloses
    features = [g.buffer(6.0 / sx) for g in _overlay_geometries(overlays)]
    features += [g.buffer(9.0 / sx) for g in mark_geometries(moving_steel)]
    features += _line_hulls(line_sets[0], 8.0 / sx) if line_sets and line_sets[0].beside \
        else []
    strict = shapely.union_all(features + ([basic] if basic is not None else [])) \
        if features else None
    scale_box = _draw_scale_bar(ax, (x[0], x[-1]), (y[0], y[-1]), renderer, scale_text)
    obs = _map_obstacles(ax, renderer, rooms=rooms, magnets=list(magnets) + list(windings),
                         equipment=equipment, overlays=overlays, line_sets=line_sets)
    # moving-steel paths are kept clear like walls; their labels go first
    obs.add_walls(_px_segments(ax, [g.buffer(9.0 / sx) for g in mark_geometries(moving_steel)]))
    occupied = [scale_box]
    if north_arrow:
        occupied.append(_draw_north_arrow(ax, renderer, north_deg))
    for b in occupied:
        obs.add_box(_bbox_tuple(b))
    entries += draw_moving_steel(ax, renderer, moving_steel, occupied,
                                 place=_point_label_placer(ax, renderer, obs))
    # labels in priority order: magnet names, room names, line values, equipment
    _place_magnet_labels(ax, renderer, magnets, obs)
    _room_texts, room_entries = _draw_rooms(ax, renderer, rooms, (strict, basic), obs)
    entries += room_entries + mag_entries
    _label_lines(ax, renderer, line_sets, obs)
    boundary = (_px_segments(ax, [LineString(p) for p in _path_pieces(
        line_sets[0].cs.get_paths()[0])]) if line_sets and line_sets[0].beside
        and line_sets[0].cs.get_paths() else None)  # equipment labels keep off it
    _place_equipment_labels(ax, renderer, equipment, obs, boundary)
    _draw_key_column(fig, [h for h, _ in entries], [lb for _, lb in entries],
                     f"{quantity} in {unit}", list(info.notes) + list(notes)
                     + ([scale_note] if scale_note else []))
    return fig


def _check_uncertainty(uncertainty) -> float:
    """``uncertainty`` as a float in [0, 1); FringeInputError otherwise."""
    u = float(uncertainty) if isinstance(uncertainty, (int, float)) else math.nan
    if not (math.isfinite(u) and 0.0 <= u < 1.0):
        raise FringeInputError(must_be("uncertainty", "a fraction ≥ 0 and < 1", uncertainty))
    return u


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
               cmap: str | None = None, show_gauss: bool = False,
               moving_steel: Sequence[MovingSteelMark] = (),
               north_deg: float = 0.0,
               uncertainty: float = 0.0) -> Figure:
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
    moving_steel : sequence of MovingSteelMark
        Moving-steel paths on this floor, as :func:`map_sheet`.
    north_deg : float
        As :func:`map_sheet`.
    uncertainty : float
        As :func:`map_sheet`: shade the boundary's uncertainty band.

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
                     show_gauss=show_gauss, moving_steel=moving_steel,
                     north_deg=north_deg, uncertainty=uncertainty)


def section_sheet(s_m, z_m, field_T, info: SheetInfo, *,
                  thresholds_mT: Sequence[float] = DEFAULT_THRESHOLDS_MT,
                  boundary_mT: float | None = 0.5, boundary_label: str | None = None,
                  floors: Sequence = (), windings: Sequence = (),
                  exposure_lines: Sequence[ExposureLine] = (), overlays: Sequence = (),
                  notes: Sequence[str] = (), s_label: str = "s along the section line, m",
                  cmap: str | None = None, show_gauss: bool = False,
                  uncertainty: float = 0.0) -> Figure:
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
    overlays, notes, s_label, cmap, show_gauss, uncertainty
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
    scale_n, scale_note = drawing_scale(info, s[-1] - s[0], z[-1] - z[0])
    scale_text = f"1:{scale_n} at {info.drawing.paper}"
    fig = _new_figure(info)
    _draw_frame(fig, info, kind="section", scale_text=scale_text)
    ax = _setup_map_axes(fig, s, z, s_label, "z (up), m", scale_n)
    renderer = _renderer(fig)
    entries, line_sets = _draw_bands(ax, s, z, vm, list(lv), unit="mT",
                                     boundary_level=boundary_mT, boundary_label=label,
                                     cmap=cmap, band_alpha=0.62, log_contours=True,
                                     palette=threshold_color if cmap is None else None,
                                     show_gauss=show_gauss,
                                     uncertainty=_check_uncertainty(uncertainty))
    entries += _draw_overlays(ax, overlays)
    occupied: list[Bbox] = []
    entries += _draw_floor_levels(ax, renderer, floors, s, z, occupied)
    _texts, wentries = _draw_magnets(ax, windings, section=True)
    occupied += _magnet_boxes(ax, windings)
    entries += wentries
    exposure_entries, exposure_sets, sources = _draw_exposure_lines(ax, s, z, vm,
                                                                    exposure_lines)
    entries += exposure_entries
    occupied.append(_draw_scale_bar(ax, (s[0], s[-1]), (z[0], z[-1]), renderer, scale_text))
    sets = line_sets[:1] + exposure_sets + line_sets[1:]
    obs = _map_obstacles(ax, renderer, rooms=(), magnets=windings, equipment=(),
                         overlays=overlays, line_sets=sets)
    for b in occupied:
        obs.add_box(_bbox_tuple(b))
    _label_lines(ax, renderer, sets, obs)
    src_notes = [f"Exposure lines: {src}." for src in sources]
    _draw_key_column(fig, [h for h, _ in entries], [lb for _, lb in entries],
                     "|B| in mT", list(info.notes) + list(notes) + src_notes
                     + ([scale_note] if scale_note else []))
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
