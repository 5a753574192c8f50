"""Impossible geometry: magnets whose cryostats intersect, coils that overlap.

Pure checks on the model, no I/O; the scenario reader (:mod:`fringe.io.scenario`) turns
them into an error (magnets) or a warning (coils of one magnet).

Two magnets intersect when their cryostat envelopes
(:attr:`fringe.model.magnet.Magnet.envelope`, annular cylinders each in its own, possibly
tilted, frame) share a point. Every envelope holds its magnet's windings, so windings
that intersect are caught with their envelopes. The test:

1. *Bounding spheres.* Each envelope lies inside a sphere about its magnet's centre
   (:attr:`fringe.model.magnet.Envelope.enclosing_radius_m`); if the centres are farther
   apart than the two radii plus the tolerance, the magnets are apart.
2. *Surface samples.* Otherwise points are laid on the whole surface of each envelope
   (outer and inner cylinder, both end annuli) so that every surface point lies within
   ``h`` = :data:`OVERLAP_TOLERANCE_M` of a sample, and each sample is tested against the
   other envelope grown by ``h`` on every side.

The method never misses an intersection: if two closed connected solids A and B meet,
either the surface of A meets B, or B lies inside A and the surface of B meets A; the
surface point concerned is within ``h`` of a sample, which then lies in the other
envelope grown by ``h``. It may refuse envelopes that do not touch but come closer than
about ``h·√2`` (1.4 cm); no two cryostats stand that close (common practice, no source).
"""

from __future__ import annotations

import math
from collections.abc import Sequence

import numpy as np

from fringe.model.magnet import Envelope, Magnet

__all__ = ["OVERLAP_TOLERANCE_M", "envelope_surface_points", "magnets_intersect",
           "intersecting_magnets", "overlapping_coils"]

#: Sample spacing and containment margin of the envelope test, m: every point of an
#: envelope's surface lies within this distance of a sample.
OVERLAP_TOLERANCE_M: float = 0.01


def _ring(rho_m: float, z_m: np.ndarray, h: float) -> np.ndarray:
    """Points on the cylinder of radius ``rho_m`` at heights ``z_m``, arc spacing ≤ h."""
    n = max(3, math.ceil(2 * math.pi * rho_m / h))
    phi = np.linspace(0.0, 2 * math.pi, n, endpoint=False)
    P, Z = np.meshgrid(phi, z_m)
    return np.column_stack([rho_m * np.cos(P).ravel(), rho_m * np.sin(P).ravel(), Z.ravel()])


def envelope_surface_points(env: Envelope, spacing_m: float = OVERLAP_TOLERANCE_M
                            ) -> np.ndarray:
    """Points (N, 3) in the magnet's local frame on the whole surface of ``env``.

    Every surface point lies within ``spacing_m`` of a sample: on the cylinders the
    samples form a grid of arc and axial steps ≤ ``spacing_m`` (nearest sample within
    ``spacing_m/√2``); on the end annuli, rings ≤ ``spacing_m`` apart each sampled at arc
    steps ≤ ``spacing_m`` (nearest ring within ``spacing_m/2``, then nearest sample on it
    within ``spacing_m/2``).
    """
    h = float(spacing_m)
    nz = max(2, math.ceil((env.z_max_m - env.z_min_m) / h) + 1)
    z = np.linspace(env.z_min_m, env.z_max_m, nz)
    parts = [_ring(env.r_outer_m, z, h)]
    if env.r_inner_m > 0:
        parts.append(_ring(env.r_inner_m, z, h))
    nr = max(2, math.ceil((env.r_outer_m - env.r_inner_m) / h) + 1)
    caps = np.array([env.z_min_m, env.z_max_m])
    for rho in np.linspace(env.r_inner_m, env.r_outer_m, nr):
        if rho > 0:
            parts.append(_ring(float(rho), caps, h))
        else:
            parts.append(np.array([[0.0, 0.0, env.z_min_m], [0.0, 0.0, env.z_max_m]]))
    return np.concatenate(parts)


def _samples_inside(a: Magnet, b: Magnet, h: float) -> bool:
    """Whether a surface sample of a's envelope lies in b's envelope grown by h."""
    pts = a.to_site(envelope_surface_points(a.envelope, h))
    return bool(b.in_envelope(pts, margin_m=h).any())


def magnets_intersect(a: Magnet, b: Magnet, tolerance_m: float = OVERLAP_TOLERANCE_M) -> bool:
    """Whether the cryostat envelopes (and so possibly the windings) of two magnets meet.

    Conservative (see the module notes): True for every pair that intersects, and for
    pairs closer than about ``tolerance_m·√2``.
    """
    gap = float(np.linalg.norm(np.subtract(a.center_m, b.center_m)))
    if gap > a.envelope.enclosing_radius_m + b.envelope.enclosing_radius_m + 2 * tolerance_m:
        return False
    return _samples_inside(a, b, tolerance_m) or _samples_inside(b, a, tolerance_m)


def intersecting_magnets(magnets: Sequence[Magnet],
                         tolerance_m: float = OVERLAP_TOLERANCE_M) -> list[tuple[int, int]]:
    """Index pairs (i < j) of magnets whose envelopes meet (:func:`magnets_intersect`)."""
    mags = list(magnets)
    return [(i, j) for i in range(len(mags)) for j in range(i + 1, len(mags))
            if magnets_intersect(mags[i], mags[j], tolerance_m)]


def overlapping_coils(magnet: Magnet) -> list[tuple[int, int]]:
    """Index pairs (i < j) of coils of one magnet whose (r, z) rectangles overlap with
    positive area (touching edges do not count)."""
    cs = magnet.coils
    out = []
    for i in range(len(cs)):
        for j in range(i + 1, len(cs)):
            a, b = cs[i], cs[j]
            dr = min(a.r_outer_m, b.r_outer_m) - max(a.r_inner_m, b.r_inner_m)
            dz = min(a.z_max_m, b.z_max_m) - max(a.z_min_m, b.z_min_m)
            if dr > 0 and dz > 0:
                out.append((i, j))
    return out
