"""fringe: static stray field, controlled zones, stored energy and quench budgets.

Public API (a small curated set; everything else lives in its layer)
--------------------------------------------------------------------
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

The package is layered (``docs/architecture.md``): ``model`` → ``field`` → ``physics`` →
``analysis`` → ``io`` → ``render`` → ``cli``, each importing only the layers before it.
Every name here is imported on first use, so ``import fringe`` costs nothing.

All results are advisory estimates; see :data:`fringe.model.constants.ADVISORY_NOTICE`.
"""

from __future__ import annotations

import importlib
from typing import Any

from fringe.model.constants import VERSION as __version__

#: Public names → the module that defines them (one list, read by ``__all__``).
_PUBLIC: dict[str, str] = {
    "Coil": "fringe.model.magnet", "Magnet": "fringe.model.magnet",
    "Envelope": "fringe.model.magnet",
    "Site": "fringe.model.site",
    "ADVISORY_NOTICE": "fringe.model.constants",
    "FringeError": "fringe.model.errors", "ScenarioError": "fringe.model.errors",
    "FringeInputError": "fringe.model.errors", "FringeIOError": "fringe.model.errors",
    "field_at": "fringe.field.evaluate", "energy_density_J_per_m3": "fringe.field.evaluate",
    "threshold_extents_m": "fringe.field.extents",
    "stored_energy_J": "fringe.physics.energy", "inductance_matrix_H": "fringe.physics.energy",
    "circuit_inductance_H": "fringe.physics.energy", "magnet_energy": "fringe.physics.energy",
    "quench_budget": "fringe.physics.quench", "QuenchBudget": "fringe.physics.quench",
    "helium_properties": "fringe.physics.quench",
    "fit_magnet": "fringe.physics.fit", "FieldLine": "fringe.physics.fit",
    "FitResult": "fringe.physics.fit",
    "compute_report": "fringe.analysis.report", "ReportResult": "fringe.analysis.report",
    "search_placement": "fringe.analysis.placement",
    "PlacementResult": "fringe.analysis.placement",
    "load_site": "fringe.io.scenario",
    "write_report": "fringe.render.report",
}

__all__ = ["__version__", *_PUBLIC]


def __getattr__(name: str) -> Any:
    if name in _PUBLIC:
        # first use of the public API: keep fast field models on disk between runs
        importlib.import_module("fringe.io.model_cache").install()
        value = getattr(importlib.import_module(_PUBLIC[name]), name)
        globals()[name] = value
        return value
    raise AttributeError(f"module 'fringe' has no attribute {name!r}")


def __dir__() -> list[str]:
    return sorted(__all__)
