"""Plan geometry of magnets: footprint rectangles and winding outlines (shapely, numpy).

Pure geometry, no drawing: :mod:`fringe.render.drawing` draws these outlines and
:mod:`fringe.analysis.placement` keeps them inside a room.
"""

from __future__ import annotations

from collections.abc import Sequence

import numpy as np
import shapely
from shapely.geometry import Polygon, box

__all__ = ["footprint_rectangle", "magnet_plan_outline", "section_windings",
           "envelope_plan_outline", "section_envelope"]


def footprint_rectangle(center_xy_m: Sequence[float], axis_xy: Sequence[float],
                        length_m: float, width_m: float) -> Polygon:
    """Plan footprint of a cylindrical cryostat: a rectangle centred on the magnet.

    Parameters
    ----------
    center_xy_m : (2,) float
        Magnet centre in plan, m.
    axis_xy : (2,) float
        Plan projection of the bore axis (any length; for a vertical axis pass (0, 0)
        and the footprint is a square of side ``width_m``).
    length_m : float
        Extent along the axis (winding length or cryostat length), m.
    width_m : float
        Extent across the axis (outer winding diameter), m.

    Returns
    -------
    shapely.Polygon
    """
    c = np.asarray(center_xy_m, float)
    a = np.asarray(axis_xy, float)
    n = float(np.hypot(*a))
    if n < 1e-12:
        return box(c[0] - width_m / 2, c[1] - width_m / 2, c[0] + width_m / 2,
                   c[1] + width_m / 2)
    u = a / n
    v = np.array([-u[1], u[0]])
    hl, hw = length_m / 2, width_m / 2
    pts = [c + su * hl * u + sv * hw * v for su, sv in ((-1, -1), (1, -1), (1, 1), (-1, 1))]
    return Polygon(pts)


def magnet_plan_outline(magnet) -> Polygon:
    """Plan footprint (shapely Polygon, m) of a magnet's windings: a rectangle along the
    plan projection of its axis, as long as its coils and as wide as their outer
    diameter (a square for a vertical axis)."""
    z0 = min(c.z_min_m for c in magnet.coils)
    z1 = max(c.z_max_m for c in magnet.coils)
    ro = max(c.r_outer_m for c in magnet.coils)
    return _cylinder_plan_outline(magnet, z0, z1, ro)


def envelope_plan_outline(magnet) -> Polygon:
    """Plan footprint (shapely Polygon, m) of a magnet's cryostat envelope
    (:attr:`fringe.model.magnet.Magnet.envelope`), drawn like
    :func:`magnet_plan_outline`: the rectangle of its plan projection."""
    e = magnet.envelope
    return _cylinder_plan_outline(magnet, e.z_min_m, e.z_max_m, e.r_outer_m)


def _cylinder_plan_outline(magnet, z0: float, z1: float, ro: float) -> Polygon:
    a = np.asarray(magnet.axis)
    mid = np.asarray(magnet.center_m) + a * (z0 + z1) / 2.0
    horiz = float(np.hypot(a[0], a[1]))
    length = (z1 - z0) * horiz + 2 * ro * abs(a[2])  # plan projection of the cylinder
    return footprint_rectangle(mid[:2], a[:2], max(length, 1e-3), 2 * ro)


def section_windings(magnet, sec, step_m: float = 0.01) -> shapely.Geometry:
    """Winding cross-sections of ``magnet`` in the (s, z) plane of ``sec``.

    ``sec`` needs only ``unit``, the plan direction (x, y) of the section line (a
    :class:`fringe.analysis.zones.Section` has it). Returns ``(polygon, projected)``: the
    windings cut by the section plane, or — when the plane passes between coils (e.g.
    the centre plane across the axis) — their projection onto it (``projected`` True).
    Traced on a ``step_m`` grid.
    """
    from fringe.analysis.zones import superlevel_polygons

    r = magnet.enclosing_radius_m + 2 * step_m
    s = np.arange(-r, r + step_m / 2, step_m)
    z = magnet.center_m[2] + s
    S, Z = np.meshgrid(s, z)
    c = np.asarray(magnet.center_m)
    pts = np.column_stack([c[0] + S.ravel() * sec.unit[0], c[1] + S.ravel() * sec.unit[1],
                           Z.ravel()])
    inside = magnet.contains_points(pts).reshape(S.shape)
    projected = False
    if not inside.any():
        loc = magnet.to_local(pts)
        rho = np.hypot(loc[:, 0], loc[:, 1])
        inside = np.zeros(len(pts), dtype=bool)
        for coil in magnet.coils:
            inside |= (rho >= coil.r_inner_m) & (rho <= coil.r_outer_m)
        inside = inside.reshape(S.shape)
        projected = True
    return superlevel_polygons(s, z, inside.astype(float), 0.5), projected


def section_envelope(magnet, sec, step_m: float = 0.01) -> shapely.Geometry:
    """The cryostat envelope of ``magnet`` cut by the vertical plane of ``sec`` through
    the magnet centre, in its (s, z) coordinates (shapely geometry, m; the bore open).

    ``sec`` needs only ``unit`` (see :func:`section_windings`). Traced on a ``step_m``
    grid; empty if the plane misses the envelope.
    """
    from fringe.analysis.zones import superlevel_polygons

    r = magnet.envelope.enclosing_radius_m + 2 * step_m
    s = np.arange(-r, r + step_m / 2, step_m)
    z = magnet.center_m[2] + s
    S, Z = np.meshgrid(s, z)
    c = np.asarray(magnet.center_m)
    pts = np.column_stack([c[0] + S.ravel() * sec.unit[0], c[1] + S.ravel() * sec.unit[1],
                           Z.ravel()])
    inside = magnet.in_envelope(pts).reshape(S.shape)
    return superlevel_polygons(s, z, inside.astype(float), 0.5)
