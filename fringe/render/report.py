"""The site report's outputs: sheets, report.pdf, DXF zone drawings and tables.

:func:`write_report` writes everything a computed
:class:`fringe.analysis.report.ReportResult` shows into one folder swapped in atomically
(:func:`fringe.io.atomic.atomic_directory`):

* ``summary.json``, ``zones.geojson``, ``rooms.csv``, ``equipment.csv`` — the tables
  (:mod:`fringe.io.report_files`; coordinates in site metres, see docs/zones.md);
* ``zones-<floor>.dxf`` — footprints and attraction zone as DXF layers
  (:func:`write_zone_drawings`, :mod:`fringe.render.dxf`);
* ``plan-<floor>.png/.svg``, ``section-<magnet>.png/.svg``, ``energy-*.png`` and
  ``report.pdf`` — the sheets of :func:`build_sheets`, drawn by :mod:`fringe.render.drawing`.
"""

from __future__ import annotations

import contextlib
import math
from collections.abc import Callable
from pathlib import Path

import numpy as np
import shapely

from fringe.analysis.geometry import (
    envelope_plan_outline,
    magnet_plan_outline,
    section_envelope,
    section_windings,
)
from fringe.analysis.report import ReportResult
from fringe.analysis.steel import steel_on_floor, steel_plan_outline, steel_section_cut
from fringe.analysis.zones import field_reversal_m
from fringe.io.atomic import atomic_directory, check_output_folder, set_usual_mode
from fringe.io.forked import ForkedCall
from fringe.io.report_files import attraction_extents, slug, write_report_tables
from fringe.model.constants import FIELD_BASIS_NOTE, SHEET_FORMATS
from fringe.model.errors import ArgumentError, must_be
from fringe.model.verdict import Verdict
from fringe.render.dxf import (
    ATTRACTION_LAYER,
    ENVELOPE_LAYER,
    EQUIPMENT_LAYER,
    MAGNET_LAYER,
    ROOMS_LAYER,
    STEEL_LAYER,
    write_zones_dxf,
    zone_layer_name,
)
from fringe.render.implants import implant_findings, implant_sheets

__all__ = ["write_report", "write_zone_drawings", "build_sheets", "ATTRACTION_ZONE_LABEL",
           "FORCE_PRODUCT_LEVELS_T2_PER_M"]

Progress = Callable[[str], None] | None


def write_report(r: ReportResult, out_dir: str | Path, *, drawings: bool = True,
                 progress: Progress = None,
                 formats: tuple[str, ...] = SHEET_FORMATS) -> list[str]:
    """Write every output of ``r`` into ``out_dir`` atomically; returns the file names.

    The folder is built beside ``out_dir`` and swapped in only when complete; an
    existing ``out_dir`` is replaced whole. ``formats`` (from
    :data:`~fringe.model.constants.SHEET_FORMATS`) selects the sheet files: ``pdf``
    report.pdf, ``png`` and ``svg`` one file per plan, section and map sheet.
    """
    formats = _checked_formats(formats)
    say = progress or (lambda msg: None)
    check_output_folder(out_dir, scenario_file=r.scenario_file, marker="summary.json")
    with atomic_directory(out_dir) as tmp:
        write_report_tables(r, tmp)
        if drawings:  # the DXF drawings are written by a child while the sheets are built
            dxf = ForkedCall(write_zone_drawings, r, tmp)
            try:
                _write_drawings(r, tmp, say, formats)
            except BaseException:
                with contextlib.suppress(BaseException):  # reap; the first error wins
                    dxf.result()
                raise
            dxf.result()
        else:
            write_zone_drawings(r, tmp)
        set_usual_mode(tmp, with_files=True)
        names = sorted(p.name for p in tmp.iterdir())
    return names


