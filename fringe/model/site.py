"""The site: magnets and building a scenario describes, as frozen nouns.

:class:`Site` is what :func:`fringe.io.scenario.load_site` returns; every section of a
scenario is a typed field of it (``plan``, ``floors``, ``rooms``, ``equipment``,
``room_drawings``, ``quench``). A ``Site(name, magnets)`` built in code has the defaults
of a scenario that gives only magnets. :func:`site_plan` gathers the building into one
:class:`SitePlan` for the maps and checks.
"""

from __future__ import annotations

import math
from collections.abc import Iterable
from dataclasses import dataclass, field, replace

from fringe.model.building import BOUNDARY_CHOICES, Boundary, Equipment, Floor, Room
from fringe.model.constants import DEFAULT_GRADIENT_LINES_T_PER_M, DEFAULT_THRESHOLDS_MT
from fringe.model.errors import ArgumentError, must_be
from fringe.model.magnet import Magnet
from fringe.model.steel import InducedField, MovingSteel, SteelPart

__all__ = ["Site", "SitePlan", "PlanSettings", "RoomDrawing", "QuenchInputs", "site_plan",
           "DrawingSettings", "PAPER_SIZES_MM", "STANDARD_SCALES", "DEFAULT_PAPER",
           "default_settings", "with_boundary", "DEFAULT_BOUNDARY", "DEFAULT_GRID_STEP_M",
           "DEFAULT_BAND_STEP_M", "DEFAULT_BAND_M", "DEFAULT_FLOOR"]

#: Default boundary choice (key of :data:`fringe.model.building.BOUNDARY_CHOICES`): 0.5 mT.
DEFAULT_BOUNDARY: str = "icnirp-2009"
#: Default plan-grid step in m. 0.1 m keeps contour positions within a few cm
#: (linear interpolation between nodes) while a 25 m × 15 m floor stays ~40 000 nodes.
DEFAULT_GRID_STEP_M: float = 0.1
#: Default largest vertical step between sampled levels of an occupied band, m.
DEFAULT_BAND_STEP_M: float = 0.25
#: Default occupied band above each floor: (bottom, top) in m.
DEFAULT_BAND_M: tuple[float, float] = (0.0, 2.0)
#: The floor assumed when a scenario declares none.
DEFAULT_FLOOR: Floor = Floor("ground", 0.0)


@dataclass(frozen=True)
class PlanSettings:
    """Site-wide plan settings from the ``[plan]`` table.

    Attributes
    ----------
    boundary : Boundary
        The controlled-area boundary value (mT) and its source.
    thresholds_mT : tuple of float
        Field lines drawn and reported, ascending; always includes the boundary value.
    grid_step_m : float
        Plan and section grid step, m.
    band_step_m : float
        Largest vertical step between sampled levels of an occupied band, m.
    band_m : tuple of 2 float
        Site-wide occupied band (bottom, top) above each floor, m.
    extent_m : tuple or None
        Plan window ((x_min, y_min), (x_max, y_max)) in m, or None to fit the site.
    gradient_lines_T_per_m : tuple of float
        Lines of |∇|B|| on the implant sheets, T/m (``[plan] gradient_lines_T_per_m``).
    exposure_lines : tuple of str or None
        Exposure limits drawn on section sheets (keys of
        ``fringe.physics.exposure.EXPOSURE_LIMITS``); None for all of them, ``()`` for none.
    show_gauss : bool
        Print field values on the sheets also in gauss, in brackets (``[plan] show_gauss``).
    north_deg : float
        Direction of true (or project) north on the plans, degrees from the site +y axis,
        counter-clockwise positive (``[plan] north_deg``; 0: north is +y, 90: north
        points to −x). Only the north arrow turns; the site frame stays as it is.
    field_uncertainty : float
        Relative uncertainty u of the model's |B| (``[plan] field_uncertainty``, 0 ≤ u < 1):
        the true field is taken to lie within model × (1 ± u). Each line then has an inner
        limit (the model's line at threshold/(1 − u)) and an outer limit (at
        threshold/(1 + u)); docs/uncertainty.md.
    """

    boundary: Boundary
    thresholds_mT: tuple[float, ...]
    grid_step_m: float = DEFAULT_GRID_STEP_M
    band_step_m: float = DEFAULT_BAND_STEP_M
    band_m: tuple[float, float] = DEFAULT_BAND_M
    extent_m: tuple[tuple[float, float], tuple[float, float]] | None = None
    exposure_lines: tuple[str, ...] | None = None
    gradient_lines_T_per_m: tuple[float, ...] = DEFAULT_GRADIENT_LINES_T_PER_M
    show_gauss: bool = False
    north_deg: float = 0.0
    field_uncertainty: float = 0.0


#: ISO 216 A-series paper sizes, (short side, long side) in mm. The sheets are landscape.
PAPER_SIZES_MM: dict[str, tuple[float, float]] = {
    "A0": (841.0, 1189.0), "A1": (594.0, 841.0), "A2": (420.0, 594.0),
    "A3": (297.0, 420.0), "A4": (210.0, 297.0)}
