"""Attraction hazard: where the magnet pulls a loose steel object harder than gravity holds it.

Physics
-------
A small soft-iron object of volume V in the applied field B takes a magnetisation M along
B that depends only on |B|; its co-energy is ``W = V ∫₀^|B| M(b) db`` and the translational
force is ``F = ∇W = V·M(|B|)·∇|B|`` [1]_ [2]_. With the ideal soft-iron curve

    M(B) = min(χ_eff·B/μ₀, M_s),      χ_eff = 1/N                             (1)

(N the demagnetising factor along B; intrinsic susceptibility → ∞, which makes (1) an
upper bound for the given shape) this is

* unsaturated (B < μ₀M_s/χ_eff):  F = (χ_eff V/2μ₀)·|∇(B²)| = (χ_eff V/μ₀)·B·|∇|B||   (2)
* saturated   (B ≥ μ₀M_s/χ_eff):  F = M_s·V·|∇|B||                                     (3)

The object is pulled harder than its weight where F ≥ ρVg, i.e. where the *pull ratio*
``M(|B|)·|∇|B|| / (ρg)`` reaches 1 — independent of V, so one map serves every size.

Which object: the conservative default
-------------------------------------
No object can be magnetised beyond saturation, so for every shape M ≤ M_s and
F/V ≤ M_s·|∇|B||. The zone ``M_s·|∇|B|| ≥ ρg``, i.e. ``|∇|B|| ≥ ρg/M_s`` (≈ 45 mT/m for
iron), therefore contains the zone of every object of that material, whatever its shape.
It is also reached in practice: an elongated object (pin, hairpin, scissors blade) aligns
with the field, has N → 0 and χ_eff → large, and saturates already at a few mT, so (3)
applies to it wherever the pull matters. The sphere (N = 1/3, χ_eff = 3) is the *least*
attracted shape: it stays unsaturated below μ₀M_s/3 ≈ 0.72 T and its zone
``B·|∇|B|| ≥ μ₀ρg/3`` is smaller. The default object is therefore ``"any-shape"``
(the saturated bound); ``"sphere"`` and ``"needle"`` are there to show the spread.

Gradients
---------
In current-free space ∇×B = 0, so the Jacobian ∂ᵢBⱼ is symmetric and
``∇|B| = (B̂·∇)B`` [3]_: the gradient of |B| is the derivative of the vector B along its
own direction. It is computed by central differences of :func:`fringe.field.evaluate.field_at`
along B̂ (3 field evaluations per point; 5 with one Richardson extrapolation step [4]_,
the default), error O(h⁴). Along a magnet's axis the field and its gradient are also
available in closed form (:func:`axial_field_T`, :func:`axial_gradient_T_per_m`),
which the axial extent uses and the tests compare against.

References
----------
.. [1] B. D. Cullity and C. D. Graham, *Introduction to Magnetic Materials*, 2nd ed.,
   Wiley/IEEE (2009): force on a magnetic moment in a field gradient (ch. 1),
   demagnetising factors (ch. 2), saturation magnetisation of iron (ferromagnetism
   chapter: M_s ≈ 1714 emu/cm³ = 1.714 MA/m at room temperature; from memory).
.. [2] S. Chikazumi, *Physics of Ferromagnetism*, 2nd ed., Oxford (1997): iron
   μ₀M_s = 2.15 T at room temperature (from memory).
.. [3] J. D. Jackson, *Classical Electrodynamics*, 3rd ed., Wiley (1999): vector identity
   ∇(B·B)/2 = (B·∇)B + B×(∇×B) (front cover), with ∇×B = 0 outside currents (Sec. 5.3).
.. [4] L. F. Richardson, "The deferred approach to the limit", Phil. Trans. R. Soc. A 226,
   299 (1927); see also Press et al., *Numerical Recipes*, 3rd ed., Sec. 5.7.
.. [5] J. A. Osborn, "Demagnetizing factors of the general ellipsoid",
   Phys. Rev. 67, 351 (1945): prolate spheroid along its long axis.
.. [6] D. B. Montgomery, *Solenoid Magnet Design*, Wiley (1969): on-axis field of a
   thick solenoid of rectangular cross-section (ch. 1).
"""

from __future__ import annotations

