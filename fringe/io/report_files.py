"""The report's tables and JSON files: summary.json, zones.geojson, rooms.csv, equipment.csv.

Builders turn a computed :class:`fringe.analysis.report.ReportResult` into the content
of each file (:func:`summary_dict`, :func:`zones_geojson`, :func:`rooms_csv`,
:func:`equipment_csv`); :func:`write_report_tables` writes them into a folder.
Every key is documented in docs/zones.md (and with units in docs/outputs.md).
"""

from __future__ import annotations

import csv
import io
import json
import math
import re
from pathlib import Path

import numpy as np
import shapely

from fringe.analysis.report import ReportResult
from fringe.model.constants import ADVISORY_NOTICE, FIELD_BASIS_NOTE
from fringe.physics.exposure import exposure_limits

__all__ = ["SITE_FRAME", "summary_dict", "zones_geojson", "rooms_csv", "equipment_csv",
           "write_report_tables", "slug", "num", "attraction_extents", "geojson_geometry",
           "csv_text", "REPORT_TABLE_FILES"]

#: How zones.geojson marks its coordinates (a foreign member, RFC 7946 Sec. 6.1): they
#: are site-frame metres, not WGS 84 longitude/latitude (RFC 7946 Sec. 4 "prior
#: arrangement").
SITE_FRAME: dict = {
    "type": "local site frame",
    "units": "m",
    "axes": "x east, y north (z up) as in the scenario file",
    "note": "coordinates are site metres, not WGS 84 longitude/latitude",
}



def num(v, nd: int = 6) -> float | None:
    """Round for JSON; None for non-finite."""
    if v is None:
        return None
    v = float(v)
    if not math.isfinite(v):
        return None
    return float(f"{v:.{nd}g}")


def attraction_extents(r: ReportResult, magnet: str) -> dict | None:
    """Extents of ``magnet``'s attraction zone as in summary.json (None without one)."""
    if r.attraction is None:
        return None
    for name, axial, radial in r.attraction.extents_m:
        if name == magnet:
            return {"axial_extent_m": num(axial, 5), "radial_extent_m": num(radial, 5)}
    return None


def _attraction_area(r: ReportResult, floor: str) -> dict | None:
    fa = None if r.attraction is None else r.attraction.floors.get(floor)
    if fa is None:
        return None
    fpp = fa.map.force_product_T2_per_m
    peak = float(np.nanmax(fpp)) if np.any(np.isfinite(fpp)) else 0.0
    return {"area_m2": num(fa.area_m2, 5), "max_force_product_T2_per_m": num(peak, 5)}


def _boundary_entry(m, t: float, axial: float, radial: float) -> dict:
    """One threshold line of a magnet in summary.json: centre-plane and on-axis extents,
    and its reach anywhere (largest distance from the axis and along it)."""
    out = {"threshold_mT": t, "axial_extent_m": num(axial, 5), "radial_extent_m": num(radial, 5)}
    rng = m.boundary_range(t)
    if rng is not None:  # [inner, outer] limits for the plan's field uncertainty
        out["axial_extent_range_m"] = [num(v, 5) for v in rng[0]]
        out["radial_extent_range_m"] = [num(v, 5) for v in rng[1]]
    reach = m.reach(t)
    if reach is not None:
        out["max_reach_m"] = num(reach[0], 5)
        out["max_reach_axial_m"] = num(reach[1], 5)
    return out


def _full_height(r: ReportResult, floor: str) -> dict | None:
    """A floor's whole storey (floor level to ceiling) in summary.json."""
    w = r.full_height.get(floor)
    if w is None:
        return None
    return {"max_field_T": num(w.max_field_T), "boundary_area_m2": num(w.boundary_area_m2, 5),
            "attraction_area_m2": num(w.attraction_area_m2, 5)}


def _ceiling_exceeds(r: ReportResult, room: str) -> bool:
    """True when a room's full-height maximum reaches its limit above (or below) its band."""
    c = r.ceilings.get(room)
    return bool(c is not None and c.ceiling_exceeds)


