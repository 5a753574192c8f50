"""``fringe place``: search where in a room, and turned which way, a magnet should go.

See docs/placement.md for the scoring, the search and the outputs.
"""

from __future__ import annotations

import json
import math
import sys
import time
from pathlib import Path

import shapely

from fringe.io.scenario import load_site
from fringe.model.constants import ADVISORY_NOTICE
from fringe.model.errors import ScenarioError, must_be
from fringe.model.verdict import Verdict

#: Parameters of :func:`fringe.analysis.placement.search_placement` → this command's options
#: (errors about a parameter name the option).
FLAGS: dict[str, str] = {"magnet": "--magnet", "region": "--region", "angles_deg": "--angles",
                         "boundary_mT": "--threshold-mT"}


def register(sub) -> None:
    p = sub.add_parser(
        "place", help="search the magnet position and bore direction in a room",
        description="Search the centre of one magnet over a room (or a polygon), shrunk "
                    "by the magnet's own winding outline, and its bore direction over "
                    "the given angles; rank placements by the area of every threshold "
                    "footprint (all floors) that spills into rooms that are not "
                    "controlled, then by the margin of the boundary footprint to the "
                    "nearest such room. Prints the best placements, the effect on "
                    "equipment, and the scenario [[magnet]] block of the best. "
                    + ADVISORY_NOTICE)
    p.add_argument("scenario", help="scenario TOML file")
    p.add_argument("--magnet", required=True, metavar="NAME", help="the magnet to place")
    p.add_argument("--region", required=True, metavar="ROOM_OR_POLYGON",
                   help="a room name of the scenario, or a polygon 'x1,y1;x2,y2;x3,y3;...' "
                        "in site metres (quote it; write --region=... when it starts with "
                        "'-'); the magnet's winding outline must stay inside")
    p.add_argument("--angles", default="0,90", metavar="DEG,DEG,...",
                   help="bore directions to try, degrees about the vertical from site +x "
                        "toward +y (default 0,90); the axis tilt out of plan is kept")
    p.add_argument("--threshold-mT", dest="threshold_mT", type=float, default=None,
                   metavar="MT", help="controlled-area boundary in mT (default: the "
                                      "scenario's plan boundary, 0.5 mT unless set)")
    p.add_argument("--json", action="store_true", help="print JSON instead of text")
    p.add_argument("--out", metavar="DIR",
                   help="write place.json, best-magnet.toml and the plan sheet "
                        "(place-plan.png/.svg) into DIR (replaced whole, atomically)")
    p.add_argument("--quiet", action="store_true", help="no progress messages on stderr")
    p.set_defaults(func=run, flags=FLAGS)


def _progress(quiet: bool):
    t0 = time.monotonic()

    def say(msg: str) -> None:
        if not quiet:
            sys.stderr.write(f"[{time.monotonic() - t0:5.1f} s] {msg}\n")
            sys.stderr.flush()
    return say


def _r(v, nd=4):
    if v is None:
        return None
    v = float(v)
    return round(v, nd) if math.isfinite(v) else None


def _rooms_json(p) -> list[dict]:
    return [{"room": b["room"], "floor": b["floor"], "limit_mT": b["limit_mT"],
             "area_m2": _r(b["area_m2"]),
             "areas_m2": [{"threshold_mT": t, "area_m2": _r(a)}
                          for t, a in sorted(b["areas_m2"].items())],
             "clearance_m": _r(b["clearance_m"]), "depth_m": _r(b["depth_m"]),
             "through_floor": b["through_floor"]} for b in p.spill_by_room]


def _core(p) -> dict:
    return {"center_m": [_r(v) for v in p.center_m], "axis": [_r(v, 6) for v in p.axis],
            "spill_area_m2": _r(p.spill_area_m2), "margin_m": _r(p.margin_m)}


def shortfall(result) -> dict | None:
    """What keeps the best placement from fitting: rooms hit (area at their limit,
    penetration depth), the smallest extra plan distance needed (the deepest
    penetration), and vertical shortfalls of footprints through a floor slab."""
    if result.fits:
        return None
    b = result.best
    hit = [x for x in b.spill_by_room if x["area_m2"] > 0]
    depths = [x["depth_m"] for x in hit if x["depth_m"] is not None]
    return {"rooms": [{"room": x["room"], "floor": x["floor"], "area_m2": _r(x["area_m2"]),
                       "depth_m": _r(x["depth_m"])} for x in hit],
            "extra_distance_m": _r(max(depths)) if depths else None,
            "vertical": [{"room": r, "floor": f, "threshold_mT": t, "shortfall_m": _r(v)}
                         for r, f, t, v in result.vertical]}


