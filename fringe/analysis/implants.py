"""Implant figures of a site: |B|, |∇|B|| and |B|·|∇|B|| where people can be.

For each magnet, a map on the plane through its axis (the section an MR safety officer
reads implant labels against), the largest accessible values (outside the cryostat
envelope; the bore is accessible) and, for each ``[[implant_condition]]``, where its
limits hold. Returns data; drawing is :mod:`fringe.render.implants`. See
docs/implants.md.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from fringe.analysis.zones import superlevel_polygons
from fringe.field.evaluate import as_magnets, field_gradient_at, grad_abs_B_T_per_m
from fringe.model.constants import DEFAULT_GRADIENT_LINES_T_PER_M
from fringe.model.magnet import Magnet
from fringe.model.site import ImplantCondition

__all__ = ["DEFAULT_GRADIENT_LEVELS_T_PER_M", "ImplantMap", "AccessibleMaximum",
           "ConditionResult", "SiteImplants", "envelope_rz", "implant_map",
           "accessible_maxima", "check_condition", "site_implants"]

#: Lines of |∇|B|| drawn on the implant sheet, T/m (the model's default; ``[plan]
#: gradient_lines_T_per_m`` overrides it).
DEFAULT_GRADIENT_LEVELS_T_PER_M: tuple[float, ...] = DEFAULT_GRADIENT_LINES_T_PER_M

#: Grid cells per half-width of an implant map.
_CELLS_PER_HALF_WIDTH = 120

#: Samples per side of the envelope's outline (the accessible surface closest to the
#: windings, where |B| — subharmonic outside the sources — takes its accessible maximum).
_SURFACE_SAMPLES = 400


def envelope_rz(magnet: Magnet) -> tuple[float, float, float, float]:
    """The cryostat envelope ``(r_inner_m, r_outer_m, z_min_m, z_max_m)`` in the magnet frame
    (:attr:`fringe.model.magnet.Magnet.envelope`: the one given, or the default grown from
    the windings); ``r_inner_m`` is 0 for a bore too narrow for a person."""
    env = magnet.envelope
    return (float(env.closed_inner_radius_m), float(env.r_outer_m), float(env.z_min_m),
            float(env.z_max_m))


def _frame(magnet: Magnet) -> tuple[np.ndarray, np.ndarray]:
    """Unit vectors of the map plane: along the bore axis, and across it (upward where the
    axis is not vertical, else site +x)."""
    a = np.asarray(magnet.axis, dtype=float)
    a = a / np.linalg.norm(a)
    up = np.array([0.0, 0.0, 1.0]) - a[2] * a
    if np.linalg.norm(up) < 1e-9:
        up = np.array([1.0, 0.0, 0.0]) - a[0] * a
    return a, up / np.linalg.norm(up)


@dataclass(frozen=True)
class ImplantMap:
    """|B|, |∇|B|| and |B|·|∇|B|| on the plane through one magnet's axis.

    Arrays have shape (len(v_m), len(u_m)); ``accessible`` is False inside the cryostat
    envelope, where the other arrays are NaN. The surface samples ``surface_*`` lie on
    the envelope's outline in the same plane (the accessible points nearest the windings).
    """

    magnet: str
    origin_m: np.ndarray
    along: np.ndarray
    across: np.ndarray
    envelope_rz_m: tuple[float, float, float, float]
    u_m: np.ndarray
    v_m: np.ndarray
    field_T: np.ndarray
    grad_T_per_m: np.ndarray
    force_product_T2_per_m: np.ndarray
    accessible: np.ndarray
    surface_points_m: np.ndarray
    surface_field_T: np.ndarray
    surface_grad_T_per_m: np.ndarray

    def site_point(self, u: float, v: float) -> np.ndarray:
        """The site point (m) at map coordinates ``(u, v)``."""
        return self.origin_m + u * self.along + v * self.across


def _figures(site, pts: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """|B| (T) and |∇|B|| (T/m) at site points (N, 3) (a Site: its solved steel counts)."""
    B, J = field_gradient_at(site, pts)
    return np.linalg.norm(B, axis=1), np.linalg.norm(grad_abs_B_T_per_m(B, J), axis=1)


def _surface_uv(env) -> np.ndarray:
    """Points (u, v) along the envelope outline on both sides of the axis, (M, 2)."""
    r_in, r_out, z0, z1 = env
    t = np.linspace(0.0, 1.0, _SURFACE_SAMPLES)
    radii = (r_in, r_out) if r_in > 0 else (r_out,)  # a closed bore has no inner surface
    sides = [np.column_stack([z0 + (z1 - z0) * t, np.full_like(t, r)]) for r in radii]
    sides += [np.column_stack([np.full_like(t, z), r_in + (r_out - r_in) * t]) for z in (z0, z1)]
    uv = np.concatenate(sides)
    return np.concatenate([uv, uv * [1.0, -1.0]])


def implant_map(site, magnet: Magnet, levels_T_per_m=DEFAULT_GRADIENT_LEVELS_T_PER_M, *,
                half_width_m: float | None = None) -> ImplantMap:
    """The implant figures of all magnets on the plane through ``magnet``'s axis.

    Parameters
    ----------
    site : Site, Magnet or sequence of Magnet
        Every magnet whose field adds up.
    magnet : Magnet
        The magnet whose axis and centre span the map.
    levels_T_per_m : sequence of float
        Gradient lines to be drawn; the window grows (doubling, at most three times)
        until the lowest lies inside it.
    half_width_m : float, optional
        Fixed half-width of the square window, m (default: adaptive, from 1.5× the
        envelope's size).

    Returns
    -------
    ImplantMap
    """
    as_magnets(site)  # checked: a Site, a Magnet or magnets
    env = envelope_rz(magnet)
    along, across = _frame(magnet)
    origin = np.asarray(magnet.center_m, dtype=float)
    lowest = min(levels_T_per_m) if len(levels_T_per_m) else 0.0
    half = half_width_m or 1.5 * max(env[1], abs(env[2]), abs(env[3]))
    for _ in range(4):
        step = half / _CELLS_PER_HALF_WIDTH
        u = np.arange(-_CELLS_PER_HALF_WIDTH, _CELLS_PER_HALF_WIDTH + 1) * step
        U, V = np.meshgrid(u, u, indexing="xy")
        inside = magnet.envelope.contains_local(np.abs(V), U)  # ρ = |v|, z = u
        pts = origin + U[..., None] * along + V[..., None] * across
        b = np.full(U.shape, np.nan)
        g = np.full(U.shape, np.nan)
        bb, gg = _figures(site, pts[~inside])
        b[~inside], g[~inside] = bb, gg
        edge = np.concatenate([g[0], g[-1], g[:, 0], g[:, -1]])
        if half_width_m or not np.any(edge >= lowest):
            break
        half *= 2.0
    suv = _surface_uv(env)
    spts = origin + suv[:, :1] * along + suv[:, 1:] * across
    sb, sg = _figures(site, spts)
    return ImplantMap(magnet.name, origin, along, across, env, u, u.copy(), b, g, b * g,
                      ~inside, spts, sb, sg)


@dataclass(frozen=True)
class AccessibleMaximum:
    """The largest value of one quantity outside the cryostat envelope, and where."""

    value: float
    point_m: tuple[float, float, float]

    def to_dict(self) -> dict:
        return {"value": self.value, "point_m": list(self.point_m)}


def _candidates(m: ImplantMap) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Accessible sample points (N, 3) with |B| and |∇|B||: map nodes and the surface."""
    pts = m.origin_m + (m.u_m[None, :, None] * m.along
                        + m.v_m[:, None, None] * m.across)
    ok = m.accessible & np.isfinite(m.field_T)
    return (np.concatenate([pts[ok], m.surface_points_m]),
            np.concatenate([m.field_T[ok], m.surface_field_T]),
            np.concatenate([m.grad_T_per_m[ok], m.surface_grad_T_per_m]))


def accessible_maxima(m: ImplantMap) -> dict[str, AccessibleMaximum]:
    """Largest |B|, |∇|B|| and |B|·|∇|B|| over the accessible samples of ``m``.

    Keys: ``field_T``, ``grad_abs_B_T_per_m``, ``force_product_T2_per_m``. The samples
    are the map nodes outside the envelope and points on its outline; |B| is
    subharmonic where there are no sources, so its accessible maximum lies on that
    outline (to the spacing of its samples).
    """
    pts, b, g = _candidates(m)
    out = {}
    for key, vals in (("field_T", b), ("grad_abs_B_T_per_m", g),
                      ("force_product_T2_per_m", b * g)):
        i = int(np.nanargmax(vals))
        out[key] = AccessibleMaximum(float(vals[i]), tuple(float(x) for x in pts[i]))
    return out


def _ratio(cond: ImplantCondition, b, g, scale: float = 1.0) -> np.ndarray:
    """The largest of value/limit over the condition's limits (≤ 1 where it holds), for
    the field scaled by ``scale`` (|B| and |∇|B|| scale with it, the force product with
    its square)."""
    r = scale * np.asarray(b, dtype=float) / cond.max_field_T
    if cond.max_grad_abs_B_T_per_m is not None:
        r = np.fmax(r, scale * np.asarray(g, dtype=float) / cond.max_grad_abs_B_T_per_m)
    if cond.max_force_product_T2_per_m is not None:
        r = np.fmax(r, scale ** 2 * np.asarray(b, dtype=float) * np.asarray(g, dtype=float)
                    / cond.max_force_product_T2_per_m)
    return r


@dataclass(frozen=True)
class ConditionResult:
    """Where one implant condition holds, over every magnet's map.

    ``holds_at_isocentre``: at every magnet's centre; ``holds_everywhere_accessible``: at
    every accessible sample; ``worst_point_m``: the accessible sample with the largest
    ratio value/limit (``worst_ratio``, > 1 where a limit is passed); ``regions``: per
    magnet, the map-plane region (u, v in m) where a limit is passed (empty if none).
    """

    condition: ImplantCondition
    holds_at_isocentre: bool
    holds_everywhere_accessible: bool
    worst_point_m: tuple[float, float, float]
    worst_ratio: float
    regions: dict
    #: Holds everywhere accessible, but not for a field (1 + u) times the model's, u the
    #: plan's field uncertainty (the rule of the verdict ``marginal``; docs/uncertainty.md).
    marginal: bool = False

    def to_dict(self) -> dict:
        return {"name": self.condition.name, "holds_at_isocentre": self.holds_at_isocentre,
                "holds_everywhere_accessible": self.holds_everywhere_accessible,
                "worst_point_m": list(self.worst_point_m), "worst_ratio": self.worst_ratio,
                "marginal": self.marginal}


def check_condition(cond: ImplantCondition, maps, centres_figures,
                    uncertainty: float = 0.0) -> ConditionResult:
    """Evaluate ``cond`` on the maps and at the isocentres.

    Parameters
    ----------
    cond : ImplantCondition
    maps : sequence of ImplantMap
    centres_figures : (|B| (M,), |∇|B|| (M,))
        The figures at each magnet's centre.
    uncertainty : float
        Field uncertainty u: ``marginal`` when the condition holds everywhere accessible
        but not for the field × (1 + u).
    """
    worst, worst_pt, regions = -math.inf, (math.nan,) * 3, {}
    worst_up = -math.inf
    for m in maps:
        pts, b, g = _candidates(m)
        r = _ratio(cond, b, g)
        worst_up = max(worst_up, float(np.nanmax(_ratio(cond, b, g, 1.0 + uncertainty))))
        i = int(np.nanargmax(r))
        if r[i] > worst:
            worst, worst_pt = float(r[i]), tuple(float(x) for x in pts[i])
        grid = np.where(m.accessible, _ratio(cond, m.field_T, m.grad_T_per_m), np.nan)
        regions[m.magnet] = superlevel_polygons(m.u_m, m.v_m, grid, 1.0)
    at_centres = bool(np.all(_ratio(cond, *centres_figures) <= 1.0))
    return ConditionResult(cond, at_centres, worst <= 1.0, worst_pt, worst, regions,
                           bool(worst <= 1.0 < worst_up))


@dataclass(frozen=True)
class SiteImplants:
    """Implant maps of every magnet, their accessible maxima and the conditions' results."""

    maps: tuple[ImplantMap, ...]
    maxima: dict
    conditions: tuple[ConditionResult, ...]
    levels_T_per_m: tuple[float, ...]


def site_implants(site, levels_T_per_m=DEFAULT_GRADIENT_LEVELS_T_PER_M) -> SiteImplants:
    """Maps, accessible maxima and implant-condition results for every magnet of ``site``."""
    mags = as_magnets(site)
    maps = tuple(implant_map(site, m, levels_T_per_m) for m in mags)
    maxima = {m.magnet: accessible_maxima(m) for m in maps}
    centres = np.array([m.center_m for m in mags], dtype=float).reshape(-1, 3)
    figs = _figures(site, centres) if len(mags) else (np.zeros(0), np.zeros(0))
    plan = getattr(site, "plan", None)
    u = getattr(plan, "field_uncertainty", 0.0) if plan is not None else 0.0
    conds = tuple(check_condition(c, maps, figs, u)
                  for c in getattr(site, "implant_conditions", ()))
    return SiteImplants(maps, maxima, conds, tuple(float(x) for x in levels_T_per_m))
