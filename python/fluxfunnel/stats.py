"""Turbulence statistics from simulation snapshots, per height.

Snapshots are vector fields of shape ``(3, nx, ny, nz)``: components ``(x, y, z)`` = (radial, azimuthal,
vertical) of the local frame, z the last grid axis, float32 or float64, C or Fortran order (never copied).
Velocities in cm/s, magnetic fields in gauss, densities in g/cm^3, pressures in erg/cm^3, lengths in cm.

Conventions
-----------
* ``<.>`` is the horizontal (x-y) average at each height; a prime is the deviation from it.
* Height grid: cell centres ``z_k = (k - (nz - 1)/2) dz`` for ``k = 0 .. nz-1``, centred on the midplane
  (see `height_grid`).
* Spectral quantities use the operator ``K_jm`` with Fourier symbol ``k_j k_m / k^2`` (``K_jm = -R_j R_m``
  with ``R_j`` the Riesz transform). x and y are periodic. z is periodic by default; with
  ``periodic_z=False`` the fluctuations are zero-padded to twice the height of the box before the z
  transforms, so the box is treated as isolated (nothing wraps from top to bottom). The answer then depends
  on that choice near the vertical boundaries, and spectral derivatives ring where the field does not go
  to zero there.
* For odd powers of a wavenumber (first derivatives, ``k_j k_m`` with ``j != m``) the Nyquist mode is
  given wavenumber zero, so that real fields stay real; even powers use the full Nyquist value.

Everything here is a statistic of the given data, not a model. The shape tensors are one-point summaries of
the spectrum that the closure stage uses under its own stated assumptions.

References
----------
Krause, F. & Raedler, K.-H. 1980, *Mean-Field Magnetohydrodynamics and Dynamo Theory* (mean-field averages).
Stein, E. M. 1970, *Singular Integrals and Differentiability Properties of Functions* (Riesz transforms).
"""

from __future__ import annotations

import dataclasses
import math
from collections.abc import Iterable, Mapping, Sized
from dataclasses import dataclass
from typing import Any

import numpy as np
from numpy.typing import NDArray

from . import _core
from ._errors import InputError
from ._validate import as_float, check_finite, check_positive, strip_units

__all__ = [
    "TurbulenceProfiles",
    "AveragedProfiles",
    "ProfileAccumulator",
    "height_grid",
    "turbulence_profiles",
    "shape_tensor",
    "correlation_time",
    "autocorrelation",
    "autocorrelation_times",
    "accumulate",
    "dask_profiles",
]

Array = NDArray[np.float64]

_UNITS = {
    "z": "cm",
    "mean_u": "cm s-1",
    "mean_b": "G",
    "reynolds": "cm2 s-2",
    "maxwell": "G2",
    "kinetic_helicity": "cm s-2",
    "current_helicity": "G2 cm-1",
    "emf": "cm s-1 G",
    "u_shape": "1",
    "b_shape": "1",
    "u_shape4": "1",
    "b_shape4": "1",
    "rho": "g cm-3",
    "pressure": "erg cm-3",
}
_DIMS = {1: ("z",), 2: ("z", "i"), 3: ("z", "i", "j"), 5: ("z", "j", "m", "n", "k")}


# --- argument checks -------------------------------------------------------------------------------------------


def _spacing3(spacing: Any) -> tuple[float, float, float]:
    value = strip_units("spacing", spacing, "cm")
    arr = as_float("spacing", value)
    if arr.ndim == 0:
        arr = np.repeat(arr, 3)
    if arr.shape != (3,):
        raise InputError(f"spacing: must be a number or three numbers (dx, dy, dz) in cm, got shape {arr.shape}")
    check_positive("spacing", arr)
    return float(arr[0]), float(arr[1]), float(arr[2])


def _vector_field(name: str, value: Any) -> NDArray[Any]:
    if hasattr(value, "dask") and hasattr(value, "chunks"):
        raise InputError(f"{name}: is a dask array; use fluxfunnel.stats.dask_profiles for many snapshots")
    value = strip_units(name, value, "G" if name == "b" else "cm / s")
    if not isinstance(value, np.ndarray):
        value = np.asarray(value)
    if value.dtype not in (np.float32, np.float64):
        raise InputError(f"{name}: must be float32 or float64, got dtype {value.dtype}")
    if value.ndim != 4 or value.shape[0] != 3 or min(value.shape[1:]) < 2:
        raise InputError(f"{name}: must have shape (3, nx, ny, nz) with nx, ny, nz >= 2, got {value.shape}")
    if value.dtype.byteorder not in ("=", "|"):
        raise InputError(f"{name}: must be in native byte order")
    return value


