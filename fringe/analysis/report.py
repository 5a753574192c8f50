"""The site report, computed: every map, footprint, extent and verdict (no files).

:func:`compute_report` returns a :class:`ReportResult`; the outputs are made from it
elsewhere: the tables (``summary.json``, ``zones.geojson``, ``rooms.csv``,
``equipment.csv``) by :mod:`fringe.io.report_files`, the sheets, ``report.pdf`` and the
DXF zone drawings by :func:`fringe.render.report.write_report`.
"""

from __future__ import annotations

import datetime as _dt
import math
import os
from collections.abc import Callable
from dataclasses import dataclass, field, replace

import numpy as np

from fringe.analysis.attraction import SiteAttraction, site_attraction
from fringe.analysis.fit_spread import magnet_fit_spread, outermost_magnet
from fringe.analysis.implants import SiteImplants, site_implants
from fringe.analysis.moving_steel import MovingSteelCheck, check_moving_steel
from fringe.analysis.overall import OverallVerdict, overall_verdict
from fringe.analysis.quench import budget_for_site
from fringe.analysis.steel import with_solved_steel
from fringe.analysis.storey import FullHeight, RoomCeiling, full_height, room_ceilings
from fringe.analysis.verdicts import (
    EquipmentCheck,
    RoomCheck,
    boundary_outside_controlled_m2,
    check_equipment,
    check_rooms,
)
from fringe.analysis.zones import (
    FloorMap,
    Footprint,
    Section,
    default_extent_m,
    field_magnitude_T,
    floor_map,
    footprints,
    magnet_sections,
    plan_axes_m,
    reach_m,
)
from fringe.field.extents import threshold_extent_ranges_m, threshold_extents_m
from fringe.field.multipole import zonal_moments_Am
from fringe.field.reach import threshold_reach_m
from fringe.model.building import Boundary
from fringe.model.constants import VERSION as __version__
from fringe.model.errors import ArgumentError, FringeInputError, ScenarioError
from fringe.model.site import SitePlan, site_plan
from fringe.model.verdict import Verdict
from fringe.physics.energy import stored_energy_J

__all__ = ["MagnetSummary", "ReportResult", "compute_report", "magnet_summary", "drawn_site",
           "check_grid_step_m",
           "SPILL_TOLERANCE_M2"]

Progress = Callable[[str], None] | None

#: Area (m²) of the boundary footprint outside controlled rooms above which a floor's
#: verdict is ``exceeds``: the line must stay inside the controlled access area, in open
#: rooms and in space no room covers alike. 0.01 m² (10 cm × 10 cm) absorbs contouring
#: round-off where the line runs along a controlled wall (common practice, no source).
SPILL_TOLERANCE_M2: float = 0.01


@dataclass(frozen=True)
class MagnetSummary:
    """One magnet alone: centre field and the extent of each threshold line."""

    name: str
    center_m: tuple[float, float, float]
    axis: tuple[float, float, float]
    description: str
    center_field_T: float
    #: (threshold_mT, axial_extent_m, radial_extent_m) per threshold, ascending: on the
    #: axis and in the centre plane (fringe.field.extents.threshold_extents_m).
    boundaries: tuple[tuple[float, float, float], ...]
    #: Where the coil model comes from ("coils", or a data-sheet fit;
    #: see fringe.io.scenario_datasheet).
    origin: str = "coils"
    #: Stored energy ½ IᵀMI in J (fringe.physics.energy.stored_energy_J).
    stored_energy_J: float = float("nan")
    #: Net axial dipole moment in A·m².
    dipole_moment_Am2: float = float("nan")
    #: Zonal moments of the far field: dipole (A·m²), l = 3 (A·m⁴), l = 5 (A·m⁶)
    #: (fringe.field.multipole.zonal_moments_Am, l = 1, 3, 5).
    zonal_moments: tuple[float, float, float] = (float("nan"),) * 3
    #: (threshold_mT, max_reach_m, max_reach_axial_m) per threshold, as ``boundaries``:
    #: the line's largest distance from the axis and along it anywhere
    #: (fringe.field.reach.threshold_reach_m).
    reaches: tuple[tuple[float, float, float], ...] = ()
    #: (threshold_mT, (axial_inner_m, axial_outer_m), (radial_inner_m, radial_outer_m)) per
    #: threshold, as ``boundaries``: the line's limits for the plan's field uncertainty
    #: (fringe.field.extents.threshold_extent_ranges_m; both equal the extent when u = 0).
    boundary_ranges: tuple = ()
    #: The spread of a data-sheet magnet's figures over every model that meets its numbers
    #: (fringe.analysis.fit_spread.FitSpread), or None for a magnet given by coils.
    fit_spread: object = None

    def boundary_range(self, threshold_mT: float
                       ) -> tuple[tuple[float, float], tuple[float, float]] | None:
        """((axial_inner, axial_outer), (radial_inner, radial_outer)) in m of
        ``threshold_mT`` (None if not computed)."""
        for t, ax, rad in self.boundary_ranges:
            if math.isclose(t, threshold_mT, rel_tol=1e-9):
                return ax, rad
        return None

    def reach(self, threshold_mT: float) -> tuple[float, float] | None:
        """(max_reach_m, max_reach_axial_m) of ``threshold_mT`` (None if not computed)."""
        for t, rho, z in self.reaches:
            if math.isclose(t, threshold_mT, rel_tol=1e-9):
                return rho, z
        return None


