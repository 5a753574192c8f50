"""Equivalent-coil fit: a magnet model from data-sheet numbers.

Given the centre field, whether the magnet is actively shielded, optionally the warm
bore, and the axial and radial extents of one or more field lines (e.g. the 0.5 mT
line), :func:`fit_magnet` finds a member of a generic family (:mod:`fringe.physics.families`)
whose stray field reproduces those extents. The result is an *equivalent model*: its
coils are not the supplier's, only its field outside the cryostat is meant to match.

Method
------
* The family member has exactly the requested centre field by construction (the coil
  ampere-turns solve a linear system in b₀; :mod:`fringe.physics.families`), so only the shape
  parameters are fitted.
* Shielded families: p = (h/a, shield radius / main outer radius, residual dipole
  fraction ε). Unshielded: p = (a / a_min, h/a). a_min is the smallest winding radius the
  warm bore allows (bore/2 + cryostat allowance).
* Residuals: relative extent errors (model/requested − 1), both directions of every line,
  plus a 1e-3-weighted pull towards the family's nominal shape so an under-determined
  request (one line, three parameters) has a unique answer.
  ``scipy.optimize.least_squares`` (trust-region reflective, bounded) from a few starts.
* Extents come from the exterior zonal series (exact beyond the enclosing sphere;
  :func:`fringe.field.extents.extents_from_moments`), falling back to the direct field
  (:func:`fringe.field.extents.threshold_extents_m`) when a line lies closer than
  ``SERIES_SAFE_FACTOR × R_enc``. The final model is re-checked with the direct route.

Consistency warnings (:class:`fringe.model.errors.FringeWarning`, and listed in
``FitResult.warnings``): axial/radial ratios outside what the family can produce (a pure
dipole gives 2^{1/3} ≈ 1.26; an unshielded solenoid is dipole-dominated and stays close
to it; a shielded magnet cancels its dipole, its field lines are carried by the l = 3, 5
moments whose interference makes them longer along the axis than across), extents that
grow with the threshold, a threshold above the centre field, and any extent the best fit
misses by more than 2 %.

References
----------
Jackson, *Classical Electrodynamics*, 3rd ed., Sec. 5.6 (dipole field), 5.12 (zonal
multipoles). Branch, Coleman & Li, SIAM J. Sci. Comput. 21, 1 (1999) (the trust-region
reflective method of ``least_squares``).
"""

from __future__ import annotations

import math
import warnings
from dataclasses import dataclass, field

import numpy as np
from scipy.optimize import least_squares

from fringe.field.extents import extents_from_moments, threshold_extents_m
from fringe.field.multipole import interior_coefficients_T, zonal_moments_Am
from fringe.model.errors import FringeInputError, FringeWarning, must_be
from fringe.model.magnet import Magnet
from fringe.physics.families import (
    FAMILIES,
    FIT_FAMILIES,
    main_thickness_estimate_m,
    shielded_whole_body,
    unshielded_whole_body,
    vertical_lab_magnet,
)

__all__ = ["FieldLine", "FitResult", "fit_magnet", "check_request", "minimum_dipole_moment_Am2",
           "family_choice_note", "family_member", "series_extents_m",
           "EXTENT_TOLERANCE", "DIPOLE_RATIO", "LAB_BORE_LIMIT_M", "MAX_CENTER_FIELD_T"]

#: Relative extent error above which the fit is reported as not reproducing the request.
EXTENT_TOLERANCE: float = 0.02

#: Axial/radial extent ratio of a pure dipole, 2^{1/3} (Jackson Eq. 5.56).
DIPOLE_RATIO: float = 2.0 ** (1.0 / 3.0)

#: Warm bores below this (m) select the vertical lab-magnet family.
LAB_BORE_LIMIT_M: float = 0.3

