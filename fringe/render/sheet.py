"""Sheet frame and the non-map sheets: curves, tables, cover; saving and PDF sets.

Every sheet fringe draws is a landscape ISO 216 sheet (A3 unless ``SheetInfo.drawing.paper``
says otherwise), a :class:`matplotlib.figure.Figure` of that size built without pyplot (no
global state, Agg canvas attached), and carries the same frame:

* a drawing area on the left;
* a key column on the right (legend, contents, numbered notes);
* the advisory notice (:data:`fringe.model.constants.ADVISORY_NOTICE`) in a boxed strip along
  the bottom left;
* a title block in the bottom right (drawing title, subtitle, site, magnets, boundary
  value and its source; sign-off boxes for drawn, checked and approved, each with a date
  box; drawing number, revision, status and scale; date, tool version, "k of N").

Maps (plans and sections) live in :mod:`fringe.render.drawing`, which builds on this module and
re-exports everything public here; import from :mod:`fringe.render.drawing`.

Public functions
----------------
``curve_sheet``     x-y curves (quench current decay, energy left, ...)
``table_sheet``     a table paged over as many sheets as it needs
``tables_sheets``   several tables stacked on as few sheets as they need
``cover_sheet``     the first sheet of a set
``save_figure``     one sheet to PNG/SVG/PDF, atomically
``write_pdf``       a sheet set to one PDF, atomically, numbered "k of n", one bookmark
                    per sheet
``number_sheets``   write "k of n" where a sheet number was left unset
"""

from __future__ import annotations

import dataclasses
import datetime as _dt
import io
import math
import re
import textwrap
from collections.abc import Iterable, Sequence
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import matplotlib
import numpy as np
from matplotlib import patheffects
from matplotlib.backends.backend_agg import FigureCanvasAgg
from matplotlib.backends.backend_pdf import PdfPages
from matplotlib.figure import Figure
from matplotlib.patches import Rectangle

from fringe.io.atomic import atomic_file, write_bytes_atomic
from fringe.io.pdf_outline import add_outline
from fringe.model.constants import ADVISORY_NOTICE
from fringe.model.errors import FringeInputError, must_be
from fringe.model.site import PAPER_SIZES_MM, DrawingSettings
from fringe.model.verdict import Verdict
from fringe.render.style import INK_COLOR

__all__ = [
    "SheetInfo", "Curve", "CurvePanel", "A3_LANDSCAPE_IN", "PNG_DPI",
    "curve_sheet", "table_sheet", "tables_sheets", "cover_sheet", "save_figure",
    "write_pdf", "number_sheets", "format_value", "format_field",
    "format_mT", "paper_size_in", "sheet_title",
]


#: Sheet size: ISO A3 landscape, 420 mm x 297 mm, in inches.
A3_LANDSCAPE_IN: tuple[float, float] = (420 / 25.4, 297 / 25.4)
#: Raster resolution used by :func:`save_figure` for PNG, dots per inch.
PNG_DPI = 170
_SAVE_FORMATS = ("png", "svg", "pdf")
_HALO = [patheffects.withStroke(linewidth=2.4, foreground="white")]
_INK = INK_COLOR  # near-black ink of text and lines (fringe.render.style)
_SHEET_NUMBER_GID = "fringe-sheet-number"
# Layout of every sheet, in figure fractions (left, bottom, width, height).
_FRAME = (0.012, 0.015, 0.976, 0.97)
_KEY = (0.738, 0.38, 0.238, 0.58)
_TITLE = (0.738, 0.03, 0.238, 0.33)
_ADVISORY = (0.03, 0.03, 0.69, 0.085)
_WIDE = (0.045, 0.16, 0.67, 0.79)  # table/curve area without map axis labels
_TITLE_LINES = 2.2  # height of a table title, in table lines


def _today_iso() -> str:
    return _dt.datetime.now(_dt.UTC).date().isoformat()


def _tool_version() -> str:
    from fringe.model.constants import VERSION as __version__

    return f"fringe {__version__}"


@dataclass(frozen=True)
class SheetInfo:
    """What the title block of a sheet says.

    Parameters
    ----------
    site_name : str
        The site (e.g. "Riverside Imaging Centre (invented)").
    title : str
        Drawing title (e.g. "Floor plan: ground floor").
    subtitle : str
        One more line (e.g. "Largest |B| over the occupied band 0-2 m above the floor").
    magnets : tuple of str
        Names of the magnets drawn.
    date_iso : str
        Date of the drawing, ISO 8601 "YYYY-MM-DD" (a full timestamp is accepted;
        default: today, UTC).
    tool_version : str
        Tool and version that computed it (default: "fringe <version>").
    boundary_note : str
        The controlled-area boundary value and its source, printed on the sheet, e.g.
        "Controlled access area boundary: 0.5 mT (ICNIRP 2009; IEC 60601-2-33 ed. 3)".
        Left empty, :func:`plan_sheet` and :func:`section_sheet` print the value they
        draw, marked "(source not given)".
    notes : tuple of str
        Numbered notes printed in the key column (model assumptions, sources).
    sheet_number : str or None
        Printed as given; ``None`` lets :func:`write_pdf` / :func:`number_sheets` write
        "k of n".
    drawing : DrawingSettings
        The ``[drawing]`` table: drawing number, revision, status and sign-off names for
        the title block, the paper (ISO 216, landscape; the figure is that size) and the
        stated scale of plans and sections (:class:`fringe.model.site.DrawingSettings`).
    """

    site_name: str
    title: str
    subtitle: str = ""
    magnets: tuple[str, ...] = ()
    date_iso: str = field(default_factory=_today_iso)
    tool_version: str = field(default_factory=_tool_version)
    boundary_note: str = ""
    notes: tuple[str, ...] = ()
    sheet_number: str | None = None
    drawing: DrawingSettings = field(default_factory=DrawingSettings)

    def __post_init__(self) -> None:
        if not isinstance(self.drawing, DrawingSettings):
            raise FringeInputError(must_be("drawing", "a fringe.model.site.DrawingSettings",
                                           type(self.drawing).__name__))
        if self.drawing.paper not in PAPER_SIZES_MM:
            raise FringeInputError(must_be("drawing.paper", f"one of {list(PAPER_SIZES_MM)}",
                                           self.drawing.paper))
        for name in ("magnets", "notes"):
            value = getattr(self, name)
            if isinstance(value, str):
                value = (value,)
            object.__setattr__(self, name, tuple(str(v) for v in value))
        try:
            _dt.date.fromisoformat(str(self.date_iso)[:10])
        except ValueError:
            raise FringeInputError(must_be("date_iso", "an ISO 8601 date (YYYY-MM-DD)",
                                           self.date_iso)) from None


