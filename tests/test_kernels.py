"""Compiled per-point kernels against the fluid layer's transfer matrix written out, and
the azimuth mean against its value point by point."""

import numpy as np
import pytest

from noisebudget import kernels
from noisebudget.incidence import azimuth_mean_inverse_square


def _reference_matrix(q, d, omega, rho, kt2):
    """The fluid layer's 2 x 2 transfer matrix relating (p, v_n) on its two faces:
    ``[[cos kz d, j omega rho sin(kz d) / kz], [j kz sin(kz d) / (omega rho), cos kz d]]``
    with ``kz^2 = omega^2 rho / K - kt^2`` (Allard & Atalla, Propagation of Sound in
    Porous Media, 2nd ed. 2009, eq. 11.17), in plain complex arithmetic."""
    kz = np.sqrt(q - kt2 + 0j)
    x = kz * d
    with np.errstate(invalid="ignore", divide="ignore"):
        sinc = np.where(np.abs(x) > 1e-8, np.sin(x) / np.where(x == 0, 1, x), 1.0)
    return (np.cos(x), 1j * omega * rho * d * sinc, 1j * kz * np.sin(x) / (omega * rho),
            np.cos(x))


def _layer(real):
    rng = np.random.default_rng(3 if real else 4)
    n = 6
    omega = 2 * np.pi * rng.uniform(50, 20000, n)
    if real:  # air
        rho, bulk = np.full(n, 1.2), np.full(n, 1.4e5)
    else:  # a lossy equivalent fluid (complex density and bulk modulus)
        rho = rng.uniform(1.3, 3.0, n) - 1j * rng.uniform(0.2, 4.0, n)
        bulk = rng.uniform(1.0e5, 1.4e5, n) + 1j * rng.uniform(1e3, 2e4, n)
    d = rng.uniform(0.002, 0.08, n)
    q = omega**2 * rho / bulk + 0j
    return omega, rho, d, q


@pytest.mark.parametrize("real", [True, False])
def test_fluid_kernel_equals_the_transfer_matrix(real):
    omega, rho, d, q = _layer(real)
    n, m = omega.size, 40
    rows = np.arange(n)
    # trace wavenumbers from normal incidence to past kz = 0 (evanescent), with points
    # at and next to kz = 0 (the small-argument branches)
    frac = np.concatenate([np.linspace(0.0, 3.0, m - 3), [1.0, 1.0 + 1e-13, 1.0 - 1e-9]])
    kt2 = np.real(q)[:, None] * frac[None, :]
    rng = np.random.default_rng(5)
    p0 = rng.normal(size=(n, m)) + 1j * rng.normal(size=(n, m))
    v0 = rng.normal(size=(n, m)) + 1j * rng.normal(size=(n, m))
    args = (np.ascontiguousarray(q.real), np.ascontiguousarray(q.imag), real,
            (1j * omega * rho * d).astype(complex), (1j / (omega * rho)).astype(complex),
            d, rows)
    a, b, c, e = _reference_matrix(q[:, None], d[:, None], omega[:, None], rho[:, None],
                                   kt2)
    p, v, scale = p0.copy(), v0.copy(), np.zeros((n, m))
    kernels.fluid_back(*args, kt2, p, v, scale)
    unscale = np.exp(scale)
    ok = scale < 30  # where exp(|Im kz d|) does not swamp the plain product
    assert np.all(scale >= 0)
    ref_p, ref_v = a * p0 + b * v0, c * p0 + e * v0
    size = np.abs(ref_p) + np.abs(ref_v) + np.abs(p0) + np.abs(v0)
    assert np.max((np.abs(p * unscale - ref_p) / size)[ok]) < 1e-12
    assert np.max((np.abs(v * unscale - ref_v) / size)[ok]) < 1e-12


def test_fluid_kernel_stays_finite_deep_in_the_evanescent_range():
    # kz d = -j 2000: the unscaled entries overflow; the scaled ones are those of
    # exp(-|Im kz d|) T, bounded, with the scale's log carried apart
    omega, rho, d = np.array([2 * np.pi * 100.0]), np.array([1.2]), np.array([0.05])
    q = omega**2 * rho / 1.4e5 + 0j
    kt2 = np.array([[(2000 / 0.05) ** 2]])
    p, v, scale = np.ones((1, 1), complex), np.ones((1, 1), complex), np.zeros((1, 1))
    kernels.fluid_back(q.real.copy(), q.imag.copy(), True, 1j * omega * rho * d,
                       1j / (omega * rho), d, np.array([0]), kt2, p, v, scale)
    assert np.isfinite(p).all() and np.isfinite(v).all()
    assert scale[0, 0] == pytest.approx(np.sqrt(kt2[0, 0] - q.real[0]) * d[0], rel=1e-12)


def test_azimuth_mean_is_computed_point_by_point():
    # each value equals the closed form evaluated on its own (no dependence on the other
    # points of the call, bit for bit); the closed form itself is checked against
    # scipy.integrate.quad in test_panel_physics.py
    rng = np.random.default_rng(9)
    p = [rng.normal(size=(7, 5)) + 1j * rng.normal(size=(7, 5)) for _ in range(3)]
    p[2][0, :] = 0.0                  # lines
    p[1][0, :2] = p[2][0, :2] = 0.0   # constants
    together = azimuth_mean_inverse_square(*p)
    assert together.shape == (7, 5)
    for i in range(7):
        for j in range(5):  # a loop over the points: each on its own
            alone = azimuth_mean_inverse_square(p[0][i, j], p[1][i, j], p[2][i, j])
            assert together[i, j] == alone
    assert together[0, 0] == 1.0 / abs(p[0][0, 0]) ** 2
    # broadcasting of scalar and array coefficients
    assert azimuth_mean_inverse_square(1.0, 0.0, p[2][1]).shape == (5,)


