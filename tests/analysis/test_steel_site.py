"""Steel wired into a site (issue 17, items 3–5): solved once, counted by every map, sized
by a shield sweep, drawn where it stands."""

from __future__ import annotations

import math
from dataclasses import replace
from types import SimpleNamespace

import numpy as np
import pytest
import shapely

from fringe.analysis.steel import (
    force_exceeds_weight,
    shield_sweep,
    spill_area_m2,
    steel_notes,
    steel_on_floor,
    steel_plan_outline,
    steel_section_cut,
    thinnest_axis,
    with_solved_steel,
    with_thickness,
)
from fringe.io.scenario import load_site
from fringe.model.building import Floor
from fringe.model.constants import STANDARD_GRAVITY_M_PER_S2
from fringe.model.errors import ArgumentError
from fringe.model.steel import MATERIALS, SteelPart

#: An invented horizontal-bore solenoid (≈ 3·10⁴ A·m²) 1 m above the ground floor, whose
#: 0.5 mT line reaches the floor above (at 2 m); a controlled room holds the ground floor's
#: footprint, so only the floor above spills. A 3 m × 3 m plate lies under that floor.
SHIELD_TOML = """\
[site]
name = "shield test site (invented)"

[[magnet]]
name = "m1"
center_m = [0.0, 0.0, 1.0]
axis = [1, 0, 0]
  [[magnet.coil]]
  r_inner_m = 0.30
  r_outer_m = 0.32
  z_min_m = -0.20
  z_max_m = 0.20
  turns = 1000
  current_A = 100.0

[plan]
grid_step_m = 0.2
extent_m = [[-4.0, -4.0], [4.0, 4.0]]

[[floor]]
name = "ground"
elevation_m = 0.0

[[floor]]
name = "upper"
elevation_m = 2.0

[[room]]
name = "magnet room"
floor = "ground"
access = "controlled"
outline_m = [[-4.0, -4.0], [4.0, -4.0], [4.0, 4.0], [-4.0, 4.0]]

[[steel]]
name = "plate"
center_m = [0.0, 0.0, 1.9]
size_m = [3.0, 3.0, 0.005]
"""


#: Mesh tolerance of the solves here: coarse meshes keep the tests quick; the claims tested
#: (spill order, masses, wiring) do not depend on the last per cent of the induced field.
COARSE = 0.2


@pytest.fixture(scope="module")
def shield_site(tmp_path_factory):
    p = tmp_path_factory.mktemp("shield") / "shield.toml"
    p.write_text(SHIELD_TOML, encoding="utf-8")
    return load_site(p)


def _part(**kw) -> SteelPart:
    base = {"name": "p", "center_m": (0.0, 0.0, 3.0), "size_m": (2.0, 1.0, 0.01),
            "material": MATERIALS["low-carbon-steel"]}
    base.update(kw)
    return SteelPart(**base)


# -- solved once, counted everywhere --------------------------------------------------------

def test_site_without_steel_is_returned_unchanged(shield_site):
    free = replace(shield_site, steel=())
    site, parts = with_solved_steel(free)
    assert site is free and parts == ()


def test_solved_site_carries_its_induced_field_and_parts(shield_site):
    from fringe.field.evaluate import field_at

    site, parts = with_solved_steel(shield_site, tolerance=COARSE)
    assert site.induced is not None and len(parts) == 1 and parts[0].name == "plate"
    again, parts2 = with_solved_steel(site)  # already solved: not solved again
    assert again is site and parts2 == parts
    # above the plate the field with steel differs from free space; the magnets alone
    # (a magnet passed, not the site) stay free space
    p = np.array([[0.0, 0.0, 2.5]])
    b_site = field_at(site, p)
    b_free = field_at(site.magnets, p)
    assert not np.allclose(b_site, b_free, rtol=1e-3)
    assert np.array_equal(b_free, field_at(shield_site, p))  # unsolved site: free space


# -- shield sweep -----------------------------------------------------------------------------

def test_shield_sweep_spill_does_not_grow_and_masses_are_density_times_volume(shield_site):
    opts = shield_sweep(shield_site, "plate", [1, 5, 20], tolerance=COARSE)
    assert [o.thickness_mm for o in opts] == [1.0, 5.0, 20.0]
    free = sum(spill_area_m2(replace(shield_site, steel=())).values())
    assert free > 1.0  # the 0.5 mT line does reach the floor above without the plate
    spills = [o.spill_area_m2 for o in opts]
    # a thicker high-permeability plate shunts more flux (physics of flux shunting;
    # common practice, no source): the spill never grows as the plate thickens,
    # and a plate never makes it worse than free space (grid round-off allowed)
    tol = 2 * 0.2 ** 2
    assert all(b <= a + tol for a, b in zip(spills, spills[1:], strict=False))
    assert spills[-1] <= free + tol and spills[-1] < free
    rho = MATERIALS["low-carbon-steel"].density_kg_per_m3
    for o in opts:  # mass = density × volume (definition)
        assert o.mass_kg == pytest.approx(rho * 3.0 * 3.0 * o.thickness_mm * 1e-3, rel=1e-12)
        assert o.max_field_in_steel_T > 0