@dataclass(frozen=True)
class Curve:
    """One labelled x-y series for :func:`curve_sheet`."""

    label: str
    x: Any
    y: Any


@dataclass(frozen=True)
class CurvePanel:
    """One plot panel of a :func:`curve_sheet`.

    Parameters
    ----------
    x_label, y_label : str
        Axis labels with units (e.g. "time after quench onset, s").
    curves : tuple of Curve
    title : str
    log_y : bool
    marks : tuple of (str, float)
        Labelled vertical lines at x values (e.g. ("time constant L/R", 12.0)).
    """

    x_label: str
    y_label: str
    curves: tuple[Curve, ...]
    title: str = ""
    log_y: bool = False
    marks: tuple[tuple[str, float], ...] = ()


def format_value(v: float) -> str:
    """Short human format: three significant digits, no exponent between 0.001 and 10⁶.

    >>> [format_value(v) for v in (0.5, 1.0, 3, 200, 1500, 0.0012)]
    ['0.5', '1', '3', '200', '1500', '0.0012']
    """
    v = float(v)
    if v == 0 or not math.isfinite(v):
        return f"{v:g}"
    a = abs(v)
    if a >= 1000 and a < 1e6:
        return f"{v:.0f}"
    if a >= 1e-3 and a < 1e6:
        s = f"{v:.3g}"
        if "e" in s:
            s = f"{v:.4f}".rstrip("0").rstrip(".")
        return s
    return f"{v:.2g}"


def format_mT(lo_mT: float, hi_mT: float | None = None, show_gauss: bool = False) -> str:
    """A level (or range of levels) in mT, with gauss in brackets if ``show_gauss``.

    1 mT = 10 G.

    >>> format_mT(0.5), format_mT(0.5, show_gauss=True), format_mT(0.5, 1, show_gauss=True)
    ('0.5 mT', '0.5 mT (5 G)', '0.5 to 1 mT (5 to 10 G)')
    """
    if hi_mT is None:
        text = f"{format_value(lo_mT)} mT"
        return text + (f" ({format_value(lo_mT * 10.0)} G)" if show_gauss else "")
    text = f"{format_value(lo_mT)} to {format_value(hi_mT)} mT"
    if show_gauss:
        text += f" ({format_value(lo_mT * 10.0)} to {format_value(hi_mT * 10.0)} G)"
    return text


def format_field(field_T: float, digits: int | None = None, show_gauss: bool = False) -> str:
    """A flux density with its unit: in T from 1 T up, in mT below.

    ``digits`` significant digits (``:g``) if given, else :func:`format_value`; with
    ``show_gauss`` the value in gauss follows in brackets (1 T = 10⁴ G).

    >>> [format_field(v) for v in (1.86, 0.0005, 0.2296, 9.4)]
    ['1.86 T', '0.5 mT', '230 mT', '9.4 T']
    """
    b = float(field_T)

    def num(v: float) -> str:
        return format_value(v) if digits is None else f"{v:.{digits}g}"

    gauss = f" ({num(b * 1e4)} G)" if show_gauss else ""
    if math.isfinite(b) and abs(b) >= 1.0:
        return f"{num(b)} T{gauss}"
    return f"{num(b * 1e3)} mT{gauss}"


def paper_size_in(paper: str = "A3") -> tuple[float, float]:
    """Width and height of an ISO 216 sheet in landscape, inches.

    >>> [round(v, 2) for v in paper_size_in("A3")]
    [16.54, 11.69]
    """
    short, long = PAPER_SIZES_MM[paper]
    return (long / 25.4, short / 25.4)


def _new_figure(info: SheetInfo | None = None) -> Figure:
    """A blank sheet of the paper ``info.drawing.paper`` (A3 without ``info``)."""
    paper = info.drawing.paper if isinstance(info, SheetInfo) else "A3"
    fig = Figure(figsize=paper_size_in(paper))
    FigureCanvasAgg(fig)
    if isinstance(info, SheetInfo):
        fig.set_label(info.title)  # the PDF bookmark and the cover's contents read it
    return fig


def sheet_title(fig: Figure) -> str:
    """The drawing title a sheet was made with (its PDF bookmark)."""
    return str(fig.get_label() or "")


def _renderer(fig: Figure):
    return fig.canvas.get_renderer()


def _chars_for(width_frac: float, fontsize: float, fig_width_in: float = A3_LANDSCAPE_IN[0]
               ) -> int:
    """How many average characters of ``fontsize`` fit in a width (figure fraction)."""
    width_pt = width_frac * fig_width_in * 72
    return max(8, int(width_pt / (0.56 * fontsize)))