@dataclass(frozen=True)
class ReportResult:
    """Everything a report shows, computed; see :func:`compute_report`."""

    site_name: str
    scenario_file: str
    plan: SitePlan
    boundary: Boundary
    thresholds_mT: tuple[float, ...]
    grid_step_m: float
    extent_m: tuple[tuple[float, float], tuple[float, float]]
    magnets: tuple[MagnetSummary, ...]
    floor_maps: dict[str, FloorMap]
    footprints: dict[str, tuple[Footprint, ...]]
    outside_controlled_m2: dict[str, float]
    sections: tuple[Section, ...]
    rooms: tuple[RoomCheck, ...]
    equipment: tuple[EquipmentCheck, ...]
    created_utc: str
    version: str = __version__
    site: object = field(default=None, compare=False, repr=False)
    #: Quench release budgets for the scenario's [[quench]] tables (fringe.physics.quench).
    quench: tuple = ()
    #: The attraction-hazard zone: extents, floor zones, section zones (fringe.analysis.attraction).
    attraction: SiteAttraction | None = field(default=None, compare=False, repr=False)
    #: Implant figures: gradient maps, accessible maxima, implant conditions
    #: (fringe.analysis.implants).
    implants: SiteImplants | None = field(default=None, compare=False, repr=False)
    #: Each floor's whole storey, floor level to ceiling, by floor name
    #: (fringe.analysis.storey.FullHeight); informs, does not change a verdict.
    full_height: dict[str, FullHeight] = field(default_factory=dict, compare=False, repr=False)
    #: Each room over its whole storey, by room name (fringe.analysis.storey.RoomCeiling).
    ceilings: dict[str, RoomCeiling] = field(default_factory=dict, compare=False, repr=False)
    #: Each [[moving_steel]] path checked against its limit
    #: (fringe.analysis.moving_steel.MovingSteelCheck).
    moving_steel: tuple[MovingSteelCheck, ...] = field(default=(), compare=False, repr=False)
    #: The plan's field uncertainty u ([plan] field_uncertainty; docs/uncertainty.md).
    uncertainty: float = 0.0
    #: Per floor, area (m²) of the boundary's outer limit (the model's line at
    #: boundary/(1 + u)) outside the controlled rooms; equal to ``outside_controlled_m2``
    #: when u = 0.
    outside_controlled_outer_m2: dict[str, float] = field(default_factory=dict)
    #: The solved ``[[steel]]`` parts (fringe.physics.steel.PartResult), scenario order;
    #: every map, footprint and verdict above includes their induced field.
    steel: tuple = ()

    def floor_verdict(self, floor: str) -> Verdict:
        """``exceeds`` when the boundary footprint on ``floor`` reaches beyond its
        controlled rooms by more than :data:`SPILL_TOLERANCE_M2`; ``marginal`` when only
        its outer limit (the line at boundary/(1 + u)) does; else ``within``."""
        spill = self.outside_controlled_m2.get(floor, 0.0)
        if spill > SPILL_TOLERANCE_M2:
            return Verdict.EXCEEDS
        outer = self.outside_controlled_outer_m2.get(floor, spill)
        return Verdict.MARGINAL if outer > SPILL_TOLERANCE_M2 else Verdict.WITHIN

    def overall(self) -> OverallVerdict:
        """Every verdict summed up (:func:`fringe.analysis.overall.overall_verdict`)."""
        return overall_verdict(self)

    @property
    def exceeds(self) -> bool:
        """True when any room, equipment or floor verdict is ``exceeds``."""
        return self.overall().exceeds

    def floor_footprint(self, floor: str, threshold_mT: float) -> Footprint | None:
        """The footprint of ``threshold_mT`` on ``floor`` (None if not computed)."""
        for fp in self.footprints.get(floor, ()):
            if math.isclose(fp.threshold_mT, threshold_mT, rel_tol=1e-9):
                return fp
        return None