import functools
import math
from dataclasses import dataclass

import numpy as np
from scipy.optimize import brentq

from fringe.field.evaluate import as_points, field_at, points_in_windings
from fringe.model.constants import MU0_T_M_PER_A, STANDARD_GRAVITY_M_PER_S2
from fringe.model.errors import FringeInputError
from fringe.model.magnet import Magnet

__all__ = [
    "SteelMaterial", "ObjectKind", "MATERIALS", "OBJECT_KINDS", "DEFAULT_MATERIAL",
    "DEFAULT_OBJECT", "DEFAULT_STEP_M", "prolate_demag_factor", "material", "object_kind",
    "magnetization_A_per_m", "pull_ratio", "saturation_field_T", "criterion_text",
    "loop_axial_field_T", "loop_axial_gradient_T_per_m", "axial_field_T",
    "axial_gradient_T_per_m", "field_and_gradient", "AttractionSample", "attraction_at",
    "attraction_extents_m", "attraction_reach_m", "REACH_FACTOR",
]

#: Default finite-difference step in m (with Richardson extrapolation from 2h and h).
#: ``tests/test_attraction.py::test_gradient_step_converges`` shows the gradient of the
#: demo magnet converging to the closed-form axial gradient as h shrinks, and agreeing
#: to < 1e-6 relative at this step.
DEFAULT_STEP_M: float = 0.01


@dataclass(frozen=True)
class SteelMaterial:
    """A soft ferromagnetic material.

    Parameters
    ----------
    name : str
    density_kg_per_m3 : float
        Mass density ρ, kg/m³.
    saturation_A_per_m : float
        Saturation magnetisation M_s, A/m.
    source : str
        Where the two numbers come from.
    """

    name: str
    density_kg_per_m3: float
    saturation_A_per_m: float
    source: str

    @property
    def weight_per_volume_N_per_m3(self) -> float:
        """ρg in N/m³ (standard gravity)."""
        return self.density_kg_per_m3 * STANDARD_GRAVITY_M_PER_S2

    @property
    def saturation_polarization_T(self) -> float:
        """μ₀M_s in T."""
        return MU0_T_M_PER_A * self.saturation_A_per_m

    @property
    def gradient_threshold_T_per_m(self) -> float:
        """ρg/M_s in T/m: the saturated (any-shape) pull-equals-weight gradient."""
        return self.weight_per_volume_N_per_m3 / self.saturation_A_per_m


#: Materials: name → SteelMaterial. Pure iron has the largest M_s/ρ of the common
#: ferrous metals (mild steels have lower M_s at the same density), so it gives the
#: largest zone among them.
MATERIALS: dict[str, SteelMaterial] = {
    "iron": SteelMaterial(
        "iron", 7870.0, 1.71e6,
        "ρ = 7.87 g/cm³ (CRC Handbook of Chemistry and Physics, iron 7.874 g/cm³; "
        "ASM Metals Handbook, from memory); M_s = 1.71 MA/m, μ₀M_s = 2.15 T at room "
        "temperature (Cullity & Graham 2009; Chikazumi 1997; from memory)"),
}

#: The default material key.
DEFAULT_MATERIAL: str = "iron"


def prolate_demag_factor(aspect_ratio: float) -> float:
    """Demagnetising factor N along the long axis of a prolate spheroid.

    Parameters
    ----------
    aspect_ratio : float
        Long over short axis, m = c/a ≥ 1 (1 is the sphere, N = 1/3).

    Returns
    -------
    float
        N = [m/√(m²−1)·ln(m+√(m²−1)) − 1]/(m²−1) (dimensionless, SI convention).

    References
    ----------
    Osborn, Phys. Rev. 67, 351 (1945), Eq. 2.6 (prolate spheroid).

    >>> round(prolate_demag_factor(1.0), 6)
    0.333333
    >>> round(prolate_demag_factor(10.0), 4)
    0.0203
    """
    m = float(aspect_ratio)
    if not (math.isfinite(m) and m >= 1.0):
        raise FringeInputError(f"`aspect_ratio` must be a finite number ≥ 1; got {aspect_ratio!r}")
    if m - 1.0 < 1e-6:
        return 1.0 / 3.0
    s = math.sqrt(m * m - 1.0)
    return (m / s * math.log(m + s) - 1.0) / (m * m - 1.0)  # [5] Eq. 2.6