def _wrap(text: str, width: int) -> str:
    return "\n".join(textwrap.fill(p, width) for p in str(text).split("\n"))


def _short(a) -> str:
    arr = np.asarray(a)
    if arr.size <= 6:
        return np.array2string(arr, precision=4)
    return f"array of shape {arr.shape}"


def _draw_frame(fig: Figure, info: SheetInfo, *, kind: str, scale_text: str = "") -> None:
    """Border, title block and advisory strip: the parts every sheet shares.

    ``scale_text`` is the drawing scale the title block states ("1:100 at A3"); empty
    for a sheet not drawn to scale (tables, curves, cover: "not to scale").
    """
    if not isinstance(info, SheetInfo):
        raise FringeInputError(must_be("info", "a fringe.render.drawing.SheetInfo", type(info)))
    fig.patches.append(Rectangle(_FRAME[:2], _FRAME[2], _FRAME[3], transform=fig.transFigure,
                                 fill=False, edgecolor=_INK, linewidth=1.4, zorder=-10))
    _draw_advisory(fig)
    _draw_title_block(fig, info, kind=kind, scale_text=scale_text)


def _draw_advisory(fig: Figure) -> None:
    ax = fig.add_axes(_ADVISORY, label="advisory")
    ax.set_axis_off()
    ax.add_patch(Rectangle((0, 0), 1, 1, transform=ax.transAxes, fill=False,
                           edgecolor=_INK, linewidth=1.6))
    ax.add_patch(Rectangle((0, 0), 0.012, 1, transform=ax.transAxes, facecolor=_INK,
                           edgecolor="none"))
    fs = 10.0
    ax.text(0.024, 0.5, _wrap(ADVISORY_NOTICE, _chars_for(_ADVISORY[2] * 0.95, fs,
                                                          fig.get_figwidth())),
            transform=ax.transAxes, ha="left", va="center", fontsize=fs, color=_INK,
            linespacing=1.35, gid="fringe-advisory")


#: Heights of the title block's boxes, pt: the bottom row (date, tool, sheet), the row of
#: drawing number, revision, status and scale, and the sign-off name and date boxes.
_ROW_PT = 24.0
_SIGN_NAME_PT = 22.0
_SIGN_DATE_PT = 16.0
_SIGN_ROLES = (("drawn", "drawn_by"), ("checked", "checked_by"), ("approved", "approved_by"))


def _cell(ax, x0: float, x1: float, y0: float, h: float, label: str, value: str, *,
          h_pt: float, w_pt: float, gid: str | None = None, fs: float = 8.0):
    """One boxed field of the title block: a small label at the top left, the value below
    (shrunk to 5.5 pt if it would run over the box; the box stays even when empty)."""
    ax.add_patch(Rectangle((x0, y0), x1 - x0, h, transform=ax.transAxes, fill=False,
                           edgecolor=_INK, linewidth=0.8))
    pad = 3.0 / w_pt
    ax.text(x0 + pad, y0 + h - 2.5 / h_pt, label.upper(), transform=ax.transAxes,
            fontsize=5.5, color="0.35", ha="left", va="top")
    room_pt = (x1 - x0) * w_pt - 6.0
    while fs > 5.5 and len(value) * 0.6 * fs > room_pt:
        fs -= 0.5
    return ax.text(x0 + pad, y0 + 3.5 / h_pt, value, transform=ax.transAxes, fontsize=fs,
                   color=_INK, ha="left", va="bottom", fontweight="bold", gid=gid)


