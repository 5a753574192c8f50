"""Generic magnet families built from physics as ordinary coils.

Each family turns a few physical numbers (centre field, winding radius, length, …) into
a :class:`~fringe.model.magnet.Magnet`. The layouts are invented here from textbook design
rules; none reproduces a supplier's design.

* :func:`shielded_whole_body` — actively shielded whole-body magnet: three main coil
  pairs whose ampere-turns are solved so that the centre field is the requested one and
  the on-axis Taylor coefficients b₂ and b₄ vanish (sixth-order homogeneity, Garrett,
  J. Appl. Phys. 38, 2563 (1967)), plus one reversed shield pair whose ampere-turns make
  the net dipole moment q₁ a chosen fraction ε of the main coils' moment (ε = 0 is
  complete dipole cancellation; the fringe field is then carried by q₃, q₅, …).
* :func:`unshielded_whole_body` — the same main coils without a shield.
* :func:`vertical_lab_magnet` — small-bore, high-field (NMR-type) magnet, vertical axis,
  actively shielded or not; the same design rules at lab proportions.
* :func:`thick_solenoid` — one thick winding of uniform current density, the current set
  so that the centre field is the requested one.
* :func:`helmholtz_pair` — resistive pair of square-section coils whose spacing is solved
  so that b₂ = 0 (the finite-section Helmholtz condition; for thin loops spacing = radius).

The centre field and b₂, b₄ come from :func:`fringe.field.multipole.interior_coefficients_T`,
the dipole moment from :func:`fringe.field.multipole.zonal_moments_Am`. Every coefficient is
linear in the coil ampere-turns, so each family solves a small linear system; winding
thicknesses follow from a design current density (superconducting ~1e8 A/m²,
resistive ~3e6 A/m²) and are iterated twice with the solved ampere-turns. All coils of
a magnet share one operating current (series connection); turns are whole numbers and
the common current is scaled afterwards so the centre field is exact.

References
----------
M. W. Garrett, "Thick cylindrical coil systems for strong magnetic fields with field or
gradient homogeneities of the 6th to 20th order", J. Appl. Phys. 38, 2563 (1967).
D. B. Montgomery, *Solenoid Magnet Design*, Wiley (1969), ch. 1 and 8.
Jackson, *Classical Electrodynamics*, 3rd ed., Sec. 5.6 (dipole moment I·πR²).
"""

from __future__ import annotations

import functools
import math
from collections.abc import Callable
from dataclasses import dataclass

import numpy as np
from scipy.optimize import brentq

from fringe.field.multipole import interior_coefficients_T
from fringe.model.errors import FringeInputError, must_be
from fringe.model.magnet import Coil, Magnet

__all__ = ["shielded_whole_body", "unshielded_whole_body", "vertical_lab_magnet",
           "thick_solenoid", "helmholtz_pair", "FAMILIES", "Family", "FitShape", "family",
           "FIT_FAMILIES", "WHOLE_BODY_WARM_BORE_M", "LAB_WARM_BORE_M",
           "SUPERCONDUCTING_J_A_PER_M2", "RESISTIVE_J_A_PER_M2", "main_thickness_estimate_m"]

#: Design winding current density of superconducting coils, A/m² (Nb-Ti magnets run at
#: roughly 1e8 A/m² overall: Wilson, *Superconducting Magnets*, OUP 1983, ch. 1).
SUPERCONDUCTING_J_A_PER_M2: float = 1.0e8

#: Design current density of water-cooled copper coils, A/m² (Montgomery 1969, ch. 2:
#: 1e6-1e7 A/m² for resistive magnets).
RESISTIVE_J_A_PER_M2: float = 3.0e6

#: Main coil pairs as fractions of the half-length h: each pair occupies
#: ±[u, v]·h. Chosen here so b₂ = b₄ = 0 is met with all-positive ampere-turns for
#: 1 ≤ h/a ≤ 2.5 (checked by tests/test_presets.py); shorter or longer magnets get a
#: reverse-wound middle pair (a known homogenising technique), still on one current.
_MAIN_SPANS: tuple[tuple[float, float], ...] = ((0.03, 0.30), (0.40, 0.64), (0.74, 1.00))

