"""Drawings and files of a placement search (``fringe place``): the plan sheet of the best
placement and the output folder (place.json, best-magnet.toml, place-plan.png/.svg).

See docs/placement.md.
"""

from __future__ import annotations

import json
import math
from pathlib import Path
from typing import TYPE_CHECKING

import shapely

from fringe.io.atomic import atomic_directory, check_output_folder
from fringe.model.constants import ADVISORY_NOTICE
from fringe.model.verdict import Verdict

if TYPE_CHECKING:
    from matplotlib.figure import Figure

__all__ = ["placement_sheet", "write_placement_outputs", "why", "limiting_rooms", "fmt_m"]


def fmt_m(v) -> str:
    """A signed length in m with 2 decimals; "-" when missing or not finite."""
    return "-" if v is None or not math.isfinite(v) else f"{v:+.2f}"


def limiting_rooms(p) -> str:
    """The room(s) nearest to the boundary footprint of placement ``p`` (within 2 cm)."""
    near = [b for b in p.spill_by_room if b["clearance_m"] is not None]
    if not near:
        return "-"
    m = min(b["clearance_m"] for b in near)
    names = [f"{b['room']} ({b['floor']})" for b in near if b["clearance_m"] <= m + 0.02]
    return ", ".join(names)


def why(result) -> list[str]:
    """Plain sentences comparing the best placement with the scenario's own."""
    b, c = result.best, result.current
    out = []
    if c is None:
        return ["The scenario's own placement is on another floor; not compared."]
    if b is c or (math.dist(b.center_m, c.center_m) < 1e-9 and b.axis == c.axis):
        out.append("The scenario's own placement is already the best found.")
    ds = c.spill_area_m2 - b.spill_area_m2
    if ds > 0.005:
        out.append(f"It spills {ds:.2f} m² less ({b.spill_area_m2:.2f} against "
                   f"{c.spill_area_m2:.2f} m², thresholds summed).")
    else:
        out.append(f"It spills the same area ({b.spill_area_m2:.2f} m², thresholds summed)")
    dm = b.margin_m - c.margin_m
    if math.isfinite(b.margin_m) and math.isfinite(c.margin_m):
        out.append(f"Its margin is {b.margin_m:.2f} m against {c.margin_m:.2f} m "
                   f"({'+' if dm >= 0 else ''}{dm:.2f} m); limiting: {limiting_rooms(b)} "
                   f"(scenario placement: {limiting_rooms(c)}).")
    thr = [x for x in b.spill_by_room if x["through_floor"]]
    for x in thr:
        out.append(f"{x['area_m2']:.2f} m² of the {x['limit_mT']:g} mT footprint reaches "
                   f"{x['room']} ({x['floor']}) through the slab; moving in plan does not "
                   "remove it.")
    return out


