"""Static-field exposure limits registry (ICNIRP 2009)."""

from __future__ import annotations

import pytest

from fringe.model.errors import FringeInputError
from fringe.physics.exposure import (
    EXPOSURE_LIMITS,
    ICNIRP_2009_SOURCE,
    exposure_label,
    exposure_limit,
    exposure_limits,
)


def test_icnirp_2009_values():
    # source: ICNIRP 2009, Health Phys. 96(4):504-514, Table 1 — general public 400 mT;
    # occupational head and trunk 2 T; occupational limbs 8 T.
    values = {k: v.field_T for k, v in EXPOSURE_LIMITS.items()}
    assert values == {"icnirp-2009-public": 0.4, "icnirp-2009-occupational-head-trunk": 2.0,
                      "icnirp-2009-occupational-limbs": 8.0}
    assert all(v.source == ICNIRP_2009_SOURCE for v in EXPOSURE_LIMITS.values())
    assert "Table 1" in ICNIRP_2009_SOURCE and "504" in ICNIRP_2009_SOURCE


def test_selection_order_and_labels():
    lims = exposure_limits(max_field_T=3.0)  # a 1.5 T magnet's sheet tops out near 2-3 T
    assert [x.name for x in lims] == ["icnirp-2009-public", "icnirp-2009-occupational-head-trunk"]
    picked = exposure_limits(["icnirp-2009-occupational-limbs", "icnirp-2009-public"])
    assert [x.field_T for x in picked] == [0.4, 8.0]
    assert exposure_label(exposure_limit("icnirp-2009-public")).startswith("400 mT exposure limit")
    assert exposure_limit("icnirp-2009-public").field_mT == pytest.approx(400.0)
    assert [x.line_label for x in exposure_limits()] == [
        "400 mT: general public (ICNIRP 2009)", "2 T: occupational, head and trunk (ICNIRP 2009)",
        "8 T: occupational, limbs (ICNIRP 2009)"]


def test_unknown_limit_names_the_choices():
    with pytest.raises(FringeInputError, match="must be one of 'icnirp-2009-public'"):
        exposure_limit("icnirp-1994")
