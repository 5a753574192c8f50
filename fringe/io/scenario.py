"""Scenario files (TOML) → validated, frozen :class:`Site`.

Every problem is reported as one :class:`~fringe.model.errors.ScenarioError` naming the file,
the key path (``magnet[1].coil[0].r_outer_m``), what was expected and what was found.
Unknown keys are errors with a "did you mean" suggestion.

The top-level sections are parsed in a fixed order (:data:`TOP_LEVEL_KEYS`) by the
parsers of :mod:`fringe.io.scenario_plan` (``plan``, ``floor``, ``room`` and
``room_file``, ``equipment``), :mod:`fringe.io.scenario_quench` (``quench``),
:mod:`fringe.io.scenario_implants` (``implant_condition``),
:mod:`fringe.io.scenario_steel` (``steel``),
:mod:`fringe.io.scenario_moving` (``moving_steel``, and ``[site] background_field_uT``) and
:mod:`fringe.io.scenario_drawing` (``drawing``); magnets
given by data-sheet numbers by :mod:`fringe.io.scenario_datasheet`
(:data:`MAGNET_BUILDERS`); room files by the loaders of :data:`ROOM_LOADERS`. Each of
those modules reads its tables with :class:`fringe.io.reader.Reader` and knows nothing
of this module.
"""

from __future__ import annotations

import math
import warnings
from collections.abc import Callable, Mapping
from pathlib import Path
from types import MappingProxyType
from typing import Any

from fringe.io.dxf import load_dxf_rooms
from fringe.io.reader import Reader
from fringe.io.scenario_datasheet import DATASHEET_KEY, parse_datasheet
from fringe.io.scenario_drawing import parse_drawing
from fringe.io.scenario_implants import parse_implant_conditions
from fringe.io.scenario_keys import (
    TOP_LEVEL_KEYS,
    check_top_level_spelling,
    read_scenario_toml,
)
from fringe.io.scenario_moving import parse_background, parse_moving_steel
from fringe.io.scenario_plan import (
    load_geojson_rooms,
    parse_equipment,
    parse_floors,
    parse_plan,
    parse_rooms,
)
from fringe.io.scenario_quench import parse_quench_section
from fringe.io.scenario_steel import parse_steel
from fringe.io.unit_slips import check_elevation
from fringe.model.constants import MAX_COORDINATE_M
from fringe.model.errors import FringeWarning, ScenarioError
from fringe.model.magnet import Coil, Envelope, Magnet
from fringe.model.overlap import OVERLAP_TOLERANCE_M, intersecting_magnets, overlapping_coils
from fringe.model.site import Site

__all__ = ["load_site", "parse_site", "TOP_LEVEL_KEYS", "MAGNET_BUILDERS", "ROOM_LOADERS"]

#: Parsers for alternative magnet descriptions (e.g. data-sheet numbers), keyed by the
#: sub-table name that selects them. Each takes the magnet Reader and the magnet's name
#: and returns coils, a description and an origin tag (and optionally a
#: fringe.model.magnet.DataSheet of the numbers the coils were fitted to).
MAGNET_BUILDERS: Mapping[str, Callable[[Reader, str], tuple]] = (
    MappingProxyType({DATASHEET_KEY: parse_datasheet}))

#: Loaders of room outlines from plan files (``[[room_file]] format``), keyed by format
#: name. Each is ``fn(path, options: dict, file_for_errors: str)`` returning a list of
#: Room, or a drawing with a ``rooms`` attribute (:class:`fringe.io.dxf.DxfPlan`, which
#: also carries the drawing's walls and offset); its ``option_keys`` attribute names
#: the further ``[[room_file]]`` keys it takes.
ROOM_LOADERS: Mapping[str, Callable[..., Any]] = MappingProxyType(
    {"geojson": load_geojson_rooms, "dxf": load_dxf_rooms})


# -- magnets -------------------------------------------------------------------------

