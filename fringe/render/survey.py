"""Sheets of ``fringe survey``: the readings on the plan coloured by measured/model, and
measured against model (log-log); and the output folder of the command.

Colours: the ratio on a diverging map centred on 1 (matplotlib ``coolwarm``, Moreland's
diverging map built for even perceived steps either side of a light centre: K. Moreland,
"Diverging Color Maps for Scientific Visualization", ISVC 2009), on a log scale
symmetric about 1, so 0.9 and 1/0.9 are equally far from the centre.
"""

from __future__ import annotations

import json
import math
from pathlib import Path
from typing import TYPE_CHECKING

import numpy as np

from fringe.io.atomic import atomic_directory, check_output_folder

if TYPE_CHECKING:
    from matplotlib.figure import Figure

__all__ = ["survey_plan_sheet", "measured_model_sheet", "write_survey_outputs",
           "RATIO_CMAP", "SURVEY_MARKER"]

#: Colormap of measured/model (see the module notes).
RATIO_CMAP = "coolwarm"
#: File every ``fringe survey --out`` folder holds (recognised when it is replaced).
SURVEY_MARKER = "survey.json"
_OUTLIER_COLOR = "#3d0b57"  # fringe.render.style.HAZARD_COLOR


#: Readings weighted with a relative uncertainty above this (mostly the Earth's field)
#: do not set the colour scale of the plan; they take its end colours.
_SCALE_SIGMA_MAX = 0.1


def _ratio_norm(ratios, flagged, sigmas):
    """Log scale symmetric about 1, spanning the readings not flagged and not dominated
    by the Earth's field (the others take the end colours)."""
    from matplotlib.colors import LogNorm

    r = np.asarray([v for v, f, sg in zip(ratios, flagged, sigmas, strict=True)
                    if math.isfinite(v) and v > 0 and not f and not sg > _SCALE_SIGMA_MAX])
    span = float(np.max(np.abs(np.log(r)))) if r.size else 0.1
    span = min(max(span, math.log(1.05)), math.log(10.0))
    return LogNorm(vmin=math.exp(-span), vmax=math.exp(span))


def _info(site, result, title: str, subtitle: str):
    from fringe.render.drawing import SheetInfo

    mags = tuple(m.name for m in site.magnets)
    return SheetInfo(site_name=site.name, title=title, subtitle=subtitle, magnets=mags,
                     boundary_note=f"Readings: {Path(result.readings_file).name} "
                                   f"({len(result.points)}, {result.n_flagged} flagged)")


def _notes(result) -> list[str]:
    out = [f"Measured/model: the reading over the scenario's model at the same point; "
           f"rms of ln(measured/model) {result.rms_log_residual:.3g} over the readings "
           "not flagged."]
    for c in result.calibration:
        off = ", ".join("-" if v is None else f"{v * 1e3:+.0f} ± {s * 1e3:.0f} mm"
                        for v, s in zip(c.center_offset_m, c.center_offset_std_m, strict=True))
        out.append(f"Calibrated {c.magnet}: current scale {c.current_scale:.4f} ± "
                   f"{c.current_scale_std:.4f}; centre offset x, y, z: {off} "
                   "(- : not constrained by the readings, not fitted).")
    if result.background_field_uT is not None:
        bg = ", ".join("-" if v is None else f"{v:.1f} ± {sd:.1f}" for v, sd in
                       zip(result.background_field_uT, result.background_field_std_uT,
                           strict=True))
        out.append(f"Background (the Earth's) field fitted, x, y, z: {bg} µT; a meter reads "
                   "it too, the calibrated scenario holds the magnets only.")
    out.append(f"Flagged: residual beyond 3 standard deviations, left out of the fit "
               f"({result.n_flagged}).")
    u = result.suggested_field_uncertainty
    out.append(f"Uncertainty the residuals support (k = 2): [plan] field_uncertainty = "
               f"{u:.2f}.")
    out.append("Current scale and centre only: the model's shape, and steel it lacks, are "
               "not fitted (docs/survey.md).")
    return out


