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

__all__ = ["Coil", "Envelope", "Magnet", "DataSheet", "default_envelope",
           "ENVELOPE_MARGIN_OUTER_M", "ENVELOPE_MARGIN_INNER_M", "ENVELOPE_INNER_FRACTION",
           "OPEN_BORE_MIN_DIAMETER_M"]

#: Margin in m by which the default cryostat envelope extends beyond the windings'
#: outer radius and beyond both their axial ends (common practice, no source: the
#: vacuum vessel wall, vacuum space and radiation shields of a superconducting magnet
#: take some centimetres to a few decimetres around the windings).
ENVELOPE_MARGIN_OUTER_M: float = 0.10

#: Largest margin in m by which the default envelope reaches inside the windings' inner
#: radius: the bore tube, shields and vacuum space between the windings and the warm
#: bore of a whole-body magnet (common practice, no source; the families of
#: :mod:`fringe.physics.families` assume 0.16 m whole-body, 0.025 m laboratory).
ENVELOPE_MARGIN_INNER_M: float = 0.15

#: The inner margin is at most this fraction of the windings' inner radius, so a small
#: laboratory bore stays open (0.05 m windings: 0.025 m warm-bore radius).
ENVELOPE_INNER_FRACTION: float = 0.5

#: Narrowest warm bore (diameter, m) counted as a place where a person can be: the bore of
#: a whole-body or extremity magnet. A narrower bore (a laboratory NMR magnet, a bench
#: solenoid) takes a hand, a tool or a sample but nobody stands in it, so it counts as part
#: of the cryostat for room, floor and equipment maxima and implant figures (common
#: practice, no source; the same 0.3 m that separates the fit's laboratory and whole-body
#: families, fringe.physics.fit.LAB_BORE_LIMIT_M).
OPEN_BORE_MIN_DIAMETER_M: float = 0.3


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


@dataclass(frozen=True)
class Envelope:
    """The cryostat envelope of a magnet: an annular cylinder in its local frame.

    Points with ``r_inner_m <= ρ <= r_outer_m`` and ``z_min_m <= z <= z_max_m`` (local
    frame, ρ the distance from the bore axis) are inside the cryostat and not accessible;
    the bore ``ρ < r_inner_m`` is open when it is at least
    :data:`OPEN_BORE_MIN_DIAMETER_M` across (:attr:`bore_open`), and counted as closed
    otherwise.

    Parameters
    ----------
    r_inner_m, r_outer_m : float
        Inner (warm-bore) and outer radius in m, ``0 <= r_inner_m < r_outer_m``.
    z_min_m, z_max_m : float
        Axial extent in m along the magnet axis, relative to the magnet centre,
        ``z_min_m < z_max_m``.
    """

    r_inner_m: float
    r_outer_m: float
    z_min_m: float
    z_max_m: float

    def __post_init__(self) -> None:
        vals = (self.r_inner_m, self.r_outer_m, self.z_min_m, self.z_max_m)
        if not all(math.isfinite(v) for v in vals):
            raise ValueError(f"`envelope` must have finite sizes; got {vals!r}")
        if not 0.0 <= self.r_inner_m < self.r_outer_m:
            raise ValueError("`envelope` must have 0 <= r_inner_m < r_outer_m; got "
                             f"{self.r_inner_m!r}, {self.r_outer_m!r}")
        if not self.z_min_m < self.z_max_m:
            raise ValueError("`envelope` must have z_min_m < z_max_m; got "
                             f"{self.z_min_m!r}, {self.z_max_m!r}")

    @property
    def enclosing_radius_m(self) -> float:
        """Radius in m of the smallest centre-centred sphere holding the envelope."""
        return math.hypot(self.r_outer_m, max(abs(self.z_min_m), abs(self.z_max_m)))

    def contains_coil(self, coil: Coil) -> bool:
        """Whether the winding ``coil`` lies wholly inside the envelope."""
        return (self.r_inner_m <= coil.r_inner_m and coil.r_outer_m <= self.r_outer_m
                and self.z_min_m <= coil.z_min_m and coil.z_max_m <= self.z_max_m)

    @property
    def bore_open(self) -> bool:
        """Whether a person can be in the bore (:data:`OPEN_BORE_MIN_DIAMETER_M`)."""
        return 2.0 * self.r_inner_m >= OPEN_BORE_MIN_DIAMETER_M

    @property
    def closed_inner_radius_m(self) -> float:
        """Inner radius of the region nobody can be in: ``r_inner_m``, or 0 for a bore
        too narrow for a person."""
        return self.r_inner_m if self.bore_open else 0.0

    def contains_local(self, rho_m: np.ndarray, z_m: np.ndarray,
                       margin_m: float = 0.0) -> np.ndarray:
        """Boolean mask of local points (ρ, z) inside the envelope grown by ``margin_m``
        (a narrow bore counts as inside: :attr:`bore_open`)."""
        rho = np.asarray(rho_m, dtype=float)
        z = np.asarray(z_m, dtype=float)
        r_lo = self.r_inner_m - margin_m if self.bore_open else -np.inf
        return ((rho >= r_lo) & (rho <= self.r_outer_m + margin_m)
                & (z >= self.z_min_m - margin_m) & (z <= self.z_max_m + margin_m))


