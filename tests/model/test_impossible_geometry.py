"""Impossible geometry: intersecting magnets refused, overlapping coils of one magnet
warned (fringe.model.overlap, checked when a scenario is loaded)."""

from __future__ import annotations

import numpy as np
import pytest
from scipy.spatial import cKDTree

from fringe import ScenarioError, load_site
from fringe.cli.main import main
from fringe.model.errors import FringeWarning
from fringe.model.magnet import Coil, Envelope, Magnet
from fringe.model.overlap import (
    OVERLAP_TOLERANCE_M,
    envelope_surface_points,
    intersecting_magnets,
    magnets_intersect,
    overlapping_coils,
)

COIL = """
[[magnet.coil]]
r_inner_m = 0.45
r_outer_m = 0.50
z_min_m = -0.30
z_max_m = 0.30
turns = 1200
current_A = 400.0
"""


def two_magnets(c2, axis2):
    return f"""
[[magnet]]
name = "east"
center_m = [0.0, 0.0, 1.0]
axis = [1, 0, 0]
{COIL}
[[magnet]]
name = "north"
center_m = [{c2[0]}, {c2[1]}, {c2[2]}]
axis = [{axis2[0]}, {axis2[1]}, {axis2[2]}]
{COIL}
"""


def write(tmp_path, text, name="s.toml"):
    p = tmp_path / name
    p.write_text(text, encoding="utf-8")
    return p


def _magnet(center, axis, env=None):
    return Magnet("m", center, axis, (Coil(0.45, 0.50, -0.3, 0.3, 100, 1.0),), cryostat=env)


def test_crossed_axes_at_one_centre_refused_naming_both(tmp_path, capsys):
    p = write(tmp_path, two_magnets((0.0, 0.0, 1.0), (0, 1, 0)))
    with pytest.raises(ScenarioError, match=r"'east'.*'north'.*intersect"):
        load_site(p)
    assert main(["report", str(p), "--out", str(tmp_path / "out"), "--no-drawings",
                 "--quiet"]) == 2
    err = capsys.readouterr().err
    assert "east" in err and "north" in err and "magnet[1]" in err


def test_far_apart_accepted(tmp_path):
    site = load_site(write(tmp_path, two_magnets((5.0, 0.0, 1.0), (0, 1, 0))))
    assert len(site.magnets) == 2


def test_tilted_magnets():
    """A magnet tilted 45° whose envelope reaches into the other's cryostat is caught;
    moved clear it passes. Geometry: the envelopes are 1.2 m × 1.2 m annular cylinders."""
    env = Envelope(0.4, 0.6, -0.4, 0.4)
    a = _magnet((0.0, 0.0, 0.0), (0, 0, 1), env)
    tilt = (1.0, 0.0, 1.0)
    # its outer end edge comes within a few cm of a's wall: centre 1.1 m away along x
    assert magnets_intersect(a, _magnet((1.1, 0.0, 0.0), tilt, env))
    # 1.5 m away: the nearest points of the tilted envelope are 0.6 + (0.6·cos45 + 0.4·sin45)
    # ... = 0.6 + 0.707 m from the centre line at most: clear by about 0.2 m
    assert not magnets_intersect(a, _magnet((1.5, 0.0, 0.0), tilt, env))
    # one inside the other's bore, no surface of either inside the other: not intersecting
    small = Envelope(0.05, 0.3, -0.2, 0.2)
    inner = Magnet("in", (0.0, 0.0, 0.0), (1, 0, 1), (Coil(0.1, 0.2, -0.1, 0.1, 1, 1.0),),
                   cryostat=small)
    assert not magnets_intersect(a, inner)
    # a small magnet wholly inside a's cryostat wall: caught (its surface lies in a)
    wall = Magnet("w", (0.5, 0.0, 0.0), (0, 0, 1), (Coil(0.0, 0.03, -0.03, 0.03, 1, 1.0),),
                  cryostat=Envelope(0.0, 0.05, -0.05, 0.05))
    assert magnets_intersect(a, wall)
    assert intersecting_magnets([a, _magnet((5, 0, 0), tilt), wall]) == [(0, 2)]


def test_surface_samples_are_dense_enough():
    """Every surface point within the tolerance of a sample (the soundness argument)."""
    env = Envelope(0.4, 0.6, -0.4, 0.4)
    pts = envelope_surface_points(env)
    rng = np.random.default_rng(1)
    phi = rng.uniform(0, 2 * np.pi, 300)
    z = rng.uniform(-0.4, 0.4, 300)
    r = rng.uniform(0.4, 0.6, 300)
    probes = np.concatenate([
        np.column_stack([0.6 * np.cos(phi), 0.6 * np.sin(phi), z]),
        np.column_stack([0.4 * np.cos(phi), 0.4 * np.sin(phi), z]),
        np.column_stack([r * np.cos(phi), r * np.sin(phi), np.full(300, 0.4)])])
    d, _ = cKDTree(pts).query(probes)
    assert d.max() <= OVERLAP_TOLERANCE_M


def test_overlapping_coils_of_one_magnet_warn_naming_both(tmp_path):
    text = f"""
[[magnet]]
name = "one"
center_m = [0.0, 0.0, 1.0]
{COIL}
{COIL.replace("z_min_m = -0.30", "z_min_m = 0.10").replace("z_max_m = 0.30", "z_max_m = 0.50")}
{COIL.replace("z_min_m = -0.30", "z_min_m = 0.50").replace("z_max_m = 0.30", "z_max_m = 0.60")}
"""
    with pytest.warns(FringeWarning, match=r"magnet\[0\]\.coil\[0\].*magnet\[0\]\.coil\[1\]"):
        site = load_site(write(tmp_path, text))
    # coil 2 only touches coil 1 (z = 0.50): not an overlap
    assert overlapping_coils(site.magnets[0]) == [(0, 1)]
    m = Magnet("t", (0, 0, 0), (0, 0, 1), (Coil(0.45, 0.5, -0.3, 0.3, 1, 1.0),
                                           Coil(0.45, 0.5, 0.3, 0.6, 1, 1.0)))
    assert overlapping_coils(m) == []
