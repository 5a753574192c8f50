"""Steel in the building, as frozen nouns: the materials, the fixed parts, the moving ones.

:data:`MATERIALS` is the one registry of soft-steel materials (relative permeability,
saturation flux density, density, each with its source). :class:`SteelPart` is a
``[[steel]]`` table of a scenario (a rectangular plate or block, turned about the vertical);
:class:`MovingSteel` is a ``[[moving_steel]]`` table (a compact steel object moving along
a path, e.g. a lift car). :class:`InducedField` is what a solved steel model offers the
field layer; the model layer only names it.

The numbers are typical values for planning; a real plate's permeability depends on its
grade, its history and the field, so every result that uses them is an estimate
(docs/steel.md).
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from dataclasses import dataclass
from types import MappingProxyType
from typing import Protocol, runtime_checkable

__all__ = ["SteelMaterial", "MATERIALS", "SteelPart", "MovingSteel", "InducedField",
           "DEFAULT_STEEL_MATERIAL"]


@dataclass(frozen=True)
class SteelMaterial:
    """A soft magnetic material for shielding and building steel.

    Attributes
    ----------
    name : str
        Registry key (``material = "..."`` in a scenario).
    relative_permeability : float
        Relative permeability μ_r in the linear range (dimensionless, > 1).
    saturation_T : float
        Saturation polarisation J_s = μ₀M_s in T: the magnetisation cannot pass
        J_s/μ₀.
    density_kg_per_m3 : float
        Mass density in kg/m³.
    source : str
        Where each number comes from (a handbook, or "from memory").
    """

    name: str
    relative_permeability: float
    saturation_T: float
    density_kg_per_m3: float
    source: str

    def __post_init__(self) -> None:
        if not (math.isfinite(self.relative_permeability) and self.relative_permeability >= 1.0):
            raise ValueError(f"`relative_permeability` of {self.name!r} must be >= 1; "
                             f"got {self.relative_permeability!r}")
        for key in ("saturation_T", "density_kg_per_m3"):
            value = getattr(self, key)
            if not (math.isfinite(value) and value > 0.0):
                raise ValueError(f"`{key}` of {self.name!r} must be positive; got {value!r}")


#: The soft-steel materials a scenario may name, keyed by name.
MATERIALS: Mapping[str, SteelMaterial] = MappingProxyType({
    m.name: m for m in (
        SteelMaterial(
            "low-carbon-steel", 1000.0, 2.1, 7870.0,
            "μ_r ≈ 1000 in the linear range of annealed low-carbon (mild) steel plate and "
            "J_s ≈ 2.1 T: from memory (handbook ranges 300–2000 and 2.0–2.15 T); density "
            "7870 kg/m³ of iron (CRC Handbook of Chemistry and Physics, from memory)"),
        SteelMaterial(
            "silicon-steel", 4000.0, 2.0, 7650.0,
            "non-oriented electrical steel, about 3 % Si: μ_r ≈ 4000, J_s ≈ 2.0 T, "
            "7650 kg/m³; all from memory (supplier data sheets of such grades)"),
        SteelMaterial(
            "rebar-steel", 100.0, 1.9, 7850.0,
            "reinforcing-bar steel: μ_r ≈ 100 (cold-worked, higher-carbon steel is magnetically "
            "harder), J_s ≈ 1.9 T, 7850 kg/m³; all from memory. A reinforced slab may be "
            "given as a plate of this material with an effective permeability "
            "(docs/steel.md)"),
    )
})

#: Material of a ``[[steel]]`` part that names none.
DEFAULT_STEEL_MATERIAL: str = "low-carbon-steel"


@dataclass(frozen=True)
class SteelPart:
    """A rectangular steel part fixed in the building (plate, beam, column, slab).

    Attributes
    ----------
    name : str
    center_m : tuple of 3 float
        Centre in the site frame, m.
    size_m : tuple of 3 float
        Edge lengths along x, y, z before rotation, m (all > 0).
    yaw_deg : float
        Rotation about the vertical (site z), degrees, counter-clockwise seen from above.
    material : SteelMaterial
    relative_permeability : float
        μ_r used for this part: the material's unless the scenario overrides it.
    """

    name: str
    center_m: tuple[float, float, float]
    size_m: tuple[float, float, float]
    material: SteelMaterial
    yaw_deg: float = 0.0
    relative_permeability: float | None = None

    def __post_init__(self) -> None:
        if len(self.center_m) != 3 or not all(math.isfinite(v) for v in self.center_m):
            raise ValueError(f"`center_m` of steel {self.name!r} must be 3 finite numbers; "
                             f"got {self.center_m!r}")
        if len(self.size_m) != 3 or not all(math.isfinite(v) and v > 0 for v in self.size_m):
            raise ValueError(f"`size_m` of steel {self.name!r} must be 3 positive numbers; "
                             f"got {self.size_m!r}")
        if not math.isfinite(self.yaw_deg):
            raise ValueError(f"`yaw_deg` of steel {self.name!r} must be finite; "
                             f"got {self.yaw_deg!r}")
        mu = self.relative_permeability
        if mu is not None and not (math.isfinite(mu) and mu >= 1.0):
            raise ValueError(f"`relative_permeability` of steel {self.name!r} must be >= 1; "
                             f"got {mu!r}")

    @property
    def mu_r(self) -> float:
        """The relative permeability in use (the override, else the material's)."""
        if self.relative_permeability is not None:
            return float(self.relative_permeability)
        return self.material.relative_permeability

    @property
    def volume_m3(self) -> float:
        """Volume in m³."""
        return float(self.size_m[0] * self.size_m[1] * self.size_m[2])

    @property
    def mass_kg(self) -> float:
        """Mass in kg: density × volume."""
        return self.material.density_kg_per_m3 * self.volume_m3


@dataclass(frozen=True)
class MovingSteel:
    """A compact steel object that moves along a path (lift car, vehicle, trolley, bed).

    Attributes
    ----------
    name : str
    mass_kg : float
        Mass of its steel, kg (> 0).
    path_m : tuple of (x, y, z) tuples
        At least two points in the site frame, m; the object moves along the straight
        segments between them.
    limit_ppm : float or None
        Largest acceptable change of the field at the isocentre, ppm; None for no limit.
    """

    name: str
    mass_kg: float
    path_m: tuple[tuple[float, float, float], ...]
    limit_ppm: float | None = None

    def __post_init__(self) -> None:
        if not (math.isfinite(self.mass_kg) and self.mass_kg > 0):
            raise ValueError(f"`mass_kg` of moving steel {self.name!r} must be positive; "
                             f"got {self.mass_kg!r}")
        if len(self.path_m) < 2 or not all(
                len(p) == 3 and all(math.isfinite(v) for v in p) for p in self.path_m):
            raise ValueError(f"`path_m` of moving steel {self.name!r} must be at least two "
                             f"points of 3 finite numbers; got {self.path_m!r}")
        if self.limit_ppm is not None and not (math.isfinite(self.limit_ppm)
                                               and self.limit_ppm > 0):
            raise ValueError(f"`limit_ppm` of moving steel {self.name!r} must be positive; "
                             f"got {self.limit_ppm!r}")


@runtime_checkable
class InducedField(Protocol):
    """The field of solved steel, as the field layer asks for it.

    A solved steel model (built in :mod:`fringe.physics.steel`) offers its induced flux
    density at site points; :func:`fringe.field.evaluate.field_at` adds it to the magnets'
    field when a :class:`~fringe.model.site.Site` carries one in ``induced``.
    """

    def field_T(self, points_m: object) -> object:
        """Induced B in T at site points (N, 3) → (N, 3)."""
        ...
