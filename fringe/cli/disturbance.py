"""``fringe disturbance``: the change of a magnet's isocentre field as steel moves past.

See docs/disturbance.md for the model (a soft-steel sphere, magnetised by the magnets'
field and a uniform background) and its limits.
"""

from __future__ import annotations

from fringe.model.constants import ADVISORY_NOTICE
from fringe.model.errors import ScenarioError, must_be

#: Library parameters → this command's options (errors about a parameter name the option).
FLAGS: dict[str, str] = {"magnet": "--magnet", "mass_kg": "--mass-kg", "steps": "--steps",
                         "background_uT": "--background-uT", "positions_m": "--from/--to"}
#: Default number of points along the path (fringe.analysis.moving_steel.DEFAULT_STEPS;
#: repeated here so that --help does not import numpy).
DEFAULT_STEPS: int = 21


def register(sub) -> None:
    p = sub.add_parser(
        "disturbance", help="field change at the isocentre as steel moves past",
        description="Move a compact steel object (a lift car, a vehicle, a trolley: "
                    "modelled as a solid soft-steel sphere of its mass) along a straight "
                    "path and print the change of the field at a magnet's isocentre, along "
                    "its axis, in T and in ppm of the centre field. The sphere is magnetised "
                    "by the magnets' field and a uniform background field (the Earth's). "
                    + ADVISORY_NOTICE)
    p.add_argument("scenario", help="scenario TOML file")
    p.add_argument("--magnet", metavar="NAME",
                   help="the magnet whose isocentre is disturbed (optional when the site "
                        "has one magnet)")
    p.add_argument("--mass-kg", dest="mass_kg", type=float, required=True, metavar="M",
                   help="mass of the steel, kg")
    p.add_argument("--from", dest="start", nargs=3, type=float, required=True,
                   metavar=("X", "Y", "Z"), help="start of the path, site frame, m")
    p.add_argument("--to", dest="end", nargs=3, type=float, required=True,
                   metavar=("X", "Y", "Z"), help="end of the path, site frame, m")
    p.add_argument("--steps", type=int, default=DEFAULT_STEPS, metavar="N",
                   help=f"points along the path, ends included (default {DEFAULT_STEPS})")
    p.add_argument("--background-uT", dest="background_uT", nargs=3, type=float,
                   metavar=("BX", "BY", "BZ"),
                   help="uniform background field in µT, site frame (default: the "
                        "scenario's [site] background_field_uT, else none, with a warning)")
    p.add_argument("--json", action="store_true", help="print JSON instead of a table")
    p.set_defaults(func=run, flags=FLAGS)


def _magnet_name(site, given: str | None) -> str:
    if given is not None:
        return site.magnet(given).name
    if len(site.magnets) == 1:
        return site.magnets[0].name
    raise ScenarioError(must_be("--magnet", "given when the site has several magnets "
                                f"({site.magnet_names()})", "none"))


def result_dict(d, source: str) -> dict:
    """The JSON document of ``fringe disturbance --json``."""
    return {"magnet": d.magnet, "mass_kg": d.mass_kg, "center_field_T": d.center_field_T,
            "points": [{"position_m": [float(v) for v in p], "delta_B_T": float(b),
                        "delta_B_ppm": float(q)}
                       for p, b, q in zip(d.positions_m, d.delta_B_T, d.delta_B_ppm,
                                          strict=True)],
            "max_abs_delta_B_ppm": d.max_abs_delta_B_ppm,
            "background_field_uT": [v * 1e6 for v in d.background_T],
            "background_source": source,
            "advisory": ADVISORY_NOTICE}


def text_summary(site, d, source: str) -> str:
    """The text printed by ``fringe disturbance``."""
    import math

    from fringe.cli.textfmt import aligned_table, format_small_field_T
    from fringe.physics.disturbance import DEFAULT_STEEL, sphere_radius_m

    bg = ", ".join(f"{v * 1e6:g}" for v in d.background_T)
    where = {"option": "--background-uT", "scenario": "[site] background_field_uT",
             "none": "none given: zero"}[source]
    big = d.max_abs_delta_B_ppm  # one fixed number of decimals: 4 digits on the largest
    nd = min(12, max(0, 3 - math.floor(math.log10(big)))) if big > 0 else 0
    rows = [[f"{p[0]:.3f}", f"{p[1]:.3f}", f"{p[2]:.3f}", format_small_field_T(b),
             f"{q:.{nd}f}"] for p, b, q in zip(d.positions_m, d.delta_B_T, d.delta_B_ppm,
                                            strict=True)]
    k = d.worst_index
    w = d.positions_m[k]
    lines = [f"site: {site.name}",
             f"magnet: {d.magnet}; centre field {d.center_field_T:.5g} T along its axis",
             f"steel: {d.mass_kg:g} kg as a solid sphere of radius "
             f"{sphere_radius_m(d.mass_kg):.3g} m (ρ {DEFAULT_STEEL.density_kg_per_m3:g} kg/m³, "
             f"M_s {DEFAULT_STEEL.saturation_A_per_m / 1e6:g} MA/m)",
             f"background field: ({bg}) µT ({where})", ""]
    lines += aligned_table(["x_m", "y_m", "z_m", "ΔB at isocentre", "ΔB_ppm"], rows)
    lines += ["", f"largest change: {d.delta_B_ppm[k]:.4g} ppm "
                  f"({format_small_field_T(float(d.delta_B_T[k]))}) with the steel at "
                  f"({w[0]:.3f}, {w[1]:.3f}, {w[2]:.3f}) m",
              ADVISORY_NOTICE]
    return "\n".join(lines)


def run(args) -> int:
    import math

    from fringe.analysis.moving_steel import path_disturbance, segment_points
    from fringe.cli.main import print_json
    from fringe.io.scenario import load_site

    if not (math.isfinite(args.mass_kg) and args.mass_kg > 0):
        raise ScenarioError(must_be("--mass-kg", "a positive number of kg", args.mass_kg))
    if args.steps < 2:
        raise ScenarioError(must_be("--steps", "a whole number ≥ 2", args.steps))
    for flag, v in (("--from", args.start), ("--to", args.end),
                    ("--background-uT", args.background_uT)):
        if v is not None and not all(math.isfinite(x) for x in v):
            raise ScenarioError(must_be(flag, "3 finite numbers", v))
    site = load_site(args.scenario)
    if not site.magnets:
        raise ScenarioError("`magnet` must list at least one magnet; got none", args.scenario)
    name = _magnet_name(site, args.magnet)
    source = ("option" if args.background_uT is not None
              else "scenario" if site.background_field_uT is not None else "none")
    pts = segment_points(args.start, args.end, args.steps)
    d = path_disturbance(site, name, args.mass_kg, pts, args.background_uT)
    if args.json:
        print_json(result_dict(d, source))
    else:
        print(text_summary(site, d, source))
    return 0
