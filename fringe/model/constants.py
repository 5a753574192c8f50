"""Physical constants and default thresholds, each with its source.

All values are SI. The physical constants are written out (CODATA 2022, the values
:mod:`scipy.constants` carries; ``tests/model/test_constants.py`` compares them) so that
this module imports nothing heavy: the command line reads it before parsing arguments.
"""

from __future__ import annotations

#: The one version number of fringe (``pyproject.toml`` reads it from here).
VERSION: str = "0.1.0"

#: Vacuum permeability μ₀ in T·m/A (CODATA 2022, as in scipy.constants.mu_0).
MU0_T_M_PER_A: float = 1.25663706127e-06

#: Standard acceleration of gravity in m/s² (CGPM 1901, as in scipy.constants.g).
STANDARD_GRAVITY_M_PER_S2: float = 9.80665

#: Standard atmosphere in Pa (as in scipy.constants.atm).
STANDARD_ATMOSPHERE_PA: float = 101325.0

#: Default field thresholds drawn on plans, in mT. 0.5 mT: controlled access area
#: (ICNIRP 2009 static-field guidelines; IEC 60601-2-33). 0.1, 1 and 3 mT: common
#: practice for sensitive equipment (gamma cameras, image intensifiers, electron
#: microscopes at 0.1 mT) and loose ferromagnetic objects, no source.
#: 10, 40 and 200 mT: common practice, no source. Every equipment limit of a scenario
#: is drawn as a line too (:func:`fringe.model.site.site_plan`).
DEFAULT_THRESHOLDS_MT: tuple[float, ...] = (0.1, 0.5, 1.0, 3.0, 10.0, 40.0, 200.0)

#: Lines of the spatial field gradient |∇|B|| drawn on the implant sheets, T/m: values
#: implant labels commonly state (common practice, no source).
DEFAULT_GRADIENT_LINES_T_PER_M: tuple[float, ...] = (1.0, 2.0, 3.0, 5.0, 10.0, 20.0)

#: Largest |coordinate| in m accepted for a magnet centre or a field point: beyond any
#: site or map grid (UTM northings stay below 1e7 m); far larger values overflow the
#: field kernels (magpylib's elliptic-integral iteration then never ends).
MAX_COORDINATE_M: float = 1e8

#: Advisory notice printed on every output.
ADVISORY_NOTICE: str = (
    "ADVISORY ESTIMATE ONLY. Field values are computed from a coil model and must be "
    "verified by a site survey. Local codes, the site's MR safety expert and the magnet "
    "supplier's data govern; this output does not replace them."
)

#: Largest extent (m) of one room outline accepted (a sports hall is some 50 m, a factory
#: hall rarely above 200 m): a room larger than this is a unit slip
#: (a drawing in millimetres or centimetres read as metres). Common practice, no source.
MAX_ROOM_EXTENT_M: float = 200.0

#: Largest span (m) of all room outlines of a site together: far beyond any building or
#: campus block, so a unit slip. Common practice, no source.
MAX_SITE_SPAN_M: float = 2000.0

#: Largest |elevation| (m) of a floor or a magnet centre above or below the site datum:
#: deeper than any basement and higher than the floors of almost any building; a larger
#: value is a unit slip. Common practice, no source.
MAX_ELEVATION_M: float = 300.0

#: What the field limits are compared with, stated on every output: the field the magnets
#: add, not the total field (the Earth's field, 25-65 µT: NOAA/BGS World Magnetic Model,
#: adds up to 0.065 mT, comparable to the 0.1 mT limits of sensitive equipment).
FIELD_BASIS_NOTE: str = (
    "Limits are compared with the field the magnets add; the Earth's field (25-65 µT, "
    "0.025-0.065 mT, depending on place) comes on top and is comparable to 0.1 mT "
    "equipment limits, so a survey meter reads the total."
)

# -- defaults the command line shows in its help (here so that help imports nothing heavy)

#: Radial and axial margin in m added around the windings to stand for the cryostat
#: envelope when none is given (common practice, no source: vessel walls, radiation
#: shields and vacuum gaps of whole-body magnets are of this order).
#: Used by :mod:`fringe.physics.energy`.
DEFAULT_ENVELOPE_MARGIN_M: float = 0.2

#: Default contour levels of energy-density maps, J/m³ (decades; common practice, no
#: source). 1 J/m³ ≈ 1.6 mT, 1000 J/m³ ≈ 50 mT. Used by :mod:`fringe.analysis.energy_maps`.
DEFAULT_ENERGY_LEVELS_J_PER_M3: tuple[float, ...] = (1.0, 10.0, 100.0, 1000.0)

#: Points per evaluated block of a field map (≈ 100 MB of temporaries in the field engine
#: at most). Used by :mod:`fringe.field.grid`.
DEFAULT_BLOCK_POINTS: int = 1_000_000

#: Output formats of a field map by file suffix (one list, used by the CLI and the writer
#: :mod:`fringe.io.gridmap`).
MAP_FORMATS: tuple[str, ...] = (".npz", ".vti")

#: Formats of the drawn sheets (``--formats`` of report, demo and place; default all):
#: ``pdf`` the collected report.pdf, ``png`` and ``svg`` one file per sheet.
SHEET_FORMATS: tuple[str, ...] = ("pdf", "png", "svg")
