"""Steel of a site, solved once: the site with its induced field, the parts' figures.

:func:`with_solved_steel` solves a site's ``[[steel]]`` parts in the field of its magnets
(:func:`fringe.physics.steel.solve_steel`, cached in-process) and returns the site with
``induced`` set, so that every map, footprint, verdict and probe that passes the *site* to
:func:`fringe.field.evaluate.field_at` sees magnets plus steel. A magnet passed alone
(``magnets[].boundaries`` of a report) stays free space.

:func:`steel_notes` words the warnings of the solved parts (a magnetic force larger than
the part's weight; a part that saturates). :func:`shield_sweep` sizes one part: the site
solved for each thickness, and the area of the controlled-area boundary footprint that
spills out of the controlled rooms (docs/steel.md, "Using steel in a scenario").
"""

from __future__ import annotations

import math
from collections.abc import Callable, Sequence
from dataclasses import dataclass, replace
from typing import Any

from fringe.model.constants import STANDARD_GRAVITY_M_PER_S2
from fringe.model.errors import ArgumentError, must_be
from fringe.model.steel import SteelPart

__all__ = ["with_solved_steel", "steel_notes", "force_exceeds_weight", "thinnest_axis",
           "with_thickness", "shield_sweep", "spill_area_m2", "ShieldOption",
           "DEFAULT_STEEL_TOLERANCE", "steel_plan_outline", "steel_z_range_m", "steel_on_floor",
           "steel_section_cut"]

#: Relative accuracy asked of the steel solve (the mesh is refined until the quantity of
#: interest changes by less than this; fringe.physics.steel.solve_steel).
DEFAULT_STEEL_TOLERANCE: float = 0.01

Progress = Callable[[str], None] | None


def with_solved_steel(site, *, tolerance: float = DEFAULT_STEEL_TOLERANCE
                      ) -> tuple[Any, tuple]:
    """``site`` with its steel solved, and the parts' results.

    Parameters
    ----------
    site : Site
    tolerance : float
        Relative accuracy of the solve (:func:`fringe.physics.steel.solve_steel`).

    Returns
    -------
    site : Site
        ``dataclasses.replace(site, induced=solution)``; ``site`` itself when it has no
        steel, or when its steel is already solved (``induced`` set).
    parts : tuple of fringe.physics.steel.PartResult
        One per ``[[steel]]`` part, in scenario order; empty without steel.

    Notes
    -----
    The steel is driven by the magnets alone: the ``[site] background_field_uT`` (the
    Earth's field) is not part of the maps, which show the field the magnets add, so it
    does not drive the steel here either (its effect on a plate, a few µT, is far below
    every threshold drawn).
    """
    if not getattr(site, "steel", ()):
        return site, ()
    if site.induced is not None:
        return site, tuple(getattr(site.induced, "parts", ()))
    from fringe.physics.steel import solve_steel

    solution = solve_steel(site.magnets, site.steel, tolerance=tolerance)
    return replace(site, induced=solution), tuple(solution.parts)


def force_exceeds_weight(part) -> bool:
    """True when the magnetic force on a solved part is larger than its weight m·g
    (g: standard gravity, CGPM 1901)."""
    f = math.hypot(*part.force_N)
    return f > part.mass_kg * STANDARD_GRAVITY_M_PER_S2


def steel_notes(parts) -> list[str]:
    """Warnings about solved parts: force above weight, saturation (one line each)."""
    out = []
    for p in parts:
        f = math.hypot(*p.force_N)
        w = p.mass_kg * STANDARD_GRAVITY_M_PER_S2
        if f > w:
            out.append(f"WARNING: steel {p.name!r}: the magnetic force on it, {f:.3g} N, "
                       f"exceeds its weight, {w:.3g} N ({p.mass_kg:.4g} kg): its fixings must "
                       "hold the force, and the supplier and a structural engineer must check "
                       "them")
        if p.saturated:
            out.append(f"note: steel {p.name!r} saturates (largest |B| in it "
                       f"{p.max_field_in_steel_T:.3g} T): a thicker part or one farther from the "
                       "magnet shields more; the field past a saturated part is less certain")
    return out