def write_zone_drawings(r: ReportResult, folder: str | Path) -> list[Path]:
    """One ``zones-<floor>.dxf`` per floor: footprints and attraction zone as DXF layers.

    A floor whose rooms were read from a DXF drawing (``[[room_file]] format = "dxf"``)
    gets a copy of that drawing with the zones added, in its units and frame; any other
    floor a new drawing in metres, site frame (:func:`fringe.render.dxf.write_zones_dxf`).
    Each threshold's layer has the colour of its band on the sheets
    (:mod:`fringe.render.style`) and a value label on each line; the boundary's layer is
    heavier. The floor's rooms, equipment, cryostat envelopes and magnet outlines go on
    layers of their own (``FRINGE-ROOMS``, ``FRINGE-EQUIPMENT``, ``FRINGE-ENVELOPE``,
    ``FRINGE-MAGNET``) whatever the room source, and the moving-steel paths that cross
    the floor's storey on ``FRINGE-MOVING-STEEL`` (a circle for a path seen end-on).
    """
    site_drawings = () if r.site is None else r.site.room_drawings
    taken: set[str] = set()
    written = []
    for name, fps in r.footprints.items():
        zones = {zone_layer_name(fp.threshold_mT): fp.geometry for fp in fps
                 if fp.geometry is not None and not fp.geometry.is_empty}
        zones_b = zone_layer_name(r.boundary.value_mT)
        plan_zones, texts = _plan_layers(r, name)
        zones.update(plan_zones)
        notes = [f"Floor {name}: footprints of the field lines (largest |B| over the "
                 f"occupied band), boundary {r.boundary.value_mT:g} mT "
                 f"({r.boundary.source})."]
        fa = None if r.attraction is None else r.attraction.floors.get(name)
        if fa is not None and not fa.geometry.is_empty:
            zones[ATTRACTION_LAYER] = fa.geometry
            notes.append(f"{ATTRACTION_LAYER}: {fa.criterion}")
        source = next((d for d in site_drawings if name in d.floors), None)
        if source is not None and source.rotation_deg:
            zones, texts = _unturned(zones, texts, source)
        path = Path(folder) / f"zones-{slug(name, taken)}.dxf"
        write_zones_dxf(path, zones, template=None if source is None else source.path,
                        offset_m=(0.0, 0.0) if source is None else source.offset_m,
                        notes="\n".join(notes), boundary_layer=zones_b, texts=texts)
        written.append(path)
    return written


def _unturned(zones: dict, texts: dict, source) -> tuple[dict, dict]:
    """Site geometries turned back by the drawing's ``rotation_deg`` about its offset
    point, so that the template's own transform (scale and offset) puts them in its frame:
    ``drawing = R(−rotation)·(site − offset) / metres_per_unit``."""
    import shapely.affinity

    ang, origin = -source.rotation_deg, tuple(source.offset_m)
    turned = {k: shapely.affinity.rotate(g, ang, origin=origin) for k, g in zones.items()}
    a = math.radians(ang)
    c, s_ = math.cos(a), math.sin(a)

    def back(xy):
        dx, dy = xy[0] - origin[0], xy[1] - origin[1]
        return (origin[0] + c * dx - s_ * dy, origin[1] + s_ * dx + c * dy)

    return turned, {k: [(t, back(xy)) for t, xy in v] for k, v in texts.items()}


#: Half-diagonal of the diamond drawn for point equipment in the DXF drawings, m.
_EQUIPMENT_MARK_M = 0.15


def _plan_layers(r: ReportResult, name: str) -> tuple[dict, dict]:
    """Rooms, equipment, cryostat envelopes and magnet outlines of floor ``name`` as DXF
    layers (site-frame shapely geometries) and their names as texts (layer → (text, xy))."""
    zones: dict = {}
    texts: dict = {}
    outlines = {x.name: x.outline for x in r.plan.rooms}
    rooms = [(c.name, outlines[c.name]) for c in r.rooms
             if c.floor == name and c.name in outlines]
    if rooms:
        zones[ROOMS_LAYER] = shapely.GeometryCollection([o for _, o in rooms])
        texts[ROOMS_LAYER] = [(n, _inside_point(o)) for n, o in rooms]
    equip, equip_texts = [], []
    for e in r.equipment:
        if e.floor != name:
            continue
        x, y = float(e.position_m[0]), float(e.position_m[1])
        d = _EQUIPMENT_MARK_M
        equip.append(e.outline if e.outline is not None else shapely.Polygon(
            [(x + d, y), (x, y + d), (x - d, y), (x, y - d)]))
        equip_texts.append((e.name, (x + d, y + d)))
    if equip:
        zones[EQUIPMENT_LAYER] = shapely.GeometryCollection(equip)
        texts[EQUIPMENT_LAYER] = equip_texts
    envs, mags = [], []
    for m in (() if r.site is None else r.site.magnets):
        envs.append(envelope_plan_outline(m))
        if r.plan.floor_of_point(m.center_m[2]).name == name:
            mags.append(magnet_plan_outline(m))
    if envs:
        zones[ENVELOPE_LAYER] = shapely.GeometryCollection(envs)
    if mags:
        zones[MAGNET_LAYER] = shapely.GeometryCollection(mags)
    moving = _plan_moving_steel(r, name)[0]
    if moving:
        from fringe.render.paths import MOVING_STEEL_LAYER, dxf_path_lines

        zones[MOVING_STEEL_LAYER], texts[MOVING_STEEL_LAYER] = dxf_path_lines(moving)
    steel = _floor_steel(r, name)
    if steel:
        zones[STEEL_LAYER] = shapely.GeometryCollection([g for _, g in steel])
        texts[STEEL_LAYER] = [(n, _inside_point(g)) for n, g in steel]
    return zones, texts


