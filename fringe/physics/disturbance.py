"""Moving steel: the change of the field at a magnet's isocentre caused by a steel object.

Physics
-------
The object (a lift car, a vehicle, a trolley) is replaced by a solid sphere of soft steel
of the same mass: volume ``V = m/ρ``. In a uniform applied field ``H₀ = B₀/μ₀`` a sphere
of relative permeability μ_r takes the uniform magnetisation [1]_ (Sec. 5.11)

    M = 3 (μ_r − 1)/(μ_r + 2) · H₀  →  3 H₀   (μ_r → ∞)                        (1)

(equivalently: demagnetising factor N = 1/3, M = H₀/N), along H₀. Steel cannot be
magnetised beyond its saturation M_s, so

    M = min(3 |H₀|, M_s) · Ĥ₀                                                   (2)

(the "high-permeability sphere, saturating" of docs/disturbance.md; the same ideal
soft-iron curve as the attraction zone, :mod:`fringe.physics.attraction`). The applied
field is the magnets' field at the sphere's centre plus a uniform background (the
Earth's field, 25–65 µT). Outside, a uniformly magnetised sphere's field is exactly that
of a point dipole at its centre [1]_ (Sec. 5.10) with moment ``m = M·V``:

    B(r) = μ₀/(4π) · [3 r̂ (r̂·m) − m] / r³                                      (3)

[1]_ (Eq. 5.56). On the dipole's own axis this is ``μ₀ m/(2π r³)``, across it
``−μ₀ m/(4π r³)``. The disturbance is the component of (3) at the magnet's isocentre
along the magnet's axis, ``ΔB = B(r)·ẑ_magnet``, in ppm of the centre field
``B_c``: ``Δ = 10⁶ ΔB/B_c``. The sphere's own field is not fed back to the magnets
(a superconducting magnet's flux-conservation response is not modelled).

References
----------
.. [1] J. D. Jackson, *Classical Electrodynamics*, 3rd ed., Wiley (1999): Sec. 5.6
   (field of a localised current distribution, the magnetic dipole, Eq. 5.56),
   Sec. 5.10 (uniformly magnetised sphere: the outside field is a dipole of moment
   m = (4π a³/3) M), Sec. 5.11 (magnetised sphere in an external field,
   M = 3 (μ−μ₀)/(μ+2μ₀) H₀ → 3 H₀ as μ → ∞).
.. [2] B. D. Cullity and C. D. Graham, *Introduction to Magnetic Materials*, 2nd ed.,
   Wiley/IEEE (2009): demagnetising factor 1/3 of a sphere (ch. 2); saturation
   magnetisation of iron 1.71 MA/m (from memory; the attraction zone's material,
   :data:`fringe.physics.attraction.MATERIALS`).
"""

from __future__ import annotations

import math

import numpy as np

from fringe.model.constants import MU0_T_M_PER_A
from fringe.model.errors import FringeInputError
from fringe.physics.attraction import DEFAULT_MATERIAL, MATERIALS, SteelMaterial

__all__ = ["SPHERE_SUSCEPTIBILITY", "DEFAULT_STEEL", "sphere_volume_m3", "sphere_radius_m",
           "sphere_magnetization_A_per_m", "dipole_field_T", "disturbance_T",
           "disturbance_ppm"]

#: Effective susceptibility M/H₀ of a sphere of unbounded permeability: 1/N with the
#: demagnetising factor N = 1/3 (Jackson Sec. 5.11; Cullity & Graham ch. 2).
SPHERE_SUSCEPTIBILITY: float = 3.0

#: The steel of moving objects: the attraction zone's soft iron (ρ = 7870 kg/m³,
#: M_s = 1.71 MA/m), one registry for both.
DEFAULT_STEEL: SteelMaterial = MATERIALS[DEFAULT_MATERIAL]


def sphere_volume_m3(mass_kg: float, density_kg_per_m3: float = DEFAULT_STEEL.density_kg_per_m3
                     ) -> float:
    """Volume of steel of mass ``mass_kg``: V = m/ρ, m³.

    >>> round(sphere_volume_m3(7870.0), 12)
    1.0
    """
    m, rho = float(mass_kg), float(density_kg_per_m3)
    if not (math.isfinite(m) and m > 0):
        raise FringeInputError(f"`mass_kg` must be a positive number; got {mass_kg!r}")
    if not (math.isfinite(rho) and rho > 0):
        raise FringeInputError(f"`density_kg_per_m3` must be a positive number; "
                               f"got {density_kg_per_m3!r}")
    return m / rho


def sphere_radius_m(mass_kg: float,
                    density_kg_per_m3: float = DEFAULT_STEEL.density_kg_per_m3) -> float:
    """Radius of a solid sphere of that mass: a = (3V/4π)^(1/3), m."""
    return (3.0 * sphere_volume_m3(mass_kg, density_kg_per_m3) / (4.0 * math.pi)) ** (1.0 / 3.0)