def default_envelope(coils) -> Envelope:
    """The envelope assumed when none is given: the windings' bounding annulus grown by
    :data:`ENVELOPE_MARGIN_OUTER_M` outward and axially, and into the bore by the smaller
    of :data:`ENVELOPE_MARGIN_INNER_M` and :data:`ENVELOPE_INNER_FRACTION` of the inner
    radius (so never below radius 0; windings reaching the axis leave no bore)."""
    coils = tuple(coils)
    ri = min(c.r_inner_m for c in coils)
    return Envelope(ri - min(ENVELOPE_MARGIN_INNER_M, ENVELOPE_INNER_FRACTION * ri),
                    max(c.r_outer_m for c in coils) + ENVELOPE_MARGIN_OUTER_M,
                    min(c.z_min_m for c in coils) - ENVELOPE_MARGIN_OUTER_M,
                    max(c.z_max_m for c in coils) + ENVELOPE_MARGIN_OUTER_M)


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
class DataSheet:
    """The data-sheet numbers a magnet was fitted to, their rounding, and the fit found.

    Attributes
    ----------
    center_field_T : float
        Centre field, T.
    center_field_tol_T : float
        Half a unit of its last given digit, T (the data sheet's rounding).
    shielded : bool
    bore_m : float or None
        Warm bore diameter given, m (None: not given).
    lines : tuple of (threshold_T, axial_m, radial_m)
        The data-sheet lines.
    tolerances_m : tuple of (axial_tol_m, radial_tol_m)
        Half a unit of the last given digit of each extent, m.
    family : str
        The family of the best fit (a key of ``fringe.physics.families.FAMILIES``).
    parameters : tuple of float
        Its fitted shape parameters (the family's ``FitShape.parameters`` order).
    a_min_m : float
        Smallest winding radius the fit used, m.
    """

    center_field_T: float
    center_field_tol_T: float
    shielded: bool
    bore_m: float | None
    lines: tuple[tuple[float, float, float], ...]
    tolerances_m: tuple[tuple[float, float], ...]
    family: str
    parameters: tuple[float, ...]
    a_min_m: float


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
    origin : str
        How the coils were obtained ("coils", or the builder that made them).
    cryostat : Envelope or None
        The cryostat envelope as given; None means the default around the windings
        (:func:`default_envelope`). Use :attr:`envelope` for the one in effect.
    datasheet : DataSheet or None
        The data-sheet numbers the coils were fitted to (None for coils given as such);
        kept by :meth:`moved`, dropped by :meth:`scaled` and when the coils change.
    """

    name: str
    center_m: tuple[float, float, float]
    axis: tuple[float, float, float]
    coils: tuple[Coil, ...]
    description: str = ""
    origin: str = field(default="coils", compare=False)
    cryostat: Envelope | None = None
    datasheet: DataSheet | None = field(default=None, compare=False, repr=False)

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
        if self.cryostat is not None:
            if not isinstance(self.cryostat, Envelope):
                raise ValueError(f"`cryostat` must be an Envelope; got {self.cryostat!r}")
            for i, c in enumerate(self.coils):
                if not self.cryostat.contains_coil(c):
                    raise ValueError(f"`cryostat` must contain every winding; coil {i} "
                                     f"({c.r_inner_m}..{c.r_outer_m} m, z {c.z_min_m}.."
                                     f"{c.z_max_m} m) is not inside {self.cryostat}")

    @cached_property
    def envelope(self) -> Envelope:
        """The cryostat envelope in effect: the one given, else :func:`default_envelope`."""
        return self.cryostat if self.cryostat is not None else default_envelope(self.coils)

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
                      self.origin, self.cryostat)

    def moved(self, center_m=None, axis=None) -> Magnet:
        """The same magnet at another centre and/or with another axis."""
        return Magnet(self.name, self.center_m if center_m is None else tuple(center_m),
                      self.axis if axis is None else tuple(axis), self.coils,
                      self.description, self.origin, self.cryostat, self.datasheet)

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

    def in_envelope(self, points_m: np.ndarray, margin_m: float = 0.0) -> np.ndarray:
        """Boolean mask (N,) of site points inside the cryostat envelope (grown by margin).

        The bore (ρ below the envelope's inner radius) and everything beyond its ends is
        outside.
        """
        loc = self.to_local(points_m)
        return self.envelope.contains_local(np.hypot(loc[:, 0], loc[:, 1]), loc[:, 2],
                                            margin_m)