def thinnest_axis(part: SteelPart) -> int:
    """Index (0, 1, 2 for x, y, z before rotation) of the smallest edge of ``part``; a tie
    goes to z, then y (a horizontal plate's thickness is its z size)."""
    size = part.size_m
    return min((2, 1, 0), key=lambda i: size[i])


def with_thickness(part: SteelPart, thickness_m: float) -> SteelPart:
    """``part`` with its thinnest edge (:func:`thinnest_axis`) replaced by ``thickness_m``;
    centre, other edges, yaw and material kept."""
    size = list(part.size_m)
    size[thinnest_axis(part)] = float(thickness_m)
    return replace(part, size_m=tuple(size))


@dataclass(frozen=True)
class ShieldOption:
    """One thickness of a shield sweep.

    Attributes
    ----------
    thickness_mm : float
    mass_kg : float
        Density × volume of the part at this thickness.
    spill_area_m2 : float
        Area of the controlled-area boundary footprint outside the controlled rooms,
        summed over every floor, m² (fringe.analysis.verdicts.boundary_outside_controlled_m2).
    spill_by_floor_m2 : dict of floor name → m²
    max_field_in_steel_T : float
    saturated : bool
    """

    thickness_mm: float
    mass_kg: float
    spill_area_m2: float
    spill_by_floor_m2: dict
    max_field_in_steel_T: float
    saturated: bool


def _part_index(site, name: str) -> int:
    for i, p in enumerate(site.steel):
        if p.name == name:
            return i
    names = ", ".join(repr(p.name) for p in site.steel) or "none (the scenario has no [[steel]])"
    raise ArgumentError(must_be("steel", f"one of the site's steel parts ({names})", name),
                        "steel", site.source_file or None)


def _check_thicknesses(thicknesses_mm: Sequence[float]) -> tuple[float, ...]:
    vals = tuple(float(t) for t in thicknesses_mm)
    if not vals or not all(math.isfinite(t) and 0.0 < t <= 1000.0 for t in vals):
        raise ArgumentError(must_be("thicknesses_mm", "thicknesses in (0, 1000] mm",
                                    list(thicknesses_mm)), "thicknesses_mm")
    return vals


def spill_area_m2(site, *, grid_step_m: float | None = None,
                  progress: Progress = None) -> dict[str, float]:
    """Area (m²) of the boundary footprint outside the controlled rooms, per floor.

    The report's own computation (plan window, floor maps, band envelope, footprints,
    :func:`fringe.analysis.verdicts.boundary_outside_controlled_m2`) on ``site`` as given
    (solve its steel first: :func:`with_solved_steel`).
    """
    import numpy as np

    from fringe.analysis.verdicts import boundary_outside_controlled_m2
    from fringe.analysis.zones import default_extent_m, floor_map, footprints, plan_axes_m
    from fringe.model.site import site_plan

    plan = site_plan(site)
    s = plan.settings
    step = float(s.grid_step_m if grid_step_m is None else grid_step_m)
    if not (math.isfinite(step) and 0.0 < step <= 5.0):
        raise ArgumentError(must_be("grid_step_m", "a number in (0, 5] m", grid_step_m),
                            "grid_step_m")
    b_mT = s.boundary.value_mT
    extent = s.extent_m or default_extent_m(site.magnets, plan.rooms, plan.equipment,
                                            min(s.thresholds_mT) * 1e-3, step_m=step)
    x, y = plan_axes_m(extent, step)
    out = {}
    for fl in plan.floors:
        fm = floor_map(site, fl, np.asarray(x), np.asarray(y), s.band_step_m, [b_mT * 1e-3],
                       progress=None)
        (fp,) = footprints(fm, [b_mT])
        out[fl.name] = float(boundary_outside_controlled_m2(fp, plan.rooms))
        if progress:
            progress(f"floor {fl.name!r} done")
    return out


