"""Unit slips in a scenario's geometry: sizes that only make sense in millimetres or
centimetres read as metres.

A room outline wider than :data:`~fringe.model.constants.MAX_ROOM_EXTENT_M`, rooms spread
over more than :data:`~fringe.model.constants.MAX_SITE_SPAN_M`, or an elevation beyond
±:data:`~fringe.model.constants.MAX_ELEVATION_M` is refused with a message naming the key,
the size and the likely unit (instead of, later, a plan grid of billions of nodes).
"""

from __future__ import annotations

from collections.abc import Sequence

from fringe.model.constants import MAX_ELEVATION_M, MAX_ROOM_EXTENT_M, MAX_SITE_SPAN_M
from fringe.model.errors import ScenarioError

__all__ = ["likely_unit", "check_outline_size", "check_site_span", "check_elevation"]

#: (unit name, metres per unit) tried in this order.
_UNITS: tuple[tuple[str, float], ...] = (("millimetres", 1e-3), ("centimetres", 1e-2))

#: Plausible sizes in m (room extent, site span, |elevation|) used to guess the unit.
_TYPICAL_M = {"room": (2.0, 200.0), "site": (5.0, 1000.0), "elevation": (1.0, 300.0)}


def likely_unit(size: float, kind: str) -> tuple[str, float]:
    """The unit a ``size`` read as metres was most likely written in, and the size in m.

    Parameters
    ----------
    size : float
        The size as read (taken as metres), > 0.
    kind : str
        ``"room"``, ``"site"`` or ``"elevation"``: which plausible range to compare with.

    Returns
    -------
    (str, float)
        ``("millimetres", size/1000)`` when that gives a plausible size, else
        ``("centimetres", size/100)`` when that does, else millimetres.
    """
    lo, hi = _TYPICAL_M[kind]
    for name, f in _UNITS:
        if lo <= abs(size) * f <= hi:
            return name, size * f
    return _UNITS[0][0], size * _UNITS[0][1]


def _advice(name: str, metres: float, fix: str) -> str:
    return f"it looks like {name} ({metres:.3g} m if so) — {fix}"


def check_outline_size(bounds: Sequence[float], key_path: str, file: str | None, *,
                       fix: str = "give metres") -> None:
    """Refuse an outline whose bounding box (x0, y0, x1, y1) is wider than
    :data:`MAX_ROOM_EXTENT_M`, naming ``key_path`` and the likely unit."""
    span = max(bounds[2] - bounds[0], bounds[3] - bounds[1])
    if span > MAX_ROOM_EXTENT_M:
        name, m = likely_unit(span, "room")
        raise ScenarioError(f"`{key_path}` spans {span:.6g} m, more than any room "
                            f"({MAX_ROOM_EXTENT_M:g} m); {_advice(name, m, fix)}", file)


def check_site_span(bounds: Sequence[Sequence[float]], what: str, file: str | None, *,
                    fix: str = "give metres") -> None:
    """Refuse room outlines (bounding boxes x0, y0, x1, y1) spread over more than
    :data:`MAX_SITE_SPAN_M` together; ``what`` names them (e.g. ``the rooms``)."""
    if not bounds:
        return
    x0 = min(b[0] for b in bounds)
    y0 = min(b[1] for b in bounds)
    x1 = max(b[2] for b in bounds)
    y1 = max(b[3] for b in bounds)
    span = max(x1 - x0, y1 - y0)
    if span > MAX_SITE_SPAN_M:
        name, m = likely_unit(span, "site")
        raise ScenarioError(f"{what} span {span:.6g} m together, far beyond a building "
                            f"({MAX_SITE_SPAN_M:g} m); {_advice(name, m, fix)}", file)


def check_elevation(value: float, key_path: str, file: str | None) -> None:
    """Refuse an elevation beyond ±:data:`MAX_ELEVATION_M`, naming the likely unit."""
    if abs(value) > MAX_ELEVATION_M:
        name, m = likely_unit(value, "elevation")
        raise ScenarioError(f"`{key_path}` is {value:.6g} m, beyond ±{MAX_ELEVATION_M:g} m "
                            f"of the site datum; {_advice(name, m, 'give metres')}", file)