#: Paper of the sheets when ``[drawing] paper`` is not given.
DEFAULT_PAPER: str = "A3"
#: Drawing scales (the n of 1:n) the sheets choose from, largest drawing first. ISO
#: 5455:1979, clause 5.1 (table of recommended scales): full size 1:1 and the reductions
#: 1:2, 1:5, 1:10, 1:20, 1:50, 1:100, 1:200, 1:500, 1:1000, 1:2000, 1:5000, 1:10000.
#: 1:25 and 1:250 are intermediate scales, which its note allows "in exceptional cases";
#: building drawings use them often (common practice, no source), so they are offered
#: too. Plans and sections of a building take 1:20 to 1:1000; the smaller n serve
#: close-ups (the gradient maps round a bore).
STANDARD_SCALES: tuple[int, ...] = (1, 2, 5, 10, 20, 25, 50, 100, 200, 250, 500, 1000, 2000,
                                    5000, 10000)


@dataclass(frozen=True)
class DrawingSettings:
    """The ``[drawing]`` table: what the title block of every sheet says, and the paper.

    Attributes
    ----------
    number, revision, status : str
        Drawing number, revision and status (e.g. "FR-0101", "B", "for approval");
        empty when not given (the title block then leaves the box blank).
    drawn_by, checked_by, approved_by : str
        Names printed in the sign-off boxes; empty: the box is left blank to be filled
        in by hand. The date boxes beside them are always left blank for signing.
    paper : str
        ISO 216 paper of the sheets, a key of :data:`PAPER_SIZES_MM` (landscape).
    scale : int or None
        The n of the stated drawing scale 1:n for plans and sections; None: each sheet
        takes the largest drawing (smallest n of :data:`STANDARD_SCALES`) that fits.
    """

    number: str = ""
    revision: str = ""
    status: str = ""
    drawn_by: str = ""
    checked_by: str = ""
    approved_by: str = ""
    paper: str = DEFAULT_PAPER
    scale: int | None = None


def with_boundary(thresholds_mT: Iterable[float], boundary_mT: float) -> tuple[float, ...]:
    """``thresholds_mT`` ascending, with ``boundary_mT`` added unless already present."""
    vals = {float(t) for t in thresholds_mT}
    if not any(math.isclose(t, boundary_mT, rel_tol=1e-9) for t in vals):
        vals.add(float(boundary_mT))
    return tuple(sorted(vals))


def default_settings() -> PlanSettings:
    """Settings used when a scenario has no ``[plan]`` table."""
    v, src = BOUNDARY_CHOICES[DEFAULT_BOUNDARY]
    return PlanSettings(Boundary(v, src), with_boundary(DEFAULT_THRESHOLDS_MT, v))


@dataclass(frozen=True)
class RoomDrawing:
    """A CAD drawing rooms were read from (``[[room_file]] format = "dxf"``).

    Attributes
    ----------
    path : str
    floors : tuple of str
        Floors of the rooms it gave.
    offset_m : (float, float)
        Its ``offset_m`` (drawing origin in the site frame, m).
    walls : tuple of shapely geometry
        Lines and outlines on its wall layers, site metres (drawn on the plan sheets).
    rotation_deg : float
        Its ``rotation_deg`` (turn about the drawing origin before the offset, degrees
        counter-clockwise).
    """

    path: str
    floors: tuple[str, ...]
    offset_m: tuple[float, float]
    walls: tuple = ()
    rotation_deg: float = 0.0


@dataclass(frozen=True)
class ImplantCondition:
    """The labelled static-field conditions of an implant or device.

    Attributes
    ----------
    name : str
        A label of the user's choice (e.g. the device's model line).
    max_field_T : float
        Largest static field |B| allowed, T.
    max_grad_abs_B_T_per_m : float or None
        Largest spatial field gradient |∇|B|| allowed, T/m (None: not labelled).
    max_force_product_T2_per_m : float or None
        Largest force product |B|·|∇|B|| allowed, T²/m (None: not labelled).
    """

    name: str
    max_field_T: float
    max_grad_abs_B_T_per_m: float | None = None
    max_force_product_T2_per_m: float | None = None


@dataclass(frozen=True)
class QuenchInputs:
    """Inputs of a quench budget for one magnet (all optional except magnet).

    Attributes
    ----------
    magnet : str
    helium_L, room_volume_m3, dump_ohm, magnet_resistance_ohm,
    room_temperature_C, room_pressure_kPa : float or None
        None where the scenario does not give the value.
    """

    magnet: str
    helium_L: float | None = None
    room_volume_m3: float | None = None
    dump_ohm: float | None = None
    magnet_resistance_ohm: float | None = None
    room_temperature_C: float | None = None
    room_pressure_kPa: float | None = None


