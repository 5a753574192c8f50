"""The site report: compute every map, footprint and verdict, then write them.

:func:`compute_report` runs the computation (no files); :func:`write_report` writes,
into one folder swapped in atomically (:func:`fringe.io.atomic.atomic_directory`):

* ``summary.json`` — every number and verdict (:func:`summary_dict`);
* ``zones.geojson`` — footprints per floor and threshold, rooms and equipment points
  (:func:`zones_geojson`; coordinates in site metres, see docs/zones.md);
* ``rooms.csv``, ``equipment.csv`` — the verdict tables;
* ``plan-<floor>.png/.svg``, ``section-<magnet>.png/.svg`` and ``report.pdf`` — drawn
  by :mod:`fringe.render.drawing`.
"""

from __future__ import annotations

import contextlib
import csv
import datetime as _dt
import io
import json
import math
import os
import re
from collections.abc import Callable
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np
import shapely

from fringe.analysis.attraction import SiteAttraction, site_attraction
from fringe.analysis.quench import budget_for_site
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
from fringe.field.extents import threshold_extents_m
from fringe.field.multipole import zonal_moments_Am
from fringe.io.atomic import atomic_directory, check_output_folder
from fringe.io.forked import ForkedCall
from fringe.model.building import Boundary
from fringe.model.constants import ADVISORY_NOTICE
from fringe.model.constants import VERSION as __version__
from fringe.model.errors import FringeInputError, ScenarioError
from fringe.model.site import SitePlan, site_plan
from fringe.model.verdict import Verdict
from fringe.physics.energy import stored_energy_J
from fringe.physics.exposure import exposure_limits

__all__ = ["MagnetSummary", "ReportResult", "compute_report", "summary_dict", "zones_geojson",
           "check_grid_step_m", "rooms_csv", "equipment_csv", "write_report", "slug", "SITE_FRAME"]

Progress = Callable[[str], None] | None

#: How zones.geojson marks its coordinates (a foreign member, RFC 7946 Sec. 6.1): they
#: are site-frame metres, not WGS 84 longitude/latitude (RFC 7946 Sec. 4 "prior
#: arrangement").
SITE_FRAME: dict = {
    "type": "local site frame",
    "units": "m",
    "axes": "x east, y north (z up) as in the scenario file",
    "note": "coordinates are site metres, not WGS 84 longitude/latitude",
}


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
    #: (threshold_mT, axial_extent_m, radial_extent_m) per threshold, ascending.
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

    def floor_verdict(self, floor: str) -> Verdict:
        """``exceeds`` when the boundary footprint on ``floor`` reaches beyond its
        controlled rooms by more than :data:`SPILL_TOLERANCE_M2`, else ``within``."""
        spill = self.outside_controlled_m2.get(floor, 0.0)
        return Verdict.EXCEEDS if spill > SPILL_TOLERANCE_M2 else Verdict.WITHIN

    @property
    def exceeds(self) -> bool:
        """True when any room, equipment or floor verdict is ``exceeds``."""
        return (any(r.verdict == Verdict.EXCEEDS for r in self.rooms)
                or any(e.verdict == Verdict.EXCEEDS for e in self.equipment)
                or any(self.floor_verdict(f) == Verdict.EXCEEDS for f in self.floor_maps))

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
    thr_T = [t * 1e-3 for t in thr_mT]
    say = progress or (lambda msg: None)
    quench_inputs = tuple(site.quench)

    mags = []
    for m in site.magnets:
        b0 = float(field_magnitude_T(m, np.asarray([m.center_m]))[0])
        bounds = tuple((t, *threshold_extents_m(m, t * 1e-3)) for t in thr_mT)
        q = zonal_moments_Am(m, 5)
        mags.append(MagnetSummary(m.name, m.center_m, m.axis, m.description, b0, bounds,
                                  m.origin, stored_energy_J(m), m.dipole_moment_Am2,
                                  (float(q[1]), float(q[3]), float(q[5]))))
    say("extents of each threshold line done")
    _warn_if_grid_too_coarse(mags, s.boundary.value_mT, step, site.source_file)

    extent = s.extent_m or default_extent_m(site.magnets, plan.rooms, plan.equipment,
                                            min(thr_T), step_m=step)
    extent = tuple(tuple(round(v, 9) for v in corner) for corner in extent)
    x, y = plan_axes_m(extent, step)
    if x.size * y.size > 4_000_000:
        raise FringeInputError(f"`grid_step_m` must give at most 4 million plan nodes; "
                               f"{step:g} m gives {x.size * y.size}")
    fmaps: dict[str, FloorMap] = {}
    fps: dict[str, tuple[Footprint, ...]] = {}
    outside: dict[str, float] = {}
    for fl in plan.floors:
        fm = floor_map(site, fl, x, y, s.band_step_m, thr_T, progress=progress)
        fmaps[fl.name] = fm
        fps[fl.name] = footprints(fm, thr_mT)
        bfp = next(f for f in fps[fl.name]
                   if math.isclose(f.threshold_mT, s.boundary.value_mT, rel_tol=1e-9))
        outside[fl.name] = boundary_outside_controlled_m2(bfp, plan.rooms)

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
    quench = tuple(budget_for_site(site, q) for q in quench_inputs)
    if quench:
        say("quench release budget done")
    rooms = check_rooms(site, plan.rooms, fmaps, fps, s.boundary)
    equip = check_equipment(site, plan.equipment, plan.floor_of_point)
    say("room and equipment verdicts done")
    return ReportResult(site.name, site.source_file, plan, s.boundary, thr_mT, step, extent,
                        tuple(mags), fmaps, fps, outside, tuple(secs), rooms, equip, _now_utc(),
                        __version__, site, quench, attraction)


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