def _scalar_profile(name: str, value: Any, grid: tuple[int, ...], unit: str, *, positive: bool) -> Array:
    value = strip_units(name, value, unit)
    arr = value if isinstance(value, np.ndarray) and value.dtype in (np.float32, np.float64) else as_float(name, value)
    if arr.shape != grid:
        raise InputError(f"{name}: must have the grid shape {grid}, got {arr.shape}")
    if positive:
        check_positive(name, arr)
    else:
        check_finite(name, arr)
    # float64 sums without a float64 copy of the input
    return np.asarray(arr.mean(axis=(0, 1), dtype=np.float64), dtype=np.float64)


def _normalise(moment: Array, energy: Array) -> Array:
    """Divide per-height moments by the energy; heights with zero energy give NaN (documented)."""
    shape = (energy.size,) + (1,) * (moment.ndim - 1)
    e = energy.reshape(shape)
    out = np.full(moment.shape, np.nan)
    np.divide(moment, e, out=out, where=e > 0)
    return out


def height_grid(nz: int, dz: float) -> Array:
    """Return the heights of the cell centres, centred on the midplane.

    Parameters
    ----------
    nz : int
        Number of cells along z (at least 1).
    dz : float
        Cell size along z, cm.

    Returns
    -------
    ndarray
        ``z_k = (k - (nz - 1)/2) dz`` for ``k = 0 .. nz-1``, cm. The midplane ``z = 0`` is a cell centre for
        odd ``nz`` and a cell face for even ``nz``.

    Examples
    --------
    >>> height_grid(4, 2.0)
    array([-3., -1.,  1.,  3.])
    """
    if int(nz) != nz or nz < 1:
        raise InputError(f"nz: must be a positive integer, got {nz!r}")
    (dzv,) = np.atleast_1d(as_float("dz", dz, unit="cm"))
    check_positive("dz", np.asarray(dzv))
    return (np.arange(int(nz), dtype=np.float64) - (nz - 1) / 2.0) * float(dzv)


# --- results ---------------------------------------------------------------------------------------------------


@dataclass(frozen=True, repr=False)
class TurbulenceProfiles:
    """Per-height turbulence statistics of one snapshot (or their time average).

    Attributes
    ----------
    z : ndarray, (nz,)
        Heights of the cell centres, cm (`height_grid`).
    mean_u, mean_b : ndarray, (nz, 3)
        Horizontal means of velocity (cm/s) and magnetic field (G).
    reynolds : ndarray, (nz, 3, 3)
        ``<u'_i u'_j>``, cm^2/s^2.
    maxwell : ndarray, (nz, 3, 3)
        ``<b'_i b'_j>``, G^2 (divide by ``4 pi`` for the stress in erg/cm^3).
    kinetic_helicity : ndarray, (nz,)
        ``<u' . curl u'>``, cm/s^2, by spectral derivatives.
    current_helicity : ndarray, (nz,)
        ``<b' . curl b'>``, G^2/cm (the physical ``<j . b>`` is ``c/(4 pi)`` times this).
    emf : ndarray, (nz, 3)
        Mean electromotive force ``<u' x b'>``, cm/s G.
    u_shape, b_shape : ndarray, (nz, 3, 3)
        Shape tensors ``N_jm = <(K_jm f') . f'> / <f' . f'>``, trace 1 at every height.
    u_shape4, b_shape4 : ndarray, (nz, 3, 3, 3, 3)
        Fourth-rank moments ``[..., j, m, n, k] = <(K_jm f'_n) f'_k> / <f' . f'>``; contracting ``n = k`` gives
        the shape tensor, contracting ``j = m`` gives ``<f'_n f'_k> / <f' . f'>``.
    rho, pressure : ndarray, (nz,) or None
        Horizontal means of density (g/cm^3) and pressure (erg/cm^3), when given.
    """

    z: Array
    mean_u: Array
    mean_b: Array
    reynolds: Array
    maxwell: Array
    kinetic_helicity: Array
    current_helicity: Array
    emf: Array
    u_shape: Array
    b_shape: Array
    u_shape4: Array
    b_shape4: Array
    rho: Array | None = None
    pressure: Array | None = None

    def __repr__(self) -> str:
        extra = [n for n in ("rho", "pressure") if getattr(self, n) is not None]
        zr = f"z=[{self.z[0]:.4g}, {self.z[-1]:.4g}] cm" if self.z.size else "z=[]"
        return f"TurbulenceProfiles(nz={self.z.size}, {zr}{''.join(', ' + e for e in extra)})"

    def arrays(self) -> dict[str, Array]:
        """Return the profiles (every field but ``z``) that are present, by name."""
        return {
            f.name: getattr(self, f.name)
            for f in dataclasses.fields(self)
            if f.name != "z" and getattr(self, f.name) is not None
        }

    def to_xarray(self) -> Any:
        """Return the profiles as an ``xarray.Dataset`` on the height coordinate ``z`` (needs xarray).

        Returns
        -------
        xarray.Dataset
            One variable per field, units in each variable's ``attrs["units"]``; tensor indices are the
            dimensions ``i, j`` (second rank) or ``j, m, n, k`` (fourth rank), labelled ``x, y, z``.
        """
        try:
            import xarray as xr
        except ImportError as exc:  # pragma: no cover - depends on the environment
            raise ImportError("to_xarray needs the optional dependency xarray") from exc
        data = {}
        for name, arr in self.arrays().items():
            data[name] = xr.Variable(_DIMS[arr.ndim], arr, attrs={"units": _UNITS[name]})
        comps = ["x", "y", "z"]
        coords = {"z": ("z", self.z, {"units": "cm"}), **{d: comps for d in ("i", "j", "m", "n", "k")}}
        return xr.Dataset(data, coords=coords)