def shield_sweep(site, steel: str, thicknesses_mm: Sequence[float], *,
                 tolerance: float = DEFAULT_STEEL_TOLERANCE, grid_step_m: float | None = None,
                 progress: Progress = None) -> tuple[ShieldOption, ...]:
    """Solve ``site`` for each thickness of its part ``steel`` and measure the spill.

    Parameters
    ----------
    site : Site
        Every other part keeps its size.
    steel : str
        Name of the ``[[steel]]`` part whose thinnest edge (:func:`thinnest_axis`: the z
        size of a horizontal plate) is set to each thickness.
    thicknesses_mm : sequence of float
        Thicknesses in mm, each in (0, 1000].
    grid_step_m : float, optional
        Plan grid step (default: the scenario's).

    Returns
    -------
    tuple of ShieldOption
        In the order given.

    Raises
    ------
    ArgumentError
        ``steel`` is not a part of the site (the message lists them), or a thickness is
        out of range (argument ``thicknesses_mm``).
    """
    i = _part_index(site, steel)
    thick = _check_thicknesses(thicknesses_mm)
    say = progress or (lambda msg: None)
    out = []
    for t in thick:
        parts = list(site.steel)
        parts[i] = with_thickness(parts[i], t * 1e-3)
        trial = replace(site, steel=tuple(parts), induced=None)
        solved, results = with_solved_steel(trial, tolerance=tolerance)
        spill = spill_area_m2(solved, grid_step_m=grid_step_m)
        res = results[i]
        out.append(ShieldOption(t, parts[i].mass_kg, sum(spill.values()), spill,
                                float(res.max_field_in_steel_T), bool(res.saturated)))
        say(f"{t:g} mm: spill {sum(spill.values()):.2f} m²")
    return tuple(out)


# -- where parts are drawn -----------------------------------------------------------------

def steel_plan_outline(part: SteelPart) -> Any:
    """The plan outline of ``part`` (site x-y, m): its x-y rectangle turned by ``yaw_deg``
    about its centre (a shapely Polygon)."""
    import shapely

    cx, cy, _ = part.center_m
    hx, hy = 0.5 * part.size_m[0], 0.5 * part.size_m[1]
    c, s = math.cos(math.radians(part.yaw_deg)), math.sin(math.radians(part.yaw_deg))
    corners = [(cx + c * u - s * v, cy + s * u + c * v)
               for u, v in ((-hx, -hy), (hx, -hy), (hx, hy), (-hx, hy))]
    return shapely.Polygon(corners)


def steel_z_range_m(part: SteelPart) -> tuple[float, float]:
    """Bottom and top of ``part``, site z in m (the yaw keeps it level)."""
    return part.center_m[2] - 0.5 * part.size_m[2], part.center_m[2] + 0.5 * part.size_m[2]


def steel_on_floor(part: SteelPart, floors: Sequence, floor_name: str) -> bool:
    """True when ``part`` overlaps the storey of ``floor_name``: from its elevation up to
    the next floor's (the lowest storey reaches down, the highest up, without end)."""
    fl = sorted(floors, key=lambda f: f.elevation_m)
    for k, f in enumerate(fl):
        if f.name != floor_name:
            continue
        lo = -math.inf if k == 0 else f.elevation_m
        hi = math.inf if k == len(fl) - 1 else fl[k + 1].elevation_m
        z0, z1 = steel_z_range_m(part)
        return z0 < hi and z1 > lo
    return False


def steel_section_cut(part: SteelPart, origin_m, unit, s_range_m: tuple[float, float]
                      ) -> Any:
    """Where ``part`` cuts the vertical plane through ``origin_m`` along the horizontal
    ``unit``: a rectangle in (s, z), m (s = 0 at ``origin_m``), or None when it misses the
    plane within ``s_range_m``."""
    import shapely

    ox, oy = float(origin_m[0]), float(origin_m[1])
    ux, uy = float(unit[0]), float(unit[1])
    s0, s1 = s_range_m
    line = shapely.LineString([(ox + s0 * ux, oy + s0 * uy), (ox + s1 * ux, oy + s1 * uy)])
    cut = steel_plan_outline(part).intersection(line)
    if cut.is_empty or cut.length <= 0.0:
        return None
    pts = [(x - ox) * ux + (y - oy) * uy for x, y in shapely.get_coordinates(cut)]
    z0, z1 = steel_z_range_m(part)
    return shapely.box(min(pts), z0, max(pts), z1)
