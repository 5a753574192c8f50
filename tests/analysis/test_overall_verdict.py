"""The closing verdict line and the exit code of ``fringe report`` always agree.

Every combination of room / equipment / floor exceeding or not, on hand-built
ReportResult-like inputs (rules: docs/zones.md; common practice, no source).
"""

from __future__ import annotations

import itertools
import re
from types import SimpleNamespace

import pytest

from fringe.analysis.overall import overall_verdict
from fringe.analysis.verdicts import EquipmentCheck, RoomCheck
from fringe.cli.report import EXIT_EXCEEDS, EXIT_OK, closing_verdict
from fringe.model.building import Boundary
from fringe.model.verdict import Verdict


def _room(name, exceeds):
    v = Verdict.EXCEEDS if exceeds else Verdict.WITHIN
    return RoomCheck(name, "ground", "open", 0.7e-3 if exceeds else 0.2e-3, (0.0, 0.0),
                     0.5e-3, "boundary", v, ())


def _equip(name, exceeds):
    v = Verdict.EXCEEDS if exceeds else Verdict.WITHIN
    return EquipmentCheck(name, (0.0, 0.0, 1.0), "ground", 0.2e-3 if exceeds else 0.05e-3,
                          0.1e-3, v)


class _Result(SimpleNamespace):
    def floor_verdict(self, floor):
        return self.floor_verdicts[floor]

    def overall(self):
        return overall_verdict(self)


def _result(room_ex, equip_ex, floor_ex):
    return _Result(
        rooms=(_room("office", room_ex), _room("scan room", False)),
        equipment=(_equip("CT gantry", equip_ex),),
        floor_maps={"ground": None, "first": None},
        floor_verdicts={"ground": Verdict.EXCEEDS if floor_ex else Verdict.WITHIN,
                        "first": Verdict.WITHIN},
        boundary=Boundary(0.5, "test"))


@pytest.mark.parametrize("room_ex,equip_ex,floor_ex",
                         list(itertools.product([False, True], repeat=3)))
@pytest.mark.parametrize("fail", [True, False])
def test_line_and_exit_code_agree(room_ex, equip_ex, floor_ex, fail):
    r = _result(room_ex, equip_ex, floor_ex)
    line, code = closing_verdict(r, fail=fail)
    n = room_ex + equip_ex + floor_ex
    assert line.startswith("verdict: ")
    if n == 0:
        assert line == ("verdict: nothing exceeds its limit "
                        "(2 rooms, 1 equipment, 2 floors checked)")
        assert code == EXIT_OK
    else:
        m = re.match(r"verdict: (\d+) items? exceeds?: ", line)
        assert m and int(m.group(1)) == n
        assert ("1 room (office: " in line) == room_ex
        assert ("1 equipment (CT gantry: " in line) == equip_ex
        assert ("1 floor (ground: 0.5 mT line outside the controlled rooms)" in line) \
            == floor_ex
        assert "scan room" not in line and "first" not in line
        assert code == (EXIT_EXCEEDS if fail else EXIT_OK)
    assert overall_verdict(r).exceeds == (n > 0)


def test_counts_pluralise():
    r = _Result(rooms=(_room("a", True), _room("b", True)), equipment=(),
                floor_maps={"ground": None}, floor_verdicts={"ground": Verdict.EXCEEDS},
                boundary=Boundary(0.5, "test"))
    line, code = closing_verdict(r)
    assert line.startswith("verdict: 3 items exceed: 2 rooms (a: max 0.7 mT")
    assert line.endswith("1 floor (ground: 0.5 mT line outside the controlled rooms)")
    assert code == EXIT_EXCEEDS
    empty = _Result(rooms=(), equipment=(), floor_maps={"ground": None},
                    floor_verdicts={"ground": Verdict.WITHIN}, boundary=Boundary(0.5, "t"))
    assert closing_verdict(empty) == (
        "verdict: nothing exceeds its limit (0 rooms, 0 equipment, 1 floor checked)", EXIT_OK)


def test_summary_counts_agree_with_the_closing_line(demo_site):
    # the counts in summary.json are the closing line's: rooms, equipment and floors
    from fringe.analysis.report import compute_report
    from fringe.io.report_files import summary_dict

    r = compute_report(demo_site)
    s = summary_dict(r)
    v = r.overall()
    n_items = len(r.rooms) + len(r.equipment) + len(r.floor_maps) + sum(
        c.verdict is not None for c in r.moving_steel)  # moving steel with a limit
    assert sum(s["verdict_counts"].values()) == n_items
    assert [c.verdict for c in r.moving_steel] == ["within"]  # the demo's lift
    assert s["verdict_counts"].get("exceeds", 0) == len(v.items) == 2  # plant room, basement
    assert f"{len(v.items)} items exceed" in v.line()