@dataclass(frozen=True)
class ObjectKind:
    """A shape of loose steel object.

    Parameters
    ----------
    name : str
    demag_factor : float
        N along the field (0 ≤ N ≤ 1); 0 stands for the any-shape saturated bound.
    description : str
        Printed on sheets ("which criterion drew the zone").
    source : str
    """

    name: str
    demag_factor: float
    description: str
    source: str

    @property
    def effective_susceptibility(self) -> float:
        """χ_eff = 1/N (ideal soft iron); ``inf`` for the any-shape bound."""
        return math.inf if self.demag_factor == 0.0 else 1.0 / self.demag_factor


#: Object kinds: name → ObjectKind. One registry read by the CLI, sheets and docs.
OBJECT_KINDS: dict[str, ObjectKind] = {
    k.name: k for k in (
        ObjectKind("any-shape", 0.0,
                   "steel object of any shape, saturated (upper bound: M ≤ M_s)",
                   "M ≤ M_s for every shape (Cullity & Graham 2009, ch. 4)"),
        ObjectKind("needle", prolate_demag_factor(10.0),
                   "steel needle or pin, 10:1 prolate, aligned with the field",
                   "Osborn 1945, prolate spheroid m = 10: N = 0.0203"),
        ObjectKind("sphere", 1.0 / 3.0, "steel sphere (N = 1/3, χ_eff = 3)",
                   "sphere N = 1/3 (Cullity & Graham 2009, ch. 2)"),
    )
}

#: The default object kind: the conservative zone containing every other (module notes).
DEFAULT_OBJECT: str = "any-shape"


def _pick(registry: dict, name, what: str):
    if isinstance(name, (SteelMaterial, ObjectKind)):
        return name
    try:
        return registry[name]
    except (KeyError, TypeError):
        raise FringeInputError(f"`{what}` must be one of {', '.join(map(repr, registry))}; "
                               f"got {name!r}") from None


def material(name: str | SteelMaterial = DEFAULT_MATERIAL) -> SteelMaterial:
    """The registered material (or pass a :class:`SteelMaterial` through)."""
    return _pick(MATERIALS, name, "material")


def object_kind(name: str | ObjectKind = DEFAULT_OBJECT) -> ObjectKind:
    """The registered object kind (or pass an :class:`ObjectKind` through)."""
    return _pick(OBJECT_KINDS, name, "object")


# -- kernels ----------------------------------------------------------------------------

def saturation_field_T(chi_eff: float, saturation_A_per_m: float) -> float:
    """Applied |B| in T at which an object of effective susceptibility χ_eff saturates.

    ``χ_eff·B/μ₀ = M_s`` ⇒ ``B = μ₀M_s/χ_eff`` (0 for χ_eff = ∞); Eq. (1) of the module.
    """
    return 0.0 if math.isinf(chi_eff) else MU0_T_M_PER_A * saturation_A_per_m / chi_eff


def magnetization_A_per_m(field_T, chi_eff: float, saturation_A_per_m: float) -> np.ndarray:
    """Magnetisation M in A/m of an ideal soft-iron object in applied field |B| (T).

    ``M = min(χ_eff·|B|/μ₀, M_s)`` (module Eq. 1; Cullity & Graham 2009, ch. 2 and 4).
    """
    b = np.abs(np.asarray(field_T, dtype=float))
    if math.isinf(chi_eff):
        return np.where(b > 0.0, saturation_A_per_m, 0.0)
    return np.minimum(chi_eff * b / MU0_T_M_PER_A, saturation_A_per_m)


def pull_ratio(field_T, gradient_T_per_m, obj: str | ObjectKind = DEFAULT_OBJECT,
               mat: str | SteelMaterial = DEFAULT_MATERIAL) -> np.ndarray:
    """Magnetic pull over weight, ``M(|B|)·|∇|B|| / (ρg)``, dimensionless.

    Parameters
    ----------
    field_T : array_like
        |B| in T.
    gradient_T_per_m : array_like
        |∇|B|| in T/m (same shape).
    obj, mat : str or ObjectKind / SteelMaterial

    Returns
    -------
    ndarray
        ≥ 1 where the object is pulled harder than gravity holds it (module Eqs. 2, 3).
    """
    o, m = object_kind(obj), material(mat)
    mag = magnetization_A_per_m(field_T, o.effective_susceptibility, m.saturation_A_per_m)
    return mag * np.abs(np.asarray(gradient_T_per_m, dtype=float)) / m.weight_per_volume_N_per_m3


