"""The demo's ceiling plate (issue 17, "Done when"; commented out in the shipped demo, see
docs/steel.md): with it, the first floor's footprints shrink.

The demo's 0.5 mT line does not reach the first floor even without the plate (its largest
field there is about 0.36 mT), so the footprint that visibly shrinks on the first floor's
sheet is the 0.1 mT one (the office workstation's limit); the boundary footprint on a floor
above a magnet is checked in tests/analysis/test_steel_site.py (the shield sweep).
A high-permeability plate parallel to the field draws the flux into itself and lowers the
field behind it (physics of flux shunting; common practice, no source).
"""

from __future__ import annotations

from dataclasses import replace

import numpy as np
import pytest

from fringe.analysis.steel import with_solved_steel
from fringe.analysis.zones import floor_map, footprints, plan_axes_m
from fringe.model.site import site_plan
from fringe.model.steel import MATERIALS, SteelPart


def plate_from_the_demo_file(demo_file) -> SteelPart:
    """The `[[steel]]` table commented out in the demo scenario, read from its text."""
    import tomllib

    text = demo_file.read_text(encoding="utf-8")
    start = text.index("# [[steel]]")
    block = "\n".join(line[2:] for line in text[start:].splitlines()[:5])
    t = tomllib.loads(block)["steel"][0]
    return SteelPart(t["name"], tuple(t["center_m"]), tuple(t["size_m"]),
                     MATERIALS[t["material"]])


@pytest.fixture(scope="module")
def plated_demo(demo_site):
    from pathlib import Path

    return replace(demo_site, steel=(plate_from_the_demo_file(Path(demo_site.source_file)),))


@pytest.fixture(scope="module")
def first_floor(plated_demo):
    demo_site = plated_demo
    plan = site_plan(demo_site)
    fl = plan.floor("first")
    x, y = plan_axes_m(((-6.0, 0.0), (20.0, 10.0)), 0.4)
    thr_mT = [0.1, plan.settings.boundary.value_mT]

    def maps(site):
        fm = floor_map(site, fl, np.asarray(x), np.asarray(y), plan.settings.band_step_m,
                       [t * 1e-3 for t in thr_mT])
        return fm, {fp.threshold_mT: fp.area_m2 for fp in footprints(fm, thr_mT)}

    solved, parts = with_solved_steel(demo_site)
    return maps(replace(demo_site, steel=())), maps(solved), parts, thr_mT


def test_demo_has_a_ceiling_plate_over_the_magnet(plated_demo):
    demo_site = plated_demo
    (plate,) = [p for p in demo_site.steel if p.name == "ceiling plate"]
    m = demo_site.magnets[0]
    assert plate.center_m[:2] == m.center_m[:2]
    ground, first = demo_site.floors[1], demo_site.floors[2]
    assert ground.elevation_m < plate.center_m[2] < first.elevation_m  # under the slab


def test_first_floor_footprints_shrink_with_the_plate(first_floor):
    (fm_free, free), (fm_steel, steel), parts, (low, boundary) = first_floor
    assert free[low] > 1.0  # without the plate the 0.1 mT line reaches the first floor
    assert steel[low] < free[low]
    assert steel[boundary] <= free[boundary]
    assert float(np.max(fm_steel.envelope_T)) < float(np.max(fm_free.envelope_T))
    assert parts and parts[0].name == "ceiling plate"
