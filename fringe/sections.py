"""Registers every optional scenario section parser with :mod:`fringe.scenario`.

Each feature module that owns a top-level scenario key imports its parser here, so
the accepted keys live in one list (``fringe.scenario.SECTION_PARSERS``).
"""

from __future__ import annotations

from . import (
    cad,  # noqa: E402,F401  (ROOM_LOADERS["dxf"] for [[room_file]] format = "dxf")
    datasheet,  # noqa: E402,F401  (MAGNET_BUILDERS["datasheet"]: [magnet.datasheet])
    plan_scenario,  # noqa: E402,F401  ([plan], [[floor]], [[room]], [[room_file]], [[equipment]])
    quench_scenario,  # noqa: E402,F401  ([[quench]])
)