@dataclass(frozen=True, repr=False)
class AveragedProfiles:
    """Time-averaged profiles with their standard errors.

    Attributes
    ----------
    mean : TurbulenceProfiles
        Average over the snapshots of each profile (shape tensors averaged as ratios per snapshot).
    stderr : TurbulenceProfiles
        Standard error of each average, ``s / sqrt(n)`` with ``s`` the sample standard deviation over the
        snapshots (NaN when fewer than two). This assumes independent snapshots: for snapshots closer
        together than the correlation time (`correlation_time`) it underestimates the error.
    count : int
        Number of snapshots.
    """

    mean: TurbulenceProfiles
    stderr: TurbulenceProfiles
    count: int

    def __repr__(self) -> str:
        return f"AveragedProfiles(count={self.count}, nz={self.mean.z.size})"


# --- one snapshot ----------------------------------------------------------------------------------------------


def turbulence_profiles(
    u: Any,
    b: Any,
    *,
    rho: Any = None,
    pressure: Any = None,
    spacing: Any,
    periodic_z: bool = True,
    alfven_units: bool = False,
) -> TurbulenceProfiles:
    r"""Per-height turbulence statistics of one snapshot.

    Parameters
    ----------
    u : ndarray, (3, nx, ny, nz)
        Velocity, cm/s; float32 or float64, any memory order (not copied).
    b : ndarray, (3, nx, ny, nz)
        Magnetic field, G; same grid as ``u``.
    rho : ndarray, (nx, ny, nz), optional
        Density, g/cm^3, positive.
    pressure : ndarray, (nx, ny, nz), optional
        Gas pressure, erg/cm^3, finite.
    spacing : float or (dx, dy, dz)
        Cell size(s), cm (an astropy length Quantity is accepted).
    periodic_z : bool, default True
        Periodic z; otherwise zero-padding in z (see the module notes).
    alfven_units : bool, default False
        Use ``b / sqrt(4 pi rho)`` (cm/s) instead of ``b``; needs ``rho``. This makes one float64 copy of
        ``b``; every magnetic profile (``mean_b``, ``maxwell``, ``current_helicity``, ``emf``) is then in
        velocity units (cm/s, cm^2/s^2, cm/s^2, cm^2/s^2).

    Returns
    -------
    TurbulenceProfiles
        With, per height, ``R_ij = <u'_i u'_j>``, ``M_ij = <b'_i b'_j>``, ``<u' . curl u'>``,
        ``<b' . curl b'>``, ``<u' x b'>``, and the shape tensors

        .. math:: N_{jm}(z) = \frac{\langle (\mathcal{K}_{jm} f') \cdot f' \rangle_{xy}}
                              {\langle f' \cdot f' \rangle_{xy}},
                  \qquad \widehat{\mathcal{K}_{jm} f} = \frac{k_j k_m}{k^2} \hat f,

        for ``f = u`` and ``f = b``, with their fourth-rank parents. A height where a fluctuation vanishes
        identically has NaN shape tensors.

    Notes
    -----
    Means and second moments are computed in real space (two passes, float64 sums); helicities and shape
    moments in Fourier space: horizontal transforms, then per ``(kx, ky)`` column a z transform, the
    symbol, the inverse z transform and Parseval's theorem in x and y. float32 input stays float32 in the
    transforms (relative rounding near 1e-7); sums are float64.

    Examples
    --------
    >>> import numpy as np
    >>> from fluxfunnel import synthetic
    >>> u = synthetic.solenoidal_field((16, 16, 16), seed=1)
    >>> b = synthetic.solenoidal_field((16, 16, 16), seed=2, rms=1e-3)
    >>> p = turbulence_profiles(u, b, spacing=1.0)
    >>> bool(np.allclose(np.trace(p.u_shape, axis1=1, axis2=2), 1.0))
    True
    """
    u = _vector_field("u", u)
    b = _vector_field("b", b)
    if u.shape != b.shape:
        raise InputError(f"b: shape {b.shape} differs from the shape of u {u.shape}")
    d = _spacing3(spacing)
    grid = u.shape[1:]
    rho_p = None if rho is None else _scalar_profile("rho", rho, grid, "g / cm3", positive=True)
    p_p = None if pressure is None else _scalar_profile("pressure", pressure, grid, "erg / cm3", positive=False)
    if alfven_units:
        if rho is None:
            raise InputError("rho: is needed when alfven_units=True")
        rho_full = as_float("rho", rho, unit="g / cm3")
        b = b / np.sqrt(4.0 * np.pi * rho_full)
    mean_u, mean_b, reynolds, maxwell, emf = _core._stats_point(u, b)
    eu, mu, hu = _core._stats_spectral(u, d, bool(periodic_z), False, True, True)
    eb, mb, hb = _core._stats_spectral(b, d, bool(periodic_z), False, True, True)
    assert mu is not None and mb is not None and hu is not None and hb is not None
    u4 = _normalise(mu, eu)
    b4 = _normalise(mb, eb)
    return TurbulenceProfiles(
        z=height_grid(grid[2], d[2]),
        mean_u=mean_u,
        mean_b=mean_b,
        reynolds=reynolds,
        maxwell=maxwell,
        kinetic_helicity=hu,
        current_helicity=hb,
        emf=emf,
        u_shape=np.einsum("zjmnn->zjm", u4),
        b_shape=np.einsum("zjmnn->zjm", b4),
        u_shape4=u4,
        b_shape4=b4,
        rho=rho_p,
        pressure=p_p,
    )


