"""Moving steel at a site: the disturbance of a magnet's isocentre field along a path.

:func:`path_disturbance` moves a steel sphere (:mod:`fringe.physics.disturbance`) through
given points of a site and returns the change of the field at one magnet's isocentre;
:func:`check_moving_steel` does it for every ``[[moving_steel]]`` path of a scenario and
gives each a verdict against its ``limit_ppm``. Which magnet a path disturbs: the magnet
whose centre is nearest the path (docs/disturbance.md).
"""

from __future__ import annotations

import math
import warnings
from dataclasses import dataclass

import numpy as np

from fringe.field.evaluate import field_at
from fringe.model.errors import ArgumentError, FringeWarning, ScenarioError, must_be
from fringe.model.steel import MovingSteel
from fringe.model.verdict import Verdict
from fringe.physics.disturbance import disturbance_ppm, disturbance_T

__all__ = ["PathDisturbance", "MovingSteelCheck", "DEFAULT_STEPS", "PATH_SPACING_M",
           "NO_BACKGROUND_WARNING", "segment_points", "path_points", "background_T",
           "center_field_T", "path_disturbance", "nearest_magnet", "check_moving_steel"]

#: Default number of points along a ``fringe disturbance`` path (ends included).
DEFAULT_STEPS: int = 21
#: Largest spacing of the points sampled along a ``[[moving_steel]]`` path, m. The
#: disturbance of a sphere varies over the distance to the isocentre (metres); 0.1 m
#: places the largest value within a fraction of a percent (common practice, no source).
PATH_SPACING_M: float = 0.1

#: Said when no background field is given.
NO_BACKGROUND_WARNING: str = (
    "no background field given: the steel is magnetised by the magnets' field alone. The "
    "Earth's 25–65 µT magnetises a lift car as strongly as a shielded magnet's field does "
    "a few metres out; give the site's background (`[site] background_field_uT`)")


@dataclass(frozen=True)
class PathDisturbance:
    """The change of one magnet's isocentre field as a steel sphere moves along points.

    Attributes
    ----------
    magnet : str
    mass_kg : float
    center_field_T : float
        The site's field at the magnet's centre along its axis, T.
    background_T : tuple of 3 float
        The uniform background field used, T.
    positions_m : ndarray, shape (N, 3)
    delta_B_T : ndarray, shape (N,)
        ΔB along the magnet's axis at its centre, T (signed).
    delta_B_ppm : ndarray, shape (N,)
        10⁶·ΔB/B_c.
    """

    magnet: str
    mass_kg: float
    center_field_T: float
    background_T: tuple[float, float, float]
    positions_m: np.ndarray
    delta_B_T: np.ndarray
    delta_B_ppm: np.ndarray

    @property
    def worst_index(self) -> int:
        """Index of the point of largest |ΔB|."""
        return int(np.argmax(np.abs(self.delta_B_ppm)))

    @property
    def max_abs_delta_B_ppm(self) -> float:
        """Largest |ΔB| along the path, ppm."""
        return float(np.max(np.abs(self.delta_B_ppm)))


@dataclass(frozen=True)
class MovingSteelCheck:
    """A ``[[moving_steel]]`` path checked against its limit.

    Attributes
    ----------
    name : str
    limit_ppm : float or None
    verdict : Verdict or None
        ``exceeds`` when the largest |ΔB| reaches the limit (≥), ``within`` below it,
        None when the path has no limit (nothing is checked).
    disturbance : PathDisturbance
    """

    name: str
    limit_ppm: float | None
    verdict: Verdict | None
    disturbance: PathDisturbance

    @property
    def max_abs_delta_B_ppm(self) -> float:
        return self.disturbance.max_abs_delta_B_ppm


def segment_points(start_m, end_m, steps: int = DEFAULT_STEPS) -> np.ndarray:
    """``steps`` points evenly spaced from ``start_m`` to ``end_m`` (both included), m."""
    if isinstance(steps, bool) or not isinstance(steps, (int, np.integer)) or steps < 2:
        raise ArgumentError(must_be("steps", "a whole number ≥ 2", steps), "steps")
    a, b = (np.asarray(v, dtype=float).reshape(3) for v in (start_m, end_m))
    return a + np.linspace(0.0, 1.0, int(steps))[:, None] * (b - a)


def path_points(path_m, spacing_m: float = PATH_SPACING_M) -> np.ndarray:
    """Points along a polyline, at most ``spacing_m`` apart, every vertex included."""
    p = np.asarray(path_m, dtype=float).reshape(-1, 3)
    out = [p[:1]]
    for a, b in zip(p[:-1], p[1:], strict=True):
        n = max(1, math.ceil(float(np.linalg.norm(b - a)) / spacing_m))
        out.append(a + np.linspace(0.0, 1.0, n + 1)[1:, None] * (b - a))
    return np.concatenate(out)


