"""Progress lines (fringe.cli.progress.Progress): one line per stage.

Common practice, no source: a counted stage prints once in a log, and redraws one live
line on a terminal.
"""

from __future__ import annotations

import io

from fringe.cli.progress import Progress


class _Terminal(io.StringIO):
    def isatty(self) -> bool:
        return True


def _steps(p: Progress) -> None:
    p("loaded site.toml")
    for i in range(1, 10):
        p(f"floor 'basement': level {i}/9 (z = {-3.5 + 0.25 * i:.2f} m)")
    p("attraction zone done")


def test_a_counted_stage_takes_one_line_in_a_log():
    s = io.StringIO()
    _steps(Progress(stream=s))
    lines = s.getvalue().splitlines()
    assert len(lines) == 3
    assert "level 9/9" in lines[1] and "loaded" in lines[0] and "attraction" in lines[2]


def test_a_counted_stage_redraws_one_live_line_on_a_terminal():
    s = _Terminal()
    _steps(Progress(stream=s))
    out = s.getvalue()
    assert out.count("\r") == 9 and out.count("\n") == 3
    assert out.splitlines()[-1].endswith("attraction zone done")


def test_an_interrupted_stage_closes_its_live_line():
    s = _Terminal()
    p = Progress(stream=s)
    p("floor 'ground': level 1/10 (z = 0.00 m)")
    p("stopped early")
    assert s.getvalue().endswith("stopped early\n") and "\n[" in s.getvalue()
    q = io.StringIO()
    Progress(stream=q, quiet=True)("anything 1/2")
    assert q.getvalue() == ""