#: Legend text of the steel parts on plan and section sheets.
STEEL_LABEL = "steel part (hatched grey; name at its corner)"


def _floor_steel(r: ReportResult, name: str) -> list[tuple[str, object]]:
    """(name, plan outline) of every steel part overlapping the storey of floor ``name``."""
    parts = () if r.site is None else getattr(r.site, "steel", ())
    return [(p.name, steel_plan_outline(p)) for p in parts
            if steel_on_floor(p, r.plan.floors, name)]


def _section_steel(r: ReportResult, sec) -> list:
    """Overlays of the steel parts cut by the plane of section ``sec``."""
    from fringe.render import drawing as dr

    parts = () if r.site is None else getattr(r.site, "steel", ())
    out = []
    for p in parts:
        g = steel_section_cut(p, sec.origin_m, sec.unit, (float(sec.s_m[0]), float(sec.s_m[-1])))
        if g is not None:
            out.append(dr.Overlay(STEEL_LABEL, g, "steel", p.name))
    return out


def _inside_point(poly) -> tuple[float, float]:
    """A point inside ``poly`` for its name (shapely's representative point)."""
    p = poly.representative_point()
    return float(p.x), float(p.y)


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


def _sheet_base(r: ReportResult) -> dict:
    """The title-block fields every sheet of the report shares."""
    mag_names = tuple(m.name for m in r.magnets)
    model_notes = tuple(f"{m.name}: {m.description}" for m in r.magnets
                        if m.origin != "coils" and m.description)
    base = dict(site_name=r.site_name, magnets=mag_names, date_iso=r.created_utc[:10],
                tool_version=f"fringe {r.version}", boundary_note=_boundary_note(r),
                notes=model_notes)
    if r.site is not None:  # the [drawing] table: title-block fields, paper, scale
        base["drawing"] = r.site.drawing
    return base


def _cover_facts(r: ReportResult) -> list[tuple[str, str]]:
    """The key facts of the cover sheet: site, boundary, grid, each magnet."""
    facts = [("Site", r.site_name), ("Scenario", Path(r.scenario_file).name or "-"),
             ("Boundary", f"{r.boundary.value_mT:g} mT ({r.boundary.source})"),
             ("Field basis", FIELD_BASIS_NOTE),
             ("Thresholds", ", ".join(f"{t:g}" for t in r.thresholds_mT) + " mT"),
             ("Plan grid", f"{r.grid_step_m:g} m; occupied band sampled every "
                           f"{r.plan.settings.band_step_m:g} m or finer")]
    for m in r.magnets:
        b = next((x for x in m.boundaries
                  if math.isclose(x[0], r.boundary.value_mT, rel_tol=1e-9)), None)
        reach = m.reach(b[0]) if b else None
        ext = ("" if not b else
               f"; {b[0]:g} mT line {b[1]:.2f} m along, {b[2]:.2f} m across the axis"
               if reach is None else
               f"; {b[0]:g} mT line reaches {reach[0]:.2f} m from the axis ({b[2]:.2f} m in "
               f"the centre plane), {reach[1]:.2f} m along it")
        facts.append((f"Magnet {m.name}", f"centre field {m.center_field_T:.3g} T{ext}; "
                      f"stored energy {m.stored_energy_J / 1e6:.3g} MJ"))
        if m.description:
            facts.append((f"  model of {m.name}", m.description))
        att = attraction_extents(r, m.name)
        if att is not None:
            facts.append((f"  attraction zone of {m.name}",
                          f"{att['axial_extent_m']:.2f} m along, {att['radial_extent_m']:.2f} m "
                          "across the axis (pull on loose steel exceeds its weight)"))
    if r.attraction is not None:
        facts.append(("Attraction criterion", r.attraction.criterion))
    return facts


