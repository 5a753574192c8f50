"""Scenario section ``[[steel]]``: steel parts fixed in the building.

One table per part (docs/steel.md, "Using steel in a scenario")::

    [[steel]]
    name = "ceiling plate"
    center_m = [5.0, 4.0, 3.6]        # site frame, m
    size_m = [6.0, 5.0, 0.01]         # edge lengths along x, y, z before rotation, m
    yaw_deg = 0.0                     # optional: rotation about the vertical, degrees
    material = "low-carbon-steel"     # optional: a name of fringe.model.steel.MATERIALS
    relative_permeability = 1000.0    # optional: overrides the material's μ_r

The parsed section (``Site.steel``) is a tuple of :class:`fringe.model.steel.SteelPart`.
"""

from __future__ import annotations

from fringe.io.reader import Reader
from fringe.io.unit_slips import check_elevation
from fringe.model.constants import MAX_COORDINATE_M
from fringe.model.steel import DEFAULT_STEEL_MATERIAL, MATERIALS, SteelPart

__all__ = ["parse_steel", "SECTION_KEY"]

#: Top-level scenario key of this section.
SECTION_KEY: str = "steel"

#: Largest edge of a steel part, m: a part is a plate, beam, column or slab of a building,
#: not a site (a larger value is almost always a unit slip: millimetres for metres).
MAX_STEEL_EDGE_M: float = 200.0


def _part(r: Reader) -> SteelPart:
    name = r.string("name")
    center = r.vector("center_m", 3)
    if max(abs(v) for v in center) > MAX_COORDINATE_M:
        r.fail(r.key("center_m"), f"site coordinates within ±{MAX_COORDINATE_M:g} m",
               list(center))
    check_elevation(center[2], f"{r.key('center_m')}[2]", r.file)
    size = r.vector("size_m", 3)
    if not all(0.0 < v <= MAX_STEEL_EDGE_M for v in size):
        r.fail(r.key("size_m"), f"3 edge lengths in (0, {MAX_STEEL_EDGE_M:g}] m", list(size))
    yaw = r.number("yaw_deg", 0.0, low=-360.0, high=360.0)
    mat = r.string("material", DEFAULT_STEEL_MATERIAL, choices=tuple(MATERIALS))
    mu = r.number("relative_permeability", None, low=1.0, high=1e6)
    r.finish()
    return SteelPart(name, center, size, MATERIALS[mat], yaw_deg=yaw, relative_permeability=mu)


def parse_steel(root: Reader) -> tuple[SteelPart, ...]:
    """Parse every ``[[steel]]`` table; names must be unique.

    ``material`` must be a name of :data:`fringe.model.steel.MATERIALS` (the error lists
    them); it defaults to :data:`fringe.model.steel.DEFAULT_STEEL_MATERIAL`.
    """
    out: list[SteelPart] = []
    seen: set[str] = set()
    for r in root.tables(SECTION_KEY):
        part = _part(r)
        if part.name in seen:
            r.fail(r.key("name"), "unique among [[steel]] tables", part.name)
        seen.add(part.name)
        out.append(part)
    return tuple(out)