@dataclass(frozen=True)
class Site:
    """Everything a scenario describes, validated and frozen.

    Attributes
    ----------
    name : str
        Site name printed on every output.
    magnets : tuple of Magnet
    source_file : str
        The scenario file it was loaded from ("" when built in code).
    plan : PlanSettings
        The ``[plan]`` settings (defaults when the scenario has none).
    floors : tuple of Floor
        The declared ``[[floor]]`` storeys; empty when none is declared (then
        :func:`site_plan` assumes :data:`DEFAULT_FLOOR`).
    rooms : tuple of Room
        ``[[room]]`` tables and the rooms of every ``[[room_file]]``.
    equipment : tuple of Equipment
        ``[[equipment]]`` points.
    room_drawings : tuple of RoomDrawing
        The CAD drawings rooms were read from (``[[room_file]] format = "dxf"``).
    quench : tuple of QuenchInputs
        ``[[quench]]`` tables, at most one per magnet.
    implant_conditions : tuple of ImplantCondition
        ``[[implant_condition]]`` tables (docs/implants.md).
    steel : tuple of SteelPart
        ``[[steel]]`` parts fixed in the building (docs/steel.md).
    moving_steel : tuple of MovingSteel
        ``[[moving_steel]]`` objects and their paths.
    background_field_uT : tuple of 3 float or None
        ``[site] background_field_uT``: a uniform background field (the Earth's) in µT,
        site frame; None when not given.
    drawing : DrawingSettings
        The ``[drawing]`` table (title-block fields, paper and scale; defaults when absent).
    induced : InducedField or None
        The solved response of :attr:`steel` to the magnets (None until solved:
        a loaded scenario is free space until the analysis solves its steel).
    """

    name: str
    magnets: tuple[Magnet, ...]
    source_file: str = ""
    plan: PlanSettings = field(default_factory=default_settings)
    floors: tuple[Floor, ...] = ()
    rooms: tuple[Room, ...] = ()
    equipment: tuple[Equipment, ...] = ()
    room_drawings: tuple[RoomDrawing, ...] = ()
    quench: tuple[QuenchInputs, ...] = ()
    implant_conditions: tuple[ImplantCondition, ...] = ()
    steel: tuple[SteelPart, ...] = ()
    moving_steel: tuple[MovingSteel, ...] = ()
    background_field_uT: tuple[float, float, float] | None = None
    drawing: DrawingSettings = field(default_factory=DrawingSettings)
    induced: InducedField | None = field(default=None, compare=False, repr=False)

    def magnet(self, name: str) -> Magnet:
        """The magnet called ``name``; :class:`ArgumentError` (argument ``magnet``) listing
        the names otherwise."""
        for m in self.magnets:
            if m.name == name:
                return m
        raise ArgumentError(must_be("magnet", f"one of the site's magnets ({self.magnet_names()})",
                                    name), "magnet", self.source_file or None)

    def magnet_names(self) -> str:
        """The magnets' names quoted and comma-separated (``'none'`` for no magnet)."""
        return ", ".join(repr(m.name) for m in self.magnets) or "none"

    def quench_inputs(self, magnet: str) -> QuenchInputs | None:
        """The ``[[quench]]`` table of ``magnet``, or None."""
        for q in self.quench:
            if q.magnet == magnet:
                return q
        return None


@dataclass(frozen=True)
class SitePlan:
    """Everything the maps and checks need about the building."""

    settings: PlanSettings
    floors: tuple[Floor, ...]
    rooms: tuple[Room, ...]
    equipment: tuple[Equipment, ...]
    floors_declared: bool = True

    def floor(self, name: str) -> Floor:
        """The floor called ``name`` (KeyError otherwise)."""
        for f in self.floors:
            if f.name == name:
                return f
        raise KeyError(name)

    def floor_of_point(self, z_m: float) -> Floor:
        """The floor a point at height ``z_m`` stands on: the highest floor at or below it
        (the lowest floor for points below every floor)."""
        below = [f for f in self.floors if f.elevation_m <= z_m + 1e-9]
        if below:
            return max(below, key=lambda f: f.elevation_m)
        return min(self.floors, key=lambda f: f.elevation_m)


def site_plan(site: Site) -> SitePlan:
    """Gather the building of ``site`` (the default floor when none is declared).

    The plan's thresholds gain every equipment ``limit_mT`` not already among them.
    """
    settings = site.plan
    limits = [e.limit_mT for e in site.equipment]
    if limits:  # every equipment limit is drawn as a line
        th = settings.thresholds_mT
        for v in limits:
            th = with_boundary(th, v)
        settings = replace(settings, thresholds_mT=th)
    floors = site.floors
    declared = bool(floors)
    if not floors:
        floors = (Floor(DEFAULT_FLOOR.name, DEFAULT_FLOOR.elevation_m, *settings.band_m),)
    return SitePlan(settings, tuple(floors), tuple(site.rooms), tuple(site.equipment), declared)
