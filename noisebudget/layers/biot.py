"""Biot's theory of a porous material with an elastic frame, with JCA pore air.

Time convention ``exp(+j omega t)``. The pore air's dynamic density and bulk modulus are
those of the Johnson-Champoux-Allard equivalent fluid (:mod:`.porous`); the frame is an
isotropic elastic solid whose material is much stiffer than the frame itself (a foam or a
fibre blanket: Biot's coefficients in the limit of an incompressible frame material).

Sources: M. A. Biot, J. Acoust. Soc. Am. 28 (1956) 168-191; J. F. Allard and N. Atalla,
Propagation of Sound in Porous Media, 2nd ed. 2009, ch. 6 (the equations below).
"""

from __future__ import annotations

import numpy as np

from .elastic import BiotElement

__all__ = ["biot_element", "biot_wavenumbers", "compressional_waves", "frame_modulus"]


def frame_modulus(youngs_modulus, poisson_ratio, loss_factor=0.0):
    """Shear modulus N and compressional modulus in vacuo ``P_hat = K_b + 4 N / 3``.

    ``N = E (1 + j eta) / (2 (1 + nu))``, ``K_b = 2 N (1 + nu) / (3 (1 - 2 nu))``;
    ``P_hat = E (1 + j eta) (1 - nu) / ((1 + nu) (1 - 2 nu))`` is the modulus of a
    compressional wave in the frame alone (Allard & Atalla 2009, ch. 6).
    """
    n = youngs_modulus * (1 + 1j * loss_factor) / (2 * (1 + poisson_ratio))
    kb = 2 * n * (1 + poisson_ratio) / (3 * (1 - 2 * poisson_ratio))
    return n, kb + 4 * n / 3


def biot_element(omega, rho_eq, k_eq, porosity, frame_density, youngs_modulus,
                 poisson_ratio, loss_factor, thickness, air) -> BiotElement:
    """Biot coefficients and dynamic densities from the equivalent fluid of the pores.

    Parameters
    ----------
    omega : ndarray
        Angular frequency.
    rho_eq, k_eq : complex ndarray
        Rigid-frame equivalent density and bulk modulus (JCA; ``rho_eq = rho / phi``,
        ``k_eq = K_f / phi``).
    porosity, frame_density, youngs_modulus, poisson_ratio, loss_factor, thickness : float
    air : Air

    Notes
    -----
    With ``alpha(omega) = phi rho_eq / rho0`` the dynamic tortuosity (Allard & Atalla
    2009, ch. 6, in JCA form)::

        rho12 = -phi rho0 (alpha - 1),  rho11 = rho1 - rho12,  rho22 = phi rho0 - rho12
        P = P_hat + (1 - phi)^2 K_f / phi,  Q = (1 - phi) K_f,  R = phi K_f

    with ``K_f = phi k_eq`` the bulk modulus of the pore air (ch. 6, frame
    material incompressible).
    """
    phi, rho0 = porosity, air.density
    rho12 = -phi * (phi * rho_eq - rho0)
    rho11 = frame_density - rho12
    rho22 = phi * rho0 - rho12
    kf = phi * k_eq
    n, p_hat = frame_modulus(youngs_modulus, poisson_ratio, loss_factor)
    p = p_hat + (1 - phi) ** 2 * kf / phi
    # one common shape: omega's, or larger where parameters carry a leading variant axis
    full = np.broadcast_arrays(*[np.asarray(x, dtype=complex) for x in
                                 (p, (1 - phi) * kf, phi * kf, n, rho11, rho12, rho22,
                                  np.zeros(np.shape(omega)))])
    return BiotElement(*full[:7], porosity=phi, thickness=thickness)


def compressional_waves(el: BiotElement, omega):
    """Squared wavenumbers ``delta^2`` of the two compressional waves and their
    fluid-to-frame displacement ratios mu, each of shape (..., 2).

    ``(PR - Q^2) s^2 - omega^2 (P rho22 + R rho11 - 2 Q rho12) s
    + omega^4 (rho11 rho22 - rho12^2) = 0`` with ``s = delta^2`` (Allard & Atalla 2009,
    ch. 6), solved without cancellation: ``PR - Q^2 = phi K_f P_hat`` is formed
    directly and the smaller root from the product of the roots.
    ``mu = (P delta^2 - omega^2 rho11) / (omega^2 rho12 - Q delta^2)`` (ch. 6), or the
    equivalent form from the fluid's equation, whichever has the larger denominator.
    """
    p, q, r = el.p, el.q, el.r
    w2 = np.asarray(omega, dtype=float) ** 2
    # P R - Q^2 = (P_hat + (1-phi)^2 K_f/phi) phi K_f - (1-phi)^2 K_f^2 = phi K_f P_hat
    kf = r / el.porosity
    a = el.porosity * kf * (p - (1 - el.porosity) ** 2 * kf / el.porosity)
    b = w2 * (p * el.rho22 + r * el.rho11 - 2 * q * el.rho12)
    c = w2 * w2 * (el.rho11 * el.rho22 - el.rho12**2)
    sq = np.sqrt(b * b - 4 * a * c)
    sq = np.where((b.conj() * sq).real >= 0, sq, -sq)
    big = (b + sq) / 2
    s = np.stack([big / a, c / big], axis=-1)
    w2e = w2[..., None]
    pe, qe, re_ = p[..., None], q[..., None], r[..., None]
    n1 = pe * s - w2e * el.rho11[..., None]
    d1 = w2e * el.rho12[..., None] - qe * s
    n2 = qe * s - w2e * el.rho12[..., None]
    d2 = w2e * el.rho22[..., None] - re_ * s
    with np.errstate(divide="ignore", invalid="ignore"):
        mu = np.where(np.abs(d1) >= np.abs(d2), n1 / d1, n2 / d2)
    return s, mu


def biot_wavenumbers(el: BiotElement, omega):
    """The three Biot wavenumbers ``(fast, slow, shear)``, each shaped like omega.

    Compressional waves from :func:`compressional_waves`, ordered by phase speed (the
    fast wave has the smaller real wavenumber); shear wave
    ``delta3^2 = (omega^2 / N) (rho11 rho22 - rho12^2) / rho22`` (Allard & Atalla 2009,
    ch. 6). Roots are taken with negative imaginary parts (decaying waves).
    """
    s, _ = compressional_waves(el, omega)
    d = np.sqrt(s)
    d = np.where(d.imag > 0, -d, d)
    order = np.argsort(np.abs(d.real), axis=-1)
    d = np.take_along_axis(d, order, axis=-1)
    w2 = np.asarray(omega) ** 2
    s3 = w2 / el.n * (el.rho11 * el.rho22 - el.rho12**2) / el.rho22
    d3 = np.sqrt(s3)
    d3 = np.where(d3.imag > 0, -d3, d3)
    return d[..., 0], d[..., 1], d3