def equipment_effect(site, result) -> list[dict]:
    """|B| and verdict at each equipment point before (scenario) and after (best)."""
    from fringe.analysis.placement import moved_site
    from fringe.analysis.verdicts import check_equipment
    from fringe.model.site import site_plan

    plan = site_plan(site)
    if not plan.equipment:
        return []
    before = check_equipment(site, plan.equipment, plan.floor_of_point)
    after = check_equipment(moved_site(site, result.magnet, result.best), plan.equipment,
                            plan.floor_of_point)
    return [{"name": a.name, "floor": a.floor, "limit_mT": a.limit_T * 1e3,
             "before_mT": _r(a.field_T * 1e3, 5), "after_mT": _r(c.field_T * 1e3, 5),
             "before_verdict": a.verdict, "after_verdict": c.verdict}
            for a, c in zip(before, after, strict=True)]


def result_dict(site, result, equipment: list[dict]) -> dict:
    """The JSON document of ``fringe place --json`` (and place.json)."""
    from fringe.analysis.placement import magnet_toml

    cands = []
    for k, p in enumerate(result.candidates, 1):
        d = _core(p)
        d["rank"] = k
        d["spill_by_room"] = _rooms_json(p)
        cands.append(d)
    cur = None
    if result.current is not None:
        cur = _core(result.current)
        cur["spill_by_room"] = _rooms_json(result.current)
    return {"best": _core(result.best), "candidates": cands,
            "advisory": ADVISORY_NOTICE,
            "magnet": result.magnet.name, "region": result.region_label,
            "boundary_mT": result.boundary_mT, "thresholds_mT": list(result.levels_mT),
            "fits": result.fits, "current": cur, "shortfall": shortfall(result),
            "equipment": equipment, "notes": list(result.notes),
            "magnet_block": magnet_toml(result.magnet, result.best)}


def _fmt_m(v) -> str:
    return "-" if v is None or not math.isfinite(v) else f"{v:+.2f}"


def _limiting(p) -> str:
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
                   f"({'+' if dm >= 0 else ''}{dm:.2f} m); limiting: {_limiting(b)} "
                   f"(scenario placement: {_limiting(c)}).")
    thr = [x for x in b.spill_by_room if x["through_floor"]]
    for x in thr:
        out.append(f"{x['area_m2']:.2f} m² of the {x['limit_mT']:g} mT footprint reaches "
                   f"{x['room']} ({x['floor']}) through the slab; moving in plan does not "
                   "remove it.")
    return out


def text_summary(site, result, equipment: list[dict], out_dir: str | None) -> str:
    """The text printed by ``fringe place``."""
    r = result
    lines = [f"site: {site.name}", f"magnet: {r.magnet.name}; region: {r.region_label}",
             f"boundary: {r.boundary_mT:g} mT; thresholds counted: "
             + ", ".join(f"{t:g}" for t in r.levels_mT) + " mT",
             f"placements scored: {r.evaluations}", "",
             "rank  centre (x, y, z) m            axis                  spill m²  margin m  "
             "limiting room(s)"]
    rows = [(str(k), p) for k, p in enumerate(r.candidates, 1)]
    if r.current is not None:
        rows.append(("scen.", r.current))
    for k, p in rows:
        c = "(" + ", ".join(f"{v:.2f}" for v in p.center_m) + ")"
        a = "(" + ", ".join(f"{v:.3f}" for v in p.axis) + ")"
        lines.append(f"{k:<5} {c:<27} {a:<21} {p.spill_area_m2:9.2f} "
                     f"{_fmt_m(p.margin_m):>8}  {_limiting(p)}")
    lines += ["", "why the best placement:"] + ["  " + s for s in why(r)]
    sf = shortfall(r)
    if sf is None:
        lines.append("fits: no footprint reaches a room that is not controlled.")
    else:
        lines.append("does not fit: rooms reached at the best placement:")
        for x in sf["rooms"]:
            dep = ("through the floor slab" if x["depth_m"] is None
                   else f"{x['depth_m']:.2f} m beyond the controlled area")
            lines.append(f"  {x['room']} ({x['floor']}): {x['area_m2']:.2f} m² above its "
                         f"limit, {dep}")
        if sf["extra_distance_m"] is not None:
            lines.append(f"  smallest extra distance needed in plan: "
                         f"{sf['extra_distance_m']:.2f} m (deepest penetration)")
        for v in sf["vertical"]:
            s = v["shortfall_m"]
            lines.append(f"  {v['room']} ({v['floor']}): the {v['threshold_mT']:g} mT line "
                         "reaches " + ("?" if s is None else f"{s:.2f} m")
                         + " into the occupied band (extra vertical distance needed)")
    if equipment:
        w = max(len(e["name"]) for e in equipment)
        lines += ["", "equipment (|B| before -> after, mT):"]
        for e in equipment:
            lines.append(f"  {e['name']:<{w}}  {e['before_mT']:.4g} -> {e['after_mT']:.4g} "
                         f"(limit {e['limit_mT']:g}): {e['before_verdict']} -> "
                         f"{e['after_verdict']}")
    for n in r.notes:
        lines.append(f"note: {n}")
    from fringe.analysis.placement import magnet_toml

    lines += ["", "# scenario block for the best placement", magnet_toml(r.magnet, r.best)]
    if out_dir:
        lines.append(f"outputs: {out_dir}")
    lines.append(ADVISORY_NOTICE)
    return "\n".join(lines)


