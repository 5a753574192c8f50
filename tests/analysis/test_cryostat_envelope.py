"""The cryostat envelope: model default, scenario key, exclusion from maxima, drawing,
and fields of 1 T and above printed in T."""

from __future__ import annotations

import math

import numpy as np
import pytest

from fringe import ScenarioError, load_site
from fringe.field.evaluate import points_in_envelopes, points_in_windings
from fringe.model.magnet import (
    ENVELOPE_MARGIN_INNER_M,
    ENVELOPE_MARGIN_OUTER_M,
    Coil,
    Envelope,
    Magnet,
    default_envelope,
)

MAGNET = """
[[magnet]]
name = "bench"
center_m = [0.0, 0.0, 1.0]
axis = [1, 0, 0]
[[magnet.coil]]
r_inner_m = 0.45
r_outer_m = 0.50
z_min_m = -0.30
z_max_m = 0.30
turns = 1200
current_A = 400.0
"""


def write(tmp_path, text, name="s.toml"):
    p = tmp_path / name
    p.write_text(text, encoding="utf-8")
    return p


def test_default_envelope_is_the_windings_annulus_grown_by_the_stated_margins():
    """Margins: common practice, no source (named constants in fringe.model.magnet)."""
    coils = (Coil(0.45, 0.50, -0.3, 0.3, 100, 10.0), Coil(0.9, 0.95, 0.1, 0.4, 50, -10.0))
    e = default_envelope(coils)
    assert e.r_inner_m == pytest.approx(0.45 - ENVELOPE_MARGIN_INNER_M)
    assert e.r_outer_m == pytest.approx(0.95 + ENVELOPE_MARGIN_OUTER_M)
    assert (e.z_min_m, e.z_max_m) == pytest.approx((-0.4, 0.5))
    m = Magnet("m", (0, 0, 0), (0, 0, 1), coils)
    assert m.envelope == e and m.cryostat is None
    # a small laboratory bore stays open (at most half the inner winding radius)
    lab = default_envelope((Coil(0.05, 0.09, -0.1, 0.1, 10, 1.0),))
    assert lab.r_inner_m == pytest.approx(0.025)
    # windings on the axis: no bore, never a negative radius
    assert default_envelope((Coil(0.0, 0.1, -0.1, 0.1, 10, 1.0),)).r_inner_m == 0.0


def test_given_envelope_is_kept_and_must_hold_the_windings():
    c = Coil(0.45, 0.50, -0.3, 0.3, 100, 10.0)
    env = Envelope(0.3, 0.8, -0.5, 0.5)
    m = Magnet("m", (0, 0, 0), (0, 0, 1), (c,), cryostat=env)
    assert m.envelope is env
    assert m.moved(center_m=(1, 2, 3)).envelope is env and m.scaled(2.0).envelope is env
    with pytest.raises(ValueError, match="contain every winding"):
        Magnet("m", (0, 0, 0), (0, 0, 1), (c,), cryostat=Envelope(0.3, 0.48, -0.5, 0.5))
    with pytest.raises(ValueError):
        Envelope(0.5, 0.4, 0, 1)
    with pytest.raises(ValueError):
        Envelope(0.1, 0.4, 1, 1)
    with pytest.raises(ValueError):
        Envelope(-0.1, 0.4, 0, 1)
    with pytest.raises(ValueError):
        Envelope(0.1, math.inf, 0, 1)


def test_points_in_envelopes_leaves_the_bore_and_the_ends_open():
    m = Magnet("m", (1.0, 2.0, 3.0), (1, 0, 0), (Coil(0.45, 0.50, -0.3, 0.3, 100, 10.0),),
               cryostat=Envelope(0.3, 0.8, -0.5, 0.5))
    local = np.array([[0.0, 0.0, 0.0],     # centre of the bore: open
                      [0.29, 0.0, 0.4],    # in the bore near the wall: open
                      [0.31, 0.0, 0.4],    # inside the cryostat, not in a winding
                      [0.0, 0.47, 0.0],    # in the winding
                      [0.0, 0.6, 0.51],    # beyond the end: open
                      [0.81, 0.0, 0.0]])   # outside: open
    pts = m.to_site(local)
    assert points_in_envelopes(m, pts).tolist() == [False, False, True, True, False, False]
    assert points_in_windings(m, pts).tolist() == [False, False, False, True, False, False]