def _cover_findings(r: ReportResult) -> list[str]:
    """The findings of the cover sheet (shortened to one sheet; the tables list all)."""
    from fringe.render import drawing as dr

    v = r.overall()
    body = v.line().removeprefix("verdict: ")
    # the cover sets lines with the word "exceeds" first and bold: only when something does
    findings = [f"Overall verdict: exceeds — {body}" if v.exceeds else
                "Overall verdict: within — " + body.replace("nothing exceeds its limit",
                                                             "nothing reaches its limit")]
    for fl, area in r.outside_controlled_m2.items():
        if area > 0.005:
            findings.append(f"{fl} floor: {area:.2f} m² of the {r.boundary.value_mT:g} mT "
                            "footprint lies outside the controlled rooms")
    for c in r.rooms:
        lim = "" if c.limit_T is None else f" (limit {c.limit_T * 1e3:g} mT)"
        findings.append(f"Room {c.name} ({c.floor} floor): largest field "
                        f"{dr.format_field(c.max_field_T)}{lim}: {c.verdict}")
    for e in r.equipment:
        where = "position" if e.outline is None else "volume, largest"
        findings.append(f"Equipment {e.name}: {dr.format_field(e.field_T)} at its "
                        f"{where} (limit {e.limit_T * 1e3:g} mT): {e.verdict}")
    for c in r.moving_steel:
        lim = "no limit given" if c.limit_ppm is None else f"limit {c.limit_ppm:g} ppm"
        findings.append(f"Moving steel {c.name}: up to {c.max_abs_delta_B_ppm:.2g} ppm at the "
                        f"isocentre of {c.disturbance.magnet} ({lim})"
                        + ("" if c.verdict is None else f": {c.verdict}"))
    findings[1:1] = implant_findings(r.implants)  # after the overall verdict
    if len(findings) > 24:  # keep the cover to one sheet; the tables list everything
        keep = [f for f in findings if Verdict.EXCEEDS in f or "outside the controlled" in f
                or f.endswith(f": {Verdict.MARGINAL}")
                or f.startswith(("Overall verdict:", "Implant condition"))]
        findings = keep[:22] + [f"{len(findings) - len(keep[:22])} further finding(s) "
                                "within limits or in controlled rooms: see the tables"]
    return findings


_COVER_TITLE = "Static stray field: controlled-zone drawings and checks"


def _cover_sheet(r: ReportResult, base: dict, contents=()):
    """The cover: key facts, findings and the contents (every sheet's title, numbered)."""
    from fringe.render import drawing as dr

    return dr.cover_sheet(
        dr.SheetInfo(title=_COVER_TITLE,
                     subtitle="Footprints are the largest |B| over each floor's occupied "
                              "band, outside the cryostat; verdicts per room, equipment "
                              "item and floor; the storey up to its ceiling is checked too",
                     **base),
        _cover_facts(r), _cover_findings(r), contents=contents)


def _ceiling_note(r: ReportResult, room: str) -> str:
    """The plan-label note of a room whose limit is passed above its occupied band."""
    from fringe.render import drawing as dr

    c = r.ceilings.get(room)
    if c is not None and getattr(c, "ceiling_marginal", False):
        return f"above band: marginal at ceiling ({dr.format_field(c.max_field_T)})"
    if c is None or not c.ceiling_exceeds:
        return ""
    return f"above band: exceeds at ceiling ({dr.format_field(c.max_field_T)})"


def _plan_marks(r: ReportResult, name: str) -> tuple[list, list]:
    """Room and equipment marks of floor ``name``."""
    from fringe.render import drawing as dr

    rooms = [dr.RoomMark(c.name, next(x.outline for x in r.plan.rooms if x.name == c.name),
                         c.access, c.verdict, c.max_field_T, c.limit_T, _ceiling_note(r, c.name))
             for c in r.rooms if c.floor == name]
    equip = [dr.EquipmentMark(e.name, (e.position_m[0], e.position_m[1]), e.field_T,
                              e.limit_T, e.verdict, e.outline)
             for e in r.equipment if e.floor == name]
    return rooms, equip


