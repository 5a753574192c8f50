"""Current sheets: the source model every field evaluation of a magnet sums over.

For field evaluation a coil is replaced by ``n`` coaxial cylindrical current
sheets at Gauss-Legendre radii across the winding thickness. A sheet of radius r,
length h and surface current K (A/m) has exactly the field of an axially
magnetised cylinder of polarisation ``mu0 * K`` (equivalent-current theorem;
Jackson, *Classical Electrodynamics*, 3rd ed., Sec. 5.8), which magpylib evaluates
in closed form (Derby & Olbert, Am. J. Phys. 78, 229 (2010)). The axial
integral is therefore exact; only the radial integral is a quadrature.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from fringe.field.quadrature_rules import gauss_legendre_panels
from fringe.model.constants import MU0_T_M_PER_A
from fringe.model.magnet import Magnet

__all__ = ["CurrentSheets", "current_sheets", "magpylib_sources", "DEFAULT_RADIAL_ORDER"]

#: Gauss-Legendre nodes per radial panel (see :func:`current_sheets`). The
#: convergence test ``tests/test_field_core.py::test_radial_quadrature_converges``
#: shows the relative error outside the windings is below 1e-4 with this order.
DEFAULT_RADIAL_ORDER: int = 8


@dataclass(frozen=True)
class CurrentSheets:
    """Coaxial cylindrical current sheets standing in for a magnet's windings.

    Arrays of shape (S,): ``radius_m``, ``z_center_m``, ``half_length_m`` and the
    equivalent axial ``polarization_T`` (= μ₀K, K the sheet current in A/m).
    """

    radius_m: np.ndarray
    z_center_m: np.ndarray
    half_length_m: np.ndarray
    polarization_T: np.ndarray


def current_sheets(magnet: Magnet, order: int = DEFAULT_RADIAL_ORDER,
                   panels: int | None = None) -> CurrentSheets:
    """Replace each coil by current sheets at composite Gauss-Legendre radii.

    Parameters
    ----------
    magnet : Magnet
    order : int
        Gauss-Legendre nodes per radial panel.
    panels : int, optional
        Panels across each winding; by default ``ceil(thickness / (length/2))`` so
        that panels stay no thicker than half the coil length (thick, short coils
        get more), at least 1.

    Returns
    -------
    CurrentSheets
        Sheet k at radius rₖ carries K = J·wₖ (A/m), so Σₖ Kₖ = J·(r_o − r_i):
        the composite quadrature of ∫ J dr (Abramowitz & Stegun 25.4.29).
    """
    rs, zc, hl, pol = [], [], [], []
    for c in magnet.coils:
        n_p = panels if panels is not None else max(1, math.ceil(c.thickness_m / (c.length_m / 2)))
        nodes, weights = gauss_legendre_panels(c.r_inner_m, c.r_outer_m, order, n_p)
        rs.append(nodes)
        zc.append(np.full(nodes.size, (c.z_min_m + c.z_max_m) / 2.0))
        hl.append(np.full(nodes.size, c.length_m / 2.0))
        pol.append(MU0_T_M_PER_A * c.current_density_A_per_m2 * weights)
    def cat(xs: list) -> np.ndarray:
        return np.concatenate(xs) if xs else np.zeros(0)

    return CurrentSheets(cat(rs), cat(zc), cat(hl), cat(pol))


def magpylib_sources(magnet: Magnet, order: int = DEFAULT_RADIAL_ORDER,
                     panels: int | None = None) -> list:
    """The magnet as a :class:`magpylib.Collection` of axially magnetised cylinders.

    Each current sheet of :func:`current_sheets` becomes a ``magpylib.magnet.Cylinder``
    of diameter 2r, height 2h and polarisation (0, 0, μ₀K), placed at the sheet centre
    and turned with the magnet. ``magpylib.getB(collection, points)`` is then the
    direct magpylib sum used as the reference by tests and benchmarks.
    """
    import magpylib as magpy

    s = current_sheets(magnet, order, panels)
    col = magpy.Collection()
    centre = np.asarray(magnet.center_m)
    for r, z0, h, p in zip(s.radius_m, s.z_center_m, s.half_length_m, s.polarization_T,
                           strict=True):
        pos = centre + magnet.rotation.apply([0.0, 0.0, z0])
        col.add(magpy.magnet.Cylinder(position=pos, orientation=magnet.rotation,
                                      dimension=(2 * r, 2 * h), polarization=(0, 0, p)))
    return col