#: Lab-magnet main coils (thick windings): a central section and an end pair, with
#: b₂ = 0 only (fourth-order homogeneity; sixth order is ill-conditioned for windings as
#: thick as their radius). All-positive ampere-turns for 0.04 ≤ a ≤ 0.1 m, 1.5 ≤ h/a ≤ 7.
_LAB_SPANS: tuple[tuple[float, float], ...] = ((0.0, 0.60), (0.70, 1.00))

#: Shield pair span as fractions of the main half-length.
_SHIELD_SPAN: tuple[float, float] = (0.55, 0.98)

_MIN_THICKNESS_M = 0.004


def _pair(r_i: float, r_o: float, u: float, v: float, turns: float, current_A: float):
    return (Coil(r_i, r_o, u, v, turns, current_A), Coil(r_i, r_o, -v, -u, turns, current_A))


def _check_positive(name: str, value: float) -> float:
    v = float(value)
    if not (math.isfinite(v) and v > 0):
        raise FringeInputError(must_be(name, "a positive finite number", value))
    return v


def _finalise(name: str, specs, center_field_T: float, current_A: float, axis,
              description: str, whole_turns: bool = True) -> Magnet:
    """Whole turns, one shared current scaled so that b₀ = ``center_field_T`` exactly.

    ``specs`` holds (r_i, r_o, u, v, ampere_turns) per pair (or per single coil with
    u = -v meaning a coil symmetric about the centre).
    """
    coils = []
    for r_i, r_o, u, v, nI in specs:
        turns = max(1, round(abs(nI) / current_A)) if whole_turns else abs(nI) / current_A
        sign = 1.0 if nI >= 0 else -1.0
        if u < 0:
            coils.append(Coil(r_i, r_o, u, v, turns, sign * current_A))
        else:
            coils.extend(_pair(r_i, r_o, u, v, turns, sign * current_A))
    m = Magnet(name, (0.0, 0.0, 0.0), axis, tuple(coils), description, "preset")
    b0 = float(interior_coefficients_T(m, 0)[0])
    return m.scaled(center_field_T / b0)


def _solve_ampere_turns(center_field_T, geometry, n_main, extra_rows, j_design):
    """Solve the linear design system for the ampere-turns of each unit (pair).

    ``geometry``: list of (r_inner, u, v) per unit, the first ``n_main`` being the main
    pairs, which share one winding thickness (set so their mean current density is
    ``j_design``); each further unit (shield) gets its own thickness from its own
    ampere-turns. Thicknesses are refined from the solved ampere-turns (three passes);
    the returned ampere-turns solve the system for the returned geometry exactly.
    ``extra_rows(unit_magnets)`` returns (row, rhs) constraints besides b0, b2, b4.
    Returns a list of (r_i, r_o, u, v, nI) per unit.
    """
    from fringe.model.constants import MU0_T_M_PER_A

    a = geometry[0][0]
    h = max(v for _r, _u, v in geometry[:n_main])
    main_len = sum(2 * (v - u) for _r, u, v in geometry[:n_main])
    # first guess: finite-solenoid centre field B0 = μ0 (NI/2h) h/sqrt(h²+a²) (Jackson 5.3)
    ni_total = center_field_T * 2 * math.hypot(h, a) / MU0_T_M_PER_A
    thick = [ni_total / (j_design * main_len)] * n_main
    thick += [0.1 * thick[0]] * (len(geometry) - n_main)
    for it in range(4):
        units = [Magnet("u", (0, 0, 0), (0, 0, 1), _pair(r, r + t, u, v, 1.0, 1.0))
                 for (r, u, v), t in zip(geometry, thick, strict=True)]
        # order 12 is ample: the loop kernel is smooth over a winding seen from the centre
        b = np.array([interior_coefficients_T(m, 4, order=12) for m in units]).T  # (5, units)
        extra = extra_rows(units)
        rows = [b[0], b[2], b[4]][:n_main] + [row for row, _ in extra]
        rhs = [center_field_T, 0.0, 0.0][:n_main] + [val for _, val in extra]
        x = np.linalg.solve(np.array(rows), np.array(rhs))
        if it == 3:
            break
        t_main = 2 * float(np.sum(np.abs(x[:n_main]))) / (j_design * main_len)
        thick = [max(_MIN_THICKNESS_M, t_main)] * n_main + [
            max(_MIN_THICKNESS_M, abs(xi) / (j_design * (v - u)))
            for xi, (_r, u, v) in zip(x[n_main:], geometry[n_main:], strict=True)]
    return [(r, r + t, u, v, xi) for (r, u, v), t, xi in zip(geometry, thick, x, strict=True)]


