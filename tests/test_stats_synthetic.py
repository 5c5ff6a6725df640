"""fluxfunnel.synthetic against its documented analytic statistics and outside references."""

import numpy as np
import pytest
from fluxfunnel import InputError, stats, synthetic
from scipy.integrate import dblquad

TAU = 2.0 * np.pi


def spectral_divergence(f, d=(1.0, 1.0, 1.0)):
    spec = np.fft.fftn(f, axes=(1, 2, 3))
    ks = np.meshgrid(*[TAU * np.fft.fftfreq(n, dd) for n, dd in zip(f.shape[1:], d, strict=True)], indexing="ij")
    return np.fft.ifftn(1j * sum(k * s for k, s in zip(ks, spec, strict=True))).real


@pytest.mark.parametrize("envelope", [None, lambda z: np.exp(-(z**2) / 18.0)])
def test_fields_are_solenoidal_real_and_normalised(envelope):
    # Source: numpy.fft spectral divergence (reference library); rms by its definition.
    f = synthetic.solenoidal_field((16, 12, 20), spacing=(1.0, 2.0, 0.5), envelope=envelope, rms=3.0, seed=4)
    assert f.shape == (3, 16, 12, 20) and f.dtype == np.float64 and f.flags.c_contiguous
    # the spectral divergence vanishes up to rounding (Nyquist modes are empty, so every convention agrees)
    assert np.abs(spectral_divergence(f, (1.0, 2.0, 0.5))).max() < 1e-12 * np.abs(f).max()
    np.testing.assert_allclose(np.sqrt((f**2).sum(axis=0).mean()), 3.0, rtol=1e-13)


def test_seeded_and_reproducible():
    a = synthetic.solenoidal_field((8, 8, 8), seed=11)
    np.testing.assert_array_equal(a, synthetic.solenoidal_field((8, 8, 8), seed=11))
    assert not np.allclose(a, synthetic.solenoidal_field((8, 8, 8), seed=12))
    f32 = synthetic.solenoidal_field((8, 8, 8), seed=11, dtype=np.float32)
    assert f32.dtype == np.float32
    np.testing.assert_allclose(f32, a, atol=1e-6)


def test_envelope_shapes_the_energy_profile():
    # A wide Gaussian envelope: the horizontal energy follows e(z)^2 where e varies slowly (documented locally).
    env = lambda z: np.exp(-(z**2) / (2 * 8.0**2))  # noqa: E731
    f = synthetic.solenoidal_field((32, 32, 48), envelope=env, seed=1, k_peak=TAU * 8 / 32)
    e = (f**2).sum(axis=0).mean(axis=(0, 1))
    z = stats.height_grid(48, 1.0)
    ratio = e / env(z) ** 2
    core = np.abs(z) < 12
    # Common practice (no single source): sampling scatter of a 32x32 horizontal average of ~20 % is expected.
    assert np.std(ratio[core]) / np.mean(ratio[core]) < 0.35
    assert e[np.abs(z) > 20].mean() < 0.05 * e[core].mean()


def test_full_helicity_is_exact():
    # Derived: docs/stats.md section 4: every mode is an eigenvector of curl with eigenvalue +|k|
    # when helicity = 1, so <b . curl b> = sum |k| |b_k|^2 / N^2 exactly (Parseval, numpy.fft reference). The profile
    # routine removes the horizontal mean, i.e. the (kx, ky) = (0, 0) modes.
    n = 24
    for sigma in (1.0, -1.0):
        f = synthetic.solenoidal_field((n, n, n), helicity=sigma, seed=3)
        p = stats.turbulence_profiles(f, f, spacing=1.0)
        spec = np.fft.fftn(f, axes=(1, 2, 3))
        spec[:, 0, 0, :] = 0.0
        ks = np.meshgrid(*[TAU * np.fft.fftfreq(n)] * 3, indexing="ij")
        kk = np.sqrt(sum(k**2 for k in ks))
        want = sigma * (kk * (np.abs(spec) ** 2).sum(axis=0)).sum() / n**6
        np.testing.assert_allclose(p.kinetic_helicity.mean(), want, rtol=1e-10)


def test_partial_helicity_fraction_within_sampling_error():
    # Derived: docs/stats.md section 4: expected <b . curl b> / (k_E <b^2>) = sigma. Three standard
    # errors from independent seeds.
    n, sigma = 24, 0.5
    ks = np.meshgrid(*[TAU * np.fft.fftfreq(n)] * 3, indexing="ij")
    kk = np.sqrt(sum(k**2 for k in ks))
    frac = []
    for seed in range(8):
        f = synthetic.solenoidal_field((n, n, n), helicity=sigma, seed=seed)
        spec = np.fft.fftn(f, axes=(1, 2, 3))
        power = (np.abs(spec) ** 2).sum(axis=0)
        curl = np.fft.ifftn(1j * np.cross(np.stack(ks), spec, axis=0), axes=(1, 2, 3)).real
        frac.append((f * curl).sum(axis=0).mean() / ((kk * power).sum() / power.sum() * (f**2).sum(axis=0).mean()))
    frac = np.array(frac)
    assert abs(frac.mean() - sigma) < 3 * frac.std(ddof=1) / np.sqrt(frac.size)