_PRIOR_WEIGHT = 1e-3
#: A start whose worst extent error is below this ends the multi-start search.
_GOOD_ENOUGH = 0.25 * EXTENT_TOLERANCE
#: Zonal degree and safe-radius factor of the series route inside the fit: truncation
#: ~ l·(1/1.5)^30 ≈ 1.5e-4 of the loop-moment scale (geometric tail); the final model is
#: re-checked with :func:`threshold_extents_m` (l ≤ 40, factor 1.4, direct within).
_L_MAX = 30
_SERIES_FACTOR = 1.5


#: Largest centre field accepted for a data-sheet fit, T. Beyond ~45 T (hybrid
#: resistive-superconducting records) no magnet family modelled here exists; common
#: practice, no source.
MAX_CENTER_FIELD_T: float = 50.0

@dataclass(frozen=True)
class FieldLine:
    """One data-sheet field line: level in T and its extents in m."""

    threshold_T: float
    axial_m: float
    radial_m: float

    @property
    def ratio(self) -> float:
        """Axial/radial extent ratio."""
        return self.axial_m / self.radial_m


@dataclass(frozen=True)
class FitResult:
    """Outcome of :func:`fit_magnet`.

    Attributes
    ----------
    magnet : Magnet
        The fitted equivalent magnet (centre at the origin, axis +z, whole turns).
    family : str
        One of :data:`fringe.physics.families.FIT_FAMILIES`.
    parameters : dict
        The family's shape parameters at the optimum (SI units in the names).
    requested, achieved : tuple of FieldLine
        The data-sheet lines and the fitted model's lines (direct-field extents).
    residuals : tuple of (float, float)
        Relative (axial, radial) extent errors per line, achieved/requested − 1.
    center_field_T : float
        Centre field of the fitted model, T.
    moments_Am : ndarray
        Exterior zonal moments q_0..q_7 (A·m^(l+1)); q_1 is the dipole moment in A·m².
    warnings : tuple of str
        Consistency warnings (also issued as :class:`FringeWarning`).
    notes : tuple of str
        Plain notes, not warnings: e.g. which family was chosen because no warm bore was
        given (:func:`family_choice_note`). Not issued as warnings; callers print them.
    a_min_m : float
        Smallest winding radius of the family member, m.
    """

    magnet: Magnet
    family: str
    parameters: dict
    requested: tuple[FieldLine, ...]
    achieved: tuple[FieldLine, ...]
    residuals: tuple[tuple[float, float], ...]
    center_field_T: float
    moments_Am: np.ndarray = field(repr=False)
    warnings: tuple[str, ...] = ()
    notes: tuple[str, ...] = ()
    #: Smallest winding radius the family member was built with, m (warm bore / 2 +
    #: the family's cryostat allowance).
    a_min_m: float = float("nan")

    @property
    def max_residual(self) -> float:
        """Largest absolute relative extent error."""
        return max(max(abs(a), abs(r)) for a, r in self.residuals)

    @property
    def reproduces(self) -> bool:
        """True when every extent is within :data:`EXTENT_TOLERANCE`."""
        return self.max_residual <= EXTENT_TOLERANCE


@dataclass(frozen=True)
class _Spec:
    """A fit family: bounds, nominal start and builder of parameter vectors."""

    name: str
    lower: np.ndarray
    upper: np.ndarray
    nominal: np.ndarray
    names: tuple[str, ...]


def _family_spec(family: str) -> _Spec:
    f = FAMILIES.get(family) if isinstance(family, str) else None
    if f is None or f.fit is None:
        raise FringeInputError(must_be("family", f"one of {', '.join(FIT_FAMILIES)}", family))
    return _Spec(family, np.array(f.fit.lower), np.array(f.fit.upper),
                 np.array(f.fit.nominal), f.fit.parameters)