def _solenoid_magnet(name, center_field_T, main_radius_m, half_length_m, shield_radius_m,
                     residual_dipole_fraction, current_A, j_design, axis, description,
                     spans=None, whole_turns=True):
    """Three homogenising main pairs, optionally one reversed shield pair."""
    a = _check_positive("main_radius_m", main_radius_m)
    h = _check_positive("half_length_m", half_length_m)
    spans = _MAIN_SPANS if spans is None else spans
    geometry = [(a, u * h, v * h) for u, v in spans]
    if shield_radius_m is not None:
        rs = _check_positive("shield_radius_m", shield_radius_m)
        if rs <= a * 1.1:
            raise FringeInputError(must_be("shield_radius_m", f"> 1.1 × main radius "
                                           f"({1.1 * a:.3g} m)", shield_radius_m))
        u, v = _SHIELD_SPAN
        geometry.append((rs, u * h, v * h))
        eps = float(residual_dipole_fraction)

        def extra(units):
            q1 = np.array([m.dipole_moment_Am2 for m in units])  # = q_1 (Jackson 5.6)
            main = np.ones(len(units))
            main[-1] = 0.0
            return [(q1 - eps * q1 * main, 0.0)]
    else:
        def extra(units):
            return []
    specs = _solve_ampere_turns(center_field_T, geometry, len(spans), extra, j_design)
    if shield_radius_m is not None and specs[-1][0] < 1.05 * specs[0][1]:
        raise FringeInputError(must_be("shield_radius_m", "> 1.05 × main outer radius "
                                       f"({1.05 * specs[0][1]:.3g} m)", shield_radius_m))
    return _finalise(name, specs, center_field_T, current_A, axis, description, whole_turns)


def main_thickness_estimate_m(center_field_T: float, main_radius_m: float,
                              half_length_m: float, lab: bool = False) -> float:
    """First estimate of the main winding build in m (finite-solenoid centre field).

    NI = 2 B₀ √(h²+a²)/μ₀ (centre field of a finite solenoid, Jackson Sec. 5.3) spread
    over the main coils at the family's design current density.
    """
    from fringe.model.constants import MU0_T_M_PER_A
    spans = _LAB_SPANS if lab else _MAIN_SPANS
    j = (1.5 if lab else 1.0) * SUPERCONDUCTING_J_A_PER_M2
    length = sum(2 * (v - u) for u, v in spans) * half_length_m
    return 2 * center_field_T * math.hypot(half_length_m, main_radius_m) / (
        MU0_T_M_PER_A * j * length)


def shielded_whole_body(center_field_T: float = 1.5, main_radius_m: float = 0.46,
                        half_length_m: float = 0.75, shield_radius_m: float = 0.92,
                        residual_dipole_fraction: float = 0.0, current_A: float = 300.0,
                        name: str = "shielded whole-body", whole_turns: bool = True) -> Magnet:
    """Actively shielded whole-body magnet (axis local z).

    Parameters
    ----------
    center_field_T : float
        Field at the isocentre, T.
    main_radius_m : float
        Inner radius of the main windings, m (warm bore radius + cryostat, ~0.45 m).
    half_length_m : float
        Half of the main winding length, m.
    shield_radius_m : float
        Inner radius of the shield windings, m (> 1.1 × main radius).
    residual_dipole_fraction : float
        Net dipole moment as a fraction of the main coils' moment (0 = full cancellation).
    current_A : float
        Operating current shared by all coils, A (before the final centre-field scaling).
    whole_turns : bool
        Round turns to whole numbers (False keeps the model smooth in its parameters,
        as the fit needs).

    Returns
    -------
    Magnet
        Centre at the origin, axis (0, 0, 1); b₀ = ``center_field_T``, b₂ = b₄ ≈ 0,
        q₁ = ε·q₁(main) up to whole-turn rounding.

    References
    ----------
    Garrett (1967); Montgomery (1969), ch. 8 (see module references).
    """
    return _solenoid_magnet(name, _check_positive("center_field_T", center_field_T),
                            main_radius_m, half_length_m, shield_radius_m,
                            residual_dipole_fraction, current_A, SUPERCONDUCTING_J_A_PER_M2,
                            (0.0, 0.0, 1.0), "generic actively shielded whole-body magnet",
                            None, whole_turns)