def _plan_magnets(r: ReportResult, name: str, site_mags: dict,
                  room_drawings) -> tuple[list, list]:
    """Magnet outlines on floor ``name`` and overlays: walls of the floor's DXF drawing,
    magnets of other floors (outline), the attraction zone."""
    from fringe.render import drawing as dr

    mags, overlays = [], []
    for m in site_mags.values():
        poly = magnet_plan_outline(m)
        env = envelope_plan_outline(m)
        home = r.plan.floor_of_point(m.center_m[2]).name
        if home == name:
            mags.append(dr.MagnetOutline(m.name, poly, env))
        else:
            overlays.append(dr.Overlay(f"{m.name} on the {home} floor (cryostat outline)",
                                       env.exterior, "outline"))
    walls = [w for d in room_drawings if name in d.floors for w in d.walls]
    if walls:
        lines = [w.boundary if w.geom_type.endswith("Polygon") else w for w in walls]
        overlays.insert(0, dr.Overlay("walls (from the floor's DXF drawing)",
                                      shapely.union_all(lines), "wall"))
    fa = None if r.attraction is None else r.attraction.floors.get(name)
    if fa is not None and not fa.geometry.is_empty:
        overlays.append(dr.Overlay(ATTRACTION_ZONE_LABEL, fa.geometry, "hazard"))
    overlays += [dr.Overlay(STEEL_LABEL, g, "steel", n) for n, g in _floor_steel(r, name)]
    return mags, overlays


def _plan_notes(r: ReportResult, name: str, fm) -> list[str]:
    """The notes of the plan sheet of floor ``name``."""
    from fringe.render import drawing as dr

    fl = fm.floor
    fa = None if r.attraction is None else r.attraction.floors.get(name)
    clipped = [f"{fp.threshold_mT:g}" for fp in r.footprints[name] if fp.clipped]
    notes = [f"Coordinates: site frame, x east, y north, m. Grid step {r.grid_step_m:g} m.",
             f"Occupied band {fl.band_bottom_m:g} to {fl.band_top_m:g} m above the floor "
             f"at {fl.elevation_m:g} m, sampled at {fm.z_levels_m.size} levels"
             + (f" and refined near peaks (raising |B| by up to "
                f"{100 * fm.band_correction_rel:.2g} %)" if fm.band_correction_rel > 0
                else "") + f"; estimated remaining error of |B| "
             f"{100 * fm.band_error_rel:.2g} %.",
             f"Area of the {r.boundary.value_mT:g} mT footprint outside controlled rooms: "
             f"{r.outside_controlled_m2[name]:.2f} m².",
             FIELD_BASIS_NOTE]
    if fa is not None:
        notes.append(f"{fa.criterion}. Hatched: largest pull over the band levels; "
                     f"zone area {fa.area_m2:.2f} m².")
    whole = r.full_height.get(name)
    if whole is not None and whole.map is not fm:
        z0, z1 = whole.z_m
        att = ("" if whole.attraction_area_m2 is None else
               f", attraction zone {whole.attraction_area_m2:.2f} m²")
        notes.append(f"Whole storey, floor level to ceiling ({z1 - z0:g} m above the floor; "
                     f"not used for verdicts): largest |B| "
                     f"{dr.format_field(whole.max_field_T)}, "
                     f"{r.boundary.value_mT:g} mT area {whole.boundary_area_m2:.2f} m²{att}.")
    if clipped:
        notes.append(f"The {', '.join(clipped)} mT footprint(s) reach the edge of the "
                     "drawing: enlarge plan.extent_m to see them whole.")
    return notes


def _plan_moving_steel(r: ReportResult, name: str) -> tuple[list, list[str]]:
    """The moving-steel paths on floor ``name`` (their points whose storey it is) and a
    note for each (docs/disturbance.md)."""
    from fringe.render.paths import MovingSteelMark

    marks, notes = [], []
    for c in r.moving_steel:
        d = c.disturbance
        here = np.array([r.plan.floor_of_point(float(z)).name == name
                         for z in d.positions_m[:, 2]])
        if not here.any():
            continue
        ppm = np.abs(d.delta_B_ppm[here])
        top = float(np.max(ppm))
        lim = "no limit given" if c.limit_ppm is None else (
            f"limit {c.limit_ppm:g} ppm: {c.verdict}")
        scale = c.limit_ppm if c.limit_ppm is not None else d.max_abs_delta_B_ppm
        marks.append(MovingSteelMark(
            c.name, d.positions_m[here, :2], ppm, scale,
            f"{c.name}: up to {top:.2g} ppm\n({lim})",
            c.verdict == Verdict.EXCEEDS))
        notes.append(f"Moving steel {c.name!r} ({d.mass_kg:g} kg, as a solid steel sphere): "
                     f"changes the field at the isocentre of {d.magnet} by up to "
                     f"{top:.2g} ppm on this storey, {d.max_abs_delta_B_ppm:.2g} ppm along "
                     f"its whole path ({lim}); docs/disturbance.md.")
    return marks, notes