def _build(family: str, p: np.ndarray, center_field_T: float, a_min_m: float,
           whole_turns: bool) -> Magnet:
    """Family member for parameter vector ``p`` (see :func:`_family_spec`)."""
    lab = FAMILIES[family].lab
    if FAMILIES[family].shielded:
        a = a_min_m
        h = p[0] * a
        t = main_thickness_estimate_m(center_field_T, a, h, lab=lab)
        rs = p[1] * (a + t)
        if lab:
            return vertical_lab_magnet(center_field_T, a, h, True, rs, p[2],
                                       whole_turns=whole_turns)
        return shielded_whole_body(center_field_T, a, h, rs, p[2], whole_turns=whole_turns)
    a = p[0] * a_min_m
    h = p[1] * a
    if lab:
        return vertical_lab_magnet(center_field_T, a, h, False, whole_turns=whole_turns)
    return unshielded_whole_body(center_field_T, a, h, whole_turns=whole_turns)


def _model_extents(magnet: Magnet, thresholds_T) -> np.ndarray:
    """(n_lines, 2) axial and radial extents in m, series route with direct fallback."""
    q = zonal_moments_Am(magnet, _L_MAX)
    r_min = _SERIES_FACTOR * magnet.enclosing_radius_m
    out = np.empty((len(thresholds_T), 2))
    for i, thr in enumerate(thresholds_T):
        ax, rad = extents_from_moments(q, thr, r_min)
        if math.isnan(ax) or math.isnan(rad):  # the series showed |B| < thr beyond r_min
            try:
                ax2, rad2 = threshold_extents_m(magnet, thr, start_m=r_min)
            except FringeInputError:  # direct |B| ≥ thr at r_min (series truncation): full scan
                ax2, rad2 = threshold_extents_m(magnet, thr)
            ax = ax2 if math.isnan(ax) else ax
            rad = rad2 if math.isnan(rad) else rad
        out[i] = ax, rad
    return out


def family_member(family: str, parameters, center_field_T: float, a_min_m: float, *,
                  whole_turns: bool = True) -> Magnet:
    """The member of fit family ``family`` with shape ``parameters`` (the family's
    ``FitShape.parameters`` order), centre field ``center_field_T`` (T) and smallest winding
    radius ``a_min_m`` (m); centre at the origin, axis +z."""
    _family_spec(family)
    return _build(family, np.asarray(parameters, dtype=float), float(center_field_T),
                  float(a_min_m), whole_turns)


def series_extents_m(magnet: Magnet, thresholds_T) -> np.ndarray:
    """(n, 2) axial and radial extents in m of the lines ``thresholds_T`` (T), by the
    exterior zonal series with the direct field as fallback (the fit's own route; see
    the module notes)."""
    return _model_extents(magnet, list(thresholds_T))


def minimum_dipole_moment_Am2(center_field_T: float, winding_radius_m: float) -> float:
    """Smallest dipole moment in A·m² of same-sign windings beyond a radius giving B₀.

    A loop of radius a at height z₀ (R₀² = a² + z₀²) gives B₀ = μ₀Ia²/(2R₀³) at the
    centre and moment m = Iπa² (Jackson Eq. 5.57, on-axis loop field Sec. 5.5), so
    m/B₀ = 2πR₀³/μ₀ ≥ 2πa_min³/μ₀ for every loop of the winding; summing same-sign loops,
    m ≥ 2π B₀ a_min³/μ₀. Holds for every unshielded magnet (all currents one way).
    """
    from fringe.model.constants import MU0_T_M_PER_A
    return 2 * math.pi * center_field_T * winding_radius_m**3 / MU0_T_M_PER_A