def _draw_title_block(fig: Figure, info: SheetInfo, *, kind: str, scale_text: str = "") -> None:
    """Title, subtitle, site, magnets and boundary, then boxed fields: sign-off (drawn,
    checked, approved: name and date), drawing number, revision, status and scale, and
    date, tool and sheet number. Unset fields leave their boxes empty for a pen."""
    ax = fig.add_axes(_TITLE, label="title block")
    ax.set_axis_off()
    ax.add_patch(Rectangle((0, 0), 1, 1, transform=ax.transAxes, fill=False,
                           edgecolor=_INK, linewidth=1.6))
    fig_w, fig_h = fig.get_size_inches()
    h_pt = _TITLE[3] * fig_h * 72
    w_pt = _TITLE[2] * fig_w * 72
    pad = 0.035
    chars_small = _chars_for(_TITLE[2] * (1 - 2 * pad), 7.5, fig_w)
    # bold 11.5 pt runs wider than the average character _chars_for assumes
    chars_title = _chars_for(_TITLE[2] * (1 - 2 * pad), 11.5 * 1.15, fig_w)
    rows: list[tuple[str, str, float, str]] = [
        ("drawing", info.title, 11.5, "bold"),
        ("", info.subtitle, 8.0, "normal"),
        ("site", info.site_name, 9.0, "bold"),
        ("magnets", ", ".join(info.magnets) if info.magnets else "", 8.0, "normal"),
        ("boundary", info.boundary_note, 7.5, "normal"),
    ]
    y = 1.0 - pad * 1.2
    for label, value, fs, weight in rows:
        if not value:
            continue
        width = chars_title if fs > 10 else chars_small
        text = _wrap(value, width)
        n_lines = text.count("\n") + 1
        if label:
            ax.text(pad, y, label.upper(), transform=ax.transAxes, fontsize=5.5,
                    color="0.35", ha="left", va="top")
            y -= 7.0 / h_pt
        ax.text(pad, y, text, transform=ax.transAxes, fontsize=fs, fontweight=weight,
                color=_INK, ha="left", va="top", linespacing=1.15,
                gid="fringe-sheet-title" if label == "drawing" else None)
        y -= (n_lines * fs * 1.2 + 4.0) / h_pt
    d = info.drawing
    kw = {"h_pt": h_pt, "w_pt": w_pt}
    row = _ROW_PT / h_pt
    # bottom row: date | tool | sheet
    sheet = info.sheet_number if info.sheet_number is not None else "- of -"
    _cell(ax, 0.0, 0.30, 0.0, row, "date", info.date_iso or "(undated)", **kw)
    _cell(ax, 0.30, 0.64, 0.0, row, "computed with", info.tool_version, **kw)
    _cell(ax, 0.64, 1.0, 0.0, row, "sheet", sheet, **kw,
          gid=_SHEET_NUMBER_GID if info.sheet_number is not None
          else _SHEET_NUMBER_GID + "-auto")
    # drawing number | revision | status | scale
    _cell(ax, 0.0, 0.34, row, row, "drawing no.", d.number, gid="fringe-drawing-number", **kw)
    _cell(ax, 0.34, 0.46, row, row, "rev.", d.revision, gid="fringe-revision", **kw)
    _cell(ax, 0.46, 0.70, row, row, "status", d.status, gid="fringe-status", **kw)
    _cell(ax, 0.70, 1.0, row, row, "scale", scale_text or "not to scale", gid="fringe-scale",
          **kw)
    # sign-off: a name box over a date box for each role, the date left for the pen
    y_date = 2 * row
    y_name = y_date + _SIGN_DATE_PT / h_pt
    for i, (role, attr) in enumerate(_SIGN_ROLES):
        x0, x1 = i / 3, (i + 1) / 3
        _cell(ax, x0, x1, y_name, _SIGN_NAME_PT / h_pt, role, getattr(d, attr),
              gid=f"fringe-{role}-by", **kw)
        _cell(ax, x0, x1, y_date, _SIGN_DATE_PT / h_pt, f"{role}: date", "",
              gid=f"fringe-{role}-date", **kw)


def _draw_key_column(fig: Figure, handles: list, labels: list[str], title: str,
                     notes: Sequence[str], contents: Sequence[str] = ()) -> None:
    """Legend (top of the key column), then a contents list, then numbered notes."""
    ax = fig.add_axes(_KEY, label="key")
    ax.set_axis_off()
    fs = 8.0
    fw = fig.get_figwidth()
    width = _chars_for(_KEY[2] * 0.78, fs, fw)
    top = 1.0
    if contents:
        wc = _chars_for(_KEY[2] * 0.92, fs, fw)
        body = "\n".join(_wrap(f"{i}. {c}", wc) for i, c in enumerate(contents, 1))
        ax.text(0.0, top, "CONTENTS", transform=ax.transAxes, fontsize=8.5,
                fontweight="bold", va="top", ha="left", color=_INK)
        t = ax.text(0.0, top - 0.03, body, transform=ax.transAxes, fontsize=fs, va="top",
                    ha="left", color=_INK, linespacing=1.3)
        bb = t.get_window_extent(_renderer(fig))
        top = ax.transAxes.inverted().transform((bb.x0, bb.y0))[1] - 0.04
    if handles:
        leg = ax.legend(handles, [_wrap(lb, width) for lb in labels], loc="upper left",
                        bbox_to_anchor=(0.0, top), fontsize=fs, title=title,
                        title_fontsize=9.5, frameon=True, edgecolor=_INK, fancybox=False,
                        alignment="left", handlelength=2.6, handleheight=1.3,
                        borderpad=0.8, labelspacing=0.55)
        leg.get_frame().set_linewidth(1.0)
        bb = leg.get_window_extent(_renderer(fig))
        top = ax.transAxes.inverted().transform((bb.x0, bb.y0))[1] - 0.03
    if notes:
        ax.text(0.0, top, "NOTES", transform=ax.transAxes, fontsize=8.5, fontweight="bold",
                va="top", ha="left", color=_INK)
        t = ax.text(0.0, top - 0.03, "", transform=ax.transAxes, va="top", ha="left",
                    color=_INK, linespacing=1.25, gid="fringe-notes")
        renderer = _renderer(fig)
        floor = ax.get_window_extent(renderer).y0
        items = [f"{i}. {n}" for i, n in enumerate(notes, 1)]
        # shrink to fit above the title block; if even 6 pt is too long, cut the list
        for fs_n in (7.5, 7.0, 6.5, 6.0):
            wn = _chars_for(_KEY[2] * 0.95, fs_n, fw)
            t.set_fontsize(fs_n)
            t.set_text("\n".join(_wrap(it, wn) for it in items))
            if t.get_window_extent(renderer).y0 >= floor:
                break
        else:
            keep = len(items)
            while keep > 0 and t.get_window_extent(renderer).y0 < floor:
                keep -= 1
                t.set_text("\n".join([_wrap(it, wn) for it in items[:keep]]
                                     + [f"... {len(items) - keep} more notes in the report"]))


_CURVE_STYLES = [("#1f3b73", "-"), ("#2a9d8f", "--"), ("#6a3d9a", "-."), ("0.2", ":"),
                 ("#b5a642", "-")]


