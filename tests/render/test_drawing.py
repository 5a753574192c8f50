"""Tests of the drawing sheets (fringe.render.drawing).

The field arrays are synthetic: |B| of a point dipole computed here with numpy
(Jackson, Classical Electrodynamics, 3rd ed., Eq. 5.56). These tests check drawing
behaviour, not physics: labels, scale, page counts, error messages, the advisory notice.
"""

from __future__ import annotations

import ast
import dataclasses
import re
import struct
import xml.etree.ElementTree as ET
from pathlib import Path

import numpy as np
import pytest
from matplotlib.figure import Figure
from shapely.geometry import Polygon, box

from fringe.model.constants import ADVISORY_NOTICE
from fringe.model.errors import FringeInputError, FringeIOError
from fringe.model.site import DrawingSettings
from fringe.render import drawing as d

CENTRE = np.array([5.0, 4.0, 1.1])
MOMENT_AM2 = np.array([1.6e5, 0.0, 0.0])  # invented: the 0.5 mT line at 4 m on the axis


def dipole_field_T(points_m: np.ndarray) -> np.ndarray:
    """|B| of a point dipole, T (Jackson 3rd ed., Eq. 5.56)."""
    r = points_m - CENTRE
    rn = np.maximum(np.linalg.norm(r, axis=-1, keepdims=True), 1e-3)
    rhat = r / rn
    B = 1e-7 * (3 * (rhat @ MOMENT_AM2)[..., None] * rhat - MOMENT_AM2) / rn**3
    return np.linalg.norm(B, axis=-1)


def plan_grid(nx: int = 111, ny: int = 81):
    x = np.linspace(-5.0, 17.0, nx)
    y = np.linspace(-4.0, 12.0, ny)
    X, Y = np.meshgrid(x, y)
    f = dipole_field_T(np.stack([X, Y, np.full_like(X, CENTRE[2])], axis=-1))
    f[np.hypot(X - CENTRE[0], Y - CENTRE[1]) < 0.8] = np.nan
    return x, y, f


INFO = d.SheetInfo(site_name="Test Clinic (invented)", title="Floor plan: ground",
                   subtitle="synthetic dipole", magnets=("MR 1",), date_iso="2026-12-02",
                   tool_version="fringe test",
                   boundary_note="Controlled access area boundary: 0.5 mT (ICNIRP 2009; "
                                 "IEC 60601-2-33 ed. 3)",
                   notes=("Magnet modelled as a point dipole.",))

ROOMS = [
    d.RoomMark("magnet room", box(1.0, 0.0, 9.0, 8.0), "controlled", "ok", 0.9),
    d.RoomMark("control", box(9.0, 0.0, 13.0, 4.0), "controlled", "ok", 2.1e-3),
    d.RoomMark("plant room", box(9.0, 4.0, 13.0, 8.0), "open", "exceeds", 1.3e-3, 5e-4),
    d.RoomMark("corridor", box(-3.0, 8.0, 16.0, 10.0), "open", "ok", 4.1e-4),
    d.RoomMark("waiting", Polygon([(-3, 0), (1, 0), (1, 8), (-3, 8)]), "open", "exceeds",
               8.8e-4, 5e-4),
]
EQUIPMENT = [d.EquipmentMark("CT gantry", (14.5, 4.0), 2.9e-4, 1e-4, "exceeds"),
             d.EquipmentMark("injector", (8.0, 1.0), 6e-3, 1e-2, "ok")]
MAGNETS = [d.MagnetOutline("MR 1", d.footprint_rectangle(CENTRE[:2], (1, 0), 1.7, 2.0))]


def texts_with_gid(fig: Figure, gid: str) -> list:
    return [t for t in fig.findobj(lambda a: getattr(a, "get_gid", lambda: None)() == gid)]


def all_text(fig: Figure) -> list[str]:
    from matplotlib.text import Text

    return [t.get_text() for t in fig.findobj(Text) if t.get_text()]