def _floor_rooms(site, result):
    """(floor name, its rooms, the floor of each reading): the floor holding most readings."""
    from fringe.model.site import site_plan

    plan = site_plan(site)
    if not result.points:
        return None, [], []
    names = [plan.floor_of_point(p.point_m[2]).name for p in result.points]
    best = max(set(names), key=names.count)
    return best, [r for r in plan.rooms if r.floor == best], names


#: Offsets (points) and alignment tried in turn for a reading's label on the plan.
_LABEL_SPOTS = ((6, 4, "left"), (6, -11, "left"), (-6, 4, "right"), (-6, -11, "right"),
                (0, 9, "center"), (0, -16, "center"))


def _label_points(ax, points, halo) -> None:
    """"label ratio" beside each reading, at the first spot clear of the labels already
    placed and of the markers (the last spot when none is clear)."""
    renderer = ax.get_figure().canvas.get_renderer()
    taken = []
    for p in points:
        xy = ax.transData.transform(p.point_m[:2])
        taken.append((xy[0] - 6, xy[1] - 6, xy[0] + 6, xy[1] + 6))
    for p in points:
        for dx, dy, ha in _LABEL_SPOTS:
            t = ax.annotate(f"{p.label} {p.ratio:.3f}", p.point_m[:2], xytext=(dx, dy),
                            textcoords="offset points", fontsize=6.5, color="0.15",
                            zorder=7, ha=ha, path_effects=halo)
            bb = t.get_window_extent(renderer)
            box = (bb.x0, bb.y0, bb.x1, bb.y1)
            clear = all(box[2] < o[0] or box[0] > o[2] or box[3] < o[1] or box[1] > o[3]
                        for o in taken)
            if clear or (dx, dy, ha) == _LABEL_SPOTS[-1]:
                taken.append(box)
                break
            t.remove()