def _now_utc() -> str:
    sde = os.environ.get("SOURCE_DATE_EPOCH")  # reproducible builds convention
    t = (_dt.datetime.fromtimestamp(int(sde), _dt.UTC) if sde and sde.isdigit()
         else _dt.datetime.now(_dt.UTC))
    return t.replace(microsecond=0).isoformat().replace("+00:00", "Z")


def check_grid_step_m(grid_step_m, name: str = "grid_step_m") -> float:
    """``grid_step_m`` as a float, checked: a number in (0, 5] m.

    Parameters
    ----------
    grid_step_m : float
        Plan and section grid step, m.
    name : str
        What the error calls the value (the command line passes its option).

    Raises
    ------
    FringeInputError
        For a value outside (0, 5] m or not a number.
    """
    try:
        step = float(grid_step_m)
    except (TypeError, ValueError):
        step = math.nan
    if not (math.isfinite(step) and 0 < step <= 5.0):
        raise FringeInputError(f"`{name}` must be a number in (0, 5] m; got {grid_step_m!r}")
    return step


def _floor_maps(site, plan, x, y, thr_mT, u: float, progress: Progress):
    """Each floor's map and footprints, and the boundary's area outside the controlled
    rooms (and that of its outer limit, the model's line at boundary/(1 + u))."""
    s = plan.settings
    thr_T = [t * 1e-3 for t in thr_mT]
    fmaps: dict[str, FloorMap] = {}
    fps: dict[str, tuple[Footprint, ...]] = {}
    outside: dict[str, float] = {}
    outside_outer: dict[str, float] = {}
    for fl in plan.floors:
        fm = floor_map(site, fl, x, y, s.band_step_m, thr_T, progress=progress)
        fmaps[fl.name] = fm
        fps[fl.name] = footprints(fm, thr_mT)
        bfp = next(f for f in fps[fl.name]
                   if math.isclose(f.threshold_mT, s.boundary.value_mT, rel_tol=1e-9))
        outside[fl.name] = boundary_outside_controlled_m2(bfp, plan.rooms)
        outside_outer[fl.name] = outside[fl.name]
        if u > 0:  # the boundary's outer limit: the model's line at boundary/(1 + u)
            ofp = footprints(fm, [s.boundary.value_mT / (1.0 + u)])[0]
            outside_outer[fl.name] = boundary_outside_controlled_m2(ofp, plan.rooms)

    return fmaps, fps, outside, outside_outer


