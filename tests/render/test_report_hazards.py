"""The report's hazard layers: attraction zone, exposure lines, zones back out as DXF.

Consistency checks tie the report to the modules it draws on (fringe.physics.attraction,
fringe.physics.exposure, fringe.io.dxf, fringe.render.dxf), which have their own checks
against outside sources in test_attraction.py, test_drawing.py and test_cad.py; the values
named here come from ICNIRP (2009) Health Phys. 96(4):504-514, Table 1.
"""

from __future__ import annotations

import json

import ezdxf
import numpy as np
import pytest
import shapely

from fringe.analysis.report import compute_report
from fringe.io.dxf import read_dxf_polygons
from fringe.io.report_files import summary_dict
from fringe.io.scenario import load_site
from fringe.physics.attraction import attraction_extents_m
from fringe.render.dxf import ATTRACTION_LAYER, zone_layer_name
from fringe.render.report import write_report
from tests.io.test_dxf import LAYERS, MM, make_mm_plan


@pytest.fixture(scope="module")
def demo_result(demo_site):
    return compute_report(demo_site, grid_step_m=0.2)


def test_summary_attraction_and_exposure_fields(demo_result, demo_site):
    d = json.loads(json.dumps(summary_dict(demo_result), allow_nan=False))
    m = d["magnets"][0]
    axial, radial = attraction_extents_m(demo_site.magnets[0])
    # issue 8: each magnet gains attraction {axial_extent_m, radial_extent_m}
    # (summary.json prints 5 significant digits)
    assert m["attraction"]["axial_extent_m"] == pytest.approx(axial, rel=1e-4)
    assert m["attraction"]["radial_extent_m"] == pytest.approx(radial, rel=1e-4)
    # the demo magnet's zone reaches ~2.1 m along, ~1.7 m across (docs/hazards.md)
    assert 1.5 < m["attraction"]["axial_extent_m"] < 3.0
    assert m["attraction"]["radial_extent_m"] < m["attraction"]["axial_extent_m"]
    # each floor gains its zone area; the magnet floor has a zone, the floor above none
    floors = {f["name"]: f for f in d["floors"]}
    assert floors["ground"]["attraction"]["area_m2"] > 1.0
    assert floors["first"]["attraction"]["area_m2"] == 0.0
    assert d["attraction_criterion"]["object"] == "any-shape"
    assert "M_s" in d["attraction_criterion"]["criterion"]
    # ICNIRP 2009 Table 1: 400 mT public, 2 T occupational head/trunk, 8 T limbs
    assert sorted(e["field_T"] for e in d["exposure_limits"]) == [0.4, 2.0, 8.0]
    assert all("ICNIRP (2009)" in e["source"] for e in d["exposure_limits"])
    # far-field zonal moments are reported (issue 7); a shielded magnet's dipole nearly
    # cancels against its l = 3 term at 2 m (common practice, no source: m/q3 scale)
    q = m["zonal_moments"]
    assert q["dipole_Am2"] == pytest.approx(m["dipole_moment_Am2"], rel=1e-6, abs=1e-6)
    assert abs(q["dipole_Am2"]) < abs(q["l3_Am4"])


def test_attraction_zone_lies_inside_the_3_mT_footprint_on_every_floor(demo_result):
    # physically expected ordering (docs/hazards.md): at the zone edge |∇|B|| = ρg/M_s
    # = 45 mT/m, and a whole-body magnet's field 1.5–2.5 m out cannot fall off steeply
    # enough for |B| to be below 3 mT there. Tolerance: one grid step (marching squares).
    for name, fa in demo_result.attraction.floors.items():
        fp3 = demo_result.floor_footprint(name, 3.0)
        if fa.geometry.is_empty:
            continue
        assert fp3 is not None and not fp3.geometry.is_empty, name
        assert fa.geometry.difference(fp3.geometry.buffer(demo_result.grid_step_m)).area \
            < 1e-9, name


