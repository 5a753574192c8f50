"""Composite Gauss–Legendre rules: the one panel rule every quadrature in fringe uses.

On each panel [e_k, e_{k+1}] the ``order``-point Gauss–Legendre rule of [−1, 1]
(Abramowitz & Stegun 25.4.29) is mapped affinely: nodes m_k + h_k x_i, weights h_k w_i,
with m_k the panel midpoint and h_k its half-length. The rule is exact for polynomials of
degree 2·order − 1 on every panel.
"""

from __future__ import annotations

import numpy as np

__all__ = ["composite_rule", "gauss_legendre_panels"]


def composite_rule(edges, order: int) -> tuple[np.ndarray, np.ndarray]:
    """Nodes and weights of the composite Gauss–Legendre rule over panels ``edges``.

    Parameters
    ----------
    edges : array_like, shape (P + 1,)
        Panel edges, in increasing order (any unit).
    order : int
        Gauss–Legendre nodes per panel.

    Returns
    -------
    nodes, weights : ndarray, shape (P · order,)
        Panel by panel, nodes increasing within a panel.
    """
    e = np.asarray(edges, dtype=float)
    x, w = np.polynomial.legendre.leggauss(order)
    h = np.diff(e) / 2.0
    mid = (e[:-1] + e[1:]) / 2.0
    return (mid[:, None] + h[:, None] * x).ravel(), (h[:, None] * w).ravel()


def gauss_legendre_panels(a: float, b: float, order: int,
                          panels: int) -> tuple[np.ndarray, np.ndarray]:
    """Composite Gauss–Legendre rule on [a, b] with ``panels`` equal panels.

    Parameters
    ----------
    a, b : float
        Interval ends.
    order : int
        Gauss–Legendre nodes per panel.
    panels : int
        Number of equal panels.

    Returns
    -------
    nodes, weights : ndarray, shape (panels · order,)
    """
    return composite_rule(np.linspace(a, b, panels + 1), order)