def placement_sheet(site, result, equipment: list[dict]):
    """A plan sheet of the best placement's floor: |B| bands of the best placement,
    rooms, the allowed region, the candidate centres and the scenario placement's
    boundary line."""
    from fringe.analysis.placement import moved_site
    from fringe.analysis.report import magnet_plan_outline
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
        if plan.floor_of_point(e.position_m[2]).name == fl.name:
            eq.append(dr.EquipmentMark(e.name, (e.position_m[0], e.position_m[1]),
                                       info["after_mT"] * 1e-3, e.limit_mT * 1e-3,
                                       info["after_verdict"]))
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
    pts = shapely.union_all([shapely.Point(p.center_m[:2]).buffer(0.07, quad_segs=2)
                             for p in result.candidates])
    overlays.append(dr.Overlay("candidate centres (best few)", pts, "outline"))
    notes = [f"Best placement: centre ({', '.join(f'{v:.2f}' for v in best.center_m)}) m, "
             f"axis ({', '.join(f'{v:.3f}' for v in best.axis)}); spill "
             f"{best.spill_area_m2:.2f} m² (thresholds summed), margin "
             f"{_fmt_m(best.margin_m)} m."]
    notes += why(result)
    notes.append(f"Largest |B| over the occupied band {fl.band_bottom_m:g} to "
                 f"{fl.band_top_m:g} m above the floor; grid step {step:.2g} m.")
    info = dr.SheetInfo(site_name=site.name, title=f"Placement search: {fl.name} floor",
                        subtitle=f"Best placement of {result.magnet.name} in "
                                 f"{result.region_label}",
                        magnets=(result.magnet.name,),
                        boundary_note=f"Controlled access area boundary: "
                                      f"{result.boundary_mT:g} mT")
    return dr.plan_sheet(fm.x_m, fm.y_m, fm.envelope_T, info,
                         thresholds_mT=result.levels_mT, boundary_mT=result.boundary_mT,
                         rooms=rooms, equipment=eq,
                         magnets=[dr.MagnetOutline(mb.name, magnet_plan_outline(mb))],
                         overlays=overlays, notes=notes)


def write_outputs(site, result, equipment, doc: dict, out_dir: str | Path) -> list[str]:
    """Write place.json, best-magnet.toml and place-plan.png/.svg atomically."""
    from fringe.analysis.placement import magnet_toml
    from fringe.io.atomic import atomic_directory, check_output_folder
    from fringe.render.drawing import save_figure

    check_output_folder(out_dir, scenario_file=site.source_file, marker="place.json")
    fig = placement_sheet(site, result, equipment)
    with atomic_directory(out_dir) as tmp:
        (tmp / "place.json").write_text(json.dumps(doc, indent=2, ensure_ascii=False)
                                        + "\n", "utf-8")
        (tmp / "best-magnet.toml").write_text(
            "# " + ADVISORY_NOTICE + "\n" + magnet_toml(result.magnet, result.best), "utf-8")
        save_figure(fig, tmp / "place-plan.png")
        save_figure(fig, tmp / "place-plan.svg")
        names = sorted(p.name for p in tmp.iterdir())
    return names


#: Argument of :func:`fringe.analysis.placement.search_placement` → option of this
#: command, so the library's errors name the option typed.
def run(args) -> int:
    from fringe.analysis.placement import search_placement
    from fringe.cli.main import print_json

    angles = check_angles(args.angles)
    if args.threshold_mT is not None and not (math.isfinite(args.threshold_mT)
                                              and args.threshold_mT > 0):
        raise ScenarioError(must_be("--threshold-mT", "a positive number of mT",
                                    args.threshold_mT))
    site = load_site(args.scenario)
    magnet = site.magnet(args.magnet)  # the usual errors first: magnet, then region
    if args.out:  # refuse a folder we must not replace before spending time on the search
        from fringe.analysis.placement import parse_region
        from fringe.io.atomic import check_output_folder
        from fringe.model.site import site_plan

        plan = site_plan(site)
        parse_region(args.region, plan, plan.floor_of_point(magnet.center_m[2]))
        check_output_folder(args.out, scenario_file=site.source_file, marker="place.json")
    say = _progress(args.quiet or args.json)
    result = search_placement(site, args.magnet, args.region, angles, args.threshold_mT,
                              progress=say)
    equipment = equipment_effect(site, result)
    doc = result_dict(site, result, equipment)
    if args.out:
        say("drawing the placement sheet")
        write_outputs(site, result, equipment, doc, args.out)
    if args.json:
        print_json(doc)
    else:
        print(text_summary(site, result, equipment, args.out))
    return 0


def check_angles(text: str) -> tuple[float, ...]:
    """Parse ``--angles`` (comma-separated degrees)."""
    try:
        vals = tuple(float(v) for v in text.split(",") if v.strip())
    except ValueError:
        vals = ()
    if not vals or not all(math.isfinite(v) for v in vals):
        raise ScenarioError(must_be("--angles", "comma-separated angles in degrees, e.g. "
                                    "'0,90'", text))
    return vals
