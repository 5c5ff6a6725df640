"""Analytic reference flows: Beltrami property, normalisation, helicity, bad input."""

import numpy as np
import pytest
from fluxfunnel import InputError
from fluxfunnel.flows import abc_flow, roberts_flow


def spectral_curl(u, spacing):
    """Curl of a periodic field by numpy.fft (independent of the Rust core)."""
    n = u.shape[1:]
    ks = [2 * np.pi * np.fft.fftfreq(m, d=h) for m, h in zip(n, spacing, strict=True)]
    kx, ky, kz = np.meshgrid(*ks, indexing="ij")
    uh = np.fft.fftn(u, axes=(1, 2, 3))
    curl = np.stack([1j * (ky * uh[2] - kz * uh[1]), 1j * (kz * uh[0] - kx * uh[2]), 1j * (kx * uh[1] - ky * uh[0])])
    div = 1j * (kx * uh[0] + ky * uh[1] + kz * uh[2])
    return np.fft.ifftn(curl, axes=(1, 2, 3)).real, np.fft.ifftn(div).real


def test_roberts_flow_is_beltrami_with_the_stated_moments():
    # Source: PHYSICS.md section 6.1 eq. (6.1), after G.O. Roberts 1972: curl u = k_f u, k_f = sqrt(2) k,
    # <u^2> = u0^2, <u_z^2> = u0^2 / 2, <u . omega> = k_f u0^2.
    n, k, u0 = 16, 2.0, 3.0
    h = (np.pi / n, np.pi / n, 0.5)  # box of side 2 pi / k horizontally
    u = roberts_flow((n, n, 4), u0=u0, k=k, spacing=h)
    assert u.shape == (3, n, n, 4)
    curl, div = spectral_curl(u, h)
    k_f = np.sqrt(2) * k
    np.testing.assert_allclose(curl, k_f * u, atol=1e-12 * u0 * k_f)
    np.testing.assert_allclose(div, 0.0, atol=1e-12 * u0 * k)
    assert np.mean(np.sum(u**2, axis=0)) == pytest.approx(u0**2, rel=1e-13)
    assert np.mean(u[2] ** 2) == pytest.approx(u0**2 / 2, rel=1e-13)
    assert np.mean(np.sum(u * curl, axis=0)) == pytest.approx(k_f * u0**2, rel=1e-12)


def test_abc_flow_is_beltrami_with_unit_eigenvalue_k():
    # Source: PHYSICS.md section 6.2 (Arnold 1965; Childress 1970): curl u = k u, <u^2> = A^2 + B^2 + C^2.
    n, k = 12, 1.0
    h = 2 * np.pi / n
    u = abc_flow((n, n, n), a=1.0, b=0.7, c=0.4, k=k, spacing=h)
    curl, div = spectral_curl(u, (h, h, h))
    np.testing.assert_allclose(curl, k * u, atol=1e-12)
    np.testing.assert_allclose(div, 0.0, atol=1e-12)
    assert np.mean(np.sum(u**2, axis=0)) == pytest.approx(1.0 + 0.49 + 0.16, rel=1e-13)


@pytest.mark.parametrize(
    "kwargs, match",
    [
        (dict(shape=(8, 8), u0=1.0, k=1.0, spacing=0.1), "shape"),
        (dict(shape=(8, 8, 2), u0=1.0, k=-1.0, spacing=0.1), "k"),
        (dict(shape=(8, 8, 2), u0=np.nan, k=1.0, spacing=0.1), "u0"),
        (dict(shape=(8, 8, 2), u0=1.0, k=1.0, spacing=(0.1, -0.1, 0.1)), "spacing"),
        (dict(shape=(8, 8, 2), u0=1.0, k=1.0, spacing=(0.1, 0.1)), "spacing"),
    ],
)
def test_bad_flow_arguments_are_named(kwargs, match):
    shape = kwargs.pop("shape")
    with pytest.raises(InputError, match=match):
        roberts_flow(shape, **kwargs)
