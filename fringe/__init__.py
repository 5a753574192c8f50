"""fringe: static stray field, controlled zones, stored energy and quench budgets.

Public API (a small curated set; everything else lives in its module)
-----------------------------------------------------------------------
load_site(path) -> Site
    Read and validate a TOML scenario file.
field_at(site, points_m) -> ndarray (N, 3)
    Flux density B in tesla at site points, all magnets superposed.
energy_density_J_per_m3(B_T) -> ndarray
    Magnetic energy density B²/2μ₀.
threshold_extents_m(magnet, threshold_T) -> (axial_m, radial_m)
    Outermost reach of a field line along and across a magnet's axis.
compute_report(site) / write_report(result, out_dir)
    Floor footprints, sections, room and equipment verdicts; all outputs.
stored_energy_J, inductance_matrix_H, circuit_inductance_H, magnet_energy
    Stored energy and inductance of coaxial windings.
quench_budget(...) -> QuenchBudget
    Helium boil-off, gas volume, room oxygen and dump-resistor decay.
fit_magnet(...) -> FitResult
    An equivalent coil magnet from data-sheet numbers.
search_placement(...) -> PlacementResult
    Where to put a magnet so its field lines stay in the controlled area.

All results are advisory estimates; see :data:`fringe.constants.ADVISORY_NOTICE`.
Heavy modules are imported on first use of their names.
"""

from __future__ import annotations

import importlib

__version__ = "0.1.0"

from .coils import Coil, Magnet  # noqa: E402
from .constants import ADVISORY_NOTICE  # noqa: E402
from .errors import FringeError, FringeInputError, FringeIOError, ScenarioError  # noqa: E402
from .field import energy_density_J_per_m3, field_at  # noqa: E402
from .scenario import Site, load_site  # noqa: E402

#: Names exported lazily: name → module.
_LAZY = {
    "threshold_extents_m": "extents",
    "compute_report": "report", "write_report": "report", "ReportResult": "report",
    "stored_energy_J": "energy", "inductance_matrix_H": "energy",
    "circuit_inductance_H": "energy", "magnet_energy": "energy",
    "quench_budget": "quench", "QuenchBudget": "quench", "helium_properties": "quench",
    "fit_magnet": "fit", "FieldLine": "fit", "FitResult": "fit",
    "search_placement": "place", "PlacementResult": "place",
}

__all__ = ["__version__", "Coil", "Magnet", "Site", "load_site", "field_at",
           "energy_density_J_per_m3", "ADVISORY_NOTICE", "FringeError", "ScenarioError",
           "FringeInputError", "FringeIOError", *_LAZY]


def __getattr__(name: str):
    if name in _LAZY:
        value = getattr(importlib.import_module(f".{_LAZY[name]}", __name__), name)
        globals()[name] = value
        return value
    raise AttributeError(f"module 'fringe' has no attribute {name!r}")
