"""The spread of a data-sheet fit: the family members that meet the same numbers.

A magnet fitted to one field line is right on that line and can be far off elsewhere:
the line fixes about two numbers of the far field, the families have three or four
(shape parameters and the centre field). :func:`spread_models` looks for the members of
the fitted family (and, when the data sheet gives no warm bore, of the other family of
the same shielding) whose extents meet every data-sheet number within the data sheet's
rounding (half a unit of its last digit; :class:`fringe.model.magnet.DataSheet`).

Method
------
Variables: the family's shape parameters and the centre field, each scaled to [0, 1]
over its bounds (the family's ``FitShape`` bounds; the centre field ± its rounding).
Residuals: (model extent − data-sheet extent) / rounding, for both extents of every line;
a member is accepted when every residual is within ±1.

1. The Jacobian J of the residuals at the fit (forward differences) and its singular
   value decomposition J = U S Vᵀ give the directions of parameter space: those with a
   small singular value (< :data:`FREE_SINGULAR_VALUE`) barely change the data-sheet
   extents (the numbers do not fix them), the others do.
2. Along each free direction, both ways, the search steps out from the last accepted
   member (:data:`FREE_STEP` scaled units, at most :data:`FREE_STEPS_MAX` steps) and
   corrects each step back onto the data sheet with the pseudo-inverse of J (at most two
   Gauss–Newton steps); it stops at the first member it cannot bring within the
   rounding, or at a bound.
3. Along each constrained direction, both ways, it tries the step the linearisation
   predicts to reach 90 % of the rounding, halved once if that member falls outside.

This samples the edges of the accepted set along its principal directions, not its
every corner: a bounded cost (about 30 to 50 family members, each a linear solve and a
zonal series, ≈ 0.1 s) rather than a proof of the extremes. The result is cached per
data sheet within a process.

References
----------
Golub & Van Loan, *Matrix Computations*, 4th ed. (2013), Sec. 2.4 (SVD) and 5.5
(pseudo-inverse, minimum-norm least squares); Nocedal & Wright, *Numerical
Optimization*, 2nd ed. (2006), Sec. 10.3 (Gauss–Newton step).
"""

from __future__ import annotations

import math
import warnings
from dataclasses import dataclass
from functools import lru_cache

import numpy as np

from fringe.model.errors import FringeInputError, FringeWarning
from fringe.model.magnet import DataSheet, Magnet
from fringe.physics.families import FAMILIES, FIT_FAMILIES
from fringe.physics.fit import (
    LAB_BORE_LIMIT_M,
    family_member,
    fit_magnet,
    series_extents_m,
)

__all__ = ["SpreadModel", "spread_models", "FREE_SINGULAR_VALUE", "FREE_STEP",
           "FREE_STEPS_MAX"]

#: A direction whose singular value (residual change, in roundings, per full parameter
#: range) is below this is free: the data sheet barely fixes it.
FREE_SINGULAR_VALUE: float = 0.5
#: Step along a free direction, in scaled units (fraction of each parameter's range),
#: and the most steps taken each way.
FREE_STEP: float = 0.1
FREE_STEPS_MAX: int = 8
_FD_STEP = 1e-3


@dataclass(frozen=True)
class SpreadModel:
    """One family member that meets the data sheet within its rounding.

    Attributes
    ----------
    magnet : Magnet
        At the origin, axis +z (fractional turns: an equivalent model).
    family : str
    parameters : tuple of float
        Its shape parameters.
    center_field_T : float
    worst : float
        Its largest |extent error| in units of the rounding (≤ 1).
    a_min_m : float
        Its smallest winding radius, m (rebuild it with
        ``family_member(family, parameters, center_field_T, a_min_m)``).
    """

    magnet: Magnet
    family: str
    parameters: tuple[float, ...]
    center_field_T: float
    worst: float
    a_min_m: float


class _Problem:
    """Residuals of one family in scaled variables z ∈ [0, 1]^n."""

    def __init__(self, sheet: DataSheet, family: str, a_min_m: float):
        shape = FAMILIES[family].fit
        b0, tb = sheet.center_field_T, sheet.center_field_tol_T
        self.family, self.a_min_m = family, a_min_m
        self.lower = np.array([*shape.lower, b0 - tb])
        self.upper = np.array([*shape.upper, b0 + tb])
        self.span = np.where(self.upper > self.lower, self.upper - self.lower, 1.0)
        self.thr = [ln[0] for ln in sheet.lines]
        self.target = np.array([[ln[1], ln[2]] for ln in sheet.lines]).ravel()
        self.tol = np.maximum(np.array(sheet.tolerances_m, dtype=float).ravel(), 1e-9)
        self.found: list[SpreadModel] = []

    def x(self, z: np.ndarray) -> np.ndarray:
        return self.lower + np.clip(z, 0.0, 1.0) * (self.upper - self.lower)

    def z(self, x: np.ndarray) -> np.ndarray:
        return np.clip((np.asarray(x) - self.lower) / self.span, 0.0, 1.0)

    def residual(self, z: np.ndarray) -> np.ndarray | None:
        """Extent errors in roundings at z, and the member kept if it is accepted."""
        x = self.x(z)
        try:
            m = family_member(self.family, x[:-1], x[-1], self.a_min_m, whole_turns=False)
            ext = series_extents_m(m, self.thr).ravel()
        except (FringeInputError, np.linalg.LinAlgError, ValueError):
            return None
        if not np.all(np.isfinite(ext)):
            return None
        r = (ext - self.target) / self.tol
        worst = float(np.max(np.abs(r)))
        if worst <= 1.0:
            self.found.append(SpreadModel(m, self.family, tuple(float(v) for v in x[:-1]),
                                          float(x[-1]), worst, self.a_min_m))
        return r