def background_T(site, background_uT=None) -> tuple[float, float, float] | None:
    """The background field in T: ``background_uT`` if given, else the site's
    ``background_field_uT``, else None."""
    v = background_uT if background_uT is not None else site.background_field_uT
    if v is None:
        return None
    vals = tuple(float(x) for x in v)
    if len(vals) != 3 or not all(math.isfinite(x) for x in vals):
        raise ArgumentError(must_be("background_uT", "3 finite numbers in µT", v),
                            "background_uT")
    return (vals[0] * 1e-6, vals[1] * 1e-6, vals[2] * 1e-6)


def center_field_T(site, magnet) -> float:
    """The site's field at ``magnet``'s centre along its axis, T."""
    a = np.asarray(magnet.axis, dtype=float)
    b = field_at(site, np.asarray([magnet.center_m], dtype=float))[0]
    return float(b @ (a / np.linalg.norm(a)))


def path_disturbance(site, magnet_name: str, mass_kg: float, positions_m,
                     background_uT=None) -> PathDisturbance:
    """The disturbance of ``magnet_name``'s isocentre field by a steel sphere at points.

    Parameters
    ----------
    site : Site
    magnet_name : str
    mass_kg : float
        Mass of the steel, kg (> 0).
    positions_m : array_like, shape (N, 3)
        Centres of the sphere, site frame, m.
    background_uT : sequence of 3 float, optional
        Uniform background field, µT; default the site's ``background_field_uT``, else
        zero with a :class:`FringeWarning`.

    Returns
    -------
    PathDisturbance
    """
    magnet = site.magnet(magnet_name)
    if isinstance(mass_kg, bool) or not (isinstance(mass_kg, (int, float))
                                         and math.isfinite(mass_kg) and mass_kg > 0):
        raise ArgumentError(must_be("mass_kg", "a positive number of kg", mass_kg), "mass_kg")
    pts = np.atleast_2d(np.asarray(positions_m, dtype=float))
    if not np.all(np.isfinite(pts)):
        raise ArgumentError(must_be("positions_m", "finite numbers", "NaN or inf"),
                            "positions_m")
    if np.any(np.linalg.norm(pts - np.asarray(magnet.center_m), axis=1) < 1e-9):
        raise ArgumentError(must_be("positions_m", "points away from the magnet's centre",
                                    list(magnet.center_m)), "positions_m")
    bg = background_T(site, background_uT)
    if bg is None:
        warnings.warn(NO_BACKGROUND_WARNING, FringeWarning, stacklevel=2)
        bg = (0.0, 0.0, 0.0)
    bc = center_field_T(site, magnet)
    if bc == 0.0:
        raise ScenarioError(f"magnet {magnet.name!r} has no field at its centre; "
                            "a disturbance in ppm needs one", site.source_file or None)
    applied = field_at(site, pts) + np.asarray(bg)
    dB = disturbance_T(pts, applied, magnet.center_m, magnet.axis, float(mass_kg))
    return PathDisturbance(magnet.name, float(mass_kg), bc, bg, pts, dB,
                           disturbance_ppm(dB, bc))


def nearest_magnet(site, path_m) -> str:
    """Name of the magnet whose centre is nearest the polyline ``path_m``."""
    p = np.asarray(path_m, dtype=float).reshape(-1, 3)
    best, name = math.inf, ""
    for m in site.magnets:
        c = np.asarray(m.center_m, dtype=float)
        for a, b in zip(p[:-1], p[1:], strict=True):
            d = b - a
            t = 0.0 if not d.any() else float(np.clip((c - a) @ d / (d @ d), 0.0, 1.0))
            dist = float(np.linalg.norm(a + t * d - c))
            if dist < best:
                best, name = dist, m.name
    return name


def check_moving_steel(site, spacing_m: float = PATH_SPACING_M) -> tuple[MovingSteelCheck, ...]:
    """Every ``[[moving_steel]]`` path of ``site``, sampled at most ``spacing_m`` apart,
    against the magnet nearest it; a verdict against its ``limit_ppm``.

    Warns once (:data:`NO_BACKGROUND_WARNING`) when the site has moving steel and no
    background field.
    """
    items: tuple[MovingSteel, ...] = tuple(site.moving_steel)
    if not items or not site.magnets:
        return ()
    out = []
    with warnings.catch_warnings():
        if site.background_field_uT is None:
            warnings.warn(NO_BACKGROUND_WARNING, FringeWarning, stacklevel=2)
        warnings.simplefilter("ignore", FringeWarning)  # said once above, not per path
        for ms in items:
            d = path_disturbance(site, nearest_magnet(site, ms.path_m), ms.mass_kg,
                                 path_points(ms.path_m, spacing_m))
            verdict = None
            if ms.limit_ppm is not None:
                verdict = (Verdict.EXCEEDS if d.max_abs_delta_B_ppm >= ms.limit_ppm
                           else Verdict.WITHIN)
            out.append(MovingSteelCheck(ms.name, ms.limit_ppm, verdict, d))
    return tuple(out)
