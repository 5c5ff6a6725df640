r"""Synthetic turbulence: random solenoidal fields with a prescribed spectrum, anisotropy and helicity.

For demos and tests. The fields are Gaussian random fields on a periodic grid whose spectral tensor is

.. math:: \langle \hat b_i(\mathbf k) \hat b_j^*(\mathbf k) \rangle \propto \phi(\kappa)
          \left[ P_{ij}(\mathbf k) + i \sigma \epsilon_{ijl} \frac{k_l}{k} \right],
          \qquad \kappa^2 = (a_x k_x)^2 + (a_y k_y)^2 + (a_z k_z)^2,

with ``P_ij = delta_ij - k_i k_j / k^2`` (solenoidal), ``a = aspect`` the eddy sizes along x, y, z relative
to each other (``a_z < a_x = a_y``: eddies flattened along z), ``phi(kappa) = E(kappa) / (4 pi kappa^2)``
from the shell spectrum ``E`` and ``sigma = helicity`` the helicity fraction.

Analytic statistics (for ``envelope=None``; `expected_statistics` evaluates them):

* Shape factors depend only on the aspect ratios, not on ``E`` (the ratio is homogeneous of degree zero in
  ``k``): ``N_jm = 0`` for ``j != m`` and, with ``lambda_i = 1 / a_i^2``,

  .. math:: N_j = \lambda_j \int_0^\infty \frac{dt}{(1 + 2 t \lambda_j)
            \prod_i (1 + 2 t \lambda_i)^{1/2}},

  derived in docs/stats.md section 3; isotropic ``a`` gives ``1/3``. For ``a_x = a_y = a``,
  ``a_z = c``, ``r = c^2/a^2 < 1``: ``N_z = [1 - sqrt(r/(1-r)) arctan(sqrt((1-r)/r))] / (1 - r)``.
* Component energies: ``<b_j^2> / <b^2> = (1 - N_j) / 2`` (from ``tr P = 2`` and ``P_jj = 1 - k_j^2/k^2``).
* Helicity: ``<b . curl b> = sigma * sum_k |k| |b_k|^2`` in expectation, so ``<b . curl b> / (k_E <b^2>)``
  has mean ``sigma``, with ``k_E`` the energy-weighted mean ``|k|``; exact for every realisation when
  ``|sigma| = 1``.

All of these are expectations; one realisation scatters around them with a sampling error that falls as
the number of excited modes grows. Modes at ``k = 0`` and on Nyquist planes are left empty.
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass
from typing import Any

import numpy as np
from numpy.typing import NDArray

from ._errors import InputError
from ._validate import as_float, check_finite, check_positive

__all__ = ["solenoidal_field", "expected_statistics", "SyntheticStatistics"]


def _aspect_and_helicity(aspect: Any, helicity: Any) -> tuple[NDArray[np.float64], float]:
    """Check the eddy aspect ratios (three positive numbers) and the helicity fraction (in [-1, 1])."""
    a = as_float("aspect", aspect)
    if a.shape != (3,):
        raise InputError(f"aspect: must be three numbers (a_x, a_y, a_z), got shape {a.shape}")
    check_positive("aspect", a)
    sigma = float(as_float("helicity", helicity))
    if not -1.0 <= sigma <= 1.0:
        raise InputError(f"helicity: must lie in [-1, 1], got {sigma}")
    return a, sigma


def _spectrum(name: str | Callable[[NDArray[np.float64]], Any], kappa: NDArray[np.float64], k_peak: float) -> Any:
    x = kappa / k_peak
    if callable(name):
        e = as_float("spectrum", name(kappa))
        if e.shape != kappa.shape:
            raise InputError(f"spectrum: must return an array of the shape of its input {kappa.shape}, got {e.shape}")
        check_finite("spectrum", e)
        if np.any(e < 0):
            raise InputError("spectrum: returned negative energies")
        return e
    if name == "gaussian":
        return x**4 * np.exp(-2.0 * x**2)
    if name == "kolmogorov":
        return x**4 * (1.0 + x**2) ** (-17.0 / 6.0)
    raise InputError(f"spectrum: must be 'gaussian', 'kolmogorov' or a callable E(kappa), got {name!r}")


def solenoidal_field(
    shape: tuple[int, int, int],
    *,
    spacing: Any = 1.0,
    k_peak: float | None = None,
    spectrum: str | Callable[[NDArray[np.float64]], Any] = "gaussian",
    aspect: tuple[float, float, float] = (1.0, 1.0, 1.0),
    helicity: float = 0.0,
    envelope: Callable[[NDArray[np.float64]], Any] | NDArray[Any] | None = None,
    rms: float = 1.0,
    seed: int = 0,
    dtype: Any = np.float64,
) -> NDArray[Any]:
    """Random divergence-free vector field with a prescribed spectrum (module docs give its statistics).

    Parameters
    ----------
    shape : (nx, ny, nz)
        Grid size, each at least 4.
    spacing : float or (dx, dy, dz), default 1.0
        Cell size(s), cm.
    k_peak : float, optional
        Peak of the shell spectrum in the stretched wavenumber ``kappa``, rad/cm. Default: four times the
        fundamental ``2 pi / L`` of the shortest box side.
    spectrum : {"gaussian", "kolmogorov"} or callable, default "gaussian"
        Shell spectrum ``E(kappa)``: ``x^4 exp(-2 x^2)`` (peak at ``x = kappa/k_peak = 1``), or the von
        Karman form ``x^4 (1 + x^2)^(-17/6)`` (``kappa^(-5/3)`` inertial range), or a callable returning
        non-negative values for an array of ``kappa``.
    aspect : (a_x, a_y, a_z), default (1, 1, 1)
        Relative eddy sizes along x, y, z (positive). ``(1, 1, 0.3)``: eddies flattened along z;
        ``(1, 3, 1)``: eddies stretched along y.
    helicity : float, default 0
        Helicity fraction ``sigma`` in [-1, 1]; positive for right-handed (``b . curl b > 0``).
    envelope : callable or ndarray (nz,), optional
        Vertical envelope ``e(z)``, with ``z`` from `fluxfunnel.stats.height_grid` (cm). The field is
        ``curl(e(z) A)`` with ``A`` the vector potential of the unmodulated field, so it stays solenoidal;
        the analytic statistics then hold locally where ``e`` varies slowly on the eddy scale.
    rms : float, default 1.0
        Root-mean-square magnitude over the box, in the unit wanted (cm/s for a velocity, G for a field).
    seed : int, default 0
        Seed of ``numpy.random.default_rng``; equal seeds give equal fields.
    dtype : {numpy.float64, numpy.float32}
        Output type (generation is in float64).

    Returns
    -------
    ndarray, (3, nx, ny, nz)
        The field, C-ordered.

    Examples
    --------
    >>> b = solenoidal_field((16, 16, 16), aspect=(1.0, 1.0, 0.5), helicity=1.0, rms=2.0, seed=7)
    >>> b.shape, round(float(np.sqrt((b**2).sum(axis=0).mean())), 12)
    ((3, 16, 16, 16), 2.0)
    """
    from .stats import _spacing3, height_grid

    try:
        n = tuple(int(s) for s in shape)
    except Exception as exc:
        raise InputError(f"shape: must be three integers (nx, ny, nz), got {shape!r}") from exc
    if len(n) != 3 or min(n) < 4 or any(int(s) != s for s in shape):
        raise InputError(f"shape: must be three integers >= 4, got {shape!r}")
    d = _spacing3(spacing)
    a, sigma = _aspect_and_helicity(aspect, helicity)
    rms_v = as_float("rms", rms)
    check_positive("rms", rms_v)
    if np.dtype(dtype) not in (np.float32, np.float64):
        raise InputError(f"dtype: must be float32 or float64, got {dtype!r}")
    if k_peak is None:
        kp = 4.0 * 2.0 * np.pi / min(ni * di for ni, di in zip(n, d, strict=True))
    else:
        kpa = as_float("k_peak", k_peak)
        check_positive("k_peak", kpa)
        kp = float(kpa)

    k1 = [2.0 * np.pi * np.fft.fftfreq(ni, di) for ni, di in zip(n, d, strict=True)]
    kx, ky, kz = np.meshgrid(*k1, indexing="ij", sparse=True)
    kvec = np.broadcast_arrays(kx, ky, kz)
    kk = np.sqrt(kx**2 + ky**2 + kz**2)
    kappa = np.sqrt((a[0] * kx) ** 2 + (a[1] * ky) ** 2 + (a[2] * kz) ** 2)
    live = kk > 0
    for axis, ni in enumerate(n):
        if ni % 2 == 0:
            idx = [slice(None)] * 3
            idx[axis] = slice(ni // 2, ni // 2 + 1)
            live[tuple(idx)] = False
    phi = np.zeros(n)
    e = _spectrum(spectrum, np.where(live, kappa, 1.0), kp)
    phi[live] = (e / (4.0 * np.pi * np.where(live, kappa, 1.0) ** 2))[live]

    # Helical basis: e2 odd and e1 even in k, so h(-k) = conj(h(k)) and the field is real.
    safe = np.where(live, kk, 1.0)
    khat = np.stack([c / safe for c in kvec])
    ref = np.zeros((3,) + n)
    vertical = (kx == 0) & (ky == 0) & np.ones(n, dtype=bool)
    ref[2] = ~vertical
    ref[0] = vertical
    e2 = np.cross(khat, ref, axis=0)
    e2 /= np.where(live, np.linalg.norm(e2, axis=0), 1.0)
    e1 = np.cross(e2, khat, axis=0)
    hp = (e1 + 1j * e2) / np.sqrt(2.0)
    hm = (e1 - 1j * e2) / np.sqrt(2.0)

    rng = np.random.default_rng(seed)
    white = np.fft.fftn(rng.standard_normal((3,) + n), axes=(1, 2, 3))
    ap = np.einsum("i...,i...->...", hp.conj(), white)
    am = np.einsum("i...,i...->...", hm.conj(), white)
    amp = np.sqrt(phi) * live
    cp = amp * np.sqrt(1.0 + sigma) * ap
    cm = amp * np.sqrt(1.0 - sigma) * am

    if envelope is None:
        spec = cp * hp + cm * hm
    else:
        z = height_grid(n[2], d[2])
        env = as_float("envelope", envelope(z) if callable(envelope) else envelope)
        if env.shape != (n[2],):
            raise InputError(f"envelope: must give one value per height ({n[2]},), got shape {env.shape}")
        check_finite("envelope", env)
        # Vector potential with curl A = b for e = 1 (curl h+- = +-|k| h+-).
        pot = (cp * hp - cm * hm) / safe
        field_a = np.fft.ifftn(pot, axes=(1, 2, 3)).real * env
        fa = np.fft.fftn(field_a, axes=(1, 2, 3))
        ko = []
        for axis, (ni, kv) in enumerate(zip(n, kvec, strict=True)):
            kv = kv.copy()
            if ni % 2 == 0:
                idx = [slice(None)] * 3
                idx[axis] = slice(ni // 2, ni // 2 + 1)
                kv[tuple(idx)] = 0.0
            ko.append(kv)
        spec = 1j * np.stack(
            [ko[1] * fa[2] - ko[2] * fa[1], ko[2] * fa[0] - ko[0] * fa[2], ko[0] * fa[1] - ko[1] * fa[0]]
        )
    field = np.fft.ifftn(spec, axes=(1, 2, 3)).real
    norm = float(np.sqrt((field**2).sum(axis=0).mean()))
    if not norm > 0:
        raise InputError("envelope: the field vanishes everywhere (zero envelope or empty spectrum)")
    field *= float(rms_v) / norm
    return np.ascontiguousarray(field, dtype=dtype)


@dataclass(frozen=True, repr=False)
class SyntheticStatistics:
    """Expected statistics of `solenoidal_field` (envelope ``None``).

    Attributes
    ----------
    shape : ndarray, (3, 3)
        Shape tensor ``N_jm`` (diagonal, trace 1).
    component_fractions : ndarray, (3,)
        ``<b_j^2> / <b^2> = (1 - N_j) / 2``.
    helicity_fraction : float
        ``<b . curl b> / (k_E <b^2>)``, equal to the ``helicity`` argument.
    """

    shape: NDArray[np.float64]
    component_fractions: NDArray[np.float64]
    helicity_fraction: float

    def __repr__(self) -> str:
        diag = ", ".join(f"{v:.4f}" for v in np.diag(self.shape))
        return f"SyntheticStatistics(N_diag=[{diag}], helicity_fraction={self.helicity_fraction:g})"


def expected_statistics(aspect: Any = (1.0, 1.0, 1.0), helicity: float = 0.0) -> SyntheticStatistics:
    """Return the expected shape factors, component energies and helicity fraction of `solenoidal_field`.

    Parameters
    ----------
    aspect : (a_x, a_y, a_z)
        Relative eddy sizes, as in `solenoidal_field`.
    helicity : float
        Helicity fraction in [-1, 1].

    Returns
    -------
    SyntheticStatistics
        Continuum (infinite-box) values; the module docs give the formulas. They are expectations over
        realisations for a well-resolved spectrum, not values of any one realisation.

    Examples
    --------
    >>> s = expected_statistics((1.0, 1.0, 1.0))
    >>> [round(float(v), 12) for v in np.diag(s.shape)]
    [0.333333333333, 0.333333333333, 0.333333333333]
    """
    from scipy.integrate import quad

    a, sigma = _aspect_and_helicity(aspect, helicity)
    lam = 1.0 / (a / a.max()) ** 2
    diag = np.empty(3)
    for j in range(3):

        def integrand(t: float, j: int = j) -> float:
            return float(lam[j] / ((1.0 + 2.0 * t * lam[j]) * np.sqrt(np.prod(1.0 + 2.0 * t * lam))))

        diag[j] = quad(integrand, 0.0, np.inf, epsabs=1e-14, epsrel=1e-12, limit=200)[0]
    return SyntheticStatistics(shape=np.diag(diag), component_fractions=(1.0 - diag) / 2.0, helicity_fraction=sigma)