def _ceiling_marginal(r: ReportResult, room: str) -> bool:
    """True when only the uncertainty band of a room's full-height maximum reaches its
    limit (fringe.analysis.storey.RoomCeiling.ceiling_marginal)."""
    c = r.ceilings.get(room)
    return bool(c is not None and getattr(c, "ceiling_marginal", False))


def _fit_spread(m) -> dict | None:
    """``magnets[].fit_spread`` (None for a magnet given by coils)."""
    sp = m.fit_spread
    return None if sp is None else sp.to_dict()


def _exposure_rows(r: ReportResult) -> list[dict]:
    return [{"name": e.name, "field_T": e.field_T, "applies_to": e.applies_to,
             "source": e.source} for e in exposure_limits(r.plan.settings.exposure_lines)]


def summary_dict(r: ReportResult) -> dict:
    """The content of ``summary.json`` (see docs/zones.md for every field)."""
    counts: dict[str, int] = {}  # every item with a verdict: rooms, equipment, floors
    for v in ([x.verdict for x in r.rooms] + [e.verdict for e in r.equipment]
              + [r.floor_verdict(f) for f in r.floor_maps]
              + [c.verdict for c in r.moving_steel if c.verdict is not None]):
        counts[v] = counts.get(v, 0) + 1
    att = r.attraction
    out = {
        "advisory": ADVISORY_NOTICE,
        "field_basis": FIELD_BASIS_NOTE,
        "tool": {"name": "fringe", "version": r.version},
        "created_utc": r.created_utc,
        "site": {"name": r.site_name, "scenario_file": r.scenario_file},
        "boundary": {"value_mT": r.boundary.value_mT, "source": r.boundary.source},
        "thresholds_mT": list(r.thresholds_mT),
        "field_uncertainty": r.uncertainty,
        "grid": {"step_m": r.grid_step_m, "extent_m": [list(r.extent_m[0]), list(r.extent_m[1])],
                 "band_step_m": r.plan.settings.band_step_m,
                 "frame": "site frame: x east, y north, z up, m"},
        "magnets": [{
            "name": m.name, "center_m": list(m.center_m), "axis": list(m.axis),
            "description": m.description, "origin": m.origin,
            "center_field_T": num(m.center_field_T),
            "stored_energy_J": num(m.stored_energy_J),
            "dipole_moment_Am2": num(m.dipole_moment_Am2),
            "zonal_moments": {"dipole_Am2": num(m.zonal_moments[0]),
                              "l3_Am4": num(m.zonal_moments[1]),
                              "l5_Am6": num(m.zonal_moments[2])},
            "boundaries": [_boundary_entry(m, t, a, rr) for t, a, rr in m.boundaries],
            "attraction": attraction_extents(r, m.name),
            "fit_spread": _fit_spread(m),
        } for m in r.magnets],
        "floors": [{
            "name": name, "elevation_m": fm.floor.elevation_m,
            "occupied_band_m": [fm.floor.band_bottom_m, fm.floor.band_top_m],
            "band_levels_m": [round(float(z), 4) for z in fm.z_levels_m],
            "band_sampling_error_rel": num(fm.band_error_rel, 3),
            "band_refinement_rel": num(fm.band_correction_rel, 3),
            "max_field_T": num(float(np.max(fm.envelope_T))),
            "boundary_outside_controlled_m2": num(r.outside_controlled_m2[name], 4),
            "boundary_outer_outside_controlled_m2":
                num(r.outside_controlled_outer_m2.get(name, r.outside_controlled_m2[name]), 4),
            "verdict": r.floor_verdict(name),
            "footprints": [{"threshold_mT": fp.threshold_mT, "area_m2": num(fp.area_m2, 5),
                            "sampled_area_m2": num(fp.sampled_area_m2, 5),
                            "clipped": fp.clipped} for fp in r.footprints[name]],
            "attraction": _attraction_area(r, name),
            "full_height": _full_height(r, name),
        } for name, fm in r.floor_maps.items()],
        "rooms": [{
            "name": c.name, "floor": c.floor, "access": c.access,
            "max_field_T": num(c.max_field_T), "max_at_m": [num(v, 5) for v in c.max_at_m],
            "limit_T": num(c.limit_T), "limit_source": c.limit_source, "verdict": c.verdict,
            "area_above_m2": [{"threshold_mT": t, "area_m2": num(a, 5)}
                              for t, a in c.area_above_m2],
            "ceiling_exceeds": _ceiling_exceeds(r, c.name),
            "ceiling_marginal": _ceiling_marginal(r, c.name),
        } for c in r.rooms],
        "equipment": [{
            "name": e.name, "position_m": list(e.position_m), "floor": e.floor,
            "field_T": num(e.field_T), "limit_T": num(e.limit_T), "verdict": e.verdict,
            "note": e.note, **_volume_keys(e),
        } for e in r.equipment],
        "quench": [b.to_dict() for b in r.quench],
        "attraction_criterion": None if att is None else {
            "object": att.object_kind, "material": att.material, "criterion": att.criterion},
        "exposure_limits": _exposure_rows(r),
        "verdict_counts": counts,
        "exceeds": r.exceeds,
    }
    _add_implant_figures(out, r)
    out["moving_steel"] = moving_steel_rows(r)
    _add_steel(out, r)
    return out