def shape_tensor(
    field: Any,
    *,
    spacing: Any = None,
    periodic_z: bool = True,
    profile: bool = True,
    mean: str | None = None,
) -> Array:
    r"""Energy-weighted Riesz-transform shape tensor of one vector field.

    .. math:: N_{jm} = \frac{\langle f \cdot (-R_j R_m f) \rangle}{\langle f \cdot f \rangle}
              = \frac{\sum_k (k_j k_m / k^2) |\hat f(k)|^2}{\sum_k |\hat f(k)|^2}

    Parameters
    ----------
    field : ndarray, (3, nx, ny, nz)
        Vector field in any unit (the tensor is dimensionless); float32 or float64, not copied.
    spacing : float or (dx, dy, dz), optional
        Cell size(s), cm. Default: cubic cells (only the ratios of the spacings matter).
    periodic_z : bool, default True
        Periodic z; otherwise zero-padding in z (module notes).
    profile : bool, default True
        Per height ``(nz, 3, 3)`` (horizontal averages at each height) or for the whole box ``(3, 3)`` (the
        ratio of the volume sums, i.e. the energy-weighted average over heights).
    mean : {"horizontal", "volume"}, optional
        Which mean is removed first. Default: ``"horizontal"`` for profiles (mean-field fluctuations) and
        ``"volume"`` for the whole box (only the ``k = 0`` mode), which keeps modes with wavevectors along z.

    Returns
    -------
    ndarray
        Symmetric, positive semidefinite, trace 1 at every height where the field (after removing the mean)
        does not vanish; NaN at heights where it vanishes. Isotropic turbulence gives 1/3 on the diagonal;
        eddies flattened along an axis push that axis's value toward 1.

    Examples
    --------
    >>> from fluxfunnel import synthetic
    >>> f = synthetic.solenoidal_field((32, 32, 32), aspect=(1.0, 1.0, 0.5), seed=3)
    >>> n = shape_tensor(f, profile=False)
    >>> bool(n[2, 2] > n[0, 0])
    True
    """
    f = _vector_field("field", field)
    d = (1.0, 1.0, 1.0) if spacing is None else _spacing3(spacing)
    if mean is None:
        mean = "horizontal" if profile else "volume"
    if mean not in ("horizontal", "volume"):
        raise InputError(f"mean: must be 'horizontal' or 'volume', got {mean!r}")
    e, m, _ = _core._stats_spectral(f, d, bool(periodic_z), mean == "volume", True, False)
    assert m is not None
    s = np.einsum("zjmnn->zjm", m)
    if profile:
        return _normalise(s, e)
    total = float(e.sum())
    if not total > 0:
        raise InputError("field: has no fluctuations after removing the mean; the shape tensor is undefined")
    return np.asarray(s.sum(axis=0) / total)


