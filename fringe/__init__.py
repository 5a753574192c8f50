"""fringe: static stray field, controlled zones, stored energy and quench budgets.

Public API
----------
load_site(path) -> Site
    Read and validate a TOML scenario file.
field_at(site, points_m) -> ndarray (N, 3)
    Flux density B in tesla at site points, all magnets superposed.
energy_density_J_per_m3(B_T) -> ndarray
    Magnetic energy density B²/2μ₀.

All results are advisory estimates; see :data:`fringe.constants.ADVISORY_NOTICE`.
"""

from __future__ import annotations

__version__ = "0.1.0"

from .coils import Coil, Magnet  # noqa: E402
from .constants import ADVISORY_NOTICE  # noqa: E402
from .errors import FringeError, FringeInputError, FringeIOError, ScenarioError  # noqa: E402
from .field import energy_density_J_per_m3, field_at  # noqa: E402
from .scenario import Site, load_site  # noqa: E402

__all__ = ["__version__", "Coil", "Magnet", "Site", "load_site", "field_at",
           "energy_density_J_per_m3", "ADVISORY_NOTICE", "FringeError", "ScenarioError",
           "FringeInputError", "FringeIOError"]