def test_component_energies_follow_shape_factors():
    # Derived: PHYSICS.md 3.6 / docs/stats.md section 3: <b_j^2>/<b^2> = (1 - N_j)/2 for phi(kappa) P(k) spectra.
    aspect = (1.0, 1.0, 0.5)
    fr = np.array(
        [
            (lambda f: (f**2).mean(axis=(1, 2, 3)) / (f**2).sum(axis=0).mean())(
                synthetic.solenoidal_field((32, 32, 32), aspect=aspect, seed=s)
            )
            for s in range(8)
        ]
    )
    want = synthetic.expected_statistics(aspect).component_fractions
    se = fr.std(axis=0, ddof=1) / np.sqrt(len(fr))
    assert np.all(np.abs(fr.mean(axis=0) - want) < 3 * se + 2e-3)


@pytest.mark.parametrize("ratio", [0.1, 0.5, 2.0, 10.0])
def test_expected_shape_factors_closed_form_and_sphere_quadrature(ratio):
    # Derived: docs/stats.md section 3. Two independent routes: the closed form
    # for axisymmetric aspect (a, a, c), r = c^2/a^2, and a direct average over the unit sphere (scipy dblquad).
    s = synthetic.expected_statistics((1.0, 1.0, ratio))
    r = ratio**2
    if r < 1:
        nz = (1.0 - np.sqrt(r / (1 - r)) * np.arctan(np.sqrt((1 - r) / r))) / (1 - r)
    else:
        nz = (1.0 - np.sqrt(r / (r - 1)) * np.arctanh(np.sqrt((r - 1) / r))) / (1 - r)
    np.testing.assert_allclose(s.shape[2, 2], nz, rtol=1e-9)
    np.testing.assert_allclose(np.trace(s.shape), 1.0, rtol=1e-12)
    lam = 1.0 / np.array([1.0, 1.0, ratio]) ** 2

    def sphere(j):
        def f(theta, phi):
            n = np.array([np.sin(theta) * np.cos(phi), np.sin(theta) * np.sin(phi), np.cos(theta)])
            return lam[j] * n[j] ** 2 / (lam @ n**2) * np.sin(theta) / (4 * np.pi)

        return dblquad(f, 0, TAU, 0, np.pi, epsabs=1e-11)[0]

    np.testing.assert_allclose(s.shape[0, 0], sphere(0), rtol=1e-7)
    np.testing.assert_allclose(s.shape[2, 2], sphere(2), rtol=1e-7)
    # limits (PHYSICS.md 3.6): pancakes push N_z toward 1, needles toward 0
    assert (s.shape[2, 2] > 1 / 3) == (ratio < 1)


def test_expected_triaxial_matches_sphere_quadrature():
    # Derived: docs/stats.md section 3; reference: scipy dblquad over the unit sphere.
    aspect = np.array([2.0, 1.0, 0.7])
    s = synthetic.expected_statistics(aspect)
    lam = 1.0 / aspect**2
    for j in range(3):

        def f(theta, phi, j=j):
            n = np.array([np.sin(theta) * np.cos(phi), np.sin(theta) * np.sin(phi), np.cos(theta)])
            return lam[j] * n[j] ** 2 / (lam @ n**2) * np.sin(theta) / (4 * np.pi)

        np.testing.assert_allclose(s.shape[j, j], dblquad(f, 0, TAU, 0, np.pi, epsabs=1e-11)[0], rtol=1e-7)


def test_bad_input():
    with pytest.raises(InputError, match="^shape"):
        synthetic.solenoidal_field((2, 8, 8))
    with pytest.raises(InputError, match="^aspect"):
        synthetic.solenoidal_field((8, 8, 8), aspect=(1.0, 0.0, 1.0))
    with pytest.raises(InputError, match="^helicity"):
        synthetic.solenoidal_field((8, 8, 8), helicity=1.5)
    with pytest.raises(InputError, match="^spectrum"):
        synthetic.solenoidal_field((8, 8, 8), spectrum="flat")
    with pytest.raises(InputError, match="^envelope"):
        synthetic.solenoidal_field((8, 8, 8), envelope=np.ones(7))
    with pytest.raises(InputError, match="^rms"):
        synthetic.solenoidal_field((8, 8, 8), rms=-1.0)
    with pytest.raises(InputError, match="^spacing"):
        synthetic.solenoidal_field((8, 8, 8), spacing=0.0)


def test_kolmogorov_and_callable_spectra():
    f = synthetic.solenoidal_field((16, 16, 16), spectrum="kolmogorov", seed=1)
    g = synthetic.solenoidal_field((16, 16, 16), spectrum=lambda k: np.exp(-k), seed=1)
    assert np.isfinite(f).all() and np.isfinite(g).all() and not np.allclose(f, g)