# --- correlation times -----------------------------------------------------------------------------------------


def autocorrelation(series: Any, *, axis: int = 0) -> Array:
    r"""Normalised autocorrelation of a time series along ``axis``.

    .. math:: C(\ell) = \frac{\sum_{t=0}^{n-1-\ell} x_t x_{t+\ell}}{\sum_t x_t^2},
              \qquad x_t = s_t - \bar s,

    the standard biased estimator (Box & Jenkins 1976), computed with a zero-padded FFT.

    Parameters
    ----------
    series : array_like
        Samples at equal time steps along ``axis`` (at least 3), any unit; other axes are independent series.
    axis : int, default 0
        The time axis.

    Returns
    -------
    ndarray
        ``C`` with the lag along axis 0 and the other axes in order; ``C[0] = 1``.
    """
    x = as_float("series", series)
    if x.ndim == 0:
        raise InputError("series: must have a time axis, got a scalar")
    try:
        x = np.moveaxis(x, axis, 0)
    except Exception as exc:
        raise InputError(f"axis: {axis} is out of range for series of shape {x.shape}") from exc
    n = x.shape[0]
    if n < 3:
        raise InputError(f"series: needs at least 3 samples along axis {axis}, got {n}")
    check_finite("series", x)
    x = x - x.mean(axis=0)
    power = np.abs(np.fft.rfft(x, n=2 * n, axis=0)) ** 2
    acf = np.fft.irfft(power, n=2 * n, axis=0)[:n]
    var = acf[0]
    if np.any(var <= 0):
        idx = np.argwhere(var <= 0)[0]
        raise InputError(f"series: is constant in time at index {tuple(int(i) for i in idx)}")
    return np.asarray(acf / var)


def autocorrelation_times(acf: Any, dt: float) -> tuple[Array, Array]:
    """E-folding and integral times of a normalised autocorrelation function.

    Parameters
    ----------
    acf : array_like
        ``C(lag)`` with the lag along axis 0 (``C[0] = 1``), on lags ``0, dt, 2 dt, ...``.
    dt : float
        Lag step, s.

    Returns
    -------
    efold, integral : ndarray
        E-folding time (first crossing of ``1/e``, linear interpolation between lags) and integral time
        (trapezoidal integral of ``C`` up to its first zero, linearly interpolated), s, per series. NaN where
        ``C`` never falls to ``1/e`` (or to zero) within the record, meaning the record is too short.
    """
    c = as_float("acf", acf)
    if c.ndim == 0 or c.shape[0] < 2:
        raise InputError("acf: needs at least 2 lags along axis 0")
    check_finite("acf", c)
    (dtv,) = np.atleast_1d(as_float("dt", dt, unit="s"))
    check_positive("dt", np.asarray(dtv))
    step = float(dtv)
    flat = c.reshape(c.shape[0], -1)
    efold = np.full(flat.shape[1], np.nan)
    integral = np.full(flat.shape[1], np.nan)
    for j in range(flat.shape[1]):
        col = flat[:, j]
        below = np.nonzero(col < 1.0 / math.e)[0]
        if below.size:
            i = int(below[0])
            efold[j] = step * ((i - 1) + (col[i - 1] - 1.0 / math.e) / (col[i - 1] - col[i]))
        neg = np.nonzero(col <= 0.0)[0]
        if neg.size:
            i = int(neg[0])
            frac = col[i - 1] / (col[i - 1] - col[i])
            head = np.trapezoid(col[:i], dx=step) if i > 1 else 0.0
            integral[j] = head + 0.5 * col[i - 1] * frac * step
    return efold.reshape(c.shape[1:]), integral.reshape(c.shape[1:])


