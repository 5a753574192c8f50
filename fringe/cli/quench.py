"""``fringe quench``: the quench release budget of one magnet.

Only parses, calls the library and renders: the site-level budget is
:func:`fringe.analysis.quench.budget_for_site`, the physics in :mod:`fringe.physics.quench`.
"""

from __future__ import annotations

import math
import sys
from typing import TYPE_CHECKING

from fringe.model.constants import ADVISORY_NOTICE
from fringe.model.errors import ScenarioError, must_be

if TYPE_CHECKING:
    from fringe.model.site import QuenchInputs, Site
    from fringe.physics.quench import QuenchBudget

#: CLI option → (QuenchInputs attribute, scenario key, check). One list: parsing,
#: scenario fall-back and error messages all read it.
_OPTIONS: tuple[tuple[str, str, str], ...] = (
    ("--helium-L", "helium_L", "positive"),
    ("--room-volume-m3", "room_volume_m3", "positive"),
    ("--dump-ohm", "dump_ohm", "positive"),
    ("--magnet-resistance-ohm", "magnet_resistance_ohm", "non-negative"),
    ("--room-temperature-C", "room_temperature_C", "room temperature"),
    ("--room-pressure-kPa", "room_pressure_kPa", "room pressure"),
)


def register(sub) -> None:
    p = sub.add_parser(
        "quench", help="quench release budget: helium boil-off, gas, room oxygen, dump decay",
        description=("Quench release budget of one magnet: energy-limited and whole-inventory "
                     "helium release, gas volume at room conditions, room oxygen after a "
                     "release into the magnet room, and the decay into an external dump "
                     "resistor. Values may come from a [[quench]] table of the scenario; "
                     "options override them. " + ADVISORY_NOTICE))
    p.add_argument("scenario", help="scenario TOML file")
    p.add_argument("--magnet", metavar="NAME",
                   help="magnet name (default: the only [[quench]] table's or the only magnet)")
    p.add_argument("--helium-L", dest="helium_L", type=float, metavar="LITRES",
                   help="liquid helium inventory, litres")
    p.add_argument("--room-volume-m3", dest="room_volume_m3", type=float, metavar="V",
                   help="free air volume of the magnet room, m³")
    p.add_argument("--dump-ohm", dest="dump_ohm", type=float, metavar="R",
                   help="external dump resistance, Ω (adds the current decay)")
    p.add_argument("--magnet-resistance-ohm", dest="magnet_resistance_ohm", type=float,
                   metavar="R", help="magnet's own resistance during the decay, Ω (default 0)")
    p.add_argument("--room-temperature-C", dest="room_temperature_C", type=float, metavar="T",
                   help="room temperature, °C (default 20)")
    p.add_argument("--room-pressure-kPa", dest="room_pressure_kPa", type=float, metavar="P",
                   help="room pressure, kPa (default 101.325)")
    p.add_argument("--vent-diameter-mm", dest="vent_diameter_mm", type=float, metavar="D",
                   help="inner diameter of the quench vent, mm: adds the mean gas velocity "
                        "at the peak flow (needs --dump-ohm; a plausibility check only)")
    p.add_argument("--json", action="store_true", help="print JSON instead of text")
    p.add_argument("--pdf", metavar="FILE",
                   help="also write the budget sheets (and the decay curves) to a PDF")
    p.set_defaults(func=run, flags={"magnet": "--magnet"})


def _pick_magnet(site: Site, name: str | None) -> str:
    if name is not None:
        return site.magnet(name).name  # ArgumentError listing the names otherwise
    tables = site.quench
    if len(tables) == 1:
        return tables[0].magnet
    if len(site.magnets) == 1:
        return site.magnets[0].name
    raise ScenarioError("`--magnet` must be given to choose one of the magnets "
                        f"({site.magnet_names()}); "
                        "got nothing", site.source_file or None)