# -- machine-readable outputs --------------------------------------------------------------

def _num(v, nd: int = 6):
    """Round for JSON; None for non-finite."""
    if v is None:
        return None
    v = float(v)
    if not math.isfinite(v):
        return None
    return float(f"{v:.{nd}g}")


def _attraction_extents(r: ReportResult, magnet: str) -> dict | None:
    if r.attraction is None:
        return None
    for name, axial, radial in r.attraction.extents_m:
        if name == magnet:
            return {"axial_extent_m": _num(axial, 5), "radial_extent_m": _num(radial, 5)}
    return None


def _attraction_area(r: ReportResult, floor: str) -> dict | None:
    fa = None if r.attraction is None else r.attraction.floors.get(floor)
    if fa is None:
        return None
    fpp = fa.map.force_product_T2_per_m
    peak = float(np.nanmax(fpp)) if np.any(np.isfinite(fpp)) else 0.0
    return {"area_m2": _num(fa.area_m2, 5), "max_force_product_T2_per_m": _num(peak, 5)}


def _exposure_rows(r: ReportResult) -> list[dict]:
    return [{"name": e.name, "field_T": e.field_T, "applies_to": e.applies_to,
             "source": e.source} for e in exposure_limits(r.plan.settings.exposure_lines)]


def summary_dict(r: ReportResult) -> dict:
    """The content of ``summary.json`` (see docs/zones.md for every field)."""
    counts: dict[str, int] = {}
    for v in [x.verdict for x in r.rooms] + [e.verdict for e in r.equipment]:
        counts[v] = counts.get(v, 0) + 1
    att = r.attraction
    return {
        "advisory": ADVISORY_NOTICE,
        "tool": {"name": "fringe", "version": r.version},
        "created_utc": r.created_utc,
        "site": {"name": r.site_name, "scenario_file": r.scenario_file},
        "boundary": {"value_mT": r.boundary.value_mT, "source": r.boundary.source},
        "thresholds_mT": list(r.thresholds_mT),
        "grid": {"step_m": r.grid_step_m, "extent_m": [list(r.extent_m[0]), list(r.extent_m[1])],
                 "band_step_m": r.plan.settings.band_step_m,
                 "frame": "site frame: x east, y north, z up, m"},
        "magnets": [{
            "name": m.name, "center_m": list(m.center_m), "axis": list(m.axis),
            "description": m.description, "origin": m.origin,
            "center_field_T": _num(m.center_field_T),
            "stored_energy_J": _num(m.stored_energy_J),
            "dipole_moment_Am2": _num(m.dipole_moment_Am2),
            "zonal_moments": {"dipole_Am2": _num(m.zonal_moments[0]),
                              "l3_Am4": _num(m.zonal_moments[1]),
                              "l5_Am6": _num(m.zonal_moments[2])},
            "boundaries": [{"threshold_mT": t, "axial_extent_m": _num(a, 5),
                            "radial_extent_m": _num(rr, 5)} for t, a, rr in m.boundaries],
            "attraction": _attraction_extents(r, m.name),
        } for m in r.magnets],
        "floors": [{
            "name": name, "elevation_m": fm.floor.elevation_m,
            "occupied_band_m": [fm.floor.band_bottom_m, fm.floor.band_top_m],
            "band_levels_m": [round(float(z), 4) for z in fm.z_levels_m],
            "band_sampling_error_rel": _num(fm.band_error_rel, 3),
            "band_refinement_rel": _num(fm.band_correction_rel, 3),
            "max_field_T": _num(float(np.max(fm.envelope_T))),
            "boundary_outside_controlled_m2": _num(r.outside_controlled_m2[name], 4),
            "verdict": r.floor_verdict(name),
            "footprints": [{"threshold_mT": fp.threshold_mT, "area_m2": _num(fp.area_m2, 5),
                            "sampled_area_m2": _num(fp.sampled_area_m2, 5),
                            "clipped": fp.clipped} for fp in r.footprints[name]],
            "attraction": _attraction_area(r, name),
        } for name, fm in r.floor_maps.items()],
        "rooms": [{
            "name": c.name, "floor": c.floor, "access": c.access,
            "max_field_T": _num(c.max_field_T), "max_at_m": [_num(v, 5) for v in c.max_at_m],
            "limit_T": _num(c.limit_T), "limit_source": c.limit_source, "verdict": c.verdict,
            "area_above_m2": [{"threshold_mT": t, "area_m2": _num(a, 5)}
                              for t, a in c.area_above_m2],
        } for c in r.rooms],
        "equipment": [{
            "name": e.name, "position_m": list(e.position_m), "floor": e.floor,
            "field_T": _num(e.field_T), "limit_T": _num(e.limit_T), "verdict": e.verdict,
            "note": e.note,
        } for e in r.equipment],
        "quench": [b.to_dict() for b in r.quench],
        "attraction_criterion": None if att is None else {
            "object": att.object_kind, "material": att.material, "criterion": att.criterion},
        "exposure_limits": _exposure_rows(r),
        "verdict_counts": counts,
        "exceeds": r.exceeds,
    }


