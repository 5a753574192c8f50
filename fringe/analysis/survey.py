"""Survey readings against the model: the comparison, and the calibration of magnets.

:func:`survey` compares each reading with the model's |B| at its position (all magnets
of the site through :func:`fringe.field.evaluate.field_at`) and, asked to, calibrates
magnets: per magnet one current scale (all its coils together) and, where the readings
constrain it, an offset of its centre along each site axis, by weighted least squares on
ln |B|, with standard errors from the fit and readings beyond 3 standard deviations
flagged and left out. docs/survey.md gives the method, its assumptions and its limits.

Returns data, writes nothing.
"""

from __future__ import annotations

import math
import warnings
from dataclasses import dataclass, replace

import numpy as np
from scipy.optimize import least_squares

from fringe.field.evaluate import field_at, field_gradient_at, points_in_envelopes
from fringe.field.extents import threshold_extents_m
from fringe.model.errors import ArgumentError, FringeWarning, ScenarioError, must_be
from fringe.model.magnet import Magnet
from fringe.model.readings import Readings
from fringe.model.site import Site, site_plan

__all__ = ["PointComparison", "MagnetCalibration", "CalibratedBoundary", "SurveyResult",
           "survey", "check_positions", "suggested_uncertainty", "FLAG_SIGMAS",
           "VIF_LIMIT", "OFFSET_STD_LIMIT_M", "COVERAGE_FACTOR", "AXES", "EARTH_FIELD_T",
           "NOMINAL_REL_UNCERTAINTY", "BACKGROUND_STD_LIMIT_T", "background_T"]

#: A reading whose residual exceeds this many standard deviations is flagged and left
#: out of the fit (the common 3σ rule; common practice, no source).
FLAG_SIGMAS: float = 3.0
#: An offset axis is fitted only while every parameter's variance inflation factor stays
#: at or below this (the usual rule of thumb for collinearity: Kutner, Nachtsheim, Neter &
#: Li, *Applied Linear Statistical Models*, 5th ed. (2005), Sec. 10.5).
VIF_LIMIT: float = 10.0
#: An offset axis is fitted only if the readings would give it a standard error at or
#: below this, m (common practice, no source: a magnet is set to its marks within a few
#: centimetres, so a centre known worse than 5 cm says nothing).
OFFSET_STD_LIMIT_M: float = 0.05
#: Coverage factor of :func:`suggested_uncertainty` (k = 2, about 95 % for normal
#: residuals: JCGM 100:2008 (GUM), Sec. 6.3).
COVERAGE_FACTOR: float = 2.0
#: A background-field component is fitted only if the readings would give it a standard
#: error at or below this, T (common practice, no source: the Earth's field is 25–65 µT,
#: so a background known worse than 10 µT tells nothing).
BACKGROUND_STD_LIMIT_T: float = 10e-6
#: Size of the Earth's field taken when the scenario gives no background field, T: a
#: typical mid-latitude value (the surface field is 25–65 µT: NOAA/BGS World Magnetic
#: Model 2025).
EARTH_FIELD_T: float = 50e-6
#: Relative uncertainty of a reading without ``uncertainty_mT`` when no reading gives one
#: (common practice, no source: a Hall gaussmeter is good to 1–2 % of reading).
NOMINAL_REL_UNCERTAINTY: float = 0.02
#: Site axes of a centre offset.
AXES: tuple[str, ...] = ("x", "y", "z")
_FLAG_ITERATIONS = 8
#: Bounds of a centre offset (m) and of a background-field component (T) in the fit.
_OFFSET_BOUND_M = 1.0
_BACKGROUND_BOUND_T = 1e-3
#: Magnets whose field is below this fraction of |B| at every reading cannot be fitted.
_MIN_SHARE = 0.01


@dataclass(frozen=True)
class PointComparison:
    """One reading against the model (``model_T`` always the scenario's model).

    ``flag`` is ``"outlier"`` for a reading beyond :data:`FLAG_SIGMAS` (left out of the
    fit), else ``"ok"``; ``model_calibrated_T`` the calibrated model's |B| (NaN without
    calibration); ``sigma_rel`` the relative uncertainty the reading was weighted with.
    """

    label: str
    point_m: tuple[float, float, float]
    measured_T: float
    model_T: float
    ratio: float
    flag: str
    line: int
    model_calibrated_T: float = math.nan
    sigma_rel: float = math.nan


