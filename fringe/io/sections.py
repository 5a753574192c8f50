"""Registers every optional scenario section parser with :mod:`fringe.io.scenario`."""

from __future__ import annotations

from fringe.io import (
    dxf,  # noqa: F401
    scenario_datasheet,  # noqa: F401
    scenario_plan,  # noqa: F401
    scenario_quench,  # noqa: F401
)