def survey_plan_sheet(site, result) -> Figure:
    """Plan of the readings, each a dot coloured by measured/model (log scale centred on
    1), flagged readings crossed, with the rooms of the floor holding most readings and
    the magnets' winding outlines."""
    from matplotlib.cm import ScalarMappable
    from matplotlib.lines import Line2D

    from fringe.analysis.geometry import magnet_plan_outline
    from fringe.render import drawing as dr
    from fringe.render.sheet import _draw_frame, _draw_key_column, _new_figure

    floor, rooms, floors_of = _floor_rooms(site, result)
    pts = np.array([p.point_m for p in result.points])
    ratio = np.array([p.ratio for p in result.points])
    out = np.array([p.flag == "outlier" for p in result.points])
    xs = list(pts[:, 0]) + [m.center_m[0] for m in site.magnets]
    ys = list(pts[:, 1]) + [m.center_m[1] for m in site.magnets]
    for r in rooms:
        b = r.outline.bounds
        xs += [b[0], b[2]]
        ys += [b[1], b[3]]
    pad = 0.06 * max(max(xs) - min(xs), max(ys) - min(ys), 1.0)
    x = np.array([min(xs) - pad, max(xs) + pad])
    y = np.array([min(ys) - pad, max(ys) + pad])
    fig = _new_figure()
    info = _info(site, result, f"Survey readings on the plan ({floor} floor)",
                 "Each reading coloured by measured / model |B|")
    _draw_frame(fig, info, kind="plan")
    ax = dr._setup_map_axes(fig, x, y, "x (east), m", "y (north), m")
    for r in rooms:
        dr._add_polygon(ax, r.outline, facecolor="none", edgecolor="0.35", linewidth=1.0,
                        zorder=2)
        c = r.outline.representative_point()
        ax.text(c.x, c.y, r.name, ha="center", va="center", fontsize=7, color="0.45",
                zorder=2.5)
    for m in site.magnets:
        dr._add_polygon(ax, magnet_plan_outline(m), facecolor="0.75", edgecolor="0.2",
                        linewidth=1.0, zorder=3)
    norm = _ratio_norm(ratio, out, [p.sigma_rel for p in result.points])
    on_floor = np.array([f == floor for f in floors_of])
    kw = {"c": ratio, "cmap": RATIO_CMAP, "norm": norm, "s": 70, "edgecolors": "0.1",
          "linewidths": 0.8, "zorder": 5}
    ax.scatter(pts[on_floor, 0], pts[on_floor, 1], marker="o", **kw | {"c": ratio[on_floor]})
    if (~on_floor).any():
        ax.scatter(pts[~on_floor, 0], pts[~on_floor, 1], marker="^",
                   **kw | {"c": ratio[~on_floor]})
    if out.any():
        ax.scatter(pts[out, 0], pts[out, 1], marker="x", s=160, color=_OUTLIER_COLOR,
                   linewidths=2.0, zorder=6)
    _label_points(ax, result.points, dr._HALO)
    pos = ax.get_position()
    cax = fig.add_axes((pos.x0 + 0.25 * pos.width, max(pos.y0 - 0.075, 0.135),
                        0.5 * pos.width, 0.012), label="ratio scale")
    cb = fig.colorbar(ScalarMappable(norm=norm, cmap=RATIO_CMAP), cax=cax,
                      orientation="horizontal")
    cb.set_label("measured / model (log scale; flagged readings and readings near the "
                 "Earth's field take the end colours)", fontsize=8)
    ticks = [t for t in (0.5, 0.8, 0.9, 0.95, 1.0, 1.05, 1.1, 1.25, 2.0)
             if norm.vmin <= t <= norm.vmax]
    cb.set_ticks(ticks, labels=[f"{t:g}" for t in ticks])
    cb.ax.minorticks_off()
    cb.ax.tick_params(labelsize=7)
    handles = [Line2D([], [], marker="o", ls="", mfc="0.85", mec="0.1", ms=8),
               Line2D([], [], marker="x", ls="", color=_OUTLIER_COLOR, mew=2, ms=9)]
    labels = [f"reading on the {floor} floor (label, measured/model)",
              "flagged: beyond 3 standard deviations, not fitted"]
    if (~on_floor).any():
        handles.insert(1, Line2D([], [], marker="^", ls="", mfc="0.85", mec="0.1", ms=8))
        labels.insert(1, "reading on another floor (rooms not drawn)")
    handles.append(Line2D([], [], marker="s", ls="", mfc="0.75", mec="0.2", ms=9))
    labels.append("magnet windings (plan)")
    _draw_key_column(fig, handles, labels, "Readings", _notes(result))
    return fig