@dataclass(frozen=True)
class MagnetCalibration:
    """The fit of one magnet.

    Attributes
    ----------
    magnet : str
    current_scale, current_scale_std : float
        Factor on every coil current, and its standard error.
    center_offset_m, center_offset_std_m : tuple of (float or None)
        Fitted offset of the centre along site x, y, z and its standard error, m; None on
        an axis the readings do not constrain (not fitted, left at 0).
    rms_log_residual_after : float
        Root mean square of ln(measured/calibrated model) over the readings kept in the
        fit at which this magnet gives the largest part of the field.
    calibrated : Magnet
        The magnet with its currents scaled and its centre moved.
    axis_notes : tuple of str
        Why each axis not fitted was left out.
    """

    magnet: str
    current_scale: float
    current_scale_std: float
    center_offset_m: tuple[float | None, ...]
    center_offset_std_m: tuple[float | None, ...]
    rms_log_residual_after: float
    calibrated: Magnet
    axis_notes: tuple[str, ...] = ()


@dataclass(frozen=True)
class CalibratedBoundary:
    """A threshold line of a calibrated magnet (as summary.json's ``boundaries``)."""

    magnet: str
    threshold_mT: float
    axial_extent_m: float
    radial_extent_m: float


@dataclass(frozen=True)
class SurveyResult:
    """What :func:`survey` returns.

    Attributes
    ----------
    points : tuple of PointComparison
    rms_log_residual : float
        Root mean square of ln(measured/model) over the readings not flagged, against the
        scenario's model, each weighted by 1/σ_i² (:func:`_weights`).
    calibration : tuple of MagnetCalibration
        Empty without calibration.
    boundaries_calibrated : tuple of CalibratedBoundary
    suggested_field_uncertainty : float
        The ``[plan] field_uncertainty`` the residuals support
        (:func:`suggested_uncertainty`).
    calibrated_site : Site or None
        The site with the calibrated magnets (None without calibration).
    readings_file : str
    dof : int
        Readings kept minus parameters fitted (0 without calibration).
    notes : tuple of str
    background_field_uT, background_field_std_uT : tuple of (float or None), or None
        The uniform background field (the Earth's) fitted along site x, y, z and its
        standard error, µT, when the scenario gives none and the readings constrain it
        (None on an axis not fitted; None without calibration or with a given background).
    """

    points: tuple[PointComparison, ...]
    rms_log_residual: float
    calibration: tuple[MagnetCalibration, ...]
    boundaries_calibrated: tuple[CalibratedBoundary, ...]
    suggested_field_uncertainty: float
    calibrated_site: Site | None
    readings_file: str
    dof: int = 0
    notes: tuple[str, ...] = ()
    background_field_uT: tuple[float | None, ...] | None = None
    background_field_std_uT: tuple[float | None, ...] | None = None

    @property
    def n_flagged(self) -> int:
        """Readings flagged as outliers."""
        return sum(p.flag == "outlier" for p in self.points)


def check_positions(site, readings: Readings) -> None:
    """Refuse readings inside a winding or a cryostat envelope (nobody can hold a probe
    there): :class:`ScenarioError` naming the readings file, the line and the magnet."""
    inside = points_in_envelopes(site, readings.points_m)
    if not inside.any():
        return
    i = int(np.flatnonzero(inside)[0])
    mags = [m.name for m in site.magnets if m.in_envelope(readings.points_m[i:i + 1])[0]]
    more = int(inside.sum()) - 1
    raise ScenarioError(
        f"{readings.where(i)}: the position {tuple(float(v) for v in readings.points_m[i])} m "
        f"is inside the windings or cryostat of magnet {mags[0]!r}; a probe cannot be there "
        "(check the position and the scenario's centre_m)"
        + (f"; {more} more reading(s) too" if more else ""), readings.source_file or None)


