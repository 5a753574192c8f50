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

The parsed section (``site.section("quench")``) is a tuple of :class:`QuenchInputs`.
Options of ``fringe quench`` override these values.
"""

from __future__ import annotations

from dataclasses import dataclass
from pathlib import Path

from fringe.io.scenario import SECTION_PARSERS, Reader
from fringe.model.magnet import Magnet

__all__ = ["QuenchInputs", "parse_quench_section", "quench_inputs_for", "SECTION_KEY"]

#: Top-level scenario key of this section.
SECTION_KEY: str = "quench"


@dataclass(frozen=True)
class QuenchInputs:
    """Inputs of a quench budget for one magnet (all optional except magnet).

    Attributes
    ----------
    magnet : str
    helium_L, room_volume_m3, dump_ohm, magnet_resistance_ohm,
    room_temperature_C, room_pressure_kPa : float or None
        None where the scenario does not give the value.
    """

    magnet: str
    helium_L: float | None = None
    room_volume_m3: float | None = None
    dump_ohm: float | None = None
    magnet_resistance_ohm: float | None = None
    room_temperature_C: float | None = None
    room_pressure_kPa: float | None = None


def parse_quench_section(root: Reader, file_path: Path, magnets: tuple[Magnet, ...],
                         parsed: dict) -> tuple[QuenchInputs, ...]:
    """Parse every ``[[quench]]`` table; registered in ``SECTION_PARSERS["quench"]``."""
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


def quench_inputs_for(sections: dict | None, magnet: str) -> QuenchInputs | None:
    """The ``[[quench]]`` table of ``magnet`` in a site's sections, or None."""
    for q in (sections or {}).get(SECTION_KEY, ()) or ():
        if q.magnet == magnet:
            return q
    return None


SECTION_PARSERS[SECTION_KEY] = parse_quench_section