def _geometry(g) -> dict | None:
    if g is None or g.is_empty:
        return None
    g = shapely.set_precision(g, 0.001)  # mm; RFC 7946 Sec. 11.2 (limit precision)
    g = shapely.orient_polygons(g, exterior_cw=False)  # RFC 7946 Sec. 3.1.6 right-hand rule
    return json.loads(shapely.to_geojson(g))


def zones_geojson(r: ReportResult) -> dict:
    """A GeoJSON FeatureCollection (RFC 7946) of footprints, rooms and equipment.

    Coordinates are site-frame metres; the collection carries the foreign member
    ``"coordinate_frame"`` (:data:`SITE_FRAME`) saying so. Every feature has
    ``properties.kind`` = ``footprint``, ``attraction``, ``room`` or ``equipment``. A footprint of a
    threshold not reached on a floor has ``"geometry": null`` and area 0.
    """
    feats = []
    for name, fps in r.footprints.items():
        fl = r.floor_maps[name].floor
        for fp in fps:
            feats.append({"type": "Feature", "geometry": _geometry(fp.geometry),
                          "properties": {"kind": "footprint", "floor": name,
                                         "elevation_m": fl.elevation_m,
                                         "occupied_band_m": [fl.band_bottom_m, fl.band_top_m],
                                         "threshold_mT": fp.threshold_mT,
                                         "area_m2": _num(fp.area_m2, 5),
                                         "clipped": fp.clipped,
                                         "is_boundary": math.isclose(
                                             fp.threshold_mT, r.boundary.value_mT,
                                             rel_tol=1e-9)}})
    if r.attraction is not None:
        for name, fa in r.attraction.floors.items():
            feats.append({"type": "Feature", "geometry": _geometry(fa.geometry),
                          "properties": {"kind": "attraction", "floor": name,
                                         "area_m2": _num(fa.area_m2, 5),
                                         "object": r.attraction.object_kind,
                                         "material": r.attraction.material,
                                         "criterion": fa.criterion}})
    rooms = {room.name: room for room in r.plan.rooms}
    for c in r.rooms:
        feats.append({"type": "Feature", "geometry": _geometry(rooms[c.name].outline),
                      "properties": {"kind": "room", "name": c.name, "floor": c.floor,
                                     "access": c.access, "max_field_T": _num(c.max_field_T),
                                     "limit_T": _num(c.limit_T), "verdict": c.verdict}})
    for e in r.equipment:
        feats.append({"type": "Feature",
                      "geometry": {"type": "Point", "coordinates": list(e.position_m)},
                      "properties": {"kind": "equipment", "name": e.name, "floor": e.floor,
                                     "field_T": _num(e.field_T), "limit_T": _num(e.limit_T),
                                     "verdict": e.verdict}})
    return {"type": "FeatureCollection", "coordinate_frame": SITE_FRAME,
            "advisory": ADVISORY_NOTICE,
            "boundary": {"value_mT": r.boundary.value_mT, "source": r.boundary.source},
            "features": feats}


def _csv(rows: list[list]) -> str:
    buf = io.StringIO()
    csv.writer(buf, lineterminator="\n").writerows(rows)
    return buf.getvalue()


def rooms_csv(r: ReportResult) -> str:
    """The room verdict table as CSV (fields in mT)."""
    rows = [["room", "floor", "access", "max_field_mT", "limit_mT", "verdict", "limit_source"]]
    for c in r.rooms:
        rows.append([c.name, c.floor, c.access, f"{c.max_field_T * 1e3:.4g}",
                     "" if c.limit_T is None else f"{c.limit_T * 1e3:g}", c.verdict,
                     c.limit_source])
    return _csv(rows)


