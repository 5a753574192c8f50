"""Sheets a safety officer can sign: stated scale, paper, title-block fields, sign-off
boxes, "k of N", PDF bookmarks and contents, north arrow (fringe.render.sheet,
fringe.render.drawing, fringe.render.report)."""

from __future__ import annotations

import dataclasses
import math

import numpy as np
import pymupdf
import pytest

from fringe.cli.main import main
from fringe.model.site import PAPER_SIZES_MM, STANDARD_SCALES, DrawingSettings
from fringe.render import drawing as d
from fringe.render.drawing import _MAIN

INFO = d.SheetInfo(site_name="Test Clinic (invented)", title="Floor plan: test",
                   date_iso="2026-12-02")


def grid(x1=20.0, y1=12.0):
    x = np.linspace(0.0, x1, 81)
    y = np.linspace(0.0, y1, 49)
    X, Y = np.meshgrid(x, y)
    r = np.hypot(X - x1 / 2, Y - y1 / 2) + 0.3
    return x, y, 0.5e-3 * (3.0 / r) ** 3


def gid_texts(fig, gid):
    return [t.get_text() for t in fig.findobj(lambda a: getattr(a, "get_gid", lambda: None)()
                                              == gid)]


def printed_scale(fig) -> tuple[float, float]:
    """Metres of site per metre of paper across and up the map axes, printed at 100 %."""
    ax = next(a for a in fig.axes if a.get_label() == "map")
    ax.apply_aspect()
    pos = ax.get_position()
    w_m = pos.width * fig.get_figwidth() * 0.0254
    h_m = pos.height * fig.get_figheight() * 0.0254
    return np.ptp(ax.get_xlim()) / w_m, np.ptp(ax.get_ylim()) / h_m


@pytest.mark.parametrize(("paper", "scale"), [("A3", 100), ("A3", 200), ("A1", 50),
                                              ("A4", 250)])
def test_stated_scale_is_the_printed_scale(paper, scale):
    # common practice, no source: at 1:n, 1 m of site measures 1000/n mm on the paper
    info = dataclasses.replace(INFO, drawing=DrawingSettings(paper=paper, scale=scale))
    fig = d.plan_sheet(*grid(), info)
    short, long = PAPER_SIZES_MM[paper]  # ISO 216 sizes, mm
    assert fig.get_figwidth() * 25.4 == pytest.approx(long)
    assert fig.get_figheight() * 25.4 == pytest.approx(short)
    sx, sy = printed_scale(fig)
    assert sx == pytest.approx(scale, rel=0.005) and sy == pytest.approx(scale, rel=0.005)
    stated = f"1:{scale} at {paper}"
    assert gid_texts(fig, "fringe-scale") == [stated]
    assert gid_texts(fig, "scale-ratio") == [f"scale {stated}, printed at 100 %"]
    assert not any("about" in t for t in gid_texts(fig, "scale-ratio"))


@pytest.mark.parametrize(("x1", "y1"), [(20.0, 12.0), (28.0, 14.0), (60.0, 20.0), (3.0, 2.0)])
def test_default_scale_is_the_largest_standard_drawing_that_fits(x1, y1):
    fig = d.plan_sheet(*grid(x1, y1), INFO)
    text = gid_texts(fig, "fringe-scale")[0]
    n = int(text.removeprefix("1:").removesuffix(" at A3"))
    assert n in STANDARD_SCALES  # ISO 5455 recommended scales (and 1:25, 1:250)
    sx, _ = printed_scale(fig)
    assert sx == pytest.approx(n, rel=0.005)
    # it fits the drawing area; the next larger standard drawing would not
    w_in, h_in = fig.get_figwidth() * _MAIN[2], fig.get_figheight() * _MAIN[3]
    assert x1 * 1000 / n / 25.4 <= w_in + 1e-9 and y1 * 1000 / n / 25.4 <= h_in + 1e-9
    larger = [s for s in STANDARD_SCALES if s < n]
    if larger:
        m = larger[-1]
        assert x1 * 1000 / m / 25.4 > w_in or y1 * 1000 / m / 25.4 > h_in


def test_a_stated_scale_that_does_not_fit_is_replaced_and_said_so():
    info = dataclasses.replace(INFO, drawing=DrawingSettings(scale=50))
    fig = d.plan_sheet(*grid(60.0, 20.0), info)
    text = gid_texts(fig, "fringe-scale")[0]
    assert text != "1:50 at A3"
    notes = " ".join(gid_texts(fig, "fringe-notes"))
    assert "at the stated 1:50" in notes and "does not fit A3" in notes


def test_title_block_fields_and_empty_sign_off_boxes():
    signed = DrawingSettings(number="FR-0101", revision="C", status="for approval",
                             drawn_by="A. Planner", checked_by="B. Checker",
                             approved_by="C. Approver")
    fig = d.plan_sheet(*grid(), dataclasses.replace(INFO, drawing=signed))
    assert gid_texts(fig, "fringe-drawing-number") == ["FR-0101"]
    assert gid_texts(fig, "fringe-revision") == ["C"]
    assert gid_texts(fig, "fringe-status") == ["for approval"]
    for role, name in (("drawn", "A. Planner"), ("checked", "B. Checker"),
                       ("approved", "C. Approver")):
        assert gid_texts(fig, f"fringe-{role}-by") == [name]
        assert gid_texts(fig, f"fringe-{role}-date") == [""]  # dated by hand when signed
    blank = d.cover_sheet(INFO, [("a", "b")])
    for gid in ("fringe-drawing-number", "fringe-revision", "fringe-status",
                "fringe-drawn-by", "fringe-checked-by", "fringe-approved-by",
                "fringe-drawn-date"):
        assert gid_texts(blank, gid) == [""]  # the box is there, empty for a pen
    assert gid_texts(blank, "fringe-scale") == ["not to scale"]


