"""Plane-wave bases of the state vectors of fluid, elastic and poroelastic media.

Time convention ``exp(+j omega t)``; every field varies as ``exp(j omega t - j kt x)``
along the layers, ``x`` in the plane of incidence and ``z`` through the stack towards the
receiving side. A medium of state dimension ``2 m`` carries ``m`` waves down (towards +z,
``exp(-j kz z)``, ``Im kz <= 0`` so that they decay or carry power downwards) and the same
``m`` waves up. Its state at depth z is ``S(z) = D a(z) + U b(z)``, the columns of D and U
being the states of the unit waves. State vectors (Allard & Atalla, Propagation of Sound
in Porous Media, 2nd ed. 2009, ch. 11, with the velocities scaled by a reference
impedance ``zref`` so that every entry is a stress):

* fluid (m = 1): ``(p, zref v_z)``;
* elastic solid (m = 2): ``(zref v_x, zref v_z, sigma_zz, sigma_xz)``;
* Biot medium (m = 3): ``(zref v_x^s, zref v_z^s, zref v_z^f, sigma_zz^s, sigma_xz^s,
  sigma_zz^f)`` (frame velocities, fluid velocity, frame stresses, fluid stress
  ``-phi p``).

Each column is normalised to unit length. ``decay`` holds ``exp(-j kz d)`` of each wave
over the layer: with down-going amplitudes referred to the top face and up-going ones to
the bottom face, only these bounded factors appear (Lowe, IEEE Trans. UFFC 42 (1995) 525;
Kennett, Seismic Wave Propagation in Stratified Media, 1983), never their inverses.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from .layers.biot import compressional_waves

__all__ = ["Medium", "biot_medium", "film_medium", "fluid_medium", "half_space",
           "normal_wavenumber", "solid_medium"]

_KZ_FLOOR = 1e-9  # relative floor of |kz|: keeps the down and up waves distinct at grazing


@dataclass(frozen=True)
class Medium:
    """One medium of the stack: its kind, wave bases and decay over its thickness.

    ``kind`` is ``"F"`` (fluid), ``"S"`` (elastic solid) or ``"P"`` (Biot); ``down`` and
    ``up`` are (..., 2m, m); ``decay`` (..., m) or None for a medium without thickness (a
    half-space, referred to its face, or an air film); ``porosity`` for Biot media.
    """

    kind: str
    down: np.ndarray
    up: np.ndarray
    decay: np.ndarray | None = None
    porosity: float = 1.0

    @property
    def size(self) -> int:
        """Number of waves in each direction (half the state dimension)."""
        return self.down.shape[-1]


def normal_wavenumber(k2, kt):
    """``kz = sqrt(k^2 - kt^2)`` with ``Im kz <= 0`` (and ``Re kz >= 0`` when real).

    A root smaller than 1e-9 |k| is raised to that value, so that the down- and up-going
    waves of a lossless medium at exactly grazing incidence stay distinct.
    """
    kz = np.sqrt(np.asarray(k2 - kt**2, dtype=complex))
    kz = np.where((kz.imag > 0) | ((kz.imag == 0) & (kz.real < 0)), -kz, kz)
    floor = _KZ_FLOOR * np.sqrt(np.abs(k2))
    return np.where(np.abs(kz) < floor, floor + 0j, kz)


def _decay(kz, thickness):
    with np.errstate(under="ignore"):
        return np.exp(-1j * kz * thickness)


def half_space(density, kz, omega, zref) -> Medium:
    """A semi-infinite fluid; its columns have unit pressure (amplitudes are pressures)."""
    y = zref * kz / (omega * density)
    one = np.ones_like(y)
    return Medium("F", np.stack([one, y], -1)[..., None], np.stack([one, -y], -1)[..., None])


def film_medium(shape, zref=1.0) -> Medium:
    """An air film of no thickness (an unbonded contact): any two independent states.

    With no thickness nothing propagates, so the basis need not be the film's waves; the
    fixed pair ``(1, +-1)`` stays independent at every angle.
    """
    one = np.ones(shape + (1,), complex)
    return Medium("F", np.stack([one, one], -2), np.stack([one, -one], -2))


def fluid_medium(density, bulk_modulus, thickness, omega, kt, zref) -> Medium:
    """A fluid or equivalent-fluid layer: ``kz^2 = omega^2 rho / K - kt^2``."""
    kz = normal_wavenumber(omega**2 * density / bulk_modulus, kt)
    y = zref * kz / (omega * density)
    one = np.ones_like(y)
    down = _normalise_columns(np.stack([one, y], -1)[..., None])
    up = _normalise_columns(np.stack([one, -y], -1)[..., None])
    return Medium("F", down, up, _decay(kz, thickness)[..., None])


def _elastic_column(out, omega, kt, kz, dil, shear_mod, zref, fluid=None):
    """Write into ``out`` (..., n), a column of a basis, the state of a compressional
    (``dil`` set) or shear wave with normal wavenumber kz.

    Displacement ``u = (kt, kz)`` (compressional) or ``(kz, -kt)`` (shear), velocity
    ``j omega u``; strains ``eps_zz = -j kz u_z``, ``eps_xz = -j (kz u_x + kt u_z) / 2``.
    ``dil`` is ``(lambda + Q mu) delta^2`` for a compressional wave (the isotropic
    stress ``-j dil``), None for shear; ``fluid`` is ``(mu, fluid stress)`` in a Biot
    medium, whose state has the fluid velocity third and the fluid stress last.
    """
    jw = 1j * omega * zref
    if dil is not None:
        vx, vz = jw * kt, jw * kz
        szz = -1j * (dil + 2 * shear_mod * kz**2)
        sxz = -2j * shear_mod * kt * kz
    else:
        vx, vz = jw * kz, -jw * kt
        szz = 2j * shear_mod * kt * kz
        sxz = -1j * shear_mod * (kz**2 - kt**2)
    if fluid is None:
        values = (vx, vz, szz, sxz)
    else:
        mu, sf = fluid
        values = (vx, vz, mu * vz, szz, sxz, sf)
    for i, v in enumerate(values):
        out[..., i] = v


def _normalise_columns(m):
    """Divide each column of the stacks m (..., n, k) by its length, in place."""
    flat = m.view(float)  # real and imaginary parts side by side: (..., n, 2k)
    sq = np.einsum("...ij,...ij->...j", flat, flat)
    m /= np.sqrt(sq[..., 0::2] + sq[..., 1::2])[..., None, :]
    return m


def solid_medium(el, omega, kt, zref) -> Medium:
    """An isotropic elastic layer (:class:`~noisebudget.layers.elastic.SolidElement`).

    ``kL^2 = omega^2 rho / (lambda + 2 mu)``, ``kT^2 = omega^2 rho / mu``; compressional
    stress ``sigma_zz = -j (lambda kL^2 + 2 mu kz^2)``, ``sigma_xz = -2 j mu kt kz``;
    shear ``sigma_zz = 2 j mu kt kz``, ``sigma_xz = -j mu (kz^2 - kt^2)`` per unit
    displacement potential (Allard & Atalla 2009, ch. 11).
    """
    lam, mu = el.lame_lambda, el.lame_mu
    kl2 = omega**2 * el.density / (lam + 2 * mu)
    kt2 = omega**2 * el.density / mu
    kzl, kzt = normal_wavenumber(kl2, kt), normal_wavenumber(kt2, kt)
    shape = np.broadcast_shapes(np.shape(kzl), np.shape(kzt))
    cols = {}
    for sign in (1, -1):
        out = np.empty(shape + (4, 2), complex)
        _elastic_column(out[..., 0], omega, kt, sign * kzl, lam * kl2, mu, zref)
        _elastic_column(out[..., 1], omega, kt, sign * kzt, None, mu, zref)
        cols[sign] = _normalise_columns(out)
    decay = np.empty(shape + (2,), complex)
    decay[..., 0], decay[..., 1] = _decay(kzl, el.thickness), _decay(kzt, el.thickness)
    return Medium("S", cols[1], cols[-1], decay)


def biot_medium(el, omega, kt, zref) -> Medium:
    """A poroelastic layer (:class:`~noisebudget.layers.elastic.BiotElement`).

    Two compressional waves ``delta_1,2`` with fluid/frame ratios ``mu_1,2`` and a shear
    wave ``delta_3^2 = omega^2 (rho11 rho22 - rho12^2) / (N rho22)``,
    ``mu_3 = -rho12 / rho22`` (Allard & Atalla 2009, ch. 6). For a compressional
    wave the frame stress is ``sigma_zz^s = -j [(P - 2N + Q mu) delta^2 + 2 N kz^2]`` and
    the fluid stress ``sigma_zz^f = -j (Q + R mu) delta^2``; the shear wave leaves the
    fluid stress zero.
    """
    s, mu = compressional_waves(el, omega)
    w2 = np.asarray(omega, dtype=float) ** 2
    rho_det = el.rho11 * el.rho22 - el.rho12**2
    s3 = w2 / el.n * rho_det / el.rho22
    mu3 = -el.rho12 / el.rho22
    kz = [normal_wavenumber(s[..., 0], kt), normal_wavenumber(s[..., 1], kt),
          normal_wavenumber(s3, kt)]
    shape = np.broadcast_shapes(*[np.shape(k) for k in kz])
    cols = {}
    for sign in (1, -1):
        out = np.empty(shape + (6, 3), complex)
        for i in range(2):
            dil = (el.p - 2 * el.n + el.q * mu[..., i]) * s[..., i]
            sf = -1j * (el.q + el.r * mu[..., i]) * s[..., i]
            _elastic_column(out[..., i], omega, kt, sign * kz[i], dil, el.n, zref,
                            (mu[..., i], sf))
        _elastic_column(out[..., 2], omega, kt, sign * kz[2], None, el.n, zref, (mu3, 0.0))
        cols[sign] = _normalise_columns(out)
    decay = np.empty(shape + (3,), complex)
    for i in range(3):
        decay[..., i] = _decay(kz[i], el.thickness)
    return Medium("P", cols[1], cols[-1], decay, el.porosity)