def correlation_time(series: Any, dt: float, *, axis: int = 0, method: str = "efold") -> Any:
    """Autocorrelation time of a time series, per height (or per any other index) when given profiles.

    Parameters
    ----------
    series : array_like
        Samples at equal time steps ``dt`` along ``axis``, any unit; for example a profile ``(nt, nz)``.
        Remove a mean flow's sweeping first where it matters (shearing frame in a shearing box).
    dt : float
        Time between samples, s.
    axis : int, default 0
        The time axis.
    method : {"efold", "integral"}
        ``"efold"``: lag at which the autocorrelation (`autocorrelation`) first falls to ``1/e``;
        ``"integral"``: integral of the autocorrelation up to its first zero. The two agree for an
        exponential; for ``C = exp(-t/tau) cos(w t)`` the integral to infinity is ``tau / (1 + w^2 tau^2)``.

    Returns
    -------
    float or ndarray
        Time(s), s, with the time axis removed (a float for a 1-D series). NaN where the record is too short
        for the autocorrelation to fall that far. An estimate: between independent records of length ``T`` the
        e-folding time scatters by about ``2 sqrt(tau / T)`` relative (AR(1) records), the integral time more.

    Examples
    --------
    >>> import numpy as np
    >>> rng = np.random.default_rng(0)
    >>> x = np.zeros(20000)
    >>> for i in range(1, x.size):
    ...     x[i] = np.exp(-0.1) * x[i - 1] + rng.standard_normal()
    >>> bool(abs(correlation_time(x, 1.0) - 10.0) < 1.5)
    True
    """
    if method not in ("efold", "integral"):
        raise InputError(f"method: must be 'efold' or 'integral', got {method!r}")
    efold, integral = autocorrelation_times(autocorrelation(series, axis=axis), dt)
    out = efold if method == "efold" else integral
    return float(out) if out.ndim == 0 else out


# --- many snapshots --------------------------------------------------------------------------------------------