def criterion_text(obj: str | ObjectKind = DEFAULT_OBJECT,
                   mat: str | SteelMaterial = DEFAULT_MATERIAL) -> str:
    """One line stating which criterion drew the zone, for sheets and reports."""
    o, m = object_kind(obj), material(mat)
    g = m.gradient_threshold_T_per_m
    if math.isinf(o.effective_susceptibility):
        rule = f"|∇|B|| ≥ ρg/M_s = {g * 1e3:.1f} mT/m"
    else:
        chi = o.effective_susceptibility
        bsat = saturation_field_T(chi, m.saturation_A_per_m)
        rule = (f"B·|∇|B|| ≥ μ₀ρg/χ_eff = {MU0_T_M_PER_A * m.weight_per_volume_N_per_m3 / chi:.4g}"
                f" T²/m below {bsat:.3g} T, |∇|B|| ≥ {g * 1e3:.1f} mT/m above")
    return (f"Attraction zone: pull exceeds weight for a {o.description}; {m.name} "
            f"ρ = {m.density_kg_per_m3:g} kg/m³, M_s = {m.saturation_A_per_m / 1e6:.3g} MA/m; "
            f"{rule}. Pull ≥ weight lifts an object; on a surface it slides from "
            "μ·weight (friction μ < 1), and on wheels or hung earlier still: objects move "
            "outside this zone")


# -- closed-form on-axis field ---------------------------------------------------------

def loop_axial_field_T(radius_m: float, current_A: float, z_m) -> np.ndarray:
    """On-axis B_z (T) of a circular loop: μ₀IR²/(2(R²+z²)^{3/2}) (Jackson Eq. 5.40)."""
    z = np.asarray(z_m, dtype=float)
    return MU0_T_M_PER_A * current_A * radius_m**2 / (2.0 * (radius_m**2 + z * z) ** 1.5)


def loop_axial_gradient_T_per_m(radius_m: float, current_A: float, z_m) -> np.ndarray:
    """dB_z/dz (T/m) on a loop's axis: −3μ₀IR²z/(2(R²+z²)^{5/2}) (derivative of Eq. 5.40)."""
    z = np.asarray(z_m, dtype=float)
    return -3.0 * MU0_T_M_PER_A * current_A * radius_m**2 * z / (2.0 * (radius_m**2 + z * z) ** 2.5)


def _log_ratio(u: np.ndarray, r1: float, r2: float) -> np.ndarray:
    """ln[(r2+√(r2²+u²))/(r1+√(r1²+u²))], cancellation-free for large |u|."""
    s1 = np.sqrt(r1 * r1 + u * u)
    s2 = np.sqrt(r2 * r2 + u * u)
    with np.errstate(divide="ignore"):
        return np.log1p((r2 - r1 + (r2 * r2 - r1 * r1) / (s1 + s2)) / (r1 + s1))


def axial_field_T(magnet: Magnet, z_m) -> np.ndarray:
    """On-axis B_z in T of a magnet at local axial positions ``z_m`` (m), closed form.

    For each coil (uniform current density J over r1..r2, z1..z2)
    ``B_z = μ₀J/2·[F(z−z1) − F(z−z2)]`` with
    ``F(u) = u·ln[(r2+√(r2²+u²))/(r1+√(r1²+u²))]`` (Montgomery 1969, ch. 1; the radial
    and axial integral of the loop field, Jackson Eq. 5.40).
    """
    z = np.asarray(z_m, dtype=float)
    out = np.zeros_like(z)
    for c in magnet.coils:
        k = MU0_T_M_PER_A * c.current_density_A_per_m2 / 2.0
        for zz, sign in ((c.z_min_m, 1.0), (c.z_max_m, -1.0)):
            u = z - zz
            with np.errstate(invalid="ignore"):
                f = np.where(u == 0.0, 0.0, u * _log_ratio(u, c.r_inner_m, c.r_outer_m))
            out += sign * k * f
    return out