def test_shield_sweep_refuses_unknown_part_and_bad_thickness(shield_site):
    with pytest.raises(ArgumentError) as e:
        shield_sweep(shield_site, "wall", [5])
    assert e.value.argument == "steel" and "'plate'" in str(e.value) and "'wall'" in str(e.value)
    with pytest.raises(ArgumentError) as e:
        shield_sweep(shield_site, "plate", [0.0])
    assert e.value.argument == "thicknesses_mm"


def test_thinnest_edge_is_the_one_replaced():
    assert thinnest_axis(_part()) == 2
    assert thinnest_axis(_part(size_m=(0.2, 4.0, 3.0))) == 0  # a wall plate along y
    assert thinnest_axis(_part(size_m=(1.0, 1.0, 1.0))) == 2  # a tie goes to z
    w = with_thickness(_part(size_m=(0.2, 4.0, 3.0)), 0.05)
    assert w.size_m == (0.05, 4.0, 3.0) and w.center_m == (0.0, 0.0, 3.0)


# -- notes -------------------------------------------------------------------------------------

def test_force_above_weight_warns_and_saturation_is_noted():
    w = 100.0 * STANDARD_GRAVITY_M_PER_S2  # weight m·g, g standard gravity (CGPM 1901)
    light = SimpleNamespace(name="a", mass_kg=100.0, max_field_in_steel_T=0.5, saturated=False,
                            force_N=(0.0, 0.6 * w, 0.8 * w * 0.99))
    heavy = SimpleNamespace(name="b", mass_kg=100.0, max_field_in_steel_T=2.1, saturated=True,
                            force_N=(0.0, 0.6 * w, 0.8 * w * 1.02))
    assert not force_exceeds_weight(light) and force_exceeds_weight(heavy)
    assert steel_notes([light]) == []
    notes = steel_notes([heavy])
    assert len(notes) == 2 and "WARNING" in notes[0] and "'b'" in notes[0]
    assert "saturates" in notes[1]


# -- where parts are drawn -----------------------------------------------------------------

def test_plan_outline_is_the_turned_rectangle():
    p = _part(center_m=(1.0, 2.0, 3.0), size_m=(2.0, 1.0, 0.01), yaw_deg=90.0)
    g = steel_plan_outline(p)
    assert g.area == pytest.approx(2.0)  # x size × y size
    x0, y0, x1, y1 = g.bounds  # turned 90°: 1 m along x, 2 m along y
    assert (x1 - x0, y1 - y0) == (pytest.approx(1.0), pytest.approx(2.0))
    assert g.centroid.x == pytest.approx(1.0) and g.centroid.y == pytest.approx(2.0)


def test_part_is_drawn_on_the_storeys_it_overlaps():
    floors = (Floor("basement", -3.5), Floor("ground", 0.0), Floor("first", 4.0))
    ceiling = _part(center_m=(0.0, 0.0, 3.6))
    column = _part(center_m=(0.0, 0.0, 2.0), size_m=(0.3, 0.3, 7.0))  # -1.5 … 5.5 m
    assert [steel_on_floor(ceiling, floors, f.name) for f in floors] == [False, True, False]
    assert [steel_on_floor(column, floors, f.name) for f in floors] == [True, True, True]
    deep = _part(center_m=(0.0, 0.0, -9.0))  # below the lowest floor: the lowest storey
    assert steel_on_floor(deep, floors, "basement")


def test_section_cut_of_a_plate():
    p = _part(center_m=(5.0, 4.0, 3.6), size_m=(6.0, 5.0, 0.01))
    cut = steel_section_cut(p, (5.0, 4.0, 1.1), (1.0, 0.0, 0.0), (-10.0, 10.0))
    assert isinstance(cut, shapely.Polygon)
    s0, z0, s1, z1 = cut.bounds
    assert (s0, s1) == (pytest.approx(-3.0), pytest.approx(3.0))
    assert (z0, z1) == (pytest.approx(3.595), pytest.approx(3.605))
    across = steel_section_cut(p, (5.0, 4.0, 1.1), (0.0, 1.0, 0.0), (-10.0, 10.0))
    assert across.bounds[0] == pytest.approx(-2.5) and across.bounds[2] == pytest.approx(2.5)
    assert steel_section_cut(p, (5.0, 40.0, 1.1), (1.0, 0.0, 0.0), (-10.0, 10.0)) is None
    assert math.isclose(cut.area, 6.0 * 0.01)


def test_points_inside_steel_are_not_occupied():
    from fringe.analysis.zones import points_in_steel

    plate = _part(center_m=(1.0, 2.0, 0.0), size_m=(2.0, 1.0, 0.02), yaw_deg=90.0)
    site = SimpleNamespace(steel=(plate,))
    pts = np.array([[1.0, 2.0, 0.0],     # centre
                    [1.4, 2.9, 0.009],   # inside once turned (1 m along x, 2 m along y)
                    [1.9, 2.0, 0.0],     # inside before turning, outside after
                    [1.0, 2.0, 0.02]])   # above it
    assert points_in_steel(site, pts).tolist() == [True, True, False, False]
    assert not points_in_steel((), pts).any()  # magnets alone: no steel