def unshielded_whole_body(center_field_T: float = 1.5, main_radius_m: float = 0.5,
                          half_length_m: float = 0.9, current_A: float = 300.0,
                          name: str = "unshielded whole-body", whole_turns: bool = True) -> Magnet:
    """Unshielded whole-body magnet: three homogenising main pairs (b₂ = b₄ = 0).

    Parameters as :func:`shielded_whole_body`, without a shield. References: Garrett (1967).
    """
    return _solenoid_magnet(name, _check_positive("center_field_T", center_field_T),
                            main_radius_m, half_length_m, None, 0.0, current_A,
                            SUPERCONDUCTING_J_A_PER_M2, (0.0, 0.0, 1.0),
                            "generic unshielded whole-body magnet", None, whole_turns)


def vertical_lab_magnet(center_field_T: float = 9.4, main_radius_m: float = 0.06,
                        half_length_m: float = 0.2, shielded: bool = True,
                        shield_radius_m: float | None = None,
                        residual_dipole_fraction: float = 0.0, current_A: float = 100.0,
                        name: str = "vertical lab magnet", whole_turns: bool = True) -> Magnet:
    """Small-bore, high-field (NMR-type) lab magnet with a vertical bore.

    A thick central section and a thick end pair (b₀ as requested, b₂ = 0), wound at
    1.5× the whole-body current density (high-field lab magnets grade their windings to
    higher J; Wilson 1983, ch. 1); an optional reversed shield pair at
    ``shield_radius_m`` (default 2.5 × the estimated main outer radius). The axis is
    local z, vertical when the magnet is placed with axis (0, 0, 1).
    """
    b = _check_positive("center_field_T", center_field_T)
    rs = None
    if shielded:
        t = main_thickness_estimate_m(b, main_radius_m, half_length_m, lab=True)
        rs = shield_radius_m if shield_radius_m is not None else 2.5 * (main_radius_m + t)
    kind = "actively shielded" if shielded else "unshielded"
    return _solenoid_magnet(name, b, main_radius_m, half_length_m, rs, residual_dipole_fraction,
                            current_A, 1.5 * SUPERCONDUCTING_J_A_PER_M2, (0.0, 0.0, 1.0),
                            f"generic {kind} vertical-bore lab magnet", _LAB_SPANS, whole_turns)


def thick_solenoid(center_field_T: float = 1.0, inner_radius_m: float = 0.05,
                   outer_radius_m: float = 0.1, half_length_m: float = 0.15,
                   current_A: float = 100.0, name: str = "thick solenoid") -> Magnet:
    """One thick solenoid of uniform current density giving ``center_field_T`` at its centre.

    The current density follows from b₀ (cross-checked in tests against Montgomery's
    thick-solenoid formula B₀ = μ₀ J a₁ β ln[(α+√(α²+β²))/(1+√(1+β²))], α = a₂/a₁,
    β = h/a₁; Montgomery 1969, Eq. 1.30).
    """
    b = _check_positive("center_field_T", center_field_T)
    r_i = float(inner_radius_m)
    r_o = _check_positive("outer_radius_m", outer_radius_m)
    h = _check_positive("half_length_m", half_length_m)
    if not 0 <= r_i < r_o:
        raise FringeInputError(must_be("inner_radius_m", f"in [0, {r_o:g}) m", inner_radius_m))
    unit = Magnet(name, (0, 0, 0), (0, 0, 1), (Coil(r_i, r_o, -h, h, 1.0, 1.0),))
    n_i = b / float(interior_coefficients_T(unit, 0)[0])
    return _finalise(name, [(r_i, r_o, -h, h, n_i)], b, current_A, (0.0, 0.0, 1.0),
                     "generic thick lab solenoid")