def placement_sheet(site, result, equipment: list[dict]) -> Figure:
    """A plan sheet of the best placement's floor: |B| bands of the best placement,
    rooms, the allowed region, the candidate centres and the scenario placement's
    boundary line."""
    from fringe.analysis.geometry import magnet_plan_outline
    from fringe.analysis.placement import moved_site
    from fringe.analysis.zones import floor_map, plan_axes_m, reach_m
    from fringe.model.site import site_plan
    from fringe.render import drawing as dr

    plan = site_plan(site)
    best = result.best
    fl = plan.floor_of_point(best.center_m[2])
    site_b = moved_site(site, result.magnet, best)
    mb = next(m for m in site_b.magnets if m.name == result.magnet.name)
    r = reach_m(mb, result.boundary_mT * 1e-3) + 0.5
    xs = [best.center_m[0] - r, best.center_m[0] + r]
    ys = [best.center_m[1] - r, best.center_m[1] + r]
    for room in plan.rooms:
        if room.floor == fl.name:
            b = room.outline.bounds
            xs += [b[0], b[2]]
            ys += [b[1], b[3]]
    ext = ((min(xs) - 0.5, min(ys) - 0.5), (max(xs) + 0.5, max(ys) + 0.5))
    span = max(ext[1][0] - ext[0][0], ext[1][1] - ext[0][1])
    step = max(plan.settings.grid_step_m, span / 300.0)
    x, y = plan_axes_m(ext, step)
    fm = floor_map(site_b, fl, x, y, plan.settings.band_step_m,
                   [t * 1e-3 for t in result.levels_mT])
    zone_hit = {(b["room"], b["floor"]) for b in best.spill_by_room if b["area_m2"] > 0}
    rooms = [dr.RoomMark(room.name, room.outline, room.access,
                         Verdict.EXCEEDS if (room.name, room.floor) in zone_hit else
                         (None if room.access == "controlled" else Verdict.WITHIN))
             for room in plan.rooms if room.floor == fl.name]
    eq = []
    for e, info in zip(plan.equipment, equipment, strict=False):
        floor = e.floor if e.is_volume else plan.floor_of_point(e.position_m[2]).name
        if floor == fl.name:
            xy = ((e.outline.representative_point().x, e.outline.representative_point().y)
                  if e.is_volume else (e.position_m[0], e.position_m[1]))
            eq.append(dr.EquipmentMark(e.name, xy, info["after_mT"] * 1e-3,
                                       e.limit_mT * 1e-3, info["after_verdict"], e.outline))
    overlays = []
    allowed = result.allowed.get(best.angle_deg)
    if allowed is not None and not allowed.is_empty:
        overlays.append(dr.Overlay("allowed magnet centres (region shrunk by the winding "
                                   "outline)", allowed.boundary, "outline"))
    cur = result.current
    if cur is not None:
        g = result.footprint(cur, fl.name, result.boundary_mT)
        if not g.is_empty:
            overlays.append(dr.Overlay(f"scenario placement: {result.boundary_mT:g} mT line",
                                       g.boundary, "contour"))
    pts = shapely.MultiPoint([p.center_m[:2] for p in result.candidates])
    overlays.append(dr.Overlay("candidate centres (best few)", pts, "points"))
    notes = [f"Best placement: centre ({', '.join(f'{v:.2f}' for v in best.center_m)}) m, "
             f"axis ({', '.join(f'{v:.3f}' for v in best.axis)}); spill "
             f"{best.spill_area_m2:.2f} m² (thresholds summed), margin "
             f"{fmt_m(best.margin_m)} m."]
    notes += why(result)
    notes.append(f"Largest |B| over the occupied band {fl.band_bottom_m:g} to "
                 f"{fl.band_top_m:g} m above the floor; grid step {step:.2g} m.")
    info = dr.SheetInfo(site_name=site.name, title=f"Placement search: {fl.name} floor",
                        subtitle=f"Best placement of {result.magnet.name} in "
                                 f"{result.region_label}",
                        magnets=(result.magnet.name,),
                        boundary_note=f"Controlled access area boundary: "
                                      f"{result.boundary_mT:g} mT",
                        drawing=site.drawing)
    return dr.plan_sheet(fm.x_m, fm.y_m, fm.envelope_T, info,
                         thresholds_mT=result.levels_mT, boundary_mT=result.boundary_mT,
                         rooms=rooms, equipment=eq,
                         magnets=[dr.MagnetOutline(mb.name, magnet_plan_outline(mb))],
                         overlays=overlays, notes=notes, north_deg=site.plan.north_deg)


def write_placement_outputs(site, result, equipment: list[dict], doc: dict,
                            out_dir: str | Path,
                            formats: tuple[str, ...] = ("png", "svg")) -> list[str]:
    """Write place.json (``doc``), best-magnet.toml (``doc["magnet_block"]``) and the plan
    sheet place-plan.<format> for each of ``formats`` (from
    :data:`~fringe.model.constants.SHEET_FORMATS`; default PNG and SVG) into ``out_dir``,
    replaced whole and atomically; returns the file names."""
    from fringe.render.drawing import number_sheets, save_figure

    check_output_folder(out_dir, scenario_file=site.source_file, marker="place.json")
    fig = placement_sheet(site, result, equipment)
    number_sheets([fig])  # a set of one: "1 of 1"
    with atomic_directory(out_dir) as tmp:
        (tmp / "place.json").write_text(json.dumps(doc, indent=2, ensure_ascii=False)
                                        + "\n", "utf-8")
        (tmp / "best-magnet.toml").write_text(
            "# " + ADVISORY_NOTICE + "\n" + doc["magnet_block"], "utf-8")
        for fmt in formats:  # one figure, written to each format
            save_figure(fig, tmp / f"place-plan.{fmt}")
        names = sorted(p.name for p in tmp.iterdir())
    return names
