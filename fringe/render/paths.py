"""Moving steel on the plan sheets: each path drawn in the colour of its disturbance.

A path (a lift car's shaft, a vehicle's lane) is drawn as a line whose colour runs with
|ΔB| at the isocentre, in ppm, along a perceptually uniform colormap (matplotlib's
``plasma``, distinct from the field bands' viridis family) from 0 to the path's limit
(or, without a limit, its largest value); the worst point carries a ring and a label
with the figure, the limit and the verdict in words. A path seen end-on (a vertical lift
shaft on a plan) is a filled disc in the colour of its largest value on that storey.
A small colour bar inside the map gives the scale.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np
import shapely
from matplotlib import colormaps, patheffects
from matplotlib.collections import LineCollection
from matplotlib.colors import Normalize
from matplotlib.lines import Line2D
from matplotlib.transforms import Bbox

__all__ = ["MovingSteelMark", "PATH_CMAP", "MOVING_STEEL_LAYER", "END_ON_RADIUS_M",
           "draw_moving_steel", "mark_geometries", "dxf_path_lines"]

#: DXF layer of the moving-steel paths in the zone drawings (``zones-<floor>.dxf``).
MOVING_STEEL_LAYER: str = "FRINGE-MOVING-STEEL"
#: Radius of the circle that stands for a path seen end-on in DXF drawings, m.
END_ON_RADIUS_M: float = 0.3

#: Colormap of |ΔB| along moving-steel paths (perceptually uniform; not the bands' map).
PATH_CMAP: str = "plasma"
#: A path shorter than this in plan (m) is drawn as a disc (seen end-on).
END_ON_M: float = 0.05


@dataclass(frozen=True)
class MovingSteelMark:
    """A moving-steel path on one plan sheet.

    Parameters
    ----------
    name : str
    xy_m : array_like, shape (N, 2)
        The path's points on this storey, plan coordinates, m.
    abs_ppm : array_like, shape (N,)
        |ΔB| at the isocentre with the steel at each point, ppm.
    scale_ppm : float
        The value at the top of the colour scale (the limit, or the largest value).
    label : str
        Text beside the worst point (figure, limit, verdict).
    exceeds : bool
        True when the path's verdict is ``exceeds`` (label in upper case, heavier ring).
    """

    name: str
    xy_m: np.ndarray
    abs_ppm: np.ndarray
    scale_ppm: float
    label: str
    exceeds: bool = False


def mark_geometries(marks: Sequence[MovingSteelMark]) -> list:
    """The paths as shapely geometries (a point for a path seen end-on), plan metres:
    what room names and line labels keep clear of."""
    out = []
    for m in marks:
        xy = np.asarray(m.xy_m, dtype=float).reshape(-1, 2)
        pts = np.unique(xy, axis=0)
        out.append(shapely.Point(pts[0]) if len(pts) == 1 else shapely.LineString(xy))
    return out


def dxf_path_lines(marks: Sequence[MovingSteelMark]
                   ) -> tuple[shapely.MultiLineString, list[tuple[str, tuple[float, float]]]]:
    """The paths for the DXF layer, one MultiLineString in plan metres (a circle of
    :data:`END_ON_RADIUS_M` for a path seen end-on), and their labels [(text, (x, y))]."""
    lines, texts = [], []
    for m, g in zip(marks, mark_geometries(marks), strict=True):
        if g.geom_type == "Point":
            g = shapely.LineString(g.buffer(END_ON_RADIUS_M, quad_segs=8).exterior.coords)
        lines.append(g)
        xy = np.asarray(m.xy_m, dtype=float).reshape(-1, 2)
        k = int(np.argmax(np.abs(np.asarray(m.abs_ppm, dtype=float))))
        texts.append((m.label.replace("\n", " "), (float(xy[k, 0]) + END_ON_RADIUS_M,
                                                   float(xy[k, 1]) + END_ON_RADIUS_M)))
    return shapely.MultiLineString(lines), texts


def _halo(width: float) -> list:
    return [patheffects.withStroke(linewidth=width, foreground="white")]


def draw_moving_steel(ax, renderer, marks: Sequence[MovingSteelMark],
                      occupied: list[Bbox], place=None) -> list:
    """Draw ``marks`` on the plan axes ``ax``; append their labels' boxes to ``occupied``.

    ``place(text, xy_m, bold) -> Bbox`` puts a label beside the plan point ``xy_m`` (the
    plan sheet passes its label placement, which keeps clear of walls and markers); by
    default the label takes the first of a few spots round the point clear of
    ``occupied``.

    Returns the legend entries [(handle, label)].
    """
    if not marks:
        return []
    cmap = colormaps[PATH_CMAP]
    scale = max(float(m.scale_ppm) for m in marks) or 1.0
    norm = Normalize(0.0, scale)
    for m in marks:
        xy = np.asarray(m.xy_m, dtype=float).reshape(-1, 2)
        v = np.abs(np.asarray(m.abs_ppm, dtype=float)).reshape(-1)
        k = int(np.argmax(v))
        extent = float(np.max(np.ptp(xy, axis=0))) if len(xy) > 1 else 0.0
        if extent < END_ON_M:
            ax.scatter([xy[k, 0]], [xy[k, 1]], s=150, c=[cmap(norm(v[k]))], marker="o",
                       edgecolors="0.1", linewidths=1.6 if m.exceeds else 1.0, zorder=6.2)
        else:
            seg = np.stack([xy[:-1], xy[1:]], axis=1)
            ax.add_collection(LineCollection(seg, colors="white", linewidths=7.0,
                                             zorder=6.0, capstyle="round"))
            ax.add_collection(LineCollection(seg, colors=cmap(norm(0.5 * (v[:-1] + v[1:]))),
                                             linewidths=4.0, zorder=6.1, capstyle="round"))
            ax.scatter([xy[k, 0]], [xy[k, 1]], s=90, facecolors="none", edgecolors="0.1",
                       linewidths=1.6 if m.exceeds else 1.0, zorder=6.2)
        text = m.label.upper() if m.exceeds else m.label
        anchor = (xy[k, 0], xy[k, 1])
        occupied.append(place(text, anchor, m.exceeds) if place is not None else
                        _place_label(ax, renderer, text, anchor, m.exceeds, occupied))
    _colour_bar(ax, cmap, scale)
    handle = Line2D([], [], color=cmap(0.6), linewidth=4.0, marker="o", markersize=7,
                    markerfacecolor=cmap(0.6), markeredgecolor="0.1")
    return [(handle, f"moving steel path: colour gives |ΔB| at the isocentre, "
                     f"0 to {scale:.3g} ppm (disc: a path seen end-on, e.g. a lift shaft)")]


#: Label positions tried around the worst point: (dx, dy) in points, alignment.
_LABEL_SPOTS: tuple[tuple[float, float, str, str], ...] = (
    (11, -4, "left", "top"), (11, 6, "left", "bottom"), (-11, -4, "right", "top"),
    (-11, 6, "right", "bottom"), (0, -12, "center", "top"), (0, 12, "center", "bottom"))


def _place_label(ax, renderer, text: str, xy, bold: bool, occupied: list[Bbox]) -> Bbox:
    """The label beside ``xy`` at the first spot clear of ``occupied`` (else the spot
    with the least overlap, inside the map); returns its box."""
    inner = ax.get_window_extent(renderer)
    best = None
    for dx, dy, ha, va in _LABEL_SPOTS:
        t = ax.annotate(text, xy=xy, xytext=(dx, dy), textcoords="offset points",
                        fontsize=7.5, va=va, ha=ha, weight="bold" if bold else "normal",
                        color="0.05", zorder=6.3, path_effects=_halo(2.5))
        box = t.get_window_extent(renderer)
        cost = sum(_overlap(box, o) for o in occupied)
        cost += box.width * box.height - _overlap(box, inner)  # the part outside the map
        if best is None or cost < best[0]:
            if best is not None:
                best[1].remove()
            best = (cost, t, box)
        else:
            t.remove()
        if cost == 0:
            break
    return best[2]


def _overlap(a: Bbox, b: Bbox) -> float:
    w = min(a.x1, b.x1) - max(a.x0, b.x0)
    h = min(a.y1, b.y1) - max(a.y0, b.y0)
    return w * h if w > 0 and h > 0 else 0.0


def _colour_bar(ax, cmap, scale: float) -> None:
    """A small horizontal colour bar in the map's upper-left corner, labelled in ppm."""
    cax = ax.inset_axes((0.015, 0.955, 0.14, 0.018))
    cax.imshow(np.linspace(0.0, 1.0, 64)[None, :], aspect="auto", cmap=cmap,
               extent=(0.0, scale, 0.0, 1.0))
    cax.set_xticks([])
    cax.set_yticks([])
    cax.set_zorder(7)
    cax.text(1.04, 0.5, f"|ΔB| at isocentre, 0 to {scale:.3g} ppm", transform=cax.transAxes,
             fontsize=6.5, va="center", ha="left", color="0.05",
             bbox={"facecolor": "white", "edgecolor": "none", "pad": 1.0, "alpha": 0.85})
