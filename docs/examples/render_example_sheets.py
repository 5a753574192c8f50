"""Render example sheets from a synthetic point dipole, to show the drawing style.

Run:  python docs/examples/render_example_sheets.py [OUT_DIR]   (default ./example-sheets)

Everything here is invented: a point dipole standing in for a magnet, a fictional floor
with rooms and equipment, and an "attraction zone" that is just a field contour. The
point of the script is the look of the sheets, not the physics.
"""

from __future__ import annotations

import sys
from pathlib import Path

import numpy as np
from shapely.geometry import Polygon, box

from fringe.render import drawing as d


def dipole_B_T(points_m, center_m, moment_Am2):
    """|B| of a point dipole, T: B = μ0/4π (3(m·r̂)r̂ − m)/r³ (Jackson, Eq. 5.56)."""
    mu0_4pi = 1e-7
    r = np.asarray(points_m, float) - np.asarray(center_m, float)
    rn = np.maximum(np.linalg.norm(r, axis=-1, keepdims=True), 1e-3)
    m = np.asarray(moment_Am2, float)
    rhat = r / rn
    B = mu0_4pi * (3 * (rhat @ m)[..., None] * rhat - m) / rn**3
    return np.linalg.norm(B, axis=-1)


def example_sheets(out: Path) -> list:
    centre = np.array([5.0, 4.0, 1.1])
    moment = np.array([1.6e5, 0.0, 0.0])  # 0.5 mT line at 4 m on the axis (invented)
    x = np.linspace(-5.0, 17.0, 221)
    y = np.linspace(-4.0, 12.0, 161)
    X, Y = np.meshgrid(x, y)
    P = np.stack([X, Y, np.full_like(X, centre[2])], axis=-1)
    field_T = dipole_B_T(P, centre, moment)
    field_T[np.hypot(X - centre[0], Y - centre[1]) < 0.9] = np.nan  # inside the cryostat
    info = d.SheetInfo(
        site_name="Harbourside Imaging Clinic (invented example)",
        title="Floor plan: ground floor",
        subtitle="Largest |B| over the occupied band 0 to 2 m above the floor",
        magnets=("MR 1 (1.5 T, point-dipole stand-in)",),
        boundary_note="Controlled access area boundary: 0.5 mT (ICNIRP 2009; "
                      "IEC 60601-2-33 ed. 3)",
        notes=("Magnet modelled as a point dipole for this style example only.",
               "Contours interpolated on a 0.1 m grid."),
    )
    rooms = [
        d.RoomMark("magnet room", box(1.0, 0.0, 9.0, 8.0), "controlled", "ok", 0.9),
        d.RoomMark("control room", box(9.0, 0.0, 13.0, 4.0), "controlled", "ok", 2.1e-3),
        d.RoomMark("equipment", box(9.0, 4.0, 13.0, 8.0), "open", "exceeds", 1.3e-3, 5e-4),
        d.RoomMark("corridor", box(-3.0, 8.0, 16.0, 10.0), "open", "ok", 4.1e-4),
        d.RoomMark("waiting area", Polygon([(-3, 0), (1, 0), (1, 8), (-3, 8)]), "open",
                   "exceeds", 8.8e-4, 5e-4),
        d.RoomMark("CT room", box(13.0, 0.0, 16.0, 8.0), "open", "ok", 3.0e-4),
        d.RoomMark("WC", box(-3.0, 10.0, -1.8, 11.5), "open", "ok", 1e-4),
    ]
    eq = [d.EquipmentMark("CT gantry", (14.5, 4.0), 2.9e-4, 1e-4, "exceeds"),
          d.EquipmentMark("injector", (8.0, 1.0), 6e-3, 1e-2, "ok"),
          d.EquipmentMark("patient monitor", (-2.0, 5.0), 6.5e-4, 1e-3, "ok")]
    magnets = [d.MagnetOutline("MR 1", d.footprint_rectangle(centre[:2], (1, 0), 1.7, 2.0))]
    hazard = Polygon([(5 + 1.8 * np.cos(t), 4 + 1.4 * np.sin(t))
                      for t in np.linspace(0, 2 * np.pi, 60)])
    overlays = [d.Overlay("attraction zone (invented outline for the example)", hazard,
                          "hazard")]
    plan = d.plan_sheet(x, y, field_T, info, rooms=rooms, equipment=eq, magnets=magnets,
                        overlays=overlays)
    # section along the axis
    s = np.linspace(-8.0, 8.0, 161)
    z = np.linspace(-3.0, 7.0, 101)
    S, Z = np.meshgrid(s, z)
    Ps = np.stack([centre[0] + S, np.full_like(S, centre[1]), Z], axis=-1)
    sec_T = dipole_B_T(Ps, centre, moment)
    windings_sz = [box(-0.8, centre[2] + 0.35, 0.8, centre[2] + 0.9),
                   box(-0.8, centre[2] - 0.9, 0.8, centre[2] - 0.35)]
    inside = (np.abs(S) <= 0.8) & (np.abs(Z - centre[2]) >= 0.35) & (
        np.abs(Z - centre[2]) <= 0.9)
    sec_T[inside] = np.nan  # no field drawn inside the windings
    floors = [d.FloorLevel("basement", -3.5), d.FloorLevel("ground", 0.0),
              d.FloorLevel("first floor", 3.6)]
    windings = [d.MagnetOutline("coil", w) for w in windings_sz]
    sec_info = d.SheetInfo(site_name=info.site_name, title="Section along the MR 1 axis",
                           subtitle="Vertical section through the magnet centre, looking north",
                           magnets=info.magnets, boundary_note=info.boundary_note,
                           notes=info.notes[:1])
    sec = d.section_sheet(s, z, sec_T, sec_info, floors=floors, windings=windings,
                          exposure_lines=d.ICNIRP_2009_EXPOSURE_LINES,
                          s_label="distance from the magnet centre along its axis (east), m")
    t = np.linspace(0, 60, 300)
    curves = d.curve_sheet([
        d.CurvePanel("time after quench onset, s", "current, A",
                     (d.Curve("coil current (invented L/R = 12 s)", t, 300 * np.exp(-t / 12)),),
                     title="Current decay", marks=(("L/R = 12 s", 12.0),)),
        d.CurvePanel("time after quench onset, s", "energy left in the magnet, MJ",
                     (d.Curve("stored energy left", t, 4.0 * np.exp(-2 * t / 12)),),
                     title="Energy left"),
    ], d.SheetInfo(site_name=info.site_name, title="Quench: current and energy (example)",
                   magnets=info.magnets))
    tables = d.table_sheet("Rooms", ["room", "access", "largest field, mT", "verdict"],
                           [(r.name, r.access, r.max_field_T * 1e3, r.verdict) for r in rooms]
                           * 12, d.SheetInfo(site_name=info.site_name, title="Room table",
                                             boundary_note=info.boundary_note))
    cover = d.cover_sheet(
        d.SheetInfo(site_name=info.site_name, title="Stray-field drawing set",
                    subtitle="Example sheets from a synthetic dipole", magnets=info.magnets,
                    boundary_note=info.boundary_note),
        [("Magnets", "MR 1 (1.5 T)"), ("0.5 mT line along the axis", "4.0 m"),
         ("Stored energy", "4.0 MJ (invented)")],
        ["equipment (ground): 1.3 mT, EXCEEDS its 0.5 mT limit",
         "CT room (ground): 0.30 mT, within 0.5 mT"],
        contents=["Cover", "Floor plan: ground floor", "Section along the MR 1 axis",
                  "Quench: current and energy", "Room table"])
    out.mkdir(parents=True, exist_ok=True)
    d.save_figure(plan, out / "example-plan.png")
    d.save_figure(plan, out / "example-plan.svg")
    d.save_figure(sec, out / "example-section.png")
    d.save_figure(curves, out / "example-curves.png")
    d.save_figure(tables[0], out / "example-table.png")
    d.save_figure(cover, out / "example-cover.png")
    sheets = [cover, plan, sec, curves, *tables]
    d.write_pdf(sheets, out / "example-set.pdf")
    return sheets


if __name__ == "__main__":
    target = Path(sys.argv[1]) if len(sys.argv) > 1 else Path("example-sheets")
    example_sheets(target)
    print(f"wrote example sheets to {target}/")