def curve_sheet(panels: Sequence[CurvePanel], info: SheetInfo, *,
                notes: Sequence[str] = ()) -> Figure:
    """A sheet of x-y plots stacked vertically (e.g. quench current and energy left).

    Parameters
    ----------
    panels : sequence of CurvePanel
        One panel per plot, top to bottom; axis labels carry units.
    info : SheetInfo
    notes : sequence of str
        Extra notes after ``info.notes``.

    Returns
    -------
    matplotlib.figure.Figure

    Raises
    ------
    FringeInputError
        No panels, a curve with mismatched or empty x and y, or log_y with y <= 0.
    """
    panels = list(panels)
    if not panels:
        raise FringeInputError(must_be("panels", "a non-empty list of CurvePanel", panels))
    fig = _new_figure(info)
    _draw_frame(fig, info, kind="curves")
    left, bottom, width, height = _WIDE
    n = len(panels)
    gap = 0.07
    h = (height - gap * (n - 1)) / n
    for i, p in enumerate(panels):
        if not isinstance(p, CurvePanel) or not p.curves:
            raise FringeInputError(must_be(f"panels[{i}]", "a CurvePanel with at least one "
                                           "Curve", p))
        ax = fig.add_axes((left + 0.02, bottom + (n - 1 - i) * (h + gap), width - 0.02, h),
                          label=f"panel {i}")
        for j, c in enumerate(p.curves):
            xv = np.asarray(c.x, float).ravel()
            yv = np.asarray(c.y, float).ravel()
            if xv.size == 0 or xv.shape != yv.shape:
                raise FringeInputError(must_be(f"panels[{i}].curves[{j}] ({c.label})",
                                               "non-empty x and y of equal length",
                                               f"{xv.size} and {yv.size} values"))
            if p.log_y and np.any(yv[np.isfinite(yv)] <= 0):
                raise FringeInputError(must_be(f"panels[{i}].curves[{j}].y ({c.label})",
                                               "positive for a log axis", _short(yv)))
            color, ls = _CURVE_STYLES[j % len(_CURVE_STYLES)]
            ax.plot(xv, yv, color=color, linestyle=ls, linewidth=1.8, label=c.label)
        for label, xm in p.marks:
            ax.axvline(xm, color="0.3", linewidth=0.9, linestyle=(0, (4, 3)))
            ax.annotate(label, xy=(xm, 1.0), xycoords=("data", "axes fraction"),
                        xytext=(3, -3), textcoords="offset points", ha="left", va="top",
                        fontsize=7.5, color="0.2", path_effects=_HALO)
        if p.log_y:
            ax.set_yscale("log")
        ax.set_xlabel(p.x_label, fontsize=9)
        ax.set_ylabel(p.y_label, fontsize=9)
        if p.title:
            ax.set_title(p.title, fontsize=10, loc="left", fontweight="bold")
        ax.tick_params(labelsize=8)
        ax.grid(True, color="0.75", linewidth=0.5)
        ax.legend(fontsize=8, frameon=True, edgecolor="0.5", fancybox=False)
    _draw_key_column(fig, [], [], "", list(info.notes) + list(notes))
    return fig


_BLANK_CELLS = ("", "-", "\u2013", "\u2014", "n/a")


def _looks_numeric(s: str) -> bool:
    return bool(re.fullmatch(r"[-+]?[\d.,]+(e[-+]?\d+)?( ?[%a-zA-Zµ°³²/·]*)?", s.strip())) \
        and any(ch.isdigit() for ch in s)


@dataclass
class _Table:
    """One table laid out for paging: wrapped cells, column widths, alignment."""

    title: str
    header: list[str]
    rows: list[list[str]]
    bold: list[bool]
    xs: np.ndarray
    numeric: list[bool]
    width: float

    @property
    def header_lines(self) -> int:
        return max(h.count("\n") + 1 for h in self.header)

    @staticmethod
    def row_lines(row: list[str]) -> int:
        return max(c.count("\n") + 1 for c in row)


def _prepare_table(key: str, title: str, columns, rows, font_size: float) -> _Table:
    cols = [str(c) for c in columns]
    if not cols:
        raise FringeInputError(must_be(f"{key}columns", "a non-empty list of headers",
                                       list(columns)))
    cells: list[list[str]] = []
    for i, r in enumerate(rows):
        r = list(r)
        if len(r) != len(cols):
            raise FringeInputError(must_be(f"{key}rows[{i}]", f"a row of {len(cols)} cells",
                                           f"{len(r)} cells"))
        cells.append([_cell_text(c) for c in r])
    avail_chars = _chars_for(_WIDE[2], font_size)
    natural = [max([len(c)] + [max(len(w) for w in (row[j] or " ").split("\n"))
                               for row in cells]) for j, c in enumerate(cols)]
    natural = [max(4, min(n, 48)) for n in natural]
    total = sum(natural) + 3 * len(cols)
    scale = min(1.0, avail_chars / total)
    widths = [max(4, int(n * scale)) for n in natural]
    table_w = min(1.0, max(0.45, total / avail_chars))
    numeric = [bool(cells) and all(_looks_numeric(row[j]) for row in cells
                                   if row[j].strip() not in _BLANK_CELLS)
               and any(row[j].strip() not in _BLANK_CELLS for row in cells)
               for j in range(len(cols))]
    xs = table_w * np.cumsum([0] + [(w + 3) / sum(w + 3 for w in widths) for w in widths])
    return _Table(title=str(title), header=[_wrap(c, widths[j]) for j, c in enumerate(cols)],
                  rows=[[_wrap(row[j], widths[j]) for j in range(len(cols))] for row in cells],
                  bold=[any(c.strip().lower() == Verdict.EXCEEDS for c in row)
                        for row in cells],
                  xs=xs, numeric=numeric, width=table_w)