def equipment_csv(r: ReportResult) -> str:
    """The equipment verdict table as CSV (fields in mT)."""
    rows = [["equipment", "floor", "x_m", "y_m", "z_m", "field_mT", "limit_mT", "verdict",
             "note"]]
    for e in r.equipment:
        rows.append([e.name, e.floor, *(f"{v:g}" for v in e.position_m),
                     f"{e.field_T * 1e3:.4g}", f"{e.limit_T * 1e3:g}", e.verdict, e.note])
    return _csv(rows)


def slug(name: str, taken: set[str] | None = None) -> str:
    """A file-name-safe lower-case form of ``name`` (unique within ``taken``)."""
    s = re.sub(r"[^a-z0-9]+", "-", name.lower()).strip("-") or "unnamed"
    if taken is not None:
        base, i = s, 2
        while s in taken:
            s, i = f"{base}-{i}", i + 1
        taken.add(s)
    return s


# -- writing ---------------------------------------------------------------------------------

def write_report(r: ReportResult, out_dir: str | Path, *, drawings: bool = True,
                 progress: Progress = None) -> list[str]:
    """Write every output of ``r`` into ``out_dir`` atomically; returns the file names.

    The folder is built beside ``out_dir`` and swapped in only when complete; an
    existing ``out_dir`` is replaced whole.
    """
    say = progress or (lambda msg: None)
    check_output_folder(out_dir, scenario_file=r.scenario_file, marker="summary.json")
    with atomic_directory(out_dir) as tmp:
        (tmp / "summary.json").write_text(json.dumps(summary_dict(r), indent=2,
                                                     ensure_ascii=False) + "\n", "utf-8")
        (tmp / "zones.geojson").write_text(json.dumps(zones_geojson(r), ensure_ascii=False)
                                           + "\n", "utf-8")
        (tmp / "rooms.csv").write_text(rooms_csv(r), "utf-8")
        (tmp / "equipment.csv").write_text(equipment_csv(r), "utf-8")
        if drawings:  # the DXF drawings are written by a child while the sheets are built
            dxf = ForkedCall(write_zone_drawings, r, tmp)
            try:
                _write_drawings(r, tmp, say)
            except BaseException:
                with contextlib.suppress(BaseException):  # reap; the first error wins
                    dxf.result()
                raise
            dxf.result()
        else:
            write_zone_drawings(r, tmp)
        _usual_permissions(tmp)
        names = sorted(p.name for p in tmp.iterdir())
    return names


def write_zone_drawings(r: ReportResult, folder: str | Path) -> list[Path]:
    """One ``zones-<floor>.dxf`` per floor: footprints and attraction zone as DXF layers.

    A floor whose rooms were read from a DXF drawing (``[[room_file]] format = "dxf"``)
    gets a copy of that drawing with the zones added, in its units and frame; any other
    floor a new drawing in metres, site frame (:func:`fringe.io.dxf.write_zones_dxf`).
    """
    from fringe.io.dxf import ATTRACTION_LAYER, write_zones_dxf, zone_layer_name

    site_drawings = () if r.site is None else r.site.room_drawings
    taken: set[str] = set()
    written = []
    for name, fps in r.footprints.items():
        zones = {zone_layer_name(fp.threshold_mT): fp.geometry for fp in fps
                 if fp.geometry is not None and not fp.geometry.is_empty}
        notes = [f"Floor {name}: footprints of the field lines (largest |B| over the "
                 f"occupied band), boundary {r.boundary.value_mT:g} mT "
                 f"({r.boundary.source})."]
        fa = None if r.attraction is None else r.attraction.floors.get(name)
        if fa is not None and not fa.geometry.is_empty:
            zones[ATTRACTION_LAYER] = fa.geometry
            notes.append(f"{ATTRACTION_LAYER}: {fa.criterion}")
        source = next((d for d in site_drawings if name in d.floors), None)
        path = Path(folder) / f"zones-{slug(name, taken)}.dxf"
        write_zones_dxf(path, zones, template=None if source is None else source.path,
                        offset_m=(0.0, 0.0) if source is None else source.offset_m,
                        notes="\n".join(notes))
        written.append(path)
    return written


def _usual_permissions(folder: Path) -> None:
    """Give the folder and its files the modes a plain ``mkdir``/``open`` would (the
    temporary names were created private, 0700/0600)."""
    mask = os.umask(0)
    os.umask(mask)
    folder.chmod(0o777 & ~mask)
    for p in folder.iterdir():
        if p.is_file():
            p.chmod(0o666 & ~mask)