def moving_steel_rows(r: ReportResult) -> list[dict]:
    """``moving_steel`` of summary.json: each path's largest disturbance of the isocentre
    field of the magnet nearest it, its limit and verdict (null: no limit, not checked);
    docs/disturbance.md."""
    rows = []
    for c in r.moving_steel:
        d = c.disturbance
        rows.append({"name": c.name, "max_abs_delta_B_ppm": num(d.max_abs_delta_B_ppm, 9),
                     "limit_ppm": c.limit_ppm, "verdict": c.verdict, "magnet": d.magnet,
                     "mass_kg": d.mass_kg,
                     "worst_position_m": [num(v, 5) for v in d.positions_m[d.worst_index]],
                     "background_field_uT": [num(v * 1e6, 6) for v in d.background_T]})
    return rows


def _add_steel(out: dict, r: ReportResult) -> None:
    """``steel`` (one entry per solved [[steel]] part) and ``steel_notes`` (docs/steel.md)."""
    from fringe.analysis.steel import steel_notes

    parts = tuple(getattr(r, "steel", ()))
    out["steel"] = [{"name": p.name, "mass_kg": num(p.mass_kg, 5),
                     "max_field_in_steel_T": num(p.max_field_in_steel_T),
                     "saturated": bool(p.saturated),
                     "force_N": [num(v, 5) for v in p.force_N]} for p in parts]
    out["steel_notes"] = steel_notes(parts)


def _add_implant_figures(out: dict, r: ReportResult) -> None:
    """``magnets[].accessible_maxima`` and ``implant_conditions`` (docs/implants.md)."""
    imp = r.implants
    for m in out["magnets"]:
        mx = None if imp is None else imp.maxima.get(m["name"])
        m["accessible_maxima"] = None if mx is None else {k: v.to_dict() for k, v in mx.items()}
    out["implant_conditions"] = [] if imp is None else [c.to_dict() for c in imp.conditions]


def geojson_geometry(g) -> dict | None:
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
            feats.append({"type": "Feature", "geometry": geojson_geometry(fp.geometry),
                          "properties": {"kind": "footprint", "floor": name,
                                         "elevation_m": fl.elevation_m,
                                         "occupied_band_m": [fl.band_bottom_m, fl.band_top_m],
                                         "threshold_mT": fp.threshold_mT,
                                         "area_m2": num(fp.area_m2, 5),
                                         "clipped": fp.clipped,
                                         "is_boundary": math.isclose(
                                             fp.threshold_mT, r.boundary.value_mT,
                                             rel_tol=1e-9)}})
    if r.attraction is not None:
        for name, fa in r.attraction.floors.items():
            feats.append({"type": "Feature", "geometry": geojson_geometry(fa.geometry),
                          "properties": {"kind": "attraction", "floor": name,
                                         "area_m2": num(fa.area_m2, 5),
                                         "object": r.attraction.object_kind,
                                         "material": r.attraction.material,
                                         "criterion": fa.criterion}})
    rooms = {room.name: room for room in r.plan.rooms}
    for c in r.rooms:
        feats.append({"type": "Feature", "geometry": geojson_geometry(rooms[c.name].outline),
                      "properties": {"kind": "room", "name": c.name, "floor": c.floor,
                                     "access": c.access, "max_field_T": num(c.max_field_T),
                                     "limit_T": num(c.limit_T), "verdict": c.verdict}})
    for e in r.equipment:
        geom = ({"type": "Point", "coordinates": list(e.position_m)} if e.outline is None
                else geojson_geometry(e.outline))
        props = {"kind": "equipment", "name": e.name, "floor": e.floor,
                 "field_T": num(e.field_T), "limit_T": num(e.limit_T), "verdict": e.verdict}
        if e.class_name is not None:
            props["class"] = e.class_name
        feats.append({"type": "Feature", "geometry": geom, "properties": props})
    return {"type": "FeatureCollection", "coordinate_frame": SITE_FRAME,
            "advisory": ADVISORY_NOTICE, "field_basis": FIELD_BASIS_NOTE,
            "boundary": {"value_mT": r.boundary.value_mT, "source": r.boundary.source},
            "features": feats}