def test_sheet_series_equal_the_impedances_written_out():
    # thin plate with tension: Z = j w m + (D (1 + j eta) kt^4 + N kt^2) / (j w) (Cremer,
    # Heckl & Petersson, Structure-Borne Sound, 2005, ch. 3); sandwich: D(kt) = 2 D1 +
    # D0 S / (S + D0 kt^2) (Nilsson & Nilsson, J. Sound Vib. 251 (2002) 409)
    from noisebudget.layers import Plate, Sandwich

    w = 2 * np.pi * np.array([[63.0], [1000.0], [16000.0]])
    kt = np.array([[0.0, 0.5, 3.0, 40.0, 300.0]])
    plate = Plate(surface_density=4.4, bending_stiffness=28.0, loss_factor=0.01,
                  in_plane_tension=150.0)
    ref = 1j * w * 4.4 + (28.0 * (1 + 0.01j) * kt**4 + 150.0 * kt**2) / (1j * w)
    z = plate.element(w, kt, None).impedance
    assert np.max(np.abs(z - ref) / np.abs(ref)) < 1e-14
    s = Sandwich(0.25e-3, 1900, 20e9, 0.15, 10e-3, 48, 30e6, 0.02, 0.3)
    d1 = 20e9 * 0.25e-3**3 / (12 * (1 - 0.15**2))
    d0 = 20e9 * 0.25e-3 * (10.25e-3) ** 2 / (2 * (1 - 0.15**2))
    shear = 30e6 * (10.25e-3) ** 2 / 10e-3
    dk = 2 * d1 + d0 * shear / (shear + d0 * kt**2)
    ref = 1j * w * s.areal_mass + dk * (1 + 0.02j) * kt**4 / (1j * w)
    z = s.element(w, kt, None).impedance
    assert np.max(np.abs(z - ref) / np.abs(ref)) < 1e-14


def test_complex_square_root_is_the_principal_branch():
    # against numpy's principal square root (C99 csqrt), over magnitudes 1e-300 .. 1e300,
    # every quadrant, the axes and signed zeros
    rng = np.random.default_rng(2)
    mag = 10.0 ** rng.uniform(-300, 300, 4000)
    z = mag * np.exp(1j * rng.uniform(-np.pi, np.pi, 4000))
    z = np.concatenate([z, [-1 + 0j, complex(-1, -0.0), 4 + 0j, 2j, -2j, 0j,
                            complex(-1e-200, 1e-320), complex(1e300, -1e300)]])
    got = np.array([kernels._csqrt(x) for x in z])  # a loop over test values
    ref = np.sqrt(z)
    scale = np.where(ref == 0, 1.0, np.abs(ref))
    assert np.max(np.abs(got - ref) / scale) < 4e-16
    assert kernels._csqrt(complex(-1, -0.0)) == -1j


def test_kernels_compile_without_a_writable_cache():
    # where numba finds no writable cache folder the package still imports and computes
    # (each process compiles for itself); simulated by removing numba's cache locations
    import subprocess
    import sys

    code = ("import numba.core.caching as c; c.CacheImpl._locator_classes = []\n"
            "import numpy as np\n"
            "from noisebudget.incidence import azimuth_mean_inverse_square as m\n"
            "print(m(1 + 0j, 0j, 0j))\n")
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True,
                         timeout=300)
    assert out.returncode == 0, out.stderr
    assert float(out.stdout) == 1.0


def test_gk15_sums_against_quadpack_qk15_and_scipy():
    # the 15-point Kronrod integral and QUADPACK's scaled error estimate (Piessens et al.
    # 1983, qk15: resasc min(1, (200 |K - G| / resasc)^1.5)) written out in numpy; the
    # integral of a smooth function against scipy.integrate.quad; a constant's estimate ~0
    from scipy import integrate

    from noisebudget.incidence import GK15

    x, wk, wg = GK15
    rng = np.random.default_rng(11)
    a, b = rng.uniform(0, 1, 40), rng.uniform(1, 3, 40)
    c, h = (a + b) / 2, (b - a) / 2
    nodes = c[:, None] + h[:, None] * x
    q = np.exp(-nodes) * np.cos(3 * nodes) + rng.uniform(0, 1e-3, nodes.shape)
    ik, err = np.empty(40), np.empty(40)
    kernels.gk15_sums(q, h, wk, wg, ik, err)
    k_ref, g_ref = h * (q @ wk), h * (q @ wg)
    resasc = h * (np.abs(q - (k_ref / (2 * h))[:, None]) @ wk)
    e_ref = resasc * np.minimum(1.0, (200 * np.abs(k_ref - g_ref) / resasc) ** 1.5)
    np.testing.assert_allclose(ik, k_ref, rtol=1e-14)
    np.testing.assert_allclose(err, e_ref, rtol=1e-8)  # |K - G| cancels: sums differ in order
    smooth = np.exp(-nodes) * np.cos(3 * nodes)
    kernels.gk15_sums(smooth, h, wk, wg, ik, err)
    for i in range(3):  # a few panels against adaptive quadrature
        ref = integrate.quad(lambda t: np.exp(-t) * np.cos(3 * t), a[i], b[i],
                             epsabs=0, epsrel=1e-12)[0]
        assert ik[i] == pytest.approx(ref, rel=1e-10, abs=1e-14)
    kernels.gk15_sums(np.full((2, 15), 2.0), np.array([0.5, 0.0]), wk, wg, ik[:2], err[:2])
    assert ik[0] == pytest.approx(2.0) and err[0] < 1e-14 and ik[1] == 0.0
