"""Scenario section ``[[quench]]``: the inputs of a quench release budget per magnet.

One table per magnet::

    [[quench]]
    magnet = "hall-A 1.5 T"        # a [[magnet]] name
    helium_L = 1500.0              # liquid helium inventory, litres
    room_volume_m3 = 180.0         # free air volume of the magnet room, m³
    dump_ohm = 0.5                 # optional: external dump resistance, Ω
    magnet_resistance_ohm = 0.0    # optional: magnet resistance during the decay, Ω
    room_temperature_C = 20.0      # optional, °C (default 20)
    room_pressure_kPa = 101.325    # optional, kPa (default 101.325)

The parsed section (``Site.quench``) is a tuple of :class:`fringe.model.site.QuenchInputs`.
Options of ``fringe quench`` override these values.
"""

from __future__ import annotations

from fringe.io.reader import Reader
from fringe.model.magnet import Magnet
from fringe.model.site import QuenchInputs

__all__ = ["parse_quench_section", "SECTION_KEY"]

#: Top-level scenario key of this section.
SECTION_KEY: str = "quench"


def parse_quench_section(root: Reader, magnets: tuple[Magnet, ...]) -> tuple[QuenchInputs, ...]:
    """Parse every ``[[quench]]`` table (each names one of ``magnets``)."""
    names = tuple(m.name for m in magnets)
    out: list[QuenchInputs] = []
    seen: set[str] = set()
    for r in root.tables(SECTION_KEY):
        name = r.string("magnet", choices=names if names else None)
        if not names:
            r.fail(r.key("magnet"), "the name of a [[magnet]] (the scenario has none)", name)
        if name in seen:
            r.fail(r.key("magnet"), "unique among [[quench]] tables", name)
        seen.add(name)
        q = QuenchInputs(
            magnet=name,
            helium_L=r.number("helium_L", low=0.0, low_open=True),
            room_volume_m3=r.number("room_volume_m3", low=0.0, low_open=True),
            dump_ohm=r.number("dump_ohm", None, low=0.0, low_open=True),
            magnet_resistance_ohm=r.number("magnet_resistance_ohm", None, low=0.0),
            room_temperature_C=r.number("room_temperature_C", None, low=-60.0, high=60.0),
            room_pressure_kPa=r.number("room_pressure_kPa", None, low=50.0, high=200.0),
        )
        r.finish()
        out.append(q)
    return tuple(out)
