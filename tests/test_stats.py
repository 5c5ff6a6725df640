"""The stats stage against outside references: numpy.fft, analytic flows, isotropy, Parseval."""

import numpy as np
import pytest
from fluxfunnel import InputError, stats, synthetic
from hypothesis import given, settings
from hypothesis import strategies as st

TAU = 2.0 * np.pi


def numpy_reference(f, d, periodic=True, volume=False):
    """Straight numpy.fft evaluation of the documented definitions (module docs of fluxfunnel.stats)."""
    f = np.asarray(f, dtype=np.float64)
    _, nx, ny, nz = f.shape
    f = f - (f.mean(axis=(1, 2, 3), keepdims=True) if volume else f.mean(axis=(1, 2), keepdims=True))
    nzt = nz if periodic else 2 * nz
    fp = np.zeros((3, nx, ny, nzt))
    fp[..., :nz] = f
    spec = np.fft.fftn(fp, axes=(1, 2, 3))
    ks, ko = [], []
    for n, dd in zip((nx, ny, nzt), d, strict=True):
        k = TAU * np.fft.fftfreq(n, dd)
        ks.append(k)
        k_odd = k.copy()
        if n % 2 == 0:
            k_odd[n // 2] = 0.0  # odd powers: Nyquist wavenumber set to zero (documented convention)
        ko.append(k_odd)
    kf = np.meshgrid(*ks, indexing="ij")
    kod = np.meshgrid(*ko, indexing="ij")
    k2 = kf[0] ** 2 + kf[1] ** 2 + kf[2] ** 2
    k2[0, 0, 0] = 1.0
    m = np.zeros((nz, 3, 3, 3, 3))
    for j in range(3):
        for mm in range(3):
            sym = (kf[j] ** 2 if j == mm else kod[j] * kod[mm]) / k2
            sym[0, 0, 0] = 0.0
            for n in range(3):
                g = np.fft.ifftn(sym * spec[n]).real[..., :nz]
                for k in range(3):
                    m[:, j, mm, n, k] = (g * f[k]).mean(axis=(0, 1))
    curl = [
        np.fft.ifftn(1j * (kod[j] * spec[q] - kod[q] * spec[j])).real[..., :nz] for j, q in [(1, 2), (2, 0), (0, 1)]
    ]
    hel = sum((curl[i] * f[i]).mean(axis=(0, 1)) for i in range(3))
    energy = (f * f).sum(axis=0).mean(axis=(0, 1))
    return energy, m, hel


# --- agreement with a straight numpy.fft computation -------------------------------------------------------------


@settings(max_examples=25, deadline=None)
@given(
    nx=st.integers(2, 7),
    ny=st.integers(2, 7),
    nz=st.integers(2, 7),
    dtype=st.sampled_from([np.float32, np.float64]),
    fortran=st.booleans(),
    periodic=st.booleans(),
    seed=st.integers(0, 2**31),
)
def test_profiles_match_numpy_fft(nx, ny, nz, dtype, fortran, periodic, seed):
    # Source: numpy.fft evaluation of the same definitions, written above (reference library).
    rng = np.random.default_rng(seed)
    u = rng.standard_normal((3, nx, ny, nz)).astype(dtype)
    b = (rng.standard_normal((3, nx, ny, nz)) * 3.0 + 1.0).astype(dtype)
    if fortran:
        u, b = np.asfortranarray(u), np.asfortranarray(b)
    d = (1.0, 0.7, 1.3)
    p = stats.turbulence_profiles(u, b, spacing=d, periodic_z=periodic)
    tol = 1e-10 if dtype == np.float64 else 2e-5
    for f, shape4, shape, hel in [
        (u, p.u_shape4, p.u_shape, p.kinetic_helicity),
        (b, p.b_shape4, p.b_shape, p.current_helicity),
    ]:
        e, m, h = numpy_reference(f, d, periodic)
        scale = e.max()
        good = e > 1e-9 * scale
        np.testing.assert_allclose(shape4[good], (m / e[:, None, None, None, None])[good], atol=tol, rtol=0)
        np.testing.assert_allclose(shape[good], np.einsum("zjmnn->zjm", m)[good] / e[good, None, None], atol=tol)
        kmax = np.pi / min(d)
        np.testing.assert_allclose(hel, h, atol=tol * scale * kmax)


def test_point_profiles_match_numpy():
    # Source: numpy means and products, direct.
    rng = np.random.default_rng(4)
    u = rng.standard_normal((3, 6, 5, 4)) + 2.0
    b = rng.standard_normal((3, 6, 5, 4)).astype(np.float32)
    p = stats.turbulence_profiles(u, b, spacing=2.0)
    bb = b.astype(np.float64)
    up = u - u.mean(axis=(1, 2), keepdims=True)
    bp = bb - bb.mean(axis=(1, 2), keepdims=True)
    np.testing.assert_allclose(p.mean_u, u.mean(axis=(1, 2)).T, atol=1e-13)
    np.testing.assert_allclose(p.mean_b, bb.mean(axis=(1, 2)).T, atol=1e-13)
    np.testing.assert_allclose(p.reynolds, np.einsum("ixyz,jxyz->zij", up, up) / 30, atol=1e-13)
    np.testing.assert_allclose(p.maxwell, np.einsum("ixyz,jxyz->zij", bp, bp) / 30, atol=1e-13)
    np.testing.assert_allclose(p.emf, np.cross(up, bp, axis=0).mean(axis=(1, 2)).T, atol=1e-13)
    np.testing.assert_allclose(p.z, (np.arange(4) - 1.5) * 2.0)


def test_fortran_order_and_float32_give_the_same_answer():
    u = synthetic.solenoidal_field((16, 12, 10), seed=5)
    b = synthetic.solenoidal_field((16, 12, 10), seed=6)
    p_c = stats.turbulence_profiles(u, b, spacing=1.0)
    p_f = stats.turbulence_profiles(np.asfortranarray(u), np.asfortranarray(b), spacing=1.0)
    p_32 = stats.turbulence_profiles(u.astype(np.float32), b.astype(np.float32), spacing=1.0)
    for name, arr in p_c.arrays().items():
        np.testing.assert_allclose(getattr(p_f, name), arr, atol=1e-12, err_msg=name)
        np.testing.assert_allclose(getattr(p_32, name), arr, atol=1e-5, err_msg=name)


# --- analytic flows ----------------------------------------------------------------------------------------------


@pytest.mark.parametrize("k", [1, 2])
def test_abc_flow_helicity_is_k_times_energy(k):
    # Source: Arnold 1965; Dombre et al. 1986: the ABC flow is a Beltrami field, curl u = k u. The A part is a
    # horizontal mean, so the fluctuation is the ABC flow with A = 0 (still Beltrami): <u'^2> = B^2 + C^2.
    n = 24
    h = TAU / n
    x = np.arange(n) * h
    X, Y, Z = np.meshgrid(x, x, x, indexing="ij")
    a = b = c = 1.0
    u = np.stack(
        [
            a * np.sin(k * Z) + c * np.cos(k * Y),
            b * np.sin(k * X) + a * np.cos(k * Z),
            c * np.sin(k * Y) + b * np.cos(k * X),
        ]
    )
    p = stats.turbulence_profiles(u, u, spacing=h)
    np.testing.assert_allclose(p.kinetic_helicity, k * (b**2 + c**2), rtol=1e-12)
    np.testing.assert_allclose(p.current_helicity, k * (b**2 + c**2), rtol=1e-12)
    np.testing.assert_allclose(np.trace(p.reynolds, axis1=1, axis2=2), b**2 + c**2, rtol=1e-12)
    np.testing.assert_allclose(p.mean_u[:, 0], a * np.sin(k * x), atol=1e-12)


def test_roberts_flow_helicity_profile():
    # Source: G.O. Roberts 1972 (normalisation of PHYSICS.md 6.1): curl u = k_f u, k_f = sqrt(2) k, <u^2> = u0^2,
    # so <u . curl u> = sqrt(2) k u0^2 at every height; <u_z^2> = u0^2 / 2.
    n, k, u0 = 32, 2.0, 3.0
    h = TAU / n
    x = np.arange(n) * h
    X, Y, _ = np.meshgrid(x, x, np.arange(8) * h, indexing="ij")
    u = u0 * np.stack(
        [np.sin(k * X) * np.cos(k * Y), -np.cos(k * X) * np.sin(k * Y), np.sqrt(2) * np.sin(k * X) * np.sin(k * Y)]
    )
    p = stats.turbulence_profiles(u, 0.0 * u, spacing=h)
    np.testing.assert_allclose(p.kinetic_helicity, np.sqrt(2) * k * u0**2, rtol=1e-12)
    np.testing.assert_allclose(p.reynolds[:, 2, 2], u0**2 / 2, rtol=1e-12)
    # Its wavevectors are horizontal, (+-k, +-k, 0): N_zz = 0 and N_xx = N_yy = 1/2 (definition of K_jm).
    np.testing.assert_allclose(p.u_shape[:, 2, 2], 0.0, atol=1e-13)
    np.testing.assert_allclose(p.u_shape[:, 0, 0], 0.5, atol=1e-13)


# --- Parseval, trace, EMF ------------------------------------------------------------------------------------------


def test_parseval_and_trace():
    # Source: Parseval's theorem and K_jj = identity for k != 0 (definition): contracting j = m of the fourth-rank
    # moment gives the real-space second moments; the shape tensor has trace 1 at every height.
    u = synthetic.solenoidal_field((16, 16, 12), seed=9, envelope=lambda z: np.exp(-(z**2) / 20.0))
    for periodic in (True, False):
        p = stats.turbulence_profiles(u, u, spacing=1.0, periodic_z=periodic)
        tr = np.trace(p.reynolds, axis1=1, axis2=2)
        np.testing.assert_allclose(np.einsum("zjjnk->znk", p.u_shape4), p.reynolds / tr[:, None, None], atol=1e-12)
        np.testing.assert_allclose(np.trace(p.u_shape, axis1=1, axis2=2), 1.0, atol=1e-12)
        np.testing.assert_allclose(p.u_shape, np.swapaxes(p.u_shape, 1, 2), atol=1e-14)
        assert np.all(np.linalg.eigvalsh(p.u_shape) > -1e-12)  # positive semidefinite (sum of k k^T / k^2 weights)


def test_emf_vanishes_for_parallel_fluctuations():
    # Source: u' x (c u') = 0 identically (vector algebra); the mean of b does not enter the EMF.
    u = synthetic.solenoidal_field((12, 12, 12), seed=2)
    b = -2.5 * u + np.array([0.0, 1.0, 3.0])[:, None, None, None]
    p = stats.turbulence_profiles(u, b, spacing=1.0)
    np.testing.assert_allclose(p.emf, 0.0, atol=1e-13)
    np.testing.assert_allclose(p.b_shape, p.u_shape, atol=1e-12)


# --- isotropy and vertical modes -----------------------------------------------------------------------------------


def test_isotropic_field_has_one_third_on_the_diagonal():
    # Source: isotropy (standard result: <k_j k_m / k^2> = delta_jm / 3). Tolerance: three standard errors from an
    # ensemble of independent seeds, computed here.
    samples = np.array(
        [stats.shape_tensor(synthetic.solenoidal_field((24, 24, 24), seed=s), profile=False) for s in range(8)]
    )
    mean = samples.mean(axis=0)
    se = samples.std(axis=0, ddof=1) / np.sqrt(len(samples))
    assert np.all(np.abs(np.diag(mean) - 1.0 / 3.0) < 3 * np.diag(se))
    off = ~np.eye(3, dtype=bool)
    assert np.all(np.abs(mean[off]) < 3 * se[off] + 1e-12)


def test_vertical_wavevectors_give_szz_one():
    # Source: definition of K_zz (symbol k_z^2 / k^2 = 1 when k is along z).
    nz = 16
    z = np.arange(nz) * TAU / nz
    f = np.zeros((3, 8, 8, nz))
    f[0] = np.sin(z) + 0.5 * np.cos(3 * z)
    f[1] = np.cos(2 * z)
    np.testing.assert_allclose(stats.shape_tensor(f, profile=False), np.diag([0.0, 0.0, 1.0]), atol=1e-13)
    prof = stats.shape_tensor(f, mean="volume")
    np.testing.assert_allclose(prof[:, 2, 2], 1.0, atol=1e-12)
    # Such a field is entirely a horizontal mean: the per-height tensor of its (zero) fluctuation is undefined.
    assert np.all(np.isnan(stats.shape_tensor(f)))


def test_flattened_eddies_match_the_analytic_shape_factors():
    # Derived: docs/stats.md section 3, from the phi(kappa) P(k) spectral form
    # (PHYSICS.md 3.6). Three standard errors from an ensemble; the finite box adds a small lattice bias.
    for aspect in [(1.0, 1.0, 0.5), (1.0, 2.0, 1.0)]:
        samples = np.array(
            [
                np.diag(
                    stats.shape_tensor(synthetic.solenoidal_field((32, 32, 32), aspect=aspect, seed=s), profile=False)
                )
                for s in range(8)
            ]
        )
        want = np.diag(synthetic.expected_statistics(aspect).shape)
        se = samples.std(axis=0, ddof=1) / np.sqrt(len(samples))
        assert np.all(np.abs(samples.mean(axis=0) - want) < 3 * se + 2e-3), (samples.mean(axis=0), want, se)


# --- bad input -----------------------------------------------------------------------------------------------------


def test_bad_input_names_the_argument():
    u = np.zeros((3, 4, 4, 4))
    with pytest.raises(InputError, match="^u: must have shape"):
        stats.turbulence_profiles(np.zeros((2, 4, 4, 4)), u, spacing=1.0)
    with pytest.raises(InputError, match="^b: shape"):
        stats.turbulence_profiles(u, np.zeros((3, 4, 4, 5)), spacing=1.0)
    bad = u.copy()
    bad[1, 2, 3, 0] = np.nan
    with pytest.raises(InputError, match=r"^b: must be finite, found NaN at index \(1, 2, 3, 0\)"):
        stats.turbulence_profiles(u, bad, spacing=1.0)
    with pytest.raises(InputError, match=r"^field: must be finite"):
        stats.shape_tensor(bad)
    for sp in (0.0, -1.0, (1.0, 1.0, 0.0), np.nan):
        with pytest.raises(InputError, match="^spacing"):
            stats.turbulence_profiles(u, u, spacing=sp)
    with pytest.raises(InputError, match="^rho: must be positive"):
        stats.turbulence_profiles(u, u, spacing=1.0, rho=-np.ones((4, 4, 4)))
    with pytest.raises(InputError, match="^rho: must have the grid shape"):
        stats.turbulence_profiles(u, u, spacing=1.0, rho=np.ones((4, 4)))
    with pytest.raises(InputError, match="^u: must be float32 or float64"):
        stats.turbulence_profiles(u.astype(np.int64), u, spacing=1.0)
    with pytest.raises(InputError, match="^mean"):
        stats.shape_tensor(u, mean="box")


def test_density_and_pressure_profiles():
    rng = np.random.default_rng(0)
    u = rng.standard_normal((3, 4, 5, 6))
    rho = np.exp(-np.linspace(-1, 1, 6))[None, None, :] * (1 + 0.1 * rng.random((4, 5, 6)))
    pres = 2.0 * rho
    p = stats.turbulence_profiles(u, u, spacing=1.0, rho=rho, pressure=pres)
    np.testing.assert_allclose(p.rho, rho.mean(axis=(0, 1)), rtol=1e-14)
    np.testing.assert_allclose(p.pressure, pres.mean(axis=(0, 1)), rtol=1e-14)
    # Alfven units: b / sqrt(4 pi rho) (Gaussian units definition of the Alfven speed)
    pa = stats.turbulence_profiles(u, u, spacing=1.0, rho=rho, alfven_units=True)
    ba = u / np.sqrt(4 * np.pi * rho)
    np.testing.assert_allclose(pa.mean_b, ba.mean(axis=(1, 2)).T, atol=1e-13)
    with pytest.raises(InputError, match="^rho: is needed"):
        stats.turbulence_profiles(u, u, spacing=1.0, alfven_units=True)
    ds = p.to_xarray()
    np.testing.assert_array_equal(ds["b_shape4"].values, p.b_shape4)
    assert ds["maxwell"].attrs["units"] == "G2"
    assert "nz=6" in repr(p)


def test_height_grid_is_centred():
    np.testing.assert_allclose(stats.height_grid(5, 0.5), [-1.0, -0.5, 0.0, 0.5, 1.0])
    with pytest.raises(InputError, match="^dz"):
        stats.height_grid(4, -1.0)


def test_docstring_examples_run():
    import doctest

    for module in (stats, synthetic):
        result = doctest.testmod(module, optionflags=doctest.NORMALIZE_WHITESPACE)
        assert result.attempted > 0 and result.failed == 0, module.__name__


def test_strided_views_are_read_in_place():
    # Reference: the same values made contiguous by numpy; a strided view (every other x, reversed y) must give
    # the same profiles, so the core honours strides instead of assuming a contiguous buffer.
    big = synthetic.solenoidal_field((16, 12, 10), seed=8)
    view = big[:, ::2, ::-1, :]
    assert not view.flags.c_contiguous and not view.flags.f_contiguous
    got = stats.turbulence_profiles(view, view, spacing=1.0)
    want = stats.turbulence_profiles(np.ascontiguousarray(view), np.ascontiguousarray(view), spacing=1.0)
    for name, arr in want.arrays().items():
        np.testing.assert_allclose(getattr(got, name), arr, atol=1e-13, err_msg=name)
    rho32 = np.ones((8, 12, 10), dtype=np.float32)
    assert stats.turbulence_profiles(view, view, spacing=1.0, rho=rho32).rho.dtype == np.float64


def test_isotropic_fourth_rank_moments():
    # Derived: PHYSICS.md section 9 row 11 (isotropic average, from the isotropic solenoidal spectral tensor):
    # <(K_jm b_l) b_k> = (<b^2>/30)(4 d_jm d_lk - d_jl d_mk - d_jk d_ml); S_xxzz = 2/15, S_xxxx = 1/15, S_zyzy = -1/30.
    # Ensemble of 8 seeds; 81 components, so four standard errors (Bonferroni-style allowance for many checks).
    d = np.eye(3)
    want = (4 * np.einsum("jm,lk->jmlk", d, d) - np.einsum("jl,mk->jmlk", d, d) - np.einsum("jk,ml->jmlk", d, d)) / 30
    samples = []
    for s in range(8):
        f = synthetic.solenoidal_field((32, 32, 32), seed=100 + s)
        p = stats.turbulence_profiles(f, f, spacing=1.0)
        e = np.trace(p.maxwell, axis1=1, axis2=2)
        samples.append(np.einsum("zjmlk,z->jmlk", p.b_shape4, e) / e.sum())
    samples = np.array(samples)
    se = samples.std(axis=0, ddof=1) / np.sqrt(len(samples))
    assert np.all(np.abs(samples.mean(axis=0) - want) < 4 * se + 1e-12)
    np.testing.assert_allclose(want[0, 0, 2, 2], 2 / 15)
    np.testing.assert_allclose(want[2, 1, 2, 1], -1 / 30)