def suggested_uncertainty(rms_log: float, scale_rel_std: float = 0.0) -> float:
    """The ``[plan] field_uncertainty`` the residuals support.

    ``u = exp(k·sqrt(rms_log² + scale_rel_std²)) − 1`` with k = :data:`COVERAGE_FACTOR`
    (``rms_log``: the rms of ln(measured/model) over the readings not flagged whose
    Earth's-field share is at most the meter's uncertainty, when the scenario gives no
    background field),
    rounded up to 0.01 and at most 0.99: the fraction by which |B| can exceed the model
    for about 95 % of readings like these (the band below, 1 − exp(−k·…), is narrower).

    References
    ----------
    JCGM 100:2008 (GUM), Sec. 6.2–6.3 (expanded uncertainty, coverage factor k = 2).

    >>> suggested_uncertainty(0.02)
    0.05
    """
    s = math.hypot(float(rms_log), float(scale_rel_std))
    if not math.isfinite(s):
        return math.nan
    return min(0.99, math.ceil(round(math.expm1(COVERAGE_FACTOR * s) * 100, 6)) / 100)


# -- the model at the readings ---------------------------------------------------------

class _Model:
    """|B| of the site at the readings as a function of the fitted parameters.

    Parameters: the current scale of each fitted magnet, then the chosen extra
    parameters: centre offsets ``(magnet index, axis)`` (m) in :attr:`offsets` and
    components of a uniform background field (T) in :attr:`background_axes`. Magnets not
    fitted, and the rest of the site's field (``field_at(site) − Σ magnets`` and a
    background the scenario gives), stay fixed.
    """

    def __init__(self, site, readings: Readings, fitted: list[int]) -> None:
        self.site = site
        self.mags = tuple(site.magnets)
        self.p = readings.points_m
        self.fitted = fitted
        self.B_each = [field_at(m, self.p) for m in self.mags]
        self.B_site = field_at(site, self.p) + background_T(site)
        self.fixed = self.B_site - sum(self.B_each[k] for k in fitted)
        self.offsets: list[tuple[int, int]] = []
        self.background_axes: list[int] = []
        self._cache: tuple[bytes, np.ndarray, np.ndarray] | None = None

    def set_extras(self, offsets: list[tuple[int, int]], background_axes: list[int]) -> None:
        """Choose the centre-offset and background parameters (after the scales)."""
        self.offsets = list(offsets)
        self.background_axes = list(background_axes)
        self._cache = None

    @property
    def n_params(self) -> int:
        return len(self.fitted) + len(self.offsets) + len(self.background_axes)

    def start(self) -> np.ndarray:
        return np.concatenate([np.ones(len(self.fitted)),
                               np.zeros(len(self.offsets) + len(self.background_axes))])

    def centre_shift(self, theta: np.ndarray, k: int) -> np.ndarray:
        d = np.zeros(3)
        for j, (kk, a) in enumerate(self.offsets):
            if kk == k:
                d[a] = theta[len(self.fitted) + j]
        return d

    def evaluate(self, theta: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        """ln|B| (N,) and its derivatives (N, n_params) at ``theta``."""
        key = np.asarray(theta, float).tobytes()
        if self._cache is not None and self._cache[0] == key:
            return self._cache[1], self._cache[2]
        B = self.fixed.copy()
        dB = np.zeros((len(self.p), 3, self.n_params))
        for j, k in enumerate(self.fitted):
            m = self.mags[k]
            d = self.centre_shift(theta, k)
            axes = [(c, a) for c, (kk, a) in enumerate(self.offsets) if kk == k]
            if axes:
                moved = m.moved(center_m=np.asarray(m.center_m) + d)
                Bk, Jk = field_gradient_at(moved, self.p)
                for c, a in axes:  # B_k(x − d): ∂/∂d_a = −J[:, :, a]
                    dB[:, :, len(self.fitted) + c] = -theta[j] * Jk[:, :, a]
            else:
                Bk = self.B_each[k]
            B += theta[j] * Bk
            dB[:, :, j] = Bk
        first_bg = len(self.fitted) + len(self.offsets)
        for c, a in enumerate(self.background_axes):
            B[:, a] += theta[first_bg + c]
            dB[:, a, first_bg + c] = 1.0
        b2 = np.einsum("ni,ni->n", B, B)
        log_b = 0.5 * np.log(b2)
        dlog = np.einsum("ni,nij->nj", B, dB) / b2[:, None]
        self._cache = (key, log_b, dlog)
        return log_b, dlog


@dataclass
class _Fit:
    theta: np.ndarray
    cov: np.ndarray
    s: float           # standard deviation of a unit-weight residual
    kept: np.ndarray   # bool (N,)
    dof: int


def background_T(site) -> np.ndarray:
    """The uniform background field of the site (``[site] background_field_uT``) in T,
    shape (3,); zero when the scenario gives none."""
    bg = getattr(site, "background_field_uT", None)
    return np.zeros(3) if bg is None else np.asarray(bg, dtype=float) * 1e-6


def _weights(readings: Readings, background_known: bool) -> np.ndarray:
    """Relative standard uncertainty σ_i of ln|B| per reading.

    The meter's ``u_i/B_i`` where given; the median of the given ones elsewhere, or
    :data:`NOMINAL_REL_UNCERTAINTY` when none is given (the residuals then set the
    absolute size anyway). When the scenario gives no background field, the Earth's field
    (:data:`EARTH_FIELD_T`, direction unknown) is added in quadrature as
    ``EARTH_FIELD_T/√3/B_i``: a fixed vector of random direction changes |B| by its
    projection on B, whose standard deviation is 1/√3 of its size (uniform directions on
    the sphere: ⟨cos²θ⟩ = 1/3). Readings near the Earth's field then count little.
    """
    rel = readings.uncertainty_T / readings.field_T
    given = np.isfinite(rel)
    fill = float(np.median(rel[given])) if given.any() else NOMINAL_REL_UNCERTAINTY
    base = np.where(given, rel, fill)
    if background_known:
        return base
    return np.hypot(base, EARTH_FIELD_T / math.sqrt(3.0) / readings.field_T)


def _solve(model: _Model, y: np.ndarray, sigma: np.ndarray, kept: np.ndarray,
           theta0: np.ndarray) -> _Fit:
    def res(t):
        return ((y - model.evaluate(t)[0]) / sigma)[kept]

    def jac(t):
        return (-model.evaluate(t)[1] / sigma[:, None])[kept]

    n_fit = len(model.fitted)
    n_off, n_bg = len(model.offsets), len(model.background_axes)
    lo = np.concatenate([np.full(n_fit, 1e-6), np.full(n_off, -_OFFSET_BOUND_M),
                         np.full(n_bg, -_BACKGROUND_BOUND_T)])
    hi = np.concatenate([np.full(n_fit, np.inf), np.full(n_off, _OFFSET_BOUND_M),
                         np.full(n_bg, _BACKGROUND_BOUND_T)])
    sol = least_squares(res, np.clip(theta0, lo, hi), jac=jac, bounds=(lo, hi), method="trf",
                        x_scale="jac", xtol=1e-12, ftol=1e-12, gtol=1e-12)
    dof = int(kept.sum()) - model.n_params
    r = sol.fun
    s = math.sqrt(float(r @ r) / dof) if dof > 0 else math.nan
    J = jac(sol.x)
    try:
        cov = np.linalg.inv(J.T @ J) * s**2
    except np.linalg.LinAlgError:
        cov = np.full((model.n_params, model.n_params), np.nan)
    return _Fit(sol.x, cov, s, kept.copy(), dof)


def _robust_sigma(r: np.ndarray) -> float:
    """1.4826 × median absolute deviation: the standard deviation of normal data, not
    moved by a few gross errors (Rousseeuw & Croux, JASA 88 (1993) 1273)."""
    return 1.4826 * float(np.median(np.abs(r - np.median(r))))


def _flags_about_centre(r: np.ndarray) -> np.ndarray:
    """Readings kept (bool) when comparing without a fit: |r − centre| ≤ FLAG_SIGMAS·s,
    first about the median with the robust spread, then about the mean and standard
    deviation of the readings kept, until the flags settle (as :func:`_fit_with_flags`
    does with a fitted scale in place of the mean)."""
    s = _robust_sigma(r)
    kept = np.abs(r - np.median(r)) <= FLAG_SIGMAS * s if s > 0 else np.ones(len(r), bool)
    for _ in range(_FLAG_ITERATIONS):
        if kept.sum() < 3:
            break
        new = np.abs(r - r[kept].mean()) <= FLAG_SIGMAS * r[kept].std(ddof=1)
        if np.array_equal(new, kept) or new.sum() < 3:
            break
        kept = new
    return kept


def _fit_with_flags(model: _Model, y, sigma) -> _Fit:
    """Fit; flag readings beyond FLAG_SIGMAS; refit without them until the flags settle.

    The first pass measures the spread robustly (MAD about the median) so that a gross
    error cannot hide itself by inflating it; later passes use the fit's own standard
    deviation over the readings kept.
    """
    n = len(y)
    kept = np.ones(n, bool)
    fit = _solve(model, y, sigma, kept, model.start())
    for it in range(_FLAG_ITERATIONS):
        r = (y - model.evaluate(fit.theta)[0]) / sigma
        scale = _robust_sigma(r) if it == 0 else fit.s
        centre = float(np.median(r)) if it == 0 else 0.0
        if not (math.isfinite(scale) and scale > 0):
            break
        new_kept = np.abs(r - centre) <= FLAG_SIGMAS * scale
        if int(new_kept.sum()) < model.n_params + 2 or np.array_equal(new_kept, fit.kept):
            break
        fit = _solve(model, y, sigma, new_kept, fit.theta)
    return fit


def _vif_and_std(J: np.ndarray, s: float) -> tuple[np.ndarray, np.ndarray]:
    """Variance inflation factor and predicted standard error of each column of ``J``."""
    norms = np.linalg.norm(J, axis=0)
    if np.any(norms == 0):
        bad = np.where(norms == 0, np.inf, 1.0)
        return bad, bad
    try:
        C = np.linalg.inv((J / norms).T @ (J / norms))
        cov = np.linalg.inv(J.T @ J)
    except np.linalg.LinAlgError:
        inf = np.full(J.shape[1], np.inf)
        return inf, inf
    return np.diag(C).copy(), s * np.sqrt(np.abs(np.diag(cov)))


def _candidates(model: _Model, fit_background: bool) -> list[tuple[str, int, int]]:
    """Every extra parameter: each fitted magnet's centre along x, y, z, and (with
    ``fit_background``) the background field's x, y, z; set on ``model``."""
    cand: list[tuple[str, int, int]] = [("centre", k, a) for k in model.fitted
                                        for a in range(3)]
    if fit_background:
        cand += [("background", -1, a) for a in range(3)]
    model.set_extras([(k, a) for kind, k, a in cand if kind == "centre"],
                     [a for kind, _, a in cand if kind == "background"])
    return cand


def _choose_extras(model: _Model, sigma, fit: _Fit,
                   cand: list[tuple[str, int, int]]) -> list[str]:
    """Pick the extra parameters ``cand`` (set on ``model`` and fitted in ``fit``) the
    readings constrain: every parameter's VIF ≤ VIF_LIMIT and a predicted standard error
    (the fit's s with the parameters kept) ≤ OFFSET_STD_LIMIT_M (offsets) or
    BACKGROUND_STD_LIMIT_T (background), dropping the worst until all pass. Sets them on
    ``model``; returns a note per parameter left out."""
    names = [m.name for m in model.mags]
    J = (-model.evaluate(fit.theta)[1] / sigma[:, None])[fit.kept]
    n_fit = len(model.fitted)
    s = fit.s if math.isfinite(fit.s) and fit.s > 0 else 1.0
    limits = np.array([OFFSET_STD_LIMIT_M if kind == "centre" else BACKGROUND_STD_LIMIT_T
                       for kind, _, _ in cand])
    notes: list[str] = []
    cols = list(range(n_fit + len(cand)))
    while len(cols) > n_fit:
        vif, std = _vif_and_std(J[:, cols], s)
        lim = np.concatenate([np.full(n_fit, np.inf), limits[np.array(cols[n_fit:]) - n_fit]])
        badness = np.maximum(vif / VIF_LIMIT, std / lim)
        badness[:n_fit] = 0.0
        worst = int(np.argmax(badness))
        if badness[worst] <= 1.0:
            break
        kind, k, a = cand[cols[worst] - n_fit]
        unit = "m" if kind == "centre" else "T"
        why = (f"collinear with the other parameters (VIF {vif[worst]:.3g} > {VIF_LIMIT:g})"
               if vif[worst] > VIF_LIMIT else
               f"predicted standard error {std[worst]:.3g} {unit} > {lim[worst]:g} {unit}")
        what = (f"{names[k]}: centre offset along {AXES[a]}" if kind == "centre"
                else f"background field along {AXES[a]}")
        notes.append(f"{what} not fitted: the readings do not constrain it ({why})")
        del cols[worst]
    chosen = [cand[c - n_fit] for c in cols[n_fit:]]
    if len(chosen) + n_fit > int(fit.kept.sum()) - 1:
        chosen = []
    model.set_extras([(k, a) for kind, k, a in chosen if kind == "centre"],
                     [a for kind, _, a in chosen if kind == "background"])
    return notes


def _check_fittable(model: _Model, y, sigma, names: list[str]) -> None:
    """Refuse magnets the readings cannot see or cannot tell apart."""
    b = np.linalg.norm(model.B_site, axis=1)
    for k in model.fitted:
        share = np.linalg.norm(model.B_each[k], axis=1) / np.maximum(b, 1e-300)
        if not np.any(share >= _MIN_SHARE):
            raise ArgumentError(must_be("magnet", f"a magnet that gives at least "
                                        f"{_MIN_SHARE:.0%} of the field at some reading",
                                        names[k]), "magnet")
    if len(model.fitted) > 1:
        J = -model.evaluate(model.start())[1] / sigma[:, None]
        vif, _ = _vif_and_std(J, 1.0)
        if np.any(vif > VIF_LIMIT):
            raise ArgumentError(must_be("magnet", "one magnet when the readings cannot tell "
                                        "the magnets apart (current scales collinear, VIF "
                                        f"{float(np.max(vif)):.3g} > {VIF_LIMIT:g})",
                                        "all: " + ", ".join(names[k] for k in model.fitted)),
                                "magnet")


def _unit_slip_warning(readings: Readings, ratio: np.ndarray) -> None:
    med = float(np.median(ratio))
    if 0.2 <= med <= 5.0:
        return
    warnings.warn(f"{readings.source_file or 'readings'}: the readings are {med:.3g} times "
                  "the model (median); check that B_mT is in millitesla (1 G = 0.1 mT, "
                  "1 µT = 0.001 mT) and the positions in the site frame, in metres",
                  FringeWarning, stacklevel=3)


# -- the public entry ------------------------------------------------------------------

def survey(site: Site, readings: Readings, *, calibrate: bool = False,
           magnet: str | None = None) -> SurveyResult:
    """Compare readings with the model and, with ``calibrate``, fit the magnets.

    Parameters
    ----------
    site : Site
        The scenario; its field at each reading is ``field_at(site, points)``.
    readings : Readings
    calibrate : bool
        Fit per magnet a current scale and, where the readings constrain it, a centre
        offset per site axis (weighted least squares on ln|B|, ``scipy.optimize.
        least_squares``); flag readings beyond :data:`FLAG_SIGMAS` and refit without them.
    magnet : str, optional
        Calibrate only this magnet (default: every magnet); only with ``calibrate``.

    Returns
    -------
    SurveyResult

    Raises
    ------
    ScenarioError
        A reading inside a winding or cryostat.
    ArgumentError
        (argument ``magnet``) an unknown magnet, one the readings cannot see, or magnets
        the readings cannot tell apart; too few readings for the fit.

    References
    ----------
    Weighted least squares and the covariance (JᵀWJ)⁻¹·s² of its parameters: Press et al.,
    *Numerical Recipes*, 3rd ed. (2007), Sec. 15.4–15.5; Bevington & Robinson, *Data
    Reduction and Error Analysis*, 3rd ed. (2003), Ch. 7–8.
    """
    if magnet is not None and not calibrate:
        raise ArgumentError(must_be("magnet", "given only with calibrate", magnet), "magnet")
    check_positions(site, readings)
    names = [m.name for m in site.magnets]
    if magnet is not None:
        site.magnet(magnet)  # ArgumentError listing the names
    fitted = [k for k, n in enumerate(names) if magnet is None or n == magnet]
    model = _Model(site, readings, fitted if calibrate else [])
    y = np.log(readings.field_T)
    known = getattr(site, "background_field_uT", None) is not None
    sigma = _weights(readings, known)
    model_T = np.linalg.norm(model.B_site, axis=1)
    ratio = readings.field_T / model_T
    _unit_slip_warning(readings, ratio)
    notes: list[str] = []
    low = int(np.sum(EARTH_FIELD_T / math.sqrt(3.0) / readings.field_T
                     > _weights(readings, True))) if not known else 0
    if low:
        notes.append(f"the scenario gives no background field ([site] background_field_uT): "
                     f"the Earth's field ({EARTH_FIELD_T * 1e6:g} µT, direction unknown) is "
                     f"taken as an uncertainty of each reading; {low} reading(s) weak enough "
                     "for it to dominate count less")
    if not calibrate:
        kept = _flags_about_centre(np.log(ratio) / sigma)
        rms = _wrms(np.log(ratio), sigma, kept)
        u = suggested_uncertainty(_model_rms(np.log(ratio), _earth_sigma(site, readings),
                                             _weights(readings, True), sigma, kept))
        return SurveyResult(_points(readings, model_T, ratio, kept, sigma), rms, (), (),
                            u, None, readings.source_file,
                            notes=tuple(notes))
    if len(readings) < len(fitted) + 2:
        raise ArgumentError(must_be("readings", f"at least {len(fitted) + 2} readings to fit "
                                    f"{len(fitted)} current scale(s)", len(readings)),
                            "readings", readings.source_file or None)
    _check_fittable(model, y, sigma, names)
    # every candidate fitted at once, weighted by the meter alone when the background is
    # among them: the spread of that fit sets the predicted standard errors
    cand = _candidates(model, fit_background=not known)
    meter = _weights(readings, True)
    sel_sigma = meter if not known else sigma
    notes += _choose_extras(model, sel_sigma, _fit_with_flags(model, y, sel_sigma), cand)
    sigma_cmp = sigma  # the scenario's model against the readings: as in the comparison
    if len(model.background_axes) == 3:  # the Earth's field is a parameter now
        sigma = meter
        notes = [n for n in notes if not n.startswith("the scenario gives no background")]
    fit = _fit_with_flags(model, y, sigma)
    return _calibrated_result(site, readings, model, fit, y, (sigma, sigma_cmp), ratio,
                              model_T, notes)


def _wrms(r: np.ndarray, sigma: np.ndarray, mask: np.ndarray) -> float:
    """Root mean square of ``r`` over ``mask``, each weighted by 1/σ² (the plain rms when
    every σ is the same; readings dominated by the Earth's field count little)."""
    if not mask.any():
        return math.nan
    w = 1.0 / sigma[mask] ** 2
    return float(np.sqrt(np.sum(w * r[mask] ** 2) / np.sum(w)))


def _earth_sigma(site, readings: Readings) -> np.ndarray:
    """The Earth's part of each reading's relative uncertainty (0 with a known background)."""
    if getattr(site, "background_field_uT", None) is not None:
        return np.zeros(len(readings))
    return EARTH_FIELD_T / math.sqrt(3.0) / readings.field_T


def _model_rms(r: np.ndarray, sigma_earth: np.ndarray, sigma_meter: np.ndarray,
               sigma: np.ndarray, mask: np.ndarray) -> float:
    """The plain rms of ``r`` over the readings of ``mask`` whose Earth's-field share is at
    most the meter's; when fewer than 3 are, :func:`_wrms` over ``mask`` with ``sigma``.
    The spread of the magnets' field about the model (the Earth's field is stated apart
    on every output)."""
    strong = mask & (sigma_earth <= sigma_meter)
    if strong.sum() >= 3:
        return float(np.sqrt(np.mean(r[strong] ** 2)))
    return _wrms(r, sigma, mask)


def _points(readings: Readings, model_T, ratio, kept, sigma,
            calibrated_T=None) -> tuple[PointComparison, ...]:
    cal = np.full(len(readings), np.nan) if calibrated_T is None else calibrated_T
    return tuple(PointComparison(readings.labels[i],
                                 tuple(float(v) for v in readings.points_m[i]),
                                 float(readings.field_T[i]), float(model_T[i]),
                                 float(ratio[i]), "ok" if kept[i] else "outlier",
                                 readings.lines[i], float(cal[i]), float(sigma[i]))
                 for i in range(len(readings)))


def _calibrated_result(site, readings, model: _Model, fit: _Fit, y, sigmas, ratio, model_T,
                       notes: list[str]) -> SurveyResult:
    sigma, sigma_cmp = sigmas
    log_after = model.evaluate(fit.theta)[0]
    res_after = y - log_after
    kept = fit.kept
    # which magnet gives the largest part of the field at each reading
    share = np.stack([np.linalg.norm(b, axis=1) for b in model.B_each])
    owner = np.argmax(share, axis=0)
    cals = []
    std = np.sqrt(np.abs(np.diag(fit.cov)))
    n_fit = len(model.fitted)
    for j, k in enumerate(model.fitted):
        m = model.mags[k]
        off: list[float | None] = [None, None, None]
        off_std: list[float | None] = [None, None, None]
        for c, (kk, a) in enumerate(model.offsets):
            if kk == k:
                off[a] = float(fit.theta[n_fit + c])
                off_std[a] = float(std[n_fit + c])
        d = np.array([v or 0.0 for v in off])
        scale = float(fit.theta[j])
        cal = replace(m.scaled(scale), center_m=tuple(float(v) for v in
                                                      np.asarray(m.center_m) + d))
        mine = kept & (owner == k)
        rms = _wrms(res_after, sigma, mine)
        axis_notes = tuple(n for n in notes if n.startswith(f"{m.name}:"))
        cals.append(MagnetCalibration(m.name, scale, float(std[j]), tuple(off), tuple(off_std),
                                      rms, cal, axis_notes))
    by_name = {c.magnet: c.calibrated for c in cals}
    cal_site = replace(site, magnets=tuple(by_name.get(m.name, m) for m in site.magnets))
    thr = site_plan(site).settings.thresholds_mT
    bounds = tuple(CalibratedBoundary(c.magnet, t, *threshold_extents_m(c.calibrated, t * 1e-3))
                   for c in cals for t in thr)
    rms_before = _wrms(np.log(ratio), sigma_cmp, kept)
    earth = (np.zeros(len(y)) if len(model.background_axes) == 3
             else _earth_sigma(site, readings))
    rms_after = _model_rms(res_after, earth, _weights(readings, True), sigma, kept)
    first_bg = n_fit + len(model.offsets)
    bg: list[float | None] = [None, None, None]
    bg_std: list[float | None] = [None, None, None]
    for c, a in enumerate(model.background_axes):
        bg[a] = float(fit.theta[first_bg + c]) * 1e6
        bg_std[a] = float(std[first_bg + c]) * 1e6
    fitted_bg = (tuple(bg), tuple(bg_std)) if model.background_axes else (None, None)
    rel = max((c.current_scale_std / c.current_scale for c in cals), default=0.0)
    return SurveyResult(_points(readings, model_T, ratio, kept, sigma, np.exp(log_after)),
                        rms_before,
                        tuple(cals),
                        bounds, suggested_uncertainty(rms_after, rel), cal_site,
                        readings.source_file, fit.dof, tuple(notes), *fitted_bg)
