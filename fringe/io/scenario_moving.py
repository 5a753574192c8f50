"""Scenario section ``[[moving_steel]]``: compact steel objects moving along paths.

One table per object (docs/disturbance.md)::

    [[moving_steel]]
    name = "lift car"                           # unique label
    mass_kg = 1200.0                             # mass of its steel, kg
    path_m = [[9.0, 9.0, -2.5], [9.0, 9.0, 5.0]] # ≥ 2 points, site frame, m
    limit_ppm = 0.01                             # optional: largest |ΔB| at the isocentre

The parsed section (``Site.moving_steel``) is a tuple of
:class:`fringe.model.steel.MovingSteel`.
"""

from __future__ import annotations

from fringe.io.reader import Reader, finite_number
from fringe.model.constants import MAX_COORDINATE_M
from fringe.model.steel import MovingSteel

__all__ = ["parse_moving_steel", "SECTION_KEY"]

#: Top-level scenario key of this section.
SECTION_KEY: str = "moving_steel"


def _path(r: Reader) -> tuple[tuple[float, float, float], ...]:
    kp = r.key("path_m")
    v = r.raw("path_m")
    expect = "an array of at least 2 points [x, y, z] in m"
    if not isinstance(v, list) or len(v) < 2:
        r.fail(kp, expect, v)
    out = []
    for i, p in enumerate(v):
        if (not isinstance(p, list) or len(p) != 3
                or any(isinstance(x, bool) or not isinstance(x, (int, float)) for x in p)):
            r.fail(f"{kp}[{i}]", "an array of 3 numbers [x, y, z] in m", p)
        if not all(finite_number(x) and abs(x) <= MAX_COORDINATE_M for x in p):
            r.fail(f"{kp}[{i}]", f"3 finite numbers within ±{MAX_COORDINATE_M:g} m", p)
        out.append((float(p[0]), float(p[1]), float(p[2])))
    if all(p == out[0] for p in out):
        r.fail(kp, "points that are not all the same (a path has a length)", v)
    return tuple(out)


def parse_moving_steel(root: Reader) -> tuple[MovingSteel, ...]:
    """Parse every ``[[moving_steel]]`` table; names must be unique."""
    out: list[MovingSteel] = []
    seen: set[str] = set()
    for r in root.tables(SECTION_KEY):
        name = r.string("name")
        if name in seen:
            r.fail(r.key("name"), f"unique among [[{SECTION_KEY}]] tables", name)
        seen.add(name)
        mass = r.number("mass_kg", low=0.0, low_open=True)
        path = _path(r)
        limit = r.number("limit_ppm", None, low=0.0, low_open=True)
        r.finish()
        out.append(MovingSteel(name, mass, path, limit))
    return tuple(out)


def parse_background(r: Reader) -> tuple[float, float, float] | None:
    """``[site] background_field_uT``: a uniform background field in µT, or None.

    Values beyond 1000 µT are refused as a likely unit slip (the Earth's field is
    25–65 µT; World Magnetic Model, from memory).
    """
    if not r.has("background_field_uT"):
        r.raw("background_field_uT", None)
        return None
    v = r.vector("background_field_uT", 3)
    if max(abs(x) for x in v) > 1000.0:
        r.fail(r.key("background_field_uT"), "components of at most 1000 µT (the Earth's "
               "field is 25–65 µT)", list(v))
    return (v[0], v[1], v[2])
