"""The building: floors, rooms, sensitive equipment and the boundary choice.

Only the model lives here (frozen dataclasses and the tables of allowed names); the
scenario reader and the plan-file loaders live in :mod:`fringe.io`.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

__all__ = ["Floor", "Room", "Equipment", "Boundary", "ACCESS_CLASSES", "BOUNDARY_CHOICES",
           "DEFAULT_SLAB_M"]

#: Default slab thickness (m) between a storey's ceiling and the next floor's level: a
#: floor's default ``ceiling_m`` is the next floor's elevation less this (a typical
#: reinforced-concrete floor build-up; common practice, no source).
DEFAULT_SLAB_M: float = 0.3

#: Access classes of rooms. ``controlled`` rooms may hold fields above the boundary
#: value; every other room may not.
ACCESS_CLASSES: tuple[str, ...] = ("controlled", "open")


@dataclass(frozen=True)
class Floor:
    """A storey.

    Parameters
    ----------
    name : str
    elevation_m : float
        Finished-floor level in the site frame (z), m.
    band_bottom_m, band_top_m : float
        Occupied height band above the floor, m (default 0 to 2.0 m).
    ceiling_m : float or None
        Height of the underside of the slab above (the ceiling), measured from this
        floor's own level (``elevation_m``), m. None: no storey height known, the full
        height is the occupied band's top. The scenario reader fills it
        (:data:`DEFAULT_SLAB_M` below the next floor up by default).
    """

    name: str
    elevation_m: float
    band_bottom_m: float = 0.0
    band_top_m: float = 2.0
    ceiling_m: float | None = None

    @property
    def band_z_m(self) -> tuple[float, float]:
        """The occupied band as absolute site z (low, high), m."""
        return (self.elevation_m + self.band_bottom_m, self.elevation_m + self.band_top_m)

    @property
    def full_height_z_m(self) -> tuple[float, float]:
        """The whole storey as absolute site z (low, high), m: from the floor level up to
        the ceiling (never below the band top)."""
        top = self.band_top_m if self.ceiling_m is None else max(self.ceiling_m,
                                                                 self.band_top_m)
        return (self.elevation_m, self.elevation_m + top)

    def full_height(self) -> Floor:
        """This floor with its occupied band widened to the whole storey (floor level to
        ceiling): the band that full-height maps sample."""
        lo, hi = self.full_height_z_m
        return Floor(self.name, self.elevation_m, 0.0, hi - lo, self.ceiling_m)


@dataclass(frozen=True)
class Room:
    """A room outline on one floor.

    ``outline`` is a valid shapely Polygon in site x-y metres (holes allowed);
    ``limit_mT`` overrides the site boundary value for this room when given.
    """

    name: str
    floor: str
    outline: Any  # shapely.Polygon
    access: str = "open"
    limit_mT: float | None = None


@dataclass(frozen=True)
class Equipment:
    """A piece of field-sensitive equipment: a point, or a volume (a prism on a floor).

    ``limit_mT`` is the largest static field it tolerates (from its ``class`` in
    :data:`fringe.model.equipment_classes.EQUIPMENT_CLASSES` unless given); typical values
    are common practice from supplier data.

    Parameters
    ----------
    name : str
    position_m : (float, float, float) or None
        A point in the site frame, m; None for a volume.
    limit_mT : float
    note : str
    outline : shapely.Polygon or None
        Plan outline of a volume in site x-y metres (None for a point).
    floor : str or None
        The floor a volume stands on.
    height_m : float or None
        Height of a volume above its floor's level, m.
    class_name : str or None
        Its equipment class (a key of ``EQUIPMENT_CLASSES``), if given.
    """

    name: str
    position_m: tuple[float, float, float] | None
    limit_mT: float
    note: str = ""
    outline: Any = None  # shapely.Polygon
    floor: str | None = None
    height_m: float | None = None
    class_name: str | None = None

    @property
    def is_volume(self) -> bool:
        """True for a volume (``outline`` given), False for a point."""
        return self.outline is not None


@dataclass(frozen=True)
class Boundary:
    """The field value that bounds the controlled access area, with its source."""

    value_mT: float
    source: str


#: Named choices for the controlled-area boundary value: key → (value in mT, source).
BOUNDARY_CHOICES: dict[str, tuple[float, str]] = {
    "icnirp-2009": (0.5, "ICNIRP 2009 static-field guidelines; IEC 60601-2-33 ed. 3 (2010)"),
    "iec-60601-2-33-ed4": (0.9, "IEC 60601-2-33 ed. 4 (2022) B0 hazard area, aligned with "
                                "ISO 14117"),
}