def _annulus(r: Reader) -> tuple[float, float, float, float]:
    """``r_inner_m``, ``r_outer_m``, ``z_min_m``, ``z_max_m`` of a coil or an envelope table,
    checked: 0 ≤ r_inner < r_outer and z_min < z_max."""
    ri = r.number("r_inner_m", low=0.0)
    ro = r.number("r_outer_m", low=0.0, low_open=True)
    if ro <= ri:
        r.fail(r.key("r_outer_m"), f"greater than r_inner_m ({ri:g})", ro)
    z0 = r.number("z_min_m")
    z1 = r.number("z_max_m")
    if z1 <= z0:
        r.fail(r.key("z_max_m"), f"greater than z_min_m ({z0:g})", z1)
    return ri, ro, z0, z1


def parse_coil(r: Reader) -> Coil:
    """Parse one ``[[magnet.coil]]`` table."""
    ri, ro, z0, z1 = _annulus(r)
    turns = r.number("turns", low=0.0, low_open=True)
    cur = r.number("current_A")
    r.finish()
    return Coil(ri, ro, z0, z1, turns, cur)


def parse_magnet(r: Reader) -> Magnet:
    """Parse one ``[[magnet]]`` table."""
    name = r.string("name")
    center = r.vector("center_m", 3)
    if max(abs(x) for x in center) > MAX_COORDINATE_M:
        r.fail(r.key("center_m"), f"site coordinates within ±{MAX_COORDINATE_M:g} m", list(center))
    check_elevation(center[2], f"{r.key('center_m')}[2]", r.file)
    axis = r.vector("axis", 3, (0.0, 0.0, 1.0))
    if math.hypot(*axis) == 0.0:
        r.fail(r.key("axis"), "a non-zero vector", list(axis))
    big = max(abs(x) for x in axis)  # pre-scale: huge or subnormal axes normalise cleanly
    axis = tuple(x / big for x in axis)
    description = r.string("description", "", nonempty=False)
    builders = [k for k in MAGNET_BUILDERS if r.has(k)]
    if r.has("coil") and builders:
        r.fail(r.key("coil"), f"absent when `{r.key(builders[0])}` is given", "both")
    sheet = None
    if builders:
        coils, desc, origin, *extra = MAGNET_BUILDERS[builders[0]](r, name)
        sheet = extra[0] if extra else None  # a data-sheet builder also returns its numbers
        description = description or desc
    else:
        crs = r.tables("coil")
        if not crs:
            alt = "".join(f" or a [{r.key(k)}] table" for k in MAGNET_BUILDERS)
            raise ScenarioError(
                f"`{r.key('coil')}` is missing; a magnet needs at least one "
                f"[[magnet.coil]]{alt}", r.file)
        coils = tuple(parse_coil(c) for c in crs)
        origin = "coils"
    envelope = parse_envelope(r.table("envelope"), coils)
    r.finish()
    _check_centre_field(r, name, coils)
    return Magnet(name, center, axis, coils, description, origin, envelope, datasheet=sheet)


def parse_envelope(r: Reader | None, coils: tuple[Coil, ...]) -> Envelope | None:
    """Parse an optional ``[magnet.envelope]`` table (the cryostat envelope, magnet frame).

    Exactly the keys ``r_inner_m``, ``r_outer_m``, ``z_min_m``, ``z_max_m``; it must hold
    every winding. None when absent (the magnet then takes the default envelope,
    :func:`fringe.model.magnet.default_envelope`).
    """
    if r is None:
        return None
    ri, ro, z0, z1 = _annulus(r)
    r.finish()
    checks = (("r_inner_m", ri, min(c.r_inner_m for c in coils), "at most"),
              ("r_outer_m", ro, max(c.r_outer_m for c in coils), "at least"),
              ("z_min_m", z0, min(c.z_min_m for c in coils), "at most"),
              ("z_max_m", z1, max(c.z_max_m for c in coils), "at least"))
    for key, v, w, rel in checks:
        if (v > w) if rel == "at most" else (v < w):
            r.fail(r.key(key), f"{rel} {w:g} so the envelope holds every winding", v)
    return Envelope(ri, ro, z0, z1)


#: Centre fields above this (T) draw a warning: the strongest superconducting magnets
#: reach about 28 T (1.2 GHz NMR, from memory), whole-body MR magnets 11.7 T. A larger
#: value is almost always a unit slip in ``current_A`` or ``turns``.
PLAUSIBLE_CENTRE_FIELD_T: float = 30.0