@pytest.mark.parametrize("north_deg", [0.0, 90.0, -90.0, 30.0, 180.0])
def test_north_arrow_points_north_deg_counter_clockwise_from_up(north_deg):
    fig = d.plan_sheet(*grid(28.0, 14.0), INFO, north_deg=north_deg)  # fills the width
    ax = next(a for a in fig.axes if a.get_label() == "map")
    arrow = next(t for t in ax.texts if t.get_gid() == "north-arrow")
    tip = arrow.xycoords.transform(arrow.xy)
    tail = arrow.anncoords.transform(arrow.xyann)
    v = tip - tail
    # common practice, no source: counter-clockwise from the sheet's up direction
    a = math.radians(north_deg)
    assert v / np.hypot(*v) == pytest.approx([-math.sin(a), math.cos(a)], abs=1e-9)
    # the arrow and its "N" stay outside the drawing
    n_box = next(t for t in ax.texts if t.get_gid() == "north-label").get_window_extent(
        fig.canvas.get_renderer())
    ax_box = ax.get_window_extent()
    assert n_box.x0 >= ax_box.x1 - 1 or n_box.y0 >= ax_box.y1 - 1
    assert min(tip[0], tail[0]) >= ax_box.x1
    key = next(a for a in fig.axes if a.get_label() == "key").get_window_extent()
    assert max(tip[0], tail[0], n_box.x1) <= key.x0  # and clear of the key column


def test_pdf_bookmarks_contents_numbers_and_paper(tmp_path):
    info = dataclasses.replace(INFO, drawing=DrawingSettings(paper="A1"))
    plan = d.plan_sheet(*grid(), info)
    rows = [(f"room {i}", 0.1 * i) for i in range(260)]
    tables = d.table_sheet("Rooms", ["room", "largest field, mT"], rows,
                           dataclasses.replace(info, title="Tables"))
    assert len(tables) >= 2
    titles = ["Cover", "Floor plan: test"] + [d.sheet_title(t) for t in tables]
    cover = d.cover_sheet(dataclasses.replace(info, title="Cover"), [("a", "b")],
                          contents=titles)
    out = d.write_pdf([cover, plan, tables], tmp_path / "set.pdf")
    doc = pymupdf.open(out)
    n = doc.page_count
    assert n == 2 + len(tables)
    assert len(set(titles)) == len(titles)  # a long table's sheets are told apart
    assert doc.get_toc() == [[1, f"{k}. {t}", k] for k, t in enumerate(titles, 1)]
    for k, page in enumerate(doc, 1):
        assert f"{k} of {n}" in page.get_text()
        # ISO 216 A1 landscape, 841 mm x 594 mm, in PDF points
        assert page.rect.width == pytest.approx(841 / 25.4 * 72, abs=0.1)
        assert page.rect.height == pytest.approx(594 / 25.4 * 72, abs=0.1)
    cover_text = doc[0].get_text()
    assert "CONTENTS" in cover_text and all(t.split(" (")[0] in cover_text for t in titles)
    assert "1:" in doc[1].get_text() and "at A1" in doc[1].get_text()


REPORT_SCENARIO = """
[site]
name = "signable test site (invented)"
[[magnet]]
name = "m"
center_m = [0, 0, 1.2]
axis = [1, 0, 0]
[[magnet.coil]]
r_inner_m = 0.30
r_outer_m = 0.32
z_min_m = -0.25
z_max_m = 0.25
turns = 1000
current_A = 100.0
[plan]
grid_step_m = 0.25
thresholds_mT = [0.5, 1, 3]
north_deg = 30
[[floor]]
name = "ground"
elevation_m = 0.0
[[room]]
name = "scan room"
floor = "ground"
access = "controlled"
outline_m = [[-3, -3], [3, -3], [3, 3], [-3, 3]]
[drawing]
number = "SIGN-7"
revision = "A"
status = "for checking"
drawn_by = "D. Rafter"
scale = "1:50"
"""


def test_report_set_is_signable(tmp_path):
    scen = tmp_path / "s.toml"
    scen.write_text(REPORT_SCENARIO, "utf-8")
    out = tmp_path / "rep"
    assert main(["report", str(scen), "--out", str(out), "--quiet"]) == 0
    doc = pymupdf.open(out / "report.pdf")
    n = doc.page_count
    toc = doc.get_toc()
    assert [e[2] for e in toc] == list(range(1, n + 1))
    titles = [e[1].split(". ", 1)[1] for e in toc]
    assert len(set(titles)) == n  # every sheet has a title of its own
    cover = doc[0].get_text()
    for k, page in enumerate(doc, 1):
        text = page.get_text()
        assert f"{k} of {n}" in text and "SIGN-7" in text and "D. Rafter" in text
        assert "about 1:" not in text
    assert all(t.split(" (")[0][:20] in cover for t in titles)
    plan = next(p for p, t in zip(doc, titles, strict=True) if t.startswith("Floor plan"))
    assert "1:50 at A3" in plan.get_text()
    svg = (out / "plan-ground.svg").read_text("utf-8")
    assert f">2 of {n}<" in svg and "1:50 at A3" in svg