def norm(s: str) -> str:
    return " ".join(s.split())


def pdf_page_count(path: Path) -> int:
    return len(re.findall(rb"/Type\s*/Page\b", path.read_bytes()))


@pytest.fixture(scope="module")
def plan_fig() -> Figure:
    x, y, f = plan_grid()
    hazard = Polygon([(5 + 1.8 * np.cos(t), 4 + 1.4 * np.sin(t))
                      for t in np.linspace(0, 2 * np.pi, 40)])
    return d.plan_sheet(x, y, f, INFO, rooms=ROOMS, equipment=EQUIPMENT, magnets=MAGNETS,
                        overlays=[d.Overlay("attraction zone", hazard, "hazard")])


def test_plan_sheet_saves_png_svg_pdf(plan_fig, tmp_path):
    # common practice, no source: an A3 sheet at 170 dpi is 2811 x 1987 px
    png = d.save_figure(plan_fig, tmp_path / "plan.png")
    head = png.read_bytes()[:24]
    assert head[:8] == b"\x89PNG\r\n\x1a\n"
    w, h = struct.unpack(">II", head[16:24])
    assert (w, h) == (int(420 / 25.4 * d.PNG_DPI), int(297 / 25.4 * d.PNG_DPI))
    svg = d.save_figure(plan_fig, tmp_path / "plan.svg")
    assert svg.read_bytes().lstrip().startswith(b"<?xml")
    pdf = d.save_figure(plan_fig, tmp_path / "plan.pdf")
    assert pdf_page_count(pdf) == 1
    # atomic writes leave no temporary siblings behind
    assert sorted(p.name for p in tmp_path.iterdir()) == ["plan.pdf", "plan.png", "plan.svg"]


def test_advisory_notice_is_text_in_the_svg(plan_fig, tmp_path):
    svg = d.save_figure(plan_fig, tmp_path / "plan.svg")
    root = ET.parse(svg).getroot()
    words = norm(" ".join("".join(el.itertext()) for el in root.iter()
                          if el.tag.endswith("}text")))
    assert norm(ADVISORY_NOTICE) in words
    assert "Test Clinic (invented)" in words


def test_contour_levels_appear_as_labels_in_mT(plan_fig):
    labels = {t.get_text() for t in texts_with_gid(plan_fig, "contour-label")}
    # the dipole grid spans 0.5 mT to well above 40 mT, so the lines exist
    for lv in ("1 mT", "3 mT", "10 mT"):
        assert lv in labels
    # the boundary is labelled beside its line: in full, on two lines, or short when
    # no stretch of the line is long and straight enough; the key always names it
    assert any(norm(lb) in ("0.5 mT: controlled access area boundary", "0.5 mT boundary",
                            "0.5 mT") for lb in labels)
    legend_texts = [t.get_text() for leg in plan_fig.findobj(
        lambda a: a.__class__.__name__ == "Legend") for t in leg.get_texts()]
    assert "0.5 mT: controlled access area boundary" in [norm(t) for t in legend_texts]
    band_labels = [t for t in legend_texts if " to " in t or t.startswith("at least")]
    assert band_labels and all(t.endswith(" mT") for t in band_labels)


