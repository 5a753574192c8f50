"""Sheets of the magnetic energy density u = B²/2μ₀ (plan and section per magnet).

Computed by :mod:`fringe.analysis.energy_maps` (``energy_density_plan_map``,
``energy_density_section_map``), drawn with :func:`fringe.render.drawing.map_sheet`;
the site report (:func:`fringe.render.report.build_sheets`) and ``fringe energy --maps``
use them.
"""

from __future__ import annotations

import math
from types import SimpleNamespace
from typing import TYPE_CHECKING

import numpy as np

from fringe.analysis.energy_maps import (
    DEFAULT_ENERGY_LEVELS_J_PER_M3,
    energy_density_plan_map,
    energy_density_section_map,
)
from fringe.analysis.geometry import magnet_plan_outline, section_windings
from fringe.analysis.zones import reach_m, section_directions
from fringe.io.report_files import slug
from fringe.model.constants import MU0_T_M_PER_A

if TYPE_CHECKING:
    from matplotlib.figure import Figure

__all__ = ["energy_density_sheets"]


def energy_density_sheets(site, magnets=None, levels=DEFAULT_ENERGY_LEVELS_J_PER_M3
                          ) -> list[tuple[str, Figure]]:
    """Plan and section sheets of u = B²/2μ₀ for each magnet, ready for a report.

    Returns a list of ``(file_stem, Figure)``: ``energy-plan-<magnet>`` (horizontal plane
    at the centre height) and ``energy-section-<magnet>`` (vertical plane through the
    centre along the axis), drawn with :func:`fringe.render.drawing.map_sheet`. The window is
    1.2× the reach of the lowest level's field |B| = √(2μ₀u).
    """
    from fringe.render.drawing import SheetInfo, map_sheet

    magnets = list(site.magnets if magnets is None else magnets)
    levels = [float(v) for v in levels]
    b_low = math.sqrt(2 * MU0_T_M_PER_A * min(levels))  # |B| of the lowest level
    sheets = []
    taken: set[str] = set()
    notes_for = {
        "plan": ("u = |B|²/2μ₀ of all magnets superposed (vacuum; Jackson Eq. 5.148).",
                 "The magnet's footprint (its windings projected on the plan) is left "
                 "blank; the section sheet shows u inside it."),
        "section": ("u = |B|²/2μ₀ of all magnets superposed (vacuum; Jackson Eq. 5.148).",
                    "Windings drawn in grey (their cross-section in the section plane)."),
    }
    for m in magnets:
        half = 1.2 * reach_m(m, b_low)
        step = half / 60.0
        c = np.asarray(m.center_m)
        ax = np.arange(-half, half + step / 2, step)
        plan = energy_density_plan_map(site, c[2], c[0] + ax, c[1] + ax, levels)
        along = section_directions(m)["along"]
        sec = energy_density_section_map(site, c, along, ax, c[2] + ax, levels)
        name = slug(m.name, taken)
        outlines = [(m.name, magnet_plan_outline(m))]
        cut, _projected = section_windings(m, SimpleNamespace(unit=along))
        windings = [] if cut.is_empty else [(m.name, cut)]
        for mp, kind, labels in (
                (plan, "plan", ("x (east), m", "y (north), m")),
                (sec, "section", ("s along the axis, m", "z (height), m"))):
            info = SheetInfo(site_name=site.name,
                             title=f"Energy density, {kind} through {m.name}",
                             subtitle=("horizontal plane at the magnet centre height"
                                       if kind == "plan" else
                                       "vertical plane through the centre along the axis"),
                             magnets=(m.name,), drawing=site.drawing)
            fig = map_sheet(mp.u_m, mp.v_m, mp.energy_density_J_per_m3, levels, info,
                            unit="J/m³", quantity="u", notes=notes_for[kind],
                            magnets=outlines if kind == "plan" else (),
                            windings=windings if kind == "section" else (),
                            x_label=labels[0], y_label=labels[1],
                            north_arrow=kind == "plan", north_deg=site.plan.north_deg)
            sheets.append((f"energy-{kind}-{name}", fig))
    return sheets