def table_sheet(title: str, columns: Sequence[str], rows: Sequence[Sequence[Any]],
                info: SheetInfo, *, notes: Sequence[str] = (), font_size: float = 8.5
                ) -> list[Figure]:
    """A table over as many sheets as it needs (header repeated on each).

    Parameters
    ----------
    title : str
        Printed above the table ("(continued)" added on later sheets).
    columns : sequence of str
        Column headers, with units (e.g. "largest field, mT").
    rows : sequence of sequences
        Cell values; numbers are printed with :func:`format_value` and right-aligned;
        long text wraps within its column; a row with a cell reading "exceeds" is set
        in bold.
    info : SheetInfo
    notes : sequence of str
        Extra notes in the key column.
    font_size : float
        Cell font size, pt.

    Returns
    -------
    list of matplotlib.figure.Figure
        At least one sheet (an empty table prints "(no rows)").

    Raises
    ------
    FringeInputError
        No columns, or a row whose length differs from the header's.
    """
    return _table_pages([_prepare_table("", title, columns, rows, font_size)], info,
                        notes, font_size)


def tables_sheets(tables: Sequence[tuple[str, Sequence[str], Sequence[Sequence[Any]]]],
                  info: SheetInfo, *, notes: Sequence[str] = (), font_size: float = 8.5
                  ) -> list[Figure]:
    """Several tables stacked on as few sheets as they need (short tables share one).

    Parameters
    ----------
    tables : sequence of (title, columns, rows)
        Each as for :func:`table_sheet`; a table that runs over a sheet continues on the
        next with its title marked "(continued)" and its header repeated.
    info : SheetInfo
    notes : sequence of str
    font_size : float

    Returns
    -------
    list of matplotlib.figure.Figure

    Raises
    ------
    FringeInputError
        No tables, or a table as :func:`table_sheet` would refuse it (the key path
        names the table, e.g. "tables[1].rows[3]").
    """
    tables = list(tables)
    if not tables:
        raise FringeInputError(must_be("tables", "a non-empty list of (title, columns, rows)",
                                       tables))
    prepared = []
    for i, t in enumerate(tables):
        try:
            title, columns, rows = t
        except (TypeError, ValueError):
            raise FringeInputError(must_be(f"tables[{i}]", "a (title, columns, rows) triple",
                                           t)) from None
        prepared.append(_prepare_table(f"tables[{i}].", title, columns, rows, font_size))
    return _table_pages(prepared, info, notes, font_size)


def _table_pages(tables: list[_Table], info: SheetInfo, notes: Sequence[str],
                 font_size: float) -> list[Figure]:
    """Lay tables out line by line over sheets; each table starts with title + header."""
    left, bottom, width, height = _WIDE
    line_h_pt = font_size * 1.45
    page_h_pt = height * paper_size_in(info.drawing.paper)[1] * 72
    area_lines = int(page_h_pt / line_h_pt) - 1
    pages = _paginate_tables(tables, area_lines)
    figs = []
    lh = line_h_pt / page_h_pt
    for k, page in enumerate(pages, 1):
        # every sheet of a set has a title of its own: parts of a long table are numbered
        page_info = info if len(pages) == 1 else dataclasses.replace(
            info, title=f"{info.title} (part {k} of {len(pages)})")
        fig = _new_figure(page_info)
        _draw_frame(fig, page_info, kind="table")
        ax = fig.add_axes((left, bottom, width, height), label="table")
        ax.set_axis_off()
        ax.set_xlim(0, 1)
        ax.set_ylim(0, 1)
        _draw_table_page(ax, page, tables, lh, font_size)
        _draw_key_column(fig, [], [], "", list(info.notes) + list(notes))
        figs.append(fig)
    return figs


def _paginate_tables(tables: list[_Table], area_lines: int) -> list[list[tuple[str, int, Any]]]:
    """Pages as lists of (kind, table index, payload) entries, filled up to ``area_lines``."""
    title_lines = _TITLE_LINES
    pages: list[list[tuple[str, int, Any]]] = [[]]
    used = 0.0

    def start(ti: int, cont: bool) -> None:
        nonlocal used
        pages[-1].append(("title", ti, cont))
        pages[-1].append(("header", ti, None))
        used += title_lines + tables[ti].header_lines + 0.6

    for ti, tb in enumerate(tables):
        first_row = _Table.row_lines(tb.rows[0]) if tb.rows else 1
        if pages[-1] and used + title_lines + tb.header_lines + 0.6 + first_row > area_lines:
            pages.append([])
            used = 0.0
        start(ti, False)
        if not tb.rows:
            pages[-1].append(("empty", ti, None))
            used += 1
        for ri, row in enumerate(tb.rows):
            n = _Table.row_lines(row)
            if used + n > area_lines:
                pages[-1].append(("end", ti, None))
                pages.append([])
                used = 0.0
                start(ti, True)
            pages[-1].append(("row", ti, ri))
            used += n
        pages[-1].append(("end", ti, None))
        used += 1.5
    return pages