def magnet_plan_outline(magnet):
    """Plan footprint (shapely Polygon, m) of a magnet's windings: a rectangle along the
    plan projection of its axis, as long as its coils and as wide as their outer
    diameter (a square for a vertical axis)."""
    from fringe.render.drawing import footprint_rectangle

    z0 = min(c.z_min_m for c in magnet.coils)
    z1 = max(c.z_max_m for c in magnet.coils)
    ro = max(c.r_outer_m for c in magnet.coils)
    a = np.asarray(magnet.axis)
    mid = np.asarray(magnet.center_m) + a * (z0 + z1) / 2.0
    horiz = float(np.hypot(a[0], a[1]))
    length = (z1 - z0) * horiz + 2 * ro * abs(a[2])  # plan projection of the cylinder
    return footprint_rectangle(mid[:2], a[:2], max(length, 1e-3), 2 * ro)


def section_windings(magnet, sec: Section, step_m: float = 0.01):
    """Winding cross-sections of ``magnet`` in the (s, z) plane of ``sec``.

    Returns ``(polygon, projected)``: the windings cut by the section plane, or — when
    the plane passes between coils (e.g. the centre plane across the axis) — their
    projection onto it (``projected`` True). Traced on a ``step_m`` grid.
    """
    r = magnet.enclosing_radius_m + 2 * step_m
    s = np.arange(-r, r + step_m / 2, step_m)
    z = magnet.center_m[2] + s
    S, Z = np.meshgrid(s, z)
    c = np.asarray(magnet.center_m)
    pts = np.column_stack([c[0] + S.ravel() * sec.unit[0], c[1] + S.ravel() * sec.unit[1],
                           Z.ravel()])
    inside = magnet.contains_points(pts).reshape(S.shape)
    projected = False
    if not inside.any():
        loc = magnet.to_local(pts)
        rho = np.hypot(loc[:, 0], loc[:, 1])
        inside = np.zeros(len(pts), dtype=bool)
        for coil in magnet.coils:
            inside |= (rho >= coil.r_inner_m) & (rho <= coil.r_outer_m)
        inside = inside.reshape(S.shape)
        projected = True
    from fringe.analysis.zones import superlevel_polygons

    return superlevel_polygons(s, z, inside.astype(float), 0.5), projected


#: Legend text of the attraction-hazard zone on plan and section sheets.
ATTRACTION_ZONE_LABEL = "attraction zone: magnetic pull on loose steel exceeds its weight"


#: Levels of the force-product sheet, T²/m: decades around the unsaturated soft-iron
#: sphere's pull-equals-weight level μ₀ρg/3 = 0.0323 T²/m (docs/hazards.md).
FORCE_PRODUCT_LEVELS_T2_PER_M: tuple[float, ...] = (0.001, 0.01, 0.1, 1.0, 10.0)


def _force_product_sheet(r: ReportResult, sec, att_section, windings, s_label, base):
    """Section sheet of B·|∇|B|| (T²/m) with the attraction zone (PDF only)."""
    from fringe.render import drawing as dr

    amap, zone = att_section
    overlays = [] if zone.is_empty else [dr.Overlay(ATTRACTION_ZONE_LABEL, zone, "hazard")]
    info = dr.SheetInfo(title=f"Force product along the axis of {sec.magnet}",
                        subtitle="B·|∇|B|| in the vertical plane through the magnet centre; "
                                 "the pull on soft iron grows with it", **base)
    notes = [f"{r.attraction.criterion} (hatched).",
             "B·|∇|B|| sets the unsaturated pull, F = (χ_eff V/μ₀)·B·|∇|B||; an iron sphere "
             "(χ_eff = 3) is held by its weight below μ₀ρg/3 = 0.0323 T²/m.",
             "Blank where not evaluated: beyond 1.5× the zone's reach and in the windings."]
    # the window: where the map was evaluated (within reach of the magnet), plus a margin
    u, v, fp = amap.u_m, amap.v_m, amap.force_product_T2_per_m
    rows, cols = np.nonzero(np.isfinite(fp))
    if rows.size:
        pad_u = max(2, int(0.15 * (cols.max() - cols.min())))
        pad_v = max(2, int(0.15 * (rows.max() - rows.min())))
        c0, c1 = max(cols.min() - pad_u, 0), min(cols.max() + pad_u + 1, u.size)
        r0, r1 = max(rows.min() - pad_v, 0), min(rows.max() + pad_v + 1, v.size)
        u, v, fp = u[c0:c1], v[r0:r1], fp[r0:r1, c0:c1]
    fig = dr.map_sheet(u, v, fp,
                       FORCE_PRODUCT_LEVELS_T2_PER_M, info, unit="T²/m", quantity="B·|∇|B||",
                       overlays=overlays, windings=windings, notes=notes,
                       x_label=s_label, y_label="z (up), m", north_arrow=False)
    return (None, fig)


def _boundary_note(r: ReportResult) -> str:
    return (f"Controlled access area boundary: {r.boundary.value_mT:g} mT "
            f"({r.boundary.source})")