def test_scale_bar_spans_its_stated_length(plan_fig):
    # common practice, no source: a scale bar must measure what its label says
    ax = next(a for a in plan_fig.axes if a.get_label() == "map")
    segs = sorted((p for p in ax.patches if str(p.get_gid()).startswith("scale-bar-")
                   and p.get_gid()[-1].isdigit()), key=lambda p: p.get_x())
    assert len(segs) == 4
    for a, b in zip(segs, segs[1:], strict=False):
        assert b.get_x() == pytest.approx(a.get_x() + a.get_width(), abs=1e-12)
    span_m = segs[-1].get_x() + segs[-1].get_width() - segs[0].get_x()
    label = texts_with_gid(plan_fig, "scale-bar-label")[0].get_text()
    stated_m = float(label.removesuffix(" m"))
    assert span_m == pytest.approx(stated_m, rel=1e-12)
    # and in display units it is as long as the same distance between axis ticks
    px = ax.transData.transform([(0.0, 0.0), (stated_m, 0.0)])
    seg_px = ax.transData.transform([(segs[0].get_x(), 0), (segs[0].get_x() + span_m, 0)])
    assert np.diff(seg_px[:, 0]) == pytest.approx(np.diff(px[:, 0]))
    assert ax.get_aspect() == 1.0
    # the printed ratio: metres of site per metre of A3 paper across the drawing
    ratio = float(texts_with_gid(plan_fig, "scale-ratio")[0].get_text().split("1:")[1].split()[0])
    width_m_paper = ax.get_position().width * plan_fig.get_figwidth() * 0.0254
    assert ratio == pytest.approx(np.ptp(ax.get_xlim()) / width_m_paper, abs=0.5)


def test_every_sheet_kind_carries_title_block_and_advisory():
    x, y, f = plan_grid(41, 31)
    t = np.linspace(0, 10, 20)
    sheets = [
        d.map_sheet(x, y, f * 1e3, [0.5, 1, 3], INFO, unit="mT"),
        d.curve_sheet([d.CurvePanel("t, s", "I, A", (d.Curve("I", t, np.exp(-t)),))], INFO),
        d.cover_sheet(INFO, [("Stored energy", "4 MJ")], ["all rooms within 0.5 mT"]),
        *d.table_sheet("Rooms", ["a", "b"], [(1, "x")], INFO),
    ]
    for fig in sheets:
        adv = texts_with_gid(fig, "fringe-advisory")
        assert len(adv) == 1 and norm(adv[0].get_text()) == norm(ADVISORY_NOTICE)
        texts = all_text(fig)
        assert "Test Clinic (invented)" in texts and "2026-12-02" in texts


def test_write_pdf_counts_and_numbers_sheets(tmp_path):
    x, y, f = plan_grid(41, 31)
    rows = [(f"room {i}", "open", 0.1 * i, "ok") for i in range(150)]
    tables = d.table_sheet("Rooms", ["room", "access", "largest field, mT", "verdict"],
                           rows, INFO)
    assert len(tables) >= 2
    cover = d.cover_sheet(INFO, [("Magnets", "MR 1")], [])
    plan = d.plan_sheet(x, y, f, INFO)
    out = d.write_pdf([cover, plan, tables], tmp_path / "set.pdf", title="test set")
    n = 2 + len(tables)
    assert pdf_page_count(out) == n
    numbers = [texts_with_gid(fig, "fringe-sheet-number-auto")[0].get_text()
               for fig in [cover, plan, *tables]]
    assert numbers == [f"{k} of {n}" for k in range(1, n + 1)]
    # an explicit sheet number is kept
    fixed = d.cover_sheet(d.SheetInfo(site_name="S", title="T", sheet_number="A-01"), [])
    d.write_pdf([fixed], tmp_path / "one.pdf")
    assert "A-01" in all_text(fixed)


def test_table_pages_hold_every_row_once():
    rows = [(f"row-{i:03d}", "long text " * (i % 4)) for i in range(120)]
    figs = d.table_sheet("Equipment", ["name", "note"], rows, INFO)
    seen = [s for fig in figs for s in all_text(fig) if s.startswith("row-")]
    assert sorted(seen) == [f"row-{i:03d}" for i in range(120)]