def compute_report(site, *, grid_step_m: float | None = None, progress: Progress = None
                   ) -> ReportResult:
    """Compute maps, footprints, sections, extents and verdicts for ``site``.

    Parameters
    ----------
    site : Site
        A loaded scenario with at least one magnet.
    grid_step_m : float, optional
        Overrides ``plan.grid_step_m`` (plan and section grids), m.
    progress : callable, optional
        Called with a short message after each step of the long computations.

    Notes
    -----
    A site with ``[[steel]]`` is solved first (:func:`fringe.analysis.steel.with_solved_steel`,
    once per site, cached): floors, sections, rooms, equipment, the attraction zone and the
    implant figures use the field with steel; ``magnets[].boundaries`` (each magnet alone,
    free space) do not.

    The quench budgets need CoolProp, whose first import takes seconds; a caller can
    start those look-ups in a second process first
    (:func:`fringe.io.prefetch.prefetch_quench_data`, as ``fringe report`` does), so they
    overlap the maps.
    """
    if not site.magnets:
        raise ScenarioError("`magnet` must list at least one magnet; got none",
                            site.source_file or None)
    plan = site_plan(site)
    s = plan.settings
    step = check_grid_step_m(s.grid_step_m if grid_step_m is None else grid_step_m)
    thr_mT = s.thresholds_mT
    site = drawn_site(site, thr_mT)  # data-sheet magnets: the outermost model of the spread
    thr_T = [t * 1e-3 for t in thr_mT]
    say = progress or (lambda msg: None)
    quench_inputs = tuple(site.quench)
    u = s.field_uncertainty
    site, steel = with_solved_steel(site)
    if steel:
        say(f"steel solved ({len(steel)} part{'s' if len(steel) != 1 else ''})")

    mags = [magnet_summary(site, m, thr_mT, u) for m in site.magnets]
    say("extents and reach of each threshold line done")
    _warn_if_grid_too_coarse(mags, s.boundary.value_mT, step, site.source_file)

    extent = s.extent_m or default_extent_m(site.magnets, plan.rooms, plan.equipment,
                                            min(thr_T), step_m=step)
    extent = tuple(tuple(round(v, 9) for v in corner) for corner in extent)
    x, y = plan_axes_m(extent, step)
    if x.size * y.size > 4_000_000:
        (x0, y0), (x1, y1) = extent
        key = "grid_step_m" if grid_step_m is not None else "plan.grid_step_m"
        raise ArgumentError(f"`{key}` must give at most 4 million plan nodes; {step:g} m "
                            f"gives {x.size * y.size} over a plan {x1 - x0:.4g} m × "
                            f"{y1 - y0:.4g} m (set a coarser step, or check the plan's "
                            "units)", key, site.source_file or None)
    fmaps, fps, outside, outside_outer = _floor_maps(site, plan, x, y, thr_mT, u, progress)

    z_lo = min(f.elevation_m for f in plan.floors) - 1.0
    z_hi = max(f.band_z_m[1] for f in plan.floors) + 1.0
    secs: list[Section] = []
    for m in site.magnets:
        r_enc = m.enclosing_radius_m
        lo = min(z_lo, m.center_m[2] - r_enc - 0.5)
        hi = max(z_hi, m.center_m[2] + r_enc + 0.5)
        half = min(reach_m(m, min(thr_T)) + 1.0, 40.0)
        secs.extend(magnet_sections(site, m, half, (lo, hi), step, progress=progress))

    attraction = site_attraction(site, fmaps, secs)
    say(f"attraction zone done ({attraction.object_kind} object, {attraction.material})")
    implants = site_implants(site, s.gradient_lines_T_per_m)
    say("implant figures done (gradient maps, accessible maxima)")
    quench = tuple(budget_for_site(site, q) for q in quench_inputs)
    if quench:
        say("quench release budget done")
    rooms = check_rooms(site, plan.rooms, fmaps, fps, s.boundary, uncertainty=u)
    equip = check_equipment(site, plan.equipment, plan.floor_of_point, floors=plan.floors,
                            step_m=step, band_step_m=s.band_step_m, uncertainty=u)
    say("room and equipment verdicts done")
    whole = {name: full_height(site, fm, s.band_step_m, s.boundary.value_mT * 1e-3, thr_T,
                               attraction=attraction.floors.get(name),
                               object_kind=attraction.object_kind,
                               material=attraction.material, progress=progress)
             for name, fm in fmaps.items()}
    ceilings = room_ceilings(site, plan.rooms, rooms, fmaps,
                             {name: w.map for name, w in whole.items()}, uncertainty=u)
    say("whole storeys up to each ceiling done")
    moving = check_moving_steel(site)
    if moving:
        say("moving steel paths done")
    return ReportResult(site.name, site.source_file, plan, s.boundary, thr_mT, step, extent,
                        tuple(mags), fmaps, fps, outside, tuple(secs), rooms, equip, _now_utc(),
                        __version__, site, quench, attraction, implants, whole, ceilings,
                        moving, u, outside_outer, steel)


