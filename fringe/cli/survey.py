"""``fringe survey``: gaussmeter readings against the model; with ``--calibrate``, fit each
magnet's current scale and centre to them and write the calibrated scenario.

See docs/survey.md for the readings file, the fit, its assumptions and its limits.
"""

from __future__ import annotations

import math
import textwrap
from pathlib import Path

from fringe.model.constants import ADVISORY_NOTICE

#: Parameters of :func:`fringe.analysis.survey.survey` → this command's options.
FLAGS: dict[str, str] = {"magnet": "--magnet", "readings": "--readings"}


def register(sub) -> None:
    p = sub.add_parser(
        "survey", help="compare gaussmeter readings with the model; calibrate magnets",
        description="Read a survey (a CSV file of gaussmeter readings: x_m, y_m, z_m, B_mT "
                    "and optional Bx_mT, By_mT, Bz_mT, uncertainty_mT, label, note) and "
                    "print the model's |B| at each reading and measured/model. With "
                    "--calibrate, fit each magnet's current scale (all its coils "
                    "together) and, where the readings constrain it, an offset of its "
                    "centre, by weighted least squares on ln|B|; readings beyond 3 "
                    "standard deviations are flagged and left out. Prints the "
                    "field_uncertainty the residuals support, for the scenario's [plan]. "
                    + ADVISORY_NOTICE)
    p.add_argument("scenario", help="scenario TOML file")
    p.add_argument("--readings", required=True, metavar="FILE",
                   help="the readings, CSV with a header row (docs/survey.md)")
    p.add_argument("--calibrate", action="store_true",
                   help="fit current scales and centre offsets to the readings")
    p.add_argument("--magnet", metavar="NAME",
                   help="with --calibrate: fit only this magnet (default: every magnet)")
    p.add_argument("--json", action="store_true", help="print JSON instead of text")
    p.add_argument("--out", metavar="DIR",
                   help="write survey.json, the sheets survey-plan and "
                        "survey-measured-model (.png, .pdf) and, with --calibrate, "
                        "calibrated.toml into DIR (replaced whole, atomically)")
    p.add_argument("--quiet", action="store_true", help="no progress messages on stderr")
    p.set_defaults(func=run, flags=FLAGS)


def _r(v, nd: int = 6):
    if v is None:
        return None
    v = float(v)
    return float(f"{v:.{nd}g}") if math.isfinite(v) else None


def _opt(values, nd: int):
    return None if values is None else [_r(v, nd) for v in values]


def result_dict(result) -> dict:
    """The JSON document of ``fringe survey --json`` (and survey.json)."""
    return {
        "advisory": ADVISORY_NOTICE,
        "readings_file": result.readings_file,
        "points": [{"label": p.label, "point_m": [_r(v) for v in p.point_m],
                    "measured_T": _r(p.measured_T), "model_T": _r(p.model_T),
                    "ratio": _r(p.ratio), "flag": p.flag} for p in result.points],
        "rms_log_residual": _r(result.rms_log_residual),
        "calibration": [{"magnet": c.magnet, "current_scale": _r(c.current_scale),
                         "current_scale_std": _r(c.current_scale_std, 3),
                         "center_offset_m": [_r(v, 4) for v in c.center_offset_m],
                         "center_offset_std_m": [_r(v, 3) for v in c.center_offset_std_m],
                         "rms_log_residual_after": _r(c.rms_log_residual_after)}
                        for c in result.calibration],
        "boundaries_calibrated": [{"magnet": b.magnet, "threshold_mT": b.threshold_mT,
                                   "axial_extent_m": _r(b.axial_extent_m, 5),
                                   "radial_extent_m": _r(b.radial_extent_m, 5)}
                                  for b in result.boundaries_calibrated],
        "background_field_uT": _opt(result.background_field_uT, 4),
        "background_field_std_uT": _opt(result.background_field_std_uT, 3),
        "suggested_field_uncertainty": _r(result.suggested_field_uncertainty),
        "notes": list(result.notes),
    }


def _fmt_mT(v_T: float) -> str:
    return f"{v_T * 1e3:.4g}"