def _volume_keys(e) -> dict:
    """Extra keys of an equipment entry: ``class`` where given; for a volume its
    ``outline_m`` ([x, y] points), ``height_m`` (``position_m`` is then where its
    largest field is)."""
    d: dict = {}
    if e.class_name is not None:
        d["class"] = e.class_name
    if e.outline is not None:
        d["outline_m"] = [[num(x, 6), num(y, 6)] for x, y in e.outline.exterior.coords]
        d["height_m"] = e.height_m
    return d


def csv_text(rows: list[list]) -> str:
    buf = io.StringIO()
    csv.writer(buf, lineterminator="\n").writerows(rows)
    return buf.getvalue()


def rooms_csv(r: ReportResult) -> str:
    """The room verdict table as CSV (fields in mT)."""
    rows = [["room", "floor", "access", "max_field_mT", "limit_mT", "verdict", "limit_source",
             "ceiling_exceeds"]]
    for c in r.rooms:
        rows.append([c.name, c.floor, c.access, f"{c.max_field_T * 1e3:.4g}",
                     "" if c.limit_T is None else f"{c.limit_T * 1e3:g}", c.verdict,
                     c.limit_source, "true" if _ceiling_exceeds(r, c.name) else "false"])
    return csv_text(rows)


def equipment_csv(r: ReportResult) -> str:
    """The equipment verdict table as CSV (fields in mT)."""
    classes = any(e.class_name is not None for e in r.equipment)
    rows = [["equipment", "floor", "x_m", "y_m", "z_m", "field_mT", "limit_mT", "verdict",
             "note"] + (["class"] if classes else [])]
    for e in r.equipment:
        rows.append([e.name, e.floor, *(f"{v:g}" for v in e.position_m),
                     f"{e.field_T * 1e3:.4g}", f"{e.limit_T * 1e3:g}", e.verdict, e.note]
                    + ([e.class_name or ""] if classes else []))
    return csv_text(rows)


def slug(name: str, taken: set[str] | None = None) -> str:
    """A file-name-safe lower-case form of ``name`` (unique within ``taken``)."""
    s = re.sub(r"[^a-z0-9]+", "-", name.lower()).strip("-") or "unnamed"
    if taken is not None:
        base, i = s, 2
        while s in taken:
            s, i = f"{base}-{i}", i + 1
        taken.add(s)
    return s


#: The table files :func:`write_report_tables` writes, in order.
REPORT_TABLE_FILES: tuple[str, ...] = ("summary.json", "zones.geojson", "rooms.csv",
                                       "equipment.csv")


def write_report_tables(r: ReportResult, folder: str | Path) -> list[Path]:
    """Write summary.json, zones.geojson, rooms.csv and equipment.csv into ``folder``
    (UTF-8); returns their paths."""
    folder = Path(folder)
    texts = (json.dumps(summary_dict(r), indent=2, ensure_ascii=False) + "\n",
             json.dumps(zones_geojson(r), ensure_ascii=False) + "\n",
             rooms_csv(r), equipment_csv(r))
    paths = []
    for name, text in zip(REPORT_TABLE_FILES, texts, strict=True):
        (folder / name).write_text(text, "utf-8")
        paths.append(folder / name)
    return paths