def _walk(prob: _Problem, z0: np.ndarray) -> None:
    """Sample the accepted members around z0 along the principal directions."""
    r0 = prob.residual(z0)
    keep = len(prob.found)
    if r0 is None:
        return
    n = z0.size
    jac = np.empty((r0.size, n))
    for j in range(n):
        h = _FD_STEP if z0[j] + _FD_STEP <= 1.0 else -_FD_STEP
        zj = z0.copy()
        zj[j] += h
        rj = prob.residual(zj)
        if rj is None:
            return
        jac[:, j] = (rj - r0) / h
    del prob.found[keep:]  # the difference steps are not samples
    _u, s, vt = np.linalg.svd(jac, full_matrices=True)
    sv = np.zeros(n)
    sv[:s.size] = s
    pinv = np.linalg.pinv(jac)
    for j in range(n):
        for sign in (1.0, -1.0):
            d = sign * vt[j]
            if sv[j] < FREE_SINGULAR_VALUE:
                _free_direction(prob, z0, d, pinv)
            else:
                for t in (0.9 / sv[j], 0.45 / sv[j]):
                    r = prob.residual(np.clip(z0 + t * d, 0.0, 1.0))
                    if r is not None and np.max(np.abs(r)) <= 1.0:
                        break


def _free_direction(prob: _Problem, z0: np.ndarray, d: np.ndarray, pinv: np.ndarray) -> None:
    """Continuation along a free direction: step :data:`FREE_STEP` from the last accepted
    member, correct back onto the sheet (at most two Gauss–Newton steps with J at the
    fit), stop after :data:`FREE_STEPS_MAX` steps, at a bound, or off the sheet."""
    base = z0
    for _ in range(FREE_STEPS_MAX):
        z = np.clip(base + FREE_STEP * d, 0.0, 1.0)
        if np.allclose(z, base, atol=1e-6):
            return  # pinned at a bound
        accepted = None
        for _k in range(2):
            r = prob.residual(z)
            if r is None:
                return
            if np.max(np.abs(r)) <= 1.0:
                accepted = z
                break
            z = np.clip(z - pinv @ r, 0.0, 1.0)
        if accepted is None:
            r = prob.residual(z)
            if r is None or np.max(np.abs(r)) > 1.0:
                return
            accepted = z
        base = accepted


def _families(sheet: DataSheet) -> list[str]:
    """The fitted family first, then (no warm bore given) the other size of the same
    shielding."""
    out = [sheet.family]
    if sheet.bore_m is None:
        out += [f for f in FIT_FAMILIES if FAMILIES[f].shielded == sheet.shielded
                and f != sheet.family]
    return out


def _start(sheet: DataSheet, family: str) -> tuple[np.ndarray, float] | None:
    """(parameters, a_min_m) of the best fit of ``family`` to the sheet."""
    if family == sheet.family:
        return np.array(sheet.parameters), sheet.a_min_m
    bore = sheet.bore_m
    if bore is None and FAMILIES[family].lab:
        bore = FAMILIES[family].warm_bore_m
    if bore is not None and (bore < LAB_BORE_LIMIT_M) != FAMILIES[family].lab:
        return None
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", FringeWarning)
        res = fit_magnet(sheet.center_field_T, sheet.lines, shielded=sheet.shielded,
                         bore_m=sheet.bore_m, family=family)
    shape = FAMILIES[family].fit
    return np.array([res.parameters[k] for k in shape.parameters]), res.a_min_m


@lru_cache(maxsize=16)
def spread_models(sheet: DataSheet) -> tuple[SpreadModel, ...]:
    """Family members that meet ``sheet`` within its rounding (see the module notes).

    Parameters
    ----------
    sheet : DataSheet
        The data-sheet numbers, their rounding and the best fit.

    Returns
    -------
    tuple of SpreadModel
        The best fit first (kept even when it misses the rounding: then it is the only
        model and its ``worst`` is > 1), then every accepted member found, without
        repeats.
    """
    found: list[SpreadModel] = []
    for fam in _families(sheet):
        start = _start(sheet, fam)
        if start is None:
            continue
        params, a_min = start
        prob = _Problem(sheet, fam, a_min)
        z0 = prob.z(np.append(params, sheet.center_field_T))
        if fam == sheet.family:
            r0 = prob.residual(z0)
            if r0 is not None and not prob.found:  # the fit itself misses the rounding
                x = prob.x(z0)
                found.append(SpreadModel(
                    family_member(fam, x[:-1], x[-1], a_min, whole_turns=False), fam,
                    tuple(float(v) for v in x[:-1]), float(x[-1]),
                    float(np.max(np.abs(r0))), a_min))
            prob.found.clear()
        _walk(prob, z0)
        found += prob.found
    out: list[SpreadModel] = []
    for m in found:
        if not any(m.family == o.family and math.isclose(m.center_field_T, o.center_field_T)
                   and np.allclose(m.parameters, o.parameters, rtol=1e-9, atol=1e-12)
                   for o in out):
            out.append(m)
    return tuple(out)
