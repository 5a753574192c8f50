"""``fringe report``: maps, footprints, verdicts, drawings and summary for a scenario."""

from __future__ import annotations

from pathlib import Path
from typing import TYPE_CHECKING

from fringe.cli.main import add_formats_option
from fringe.cli.progress import Progress
from fringe.model.constants import ADVISORY_NOTICE, FIELD_BASIS_NOTE

if TYPE_CHECKING:
    from fringe.analysis.report import ReportResult

EXIT_OK, EXIT_EXCEEDS = 0, 3


def register(sub) -> None:
    p = sub.add_parser(
        "report", help="floor-plan footprints, room and equipment verdicts, drawings",
        description="Compute each floor's field footprints (largest |B| over the occupied "
                    "band), verdicts for rooms and equipment, sections through each magnet, "
                    "and write summary.json, zones.geojson, CSV tables, plan and section "
                    "sheets (PNG, SVG) and report.pdf into --out (replaced whole, "
                    "atomically). Exit code 3 when any verdict is 'exceeds' — a room, a "
                    "piece of equipment, or a floor where the boundary line leaves the "
                    "controlled rooms (unless --no-fail). " + ADVISORY_NOTICE)
    p.add_argument("scenario", help="scenario TOML file")
    p.add_argument("--out", required=True, metavar="DIR",
                   help="output folder (created; an existing one is replaced)")
    p.add_argument("--no-fail", action="store_true",
                   help="exit 0 even when a verdict is 'exceeds'")
    p.add_argument("--grid-step-m", type=float, metavar="M", default=None,
                   help="plan and section grid step in m (overrides plan.grid_step_m)")
    p.add_argument("--no-drawings", action="store_true",
                   help="write only the JSON, GeoJSON and CSV outputs (faster)")
    p.add_argument("--quiet", action="store_true", help="no progress messages on stderr")
    add_formats_option(p)
    p.set_defaults(func=run, flags={"grid_step_m": "--grid-step-m", "formats": "--formats"})


def closing_verdict(result, *, fail: bool = True) -> tuple[str, int]:
    """The closing verdict line and the exit code, both from one
    :func:`fringe.analysis.overall.overall_verdict`.

    Parameters
    ----------
    result : ReportResult
    fail : bool
        False for ``--no-fail``: exit 0 even when something exceeds.

    Returns
    -------
    line : str
        ``verdict: N items exceed: …`` or ``verdict: nothing exceeds its limit (…)``.
    exit_code : int
        :data:`EXIT_EXCEEDS` when anything exceeds and ``fail``, else :data:`EXIT_OK`.
    """
    v = result.overall()
    return v.line(), (EXIT_EXCEEDS if v.exceeds and fail else EXIT_OK)


def rooms_table(rooms, format_field) -> list[str]:
    """The rooms' rows, every column aligned (widths from the longest name, floor, access).

    Parameters
    ----------
    rooms : sequence of room checks
        With ``name``, ``floor``, ``access``, ``max_field_T``, ``limit_T`` and ``verdict``.
    format_field : callable
        ``format_field(field_T, digits)``: a field with its unit.
    """
    wn = max(len(c.name) for c in rooms)
    wf = max(len(str(c.floor)) for c in rooms)
    wa = max(len(str(c.access)) for c in rooms)
    out = []
    for c in rooms:
        lim = "-" if c.limit_T is None else f"{c.limit_T * 1e3:g}"
        out.append(f"  {c.name:<{wn}}  {c.floor!s:<{wf}}  {c.access!s:<{wa}}  max "
                   f"{format_field(c.max_field_T, 4):>13}  limit {lim:>6} mT  {c.verdict}")
    return out


def _spread_lines(m, format_energy_J) -> list[str]:
    """The fit spread of a data-sheet magnet, one line per plan line and one for the
    energy (none for a magnet given by coils)."""
    sp = getattr(m, "fit_spread", None)
    if sp is None:
        return []
    out = [f"  fit spread over {sp.models} model{'' if sp.models == 1 else 's'} meeting the "
           "data sheet within its rounding (docs/fit.md):"]
    for t, (a0, a1), (r0, r1) in sp.boundaries:
        out.append(f"    {t:g} mT line {a0:.2f}-{a1:.2f} m along, {r0:.2f}-{r1:.2f} m across")
    out.append(f"    stored energy {format_energy_J(sp.stored_energy_J[0], 3)} to "
               f"{format_energy_J(sp.stored_energy_J[1], 3)} (the quench budget uses the "
               "largest)")
    return out