def _plan_sheet(r: ReportResult, name: str, fm, base: dict, site_mags: dict, room_drawings):
    """The plan sheet of floor ``name``."""
    from fringe.render import drawing as dr

    fl = fm.floor
    rooms, equip = _plan_marks(r, name)
    mags, overlays = _plan_magnets(r, name, site_mags, room_drawings)
    moving, moving_notes = _plan_moving_steel(r, name)
    floor_word = name if name.lower().endswith("floor") else f"{name} floor"
    info = dr.SheetInfo(title=f"Floor plan: {floor_word}",
                        subtitle=f"Floor level {fl.elevation_m:g} m. Largest |B| over the "
                                 f"occupied band {fl.band_bottom_m:g} to "
                                 f"{fl.band_top_m:g} m above the floor", **base)
    return dr.plan_sheet(fm.x_m, fm.y_m, fm.envelope_T, info,
                         thresholds_mT=r.thresholds_mT, boundary_mT=r.boundary.value_mT,
                         rooms=rooms, equipment=equip, magnets=mags, overlays=overlays,
                         notes=_plan_notes(r, name, fm) + moving_notes,
                         show_gauss=r.plan.settings.show_gauss, moving_steel=moving,
                         north_deg=r.plan.settings.north_deg,
                         uncertainty=r.uncertainty)


def _reversal_note(sec, magnet) -> list[str]:
    """The note on a section whose field passes through zero (see :func:`field_reversal_m`).

    ``magnet`` (the section's Magnet, or None) bounds the windings, skipped in the search.
    """
    reach = 0.0
    if magnet is not None and magnet.coils:
        reach = max(math.hypot(c.r_outer_m, max(abs(c.z_min_m), abs(c.z_max_m)))
                    for c in magnet.coils)
    step = float(np.min(np.diff(sec.s_m))) if len(sec.s_m) > 1 else 0.0
    d = field_reversal_m(sec.s_m, sec.z_m, sec.field_T, float(sec.origin_m[2]),
                         beyond_m=reach + step)
    if d is None:
        return []
    return [f"About {d:.1f} m from the centre the field passes through zero where the shield "
            "coils' return field cancels the main field (an actively shielded magnet's "
            "field reversal); the low-field ring there, with its ragged lines, is real, "
            "not a gap in the calculation."]


def _section_windings_notes(sec, m, grid_step_m: float) -> tuple[list, list[str], str]:
    """Windings drawn on section ``sec`` of magnet ``m`` (None: not in the site), the
    notes on the plane, and the label of the horizontal axis."""
    from fringe.render import drawing as dr

    windings = []
    notes = [f"Vertical plane through the centre of {sec.magnet}, {sec.direction} its "
             f"axis; s = 0 at the centre, increasing towards site direction "
             f"({round(float(sec.unit[0]), 6) + 0.0:.2f}, "
             f"{round(float(sec.unit[1]), 6) + 0.0:.2f}) in (x, y). Grid step "
             f"{grid_step_m:g} m. Fields of all magnets superposed."]
    if m is not None:
        poly, projected = section_windings(m, sec)
        if not poly.is_empty:
            windings.append(dr.MagnetOutline(m.name, poly, section_envelope(m, sec)))
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
    return windings, notes, s_label