def _draw_table_page(ax, page: list[tuple[str, int, Any]], tables: list[_Table], lh: float,
                     font_size: float) -> None:
    """Draw one page's titles, headers, rows and end rules top-down on ``ax``."""
    y = 1.0
    stripe = 0
    for kind, ti, payload in page:
        tb = tables[ti]
        if kind == "title":
            ax.text(0, y, tb.title + (" (continued)" if payload else ""), fontsize=12,
                    fontweight="bold", va="top", ha="left", color=_INK)
            y -= _TITLE_LINES * lh
            stripe = 0
        elif kind == "header":
            ax.plot([0, tb.width], [y + 0.004, y + 0.004], color=_INK, linewidth=1.2)
            for j, hcell in enumerate(tb.header):
                _table_cell(ax, tb.xs, j, y, hcell, tb.numeric[j], font_size, bold=True)
            y -= tb.header_lines * lh + 0.006
            ax.plot([0, tb.width], [y + 0.003, y + 0.003], color=_INK, linewidth=0.8)
        elif kind == "empty":
            ax.text(0.005, y - 0.004, "(no rows)", fontsize=font_size, va="top",
                    style="italic", color="0.3")
            y -= lh
        elif kind == "row":
            y = _draw_table_row(ax, tb, payload, y, lh, stripe, font_size)
            stripe += 1
        elif kind == "end":
            ax.plot([0, tb.width], [y - 0.002, y - 0.002], color=_INK, linewidth=1.2)
            y -= 1.5 * lh


def _draw_table_row(ax, tb: _Table, ri: int, y: float, lh: float, stripe: int,
                    font_size: float) -> float:
    """Draw row ``ri`` of a table at ``y`` (shaded on odd stripes); the y below it."""
    row = tb.rows[ri]
    n = _Table.row_lines(row)
    if stripe % 2 == 1:
        ax.add_patch(Rectangle((0, y - n * lh - 0.001), tb.width, n * lh,
                               facecolor="0.93", edgecolor="none", zorder=0))
    for j, c in enumerate(row):
        _table_cell(ax, tb.xs, j, y - 0.002, c, tb.numeric[j], font_size,
                    bold=tb.bold[ri])
    return y - n * lh


def _cell_text(c: Any) -> str:
    if c is None:
        return ""
    if isinstance(c, bool):
        return "yes" if c else "no"
    if isinstance(c, (int, np.integer)):
        return str(int(c))
    if isinstance(c, (float, np.floating)):
        return format_value(float(c))
    return str(c)


def _table_cell(ax, xs, j, y, text, numeric, fs, *, bold):
    # Anchor on the first line's baseline so cells with and without ascenders line up.
    pad = 0.004
    h_frac = fs / (_WIDE[3] * ax.get_figure().get_figheight() * 72)
    multi = "\n" in text  # matplotlib's "baseline" anchors the last line of a block
    yb = y if multi else y - 0.95 * h_frac
    kw = {"fontsize": fs, "color": _INK, "fontweight": "bold" if bold else "normal",
          "linespacing": 1.3, "va": "top" if multi else "baseline"}
    if numeric:
        ax.text(xs[j + 1] - pad - 0.008, yb, text, ha="right", **kw)
    else:
        ax.text(xs[j] + pad, yb, text, ha="left", **kw)


