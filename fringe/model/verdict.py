"""The verdict on a room, an equipment point or a floor.

A :class:`Verdict` is a :class:`enum.StrEnum`: it compares equal to its word, and JSON,
CSV and f-strings write the word itself (``exceeds``, ``marginal``, ``within``,
``controlled``). Rules
in :mod:`fringe.analysis.verdicts` and ``docs/zones.md``.

The word ``controlled`` is also an access class of rooms
(:data:`fringe.model.building.ACCESS_CLASSES`); that is a property of a room, not a
verdict, and stays a plain string.
"""

from __future__ import annotations

import enum

__all__ = ["Verdict"]


class Verdict(enum.StrEnum):
    """Outcome of a check against a field limit, worst first.

    Attributes
    ----------
    EXCEEDS
        The largest |B| reaches the limit (≥).
    MARGINAL
        The largest |B| stays below the limit, but the outer edge of the field
        uncertainty band reaches it: |B| × (1 + u) ≥ limit, with u the
        ``[plan] field_uncertainty`` (docs/uncertainty.md). Never given when u = 0.
    WITHIN
        The largest |B| stays below the limit.
    CONTROLLED
        A controlled-access room without a limit of its own: fields above the boundary
        are allowed there, nothing is checked.
    """

    EXCEEDS = "exceeds"
    MARGINAL = "marginal"
    WITHIN = "within"
    CONTROLLED = "controlled"
