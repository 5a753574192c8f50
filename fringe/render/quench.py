"""Sheets of a quench release budget for the PDF report (through :mod:`fringe.render.drawing`).

:func:`quench_sheets` returns the budget table and, when a dump resistor was computed,
the decay sheet (current and energy left in the magnet against time). The report
module can append them to its sheet set; ``fringe quench --pdf FILE`` writes them alone.
"""

from __future__ import annotations

from pathlib import Path
from typing import TYPE_CHECKING

from fringe.physics.quench import (
    OXYGEN_MODELS,
    QuenchBudget,
    budget_table_rows,
    dump_decay_curves,
)
from fringe.render.drawing import Curve, CurvePanel, SheetInfo, curve_sheet, table_sheet, write_pdf

if TYPE_CHECKING:
    from matplotlib.figure import Figure

__all__ = ["quench_sheets", "quench_decay_sheet", "write_quench_pdf"]

_MODEL_NOTES: tuple[str, ...] = (
    "Energy-limited boil-off W/h_fg takes all stored energy as latent heat of saturated "
    "liquid at 1 atm: an upper bound for the energy alone; the whole inventory can still be "
    "lost, hence the whole-inventory release.",
    f"Room oxygen: {OXYGEN_MODELS['well-mixed'].assumptions}, vent pipe failed: "
    f"x = {OXYGEN_MODELS['well-mixed'].formula()} ({OXYGEN_MODELS['well-mixed'].source}). "
    f"The displacement estimate x = {OXYGEN_MODELS['displacement'].formula()} gives lower "
    "oxygen for every release: the well-mixed figures are not the worst case.",
)


def _info(b: QuenchBudget, site_name: str, title: str, subtitle: str,
          date_iso: str | None, drawing=None) -> SheetInfo:
    kw: dict = {} if date_iso is None else {"date_iso": date_iso}
    if drawing is not None:
        kw["drawing"] = drawing
    if b.magnet:  # one budget per magnet: each sheet's title names it
        title = f"{title} of {b.magnet}"
    return SheetInfo(site_name=site_name, title=title, subtitle=subtitle,
                     magnets=(b.magnet,) if b.magnet else (), notes=_MODEL_NOTES, **kw)


def quench_decay_sheet(b: QuenchBudget, site_name: str, *, date_iso: str | None = None,
                       n_points: int = 301, drawing=None) -> Figure | None:
    """The dump-resistor decay: I(t) and the energy left in the magnet and dumped.

    ``drawing`` (a :class:`fringe.model.site.DrawingSettings`) fills the title block.

    Returns
    -------
    matplotlib.figure.Figure or None
        None when the budget has no dump circuit.
    """
    d = b.dump
    if d is None:
        return None
    c = dump_decay_curves(d, n_points=n_points)
    w_MJ = 0.5 * d.inductance_H * d.initial_current_A ** 2 / 1e6
    marks = (("τ = L/R", d.time_constant_s), ("1 % current", d.time_to_1_percent_s))
    panels = [
        CurvePanel("time after the dump switch opens, s", "current, A",
                   (Curve("I(t) = I0·exp(−t/τ)", c["time_s"], c["current_A"]),),
                   title=f"Current decay: I0 = {d.initial_current_A:.4g} A, "
                         f"τ = {d.time_constant_s:.4g} s, peak voltage "
                         f"{d.peak_voltage_V:.4g} V",
                   marks=marks),
        CurvePanel("time after the dump switch opens, s", "energy, MJ",
                   (Curve("energy left in the magnet ½·L·I²", c["time_s"],
                          c["energy_left_J"] / 1e6),
                    Curve("energy delivered to the dump resistor", c["time_s"],
                          c["energy_into_resistor_J"] / 1e6)),
                   title=f"Energy: W = {w_MJ:.4g} MJ, into the resistor "
                         f"{d.energy_into_resistor_J / 1e6:.4g} MJ",
                   marks=marks),
    ]
    info = _info(b, site_name, "Quench: dump-resistor decay",
                 f"R_dump = {d.dump_ohm:g} Ω, R_magnet = {d.magnet_resistance_ohm:g} Ω, "
                 f"L = {d.inductance_H:.4g} H", date_iso, drawing)
    return curve_sheet(panels, info, notes=list(b.cautions))


def quench_sheets(b: QuenchBudget, site_name: str, *, date_iso: str | None = None,
                  drawing=None) -> list:
    """The budget table sheet(s) and, with a dump circuit, the decay sheet.

    ``drawing`` (a :class:`fringe.model.site.DrawingSettings`) fills the title blocks.
    """
    info = _info(b, site_name, "Quench release budget",
                 f"{b.helium_L:g} L liquid helium, room {b.room_volume_m3:g} m³", date_iso,
                 drawing)
    figs = list(table_sheet("Quench release budget (advisory estimate)",
                            ("quantity", "value", "unit", "basis"),
                            budget_table_rows(b), info, notes=list(b.cautions)))
    decay = quench_decay_sheet(b, site_name, date_iso=date_iso, drawing=drawing)
    if decay is not None:
        figs.append(decay)
    return figs


def write_quench_pdf(b: QuenchBudget, site_name: str, path, *,
                     date_iso: str | None = None, drawing=None) -> Path:
    """Write :func:`quench_sheets` to one PDF (atomically); returns the path."""
    return write_pdf(quench_sheets(b, site_name, date_iso=date_iso, drawing=drawing), path,
                     title=f"Quench release budget — {site_name}")
