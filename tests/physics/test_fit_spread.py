"""The spread of a data-sheet fit (fringe.physics.fit_spread): family members that meet
the same numbers within the data sheet's rounding.

The data sheet is the demo magnet's own 0.5 mT line (3.90 m × 2.12 m, written rounded
to 3.9 m × 2.1 m: ±0.05 m), 1.5 T (±0.05 T), shielded, 0.6 m warm bore.
"""

from __future__ import annotations

import pytest

from fringe.field.extents import threshold_extents_m
from fringe.model.magnet import DataSheet
from fringe.physics.families import FAMILIES
from fringe.physics.fit import fit_magnet, series_extents_m
from fringe.physics.fit_spread import spread_models

LINES = ((5e-4, 3.9, 2.1),)
TOLS = ((0.05, 0.05),)


@pytest.fixture(scope="module")
def sheet():
    res = fit_magnet(1.5, LINES, shielded=True, bore_m=0.6)
    shape = FAMILIES[res.family].fit
    return DataSheet(1.5, 0.05, True, 0.6, LINES, TOLS, res.family,
                     tuple(res.parameters[k] for k in shape.parameters), res.a_min_m)


@pytest.fixture(scope="module")
def models(sheet):
    return spread_models(sheet)


def test_every_model_meets_the_data_sheet_within_its_rounding(sheet, models):
    # the definition of the spread; checked with the direct-field extents (an independent
    # route from the zonal series the search used), allowing 2 mm for the two routes'
    # difference (series truncation ~1e-4 relative; common practice, no source)
    assert len(models) >= 5
    for m in models:
        ax, rad = threshold_extents_m(m.magnet, 5e-4)
        assert abs(ax - 3.9) <= 0.05 + 2e-3 and abs(rad - 2.1) <= 0.05 + 2e-3
        assert abs(m.center_field_T - 1.5) <= 0.05 + 1e-12 and m.worst <= 1.0


def test_the_best_fit_comes_first_and_no_model_repeats(sheet, models):
    assert models[0].parameters == pytest.approx(sheet.parameters, rel=1e-9)
    keys = {(m.parameters, m.center_field_T) for m in models}
    assert len(keys) == len(models)


def test_one_line_leaves_the_far_line_open(models):
    # one line fixes about two numbers of the far field (docs/fit.md): the 0.1 mT line,
    # far outside it, is not fixed; across the axis it spreads by more than a metre while
    # the 0.5 mT line itself stays within its rounding (measured 2.23–4.49 m; a
    # structural check of the search, common practice, no source)
    ext = [series_extents_m(m.magnet, [1e-4, 5e-4]) for m in models]
    rad01 = [e[0, 1] for e in ext]
    rad05 = [e[1, 1] for e in ext]
    assert max(rad01) - min(rad01) > 1.0
    assert max(rad05) - min(rad05) <= 0.1 + 4e-3


def test_the_spread_reaches_the_demo_magnets_own_far_line(models):
    # the demo magnet (whose 0.5 mT line the sheet rounds) has its 0.1 mT line at 5.25 m
    # along and 3.83 m across the axis (fringe/data/demo_site.toml; computed by
    # threshold_extents_m in docs/fit.md); the best fit alone has 2.30 m across: the
    # spread must reach past the truth (measured 2.23–4.49 m across, 5.12–5.96 m along)
    ext = [series_extents_m(m.magnet, [1e-4])[0] for m in models]
    assert min(e[1] for e in ext) < 3.83 < max(e[1] for e in ext)
    assert min(e[0] for e in ext) < 5.25 < max(e[0] for e in ext)


def test_cached_per_data_sheet(sheet, models):
    assert spread_models(sheet) is models