def cover_sheet(info: SheetInfo, key_facts: Sequence[tuple[str, str]],
                verdict_lines: Sequence[str] = (), *, notes: Sequence[str] = (),
                contents: Sequence[str] = ()) -> Figure:
    """The first sheet of a set: title, key facts, findings and the advisory notice.

    Parameters
    ----------
    info : SheetInfo
    key_facts : sequence of (label, value)
        E.g. ("Stored energy", "4.1 MJ"); values already formatted with units.
    verdict_lines : sequence of str
        Findings, one per line (e.g. "Office 1.12 (first floor): within 0.5 mT").
        Lines containing "exceeds" (any case) come first, in bold; if the list is too
        long for the sheet it is cut with a line pointing to the tables.
    notes : sequence of str
        Extra notes in the key column.
    contents : sequence of str
        Titles of the sheets that follow, listed in the key column as "Contents".

    Returns
    -------
    matplotlib.figure.Figure

    Raises
    ------
    FringeInputError
        A key fact that is not a (label, value) pair.
    """
    fig = _new_figure(info)
    _draw_frame(fig, info, kind="cover")
    left, bottom, width, height = _WIDE
    ax = fig.add_axes((left, bottom, width, height), label="cover")
    ax.set_axis_off()
    ax.set_xlim(0, 1)
    ax.set_ylim(0, 1)
    h_pt = height * fig.get_figheight() * 72
    y = 1.0
    ax.text(0, y, _wrap(info.site_name, 48), fontsize=22, fontweight="bold", va="top",
            color=_INK)
    y -= (info.site_name.count("\n") + 1 + len(info.site_name) // 48) * 30 / h_pt
    ax.text(0, y - 0.01, _wrap(info.title, 70), fontsize=15, va="top", color=_INK)
    y -= 0.075
    if info.subtitle:
        ax.text(0, y, _wrap(info.subtitle, 110), fontsize=10, va="top", color="0.25")
        y -= 0.05
    ax.plot([0, 1], [y, y], color=_INK, linewidth=1.2)
    y -= 0.03
    ax.text(0, y, "KEY FACTS", fontsize=10, fontweight="bold", va="top", color=_INK)
    y -= 0.04
    fs = 10.0
    lh = fs * 1.5 / h_pt
    for i, item in enumerate(key_facts):
        try:
            label, value = item
        except (TypeError, ValueError):
            raise FringeInputError(must_be(f"key_facts[{i}]", "a (label, value) pair",
                                           item)) from None
        ax.text(0.0, y, str(label), fontsize=fs, va="top", color="0.25")
        vtext = _wrap(str(value), 70)
        ax.text(0.36, y, vtext, fontsize=fs, va="top", color=_INK, fontweight="bold")
        y -= lh * (vtext.count("\n") + 1) + 0.004
    if verdict_lines:
        y -= 0.02
        ax.text(0, y, "FINDINGS", fontsize=10, fontweight="bold", va="top", color=_INK)
        y -= 0.04
        # findings that exceed come first, so none is lost if the list must be cut
        ordered = sorted(verdict_lines, key=lambda ln: Verdict.EXCEEDS not in ln.lower())
        step = 9.5 * 1.5 / h_pt
        for k, line in enumerate(ordered):
            bold = Verdict.EXCEEDS in line.lower()
            text = _wrap(("\u25a0 " if bold else "\u25a1 ") + line, 120)
            n_lines = text.count("\n") + 1
            if y - step * (n_lines + 1) < 0 and k < len(ordered) - 1:
                ax.text(0.0, y, f"... and {len(ordered) - k} more findings: see the tables",
                        fontsize=9.5, va="top", color=_INK, style="italic")
                break
            ax.text(0.0, y, text, fontsize=9.5, va="top", color=_INK,
                    fontweight="bold" if bold else "normal")
            y -= step * n_lines + 0.003
    _draw_key_column(fig, [], [], "", list(info.notes) + list(notes), contents=contents)
    return fig


def _flatten(figures) -> list[Figure]:
    out: list[Figure] = []
    for f in figures:
        if isinstance(f, Figure):
            out.append(f)
        elif isinstance(f, Iterable) and not isinstance(f, (str, bytes)):
            out.extend(_flatten(f))
        else:
            raise FringeInputError(must_be("figures", "matplotlib Figures (or lists of them)",
                                           type(f).__name__))
    return out


def number_sheets(figures) -> list[Figure]:
    """Write "k of n" into every title block whose sheet number was left unset.

    Parameters
    ----------
    figures : iterable of Figure (nested lists allowed, e.g. from :func:`table_sheet`)

    Returns
    -------
    list of Figure
        The flattened list, in order (the figures are modified in place).
    """
    figs = _flatten(figures)
    n = len(figs)
    for k, fig in enumerate(figs, 1):
        for t in fig.findobj(lambda a: getattr(a, "get_gid", lambda: None)()
                             == _SHEET_NUMBER_GID + "-auto"):
            t.set_text(f"{k} of {n}")
    return figs


def _save_rc() -> dict[str, Any]:
    # Text stays text in SVG and PDF, so the advisory notice is searchable and editable.
    return {"svg.fonttype": "none", "pdf.fonttype": 42, "svg.hashsalt": "fringe"}


def save_figure(fig: Figure, path: str | Path, *, dpi: int = PNG_DPI) -> Path:
    """Write one sheet to ``path`` atomically; the format follows the suffix.

    Parameters
    ----------
    fig : matplotlib.figure.Figure
    path : str or Path
        Ends in ".png" (raster, ``dpi``), ".svg" or ".pdf" (vector, text kept as text).
    dpi : int
        PNG resolution, dots per inch (default 170: an A3 sheet is 2811 x 1987 px).

    Returns
    -------
    Path
        ``path``.

    Raises
    ------
    FringeInputError
        Unknown suffix or not a Figure.
    FringeIOError
        The folder does not exist.
    """
    path = Path(path)
    fmt = path.suffix.lower().lstrip(".")
    if fmt not in _SAVE_FORMATS:
        raise FringeInputError(must_be("path", f"a file name ending in one of "
                                       f"{['.' + f for f in _SAVE_FORMATS]}", str(path)))
    if not isinstance(fig, Figure):
        raise FringeInputError(must_be("fig", "a matplotlib Figure", type(fig).__name__))
    meta: dict[str, Any] = {}
    if fmt == "png":
        meta = {"Software": "fringe", "Description": ADVISORY_NOTICE}
    elif fmt == "pdf":
        meta = {"Creator": "fringe", "Subject": ADVISORY_NOTICE}
    elif fmt == "svg":
        meta = {"Creator": "fringe", "Description": ADVISORY_NOTICE, "Date": None}
    with matplotlib.rc_context(_save_rc()), atomic_file(path) as tmp:
        # zlib level 3 instead of PIL's 6: a third less time for ~25 % more bytes
        extra = {"pil_kwargs": {"compress_level": 3}} if fmt == "png" else {}
        fig.savefig(tmp, format=fmt, dpi=dpi, metadata=meta, **extra)
    return path


def write_pdf(figures, path: str | Path, *, title: str | None = None) -> Path:
    """Write a sheet set to one PDF atomically, numbering unnumbered sheets "k of n".

    The PDF carries a bookmark (outline entry) per sheet, "k. <drawing title>", and
    opens with the bookmarks shown (:func:`fringe.io.pdf_outline.add_outline`).

    Parameters
    ----------
    figures : iterable of Figure (nested lists allowed)
    path : str or Path
        Target ".pdf" file.
    title : str, optional
        PDF document title (metadata).

    Returns
    -------
    Path

    Raises
    ------
    FringeInputError
        No figures, or a path not ending in ".pdf".
    """
    path = Path(path)
    if path.suffix.lower() != ".pdf":
        raise FringeInputError(must_be("path", "a file name ending in '.pdf'", str(path)))
    figs = number_sheets(figures)
    if not figs:
        raise FringeInputError(must_be("figures", "at least one sheet", figs))
    meta = {"Creator": "fringe", "Subject": ADVISORY_NOTICE}
    if title:
        meta["Title"] = title
    buf = io.BytesIO()
    with matplotlib.rc_context(_save_rc()):
        with PdfPages(buf, metadata=meta) as pdf:
            for fig in figs:
                pdf.savefig(fig)
    marks = [f"{k}. {sheet_title(fig) or 'sheet'}" for k, fig in enumerate(figs, 1)]
    write_bytes_atomic(path, add_outline(buf.getvalue(), marks))
    return path