def build_sheets(r: ReportResult, say: Progress = None) -> list[tuple[str | None, object]]:
    """Every sheet of the report in PDF order, as ``(file stem or None, Figure)``.

    Plans (``plan-<floor>``) and sections (``section-<magnet>`` along the axis,
    ``section-<magnet>-across``) have a stem and are also written as PNG and SVG; the
    cover and the table sheets (stem None) go into report.pdf only.
    """
    from fringe.render import drawing as dr

    say = say or (lambda msg: None)

    date = r.created_utc[:10]
    mag_names = tuple(m.name for m in r.magnets)
    model_notes = tuple(f"{m.name}: {m.description}" for m in r.magnets
                        if m.origin != "coils" and m.description)
    base = dict(site_name=r.site_name, magnets=mag_names, date_iso=date,
                tool_version=f"fringe {r.version}", boundary_note=_boundary_note(r),
                notes=model_notes)
    site_mags = {m.name: m for m in r.site.magnets} if r.site is not None else {}
    plan = r.plan
    sheets: list[tuple[str | None, object]] = []  # (file stem or None, figure)

    # cover
    facts = [("Site", r.site_name), ("Scenario", Path(r.scenario_file).name or "-"),
             ("Boundary", f"{r.boundary.value_mT:g} mT ({r.boundary.source})"),
             ("Thresholds", ", ".join(f"{t:g}" for t in r.thresholds_mT) + " mT"),
             ("Plan grid", f"{r.grid_step_m:g} m; occupied band sampled every "
                           f"{plan.settings.band_step_m:g} m or finer")]
    for m in r.magnets:
        b = next((x for x in m.boundaries
                  if math.isclose(x[0], r.boundary.value_mT, rel_tol=1e-9)), None)
        ext = (f"; {b[0]:g} mT line {b[1]:.2f} m along, {b[2]:.2f} m across the axis"
               if b else "")
        facts.append((f"Magnet {m.name}", f"centre field {m.center_field_T:.3g} T{ext}; "
                      f"stored energy {m.stored_energy_J / 1e6:.3g} MJ"))
        if m.description:
            facts.append((f"  model of {m.name}", m.description))
        att = _attraction_extents(r, m.name)
        if att is not None:
            facts.append((f"  attraction zone of {m.name}",
                          f"{att['axial_extent_m']:.2f} m along, {att['radial_extent_m']:.2f} m "
                          "across the axis (pull on loose steel exceeds its weight)"))
    if r.attraction is not None:
        facts.append(("Attraction criterion", r.attraction.criterion))
    findings = []
    for fl, area in r.outside_controlled_m2.items():
        if area > 0.005:
            findings.append(f"{fl} floor: {area:.2f} m² of the {r.boundary.value_mT:g} mT "
                            "footprint lies outside the controlled rooms")
    for c in r.rooms:
        lim = "" if c.limit_T is None else f" (limit {c.limit_T * 1e3:g} mT)"
        findings.append(f"Room {c.name} ({c.floor} floor): largest field "
                        f"{dr.format_value(c.max_field_T * 1e3)} mT{lim}: {c.verdict}")
    for e in r.equipment:
        findings.append(f"Equipment {e.name}: {dr.format_value(e.field_T * 1e3)} mT at its "
                        f"position (limit {e.limit_T * 1e3:g} mT): {e.verdict}")
    if len(findings) > 24:  # keep the cover to one sheet; the tables list everything
        keep = [f for f in findings if Verdict.EXCEEDS in f or "outside the controlled" in f]
        findings = keep[:22] + [f"{len(findings) - len(keep[:22])} further finding(s) "
                                "within limits or in controlled rooms: see the tables"]
    sheets.append((None, dr.cover_sheet(
        dr.SheetInfo(title="Static stray field: controlled-zone drawings and checks",
                     subtitle="Footprints are the largest |B| over each floor's occupied "
                              "band; verdicts per room and equipment point", **base),
        facts, findings)))

    # plans
    room_drawings = () if r.site is None else r.site.room_drawings
    taken: set[str] = set()
    for name, fm in r.floor_maps.items():
        say(f"drawing the plan of floor {name!r}")
        fl = fm.floor
        rooms = [dr.RoomMark(c.name, next(x.outline for x in plan.rooms if x.name == c.name),
                             c.access, c.verdict, c.max_field_T, c.limit_T)
                 for c in r.rooms if c.floor == name]
        equip = [dr.EquipmentMark(e.name, (e.position_m[0], e.position_m[1]), e.field_T,
                                  e.limit_T, e.verdict)
                 for e in r.equipment if e.floor == name]
        mags, overlays = [], []
        for m in site_mags.values():
            poly = magnet_plan_outline(m)
            home = plan.floor_of_point(m.center_m[2]).name
            if home == name:
                mags.append(dr.MagnetOutline(m.name, poly))
            else:
                overlays.append(dr.Overlay(f"{m.name} on the {home} floor (outline)",
                                           poly.exterior, "outline"))
        walls = [w for d in room_drawings if name in d.floors for w in d.walls]
        if walls:
            lines = [w.boundary if w.geom_type.endswith("Polygon") else w for w in walls]
            overlays.insert(0, dr.Overlay("walls (from the floor's DXF drawing)",
                                          shapely.union_all(lines), "wall"))
        fa = None if r.attraction is None else r.attraction.floors.get(name)
        if fa is not None and not fa.geometry.is_empty:
            overlays.append(dr.Overlay(ATTRACTION_ZONE_LABEL, fa.geometry, "hazard"))
        clipped = [f"{fp.threshold_mT:g}" for fp in r.footprints[name] if fp.clipped]
        notes = [f"Coordinates: site frame, x east, y north, m. Grid step {r.grid_step_m:g} m.",
                 f"Occupied band {fl.band_bottom_m:g} to {fl.band_top_m:g} m above the floor "
                 f"at {fl.elevation_m:g} m, sampled at {fm.z_levels_m.size} levels"
                 + (f" and refined near peaks (raising |B| by up to "
                    f"{100 * fm.band_correction_rel:.2g} %)" if fm.band_correction_rel > 0
                    else "") + f"; estimated remaining error of |B| "
                 f"{100 * fm.band_error_rel:.2g} %.",
                 f"Area of the {r.boundary.value_mT:g} mT footprint outside controlled rooms: "
                 f"{r.outside_controlled_m2[name]:.2f} m²."]
        if fa is not None:
            notes.append(f"{fa.criterion}. Hatched: largest pull over the band levels; "
                         f"zone area {fa.area_m2:.2f} m².")
        if clipped:
            notes.append(f"The {', '.join(clipped)} mT footprint(s) reach the edge of the "
                         "drawing: enlarge plan.extent_m to see them whole.")
        floor_word = name if name.lower().endswith("floor") else f"{name} floor"
        info = dr.SheetInfo(title=f"Floor plan: {floor_word}",
                            subtitle=f"Floor level {fl.elevation_m:g} m. Largest |B| over the "
                                     f"occupied band {fl.band_bottom_m:g} to "
                                     f"{fl.band_top_m:g} m above the floor", **base)
        fig = dr.plan_sheet(fm.x_m, fm.y_m, fm.envelope_T, info,
                            thresholds_mT=r.thresholds_mT, boundary_mT=r.boundary.value_mT,
                            rooms=rooms, equipment=equip, magnets=mags, overlays=overlays,
                            notes=notes)
        sheets.append((f"plan-{slug(name, taken)}", fig))

    # sections
    exposure = dr.exposure_lines_from_registry(plan.settings.exposure_lines)
    force_sheets: list[tuple[None, object]] = []  # PDF only, after the sections
    for k, sec in enumerate(r.sections):
        say(f"drawing the section {sec.direction} the axis of {sec.magnet!r}")
        sec_overlays = []
        sec_notes = []
        if r.attraction is not None and k < len(r.attraction.sections):
            zone = r.attraction.sections[k][1]
            if not zone.is_empty:
                sec_overlays.append(dr.Overlay(ATTRACTION_ZONE_LABEL, zone, "hazard"))
            sec_notes.append(f"{r.attraction.criterion} (hatched).")
        m = site_mags.get(sec.magnet)
        windings = []
        notes = [f"Vertical plane through the centre of {sec.magnet}, {sec.direction} its "
                 f"axis; s = 0 at the centre, increasing towards site direction "
                 f"({round(float(sec.unit[0]), 6) + 0.0:.2f}, "
                 f"{round(float(sec.unit[1]), 6) + 0.0:.2f}) in (x, y). Grid step "
                 f"{r.grid_step_m:g} m. Fields of all magnets superposed."]
        if m is not None:
            poly, projected = section_windings(m, sec)
            if not poly.is_empty:
                windings.append(dr.MagnetOutline(m.name, poly))
                if projected:
                    notes.append("The section plane passes between the coils; the windings "
                                 "are drawn projected onto it.")
        vertical = m is not None and math.hypot(m.axis[0], m.axis[1]) < 1e-9
        if vertical:
            s_label = f"s towards +{'x (east)' if sec.direction == 'along' else 'y (north)'}, m"
            notes.append("The axis is vertical: both planes contain it; they run east-west "
                         "and north-south.")
        else:
            s_label = f"s {sec.direction} the magnet axis, m"
        info = dr.SheetInfo(title=f"Section {sec.direction} the axis of {sec.magnet}",
                            subtitle="|B| in the vertical plane through the magnet centre",
                            **base)
        fig = dr.section_sheet(sec.s_m, sec.z_m, sec.field_T, info,
                               thresholds_mT=r.thresholds_mT, boundary_mT=r.boundary.value_mT,
                               floors=list(plan.floors), windings=windings,
                               notes=notes + sec_notes, s_label=s_label,
                               exposure_lines=exposure, overlays=sec_overlays)
        stem = sec.magnet if sec.direction == "along" else f"{sec.magnet}-{sec.direction}"
        sheets.append((f"section-{slug(stem, taken)}", fig))
        if (sec.direction == "along" and r.attraction is not None
                and k < len(r.attraction.sections)):
            force_sheets.append(_force_product_sheet(r, sec, r.attraction.sections[k],
                                                     windings, s_label, base))

    sheets.extend(force_sheets)

    # tables
    info_t = dr.SheetInfo(title="Tables: rooms, equipment, field-line extents", **base)
    room_rows = [[c.name, c.floor, c.access, c.max_field_T * 1e3,
                  "-" if c.limit_T is None else c.limit_T * 1e3, c.verdict,
                  next((a for t, a in c.area_above_m2
                        if math.isclose(t, r.boundary.value_mT, rel_tol=1e-9)), 0.0)]
                 for c in r.rooms]
    tables = [("Rooms", ["room", "floor", "access", "largest field, mT", "limit, mT",
                         "verdict", f"area above {r.boundary.value_mT:g} mT, m²"], room_rows)]
    if r.equipment:
        tables.append((
            "Equipment", ["equipment", "floor", "x, m", "y, m", "z, m", "field, mT",
                          "limit, mT", "verdict", "note"],
            [[e.name, e.floor, *e.position_m, e.field_T * 1e3, e.limit_T * 1e3, e.verdict,
              e.note] for e in r.equipment]))
    tables.append((
        "Field-line extents of each magnet alone (outermost crossing)",
        ["magnet", "threshold, mT", "along the axis, m", "across the axis, m"],
        [[m.name, t, a, rr] for m in r.magnets for t, a, rr in m.boundaries]))
    tables.append((
        "Magnets: stored energy and far-field zonal moments",
        ["magnet", "centre field, T", "stored energy, MJ", "dipole, A·m²", "l = 3, A·m⁴",
         "l = 5, A·m⁶", "model"],
        [[m.name, m.center_field_T, m.stored_energy_J / 1e6, *m.zonal_moments,
          "coils from the scenario" if m.origin == "coils" else m.origin] for m in r.magnets]))
    if r.attraction is not None:
        tables.append((
            f"Attraction zone ({r.attraction.object_kind} object, {r.attraction.material})",
            ["magnet or floor", "along the axis, m", "across the axis, m", "zone area, m²"],
            [[n, a, rr, "-"] for n, a, rr in r.attraction.extents_m]
            + [[f"{n} floor", "-", "-", fa.area_m2] for n, fa in r.attraction.floors.items()]))
    tables.append((
        "Footprint areas per floor",
        ["floor", "threshold, mT", "area, m²", "area from sampled levels only, m²",
         "reaches drawing edge"],
        [[fp.floor, fp.threshold_mT, fp.area_m2, fp.sampled_area_m2,
          "yes" if fp.clipped else "no"] for fps in r.footprints.values() for fp in fps]))
    # energy density (fringe.physics.energy) and quench budgets (fringe.physics.quench)
    if r.site is not None:
        from fringe.cli.energy import energy_density_sheets

        say("drawing the energy-density maps")
        sheets.extend(energy_density_sheets(r.site))
    for b in r.quench:
        from fringe.render.quench import quench_sheets

        say(f"drawing the quench release budget of {b.magnet!r}")
        sheets.extend((None, f) for f in quench_sheets(b, r.site_name, date_iso=date))
    return sheets + [(None, f) for f in dr.tables_sheets(tables, info_t)]