def terminal_summary(result, out_dir: str | Path) -> str:
    """The short text printed after a report (verdicts first, then where files went)."""
    from fringe.cli.textfmt import format_energy_J
    from fringe.render.sheet import format_field  # matplotlib: not at command start-up

    r = result
    lines = [f"site: {r.site_name}",
             f"boundary: {r.boundary.value_mT:g} mT ({r.boundary.source})"]
    for m in r.magnets:
        for t, a, rr in m.boundaries:
            if abs(t - r.boundary.value_mT) < 1e-9 * t:
                reach = m.reach(t)
                line = (f"{t:g} mT line {a:.2f} m along, {rr:.2f} m across the axis"
                        if reach is None else
                        f"{t:g} mT line reaches {reach[0]:.2f} m from the axis ({rr:.2f} m "
                        f"in the centre plane), {reach[1]:.2f} m along it")
                lines.append(f"magnet {m.name}: centre {m.center_field_T:.3g} T; {line}; "
                             f"stored energy {format_energy_J(m.stored_energy_J, 3)}")
        if m.origin != "coils" and m.description:
            lines.append(f"  model: {m.description}")
        lines += _spread_lines(m, format_energy_J)
    for name, fps in r.footprints.items():
        b = next(fp for fp in fps if abs(fp.threshold_mT - r.boundary.value_mT)
                 < 1e-9 * fp.threshold_mT)
        fm = r.floor_maps[name]
        lines.append(f"floor {name}: {b.threshold_mT:g} mT footprint {b.area_m2:.2f} m² "
                     f"({r.outside_controlled_m2[name]:.2f} m² outside controlled rooms); "
                     f"band-sampling error {100 * fm.band_error_rel:.2g} %"
                     + ("; CLIPPED at the plan edge" if b.clipped else ""))
    if r.rooms:
        lines.append("rooms:")
        lines += rooms_table(r.rooms, format_field)
    ceiling = [c for c in r.rooms
               if c.name in r.ceilings and r.ceilings[c.name].ceiling_exceeds]
    if ceiling:
        lines.append("above the occupied band, up to the ceiling: " + "; ".join(
            f"{c.name} ({c.floor}) reaches {format_field(r.ceilings[c.name].max_field_T)} "
            f"(limit {c.limit_T * 1e3:g} mT)" for c in ceiling))
    if r.equipment:
        w = max(len(e.name) for e in r.equipment)
        lines.append("equipment:")
        for e in r.equipment:
            lines.append(f"  {e.name:<{w}}  {format_field(e.field_T, 4):>13}  limit "
                         f"{e.limit_T * 1e3:g} mT  {e.verdict}"
                         + ("  (largest over its volume)" if e.outline is not None else ""))
    for b in r.quench:
        below = [t["threshold"] for t in b.to_dict()["oxygen_thresholds"]
                 if t["worst_case"] == "falls below"]
        lines.append(f"quench {b.magnet}: energy-limited boil-off {b.helium_boiled_kg:.3g} kg; "
                     f"whole inventory {b.inventory_kg:.3g} kg; its room oxygen "
                     f"{100 * b.oxygen_fraction_worst_case:.2g} % well mixed, "
                     f"{100 * b.oxygen_fraction_worst_case_displacement:.2g} % by displacement "
                     f"(harsher) in {b.room_volume_m3:g} m³"
                     + (f" — falls below {', '.join(below)} oxygen if the vent fails: the quench "
                        "vent and oxygen monitoring must be in place per local code and the "
                        "supplier" if below else ""))
    for c in r.moving_steel:
        d = c.disturbance
        lim = "no limit given" if c.limit_ppm is None else f"limit {c.limit_ppm:g} ppm  " \
            f"{c.verdict}"
        lines.append(f"moving steel {c.name} ({d.mass_kg:g} kg): up to "
                     f"{d.max_abs_delta_B_ppm:.3g} ppm at the isocentre of {d.magnet}  {lim}")
    if r.steel:
        from fringe.analysis.steel import steel_notes

        lines.append("steel (solved with the magnets; floors, rooms and equipment include it):")
        w = max(len(p.name) for p in r.steel)
        for p in r.steel:
            f = sum(v * v for v in p.force_N) ** 0.5
            lines.append(f"  {p.name:<{w}}  {p.mass_kg:9.1f} kg  max |B| in it "
                         f"{p.max_field_in_steel_T:.3g} T{'  SATURATED' if p.saturated else ''}"
                         f"  force {f:.3g} N")
        lines += steel_notes(r.steel)
    spill = [i.name for i in r.overall().items if i.kind == "floor"]
    if spill:
        lines.append(f"the {r.boundary.value_mT:g} mT line reaches beyond the controlled rooms "
                     f"on {'floor' if len(spill) == 1 else 'floors'} "
                     f"{', '.join(spill)}: extend the controlled access area or "
                     "change the layout")
    lines.append(closing_verdict(r)[0])
    lines.append(f"outputs: {out_dir}")
    lines.append(FIELD_BASIS_NOTE)
    lines.append(ADVISORY_NOTICE)
    return "\n".join(lines)


def run_report(scenario: str | Path, out_dir: str | Path, *, grid_step_m: float | None = None,
               drawings: bool = True, quiet: bool = False,
               formats: tuple[str, ...] | None = None) -> ReportResult:
    """Load, compute, write; returns the :class:`fringe.analysis.report.ReportResult`.

    ``formats``: the sheet formats to write (``--formats``; None: all).
    """
    from fringe.analysis.report import check_grid_step_m, compute_report
    from fringe.io.atomic import check_output_folder
    from fringe.io.prefetch import prefetch_quench_data
    from fringe.io.scenario import load_site
    from fringe.render.report import write_report

    # an output folder we must not replace is refused before loading and computing
    check_output_folder(out_dir, scenario_file=str(scenario), marker="summary.json",
                        name="--out")
    site = load_site(scenario)
    if grid_step_m is not None:
        check_grid_step_m(grid_step_m, "--grid-step-m")
    progress = Progress(quiet)
    progress(f"loaded {scenario}")
    # a child starts CoolProp (~1 s+) while this process imports the drawing stack and
    # computes the maps
    prefetch_quench_data(site)
    if drawings:
        from fringe.render import drawing  # noqa: F401
    result = compute_report(site, grid_step_m=grid_step_m, progress=progress)
    kw = {} if formats is None else {"formats": formats}
    write_report(result, out_dir, drawings=drawings, progress=progress, **kw)
    progress(f"wrote {out_dir}")
    return result


def run(args) -> int:
    result = run_report(args.scenario, args.out, grid_step_m=args.grid_step_m,
                        drawings=not args.no_drawings, quiet=args.quiet,
                        formats=args.formats)
    print(terminal_summary(result, args.out))
    return closing_verdict(result, fail=not args.no_fail)[1]
