"""write_report's ``formats``: checked, ordered, and mapped to the single-sheet files."""

from __future__ import annotations

import pytest

from fringe.model.errors import ArgumentError
from fringe.render.report import _checked_formats, _sheet_files


def test_formats_are_checked_and_ordered():
    assert _checked_formats(("svg", "pdf")) == ("pdf", "svg")
    assert _checked_formats("png") == ("png",)
    for bad in ((), ("png", "bmp")):
        with pytest.raises(ArgumentError, match="`formats` must be one or more of pdf"):
            _checked_formats(bad)


def test_single_files_follow_the_formats_and_energy_maps_stay_raster():
    sheets = [(None, "cover"), ("plan-a", "p"), ("energy-plan-m", "e")]
    assert _sheet_files(sheets, ("pdf",)) == []
    assert _sheet_files(sheets, ("png", "svg")) == [
        ("plan-a.png", "p"), ("plan-a.svg", "p"), ("energy-plan-m.png", "e")]
    assert _sheet_files(sheets, ("svg",)) == [("plan-a.svg", "p")]
