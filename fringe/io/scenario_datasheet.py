"""Scenario magnets given by data-sheet numbers: ``[magnet.datasheet]``.

Instead of ``[[magnet.coil]]`` tables a magnet may carry::

    [[magnet]]
    name = "scanner 1"
    center_m = [5.0, 4.0, 1.1]
    axis = [1, 0, 0]

      [magnet.datasheet]
      center_field_T = 1.5
      shielded = true          # actively shielded (default true)
      warm_bore_m = 0.6        # optional; < 0.3 m selects the vertical lab-magnet family

        [[magnet.datasheet.line]]
        threshold_mT = 0.5
        axial_m = 4.0
        radial_m = 2.5

At load time :func:`fringe.physics.fit.fit_magnet` turns these numbers into an equivalent coil
model; the magnet's description says so and states the worst extent error. Fits are
cached per set of numbers within a process.
"""

from __future__ import annotations

import decimal
import warnings
from functools import lru_cache
from typing import TYPE_CHECKING

from fringe.io.reader import Reader
from fringe.model.errors import FringeWarning
from fringe.model.magnet import DataSheet
from fringe.physics.families import FAMILIES
from fringe.physics.fit import MAX_CENTER_FIELD_T, FieldLine, FitResult, fit_magnet

if TYPE_CHECKING:
    from fringe.model.magnet import Coil

__all__ = ["datasheet_description", "parse_datasheet", "rounding_of", "DATASHEET_KEY",
           "ORIGIN"]

#: Sub-table of ``[[magnet]]`` holding data-sheet numbers.
DATASHEET_KEY: str = "datasheet"

#: ``Magnet.origin`` of a magnet fitted to data-sheet numbers.
ORIGIN: str = "datasheet-fit"


def datasheet_description(result: FitResult, shielded: bool) -> str:
    """One line saying the magnet is an equivalent model and what it was fitted to."""
    lines = "; ".join(f"{ln.threshold_T * 1e3:g} mT line {ln.axial_m:g} m axial × "
                      f"{ln.radial_m:g} m radial" for ln in result.requested)
    kind = "actively shielded" if shielded else "unshielded"
    return (f"Equivalent coil model fitted to data-sheet numbers ({result.center_field_T:.4g} T, "
            f"{kind}; {lines}); worst extent error {result.max_residual * 100:.1f} %. "
            "Its coils are not the supplier's; only its stray field is meant to match."
            + "".join(f" Note: {n.replace('`bore_m`', '`warm_bore_m`')}." for n in result.notes))


@lru_cache(maxsize=32)
def _cached_fit(center_field_T: float, lines: tuple[tuple[float, float, float], ...],
                shielded: bool, bore_m: float | None, name: str):
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always", FringeWarning)
        res = fit_magnet(center_field_T, [FieldLine(*ln) for ln in lines], shielded=shielded,
                         bore_m=bore_m, name=name)
    return res, tuple(str(w.message) for w in caught)


def rounding_of(value) -> float:
    """Half a unit of the last digit ``value`` is written with: the data sheet's rounding.

    A whole number (TOML integer) is taken as rounded to units; a float to the last
    digit of its shortest decimal form (as TOML wrote it, e.g. ``3.9`` → ±0.05,
    ``2.25`` → ±0.005; ``4.0`` reads as ``4.0`` → ±0.05).

    >>> rounding_of(3.9), rounding_of(2.25), rounding_of(4), rounding_of(1.5)
    (0.05, 0.005, 0.5, 0.05)
    """
    if isinstance(value, int) and not isinstance(value, bool):
        return 0.5
    exponent = decimal.Decimal(repr(float(value))).as_tuple().exponent
    return float(decimal.Decimal(5).scaleb(int(exponent) - 1))


def parse_datasheet(r: Reader, name: str
                    ) -> tuple[tuple[Coil, ...], str, str, DataSheet]:
    """Builder of ``fringe.io.scenario.MAGNET_BUILDERS["datasheet"]``: the magnet table
    ``r`` of magnet ``name`` → (coils, description, origin, the data sheet)."""
    d = r.table(DATASHEET_KEY)
    b0 = d.number("center_field_T", low=0.0, low_open=True, high=MAX_CENTER_FIELD_T)
    shielded = d.boolean("shielded", True)
    bore = d.number("warm_bore_m", None, low=0.0, low_open=True, high=5.0)
    lrs = d.tables("line")
    if not lrs:
        d.fail(d.key("line"), "at least one [[magnet.datasheet.line]] table "
               "(threshold_mT, axial_m, radial_m)", [])
    lines, tols = [], []
    for lr in lrs:
        thr = lr.number("threshold_mT", low=0.0, low_open=True)
        if thr * 1e-3 >= b0:
            lr.fail(lr.key("threshold_mT"), f"below the centre field ({b0 * 1e3:g} mT)", thr)
        ax = lr.number("axial_m", low=0.0, low_open=True, high=1000.0)
        rad = lr.number("radial_m", low=0.0, low_open=True, high=1000.0)
        tols.append((rounding_of(lr.raw("axial_m")), rounding_of(lr.raw("radial_m"))))
        lr.finish()
        lines.append((thr * 1e-3, ax, rad))
    d.finish()
    res, msgs = _cached_fit(b0, tuple(lines), shielded, bore, name)
    where = f"{r.file}: " if r.file else ""
    for msg in msgs:
        warnings.warn(f"{where}magnet {name!r} (`{d.path}`): {msg}", FringeWarning, stacklevel=2)
    shape = FAMILIES[res.family].fit
    params = tuple(float(res.parameters[k]) for k in shape.parameters)
    sheet = DataSheet(b0, rounding_of(d.raw("center_field_T")), shielded, bore, tuple(lines),
                      tuple(tols), res.family, params, res.a_min_m)
    return res.magnet.coils, datasheet_description(res, shielded), ORIGIN, sheet

