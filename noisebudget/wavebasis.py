"""Plane-wave bases of the state vectors of fluid, elastic and poroelastic media.

Time convention ``exp(+j omega t)``; every field varies as ``exp(j omega t - j kt x)``
along the layers, ``x`` in the plane of incidence and ``z`` through the stack towards the
receiving side. A medium of state dimension ``2 m`` carries ``m`` waves down (towards +z,
``exp(-j kz z)``, ``Im kz <= 0`` so that they decay or carry power downwards) and the same
``m`` waves up. Its state at depth z is ``S(z) = D a(z) + U b(z)``, the columns of D and U
spanning the states of the down- and up-going waves. State vectors (Allard & Atalla,
Propagation of Sound in Porous Media, 2nd ed. 2009, ch. 11, with the velocities scaled by
a reference impedance ``zref`` so that every entry is a stress):

* fluid (m = 1): ``(p, zref v_z)``;
* elastic solid (m = 2): ``(zref v_x, zref v_z, sigma_zz, sigma_xz)``;
* Biot medium (m = 3): ``(zref v_x^s, zref v_z^s, zref v_z^f, sigma_zz^s, sigma_xz^s,
  sigma_zz^f)`` (frame velocities, fluid velocity, frame stresses, fluid stress
  ``-phi p``).

Each layer's columns have unit length. ``propagator`` E carries the amplitudes over the
layer: down-going amplitudes referred to the top face, up-going ones to the bottom face,
``a(bottom) = E a(top)`` and ``b(top) = E b(bottom)``; E holds only the bounded factors
``exp(-j kz d)`` and their differences (Lowe, IEEE Trans. UFFC 42 (1995) 525; Kennett,
Seismic Wave Propagation in Stratified Media, 1983), never their inverses.

Framed media: a basis that stays independent as the waves merge
---------------------------------------------------------------
Per unit amplitude, a compressional wave of normal wavenumber q and a shear wave have the
states (solid; Allard & Atalla 2009, ch. 11, ``w = omega zref``)::

    P(q) = (j w kt,  j w q,   -j (lambda kL^2 + 2 mu q^2),  -2 j mu kt q)
    S(q) = (j w q,  -j w kt,   2 j mu kt q,                 -j mu (q^2 - kt^2))

Where the trace wavenumber exceeds the medium's own (``kt >> kL, kT``: a thin, stiff
layer, or any solid at low frequency and oblique incidence) both waves are evanescent,
``q_P ~ q_S ~ -j kt``, and ``P(q_P) -> j S(q_S)``: the two columns of a static field.
Their difference, ``O(k^2)`` against entries ``O(kt^2)``, is all that tells them apart;
formed by subtraction it keeps only ``eps (kt/k)^2`` of relative accuracy, and the
interface solves amplify that by the stiffness of the layer against the air
(``2 mu kt / (omega zref)``) and by ``1 / (kt d)`` over a thin layer: 1e-3 relative
errors in tau at 1 Hz. The difference is therefore formed exactly. With
``r = q + j kt`` one has, for every q,

    P(q) - j S(q) = (w r,  j w r,  -j lambda kL^2 - 2 j mu q r,  -mu r^2),

and for a wave (``q^2 = k^2 - kt^2``) ``r = k^2 / (q - j kt)`` has no cancellation
(``Im q <= 0``). ``S`` is a polynomial in q, so with the divided difference
``S[q1, q2] = (S(q1) - S(q2)) / (q1 - q2) = (j w, 0, 2 j mu kt, -j mu (q1 + q2))``::

    W = P(q_P) - j S(q_S) = [P(q_P) - j S(q_P)] + j (q_P - q_S) S[q_P, q_S],
    q_P - q_S = (kL^2 - kT^2) / (q_P + q_S),

every term of full relative accuracy. The down-going basis is ``[S(q_S), X]`` with X the
shorter of ``P(q_P)`` and W (the same vector up to a multiple of S) made orthogonal to S
(Gram-Schmidt), each normalised: ``D = [S, P] C N^-1`` with C unit upper triangular and
N the column lengths. Over the layer the wave amplitudes take
``Lambda = diag(exp(-j q_S d), exp(-j q_P d))``, so the basis amplitudes take
``E = N C^-1 Lambda C N^-1``, upper triangular, whose off-diagonal entries are sums of
``(C^-1)_ik C_kj (e_k - e_i) n_i / n_j`` with the divided exponential

    e_k - e_i = -2 j exp(-j (q_k + q_i) d / 2) sin((q_k - q_i) d / 2),

an entire function of the two wavenumbers, no larger than the larger factor (decaying
only) and of order ``(q_k - q_i) d`` exactly where C's coefficients are large.

Up-going waves are the mirror images: with ``Sigma = diag(1, -1, 1, -1)`` (``v_x``,
``sigma_zz`` even in z, ``v_z``, ``sigma_xz`` odd), ``P(-q) = Sigma P(q)`` and
``S(-q) = -Sigma S(q)``, so ``U = Sigma D`` spans the up-going waves and carries the same
E.

A Biot medium (Allard & Atalla 2009, ch. 6) has two compressional waves ``delta_1,2``
with fluid/frame ratios ``mu_1,2`` and a shear wave ``delta_3`` with ``mu_3``; the same
identity holds with the fluid entries (``v_z^f`` odd, ``sigma_zz^f`` even)::

    P_i(q) - j S(q) = (w r, j w r, j w (mu_i r + j (mu_3 - mu_i) kt),
                       -j dil_i - 2 j N q r, -N r^2, -j (Q + R mu_i) delta_i^2),
    S[q1, q2] = (j w, 0, 0, 2 j N kt, -j N (q1 + q2), 0),

``dil_i = (P - 2N + Q mu_i) delta_i^2``, and the basis ``[S, X_1, X_2]`` is made
orthogonal in that order.

A medium whose shear wave is nowhere near-static (``kt < 2 |kT|`` at every point, as in
every soft foam, rubber, and any solid at or near normal incidence) and whose
compressional columns are everywhere at least 60 degrees from its shear column keeps the
plain basis of its waves and a diagonal E. The angle matters as well as ``kt / kT``: in a
lossy stiff solid at ``kt = 1.75 |kT|`` the two columns are already within 3 degrees
(their stresses dominate and differ by ``O(kT^2 / kt^2)``), and the plain basis lost 4e-10
of tau.

Reference reflections: no cancellation against a light or heavy neighbour
--------------------------------------------------------------------------
The solve (:mod:`noisebudget.multilayer`) finds at the bottom face of each medium the
reflection matrix R of its up-going waves for its down-going ones, and hands the medium
above the states ``D + U E R E`` of its top face. Where the medium's waves differ greatly
in impedance from what loads them, those states come out of a cancellation. A stiff
solid's waves carry stresses ``Z_w`` times ``zref`` their velocity (``Z_w ~ 2 mu kt /
omega`` for an evanescent field, ``rho cL`` at normal incidence); air-loaded states, with
stresses of order ``zref`` times the velocity, need R within ``zref / Z_w`` of the
reflection matrix F of a stress-free face, and ``D + U R`` keeps only ``eps Z_w / zref``
of relative accuracy (2e-9 for the stiffest solids between airs at 20 kPa). Likewise an
air gap or film above a heavy sheet is loaded almost rigidly, R within ``zref / Z`` of 1.

Each medium therefore carries a reference face: for a fluid the rigid face, ``F = 1``
(its columns are mirror images); for a solid whose up-going columns are stiff the
stress-free face, ``F = -U_s^-1 D_s``, and ``F = 0`` at its other points. Stiff means
that the stress rows ``U_s`` are well conditioned: in the orthonormal basis above,
velocity rows of norm <= 1/2; in the plain basis (a solid at or near normal incidence,
glass or a metal as much as a rubber), unit columns with velocity rows of norm <= 1/2
and stress rows at least 30 degrees apart. A Biot medium has none: its frame is loaded
through its pore air, and the frames of foams are soft. With the reference
states ``D + U F`` formed with their velocities (fluid) or stresses (solid) exactly zero,
the solve seeks ``R' = R - F``, small exactly where the cancellation was, and the top
face's states are

    D + U E (F + R') E = (D + U F) + U [(E - I) F E + F (E - I) + E R' E],

``E - I`` with ``expm1`` on its diagonal: no term cancels. A source half-space keeps the
same reference (its reflection coefficient is ``1 + R'``).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from .layers.biot import compressional_waves

__all__ = ["Medium", "biot_medium", "film_medium", "fluid_medium", "half_space",
           "normal_wavenumber", "solid_medium"]

_KZ_FLOOR = 1e-9  # relative floor of |kz|: keeps the down and up waves distinct at grazing
# rows of the up-going states from the down-going ones (module docstring): v_z, v_z^f and
# sigma_xz change sign
_MIRROR = {4: np.array([1.0, -1.0, 1.0, -1.0])[:, None],
           6: np.array([1.0, -1.0, -1.0, 1.0, -1.0, 1.0])[:, None]}


@dataclass(frozen=True)
class Medium:
    """One medium of the stack: its kind, wave bases and propagator over its thickness.

    ``kind`` is ``"F"`` (fluid), ``"S"`` (elastic solid) or ``"P"`` (Biot); ``down`` and
    ``up`` are (..., 2m, m); ``propagator`` (..., m, m), ``a(bottom) = E a(top)`` for the
    down-going amplitudes and ``b(top) = E b(bottom)`` for the up-going ones, or None for
    a medium without thickness (a half-space, referred to its face, or an air film);
    ``porosity`` for Biot media. ``reference`` (..., m, m) is the reflection matrix F of
    the medium's reference face, ``reference_states`` the states ``D + U F`` with their
    velocities (fluid) or stresses (framed) exactly zero, and ``shift`` is ``E - I``
    (module docstring, reference reflections); None where not used. ``diagonal`` says
    that E is diagonal (the bases are the waves themselves).
    """

    kind: str
    down: np.ndarray
    up: np.ndarray
    propagator: np.ndarray | None = None
    porosity: float = 1.0
    reference: np.ndarray | None = None
    reference_states: np.ndarray | None = None
    shift: np.ndarray | None = None
    diagonal: bool = False

    @property
    def size(self) -> int:
        """Number of waves in each direction (half the state dimension)."""
        return self.down.shape[-1]


def _root(k2, kt):
    """``kz`` of :func:`normal_wavenumber` and where it was raised to the floor."""
    kz = np.sqrt(np.asarray(k2 - kt**2, dtype=complex))
    kz = np.where((kz.imag > 0) | ((kz.imag == 0) & (kz.real < 0)), -kz, kz)
    floor = _KZ_FLOOR * np.sqrt(np.abs(k2))
    floored = np.abs(kz) < floor
    return np.where(floored, floor + 0j, kz), floored


def normal_wavenumber(k2, kt):
    """``kz = sqrt(k^2 - kt^2)`` with ``Im kz <= 0`` (and ``Re kz >= 0`` when real).

    A root smaller than 1e-9 |k| is raised to that value, so that the down- and up-going
    waves of a lossless medium at exactly grazing incidence stay distinct.
    """
    return _root(k2, kt)[0]


def _decay(kz, thickness):
    with np.errstate(under="ignore"):
        return np.exp(-1j * kz * thickness)


def half_space(density, kz, omega, zref) -> Medium:
    """A semi-infinite fluid; its columns have unit pressure (amplitudes are pressures)."""
    y = zref * kz / (omega * density)
    one = np.ones_like(y)
    down, up = np.stack([one, y], -1)[..., None], np.stack([one, -y], -1)[..., None]
    return Medium("F", down, up, None, 1.0, *_rigid_face(down, up))


def film_medium(shape, zref=1.0) -> Medium:
    """An air film of no thickness (an unbonded contact): any two independent states.

    With no thickness nothing propagates, so the basis need not be the film's waves; the
    fixed pair ``(1, +-1)`` stays independent at every angle.
    """
    one = np.ones(shape + (1,), complex)
    down, up = np.stack([one, one], -2), np.stack([one, -one], -2)
    return Medium("F", down, up, None, 1.0, *_rigid_face(down, up))


def fluid_medium(density, bulk_modulus, thickness, omega, kt, zref) -> Medium:
    """A fluid or equivalent-fluid layer: ``kz^2 = omega^2 rho / K - kt^2``."""
    kz = normal_wavenumber(omega**2 * density / bulk_modulus, kt)
    y = zref * kz / (omega * density)
    one = np.ones_like(y)
    down = _normalise_columns(np.stack([one, y], -1)[..., None])
    up = _normalise_columns(np.stack([one, -y], -1)[..., None])
    with np.errstate(under="ignore"):
        shift = np.expm1(-1j * kz * thickness)[..., None, None]
    return Medium("F", down, up, _decay(kz, thickness)[..., None, None], 1.0,
                  *_rigid_face(down, up), shift, diagonal=True)


def _rigid_face(down, up):
    """``(F, D + U F)`` of a fluid's rigid face: ``F = 1`` (the columns are mirror
    images), the states' velocity exactly zero."""
    states = down + up
    states[..., 1, :] = 0.0
    return np.ones(down.shape[:-2] + (1, 1), complex), states