class ProfileAccumulator:
    """Streaming time average of `turbulence_profiles` with standard errors, in constant memory.

    Snapshots are added one at a time (`add`); means and sums of squared deviations are updated with
    Welford's algorithm, and two accumulators combine exactly with `merge` (Chan, Golub & LeVeque 1979),
    which is how `dask_profiles` reduces over a cluster.

    Parameters
    ----------
    spacing : float or (dx, dy, dz)
        Cell size(s), cm.
    periodic_z : bool, default True
        As in `turbulence_profiles`.
    alfven_units : bool, default False
        As in `turbulence_profiles` (then every snapshot needs ``rho``).

    Examples
    --------
    >>> from fluxfunnel import synthetic
    >>> acc = ProfileAccumulator(spacing=1.0)
    >>> for seed in range(3):
    ...     u = synthetic.solenoidal_field((8, 8, 8), seed=seed)
    ...     _ = acc.add(u, 0.1 * u)
    >>> acc.result().count
    3
    """

    def __init__(self, *, spacing: Any, periodic_z: bool = True, alfven_units: bool = False) -> None:
        self.spacing = _spacing3(spacing)
        self.periodic_z = bool(periodic_z)
        self.alfven_units = bool(alfven_units)
        self.count = 0
        self._z: Array | None = None
        self._mean: dict[str, Array] = {}
        self._m2: dict[str, Array] = {}

    def add(self, u: Any, b: Any, *, rho: Any = None, pressure: Any = None) -> TurbulenceProfiles:
        """Add one snapshot (arguments as in `turbulence_profiles`) and return its profiles."""
        p = turbulence_profiles(
            u,
            b,
            rho=rho,
            pressure=pressure,
            spacing=self.spacing,
            periodic_z=self.periodic_z,
            alfven_units=self.alfven_units,
        )
        self.add_profiles(p)
        return p

    def add_profiles(self, p: TurbulenceProfiles) -> None:
        """Add profiles already computed (same grid and same optional fields every time)."""
        values = p.arrays()
        if self.count == 0:
            self._z = p.z
            self._mean = {k: np.array(v, dtype=np.float64) for k, v in values.items()}
            self._m2 = {k: np.zeros_like(v, dtype=np.float64) for k, v in values.items()}
            self.count = 1
            return
        self._check_compatible(p.z, values)
        self.count += 1
        for k, v in values.items():
            delta = v - self._mean[k]
            self._mean[k] += delta / self.count
            self._m2[k] += delta * (v - self._mean[k])

    def _check_compatible(self, z: Array, values: Mapping[str, Array]) -> None:
        assert self._z is not None
        if z.shape != self._z.shape:
            raise InputError(f"u: grid has {z.size} heights, earlier snapshots had {self._z.size}")
        if set(values) != set(self._mean):
            missing = set(self._mean).symmetric_difference(values)
            raise InputError(f"{sorted(missing)[0]}: given for some snapshots but not for others")

    def merge(self, other: ProfileAccumulator) -> ProfileAccumulator:
        """Combine with another accumulator in place (exact pooled mean and variance); return ``self``."""
        if other.count == 0:
            return self
        if self.count == 0:
            self._z, self.count = other._z, other.count
            self._mean = {k: v.copy() for k, v in other._mean.items()}
            self._m2 = {k: v.copy() for k, v in other._m2.items()}
            return self
        assert other._z is not None
        self._check_compatible(other._z, other._mean)
        na, nb = self.count, other.count
        n = na + nb
        for k in self._mean:
            delta = other._mean[k] - self._mean[k]
            self._mean[k] = self._mean[k] + delta * (nb / n)
            self._m2[k] = self._m2[k] + other._m2[k] + delta**2 * (na * nb / n)
        self.count = n
        return self

    def result(self) -> AveragedProfiles:
        """Return the time-averaged profiles and their standard errors (see `AveragedProfiles`)."""
        if self.count == 0 or self._z is None:
            raise InputError("accumulator: no snapshots were added")
        n = self.count
        if n > 1:
            err = {k: np.sqrt(v / (n - 1) / n) for k, v in self._m2.items()}
        else:
            err = {k: np.full_like(v, np.nan) for k, v in self._m2.items()}
        mean = TurbulenceProfiles(z=self._z, **{k: v.copy() for k, v in self._mean.items()})
        return AveragedProfiles(mean=mean, stderr=TurbulenceProfiles(z=self._z, **err), count=n)


def accumulate(
    snapshots: Iterable[Any],
    *,
    spacing: Any,
    periodic_z: bool = True,
    alfven_units: bool = False,
    progress: bool | None = None,
) -> AveragedProfiles:
    """Time-average the profiles of many snapshots, one at a time, with a progress bar.

    Parameters
    ----------
    snapshots : iterable
        Each item is ``(u, b)``, ``(u, b, rho)``, ``(u, b, rho, pressure)`` or a mapping with keys ``u``, ``b``
        and optionally ``rho``, ``pressure`` (units as in `turbulence_profiles`). A generator that loads one
        snapshot at a time keeps memory at one snapshot.
    spacing : float or (dx, dy, dz)
        Cell size(s), cm.
    periodic_z, alfven_units : bool
        As in `turbulence_profiles`.
    progress : bool or None, default None
        Show a tqdm bar; ``None`` shows it only when output is a terminal. Ctrl-C stops cleanly.

    Returns
    -------
    AveragedProfiles
        Means and standard errors (independent-snapshot assumption, see `AveragedProfiles`).
    """
    from tqdm.auto import tqdm

    acc = ProfileAccumulator(spacing=spacing, periodic_z=periodic_z, alfven_units=alfven_units)
    total = len(snapshots) if isinstance(snapshots, Sized) else None
    disable = None if progress is None else not progress
    for item in tqdm(snapshots, total=total, disable=disable, desc="snapshots", unit="snapshot"):
        if isinstance(item, Mapping):
            acc.add(item["u"], item["b"], rho=item.get("rho"), pressure=item.get("pressure"))
        else:
            parts = tuple(item)
            if not 2 <= len(parts) <= 4:
                raise InputError(f"snapshots: each item needs 2 to 4 parts (u, b, rho, pressure), got {len(parts)}")
            acc.add(
                parts[0],
                parts[1],
                rho=parts[2] if len(parts) > 2 else None,
                pressure=parts[3] if len(parts) > 3 else None,
            )
    return acc.result()