def _section_sheets(r: ReportResult, base: dict, site_mags: dict, taken: set[str],
                    say) -> tuple[list, list]:
    """Section sheets (with stems) and the force-product sheets (PDF only, after them)."""
    from fringe.render import drawing as dr

    exposure = dr.exposure_lines_from_registry(r.plan.settings.exposure_lines)
    sheets: list[tuple[str | None, object]] = []
    force_sheets: list[tuple[None, object]] = []  # PDF only, after the sections
    for k, sec in enumerate(r.sections):
        say(f"drawing the section {sec.direction} the axis of {sec.magnet!r}")
        att = (r.attraction.sections[k] if r.attraction is not None
               and k < len(r.attraction.sections) else None)
        sec_overlays = _section_steel(r, sec)
        sec_notes = []
        if att is not None:
            if not att[1].is_empty:
                sec_overlays.append(dr.Overlay(ATTRACTION_ZONE_LABEL, att[1], "hazard"))
            sec_notes.append(f"{r.attraction.criterion} (hatched).")
        windings, notes, s_label = _section_windings_notes(sec, site_mags.get(sec.magnet),
                                                           r.grid_step_m)
        info = dr.SheetInfo(title=f"Section {sec.direction} the axis of {sec.magnet}",
                            subtitle="|B| in the vertical plane through the magnet centre",
                            **base)
        fig = dr.section_sheet(sec.s_m, sec.z_m, sec.field_T, info,
                               thresholds_mT=r.thresholds_mT, boundary_mT=r.boundary.value_mT,
                               floors=list(r.plan.floors), windings=windings,
                               notes=notes + sec_notes
                               + _reversal_note(sec, site_mags.get(sec.magnet)),
                               s_label=s_label,
                               exposure_lines=exposure, overlays=sec_overlays,
                               show_gauss=r.plan.settings.show_gauss,
                               uncertainty=r.uncertainty)
        stem = sec.magnet if sec.direction == "along" else f"{sec.magnet}-{sec.direction}"
        sheets.append((f"section-{slug(stem, taken)}", fig))
        if sec.direction == "along" and att is not None:
            force_sheets.append(_force_product_sheet(r, sec, att, windings, s_label, base))
    return sheets, force_sheets


def _tables(r: ReportResult) -> list[tuple[str, list[str], list[list]]]:
    """The table sheets' content: rooms, equipment, extents, magnets, attraction, areas."""
    from fringe.render.sheet import format_field
    gauss = r.plan.settings.show_gauss
    room_rows = [[c.name, c.floor, c.access, format_field(c.max_field_T, show_gauss=gauss),
                  "-" if c.limit_T is None else c.limit_T * 1e3, c.verdict,
                  next((a for t, a in c.area_above_m2
                        if math.isclose(t, r.boundary.value_mT, rel_tol=1e-9)), 0.0)]
                 for c in r.rooms]
    tables = [("Rooms", ["room", "floor", "access", "largest field", "limit, mT",
                         "verdict", f"area above {r.boundary.value_mT:g} mT, m²"], room_rows)]
    if r.equipment:
        tables.append((
            "Equipment", ["equipment", "floor", "x, m", "y, m", "z, m", "field",
                          "limit, mT", "verdict", "note"],
            [[e.name, e.floor, *e.position_m, format_field(e.field_T, show_gauss=gauss),
              e.limit_T * 1e3,
              e.verdict, e.note] for e in r.equipment]))
    tables.append((
        "Field-line extents of each magnet alone (outermost crossing; reach: anywhere)",
        ["magnet", "threshold, mT", "on the axis, m", "centre plane, m",
         "reach from the axis, m", "reach along the axis, m"],
        [[m.name, t, a, rr, *(m.reach(t) or ("-", "-"))]
         for m in r.magnets for t, a, rr in m.boundaries]))
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
    if r.moving_steel:
        tables.append((
            "Moving steel: change of the field at the isocentre (docs/disturbance.md)",
            ["path", "mass, kg", "magnet", "largest |ΔB|, ppm", "limit, ppm", "verdict",
             "worst at x, y, z, m"],
            [[c.name, c.disturbance.mass_kg, c.disturbance.magnet, c.max_abs_delta_B_ppm,
              "-" if c.limit_ppm is None else c.limit_ppm,
              "not checked" if c.verdict is None else c.verdict,
              ", ".join(f"{v:.2f}" for v in c.disturbance.positions_m[
                  c.disturbance.worst_index])] for c in r.moving_steel]))
    tables.append((
        "Footprint areas per floor",
        ["floor", "threshold, mT", "area, m²", "area from sampled levels only, m²",
         "reaches drawing edge"],
        [[fp.floor, fp.threshold_mT, fp.area_m2, fp.sampled_area_m2,
          "yes" if fp.clipped else "no"] for fps in r.footprints.values() for fp in fps]))
    return tables