def check_request(center_field_T: float, lines: tuple[FieldLine, ...],
                  shielded: bool, min_winding_radius_m: float | None = None) -> list[str]:
    """Consistency checks on the data-sheet numbers alone; a list of warning texts.

    ``min_winding_radius_m`` (the smallest winding radius the warm bore allows) adds the
    unshielded dipole bound: the radial extent of a line at level B_t is at least about
    (μ₀ m_min / (4π B_t))^{1/3} (dipole field in the centre plane, Jackson Eq. 5.56;
    10 % margin for the l = 3 term), with m_min from :func:`minimum_dipole_moment_Am2`.
    """
    out = []
    for ln in lines:
        if not shielded and min_winding_radius_m is not None:
            m_min = minimum_dipole_moment_Am2(center_field_T, min_winding_radius_m)
            r_min = (1e-7 * m_min / ln.threshold_T) ** (1 / 3)  # μ0/4π = 1e-7 T·m/A
            if ln.radial_m < 0.9 * r_min:
                out.append(f"the {ln.threshold_T * 1e3:g} mT line: radial extent "
                           f"{ln.radial_m:g} m is below the ≈{r_min:.3g} m that any unshielded "
                           f"magnet of {center_field_T:g} T with windings at ≥ "
                           f"{min_winding_radius_m:.3g} m radius reaches (its dipole moment is "
                           f"at least 2πB₀a³/μ₀ = {m_min:.3g} A·m²); is the magnet shielded?")
        tag = f"the {ln.threshold_T * 1e3:g} mT line"
        if ln.threshold_T >= center_field_T:
            out.append(f"{tag}: its level is not below the centre field "
                       f"{center_field_T:g} T; a data-sheet line must be weaker than the centre")
        r = ln.ratio
        if r < 1.0:
            out.append(f"{tag}: axial/radial ratio {r:.3f} < 1; no solenoid-type (axisymmetric "
                       f"bore) magnet has a line shorter along its axis than across it "
                       f"(a pure dipole gives 2^(1/3) = {DIPOLE_RATIO:.3f})")
        elif not shielded and not (0.97 * DIPOLE_RATIO <= r <= 1.45):
            out.append(f"{tag}: axial/radial ratio {r:.3f} is implausible for an unshielded "
                       f"magnet, whose far field is nearly a dipole (ratio 2^(1/3) = "
                       f"{DIPOLE_RATIO:.3f}); check the numbers and the shielding type")
        elif shielded and not (1.12 <= r <= 2.3):
            out.append(f"{tag}: axial/radial ratio {r:.3f} is outside the range an actively "
                       f"shielded magnet produces (about 1.12 to 2.3: the dipole is cancelled "
                       f"and the l = 3, 5 moments interfere, adding along the axis and "
                       f"cancelling across it); check the numbers and the shielding type")
    srt = sorted(lines, key=lambda ln: ln.threshold_T)
    for lo, hi in zip(srt, srt[1:], strict=False):
        if hi.axial_m > lo.axial_m or hi.radial_m > lo.radial_m:
            out.append(f"the {hi.threshold_T * 1e3:g} mT line reaches farther than the "
                       f"{lo.threshold_T * 1e3:g} mT line; a stronger field line must lie "
                       "inside a weaker one")
    return out


def _fit_family(family: str, center_field_T: float, a_min_m: float,
                lines: tuple[FieldLine, ...]):
    spec = _family_spec(family)
    thr = [ln.threshold_T for ln in lines]
    target = np.array([[ln.axial_m, ln.radial_m] for ln in lines])
    span = spec.upper - spec.lower

    def resid(p):
        try:
            m = _build(family, p, center_field_T, a_min_m, whole_turns=False)
            ext = _model_extents(m, thr)
        except (FringeInputError, np.linalg.LinAlgError, ValueError):
            ext = np.full_like(target, 1e3)
        r = (ext / target - 1.0).ravel()
        return np.concatenate([r, _PRIOR_WEIGHT * (p - spec.nominal) / span])

    starts = [spec.nominal]
    rng = np.random.default_rng(20261202)  # fixed seed: reproducible multi-start
    starts += [spec.lower + span * rng.uniform(0.1, 0.9, span.size) for _ in range(2)]
    best = None
    for x0 in starts:
        sol = least_squares(resid, x0, bounds=(spec.lower, spec.upper), diff_step=1e-4,
                            x_scale=span, xtol=1e-8, ftol=1e-8, max_nfev=60)
        if best is None or sol.cost < best.cost:
            best = sol
        if np.max(np.abs(best.fun[:2 * len(lines)])) < _GOOD_ENOUGH:
            break
    return spec, best