def _check_option(option: str, kind: str, value: float) -> None:
    ok = math.isfinite(value)
    expectation = {"positive": "a finite number > 0",
                   "non-negative": "a finite number ≥ 0",
                   "room temperature": "a temperature between -60 and 60 °C",
                   "room pressure": "a pressure between 50 and 200 kPa"}[kind]
    if kind == "positive":
        ok = ok and value > 0
    elif kind == "non-negative":
        ok = ok and value >= 0
    elif kind == "room temperature":
        ok = ok and -60.0 <= value <= 60.0
    else:
        ok = ok and 50.0 <= value <= 200.0
    if not ok:
        raise ScenarioError(must_be(option, expectation, value))


def resolve_inputs(args, site: Site) -> QuenchInputs:
    """Merge the scenario's ``[[quench]]`` table with the command-line options."""
    from fringe.model.site import QuenchInputs

    name = _pick_magnet(site, args.magnet)
    base = site.quench_inputs(name) or QuenchInputs(name)
    values = {}
    for option, attr, kind in _OPTIONS:
        v = getattr(args, attr, None)
        if v is not None:
            _check_option(option, kind, v)
            values[attr] = float(v)
        else:
            values[attr] = getattr(base, attr)
    for option, attr in (("--helium-L", "helium_L"), ("--room-volume-m3", "room_volume_m3")):
        if values[attr] is None:
            raise ScenarioError(
                f"`{option}` must be given (or `{attr}` in a [[quench]] table for magnet "
                f"{name!r}); got nothing", site.source_file or None)
    return QuenchInputs(name, **values)


def _pct(x: float) -> str:
    return f"{100.0 * x:.2f} %"


def format_budget(b: QuenchBudget, site_name: str = "") -> str:
    """The human-readable budget, cautions included."""
    he = b.helium
    room = f"{b.room_temperature_C:g} °C, {b.room_pressure_kPa:g} kPa"
    lines = []
    if site_name:
        lines.append(f"site: {site_name}")
    lines += [
        f"QUENCH RELEASE BUDGET — magnet {b.magnet!r}",
        "",
        f"  stored energy W                 {b.stored_energy_J / 1e6:10.4g} MJ",
        f"  helium inventory                {b.helium_L:10.5g} L liquid  "
        f"= {b.inventory_kg:.4g} kg",
        "  energy-limited boil-off W/h_fg  "
        f"{b.helium_boiled_uncapped_kg:10.4g} kg"
        + ("  (more than the inventory: capped)" if b.capped_by_inventory else ""),
        f"    after the inventory cap       {b.helium_boiled_kg:10.4g} kg = "
        f"{b.helium_boiled_L:.4g} L liquid -> {b.gas_volume_m3:.4g} m³ gas at {room}",
        f"  largest release: whole inventory {b.inventory_kg:9.4g} kg = "
        f"{b.helium_L:.4g} L liquid -> {b.inventory_gas_volume_m3:.4g} m³ gas",
        "  (W/h_fg is an upper bound for the boil-off the energy alone causes — part of W "
        "warms the cold",
        "   mass and the gas — but the whole inventory can still be lost: plan for that "
        "release.)",
        "",
        f"ROOM OXYGEN if the gas stays in the room ({b.room_volume_m3:g} m³; well mixed, "
        "displaced air escapes, no ventilation, vent pipe failed)",
        f"  after the energy-limited release {_pct(b.oxygen_fraction_energy_limited):>10}",
        f"  after the whole inventory        {_pct(b.oxygen_fraction_worst_case):>10}"
        f"   (well mixed; the displacement estimate "
        f"{_pct(b.oxygen_fraction_worst_case_displacement)} is harsher)",
    ]
    for t in b.thresholds:
        lines.append(f"  {t['threshold']:>6} threshold: energy-limited {t['energy_limited']}; "
                     f"whole inventory {t['worst_case']} (well mixed); the whole inventory "
                     f"stays above it only in a room ≥ "
                     f"{t['room_volume_m3_needed_worst_case']:,.0f} m³ (well mixed; larger "
                     "under displacement)")
        lines.append(f"         ({t['source']})")
    lines.append("")
    if b.dump is not None:
        d = b.dump
        lines += [
            f"DUMP RESISTOR DECAY (R_dump = {d.dump_ohm:g} Ω, R_magnet = "
            f"{d.magnet_resistance_ohm:g} Ω, L = {d.inductance_H:.4g} H, "
            f"I0 = {d.initial_current_A:.4g} A)",
            f"  time constant τ = L/R           {d.time_constant_s:10.4g} s",
            f"  peak terminal voltage I0·R      {d.peak_voltage_V:10.4g} V",
            f"  time to 1 % current (τ ln 100)  {d.time_to_1_percent_s:10.4g} s",
            f"  energy into the dump resistor   {d.energy_into_resistor_J / 1e6:10.4g} MJ",
            f"  energy into the magnet itself   {d.energy_into_magnet_J / 1e6:10.4g} MJ",
            "  (the boil-off above still assumes all of W reaches the helium: an upper bound)",
            f"  peak helium flow 2W/(τ·h_fg)    {b.peak_helium_flow_kg_per_s:10.4g} kg/s",
            f"  as gas at {room:<22}{b.peak_gas_flow_m3_per_s:10.4g} m³/s",
        ]
        if b.vent_gas_velocity_m_per_s is not None:
            label = f"mean velocity in a {b.vent_diameter_m * 1e3:g} mm vent"
            lines.append(f"  {label:<32}{b.vent_gas_velocity_m_per_s:10.4g} m/s (see cautions)")
        lines.append("")
    elif b.dump_refused_reason:
        lines += [f"DUMP RESISTOR: not computed — {b.dump_refused_reason}", ""]
    lines += [
        f"HELIUM PROPERTIES ({he.source})",
        f"  normal boiling point            {he.boiling_temperature_K:10.5g} K",
        f"  saturated liquid density        {he.liquid_density_kg_per_m3:10.5g} kg/m³",
        f"  latent heat h_fg                {he.latent_heat_J_per_kg / 1e3:10.5g} kJ/kg",
        f"  gas density at {room:<17}{he.gas_density_kg_per_m3:10.5g} kg/m³",
        f"  expansion ratio liquid -> gas   {he.expansion_ratio:10.4g}",
        "",
        "CAUTIONS",
    ]
    lines += [f"  * {c}" for c in b.cautions]
    lines += ["", ADVISORY_NOTICE]
    return "\n".join(lines)


