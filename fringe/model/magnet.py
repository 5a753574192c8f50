"""Coils and magnets: the model every other module computes from.

A :class:`Coil` is a winding of rectangular cross-section carrying a uniform
azimuthal current density ``J = turns * current_A / ((r_outer - r_inner) * (z_max - z_min))``
in the local frame of its :class:`Magnet`, whose z axis is the bore axis.
A thin sheet or a single loop are limits of it, not separate cases.

How a coil becomes current sheets for field evaluation is in
:mod:`fringe.field.sources`.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from functools import cached_property

import numpy as np
from scipy.spatial.transform import Rotation

__all__ = ["Coil", "Magnet"]


@dataclass(frozen=True)
class Coil:
    """Rectangular-section winding with uniform azimuthal current density.

    Parameters
    ----------
    r_inner_m, r_outer_m : float
        Inner and outer winding radius in m, ``0 <= r_inner_m < r_outer_m``.
    z_min_m, z_max_m : float
        Axial extent in m along the magnet axis, relative to the magnet centre.
    turns : float
        Number of turns (> 0).
    current_A : float
        Current per turn in A; negative means wound the other way (e.g. a shield coil).
        Positive current circulates right-handed about the magnet axis.
    """

    r_inner_m: float
    r_outer_m: float
    z_min_m: float
    z_max_m: float
    turns: float
    current_A: float

    @property
    def thickness_m(self) -> float:
        """Radial build ``r_outer_m - r_inner_m`` in m."""
        return self.r_outer_m - self.r_inner_m

    @property
    def length_m(self) -> float:
        """Axial length ``z_max_m - z_min_m`` in m."""
        return self.z_max_m - self.z_min_m

    @property
    def ampere_turns(self) -> float:
        """Total current through the cross-section ``turns * current_A`` in A."""
        return self.turns * self.current_A

    @property
    def current_density_A_per_m2(self) -> float:
        """Uniform azimuthal current density J in A/m²."""
        return self.ampere_turns / (self.thickness_m * self.length_m)

    @property
    def dipole_moment_Am2(self) -> float:
        """Magnetic dipole moment along the axis in A·m².

        ``m = ∫∫ J π r² dr dz = J π (r_o³ - r_i³)/3 · (z_max - z_min)``, the sum of
        loop moments I·πr² (Jackson, Sec. 5.6).
        """
        return (self.current_density_A_per_m2 * math.pi
                * (self.r_outer_m**3 - self.r_inner_m**3) / 3.0 * self.length_m)

    def scaled(self, factor: float) -> Coil:
        """The same winding with its current multiplied by ``factor``."""
        return Coil(self.r_inner_m, self.r_outer_m, self.z_min_m, self.z_max_m,
                    self.turns, self.current_A * factor)


def _rotation_to_axis(axis: tuple[float, float, float]) -> Rotation:
    """Rotation taking the local z axis onto ``axis`` (unit vector).

    The magnet field is axisymmetric, so the roll about the axis is irrelevant; the
    shortest rotation is used and an antiparallel axis is a half turn about x.
    """
    a = np.asarray(axis, dtype=float)
    z = np.array([0.0, 0.0, 1.0])
    v = np.cross(z, a)  # (−a_y, a_x, 0): exact, however small
    # hypot, not the norm: squaring a component below ~1e-154 underflows to a subnormal,
    # whose square root is off by up to ~1e-9 relative, and the half turn with it
    s = math.hypot(float(v[0]), float(v[1]))
    if s == 0.0:  # exactly along ±z (no cut-off: an axis 1e-8 rad off z must stay off)
        return Rotation.identity() if a[2] > 0 else Rotation.from_rotvec([math.pi, 0.0, 0.0])
    angle = math.atan2(s, float(a[2]))
    return Rotation.from_rotvec(v / s * angle)


@dataclass(frozen=True)
class Magnet:
    """A set of coaxial coils placed and turned in the site frame.

    Parameters
    ----------
    name : str
        Unique name within a site.
    center_m : tuple of 3 float
        Magnet centre (isocentre) in the site frame, m (x east, y north, z up).
    axis : tuple of 3 float
        Bore axis in the site frame; normalised on construction.
    coils : tuple of Coil
        The windings, in the magnet's local (r, z) frame.
    description : str
        Free text on where the model comes from (e.g. "equivalent model fitted to
        data-sheet numbers"); printed on reports.
    """

    name: str
    center_m: tuple[float, float, float]
    axis: tuple[float, float, float]
    coils: tuple[Coil, ...]
    description: str = ""
    origin: str = field(default="coils", compare=False)

    def __post_init__(self) -> None:
        a = np.asarray(self.axis, dtype=float)
        if a.shape != (3,):
            raise ValueError(f"`axis` must be a vector of 3 numbers; got {self.axis!r}")
        big = float(np.max(np.abs(a)))
        if not (np.all(np.isfinite(a)) and big > 0.0):
            raise ValueError(f"`axis` must be a non-zero finite vector; got {self.axis!r}")
        a = a / big                 # a direction of any size: no underflow or overflow
        object.__setattr__(self, "axis", tuple(float(x) for x in a / math.sqrt(a @ a)))
        object.__setattr__(self, "center_m", tuple(float(x) for x in self.center_m))
        object.__setattr__(self, "coils", tuple(self.coils))

    @cached_property
    def rotation(self) -> Rotation:
        """Rotation from the magnet's local frame to the site frame."""
        return _rotation_to_axis(self.axis)

    def to_local(self, points_m: np.ndarray) -> np.ndarray:
        """Site-frame points (N, 3) in m → local-frame points (N, 3) in m."""
        p = np.asarray(points_m, dtype=float) - np.asarray(self.center_m)
        return self.rotation.inv().apply(p) if p.size else p.reshape(-1, 3)

    def vectors_to_site(self, vectors: np.ndarray) -> np.ndarray:
        """Local-frame vectors (N, 3) → site-frame vectors (N, 3)."""
        v = np.asarray(vectors, dtype=float)
        return self.rotation.apply(v) if v.size else v.reshape(-1, 3)

    def to_site(self, points_local_m: np.ndarray) -> np.ndarray:
        """Local-frame points (N, 3) in m → site-frame points (N, 3) in m."""
        return self.vectors_to_site(points_local_m) + np.asarray(self.center_m)

    @property
    def dipole_moment_Am2(self) -> float:
        """Net axial dipole moment Σ mᵢ of all coils in A·m² (local +z positive)."""
        return float(sum(c.dipole_moment_Am2 for c in self.coils))

    @property
    def enclosing_radius_m(self) -> float:
        """Radius in m of the smallest origin-centred sphere enclosing every winding."""
        return float(max(math.hypot(c.r_outer_m, max(abs(c.z_min_m), abs(c.z_max_m)))
                         for c in self.coils))

    @property
    def bore_radius_m(self) -> float:
        """Radius in m of the largest origin-centred sphere free of windings."""
        best = math.inf
        for c in self.coils:
            dz = 0.0 if c.z_min_m <= 0.0 <= c.z_max_m else min(abs(c.z_min_m), abs(c.z_max_m))
            best = min(best, math.hypot(c.r_inner_m, dz))
        return float(best)

    def scaled(self, factor: float) -> Magnet:
        """The same magnet with every current multiplied by ``factor``."""
        return Magnet(self.name, self.center_m, self.axis,
                      tuple(c.scaled(factor) for c in self.coils), self.description,
                      self.origin)

    def moved(self, center_m=None, axis=None) -> Magnet:
        """The same magnet at another centre and/or with another axis."""
        return Magnet(self.name, self.center_m if center_m is None else tuple(center_m),
                      self.axis if axis is None else tuple(axis), self.coils,
                      self.description, self.origin)

    def contains_points(self, points_m: np.ndarray, margin_m: float = 0.0) -> np.ndarray:
        """Boolean mask (N,) of site points lying inside any winding (grown by margin)."""
        loc = self.to_local(points_m)
        rho = np.hypot(loc[:, 0], loc[:, 1])
        inside = np.zeros(len(loc), dtype=bool)
        for c in self.coils:
            inside |= ((rho >= c.r_inner_m - margin_m) & (rho <= c.r_outer_m + margin_m)
                       & (loc[:, 2] >= c.z_min_m - margin_m)
                       & (loc[:, 2] <= c.z_max_m + margin_m))
        return inside