def test_many_rooms_labels_stay_apart():
    # common practice, no source: labels must not overlap unreadably
    x = np.linspace(0.0, 40.0, 161)
    y = np.linspace(0.0, 24.0, 97)
    X, Y = np.meshgrid(x, y)
    r = np.hypot(X - 20.0, Y - 12.0) + 0.3
    field_T = 0.5e-3 * (7.0 / r) ** 3
    rooms, k = [], 0
    for i in range(8):
        for j in range(4):
            w = 5.0
            h = 6.0
            name = f"room {k} " + ("with a long descriptive name" if k % 5 == 0 else "")
            rooms.append(d.RoomMark(name.strip(), box(i * w, j * h, (i + 1) * w, (j + 1) * h),
                                    "controlled" if k % 7 == 0 else "open",
                                    "exceeds" if k % 3 == 0 else "ok", 1e-4 * (k + 1), 5e-4))
            k += 1
    equipment = [d.EquipmentMark(f"monitor {m}", (2.5 + 5.0 * (m % 8), 3.0 + 6.0 * (m // 8)),
                                 1e-4, 5e-4, "ok") for m in range(12)]
    # at 1:143 the 40 m plan fills the drawing area (the default, 1:200, draws it smaller)
    info = dataclasses.replace(INFO, drawing=DrawingSettings(scale=143))
    fig = d.plan_sheet(x, y, field_T, info, rooms=rooms, equipment=equipment)
    r_ = fig.canvas.get_renderer()
    from matplotlib.text import Text

    room_boxes = [Text.get_window_extent(t, r_) for t in texts_with_gid(fig, "room-label")]
    eq_texts = texts_with_gid(fig, "equipment-label")
    for t in eq_texts:
        t.update_positions(r_)  # an Annotation's text box, without its leader line
    eq_boxes = [Text.get_window_extent(t, r_) for t in eq_texts]
    cl_boxes = [Text.get_window_extent(t, r_) for t in texts_with_gid(fig, "contour-label")]
    assert len(room_boxes) == len(rooms) and len(eq_boxes) == len(equipment)
    assert cl_boxes

    def overlap(a, b):
        w = min(a.x1, b.x1) - max(a.x0, b.x0)
        h = min(a.y1, b.y1) - max(a.y0, b.y0)
        return max(w, 0) * max(h, 0)

    labels = room_boxes + eq_boxes + cl_boxes
    for i, a in enumerate(labels):
        for b in labels[i + 1:]:
            assert overlap(a, b) <= 0.02 * min(a.width * a.height, b.width * b.height)
    # each room label sits inside its room (in display space) or is clipped to it
    ax = next(a for a in fig.axes if a.get_label() == "map")
    for t, room in zip(texts_with_gid(fig, "room-label"), rooms, strict=True):
        bb = Text.get_window_extent(t, r_)
        corners = ax.transData.inverted().transform([(bb.x0, bb.y0), (bb.x1, bb.y1)])
        inside = box(*corners[0], *corners[1]).within(room.polygon.buffer(1e-6))
        assert inside or t.get_clip_path() is not None
        assert t.get_fontsize() >= 5.0


def test_map_sheet_draws_generic_units():
    x, y, f = plan_grid(61, 41)
    w = f**2 / (2 * 4e-7 * np.pi)  # B²/2μ0, J/m³ (any positive map will do here)
    fig = d.map_sheet(x, y, w, [0.1, 1, 10, 100], INFO, unit="J/m³", quantity="w")
    labels = {t.get_text() for t in texts_with_gid(fig, "contour-label")}
    assert {"1 J/m³", "10 J/m³"} <= labels
    assert "w in J/m³" in all_text(fig)


def test_section_sheet_floors_windings_and_exposure_lines():
    s = np.linspace(-6.0, 6.0, 121)
    z = np.linspace(-2.0, 5.0, 71)
    S, Z = np.meshgrid(s, z)
    f = dipole_field_T(np.stack([CENTRE[0] + S, np.full_like(S, CENTRE[1]), Z], axis=-1))
    winding = box(-0.5, CENTRE[2] + 0.25, 0.5, CENTRE[2] + 0.45)
    fig = d.section_sheet(s, z, f, INFO, floors=[d.FloorLevel("ground", 0.0),
                                                   d.FloorLevel("first", 3.6)],
                          windings=[("coil", winding)],
                          exposure_lines=d.ICNIRP_2009_EXPOSURE_LINES)
    texts = norm(" ".join(all_text(fig)))
    assert "ground: floor at 0 m" in texts and "first: floor at 3.6 m" in texts
    # the source of the exposure values is printed on the sheet
    assert "ICNIRP (2009) Guidelines on limits of exposure to static magnetic fields" in texts
    # 400 mT is reached (the grid comes within 0.1 m of the dipole): its line is labelled
    assert "400 mT" in {t.get_text() for t in texts_with_gid(fig, "contour-label")}


def test_curve_and_cover_sheets_build():
    t = np.linspace(0, 60, 50)
    fig = d.curve_sheet([
        d.CurvePanel("time, s", "current, A", (d.Curve("I(t)", t, 300 * np.exp(-t / 12)),),
                     title="Current decay", marks=(("L/R", 12.0),)),
        d.CurvePanel("time, s", "energy left, MJ", (d.Curve("W(t)", t, 4 * np.exp(-t / 6)),),
                     log_y=True)], INFO)
    assert {"Current decay", "I(t)", "W(t)", "L/R"} <= set(all_text(fig))
    cover = d.cover_sheet(INFO, [("Stored energy", "4.0 MJ")],
                          ["plant room: EXCEEDS 0.5 mT", "corridor: within 0.5 mT"])
    from matplotlib.text import Text

    bold = [t for t in cover.findobj(Text) if "EXCEEDS" in t.get_text()]
    assert bold and all(t.get_fontweight() in ("bold", 700) for t in bold)


@pytest.mark.parametrize("call, key", [
    (lambda x, y, f: d.plan_sheet(x, y, f.T, INFO), "`values` must be an array of shape"),
    (lambda x, y, f: d.plan_sheet(x, y, f, INFO, thresholds_mT=[]),
     "`thresholds_mT` must be a non-empty list"),
    (lambda x, y, f: d.plan_sheet(x[::-1], y, f, INFO), "`x_m` must be a 1-D strictly"),
    (lambda x, y, f: d.plan_sheet(x, y, f, INFO, thresholds_mT=[0.5, -1]),
     "`thresholds_mT` must be finite positive numbers"),
    (lambda x, y, f: d.map_sheet(x, y, f, [], INFO, unit="T"), "`levels` must be a non-empty"),
    (lambda x, y, f: d.plan_sheet(x, y, f, INFO, overlays=[("z", box(0, 0, 1, 1), "glow")]),
     "`overlays[0].kind` must be one of ['condition-1', 'condition-2', 'condition-3', "
     "'contour', 'hazard', 'outline', 'points', 'steel', 'wall']; got 'glow'"),
    (lambda x, y, f: d.plan_sheet(x, y, f, INFO, rooms=[d.RoomMark("r", None)]),
     "`rooms[0].polygon (r)` must be a non-empty shapely Polygon"),
    (lambda x, y, f: d.section_sheet(x, y, f[:, :-1], INFO), "`field_T` must be an array"),
    (lambda x, y, f: d.curve_sheet([], INFO), "`panels` must be a non-empty list"),
    (lambda x, y, f: d.table_sheet("t", ["a", "b"], [(1,)], INFO),
     "`rows[0]` must be a row of 2 cells; got '1 cells'"),
    (lambda x, y, f: d.write_pdf([], "x.pdf"), "`figures` must be at least one sheet"),
])
def test_bad_inputs_raise_with_the_message_form(call, key):
    x, y, f = plan_grid(21, 11)
    with pytest.raises(FringeInputError) as e:
        call(x, y, f)
    assert str(e.value).startswith(key)
    assert "; got " in str(e.value)


def test_save_figure_rejects_unknown_suffix_and_missing_folder(tmp_path):
    fig = d.cover_sheet(INFO, [])
    with pytest.raises(FringeInputError, match=r"^`path` must be a file name ending in one of"):
        d.save_figure(fig, tmp_path / "sheet.jpg")
    with pytest.raises(FringeIOError):
        d.save_figure(fig, tmp_path / "missing" / "sheet.png")
    assert list(tmp_path.iterdir()) == []


def test_drawing_module_knows_nothing_of_the_field_engine():
    # DESIGN.md: outputs know nothing of magpylib; no pyplot global state
    from fringe.render import sheet as sheets

    names = set()
    src = "\n".join(Path(m.__file__).read_text(encoding="utf-8") for m in (d, sheets))
    for node in ast.walk(ast.parse(src)):
        if isinstance(node, ast.Import):
            names.update(a.name for a in node.names)
        elif isinstance(node, ast.ImportFrom):
            names.add(("." * node.level) + (node.module or ""))
    assert not {n for n in names if "magpylib" in n or n in (".field", ".coils",
                                                                 "matplotlib.pyplot")}


def test_format_and_helpers():
    assert [d.format_value(v) for v in (0.5, 1.0, 200.0, 1500.0, 0.0012)] == \
        ["0.5", "1", "200", "1500", "0.0012"]
    assert d.scale_bar_length_m(22.0) == 5.0
    fp = d.footprint_rectangle((5.0, 4.0), (0.0, 2.0), 1.7, 2.0)
    assert fp.area == pytest.approx(3.4)
    assert fp.bounds == pytest.approx((4.0, 3.15, 6.0, 4.85))


def test_plan_sheet_edge_cases_still_draw_a_complete_sheet():
    # common practice, no source: odd inputs must still give a sheet with its notice
    x, y, f = plan_grid(41, 31)
    odd_rooms = [
        d.RoomMark("two wings", box(-4, -3, -2, 0).union(box(0, -3, 2, 0)), "open", "ok"),
        d.RoomMark("ring", box(-4, 1, 4, 7).difference(box(-2, 2, 2, 6)), "open", "ok"),
        d.RoomMark("half outside", box(14, 8, 25, 15), "open", "ok"),
        d.RoomMark("far away", box(100, 100, 110, 110), "open", "ok"),
    ]
    for field in (f, np.full_like(f, 1e-6), np.full_like(f, np.nan)):
        fig = d.plan_sheet(x, y, field, INFO, rooms=odd_rooms)
        assert len(texts_with_gid(fig, "fringe-advisory")) == 1
        labels = [t.get_text().split("\n")[0] for t in texts_with_gid(fig, "room-label")]
        assert labels == ["two wings", "ring", "half outside"]  # "far away" is not shown
    # the part of a room inside the drawing carries its label
    ax = next(a for a in fig.axes if a.get_label() == "map")
    lab = texts_with_gid(fig, "room-label")[2]
    assert ax.get_xlim()[0] <= lab.get_position()[0] <= ax.get_xlim()[1]
    assert ax.get_ylim()[0] <= lab.get_position()[1] <= ax.get_ylim()[1]


def test_cover_puts_exceeding_findings_first_and_cuts_long_lists():
    lines = [f"room {i}: within 0.5 mT" for i in range(80)] + ["plant room: exceeds 0.5 mT"]
    fig = d.cover_sheet(INFO, [("Magnets", "MR 1")], lines)
    texts = all_text(fig)
    shown = [t for t in texts if t.startswith(("\u25a0", "\u25a1"))]
    assert shown[0].startswith("\u25a0 plant room")
    more = [t for t in texts if t.startswith("... and ")]
    assert len(more) == 1
    assert int(more[0].split()[2]) == len(lines) - len(shown)


def test_tables_sheets_share_sheets_and_continue_long_tables():
    small = [(f"Table {k}", ["name", "value, mT"], [(f"t{k}-r{i}", 0.1 * i) for i in range(5)])
             for k in range(3)]
    figs = d.tables_sheets(small, INFO)
    assert len(figs) == 1
    assert {"Table 0", "Table 1", "Table 2"} <= set(all_text(figs[0]))
    long = ("Long", ["name", "verdict"], [(f"row-{i:03d}", "exceeds" if i == 7 else "ok")
                                          for i in range(150)])
    figs = d.tables_sheets([*small, long], INFO)
    assert len(figs) >= 3
    texts = [t for f in figs for t in all_text(f)]
    assert sorted(t for t in texts if t.startswith("row-")) == \
        [f"row-{i:03d}" for i in range(150)]
    assert "Long (continued)" in texts
    from matplotlib.text import Text

    row7 = [t for f in figs for t in f.findobj(Text) if t.get_text() == "row-007"]
    assert row7[0].get_fontweight() in ("bold", 700)  # the exceeding row is set bold
    with pytest.raises(FringeInputError, match=r"^`tables\[1\]\.rows\[0\]` must be a row"):
        d.tables_sheets([small[0], ("bad", ["a", "b"], [(1,)])], INFO)


def test_long_notes_stay_above_the_title_block():
    notes = [f"note {i}: " + "a long explanation of an assumption " * 4 for i in range(40)]
    fig = d.cover_sheet(INFO, [("a", "b")], notes=notes)
    r_ = fig.canvas.get_renderer()
    body = texts_with_gid(fig, "fringe-notes")[0]
    title_ax = next(a for a in fig.axes if a.get_label() == "title block")
    assert body.get_window_extent(r_).y0 >= title_ax.get_window_extent(r_).y1
    assert body.get_text().splitlines()[-1].endswith("more notes in the report")


def test_icnirp_2009_exposure_line_values():
    # ICNIRP (2009) Health Phys. 96(4):504-514, Table 1: 400 mT general public;
    # 2 T occupational head and trunk; 8 T occupational limbs
    values = {round(e.value_T, 9) for e in d.ICNIRP_2009_EXPOSURE_LINES}
    assert values == {0.4, 2.0, 8.0}
    assert all("ICNIRP (2009)" in e.source for e in d.ICNIRP_2009_EXPOSURE_LINES)


def test_sheet_info_date_and_default_boundary_note():
    with pytest.raises(FringeInputError, match=r"^`date_iso` must be an ISO 8601 date"):
        d.SheetInfo(site_name="S", title="T", date_iso="02/12/2026")
    assert d.SheetInfo(site_name="S", title="T", date_iso="2026-12-02T01:00:00Z")
    x, y, f = plan_grid(21, 11)
    fig = d.plan_sheet(x, y, f, d.SheetInfo(site_name="S", title="T"), boundary_mT=0.9)
    assert "Controlled access area boundary: 0.9 mT (source not given)" in norm(
        " ".join(all_text(fig)))


def test_key_says_when_the_boundary_is_not_reached():
    x, y, f = plan_grid(21, 11)
    fig = d.plan_sheet(x, y, np.full_like(f, 1e-5), INFO)  # 0.01 mT everywhere
    legend = [t.get_text() for leg in fig.findobj(lambda a: a.__class__.__name__ == "Legend")
              for t in leg.get_texts()]
    assert "0.5 mT: controlled access area boundary (not reached on this sheet)" in \
        [norm(t) for t in legend]


def test_threshold_palette_is_fixed_by_value_and_darkens_with_field():
    # fringe.render.style: the colour is a function of the value alone (log10 on a fixed
    # range), lighter for lower fields (viridis reversed), the same in hex and in RGB
    from fringe.render.style import threshold_color, threshold_rgb

    ts = [0.1, 0.5, 1.0, 3.0, 10.0, 40.0, 200.0, 2000.0]

    def luma(rgb):  # Rec. 709 weights (common practice, no source needed for ordering)
        return 0.2126 * rgb[0] + 0.7152 * rgb[1] + 0.0722 * rgb[2]

    lum = [luma(threshold_rgb(t)) for t in ts]
    assert all(a > b for a, b in zip(lum, lum[1:], strict=False))
    assert threshold_color(0.5) == "#{:02x}{:02x}{:02x}".format(*threshold_rgb(0.5))
    assert threshold_rgb(1e-6) == threshold_rgb(0.1) and threshold_rgb(1e9) == threshold_rgb(1e4)
