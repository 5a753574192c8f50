"""Registers every optional scenario section parser with :mod:`fringe.scenario`.

Each feature module that owns a top-level scenario key imports its parser here, so
the accepted keys live in one list (``fringe.scenario.SECTION_PARSERS``).
"""

from __future__ import annotations