def axial_gradient_T_per_m(magnet: Magnet, z_m) -> np.ndarray:
    """On-axis dB_z/dz in T/m of a magnet at local positions ``z_m`` (m), closed form.

    ``dB_z/dz = μ₀J/2·[G(z−z1) − G(z−z2)]`` with
    ``G(u) = ln[(r2+√(r2²+u²))/(r1+√(r1²+u²))] − r2/√(r2²+u²) + r1/√(r1²+u²)``
    = ∫ r²/(r²+u²)^{3/2} dr over the winding (derivative of :func:`axial_field_T`;
    Montgomery 1969, ch. 1). On the axis ∂|B|/∂ρ = 0 by symmetry, so
    ``|∇|B|| = |dB_z/dz|`` there.
    """
    z = np.asarray(z_m, dtype=float)
    out = np.zeros_like(z)
    for c in magnet.coils:
        k = MU0_T_M_PER_A * c.current_density_A_per_m2 / 2.0
        r1, r2 = c.r_inner_m, c.r_outer_m
        for zz, sign in ((c.z_min_m, 1.0), (c.z_max_m, -1.0)):
            u = z - zz
            g = (_log_ratio(u, r1, r2) - r2 / np.sqrt(r2 * r2 + u * u)
                 + r1 / np.sqrt(r1 * r1 + u * u))
            out += sign * k * g
    return out


# -- gradients of |B| by finite differences ---------------------------------------------

def field_and_gradient(site, points_m, *, step_m: float = DEFAULT_STEP_M,
                       richardson: bool = True, method: str = "auto"
                       ) -> tuple[np.ndarray, np.ndarray]:
    """|B| and ∇|B| at site points by central differences along B̂.

    Parameters
    ----------
    site : Site, Magnet or sequence of Magnet
    points_m : array_like, shape (N, 3)
        Site-frame points, m; must lie outside the windings (current-free space).
    step_m : float
        Finite-difference step h, m; keep it well below the distance to the nearest
        winding and to field nulls.
    richardson : bool
        Combine steps 2h and h as (4D(h) − D(2h))/3 (error O(h⁴) instead of O(h²)).
    method : str
        Passed to :func:`fringe.field.evaluate.field_at`.

    Returns
    -------
    field_T : ndarray, shape (N,)
        |B| in T.
    gradient_T_per_m : ndarray, shape (N, 3)
        ∇|B| in T/m in the site frame (zero where B = 0 exactly).

    Notes
    -----
    ``∇|B| = (B̂·∇)B`` because the Jacobian of a curl-free field is symmetric
    (Jackson 1999, vector identity for ∇(B·B)/2 with ∇×B = 0), so one directional
    difference per point replaces three.

    References
    ----------
    Richardson, Phil. Trans. R. Soc. A 226, 299 (1927).
    """
    h = float(step_m)
    if not (math.isfinite(h) and h > 0):
        raise FringeInputError(f"`step_m` must be a positive finite number; got {step_m!r}")
    p = as_points(points_m)
    n = len(p)
    b0 = field_at(site, p, method=method)
    bmag = np.linalg.norm(b0, axis=1)
    with np.errstate(invalid="ignore", divide="ignore"):
        bhat = np.where(bmag[:, None] > 0, b0 / bmag[:, None], 0.0)
    steps = (h, 2.0 * h) if richardson else (h,)
    pts = np.concatenate([p + s * sg * bhat for s in steps for sg in (1.0, -1.0)])
    b = field_at(site, pts, method=method).reshape(len(steps), 2, n, 3)
    d = [(b[i, 0] - b[i, 1]) / (2.0 * s) for i, s in enumerate(steps)]
    grad = (4.0 * d[0] - d[1]) / 3.0 if richardson else d[0]  # Richardson [4]
    grad[bmag == 0.0] = 0.0
    return bmag, grad