def run(args) -> int:
    from fringe.analysis.quench import budget_for_site
    from fringe.cli.main import print_json
    from fringe.io.atomic import check_output_file
    from fringe.io.scenario import load_site

    if args.pdf:  # before any computation
        if not str(args.pdf).lower().endswith(".pdf"):
            raise ScenarioError(must_be("--pdf", "a file name ending in .pdf", args.pdf))
        check_output_file(args.pdf, suffixes=(".pdf",), name="--pdf")
    site = load_site(args.scenario)
    if not site.magnets:
        raise ScenarioError("`magnet` must list at least one magnet; got none", args.scenario)
    q = resolve_inputs(args, site)
    budget = budget_for_site(site, q)
    if args.vent_diameter_mm is not None:
        vent_mm = args.vent_diameter_mm
        if not (math.isfinite(vent_mm) and vent_mm > 0):
            raise ScenarioError(must_be("--vent-diameter-mm", "a positive number of mm", vent_mm))
        if budget.peak_gas_flow_m3_per_s is None:
            raise ScenarioError(must_be("--vent-diameter-mm", "given with --dump-ohm (the peak "
                                        "flow needs the decay time constant)", vent_mm))
        budget = budget.with_vent(vent_mm * 1e-3)
    if args.pdf:
        from fringe.render.quench import write_quench_pdf

        if not str(args.pdf).lower().endswith(".pdf"):
            raise ScenarioError(must_be("--pdf", "a file name ending in .pdf", args.pdf))
        write_quench_pdf(budget, site.name, args.pdf, drawing=site.drawing)
        sys.stderr.write(f"wrote the quench budget sheets to {args.pdf}\n")
    if args.json:
        out = {"site": site.name}
        out.update(budget.to_dict())
        print_json(out)
    else:
        print(format_budget(budget, site.name))
    if site.magnet(q.magnet).datasheet is not None:
        sys.stderr.write(f"fringe: note: magnet {q.magnet!r} comes from data-sheet numbers; "
                         "its stored energy is the largest over the models that meet them "
                         "within their rounding (docs/fit.md)\n")
    return 0
