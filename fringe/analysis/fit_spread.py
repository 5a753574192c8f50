"""What a data-sheet magnet's figures could be: their spread over every model that meets
the data sheet.

:func:`magnet_fit_spread` takes a magnet fitted to data-sheet numbers
(``Magnet.datasheet``), the members of its family that meet the same numbers within the
data sheet's rounding (:func:`fringe.physics.fit_spread.spread_models`), and reports the
range over them of each line's extents (every plan threshold), of the attraction zone's
extents and of the stored energy. It also names two of them:

* the **outermost** model: the one whose outermost plan line (the lowest threshold)
  reaches farthest (largest axial × radial extent); the report's maps, sections and
  verdicts use it in place of the best fit, so the sheets draw the outermost line of
  the spread (docs/fit.md says where another line of another model reaches a little
  farther: ``fit_spread`` lists every range);
* the **largest-energy** model, which the quench budget uses
  (:func:`fringe.analysis.quench.budget_for_site`).

Cost: the spread search (≈ 30–50 family members, ≈ 0.1 s each) and, per accepted model,
a zonal-series extent of each line and its stored energy; the attraction zone (≈ 0.7 s a
model) is computed for the models at an extreme of some line or of the energy. Cached per
data sheet and thresholds within a process.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from functools import lru_cache

import numpy as np

from fringe.model.magnet import DataSheet, Magnet
from fringe.physics.attraction import attraction_extents_m
from fringe.physics.energy import stored_energy_J
from fringe.physics.fit import family_member, series_extents_m
from fringe.physics.fit_spread import spread_models

__all__ = ["FitSpread", "magnet_fit_spread", "outermost_magnet", "largest_energy_magnet"]


@dataclass(frozen=True)
class FitSpread:
    """The spread of a data-sheet magnet's figures over the models that meet its numbers.

    Attributes
    ----------
    models : int
        How many models (family members) meet the data sheet within its rounding.
    families : tuple of str
        Their families.
    boundaries : tuple of (threshold_mT, (axial_min_m, axial_max_m), (radial_min_m,
        radial_max_m))
        Per plan threshold, ascending.
    attraction_axial_m, attraction_radial_m : (float, float)
        Range of the attraction zone's extents, m.
    stored_energy_J : (float, float)
        Range of the stored energy, J.
    rounding : dict
        The rounding taken (centre field, T; each line's extents, m).
    outermost_threshold_mT : float
        The line whose reach chose the outermost model.
    within_rounding : bool
        False when not even the best fit meets the data sheet within its rounding (the
        spread is then that one model).
    """

    models: int
    families: tuple[str, ...]
    boundaries: tuple[tuple[float, tuple[float, float], tuple[float, float]], ...]
    attraction_axial_m: tuple[float, float]
    attraction_radial_m: tuple[float, float]
    stored_energy_J: tuple[float, float]
    rounding: dict
    outermost_threshold_mT: float
    within_rounding: bool = True

    def to_dict(self) -> dict:
        """``magnets[].fit_spread`` of summary.json (docs/outputs.md)."""
        def rng(pair, nd=5):
            return [float(f"{v:.{nd}g}") for v in pair]

        return {
            "models": self.models, "families": list(self.families),
            "within_rounding": self.within_rounding, "rounding": self.rounding,
            "boundaries": [{"threshold_mT": t, "axial_extent_m": rng(a),
                            "radial_extent_m": rng(r)} for t, a, r in self.boundaries],
            "attraction_axial_extent_m": rng(self.attraction_axial_m),
            "attraction_radial_extent_m": rng(self.attraction_radial_m),
            "stored_energy_J": rng(self.stored_energy_J),
            "drawn_model": f"outermost {self.outermost_threshold_mT:g} mT line",
        }


def _range(vals) -> tuple[float, float]:
    v = np.asarray(vals, dtype=float)
    return float(np.min(v)), float(np.max(v))


@lru_cache(maxsize=16)
def _figures(sheet: DataSheet, thresholds_mT: tuple[float, ...]):
    """(models, extents (M, T, 2), energies (M,), attraction (M, 2) with NaN where not
    computed, index of the outermost model, index of the largest-energy model)."""
    models = spread_models(sheet)
    thr_T = [t * 1e-3 for t in thresholds_mT]
    ext = np.array([series_extents_m(m.magnet, thr_T) for m in models])
    energy = np.array([stored_energy_J(m.magnet) for m in models])
    extreme = {int(np.argmax(energy)), int(np.argmin(energy)), 0}
    for k in range(ext.shape[1]):
        for d in range(2):
            extreme |= {int(np.argmax(ext[:, k, d])), int(np.argmin(ext[:, k, d]))}
    att = np.full((len(models), 2), np.nan)
    for i in sorted(extreme):
        att[i] = attraction_extents_m(models[i].magnet)
    low = int(np.argmin(thr_T))
    outer = int(np.argmax(ext[:, low, 0] * ext[:, low, 1]))
    return models, ext, energy, att, outer, int(np.argmax(energy))


def magnet_fit_spread(magnet: Magnet, thresholds_mT) -> FitSpread | None:
    """The spread of ``magnet``'s figures (None for a magnet not fitted to a data sheet).

    Parameters
    ----------
    magnet : Magnet
        With ``datasheet`` set (a ``[magnet.datasheet]`` magnet).
    thresholds_mT : sequence of float
        The plan's lines, mT.
    """
    sheet = magnet.datasheet
    if sheet is None:
        return None
    thr = tuple(sorted(float(t) for t in thresholds_mT))
    models, ext, energy, att, _outer, _emax = _figures(sheet, thr)
    finite = att[np.all(np.isfinite(att), axis=1)]
    rounding = {"center_field_T": sheet.center_field_tol_T,
                "lines": [{"threshold_mT": ln[0] * 1e3, "axial_m": tol[0], "radial_m": tol[1]}
                          for ln, tol in zip(sheet.lines, sheet.tolerances_m, strict=True)]}
    return FitSpread(
        len(models), tuple(dict.fromkeys(m.family for m in models)),
        tuple((t, _range(ext[:, k, 0]), _range(ext[:, k, 1])) for k, t in enumerate(thr)),
        _range(finite[:, 0]), _range(finite[:, 1]), _range(energy), rounding, min(thr),
        bool(models[0].worst <= 1.0))


def _placed(magnet: Magnet, index: int, thresholds_mT) -> Magnet:
    """``magnet`` with the coils of spread model ``index`` (whole turns), same place."""
    sheet = magnet.datasheet
    models = spread_models(sheet)
    m = models[index]
    coils = family_member(m.family, m.parameters, m.center_field_T, m.a_min_m).coils
    try:
        return Magnet(magnet.name, magnet.center_m, magnet.axis, coils, magnet.description,
                      magnet.origin, magnet.cryostat, datasheet=sheet)
    except ValueError:  # a given cryostat too small for these windings: the default one
        return Magnet(magnet.name, magnet.center_m, magnet.axis, coils, magnet.description,
                      magnet.origin, None, datasheet=sheet)


def outermost_magnet(magnet: Magnet, thresholds_mT) -> Magnet:
    """The model of the spread whose lowest plan line reaches farthest, placed like
    ``magnet`` (``magnet`` itself when it has no data sheet)."""
    if magnet.datasheet is None:
        return magnet
    thr = tuple(sorted(float(t) for t in thresholds_mT))
    outer = _figures(magnet.datasheet, thr)[4]
    return magnet if outer == 0 else _placed(magnet, outer, thr)


def largest_energy_magnet(magnet: Magnet) -> Magnet:
    """The model of the spread with the largest stored energy, placed like ``magnet``
    (``magnet`` itself when it has no data sheet)."""
    if magnet.datasheet is None:
        return magnet
    models = spread_models(magnet.datasheet)
    energy = [stored_energy_J(m.magnet) for m in models]
    k = int(np.argmax(energy))
    return magnet if k == 0 or math.isclose(energy[k], energy[0]) else _placed(magnet, k, ())