@dataclass(frozen=True)
class AttractionSample:
    """Attraction quantities at points (all arrays of the same shape).

    Attributes
    ----------
    field_T : ndarray
        |B|, T.
    gradient_T_per_m : ndarray
        |∇|B||, T/m.
    force_product_T2_per_m : ndarray
        B·|∇|B|| = |∇(B²)|/2, T²/m (the quantity MR-safety literature maps).
    ratio : ndarray
        Pull over weight for the chosen object and material (≥ 1 inside the zone).
    """

    field_T: np.ndarray
    gradient_T_per_m: np.ndarray
    force_product_T2_per_m: np.ndarray
    ratio: np.ndarray


def attraction_at(site, points_m, obj: str | ObjectKind = DEFAULT_OBJECT,
                  mat: str | SteelMaterial = DEFAULT_MATERIAL, *,
                  step_m: float = DEFAULT_STEP_M, richardson: bool = True,
                  method: str = "auto", winding_margin_m: float | None = None
                  ) -> AttractionSample:
    """|B|, |∇|B||, B·|∇|B|| and the pull ratio at site points.

    Points inside (or within ``winding_margin_m``, default 2·step, of) a winding get
    NaN: the finite difference would straddle current sheets there.

    Parameters
    ----------
    site : Site, Magnet or sequence of Magnet
    points_m : array_like, shape (..., 3)
        Site points in m; the result keeps the leading shape.
    obj, mat : object kind and material (registry names or instances)

    Returns
    -------
    AttractionSample
    """
    p = np.asarray(points_m, dtype=float)
    if p.shape[-1:] != (3,):
        raise FringeInputError(f"`points_m` must have shape (..., 3); got shape {p.shape}")
    shape = p.shape[:-1]
    flat = p.reshape(-1, 3)
    margin = 2.0 * step_m if winding_margin_m is None else winding_margin_m
    bad = points_in_windings(site, flat, margin) if len(flat) else np.zeros(0, bool)
    bmag = np.full(len(flat), np.nan)
    gmag = np.full(len(flat), np.nan)
    ok = ~bad
    if ok.any():
        b, g = field_and_gradient(site, flat[ok], step_m=step_m, richardson=richardson,
                                  method=method)
        bmag[ok] = b
        gmag[ok] = np.linalg.norm(g, axis=1)
    with np.errstate(invalid="ignore"):
        ratio = np.where(ok, pull_ratio(np.nan_to_num(bmag), np.nan_to_num(gmag), obj, mat),
                         np.nan)
    return AttractionSample(bmag.reshape(shape), gmag.reshape(shape),
                            (bmag * gmag).reshape(shape), ratio.reshape(shape))


# -- extents ----------------------------------------------------------------------------

#: Ratio between successive distances on the inward scan (1 % steps).
_GRID_RATIO: float = 1.01
#: Brent tolerance on an extent, m.
_XTOL_M: float = 1e-4


def _start_distance_m(magnet: Magnet, mat: SteelMaterial) -> float:
    """A distance beyond which no object is pulled harder than its weight (rigorous).

    Each Cartesian component of B is harmonic outside the windings, so
    |∇Bᵢ(x)| ≤ (3/d)·sup over the ball B(x, d) of |Bᵢ| (Gilbarg & Trudinger,
    *Elliptic PDE of Second Order*, Eq. 2.31) and |∇|B|| ≤ 3√3·sup|B|/d. With d = R/2
    and sup|B| beyond R/2 bounded by :func:`fringe.field.extents.field_bound_radius_m`, the pull
    per volume M_s·|∇|B|| is below ρg beyond R once sup|B| < ρg·R/(6√3·M_s).
    """
    from fringe.field.extents import field_bound_radius_m

    r = 4.0 * magnet.enclosing_radius_m
    for _ in range(200):
        t = mat.weight_per_volume_N_per_m3 * r / (6.0 * math.sqrt(3.0) * mat.saturation_A_per_m)
        if field_bound_radius_m(magnet, t) <= r / 2.0:
            return r
        r *= 1.25
    raise FringeInputError("`magnet` field bound did not converge (is a current infinite?)")