def _a_min(family: str, bore_m: float | None) -> float:
    f = FAMILIES[family]
    bore = bore_m if bore_m is not None else f.warm_bore_m
    return bore / 2 + f.cryostat_allowance_m


def family_choice_note(family: str, tried: tuple[str, ...], bore_key: str = "bore_m") -> str:
    """Note saying which family a fit without a warm bore chose, why, and how to choose.

    Parameters
    ----------
    family : str
        The family the fit kept.
    tried : tuple of str
        The families tried, in order.
    bore_key : str
        Name of the warm-bore input to mention (the Python parameter by default; a caller
        replaces it with its own name, e.g. a scenario key).
    """
    f = FAMILIES[family]
    def label_of(n: str) -> str:
        return n.replace("_body", "-body").replace("_", " ")

    label = label_of(family)
    size = (f"a small-bore lab magnet, {f.warm_bore_m * 1e3:g} mm warm bore assumed"
            if f.lab else f"a whole-body magnet, {f.warm_bore_m:g} m warm bore assumed")
    if len(tried) > 1 and family != tried[0]:
        why = (f"the {label_of(tried[0])} family (tried first) could not reproduce "
               "the lines as well")
    elif len(tried) > 1:
        why = "it is tried first and reproduced the lines"
    else:
        why = "it is the only candidate"
    return (f"no warm bore given (`{bore_key}`): the fit chose the {label} family ({size}) "
            f"because {why}; give `{bore_key}` to choose the family yourself (below "
            f"{LAB_BORE_LIMIT_M:g} m: lab magnet; otherwise whole-body)")


def _candidates(shielded: bool, bore_m: float | None, family: str | None) -> list[str]:
    """Families to try, in order: the forced one, or by shielding and bore (without a
    bore: whole-body before lab, as FIT_FAMILIES lists them)."""
    if family is not None:
        _family_spec(family)
        return [family]
    kinds = [n for n in FIT_FAMILIES if FAMILIES[n].shielded == bool(shielded)]
    if bore_m is None:
        return kinds
    return [n for n in kinds if FAMILIES[n].lab == (bore_m < LAB_BORE_LIMIT_M)]


def fit_magnet(center_field_T: float, lines, *, shielded: bool = True,
               bore_m: float | None = None, family: str | None = None,
               name: str = "fitted magnet") -> FitResult:
    """Fit a generic-family magnet to data-sheet numbers.

    Parameters
    ----------
    center_field_T : float
        Field at the isocentre, T.
    lines : sequence of FieldLine or (threshold_T, axial_m, radial_m)
        Data-sheet field lines: level in T, largest distance from the centre along the
        axis and across it in the centre plane, m.
    shielded : bool
        Actively shielded (default) or not.
    bore_m : float, optional
        Warm bore diameter, m. Below :data:`LAB_BORE_LIMIT_M` the vertical lab-magnet
        family is used, otherwise the whole-body one. When omitted both are tried and the
        better fit kept (whole-body assumes a 0.6 m warm bore, lab a 54 mm one); the
        result's ``notes`` then say which family was chosen and why.
    family : str, optional
        Force one of :data:`fringe.physics.families.FIT_FAMILIES`.
    name : str
        Name of the fitted magnet.

    Returns
    -------
    FitResult
        The fitted magnet (exact centre field; whole turns, one shared current), its
        extents (direct-field route), relative residuals and consistency warnings.

    References
    ----------
    See the module notes.
    """
    b0 = float(center_field_T)
    if not (math.isfinite(b0) and b0 > 0):
        raise FringeInputError(must_be("center_field_T", "a positive number of tesla",
                                       center_field_T))
    lines_t = _parse_lines(lines)
    if bore_m is not None and not (math.isfinite(bore_m) and bore_m > 0):
        raise FringeInputError(must_be("bore_m", "a positive number of metres", bore_m))
    candidates = _candidates(shielded, bore_m, family)
    (fam, a_min, sol, spec), tried = _best_family_fit(candidates, b0, bore_m, lines_t)
    magnet = _build(fam, sol.x, b0, a_min, whole_turns=True)
    magnet = Magnet(name, magnet.center_m, magnet.axis, magnet.coils,
                    "equivalent model fitted to data-sheet numbers", "fit")
    achieved, residuals = [], []
    for ln in lines_t:
        ax, rad = threshold_extents_m(magnet, ln.threshold_T)
        achieved.append(FieldLine(ln.threshold_T, ax, rad))
        residuals.append((ax / ln.axial_m - 1.0, rad / ln.radial_m - 1.0))
    warn = _fit_warnings(b0, lines_t, shielded, a_min, fam, residuals)
    for w in warn:
        warnings.warn(w, FringeWarning, stacklevel=2)
    params = dict(zip(spec.names, (float(v) for v in sol.x), strict=True))
    params["main_radius_m"] = float(min(c.r_inner_m for c in magnet.coils))
    return FitResult(magnet, fam, params, lines_t, tuple(achieved), tuple(residuals),
                     float(interior_coefficients_T(magnet, 0)[0]),
                     zonal_moments_Am(magnet, 7), tuple(warn),
                     (family_choice_note(fam, tried),) if family is None and bore_m is None
                     else (), a_min)