def _elastic_column(omega, kt, kz, dil, shear_mod, zref, fluid=None):
    """Entries (a list of arrays) of the state of a compressional (``dil`` set) or shear
    wave with normal wavenumber kz.

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
        return [vx, vz, szz, sxz]
    mu, sf = fluid
    return [vx, vz, mu * vz, szz, sxz, sf]


def _static_column(omega, kt, wave, shear, dq, dil, shear_mod, zref, fluid=None):
    """Entries of ``W = P(q) - j S(q_S)``, a compressional column less j times the shear
    column, formed without cancellation (module docstring).

    ``wave`` and ``shear`` are ``(q, r, k^2)`` of the two waves, ``r = q + j kt``, and
    ``dq = q - q_S`` (:func:`_difference`); entries ``v_x = w r_S``, ``v_z = j w r``,
    ``sigma_zz = -j dil - 2 j mu q r - 2 mu kt dq``, ``sigma_xz = -mu r^2 + mu dq (q +
    q_S)``; in a Biot medium ``fluid = (mu_i, mu_3, fluid stress)`` adds ``v_z^f = j w
    (mu_i r + j (mu_3 - mu_i) kt)`` and the compressional wave's fluid stress.
    """
    (q, r, _), (q_s, r_s, _) = wave, shear
    w = omega * zref
    vx, vz = w * r_s, 1j * w * r
    szz = -1j * dil - 2j * shear_mod * q * r - 2 * shear_mod * kt * dq
    sxz = shear_mod * (dq * (q + q_s) - r * r)
    if fluid is None:
        return [vx, vz, szz, sxz]
    mu, mu3, sf = fluid
    return [vx, vz, 1j * w * (mu * r + 1j * (mu3 - mu) * kt), szz, sxz, sf]


def _normalise_columns(m):
    """Divide each column of the stacks m (..., n, k) by its length, in place."""
    flat = m.view(float)  # real and imaginary parts side by side: (..., n, 2k)
    sq = np.einsum("...ij,...ij->...j", flat, flat)
    m /= np.sqrt(sq[..., 0::2] + sq[..., 1::2])[..., None, :]
    return m


def _wave(k2, kt):
    """``(q, r, k^2)`` of a wave: its normal wavenumber, ``r = q + j kt`` formed without
    cancellation (``k^2 / (q - j kt)`` where ``q ~ -j kt``) and its squared wavenumber;
    ``k^2`` is NaN where q was raised to the floor (no longer ``k^2 - kt^2``)."""
    q, floored = _root(k2, kt)
    plus, minus = q + 1j * kt, q - 1j * kt
    with np.errstate(divide="ignore", invalid="ignore"):
        r = np.where(floored | (np.abs(plus) >= np.abs(minus)), plus, k2 / minus)
    return q, r, np.where(floored, np.nan, k2)


def _difference(a, b):
    """``q_a - q_b`` of two waves ``(q, r, k^2)``: ``(k_a^2 - k_b^2) / (q_a + q_b)`` where
    the sum does not cancel, else the plain difference."""
    qa, qb = a[0], b[0]
    s = qa + qb
    exact = np.isfinite(a[2]) & np.isfinite(b[2]) & (np.abs(s) >= 0.5 * np.maximum(
        np.abs(qa), np.abs(qb)))
    with np.errstate(divide="ignore", invalid="ignore"):
        return np.where(exact, (a[2] - b[2]) / s, qa - qb)


def _divided_exponential(qa, qb, dq, ea, eb, thickness):
    """``e_b - e_a = exp(-j q_b d) - exp(-j q_a d)`` of two waves as the entire, decaying
    product ``-2 j exp(-j (q_a + q_b) d / 2) sin((q_b - q_a) d / 2)`` where
    ``|q_b - q_a| d < 1``; ``dq = q_a - q_b`` and ``ea, eb`` are the two factors."""
    x = -dq * thickness
    small = np.abs(x) < 1.0
    if not small.any():
        return eb - ea
    with np.errstate(under="ignore"):
        near = -2j * np.exp(-0.5j * (qa + qb) * thickness) * np.sin(np.where(small, x, 0) / 2)
    return near if small.all() else np.where(small, near, eb - ea)


def _framed_medium(kind, cols, q, dq, thickness, porosity=1.0) -> Medium:
    """Bases and propagator of a solid or Biot medium (module docstring).

    ``cols`` (n, 1 + 2 c, ...) holds the entries of the shear column S, then of each
    compressional column P_i and its ``W_i = P_i - j S`` formed exactly; ``q`` the normal
    wavenumbers, the shear wave's first, and ``dq[i][k] = q_i - q_k`` for i < k.
    """
    n, m = cols.shape[0], (cols.shape[1] + 1) // 2
    sq = cols.real**2 + cols.imag**2
    size = np.sqrt(np.sum(sq, axis=0))  # (1 + 2 c, ...)
    basis = np.empty((n, m) + cols.shape[2:], complex)  # the orthonormal columns
    length = np.empty((m,) + cols.shape[2:])
    length[0] = size[0]
    basis[:, 0] = cols[:, 0] / size[0]
    # the start of each compressional column: the shorter of P_i and W_i (no cancellation
    # below), and its coefficient of S (-j for W_i)
    use_w = size[2::2] < size[1::2]
    x = np.where(use_w, cols[:, 2::2], cols[:, 1::2])
    proj = np.sum(basis[:, :1].conj() * x, axis=0)
    x -= basis[:, :1] * proj
    # basis = [S, P_1, ...] C / length, C unit upper triangular: coef[i][k] = C_ik, i < k
    c0 = np.where(use_w, -1j, 0j) - proj / length[0]
    coef = {(0, k): c0[k - 1] for k in range(1, m)}
    for k in range(1, m):
        if k > 1:  # Gram-Schmidt of the second compressional column against the first
            p = np.sum(basis[:, 1].conj() * x[:, 1], axis=0)
            x[:, 1] -= basis[:, 1] * p
            scaled = p / length[1]
            coef[(0, 2)] = coef[(0, 2)] - scaled * coef[(0, 1)]
            coef[(1, 2)] = -scaled
        length[k] = np.sqrt(np.sum(x[:, k - 1].real**2 + x[:, k - 1].imag**2, axis=0))
        basis[:, k] = x[:, k - 1] / length[k]
    decay = [_decay(x, thickness) for x in q]
    shape = np.broadcast_shapes(basis.shape[2:], *[np.shape(e) for e in decay])
    prop = np.zeros(shape + (m, m), complex)
    for i in range(m):
        prop[..., i, i] = decay[i]
    diff = {(i, k): _divided_exponential(q[i], q[k], dq[i][k], decay[i], decay[k],
                                         thickness)
            for i in range(m) for k in range(i + 1, m)}
    # E = N C^-1 Lambda C N^-1: (C^-1 Lambda C)_ij = sum_k (C^-1)_ik C_kj (e_k - e_i)
    prop[..., 0, 1] = -coef[(0, 1)] * diff[(0, 1)] * (length[0] / length[1])
    if m == 3:
        c01, c02, c12 = coef[(0, 1)], coef[(0, 2)], coef[(1, 2)]
        prop[..., 1, 2] = -c12 * diff[(1, 2)] * (length[1] / length[2])
        prop[..., 0, 2] = (-c01 * c12 * diff[(0, 1)] + (c01 * c12 - c02) * diff[(0, 2)]) * (
            length[0] / length[2])
    down = np.ascontiguousarray(np.moveaxis(np.broadcast_to(basis, (n, m) + shape),
                                            (0, 1), (-2, -1)))
    up = down * _MIRROR[n]
    if kind != "S":  # a Biot frame is loaded through its pore air: no reference face
        return Medium(kind, down, up, prop, porosity)
    # stiff where the velocity rows of the orthonormal U (= those of D) are small
    stiff = np.sum(basis[:m].real**2 + basis[:m].imag**2, axis=(0, 1)) <= 0.25
    ref, states = _free_face(down, up, stiff)
    if ref is None:
        return Medium(kind, down, up, prop, porosity)
    shift = prop.copy()
    for i in range(m):
        with np.errstate(under="ignore"):
            shift[..., i, i] = np.expm1(-1j * q[i] * thickness)
    return Medium(kind, down, up, prop, porosity, ref, states, shift)


def _plain_medium(kind, cols, q, thickness, porosity):
    """Bases of the waves themselves, ``cols`` (n, m, ...) normalised, and the diagonal
    propagator ``diag(exp(-j q d))``."""
    n, m = cols.shape[:2]
    cols /= np.sqrt(np.sum(cols.real**2 + cols.imag**2, axis=0))
    down = np.ascontiguousarray(np.moveaxis(cols, (0, 1), (-2, -1)))
    up = down * _MIRROR[n]
    prop = np.zeros(down.shape[:-2] + (m, m), complex)
    for i in range(m):
        prop[..., i, i] = _decay(q[i], thickness)
    if kind != "S":
        return Medium(kind, down, up, prop, porosity, diagonal=True)
    # a stiff solid at or near normal incidence (glass, metals): the stress-free reference
    # face where the unit columns' velocity rows are small and their stress rows far from
    # parallel (the angle between them at least 30 degrees), so that U_s is well
    # conditioned as in the orthonormal basis
    a, b, c, d = up[..., 2, 0], up[..., 2, 1], up[..., 3, 0], up[..., 3, 1]
    vel = np.sum(down[..., :2, :].real**2 + down[..., :2, :].imag**2, axis=(-2, -1))
    apart = np.abs(a * d - b * c) >= 0.5 * np.sqrt((np.abs(a)**2 + np.abs(c)**2)
                                                   * (np.abs(b)**2 + np.abs(d)**2))
    ref, states = _free_face(down, up, (vel <= 0.25) & apart)
    if ref is None:
        return Medium(kind, down, up, prop, porosity, diagonal=True)
    shift = np.zeros_like(prop)
    for i in range(m):
        with np.errstate(under="ignore"):
            shift[..., i, i] = np.expm1(-1j * q[i] * thickness)
    return Medium(kind, down, up, prop, porosity, ref, states, shift, diagonal=True)


def _free_face(down, up, stiff):
    """``(F, D + U F)`` of a solid's stress-free face, ``F = -U_s^-1 D_s``, the
    states' stresses exactly zero, where the up-going columns are ``stiff`` (their
    velocity rows small and their stress rows ``U_s`` well conditioned); F = 0 elsewhere,
    and ``(None, None)`` where no point is stiff."""
    stiff = np.broadcast_to(stiff, down.shape[:-2])
    if not stiff.any():
        return None, None
    # a solid's U_s is 2 x 2 and well conditioned where stiff: its inverse by cofactors
    a, b, c, d = up[..., 2, 0], up[..., 2, 1], up[..., 3, 0], up[..., 3, 1]
    scale = np.where(stiff, -1.0 / np.where(stiff, a * d - b * c, 1.0), 0.0)
    ref = np.empty(down.shape[:-2] + (2, 2), complex)
    for j in range(2):
        s2, s3 = down[..., 2, j] * scale, down[..., 3, j] * scale
        ref[..., 0, j] = d * s2 - b * s3
        ref[..., 1, j] = a * s3 - c * s2
    states = down.copy()  # D + U F, its stresses zero where stiff (velocities: U_v F)
    states[..., :2, :] += up[..., :2, :] @ ref
    states[..., 2:, :] *= ~stiff[..., None, None]
    return ref, states


def solid_medium(el, omega, kt, zref) -> Medium:
    """An isotropic elastic layer (:class:`~noisebudget.layers.elastic.SolidElement`).

    ``kL^2 = omega^2 rho / (lambda + 2 mu)``, ``kT^2 = omega^2 rho / mu``; compressional
    stress ``sigma_zz = -j (lambda kL^2 + 2 mu kz^2)``, ``sigma_xz = -2 j mu kt kz``;
    shear ``sigma_zz = 2 j mu kt kz``, ``sigma_xz = -j mu (kz^2 - kt^2)`` per unit
    displacement potential (Allard & Atalla 2009, ch. 11); the basis of the module
    docstring, which stays independent as the two waves merge.
    """
    lam, mu = el.lame_lambda, el.lame_mu
    kl2 = omega**2 * el.density / (lam + 2 * mu)
    ks2 = omega**2 * el.density / mu
    wl, ws = _wave(kl2, kt), _wave(ks2, kt)
    shape = np.broadcast_shapes(np.shape(wl[0]), np.shape(ws[0]), np.shape(kt))
    plain = np.empty((4, 2) + shape, complex)
    _fill(plain[:, 0], _elastic_column(omega, kt, ws[0], None, mu, zref))
    _fill(plain[:, 1], _elastic_column(omega, kt, wl[0], lam * kl2, mu, zref))
    # the plain basis serves where the shear wave is nowhere near-static (kt < 2 |kT|)
    # and the two columns are everywhere at least 60 degrees apart (rubber, and any
    # solid at or near normal incidence)
    if not (np.any(np.abs(kt) ** 2 > 4 * np.abs(ks2)) or _close(plain[:, 0], plain[:, 1])):
        return _plain_medium("S", plain, [ws[0], wl[0]], el.thickness, 1.0)
    cols = np.empty((4, 3) + shape, complex)
    cols[:, :2] = plain
    dq = _difference(wl, ws)
    _fill(cols[:, 2], _static_column(omega, kt, wl, ws, dq, lam * kl2, mu, zref))
    return _framed_medium("S", cols, [ws[0], wl[0]], [[None, -dq]], el.thickness)


def _close(a, b):
    """True if two columns (n, ...) are anywhere less than 60 degrees apart,
    ``|a^H b|^2 > 3/4 |a|^2 |b|^2``."""
    ab = np.sum(a.conj() * b, axis=0)
    aa = np.sum(a.real**2 + a.imag**2, axis=0)
    bb = np.sum(b.real**2 + b.imag**2, axis=0)
    return bool(np.any(ab.real**2 + ab.imag**2 > 0.75 * aa * bb))


def _fill(out, entries):
    """Write a column's entries into ``out`` (n, ...), broadcasting each."""
    for i, x in enumerate(entries):
        out[i] = x