def _outermost(f, s_start: float, s_stop: float) -> float:
    """Outermost s in (0, s_start] with f(s) ≥ 1 (f vectorised); 0.0 if none."""
    n = max(2, math.ceil(math.log(s_start / s_stop) / math.log(_GRID_RATIO)) + 1)
    grid = np.append(np.geomspace(s_start, s_stop, n), 0.0)
    vals = np.nan_to_num(f(grid), nan=-np.inf)
    above = np.flatnonzero(vals >= 1.0)
    if above.size == 0:
        return 0.0
    k = int(above[0])
    if k == 0:
        raise FringeInputError(f"attraction bound failed: pull ≥ weight at the start "
                               f"distance {s_start:.3g} m")

    def g(x: float) -> float:
        v = float(f(np.array([x]))[0])
        return (v if math.isfinite(v) else 0.0) - 1.0

    return float(brentq(g, grid[k], grid[k - 1], xtol=_XTOL_M, rtol=1e-10))


def attraction_extents_m(magnet: Magnet, obj: str | ObjectKind = DEFAULT_OBJECT,
                         mat: str | SteelMaterial = DEFAULT_MATERIAL, *,
                         step_m: float = DEFAULT_STEP_M, method: str = "direct"
                         ) -> tuple[float, float]:
    """Axial and radial extent in m of one magnet's attraction zone.

    Parameters
    ----------
    magnet : Magnet
        Evaluated alone (site position and axis are irrelevant to the result).
    obj, mat : object kind and material; the conservative ``"any-shape"`` by default.
    step_m : float
        Finite-difference step for the centre-plane gradient, m.
    method : str
        Field method for the centre-plane differences (reference ``"direct"`` sum by
        default: a few thousand points only).

    Returns
    -------
    axial_extent_m, radial_extent_m : float
        Largest distance from the centre along the axis (either direction; closed-form
        field and gradient) and perpendicular to it in the centre plane (central
        differences of :func:`fringe.field.evaluate.field_at`) at which the pull reaches the
        weight: the outermost crossing, refined to 0.1 mm by Brent's method. 0.0 when
        the pull never reaches the weight on that line.

    References
    ----------
    Montgomery 1969 (axial field); Gilbarg & Trudinger Eq. 2.31 (start bound);
    Brent, *Algorithms for Minimization without Derivatives* (1973), ch. 4.
    """
    o, m = object_kind(obj), material(mat)
    if not magnet.coils:
        return 0.0, 0.0
    local = magnet.moved(center_m=(0.0, 0.0, 0.0), axis=(0.0, 0.0, 1.0))
    s_start = _start_distance_m(local, m)
    s_stop = max(1e-3, 0.01 * local.enclosing_radius_m)

    axial = 0.0
    for sg in (1.0, -1.0):
        def f_ax(s, sg=sg):
            z = sg * np.asarray(s, dtype=float)
            return pull_ratio(np.abs(axial_field_T(local, z)),
                              axial_gradient_T_per_m(local, z), o, m)
        axial = max(axial, _outermost(f_ax, s_start, s_stop))

    def f_rad(s):
        s = np.asarray(s, dtype=float)
        pts = np.stack([s, np.zeros_like(s), np.zeros_like(s)], axis=1)
        return attraction_at(local, pts, o, m, step_m=step_m, method=method).ratio

    radial = _outermost(f_rad, s_start, s_stop)
    return axial, radial


# -- maps -------------------------------------------------------------------------------

#: Maps evaluate the pull only within this multiple of each magnet's largest attraction
#: extent from its centre (farther, the ratio is set to 0 without evaluation). For the
#: demo magnet a polar sweep finds the zone's farthest point on the axis itself
#: (``tests/test_attraction.py::test_zone_reach_is_on_axis_or_centre_plane``), so 1.5
#: leaves a wide margin for oblique lobes.
REACH_FACTOR: float = 1.5


def attraction_reach_m(magnet: Magnet, obj: str | ObjectKind = DEFAULT_OBJECT,
                       mat: str | SteelMaterial = DEFAULT_MATERIAL) -> float:
    """Distance in m from ``magnet``'s centre beyond which maps skip evaluation:
    :data:`REACH_FACTOR` × the larger of :func:`attraction_extents_m`."""
    return REACH_FACTOR * max(_extents_cached(magnet, object_kind(obj), material(mat)))


@functools.lru_cache(maxsize=32)
def _extents_cached(magnet: Magnet, obj: ObjectKind, mat: SteelMaterial) -> tuple[float, float]:
    return attraction_extents_m(magnet, obj, mat)