def _check_centre_field(r: Reader, name: str, coils: tuple[Coil, ...]) -> None:
    """Refuse a magnet whose field overflows; warn when its centre field is implausible."""
    from fringe.physics.energy import (
        center_field_T,  # closed form (Jackson Sec. 5.5); imported lazily
    )

    try:
        b = center_field_T(Magnet(name, (0.0, 0.0, 0.0), (0.0, 0.0, 1.0), coils))
    except (OverflowError, ZeroDivisionError, ValueError):
        b = math.nan
    if not math.isfinite(b):
        raise ScenarioError(f"`{r.key('coil')}` must give a finite field (check `current_A`, "
                            f"`turns` and the coil sizes); got a centre field of {b} T", r.file)
    if abs(b) > PLAUSIBLE_CENTRE_FIELD_T:
        where = f"{r.file}: " if r.file else ""
        warnings.warn(f"{where}magnet {name!r} (`{r.path}`) has a centre field of {abs(b):.4g} T, "
                      f"above the {PLAUSIBLE_CENTRE_FIELD_T:g} T that any built magnet reaches; "
                      "check `current_A` (amperes per turn) and `turns`",
                      FringeWarning, stacklevel=2)


def _check_geometry(mags: tuple[Magnet, ...], file: str) -> None:
    """Refuse magnets whose cryostat envelopes intersect; warn on overlapping coils."""
    for i, m in enumerate(mags):
        for a, b in overlapping_coils(m):
            warnings.warn(f"{file}: magnet {m.name!r}: `magnet[{i}].coil[{a}]` and "
                          f"`magnet[{i}].coil[{b}]` overlap (their (r, z) rectangles share "
                          "an area); the field adds both currents there",
                          FringeWarning, stacklevel=3)
    pairs = intersecting_magnets(mags)
    if pairs:
        i, j = pairs[0]
        raise ScenarioError(
            f"magnets {mags[i].name!r} (`magnet[{i}]`) and {mags[j].name!r} (`magnet[{j}]`) "
            "intersect: their windings or cryostat envelopes share space (or come within "
            f"{OVERLAP_TOLERANCE_M * 1e3:g} mm); check `center_m`, `axis` and "
            "`envelope`", file)


def _parse_site_table(r: Reader | None) -> dict[str, Any]:
    if r is None:
        return {}
    out = {"name": r.string("name", "unnamed site"),
           "description": r.string("description", "", nonempty=False),
           "background_field_uT": parse_background(r)}
    r.finish()
    return out


def parse_site(data: dict, file: str | Path = "<scenario>") -> Site:
    """Validate an already-decoded TOML mapping into a :class:`Site`."""
    file = str(file)
    root = Reader(data, "", file)
    check_top_level_spelling(root.data, root.file)
    site_info = _parse_site_table(root.table("site"))
    mags = tuple(parse_magnet(m) for m in root.tables("magnet"))
    seen: set[str] = set()
    for i, m in enumerate(mags):
        if m.name in seen:
            root.fail(f"magnet[{i}].name", "unique among magnets", m.name)
        seen.add(m.name)
    _check_geometry(mags, file)
    plan = parse_plan(root)
    floors = parse_floors(root, plan)
    rooms, drawings = parse_rooms(root, Path(file), floors, ROOM_LOADERS)
    equipment = parse_equipment(root, floors)
    quench = parse_quench_section(root, mags)
    implants = parse_implant_conditions(root)
    steel = parse_steel(root)
    moving = parse_moving_steel(root)
    drawing = parse_drawing(root)
    root.finish()
    return Site(site_info.get("name", "unnamed site"), mags, file, plan=plan, floors=floors,
                rooms=rooms, equipment=equipment, room_drawings=drawings, quench=quench,
                implant_conditions=implants, steel=steel, moving_steel=moving,
                background_field_uT=site_info.get("background_field_uT"),
                drawing=drawing)


def load_site(path: str | Path) -> Site:
    """Load and validate a scenario file.

    Parameters
    ----------
    path : str or Path
        A TOML scenario file (UTF-8).

    Returns
    -------
    Site

    Raises
    ------
    ScenarioError
        For a missing, unreadable, non-UTF-8 or malformed file, or any invalid value;
        the message names the file and the key path.
    """
    p = Path(path)
    data = read_scenario_toml(p)
    return parse_site(data, p)