def helmholtz_pair(center_field_T: float = 0.01, radius_m: float = 0.3,
                   current_density_A_per_m2: float = RESISTIVE_J_A_PER_M2,
                   current_A: float = 50.0, name: str = "Helmholtz pair") -> Magnet:
    """Resistive Helmholtz-type pair of square-section coils, b₂ = 0 at the centre.

    Ampere-turns per coil from the thin-loop Helmholtz field B₀ = (4/5)^{3/2} μ₀NI/R
    (Jackson, Problem 5.7 / any textbook); square cross-section of area NI/J; then the
    spacing is solved so b₂ = 0 for the finite section and the current rescaled so b₀ is
    exact.
    """
    b = _check_positive("center_field_T", center_field_T)
    r = _check_positive("radius_m", radius_m)
    j = _check_positive("current_density_A_per_m2", current_density_A_per_m2)
    from fringe.model.constants import MU0_T_M_PER_A
    n_i = b * r / (MU0_T_M_PER_A * 0.8**1.5)
    side = math.sqrt(n_i / j)
    if side >= r:
        raise FringeInputError(must_be("current_density_A_per_m2",
                                       f"large enough for a winding thinner than R "
                                       f"(needs > {n_i / r**2:.3g} A/m²)", j))

    def b2(half_gap: float) -> float:
        m = Magnet("h", (0, 0, 0), (0, 0, 1),
                   _pair(r - side / 2, r + side / 2, half_gap - side / 2, half_gap + side / 2,
                         1.0, 1.0))
        return float(interior_coefficients_T(m, 2)[2])

    lo = side / 2 + 1e-6
    hi = 1.5 * r
    d = brentq(b2, max(lo, 0.2 * r), hi, xtol=1e-7) if b2(max(lo, 0.2 * r)) * b2(hi) < 0 \
        else r / 2
    spec = [(r - side / 2, r + side / 2, d - side / 2, d + side / 2, n_i)]
    return _finalise(name, spec, b, current_A, (0.0, 0.0, 1.0), "generic resistive Helmholtz pair")


#: Warm bore assumed when none is given for a whole-body magnet, m (common practice,
#: no source: 0.6 m is the usual clinical warm bore; 0.7 m "wide bore").
WHOLE_BODY_WARM_BORE_M: float = 0.6

#: Warm bore assumed when none is given for a lab magnet, m (54 mm, the common NMR
#: standard bore; common practice, no source).
LAB_WARM_BORE_M: float = 0.054


@dataclass(frozen=True)
class FitShape:
    """The shape parameters a data-sheet fit varies for one family.

    Attributes
    ----------
    parameters : tuple of str
        Names of the parameters (SI units in the names; ratios are dimensionless).
    lower, upper : tuple of float
        Bounds of each parameter.
    nominal : tuple of float
        The family's nominal shape: the first start and the point the fit's weak prior
        pulls towards.
    """

    parameters: tuple[str, ...]
    lower: tuple[float, ...]
    upper: tuple[float, ...]
    nominal: tuple[float, ...]


_SHIELDED_PARAMETERS = ("half_length_over_radius", "shield_over_main_outer_radius",
                        "residual_dipole_fraction")
_UNSHIELDED_PARAMETERS = ("radius_over_minimum", "half_length_over_radius")