def test_scenario_envelope_table_parsed_and_checked(tmp_path):
    good = MAGNET + """
[magnet.envelope]
r_inner_m = 0.35
r_outer_m = 0.70
z_min_m = -0.45
z_max_m = 0.45
"""
    m = load_site(write(tmp_path, good)).magnets[0]
    assert m.envelope == Envelope(0.35, 0.70, -0.45, 0.45)
    assert load_site(write(tmp_path, MAGNET, "d.toml")).magnets[0].cryostat is None
    bad = {"r_inner_m = 0.35": ("r_inner_m = 0.46", "magnet[0].envelope.r_inner_m"),
           "r_outer_m = 0.70": ("r_outer_m = 0.49", "magnet[0].envelope.r_outer_m"),
           "z_min_m = -0.45": ("z_min_m = -0.2", "magnet[0].envelope.z_min_m"),
           "z_max_m = 0.45\n": ("z_max_m = 0.25\n", "magnet[0].envelope.z_max_m"),
           "r_outer_m = 0.70\n": ("r_outer_m = 0.70\nradius_m = 1\n",
                                  "magnet[0].envelope.radius_m"),
           "r_inner_m = 0.35\n": ("r_inner_m = nan\n", "magnet[0].envelope.r_inner_m")}
    env_part = good[len(MAGNET):]
    for old, (new, key) in bad.items():
        text = MAGNET + env_part.replace(old, new, 1)
        with pytest.raises(ScenarioError, match=key.replace(".", r"\.").replace("[", r"\[")):
            load_site(write(tmp_path, text, "bad.toml"))


def test_demo_magnet_room_maximum_is_what_a_person_meets_in_the_bore():
    """The demo's 1.5 T magnet: the room maximum is a bore field of about 1.9 T, not the
    winding-surface peak of about 3.1 T (field engine: Jackson Sec. 5.5 loops summed; the
    bore value is what a person meets, common practice, no source)."""
    from fringe.analysis.zones import occupied_field_T
    from fringe.cli.demo import demo_scenario_path

    site = load_site(demo_scenario_path())
    m = site.magnets[0]
    rho = np.linspace(0.0, 0.6, 61)
    z = np.linspace(-1.2, 1.2, 121)
    R, Z = np.meshgrid(rho, z)
    pts = m.to_site(np.column_stack([R.ravel(), 0 * R.ravel(), Z.ravel()]))
    b = occupied_field_T(site, pts)
    assert 1.5 <= np.nanmax(b) <= 2.1
    assert np.isnan(b[points_in_envelopes(site, pts)]).all()


def test_format_field_prints_tesla_from_one_tesla():
    from fringe.render.sheet import format_field

    assert format_field(1.86) == "1.86 T"
    assert format_field(3.109, 4) == "3.109 T"
    assert format_field(0.2296, 4) == "229.6 mT"
    assert format_field(5e-4) == "0.5 mT"


def test_section_and_plan_outlines_of_the_envelope():
    from types import SimpleNamespace

    from fringe.analysis.geometry import (
        envelope_plan_outline,
        magnet_plan_outline,
        section_envelope,
    )

    m = Magnet("m", (0.0, 0.0, 1.0), (1, 0, 0), (Coil(0.45, 0.50, -0.3, 0.3, 100, 10.0),),
               cryostat=Envelope(0.3, 0.8, -0.5, 0.5))
    plan = envelope_plan_outline(m)
    assert plan.contains(magnet_plan_outline(m))
    assert plan.area == pytest.approx(1.0 * 1.6)
    along = section_envelope(m, SimpleNamespace(unit=np.array([1.0, 0.0])))
    # two rectangles 1.0 m long and 0.5 m high, the bore between them open
    assert along.area == pytest.approx(2 * 1.0 * 0.5, rel=0.05)
    assert not along.contains(__import__("shapely").Point(0.0, 1.0))
    across = section_envelope(m, SimpleNamespace(unit=np.array([0.0, 1.0])))
    assert across.area == pytest.approx(math.pi * (0.8**2 - 0.3**2), rel=0.05)


def test_a_bore_too_narrow_for_a_person_counts_as_closed():
    # common practice, no source: a whole-body bore (0.62 m) is where a patient lies; a
    # laboratory NMR bore (54 mm) takes a sample or a hand but nobody stands in it
    from fringe.model.magnet import OPEN_BORE_MIN_DIAMETER_M, Envelope

    wide = Envelope(0.31, 1.06, -0.85, 0.85)
    narrow = Envelope(0.027, 0.40, -0.45, 0.45)
    assert wide.bore_open and not narrow.bore_open
    assert 2 * 0.31 >= OPEN_BORE_MIN_DIAMETER_M > 2 * 0.027
    assert not wide.contains_local(np.array([0.0]), np.array([0.0]))[0]
    assert narrow.contains_local(np.array([0.0]), np.array([0.0]))[0]
    assert narrow.closed_inner_radius_m == 0.0 and wide.closed_inner_radius_m == 0.31


def test_shipped_lab_scenario_reports_no_field_inside_a_narrow_bore():
    # issue 15: harbour-lab printed the 9.4 T of its NMR magnet's 54 mm bore as the room
    # maximum; the room maximum must now be a field a person can meet, well below it
    from pathlib import Path

    from fringe.analysis.report import compute_report
    from fringe.io.scenario import load_site

    site = load_site(Path(__file__).resolve().parents[2] / "scenarios" / "harbour-lab.toml")
    r = compute_report(site)
    lab = next(c for c in r.rooms if c.name == "magnet lab")
    centre = max(m.center_field_T for m in r.magnets)
    assert centre > 9.0 and lab.max_field_T < 0.25 * centre