def sphere_magnetization_A_per_m(applied_B_T, saturation_A_per_m: float =
                                 DEFAULT_STEEL.saturation_A_per_m) -> np.ndarray:
    """Magnetisation of a high-permeability sphere in an applied field, saturating.

    Parameters
    ----------
    applied_B_T : array_like, shape (N, 3) or (3,)
        The applied (external) flux density at the sphere's centre, T.
    saturation_A_per_m : float
        Saturation magnetisation M_s, A/m.

    Returns
    -------
    ndarray, same shape
        M = min(3|H₀|, M_s)·B̂₀ with H₀ = B₀/μ₀, A/m (zero where B₀ = 0).

    References
    ----------
    Jackson, *Classical Electrodynamics*, 3rd ed., Sec. 5.11 (M = 3H₀ for μ → ∞);
    Cullity & Graham (2009), saturation.

    >>> float(sphere_magnetization_A_per_m([0.0, 0.0, MU0_T_M_PER_A])[2])  # H0 = 1 A/m
    3.0
    """
    b = np.asarray(applied_B_T, dtype=float)
    ms = float(saturation_A_per_m)
    if not (math.isfinite(ms) and ms > 0):
        raise FringeInputError(f"`saturation_A_per_m` must be a positive number; "
                               f"got {saturation_A_per_m!r}")
    h = b / MU0_T_M_PER_A
    h_abs = np.linalg.norm(h, axis=-1, keepdims=True)
    m_abs = np.minimum(SPHERE_SUSCEPTIBILITY * h_abs, ms)
    with np.errstate(invalid="ignore", divide="ignore"):
        unit = np.where(h_abs > 0, h / np.where(h_abs > 0, h_abs, 1.0), 0.0)
    return m_abs * unit


def dipole_field_T(moment_Am2, source_m, point_m) -> np.ndarray:
    """Flux density of point dipoles at one field point.

    Parameters
    ----------
    moment_Am2 : array_like, shape (N, 3)
        Dipole moments, A·m².
    source_m : array_like, shape (N, 3)
        Dipole positions, m.
    point_m : array_like, shape (3,)
        The field point, m (must differ from every source).

    Returns
    -------
    ndarray, shape (N, 3)
        B = μ₀/(4π)·[3 r̂(r̂·m) − m]/r³ of each dipole at ``point_m``, T.

    References
    ----------
    Jackson, *Classical Electrodynamics*, 3rd ed., Sec. 5.6, Eq. 5.56.
    """
    m = np.atleast_2d(np.asarray(moment_Am2, dtype=float))
    r = np.asarray(point_m, dtype=float)[None, :] - np.atleast_2d(np.asarray(source_m, float))
    d = np.linalg.norm(r, axis=1, keepdims=True)
    if np.any(d == 0):
        raise FringeInputError("`point_m` must differ from every dipole position; "
                               "got a dipole at the field point")
    n = r / d
    ndotm = np.sum(n * m, axis=1, keepdims=True)
    return MU0_T_M_PER_A / (4.0 * math.pi) * (3.0 * n * ndotm - m) / d ** 3


def disturbance_T(positions_m, applied_B_T, isocentre_m, axis, mass_kg: float,
                  material: SteelMaterial = DEFAULT_STEEL) -> np.ndarray:
    """Change of the field at an isocentre along a magnet's axis from a steel sphere.

    Parameters
    ----------
    positions_m : array_like, shape (N, 3)
        Centres of the sphere along its path, site frame, m.
    applied_B_T : array_like, shape (N, 3)
        The applied field at each centre (magnets plus background), T.
    isocentre_m : array_like, shape (3,)
        The magnet's centre, m.
    axis : array_like, shape (3,)
        The magnet's axis (need not be a unit vector).
    mass_kg : float
        Mass of the steel, kg.
    material : SteelMaterial
        Density and saturation (default: the attraction zone's soft iron).

    Returns
    -------
    ndarray, shape (N,)
        ΔB = B_dipole(isocentre)·â, T, with the dipole m = V·min(3|H₀|, M_s)·Ĥ₀.

    References
    ----------
    Jackson, *Classical Electrodynamics*, 3rd ed., Secs. 5.6, 5.10, 5.11.
    """
    p = np.atleast_2d(np.asarray(positions_m, dtype=float))
    b = np.atleast_2d(np.asarray(applied_B_T, dtype=float))
    if p.shape != b.shape or p.shape[1] != 3:
        raise FringeInputError(f"`positions_m` and `applied_B_T` must both have shape (N, 3); "
                               f"got {p.shape} and {b.shape}")
    a = np.asarray(axis, dtype=float)
    norm = float(np.linalg.norm(a))
    if not (math.isfinite(norm) and norm > 0):
        raise FringeInputError(f"`axis` must be a non-zero vector; got {axis!r}")
    volume = sphere_volume_m3(mass_kg, material.density_kg_per_m3)
    moment = volume * sphere_magnetization_A_per_m(b, material.saturation_A_per_m)
    return dipole_field_T(moment, p, isocentre_m) @ (a / norm)


def disturbance_ppm(delta_B_T, center_field_T: float) -> np.ndarray:
    """ΔB in parts per million of the centre field: 10⁶·ΔB/B_c (signed).

    >>> float(disturbance_ppm(1.5e-6, 1.5))
    1.0
    """
    bc = float(center_field_T)
    if not (math.isfinite(bc) and bc != 0.0):
        raise FringeInputError(f"`center_field_T` must be a non-zero number; "
                               f"got {center_field_T!r}")
    return 1e6 * np.asarray(delta_B_T, dtype=float) / bc