def biot_medium(el, omega, kt, zref) -> Medium:
    """A poroelastic layer (:class:`~noisebudget.layers.elastic.BiotElement`).

    Two compressional waves ``delta_1,2`` with fluid/frame ratios ``mu_1,2`` and a shear
    wave ``delta_3^2 = omega^2 (rho11 rho22 - rho12^2) / (N rho22)``,
    ``mu_3 = -rho12 / rho22`` (Allard & Atalla 2009, ch. 6). For a compressional
    wave the frame stress is ``sigma_zz^s = -j [(P - 2N + Q mu) delta^2 + 2 N kz^2]`` and
    the fluid stress ``sigma_zz^f = -j (Q + R mu) delta^2``; the shear wave leaves the
    fluid stress zero. The basis of the module docstring, which stays independent as the
    frame's waves merge.
    """
    s, mu = compressional_waves(el, omega)
    w2 = np.asarray(omega, dtype=float) ** 2
    rho_det = el.rho11 * el.rho22 - el.rho12**2
    s3 = w2 / el.n * rho_det / el.rho22
    mu3 = -el.rho12 / el.rho22
    waves = [_wave(s3, kt), _wave(s[..., 0], kt), _wave(s[..., 1], kt)]
    shape = np.broadcast_shapes(*[np.shape(w[0]) for w in waves], np.shape(kt))
    plain = np.empty((6, 3) + shape, complex)
    _fill(plain[:, 0], _elastic_column(omega, kt, waves[0][0], None, el.n, zref, (mu3, 0.0)))
    dil, sf = [], []
    for i in range(2):
        dil.append((el.p - 2 * el.n + el.q * mu[..., i]) * s[..., i])
        sf.append(-1j * (el.q + el.r * mu[..., i]) * s[..., i])
        _fill(plain[:, 1 + i], _elastic_column(omega, kt, waves[1 + i][0], dil[i], el.n,
                                               zref, (mu[..., i], sf[i])))
    q = [w[0] for w in waves]
    # the plain basis serves where the shear wave is nowhere near-static (kt < 2
    # |delta_3|, as in every soft foam) and each compressional column is everywhere at
    # least 60 degrees from the shear column
    if not (np.any(np.abs(kt) ** 2 > 4 * np.abs(s3)) or _close(plain[:, 0], plain[:, 1])
            or _close(plain[:, 0], plain[:, 2])):
        return _plain_medium("P", plain, q, el.thickness, el.porosity)
    dq = [[None, -_difference(waves[1], waves[0]), -_difference(waves[2], waves[0])],
          [None, None, _difference(waves[1], waves[2])]]
    cols = np.empty((6, 5) + shape, complex)
    cols[:, 0] = plain[:, 0]
    for i in range(2):
        cols[:, 1 + 2 * i] = plain[:, 1 + i]
        _fill(cols[:, 2 + 2 * i], _static_column(omega, kt, waves[1 + i], waves[0],
                                                 -dq[0][1 + i], dil[i], el.n, zref,
                                                 (mu[..., i], mu3, sf[i])))
    return _framed_medium("P", cols, q, dq, el.thickness, el.porosity)
