"""The report's terminal summary (fringe.cli.report.terminal_summary) on the demo site."""

from __future__ import annotations

import pytest


@pytest.fixture(scope="module")
def demo_summary(demo_site):
    from fringe.analysis.report import compute_report
    from fringe.cli.report import terminal_summary

    r = compute_report(demo_site)
    return r, terminal_summary(r, "out")


def test_quench_line_gives_both_oxygen_figures(demo_summary):
    # issue 15: the milder well-mixed figure is not shown alone; the harsher displacement
    # estimate stands beside it (docs/quench.md)
    r, text = demo_summary
    (b,) = r.quench
    line = next(x for x in text.splitlines() if x.startswith("quench "))
    assert f"{100 * b.oxygen_fraction_worst_case:.2g} % well mixed" in line
    assert f"{100 * b.oxygen_fraction_worst_case_displacement:.2g} % by displacement" in line
    assert b.oxygen_fraction_worst_case_displacement <= b.oxygen_fraction_worst_case