def magnet_summary(site, m, thresholds_mT, uncertainty: float = 0.0) -> MagnetSummary:
    """One magnet alone: centre field, extents, reach, limits for the field uncertainty,
    stored energy, moments, and the fit spread of a data-sheet magnet."""
    b0 = float(field_magnitude_T(m, np.asarray([m.center_m]))[0])
    bounds = tuple((t, *threshold_extents_m(m, t * 1e-3)) for t in thresholds_mT)
    reaches = tuple((t, *threshold_reach_m(m, t * 1e-3, extents_m=(a, rr)))
                    for t, a, rr in bounds)
    ranges = tuple((t, *threshold_extent_ranges_m(m, t * 1e-3, uncertainty, extents_m=(a, rr)))
                   for t, a, rr in bounds)
    q = zonal_moments_Am(m, 5)
    return MagnetSummary(m.name, m.center_m, m.axis, m.description, b0, bounds, m.origin,
                         stored_energy_J(m), m.dipole_moment_Am2,
                         (float(q[1]), float(q[3]), float(q[5])), reaches, ranges,
                         _fit_spread(site, m, thresholds_mT))


def _fit_spread(site, magnet, thresholds_mT):
    """The fit spread of a data-sheet magnet (None for a magnet given by coils)."""
    return magnet_fit_spread(magnet, thresholds_mT)


def drawn_site(site, thresholds_mT) -> object:
    """``site`` with each data-sheet magnet replaced by the model of its fit spread whose
    outermost plan line reaches farthest (fringe.analysis.fit_spread.outermost_magnet):
    the model the report's maps, sections and verdicts use. A site without data-sheet
    magnets is returned as it is."""
    if not any(m.datasheet is not None for m in site.magnets):
        return site
    mags = []
    for m in site.magnets:
        o = outermost_magnet(m, thresholds_mT)
        if o is not m:
            o = replace(o, description=o.description + (
                " Drawn with the model of its fit spread whose outermost line reaches "
                "farthest, not the best fit (docs/fit.md)."))
        mags.append(o)
    return replace(site, magnets=tuple(mags))


#: Largest plan grid step as a fraction of the boundary line's smallest extent. Marching
#: squares with linear interpolation misplaces a smooth contour by O(h²); measured on a
#: single-solenoid site (0.5 mT line reaching 1.8 m; footprint area against a 0.05 m grid):
#: +0.26 % at h/extent = 0.1, +0.5 % at 0.14, +2.5 % at 0.27, +12 % at 0.55. So 0.2 keeps
#: the area within about 1 %.
GRID_STEP_FRACTION_OF_EXTENT: float = 0.2


def _warn_if_grid_too_coarse(mags, boundary_mT: float, step_m: float, file: str) -> None:
    """A FringeWarning when the plan grid is too coarse to draw the boundary line."""
    import warnings

    from fringe.model.errors import FringeWarning

    for m in mags:
        for t, axial, radial in m.boundaries:
            if not math.isclose(t, boundary_mT, rel_tol=1e-9):
                continue
            reach = min(v for v in (axial, radial) if v > 0) if max(axial, radial) > 0 else 0
            need = GRID_STEP_FRACTION_OF_EXTENT * reach
            if reach > 0 and step_m > need:
                warnings.warn(
                    f"{file or 'scenario'}: `plan.grid_step_m` = {step_m:g} m is too coarse for "
                    f"the {t:g} mT line of {m.name!r}, which reaches {reach:.2f} m; its "
                    f"footprint may be misdrawn by more than ~1 %. Use at most {need:.2g} m.",
                    FringeWarning, stacklevel=3)