def test_zone_drawings_read_back_equal_the_footprints(demo_result, tmp_path):
    out = tmp_path / "rep"
    names = write_report(demo_result, out, drawings=False)
    assert {"zones-ground.dxf", "zones-first.dxf", "zones-basement.dxf"} <= set(names)
    f = out / "zones-ground.dxf"
    assert ezdxf.readfile(str(f)).header["$INSUNITS"] == 6  # a new drawing: metres
    for fp in demo_result.footprints["ground"]:
        if fp.geometry.is_empty:
            continue
        back = read_dxf_polygons(f, zone_layer_name(fp.threshold_mT))
        assert shapely.hausdorff_distance(back, fp.geometry) < MM  # 1 mm (issue 8)
    zone = demo_result.attraction.floors["ground"].geometry
    assert shapely.hausdorff_distance(read_dxf_polygons(f, ATTRACTION_LAYER), zone) < MM


def test_zones_go_back_into_the_floors_own_millimetre_drawing(tmp_path):
    make_mm_plan(tmp_path / "clinic.dxf")
    layers = ", ".join(f'"{k}" = "{v}"' for k, v in LAYERS.items())
    scen = tmp_path / "site.toml"
    scen.write_text(f"""
[site]
name = "drawing round trip (invented)"
[[magnet]]
name = "m"
center_m = [4.6, 3.75, 1.1]
axis = [1, 0, 0]
[[magnet.coil]]
r_inner_m = 0.45
r_outer_m = 0.50
z_min_m = -0.5
z_max_m = 0.5
turns = 1000
current_A = 200.0
[plan]
grid_step_m = 0.2
[[floor]]
name = "ground"
elevation_m = 0.0
[[room_file]]
path = "clinic.dxf"
format = "dxf"
floor = "ground"
offset_m = [1.0, 2.0]
layers = {{ {layers} }}
""", encoding="utf-8")
    r = compute_report(load_site(scen))
    out = tmp_path / "rep"
    write_report(r, out, drawings=False)
    f = out / "zones-ground.dxf"
    doc = ezdxf.readfile(str(f))
    assert doc.header["$INSUNITS"] == 4  # the user's drawing units (mm) are kept
    assert doc.modelspace().query('LWPOLYLINE[layer=="A-MRI"]')  # and the user's rooms
    fp = r.floor_footprint("ground", 0.5)
    back = read_dxf_polygons(f, zone_layer_name(0.5), offset_m=(1.0, 2.0))
    assert shapely.hausdorff_distance(back, fp.geometry) < MM
    # the drawing's wall layer reaches the plan sheet, in site metres
    from matplotlib.text import Text

    from fringe.render.report import build_sheets

    (wall,) = r.site.room_drawings[0].walls
    assert wall.length == pytest.approx(10.35) and wall.bounds[1] == pytest.approx(1.8)
    plan = dict(build_sheets(r))["plan-ground"]
    assert "walls (from the floor's DXF drawing)" in [t.get_text() for t in plan.findobj(Text)]


def test_force_product_reported_per_floor(demo_result):
    d = summary_dict(demo_result)
    fl = {f["name"]: f for f in d["floors"]}
    fa = demo_result.attraction.floors["ground"]
    import numpy as np

    # the reported peak is the largest B·|∇|B|| of the floor's attraction map
    assert fl["ground"]["attraction"]["max_force_product_T2_per_m"] == pytest.approx(
        float(np.nanmax(fa.map.force_product_T2_per_m)), rel=1e-4)
    # inside the zone the pull beats the weight: for any shape B·|∇|B|| ≥ |B|·ρg/M_s
    # (docs/hazards.md), so the peak is well above zero on the magnet floor
    assert fl["ground"]["attraction"]["max_force_product_T2_per_m"] > 1e-3


@pytest.mark.parametrize("lines, expected", [
    ("[]", []),
    ('["icnirp-2009-public"]', [0.4]),
])
def test_exposure_lines_are_optional(lines, expected, tmp_path):
    from fringe.io.scenario import parse_site
    from tests.conftest import SMALL_SCENARIO_TOML

    text = SMALL_SCENARIO_TOML + f"[plan]\ngrid_step_m = 0.25\nexposure_lines = {lines}\n"
    import tomllib

    r = compute_report(parse_site(tomllib.loads(text), "x.toml"))
    assert [e["field_T"] for e in summary_dict(r)["exposure_limits"]] == expected


def test_unknown_exposure_line_names_the_choices(tmp_path, write_file, run_cli):
    from tests.conftest import SMALL_SCENARIO_TOML

    scen = write_file(SMALL_SCENARIO_TOML + '[plan]\nexposure_lines = ["icnirp-public"]\n')
    code, out, err = run_cli("report", scen, "--out", str(tmp_path / "o"), "--quiet")
    assert code == 2 and "Traceback" not in err
    assert "`plan.exposure_lines[0]` must be one of 'icnirp-2009-public'" in err