def build_sheets(r: ReportResult, say: Progress = None) -> list[tuple[str | None, object]]:
    """Every sheet of the report in PDF order, as ``(file stem or None, Figure)``.

    Plans (``plan-<floor>``) and sections (``section-<magnet>`` along the axis,
    ``section-<magnet>-across``) have a stem and are also written as PNG and SVG; the
    cover and the table sheets (stem None) go into report.pdf only.
    """
    from fringe.render import drawing as dr
    from fringe.render.energy import energy_density_sheets
    from fringe.render.quench import quench_sheets

    say = say or (lambda msg: None)
    base = _sheet_base(r)
    site_mags = {m.name: m for m in r.site.magnets} if r.site is not None else {}
    sheets: list[tuple[str | None, object]] = []  # the cover goes first, made last
    room_drawings = () if r.site is None else r.site.room_drawings
    taken: set[str] = set()
    for name, fm in r.floor_maps.items():
        say(f"drawing the plan of floor {name!r}")
        fig = _plan_sheet(r, name, fm, base, site_mags, room_drawings)
        sheets.append((f"plan-{slug(name, taken)}", fig))
    sections, force_sheets = _section_sheets(r, base, site_mags, taken, say)
    sheets += sections + force_sheets
    if r.implants is not None:
        say("drawing the spatial field gradient (implant sheets)")
        sheets += [(slug(f"implants {name}", taken), fig)
                   for name, fig in implant_sheets(r.implants, site_mags, base)]
    # energy density (fringe.physics.energy) and quench budgets (fringe.physics.quench)
    if r.site is not None:
        say("drawing the energy-density maps")
        sheets.extend(energy_density_sheets(r.site))
    for b in r.quench:
        say(f"drawing the quench release budget of {b.magnet!r}")
        sheets.extend((None, f) for f in quench_sheets(b, r.site_name,
                                                      date_iso=r.created_utc[:10],
                                                      drawing=base.get("drawing")))
    info_t = dr.SheetInfo(title="Tables: rooms, equipment, field-line extents", **base)
    sheets += [(None, f) for f in dr.tables_sheets(_tables(r), info_t)]
    # the cover lists every sheet by its number ("1" is the cover itself)
    contents = [_COVER_TITLE] + [dr.sheet_title(f) for _, f in sheets]
    return [(None, _cover_sheet(r, base, contents))] + sheets


def _checked_formats(formats) -> tuple[str, ...]:
    """``formats`` as a tuple in the order of SHEET_FORMATS; ArgumentError if unknown or empty."""
    fs = (formats,) if isinstance(formats, str) else tuple(formats)
    if not fs or any(f not in SHEET_FORMATS for f in fs):
        raise ArgumentError(must_be("formats", f"one or more of {', '.join(SHEET_FORMATS)}",
                                    list(fs)), "formats")
    return tuple(f for f in SHEET_FORMATS if f in fs)


def _sheet_files(sheets, formats: tuple[str, ...]) -> list[tuple[str, object]]:
    """(file name, Figure) of every single-sheet file: PNG and SVG of each sheet with a
    stem; the energy maps (raster images) as PNG only."""
    files = []
    for stem, fig in sheets:
        if stem is None:
            continue
        for fmt in ("png", "svg"):
            if fmt in formats and not (fmt == "svg" and stem.startswith("energy-")):
                files.append((f"{stem}.{fmt}", fig))
    return files


def _write_drawings(r: ReportResult, folder: Path, say,
                    formats: tuple[str, ...] = SHEET_FORMATS) -> None:
    """The sheets in ``formats``: report.pdf and the plan, section and map sheets as PNG
    and SVG, through :mod:`fringe.render.drawing`.

    Each sheet is built once and every file is written from that one figure. The
    writing is shared with a forked child (:mod:`fringe.io.forked`), since rendering
    holds the interpreter lock: the child writes report.pdf, this process the single
    files; without the PDF the child writes the second half of the single files. The
    sheets are numbered first, so the PDF and the single files carry the same numbers.
    """
    from fringe.render import drawing as dr

    sheets = build_sheets(r, say)
    figures = dr.number_sheets([f for _, f in sheets])
    files = _sheet_files(sheets, formats)
    if "pdf" in formats:
        say("writing report.pdf and the sheet files")
        child = ForkedCall(dr.write_pdf, figures, folder / "report.pdf",
                           title=f"{r.site_name}: stray-field report")
        mine = files
    else:
        say("writing the sheet files")
        half = (len(files) + 1) // 2
        mine, theirs = files[:half], files[half:]
        child = ForkedCall(_save_all, theirs, folder)
    try:
        for name, fig in mine:
            dr.save_figure(fig, folder / name)
            say(f"wrote {name}")
    except BaseException:
        with contextlib.suppress(BaseException):  # reap the child; the first error wins
            child.result()
        raise
    child.result()
    if "pdf" in formats:
        say("wrote report.pdf")


def _save_all(files, folder: Path) -> None:
    """Write each (file name, Figure) into ``folder``."""
    from fringe.render import drawing as dr

    for name, fig in files:
        dr.save_figure(fig, folder / name)
