"""Steel parts on the sheets (issue 17, item 4): hatched grey outlines with their names,
one legend entry, on the plans of the storeys they overlap and on the sections they cut.
Drawing conventions of the package itself (common practice, no source)."""

from __future__ import annotations

from types import SimpleNamespace

import matplotlib

matplotlib.use("Agg")

import numpy as np  # noqa: E402
import pytest  # noqa: E402
from matplotlib.text import Annotation  # noqa: E402

from fringe.model.building import Floor  # noqa: E402
from fringe.model.steel import MATERIALS, SteelPart  # noqa: E402
from fringe.render import drawing as d  # noqa: E402
from fringe.render.report import STEEL_LABEL, _floor_steel, _section_steel  # noqa: E402

PLATE = SteelPart("ceiling plate", (5.0, 4.0, 3.6), (6.0, 5.0, 0.01),
                  MATERIALS["low-carbon-steel"])
BEAM = SteelPart("beam", (5.0, 9.0, 3.7), (8.0, 0.3, 0.3), MATERIALS["low-carbon-steel"],
                 yaw_deg=10.0)


@pytest.fixture
def report():
    floors = (Floor("ground", 0.0), Floor("first", 4.0))
    return SimpleNamespace(site=SimpleNamespace(steel=(PLATE, BEAM)),
                           plan=SimpleNamespace(floors=floors))


def test_parts_go_to_the_storeys_they_overlap(report):
    assert [n for n, _ in _floor_steel(report, "ground")] == ["ceiling plate", "beam"]
    assert _floor_steel(report, "first") == []


def test_section_shows_the_parts_it_cuts(report):
    sec = SimpleNamespace(origin_m=np.array([5.0, 4.0, 1.1]), unit=np.array([1.0, 0.0, 0.0]),
                          s_m=np.linspace(-7.0, 7.0, 141))
    ovs = _section_steel(report, sec)
    assert [o.name for o in ovs] == ["ceiling plate"]  # the beam lies north of the plane
    assert ovs[0].kind == "steel" and ovs[0].label == STEEL_LABEL
    s0, z0, s1, z1 = ovs[0].geometry.bounds
    assert (s0, s1, z0, z1) == pytest.approx((-3.0, 3.0, 3.595, 3.605))


def test_plan_sheet_draws_names_and_one_legend_entry(report):
    x = np.linspace(-2.0, 12.0, 71)
    y = np.linspace(-2.0, 12.0, 71)
    X, Y = np.meshgrid(x, y)
    f = 1e-3 / (1.0 + (X - 5.0) ** 2 + (Y - 4.0) ** 2)
    ovs = [d.Overlay(STEEL_LABEL, g, "steel", n) for n, g in _floor_steel(report, "ground")]
    fig = d.plan_sheet(x, y, f, d.SheetInfo(site_name="S", title="T"), overlays=ovs)
    legend = [t.get_text() for leg in fig.findobj(
        lambda a: a.__class__.__name__ == "Legend") for t in leg.get_texts()]
    assert sum(STEEL_LABEL in t.replace("\n", " ") for t in legend) == 1
    names = {a.get_text() for a in fig.findobj(Annotation)}
    assert {"ceiling plate", "beam"} <= names