def test_datasheet_only_magnet_gets_a_full_report_that_says_so(tmp_path):
    # issue 7 "done when": a planner with only data-sheet numbers gets a full zone
    # report, and the report states the magnet is an equivalent model fitted to them
    from fringe.render.report import build_sheets
    from tests.physics.test_fit import DATASHEET_SITE

    p = tmp_path / "site.toml"
    p.write_text(DATASHEET_SITE + "[plan]\ngrid_step_m = 0.5\n", encoding="utf-8")
    r = compute_report(load_site(p))
    m = summary_dict(r)["magnets"][0]
    assert m["origin"] == "datasheet-fit"
    assert "Equivalent coil model fitted to data-sheet numbers" in m["description"]
    # the fitted model reproduces its data-sheet line in the report's own extents (2 %)
    b05 = next(b for b in m["boundaries"] if b["threshold_mT"] == 0.5)
    assert b05["axial_extent_m"] == pytest.approx(10.0, rel=0.02)
    assert b05["radial_extent_m"] == pytest.approx(7.8, rel=0.02)
    cover = build_sheets(r)[0][1]
    from matplotlib.text import Text

    texts = " ".join(t.get_text() for t in cover.findobj(Text))
    assert "Equivalent coil model fitted to data-sheet numbers" in texts


def test_report_sheets_include_energy_density_and_quench(demo_result):
    # issues 4 and 5: the energy-density maps and the quench budget join the report
    from matplotlib.text import Text

    from fringe.render.report import build_sheets

    titles = []
    for _stem, fig in build_sheets(demo_result):
        titles.append(" ".join(t.get_text() for t in fig.findobj(Text)))
    joined = "\n".join(titles)
    assert sum("Energy density" in t for t in titles) >= 2  # plan and section
    assert "Quench release budget" in joined
    # issue 8: the force product B·|∇|B|| mapped (section along the axis, T²/m)
    flat = " ".join(joined.split())  # titles wrap in the title block
    assert "Force product along the axis of hall-A 1.5 T" in flat and "T²/m" in flat
    assert all("ADVISORY ESTIMATE ONLY" in t for t in titles)  # every sheet


def test_threshold_colour_is_the_same_on_every_floor_and_on_the_sheets(demo_result, tmp_path):
    # one palette (fringe.render.style): a threshold's DXF layer has one colour on every
    # floor, and it is the colour of that threshold's band on the plan sheet
    from matplotlib.contour import ContourSet

    from fringe.render import drawing as dr
    from fringe.render.style import threshold_rgb

    out = tmp_path / "rep"
    write_report(demo_result, out, drawings=False)
    # basement and ground: the demo's ceiling plate keeps the low lines off the first floor
    docs = {fl: ezdxf.readfile(str(out / f"zones-{fl}.dxf")) for fl in ("ground", "basement")}
    shared = [t for t in demo_result.thresholds_mT
              if all(docs[fl].layers.has_entry(zone_layer_name(t)) for fl in docs)]
    assert shared  # the low thresholds reach both floors
    for t in shared:
        rgbs = {docs[fl].layers.get(zone_layer_name(t)).rgb for fl in docs}
        assert rgbs == {threshold_rgb(t)}, t
    assert docs["ground"].layers.get(zone_layer_name(demo_result.thresholds_mT[0])).rgb \
        != docs["ground"].layers.get(zone_layer_name(demo_result.thresholds_mT[1])).rgb
    fm = demo_result.floor_maps["ground"]
    fig = dr.plan_sheet(fm.x_m, fm.y_m, fm.envelope_T, dr.SheetInfo(site_name="t", title="t"),
                        thresholds_mT=demo_result.thresholds_mT,
                        boundary_mT=demo_result.boundary.value_mT)
    (bands,) = [c for c in fig.findobj(ContourSet) if c.filled]
    seen = 0
    for lo, rgba in zip(bands.levels[:-1], bands.get_facecolor(), strict=False):
        t = next((t for t in demo_result.thresholds_mT if abs(np.log10(t) - lo) < 1e-9), None)
        if t is None:
            continue
        assert tuple(round(255 * c) for c in rgba[:3]) == threshold_rgb(t), t
        seen += 1
    assert seen >= 3