@dataclass(frozen=True)
class Family:
    """One generic magnet family and every fact about it.

    Attributes
    ----------
    name : str
        The one spelling of the family (registry key, ``FitResult.family``, ``fringe fit``
        output).
    build : callable
        Builder with keyword defaults: ``build(center_field_T, ...) -> Magnet``.
    description : str
        One line.
    shielded : bool or None
        Actively shielded (None for families without that choice).
    lab : bool
        A small-bore lab magnet (else whole-body size, or not a bore magnet).
    warm_bore_m : float or None
        Warm bore assumed by the fit when none is given, m.
    cryostat_allowance_m : float or None
        Radial space between warm bore and main winding, m (cryostat: vacuum vessel,
        thermal shield, helium vessel, former; common practice, no source).
    field_range_T : tuple of float or None
        Centre fields (T) the family is known to be built for; a fit outside draws a
        warning with the number. Whole-body MR magnets: about 0.2 T (low-field open
        systems) to 11.7 T (the strongest whole-body magnet built); lab magnets: to
        28.2 T (1.2 GHz NMR). From memory; common practice, no source.
    fit : FitShape or None
        The shape parameters of a data-sheet fit (None: the fit does not use the family).
    """

    name: str
    build: Callable[..., Magnet]
    description: str
    shielded: bool | None = None
    lab: bool = False
    warm_bore_m: float | None = None
    cryostat_allowance_m: float | None = None
    field_range_T: tuple[float, float] | None = None
    fit: FitShape | None = None


#: The one registry of the generic families (name → :class:`Family`); the data-sheet
#: fit (:mod:`fringe.physics.fit`) and everything else read it.
FAMILIES: dict[str, Family] = {f.name: f for f in (
    Family("shielded_whole_body", shielded_whole_body,
           "actively shielded whole-body magnet (main pairs + reversed shield pair)",
           shielded=True, warm_bore_m=WHOLE_BODY_WARM_BORE_M, cryostat_allowance_m=0.16,
           field_range_T=(0.2, 11.7),
           fit=FitShape(_SHIELDED_PARAMETERS, (0.9, 1.5, -0.4), (3.0, 3.0, 0.4),
                        (1.6, 1.95, 0.0))),
    Family("unshielded_whole_body", unshielded_whole_body,
           "unshielded whole-body magnet (homogenising main pairs)",
           shielded=False, warm_bore_m=WHOLE_BODY_WARM_BORE_M, cryostat_allowance_m=0.16,
           field_range_T=(0.2, 11.7),
           fit=FitShape(_UNSHIELDED_PARAMETERS, (1.0, 0.9), (3.0, 3.5), (1.1, 1.8))),
    Family("shielded_lab", functools.partial(vertical_lab_magnet, shielded=True),
           "small-bore high-field vertical lab magnet, actively shielded "
           "(vertical_lab_magnet)",
           shielded=True, lab=True, warm_bore_m=LAB_WARM_BORE_M, cryostat_allowance_m=0.025,
           field_range_T=(0.5, 28.2),
           fit=FitShape(_SHIELDED_PARAMETERS, (1.5, 1.5, -0.4), (7.0, 4.0, 0.4),
                        (3.0, 2.5, 0.0))),
    Family("unshielded_lab", functools.partial(vertical_lab_magnet, shielded=False),
           "small-bore high-field vertical lab magnet, unshielded (vertical_lab_magnet)",
           shielded=False, lab=True, warm_bore_m=LAB_WARM_BORE_M, cryostat_allowance_m=0.025,
           field_range_T=(0.1, 28.2),
           fit=FitShape(_UNSHIELDED_PARAMETERS, (1.0, 1.5), (4.0, 7.0), (1.2, 3.0))),
    Family("thick_solenoid", thick_solenoid, "one thick solenoid"),
    Family("helmholtz_pair", helmholtz_pair, "resistive Helmholtz-type pair"),
)}

#: Names of the families a data-sheet fit can use, in the order it lists them.
FIT_FAMILIES: tuple[str, ...] = tuple(n for n, f in FAMILIES.items() if f.fit is not None)


def family(name: str) -> Family:
    """The registry entry of ``name``.

    Raises
    ------
    FringeInputError
        For a name not in :data:`FAMILIES`.
    """
    try:
        return FAMILIES[name]
    except (KeyError, TypeError):
        raise FringeInputError(must_be("family", f"one of {', '.join(FAMILIES)}",
                                       name)) from None
