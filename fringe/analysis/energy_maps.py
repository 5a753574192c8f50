"""Energy-density maps of a site: u = B²/2μ₀ of all magnets on a plan or section plane.

What a site asks of the field (:func:`fringe.field.evaluate.energy_density_J_per_m3`):
the energy density on a horizontal plane at one height and on a vertical plane through
a point; ``fringe energy --pdf`` draws them.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from fringe.field.evaluate import energy_density_J_per_m3, field_at
from fringe.model.constants import DEFAULT_ENERGY_LEVELS_J_PER_M3
from fringe.model.errors import FringeInputError

__all__ = ["DEFAULT_ENERGY_LEVELS_J_PER_M3", "EnergyDensityMap", "energy_density_plan_map",
           "energy_density_section_map"]



@dataclass(frozen=True)
class EnergyDensityMap:
    """Energy density u = B²/2μ₀ of all magnets on a plane.

    Attributes
    ----------
    kind : str
        ``"plan"`` (horizontal plane) or ``"section"`` (vertical plane).
    u_m, v_m : ndarray (nu,), (nv,)
        In-plane coordinates, m: plan → site x and y; section → signed horizontal
        distance from ``origin_m`` along ``direction`` and absolute height z.
    energy_density_J_per_m3 : ndarray (nv, nu)
        u in J/m³, finite everywhere: inside a winding it is the energy density of
        the coil model's own current distribution there (the refined direct sum), so
        contour bands run up to the winding outlines drawn over them.
    origin_m, direction : ndarray (3,)
        Section origin and horizontal unit vector (plan: origin (0, 0, height), x).
    levels_J_per_m3 : tuple of float
    """

    kind: str
    u_m: np.ndarray
    v_m: np.ndarray
    energy_density_J_per_m3: np.ndarray
    origin_m: np.ndarray
    direction: np.ndarray
    levels_J_per_m3: tuple[float, ...] = DEFAULT_ENERGY_LEVELS_J_PER_M3


def _map_values(site, pts: np.ndarray, shape) -> np.ndarray:
    # Not blanked inside windings: a NaN node blanks every grid cell it touches, which
    # left a white halo around each winding on the drawn sheets.
    return energy_density_J_per_m3(field_at(site, pts)).reshape(shape)


def energy_density_plan_map(site, height_m: float, x_m, y_m,
                            levels_J_per_m3=DEFAULT_ENERGY_LEVELS_J_PER_M3) -> EnergyDensityMap:
    """Energy density on the horizontal plane z = height_m over the grid x_m × y_m (m)."""
    x = np.asarray(x_m, dtype=float)
    y = np.asarray(y_m, dtype=float)
    X, Y = np.meshgrid(x, y)
    pts = np.column_stack([X.ravel(), Y.ravel(), np.full(X.size, float(height_m))])
    return EnergyDensityMap("plan", x, y, _map_values(site, pts, X.shape),
                            np.array([0.0, 0.0, float(height_m)]), np.array([1.0, 0.0, 0.0]),
                            tuple(float(v) for v in levels_J_per_m3))


def energy_density_section_map(site, origin_m, direction, s_m, z_m,
                               levels_J_per_m3=DEFAULT_ENERGY_LEVELS_J_PER_M3
                               ) -> EnergyDensityMap:
    """Energy density on the vertical plane through ``origin_m`` along ``direction``.

    ``direction`` is made horizontal and unit; s_m are signed distances along it from
    the origin, z_m absolute heights (m).
    """
    o = np.asarray(origin_m, dtype=float)
    d = np.asarray(direction, dtype=float).copy()
    d[2] = 0.0
    n = np.linalg.norm(d)
    if not n > 0:
        raise FringeInputError(f"`direction` must have a horizontal part; got {direction!r}")
    d /= n
    s = np.asarray(s_m, dtype=float)
    z = np.asarray(z_m, dtype=float)
    S, Z = np.meshgrid(s, z)
    pts = np.column_stack([o[0] + S.ravel() * d[0], o[1] + S.ravel() * d[1], Z.ravel()])
    return EnergyDensityMap("section", s, z, _map_values(site, pts, S.shape), o, d,
                            tuple(float(v) for v in levels_J_per_m3))