def _parse_lines(lines) -> tuple[FieldLine, ...]:
    """The data-sheet field lines as FieldLine, each number checked positive."""
    parsed = []
    for i, ln in enumerate(lines):
        fl = ln if isinstance(ln, FieldLine) else FieldLine(*(float(v) for v in ln))
        for key, v in (("threshold_T", fl.threshold_T), ("axial_m", fl.axial_m),
                       ("radial_m", fl.radial_m)):
            if not (math.isfinite(v) and v > 0):
                raise FringeInputError(must_be(f"line[{i}].{key}", "a positive number", v))
        parsed.append(fl)
    if not parsed:
        raise FringeInputError(must_be("lines", "at least one field line", []))
    return tuple(parsed)


def _best_family_fit(candidates, b0: float, bore_m: float | None, lines_t):
    """Fit each candidate family in turn: the best (family, a_min, solution, spec) and the
    families tried, in order."""
    best, tried = None, []
    for fam in candidates:  # without a bore: whole-body first, lab only if that fails
        tried.append(fam)
        a_min = _a_min(fam, bore_m)
        spec, sol = _fit_family(fam, b0, a_min, lines_t)
        if best is None or sol.cost < best[2].cost:
            best = (fam, a_min, sol, spec)
        if np.max(np.abs(best[2].fun[:2 * len(lines_t)])) < _GOOD_ENOUGH:
            break
    return best, tuple(tried)


def _fit_warnings(b0: float, lines_t, shielded: bool, a_min: float, fam: str,
                  residuals) -> list[str]:
    """Consistency warnings of a fit: request checks, implausible field, missed extents."""
    warn = check_request(b0, lines_t, shielded, a_min)
    lo, hi = FAMILIES[fam].field_range_T or (0.0, math.inf)
    if not lo <= b0 <= hi:
        warn.append(f"a centre field of {b0:g} T is implausible for the "
                    f"{fam.replace('_', ' ')} family (built for about {lo:g} to {hi:g} T); "
                    "check the data-sheet value and its unit")
    worst = max(max(abs(a), abs(r)) for a, r in residuals)
    if worst > EXTENT_TOLERANCE:
        warn.append(f"the best {fam.replace('_', ' ')} model misses a requested extent by "
                    f"{worst * 100:.1f} % (> {EXTENT_TOLERANCE * 100:g} %): the numbers are "
                    "inconsistent with each other or with this kind of magnet; the model is "
                    "only indicative")
    return warn
