"""``fringe place``: search where in a room, and turned which way, a magnet should go.

See docs/placement.md for the scoring, the search and the outputs.
"""

from __future__ import annotations

import math

from fringe.cli.main import add_formats_option
from fringe.cli.progress import Progress
from fringe.model.constants import ADVISORY_NOTICE
from fringe.model.errors import ScenarioError, must_be

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
                        "(place-plan.png/.svg, or as --formats says) into DIR (replaced "
                        "whole, atomically)")
    p.add_argument("--quiet", action="store_true", help="no progress messages on stderr")
    add_formats_option(p, default="png,svg")
    p.set_defaults(func=run, flags=FLAGS)


def best_magnet_toml(result) -> str:
    """The scenario ``[[magnet]]`` block of the best placement (centre and axis rounded to
    0.1 mm and 1e-4; :func:`fringe.io.toml_out.magnet_toml`)."""
    from fringe.io.toml_out import magnet_toml

    m = result.magnet
    notes = [] if m.origin == "coils" else [f"coils: the equivalent coil model ({m.origin})"]
    return magnet_toml(m, center_m=result.best.center_m, axis=result.best.axis,
                       comments=notes, position_digits=4)


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
    kw = {"floors": plan.floors, "step_m": plan.settings.grid_step_m,
          "band_step_m": plan.settings.band_step_m}
    before = check_equipment(site, plan.equipment, plan.floor_of_point, **kw)
    after = check_equipment(moved_site(site, result.magnet, result.best), plan.equipment,
                            plan.floor_of_point, **kw)
    return [{"name": a.name, "floor": a.floor, "limit_mT": a.limit_T * 1e3,
             "before_mT": _r(a.field_T * 1e3, 5), "after_mT": _r(c.field_T * 1e3, 5),
             "before_verdict": a.verdict, "after_verdict": c.verdict}
            for a, c in zip(before, after, strict=True)]


def result_dict(site, result, equipment: list[dict]) -> dict:
    """The JSON document of ``fringe place --json`` (and place.json)."""
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
            "magnet_block": best_magnet_toml(result)}


def text_summary(site, result, equipment: list[dict], out_dir: str | None) -> str:
    """The text printed by ``fringe place``."""
    from fringe.render.placement import fmt_m, limiting_rooms, why

    r = result
    lines = [f"site: {site.name}", f"magnet: {r.magnet.name}; region: {r.region_label}",
             f"boundary: {r.boundary_mT:g} mT; thresholds counted: "
             + ", ".join(f"{t:g}" for t in r.levels_mT) + " mT",
             f"placements scored: {r.evaluations}", "",
             "rank  centre (x, y, z) m            axis                  spill m²  margin m  "
             "limiting rooms"]
    rows = [(str(k), p) for k, p in enumerate(r.candidates, 1)]
    if r.current is not None:
        rows.append(("scen.", r.current))
    for k, p in rows:
        c = "(" + ", ".join(f"{v:.2f}" for v in p.center_m) + ")"
        a = "(" + ", ".join(f"{v:.3f}" for v in p.axis) + ")"
        lines.append(f"{k:<5} {c:<27} {a:<21} {p.spill_area_m2:9.2f} "
                     f"{fmt_m(p.margin_m):>8}  {limiting_rooms(p)}")
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
    lines += ["", "# scenario block for the best placement (pastes into a scenario file)",
              best_magnet_toml(r) + "# end of the scenario block"]
    if out_dir:
        lines.append(f"outputs: {out_dir}")
    lines.append(ADVISORY_NOTICE)
    return "\n".join(lines)


def run(args) -> int:
    from fringe.analysis.placement import search_placement
    from fringe.cli.main import print_json
    from fringe.io.scenario import load_site

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
        check_output_folder(args.out, scenario_file=site.source_file, marker="place.json",
                            name="--out")
    say = Progress(args.quiet or args.json)
    if site.steel:
        from fringe.analysis.steel import with_solved_steel

        say(f"solving {len(site.steel)} steel part(s) at the scenario's placement")
        site = with_solved_steel(site)[0]  # the scenario's own placement, for "before"
    result = search_placement(site, args.magnet, args.region, angles, args.threshold_mT,
                              progress=say)
    equipment = equipment_effect(site, result)
    doc = result_dict(site, result, equipment)
    if args.out:
        say("drawing the placement sheet")
        from fringe.render.placement import write_placement_outputs

        kw = {} if args.formats is None else {"formats": args.formats}
        write_placement_outputs(site, result, equipment, doc, args.out, **kw)
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
