"""Angle quadratures for normal, field and diffuse incidence (Paris' formula).

The diffuse-field transmission coefficient is the power average
``tau_d = int tau(theta) sin(theta) cos(theta) dtheta / int sin(theta) cos(theta) dtheta``
over ``0 .. theta_max`` (Paris 1927; Vigran, Building Acoustics, 2008, sec. 6.4).
Substituting ``u = sin^2(theta)`` makes the weight uniform:
``tau_d = (1 / u_max) int_0^u_max tau(u) du``.

Coincidence makes ``tau(u)`` sharply peaked at ``u = (kB / k0)^2``, with a width
proportional to the loss factor. The quadrature therefore splits ``[0, u_max]`` at the
layers' sharp trace wavenumbers and grades the nodes geometrically towards each split
point (Gauss-Legendre in ``ln(distance)``), so a 1 % loss factor is resolved with a few
dozen nodes. Nodes and weights differ per frequency: arrays are (nf, n_nodes).
"""

from __future__ import annotations

import numpy as np

__all__ = ["INCIDENCE", "default_theta_max_deg", "paris_nodes"]

INCIDENCE = ("normal", "field", "diffuse")
_GRADING_FLOOR = 1e-7  # smallest distance to a split point, as a fraction of the half-panel


def default_theta_max_deg(incidence: str) -> float:
    """78 deg for field incidence (common practice), 90 for diffuse, 0 for normal."""
    return {"normal": 0.0, "field": 78.0, "diffuse": 90.0}[incidence]


def _graded_reference(n: int):
    """Fractions ``s`` in (0, 1] (distance from the graded end) and weights, sum 1."""
    x, w = np.polynomial.legendre.leggauss(n)
    lo = np.log(_GRADING_FLOOR)
    t = lo * (1 - x) / 2  # lo .. 0
    s = np.exp(t)
    ws = s * w * (-lo / 2)
    s = np.concatenate([[_GRADING_FLOOR / 2], s])
    ws = np.concatenate([[_GRADING_FLOOR], ws])
    return s, ws / ws.sum()


def _plain_reference(n: int):
    x, w = np.polynomial.legendre.leggauss(n)
    return (x + 1) / 2, w / 2


def paris_nodes(k0: np.ndarray, sharp_kt: np.ndarray | None, theta_max: float,
                n: int = 20):
    """Per-frequency angle nodes and weights for the Paris integral.

    Parameters
    ----------
    k0 : ndarray, shape (nf,)
        Wavenumber of the source-side air.
    sharp_kt : ndarray, shape (nf, p) or None
        Trace wavenumbers where tau is sharply peaked (split points).
    theta_max : float
        Limit angle in rad (pi/2 for diffuse incidence).
    n : int
        Gauss-Legendre nodes per half-panel; the convergence test doubles it.

    Returns
    -------
    theta, weight : ndarray, shape (nf, m)
        ``sum(weight * tau(theta), axis=1)`` is the Paris average; weights sum to 1.
    """
    k0 = np.asarray(k0, dtype=float)
    nf = k0.shape[0]
    umax = np.sin(theta_max) ** 2
    if sharp_kt is None or sharp_kt.shape[1] == 0:
        splits = np.empty((nf, 0))
    else:
        splits = np.sort(np.clip((sharp_kt / k0[:, None]) ** 2, 0.0, umax), axis=1)
    edges = np.concatenate([np.zeros((nf, 1)), splits, np.full((nf, 1), umax)], axis=1)
    sg, wg = _graded_reference(n)
    sp, wp = _plain_reference(n)
    nodes, weights = [], []
    npanel = edges.shape[1] - 1
    for k in range(npanel):  # loop over split points (layers), not frequencies
        lo, hi = edges[:, k:k + 1], edges[:, k + 1:k + 2]
        half = (hi - lo) / 2
        # grade towards split points, and towards grazing, where a heavy layer's tau
        # peaks with a width of order (2 rho c / omega m)^2
        for end, sign, graded in ((lo, 1.0, k > 0), (hi, -1.0, True)):
            s, w = (sg, wg) if graded else (sp, wp)
            nodes.append(end + sign * half * s)
            weights.append(half * w)
    u = np.concatenate(nodes, axis=1)
    w = np.concatenate(weights, axis=1) / umax
    return np.arcsin(np.sqrt(np.clip(u, 0.0, 1.0))), w