def text_summary(site, result, out_dir: str | None) -> str:
    """The text printed by ``fringe survey``."""
    lines = [f"site: {site.name}",
             f"readings: {result.readings_file} ({len(result.points)}, "
             f"{result.n_flagged} flagged)", ""]
    rows = [("label", "x, y, z (m)", "measured mT", "model mT", "ratio", "flag")]
    for p in result.points:
        rows.append((p.label, ", ".join(f"{v:.2f}" for v in p.point_m), _fmt_mT(p.measured_T),
                     _fmt_mT(p.model_T), f"{p.ratio:.4f}",
                     "OUTLIER" if p.flag == "outlier" else ""))
    w = [max(len(r[j]) for r in rows) for j in range(6)]
    align = "<<>>><"
    for r in rows:
        lines.append("  ".join(f"{c:{a}{n}}" for c, a, n in zip(r, align, w, strict=True))
                     .rstrip())
    lines += ["", f"rms of ln(measured/model), readings not flagged: "
                  f"{result.rms_log_residual:.4f}"]
    for c in result.calibration:
        lines.append(f"calibration of {c.magnet}: current scale {c.current_scale:.4f} "
                     f"± {c.current_scale_std:.4f} (standard error)")
        for ax, v, s in zip("xyz", c.center_offset_m, c.center_offset_std_m, strict=True):
            lines.append(f"  centre offset {ax}: " + ("not fitted (not constrained by the "
                                                      "readings)" if v is None else
                                                      f"{v * 1e3:+.1f} ± {s * 1e3:.1f} mm"))
        lines.append(f"  rms of ln(measured/model) after: {c.rms_log_residual_after:.4f}")
    if result.background_field_uT is not None:
        parts = [f"{ax} " + ("not fitted" if v is None else f"{v:.1f} ± {sd:.1f}")
                 for ax, v, sd in zip("xyz", result.background_field_uT,
                                      result.background_field_std_uT, strict=True)]
        lines.append("background field fitted (the Earth's; not written to the scenario), "
                     "µT: " + ", ".join(parts))
    if result.calibration:
        lines.append(f"degrees of freedom of the fit: {result.dof}")
        bnd = site.plan.boundary.value_mT
        for b in result.boundaries_calibrated:
            if math.isclose(b.threshold_mT, bnd):
                lines.append(f"calibrated {b.threshold_mT:g} mT line of {b.magnet}: "
                             f"{b.axial_extent_m:.2f} m along the axis, "
                             f"{b.radial_extent_m:.2f} m across")
    for n in result.notes:
        lines.append(f"note: {n}")
    u = result.suggested_field_uncertainty
    lines += ["", f"the residuals support a field uncertainty of {u:.2f} "
                  "(k = 2); put in the scenario's [plan]:", f"field_uncertainty = {u:.2f}"]
    if out_dir:
        lines.append(f"outputs: {out_dir}")
    lines.append(ADVISORY_NOTICE)
    return "\n".join(lines)


def calibrated_toml(site, result, out_dir: str) -> str:
    """The calibrated scenario (the original with the fitted currents and centres)."""
    from datetime import UTC, datetime

    from fringe.io.scenario_edit import edited_scenario_toml

    changes = {}
    head = [f"Calibrated by fringe survey on {datetime.now(UTC).date().isoformat()} from "
            f"the scenario {Path(site.source_file).resolve()}",
            f"and the readings {Path(result.readings_file).resolve()} "
            f"({len(result.points)} readings, {result.n_flagged} flagged and left out).",
            "Fit: weighted least squares on ln|B| (docs/survey.md)."]
    for c in result.calibration:
        m = c.calibrated
        changes[c.magnet] = ([round(v, 4) + 0.0 for v in m.center_m], [
            {"r_inner_m": k.r_inner_m, "r_outer_m": k.r_outer_m, "z_min_m": k.z_min_m,
             "z_max_m": k.z_max_m, "turns": k.turns, "current_A": float(f"{k.current_A:.7g}")}
            for k in m.coils])
        off = ", ".join("not fitted" if v is None else f"{v * 1e3:+.1f} ± {s * 1e3:.1f} mm"
                        for v, s in zip(c.center_offset_m, c.center_offset_std_m, strict=True))
        head.append(f"{c.magnet}: current scale {c.current_scale:.5f} ± "
                    f"{c.current_scale_std:.5f}; centre offset x, y, z: {off}.")
    head += [f"The residuals support [plan] field_uncertainty = "
             f"{result.suggested_field_uncertainty:.2f}. Centres rounded to 0.1 mm, currents "
             "to 7 digits.", ADVISORY_NOTICE]
    lines = [w for h in head for w in textwrap.wrap(h, 90, break_on_hyphens=False)]
    return edited_scenario_toml(site.source_file, changes, out_dir=out_dir,
                                header=lines + [""])


def run(args) -> int:
    from fringe.analysis.survey import survey
    from fringe.cli.main import print_json
    from fringe.cli.progress import Progress
    from fringe.io.readings import load_readings
    from fringe.io.scenario import load_site

    site = load_site(args.scenario)
    if args.magnet is not None:
        site.magnet(args.magnet)
    readings = load_readings(args.readings)
    if args.out:
        from fringe.io.atomic import check_output_folder
        from fringe.render.survey import SURVEY_MARKER

        check_output_folder(args.out, scenario_file=site.source_file, marker=SURVEY_MARKER,
                            name="--out")
    say = Progress(args.quiet or args.json)
    say("comparing the readings with the model" + (" and calibrating" if args.calibrate
                                                  else ""))
    result = survey(site, readings, calibrate=args.calibrate, magnet=args.magnet)
    doc = result_dict(result)
    if args.out:
        say("writing the outputs")
        from fringe.render.survey import write_survey_outputs

        toml = calibrated_toml(site, result, args.out) if result.calibration else None
        write_survey_outputs(site, result, doc, args.out, toml)
    if args.json:
        print_json(doc)
    else:
        print(text_summary(site, result, args.out))
    return 0