def measured_model_sheet(site, result) -> Figure:
    """Measured |B| against the model's (log-log): the 1:1 line, the band of the
    suggested uncertainty, the scenario's model and (after calibration) the calibrated
    model, flagged readings crossed."""
    from matplotlib.lines import Line2D
    from matplotlib.ticker import FuncFormatter

    from fringe.render.sheet import _WIDE, _draw_frame, _draw_key_column, _new_figure

    meas = np.array([p.measured_T for p in result.points]) * 1e3
    model = np.array([p.model_T for p in result.points]) * 1e3
    cal = np.array([p.model_calibrated_T for p in result.points]) * 1e3
    out = np.array([p.flag == "outlier" for p in result.points])
    fig = _new_figure()
    _draw_frame(fig, _info(site, result, "Survey: measured against model",
                           "|B| read by the gaussmeter against the model at the same point"),
                kind="curves")
    left, bottom, width, height = _WIDE
    side = min(width, height * fig.get_figheight() / fig.get_figwidth())
    ax = fig.add_axes((left + 0.04, bottom + 0.02, side * 0.92,
                       0.92 * side * fig.get_figwidth() / fig.get_figheight()),
                      label="measured-model")
    allv = np.concatenate([meas, model, cal[np.isfinite(cal)], [0.02]])
    lo, hi = float(np.min(allv)) / 1.6, float(np.max(allv)) * 1.6
    line = np.array([lo, hi])
    u = result.suggested_field_uncertainty
    ax.plot(line, line, color="0.1", lw=1.2, zorder=2)
    ax.axhspan(0.025, 0.065, color="#e8e0f0", zorder=0.5)  # NOAA/BGS WMM: 25-65 µT
    if math.isfinite(u) and u > 0:
        ax.fill_between(line, line * (1 - u), line * (1 + u), color="0.85", zorder=1)
    ax.scatter(model[~out], meas[~out], s=36, facecolor="#1f3b73", edgecolor="white",
               lw=0.5, zorder=4)
    has_cal = bool(np.isfinite(cal).any())
    if has_cal:
        ax.scatter(cal[~out], meas[~out], s=40, facecolor="none", edgecolor="#2a9d8f",
                   marker="s", lw=1.2, zorder=3)
    ax.scatter(model[out], meas[out], s=90, marker="x", color=_OUTLIER_COLOR, lw=2,
               zorder=5)
    for p, mo, me in zip(result.points, model, meas, strict=True):
        if p.flag == "outlier":
            ax.annotate(p.label, (mo, me), xytext=(6, -10), textcoords="offset points",
                        fontsize=7, color=_OUTLIER_COLOR)
    ax.set_xscale("log")
    ax.set_yscale("log")
    for a in (ax.xaxis, ax.yaxis):
        a.set_major_formatter(FuncFormatter(lambda v, _pos: f"{v:g}"))
    ax.set_xlim(lo, hi)
    ax.set_ylim(lo, hi)
    ax.set_aspect("equal")
    ax.set_xlabel("model |B|, mT", fontsize=9)
    ax.set_ylabel("measured |B|, mT", fontsize=9)
    ax.grid(True, which="both", color="0.85", lw=0.5)
    ax.tick_params(labelsize=8)
    handles = [Line2D([], [], color="0.1", lw=1.2),
               Line2D([], [], color="0.85", lw=8), Line2D([], [], color="#e8e0f0", lw=8),
               Line2D([], [], marker="o", ls="", mfc="#1f3b73", mec="white", ms=7)]
    labels = ["measured = model", f"model ± {u:.0%} (the suggested field_uncertainty)",
              "the Earth's field, 0.025-0.065 mT (a meter reads it too; the model has it "
              "only with [site] background_field_uT)",
              "reading against the scenario's model"]
    if has_cal:
        handles.append(Line2D([], [], marker="s", ls="", mfc="none", mec="#2a9d8f", mew=1.2,
                              ms=7))
        labels.append("reading against the calibrated model"
                      + (" and the fitted background" if result.background_field_uT is not None
                         else ""))
    handles.append(Line2D([], [], marker="x", ls="", color=_OUTLIER_COLOR, mew=2, ms=9))
    labels.append("flagged (against the scenario's model)")
    _draw_key_column(fig, handles, labels, "Readings", _notes(result))
    return fig


def write_survey_outputs(site, result, doc: dict, out_dir: str | Path,
                         calibrated_toml: str | None = None) -> list[str]:
    """Write survey.json (``doc``), calibrated.toml (when given), the plan sheet
    survey-plan.png/.pdf and the measured-against-model sheet
    survey-measured-model.png/.pdf into ``out_dir``, replaced whole and atomically;
    returns the file names."""
    from fringe.render.drawing import save_figure

    check_output_folder(out_dir, scenario_file=site.source_file, marker=SURVEY_MARKER)
    figs = {"survey-plan": survey_plan_sheet(site, result),
            "survey-measured-model": measured_model_sheet(site, result)}
    with atomic_directory(out_dir) as tmp:
        (tmp / SURVEY_MARKER).write_text(json.dumps(doc, indent=2, ensure_ascii=False)
                                         + "\n", "utf-8")
        if calibrated_toml is not None:
            (tmp / "calibrated.toml").write_text(calibrated_toml, "utf-8")
        for name, fig in figs.items():
            save_figure(fig, tmp / f"{name}.png")
            save_figure(fig, tmp / f"{name}.pdf")
        names = sorted(p.name for p in tmp.iterdir())
    return names