def _block_state(
    u: NDArray[Any],
    b: NDArray[Any],
    rho: NDArray[Any] | None,
    pressure: NDArray[Any] | None,
    spacing: tuple[float, float, float],
    periodic_z: bool,
    alfven_units: bool,
) -> ProfileAccumulator:
    acc = ProfileAccumulator(spacing=spacing, periodic_z=periodic_z, alfven_units=alfven_units)
    for t in range(u.shape[0]):
        acc.add(
            u[t],
            b[t],
            rho=None if rho is None else rho[t],
            pressure=None if pressure is None else pressure[t],
        )
    return acc


def _merge_states(*states: ProfileAccumulator) -> ProfileAccumulator:
    first = states[0]
    for s in states[1:]:
        first.merge(s)
    return first


def dask_profiles(
    u: Any,
    b: Any,
    *,
    rho: Any = None,
    pressure: Any = None,
    spacing: Any,
    periodic_z: bool = True,
    alfven_units: bool = False,
    split_every: int = 8,
) -> AveragedProfiles:
    """Time-averaged profiles of many snapshots held in dask arrays, one snapshot chunk per task.

    Each chunk along time is reduced to a small accumulator (`ProfileAccumulator`) by the worker that holds
    it, and the accumulators are merged in a tree. The computation runs on whatever scheduler is active: a
    ``dask.distributed.Client`` connected to a cluster, or dask's local threads.

    Parameters
    ----------
    u, b : dask.array.Array, (nt, 3, nx, ny, nz)
        Velocity (cm/s) and magnetic field (G). Chunks must not split the spatial axes; they are rechunked to
        whole snapshots if they do (a rechunk moves data, so store snapshots whole).
    rho, pressure : dask.array.Array, (nt, nx, ny, nz), optional
        Density (g/cm^3) and pressure (erg/cm^3).
    spacing : float or (dx, dy, dz)
        Cell size(s), cm.
    periodic_z, alfven_units : bool
        As in `turbulence_profiles`.
    split_every : int, default 8
        Fan-in of the merge tree.

    Returns
    -------
    AveragedProfiles
        The same result as `accumulate` over the snapshots in order.
    """
    import dask
    import dask.array as da

    d = _spacing3(spacing)
    if int(split_every) < 2:
        raise InputError(f"split_every: must be an integer >= 2, got {split_every!r}")
    arrays = {"u": u, "b": b, "rho": rho, "pressure": pressure}
    blocks: dict[str, list[Any]] = {}
    nt = None
    for name, arr in arrays.items():
        if arr is None:
            continue
        if not isinstance(arr, da.Array):
            arr = da.asarray(arr)
        want = 5 if name in ("u", "b") else 4
        if arr.ndim != want or (want == 5 and arr.shape[1] != 3):
            what = "(nt, 3, nx, ny, nz)" if want == 5 else "(nt, nx, ny, nz)"
            raise InputError(f"{name}: must have shape {what}, got {arr.shape}")
        if nt is None:
            nt = arr.shape[0]
            time_chunks = arr.chunks[0]
        elif arr.shape[0] != nt:
            raise InputError(f"{name}: has {arr.shape[0]} snapshots but u has {nt}")
        arr = arr.rechunk((time_chunks,) + tuple((s,) for s in arr.shape[1:]))
        blocks[name] = list(arr.to_delayed().ravel())
    states = [
        dask.delayed(_block_state)(
            blocks["u"][i],
            blocks["b"][i],
            blocks["rho"][i] if "rho" in blocks else None,
            blocks["pressure"][i] if "pressure" in blocks else None,
            d,
            bool(periodic_z),
            bool(alfven_units),
        )
        for i in range(len(blocks["u"]))
    ]
    fan = int(split_every)
    while len(states) > 1:
        states = [dask.delayed(_merge_states)(*states[i : i + fan]) for i in range(0, len(states), fan)]
    (final,) = dask.compute(states[0])
    return final.result()
