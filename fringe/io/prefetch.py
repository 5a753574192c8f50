"""Helium property look-ups run ahead in a forked child process.

CoolProp's first import takes seconds of one core (most of it the library's own
start-up). A report starts the look-ups of its ``[[quench]]`` tables before its field
maps, so the import overlaps them; the later
:func:`fringe.physics.quench.helium_properties` call just collects the values (promised
to it with :func:`fringe.physics.quench.expect_helium_properties`).
"""

from __future__ import annotations

import sys

from fringe.analysis.quench import room_conditions
from fringe.io.forked import ForkedCall, forking_enabled
from fringe.model.constants import STANDARD_ATMOSPHERE_PA
from fringe.physics.quench import (
    expect_helium_properties,
    helium_properties_expected,
    helium_properties_key,
    lookup_helium_properties,
    room_conditions_K_Pa,
)

__all__ = ["prefetch_helium_properties", "prefetch_quench_data"]


def prefetch_helium_properties(room_temperature_K: float = 293.15,
                               room_pressure_Pa: float = STANDARD_ATMOSPHERE_PA,
                               boil_pressure_Pa: float = STANDARD_ATMOSPHERE_PA) -> None:
    """Start :func:`fringe.physics.quench.helium_properties` for these conditions in a
    second process.

    Does nothing when CoolProp is already imported, the look-up is already started or
    processes cannot be forked.
    """
    key = helium_properties_key(room_temperature_K, room_pressure_Pa, boil_pressure_Pa)
    if "CoolProp" in sys.modules or helium_properties_expected(*key) or not forking_enabled():
        return
    ahead = ForkedCall(lookup_helium_properties, *key)
    expect_helium_properties(*key, ahead.result)


def prefetch_quench_data(site) -> None:
    """Start the helium look-ups of the site's ``[[quench]]`` tables in a second process
    (:func:`prefetch_helium_properties`); a no-op without such tables or when they are
    already started."""
    for q in site.quench:
        prefetch_helium_properties(*room_conditions_K_Pa(*room_conditions(q)))
