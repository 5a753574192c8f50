"""``fringe shield``: size one steel part of a scenario by solving the site per thickness.

For each thickness the part's thinnest edge (a horizontal plate's z size) takes that
value, the site is solved with its steel, and the area of the controlled-area boundary
footprint outside the controlled rooms is summed over every floor
(:func:`fringe.analysis.steel.shield_sweep`; docs/steel.md).
"""

from __future__ import annotations

from fringe.model.constants import ADVISORY_NOTICE
from fringe.model.errors import ScenarioError, must_be

#: Parameters of :func:`fringe.analysis.steel.shield_sweep` → this command's options.
FLAGS: dict[str, str] = {"steel": "--steel", "thicknesses_mm": "--thickness-mm",
                         "grid_step_m": "--grid-step-m"}


def register(sub) -> None:
    p = sub.add_parser(
        "shield", help="size a steel plate: spill of the boundary line per thickness",
        description="Solve the site for each thickness of one [[steel]] part (its thinnest "
                    "edge: the z size of a horizontal plate) and print, per thickness, the "
                    "part's mass, the area of the controlled-area boundary footprint "
                    "outside the controlled rooms (all floors), the largest field in the "
                    "steel and whether it saturates. " + ADVISORY_NOTICE)
    p.add_argument("scenario", help="scenario TOML file")
    p.add_argument("--steel", required=True, metavar="NAME", help="the [[steel]] part to size")
    p.add_argument("--thickness-mm", dest="thickness_mm", required=True,
                   metavar="MM,MM,...", help="thicknesses to try, mm, comma-separated "
                                             "(e.g. 2,5,10,20)")
    p.add_argument("--grid-step-m", dest="grid_step_m", type=float, default=None,
                   metavar="M", help="plan grid step in m (default: the scenario's)")
    p.add_argument("--json", action="store_true", help="print JSON instead of text")
    p.add_argument("--quiet", action="store_true", help="no progress messages on stderr")
    p.set_defaults(func=run, flags=FLAGS)


def check_thicknesses(text: str) -> tuple[float, ...]:
    """Parse ``--thickness-mm`` (comma-separated mm)."""
    try:
        vals = tuple(float(v) for v in text.split(",") if v.strip())
    except ValueError:
        vals = ()
    if not vals:
        raise ScenarioError(must_be("--thickness-mm", "comma-separated thicknesses in mm, "
                                    "e.g. '2,5,10,20'", text))
    return vals


def _r(v: float, nd: int = 4) -> float:
    return float(f"{float(v):.{nd}g}")


def result_dict(site, steel: str, boundary_mT: float, options) -> dict:
    """The JSON document of ``fringe shield --json``."""
    return {"site": site.name, "steel": steel, "boundary_mT": boundary_mT,
            "options": [{"thickness_mm": o.thickness_mm, "mass_kg": _r(o.mass_kg, 5),
                         "spill_area_m2": _r(o.spill_area_m2),
                         "max_field_in_steel_T": _r(o.max_field_in_steel_T),
                         "saturated": o.saturated} for o in options],
            "advisory": ADVISORY_NOTICE}


def text_summary(site, steel: str, boundary_mT: float, options) -> str:
    """The text printed by ``fringe shield``."""
    from fringe.analysis.report import SPILL_TOLERANCE_M2
    from fringe.cli.textfmt import aligned_columns

    rows = [[f"{o.thickness_mm:g}", f"{o.mass_kg:.1f}", f"{o.spill_area_m2:.2f}",
             f"{o.max_field_in_steel_T:.3g}", "yes" if o.saturated else "no"] for o in options]
    lines = [f"site: {site.name}", f"steel: {steel}",
             f"spill: area of the {boundary_mT:g} mT footprint outside the controlled rooms, "
             "all floors", ""]
    lines += aligned_columns(["thickness mm", "mass kg", "spill m²", "max |B| in steel T",
                            "saturated"], rows, right={0, 1, 2, 3})
    clear = [o for o in options if o.spill_area_m2 <= SPILL_TOLERANCE_M2]
    lines.append("")
    lines.append(f"thinnest without spill: {min(o.thickness_mm for o in clear):g} mm" if clear
                 else "no thickness tried brings the spill to zero")
    lines.append(ADVISORY_NOTICE)
    return "\n".join(lines)


def run(args) -> int:
    from fringe.analysis.steel import shield_sweep
    from fringe.cli.main import print_json
    from fringe.cli.progress import Progress
    from fringe.io.scenario import load_site

    thick = check_thicknesses(args.thickness_mm)
    site = load_site(args.scenario)
    if not site.magnets:
        raise ScenarioError("`magnet` must list at least one magnet; got none", args.scenario)
    say = Progress(args.quiet or args.json)
    options = shield_sweep(site, args.steel, thick, grid_step_m=args.grid_step_m, progress=say)
    b = site.plan.boundary.value_mT
    if args.json:
        print_json(result_dict(site, args.steel, b, options))
    else:
        print(text_summary(site, args.steel, b, options))
    return 0