def _write_drawings(r: ReportResult, folder: Path, say) -> None:
    """Plan and section sheets (PNG, SVG) and report.pdf through :mod:`fringe.render.drawing`.

    report.pdf is written by a forked child (:mod:`fringe.io.forked`) while this process
    writes the PNG and SVG files: the two halves take about as long, and rendering holds
    the interpreter lock, so a second process is what uses the second core. The sheets
    are numbered here first, so the PDF and the single files carry the same numbers.
    """
    from fringe.render import drawing as dr

    sheets = build_sheets(r, say)
    figures = dr.number_sheets([f for _, f in sheets])
    say("writing report.pdf and the sheet files")
    pdf = ForkedCall(dr.write_pdf, figures, folder / "report.pdf",
                     title=f"{r.site_name}: stray-field report")
    try:
        for stem, fig in sheets:
            if stem is None:
                continue
            dr.save_figure(fig, folder / f"{stem}.png")
            if stem.startswith("energy-"):  # energy maps: PNG and PDF only
                say(f"wrote {stem}.png")
                continue
            dr.save_figure(fig, folder / f"{stem}.svg")
            say(f"wrote {stem}.png and .svg")
    except BaseException:
        with contextlib.suppress(BaseException):  # reap the child; the first error wins
            pdf.result()
        raise
    pdf.result()
    say("wrote report.pdf")
