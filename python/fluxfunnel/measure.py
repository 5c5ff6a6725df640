r"""Measured transport coefficients: fits of a simulation's mean EMF, and the kinematic test-field method.

Convention (horizontally averaged fields, components x = radial, y = azimuthal):

.. math::

    \mathcal E_i = \alpha_{ij} \bar B_j - \eta_{ij} \bar J_j, \qquad
    \bar{\mathbf J} = \nabla\times\bar{\mathbf B} = (-\partial_z \bar B_y,\ \partial_z \bar B_x,\ 0),
    \qquad i, j \in \{x, y\},

with :math:`\mathcal E = \langle \mathbf u\times\mathbf b\rangle` in cm s^-1 G, :math:`\alpha` in cm s^-1,
:math:`\eta` in cm^2 s^-1 ("curl units": the physical current density is :math:`(c/4\pi)\bar J`).

- `fit_emf` regresses a time series of mean EMFs on the mean field and its current at every height
  (Brandenburg & Sokoloff 2002; SVD variant Racine et al. 2011), with resampling errors that respect
  the time correlation of the samples.
- `test_field` solves the test-field equations for a prescribed flow (Schrinner et al. 2005, 2007;
  Brandenburg, Radler, Rheinhardt & Kapyla 2008) pseudo-spectrally in a periodic box.
- `compare` sets measured coefficients beside a closure's prediction.

Measured numbers describe the data or flow they come from (for a saturated run: the already quenched
coefficients); they are estimates under the linear, local mean-field ansatz above, not unique truths.
"""

from __future__ import annotations

import math
import warnings
from collections.abc import Callable, Mapping, Sequence
from dataclasses import dataclass, field
from typing import Any

import numpy as np
from numpy.typing import NDArray

from . import _core
from ._errors import InputError
from ._validate import as_float, as_scalar, check_finite, check_increasing, check_positive

__all__ = [
    "DegenerateFitWarning",
    "EmfFit",
    "TestFieldResult",
    "Comparison",
    "fit_emf",
    "test_field",
    "compare",
]

FloatArray = NDArray[np.float64]


class DegenerateFitWarning(UserWarning):
    """The mean field and its current did not vary independently at some heights; those fits are NaN."""


_UNITS = {
    "alpha": "cm s-1",
    "eta": "cm2 s-1",
    "alpha_err": "cm s-1",
    "eta_err": "cm2 s-1",
    "offset": "cm s-1 G",
    "offset_err": "cm s-1 G",
    "residual": "cm s-1 G",
    "condition_number": "1",
    "alpha_history": "cm s-1",
    "eta_history": "cm2 s-1",
}


def _dataset(variables: dict[str, tuple[tuple[str, ...], Any]], coords: dict[str, Any], attrs: dict[str, Any]) -> Any:
    try:
        import xarray as xr
    except ImportError as exc:  # pragma: no cover - depends on the environment
        raise ImportError("to_xarray needs xarray: pip install xarray") from exc
    data = {
        name: xr.Variable(dims, np.asarray(value), attrs={"units": _UNITS[name]} if name in _UNITS else {})
        for name, (dims, value) in variables.items()
    }
    return xr.Dataset(data, coords=coords, attrs=attrs)


@dataclass(frozen=True, repr=False)
class EmfFit:
    r"""Coefficients fitted from a mean-EMF time series, per height.

    Attributes
    ----------
    z : ndarray, shape (nz,)
        Heights, cm.
    alpha, alpha_err : ndarray, shape (nz, 2, 2)
        :math:`\alpha_{ij}` and its standard error, cm s^-1 (NaN where not fitted or degenerate).
    eta, eta_err : ndarray, shape (nz, 2, 2)
        :math:`\eta_{ij}` and its standard error, cm^2 s^-1 (NaN where not fitted or degenerate).
    offset, offset_err : ndarray, shape (nz, 2)
        The field-independent EMF :math:`\\mathcal E^{(0)}_i` and its error, cm s^-1 G.
    residual : ndarray, shape (nz, 2)
        Root-mean-square residual of each EMF component, cm s^-1 G.
    condition_number : ndarray, shape (nz,)
        Condition number of the design matrix with columns scaled to unit rms (unit-free).
    degenerate : ndarray of bool, shape (nz,)
        Heights whose condition number exceeded ``cond_limit``.
    correlation_time : ndarray, shape (nz,)
        Integrated autocorrelation time of the residuals, in the units of ``t`` (samples if ``t`` is None).
    block_length : ndarray of int, shape (nz,)
        Resampling block length used, in samples.
    method, errors : str
        Solver and error estimate used.
    """

    z: FloatArray
    alpha: FloatArray
    eta: FloatArray
    alpha_err: FloatArray
    eta_err: FloatArray
    offset: FloatArray
    offset_err: FloatArray
    residual: FloatArray
    condition_number: FloatArray
    degenerate: NDArray[np.bool_]
    correlation_time: FloatArray
    block_length: NDArray[np.int64]
    method: str
    errors: str

    def to_xarray(self) -> Any:
        """Return the fit as an ``xarray.Dataset`` with dimensions ``z``, ``i``, ``j`` and units in attrs."""
        tensor: tuple[str, ...] = ("z", "i", "j")
        variables: dict[str, tuple[tuple[str, ...], Any]] = {
            name: (tensor, getattr(self, name)) for name in ("alpha", "eta", "alpha_err", "eta_err")
        }
        variables.update({name: (("z", "i"), getattr(self, name)) for name in ("offset", "offset_err", "residual")})
        variables.update(
            {name: (("z",), getattr(self, name)) for name in ("condition_number", "degenerate", "block_length")}
        )
        variables["correlation_time"] = (("z",), self.correlation_time)
        coords = {"z": ("z", self.z, {"units": "cm"}), "i": ["x", "y"], "j": ["x", "y"]}
        attrs = {
            "method": self.method,
            "errors": self.errors,
            "convention": "E_i = offset_i + alpha_ij B_j - eta_ij (curl B)_j",
        }
        return _dataset(variables, coords, attrs)

    def __repr__(self) -> str:
        n_bad = int(np.sum(self.degenerate))
        return (
            f"EmfFit(nz={self.z.size}, method={self.method!r}, errors={self.errors!r}, "
            f"median condition={np.nanmedian(self.condition_number):.3g}, degenerate heights={n_bad})"
        )


def fit_emf(
    mean_b: Any,
    emf: Any,
    z: Any,
    *,
    t: Any = None,
    terms: Sequence[str] = ("alpha", "eta"),
    method: str = "lstsq",
    errors: str = "bootstrap",
    n_resamples: int = 200,
    block_length: int | None = None,
    n_blocks: int = 20,
    rcond: float | None = None,
    cond_limit: float = 1e6,
    seed: int | None = None,
) -> EmfFit:
    r"""Fit the mean EMF to the mean field and its current, height by height.

    At every height z, least squares over the time samples n of

    .. math::

        \mathcal E_i(z, t_n) = \mathcal E^{(0)}_i(z) + \alpha_{ij}(z) \bar B_j(z, t_n)
        - \eta_{ij}(z) \bar J_j(z, t_n), \qquad i, j \in \{x, y\},

    with :math:`\bar J = (-\partial_z\bar B_y, \partial_z\bar B_x)` from second-order differences along
    ``z`` (the rule of ``numpy.gradient(..., edge_order=2)``). The offset :math:`\mathcal E^{(0)}` is always a
    regressor. Columns are scaled to unit rms before solving, and the condition number of the scaled
    design matrix is reported; above ``cond_limit`` the height is flagged degenerate, returned as NaN, and
    a `DegenerateFitWarning` names it. A single Beltrami-like mode (:math:`\bar J \parallel \bar B`) or a
    field that never changes determines only combinations of the coefficients.

    Errors: ``"bootstrap"`` is a moving-block bootstrap (``n_resamples`` series assembled from random
    contiguous blocks; the block length defaults to the larger of :math:`n_t^{1/3}` and four integrated
    autocorrelation times of the residuals, at most :math:`n_t/5`); ``"blocks"`` fits ``n_blocks``
    contiguous sub-intervals and quotes their spread divided by :math:`\sqrt{n_\mathrm{blocks}}`. Both
    assume a regular cadence and a statistically steady series. Heights run in parallel in Rust.

    Parameters
    ----------
    mean_b : array_like, shape (nt, nz, 3) or (nt, nz, 2)
        Horizontally averaged magnetic field, G. Only the x and y components enter the fit.
    emf : array_like, shape (nt, nz, 3) or (nt, nz, 2)
        Mean EMF :math:`\langle\mathbf u\times\mathbf b\rangle`, cm s^-1 G. Only x and y are fitted.
    z : array_like, shape (nz,)
        Heights, cm, strictly increasing, at least 3.
    t : array_like, shape (nt,), optional
        Sample times, s: strictly increasing with a regular cadence; sets the unit of ``correlation_time``.
    terms : sequence of str
        Which of ``"alpha"``, ``"eta"`` to fit; the others are returned as NaN (not fitted, not zero).
    method : {"lstsq", "svd"}
        Householder QR, or SVD with singular values below ``rcond * s_max`` dropped.
    errors : {"bootstrap", "blocks"}
        Error estimate (see above).
    n_resamples : int
        Bootstrap resamples.
    block_length : int, optional
        Bootstrap block length in samples (automatic if None).
    n_blocks : int
        Sub-intervals for ``errors="blocks"``.
    rcond : float, optional
        SVD cut-off relative to the largest singular value of the column-scaled design matrix (default
        machine epsilon times ``nt``). With the default, ``"svd"`` and ``"lstsq"`` agree at every
        non-degenerate height; a larger value regularises ill-conditioned heights towards the minimum-norm
        solution (biasing them: say so when quoting such numbers).
    cond_limit : float
        Condition number above which a height is degenerate.
    seed : int, optional
        Seed of the bootstrap (random if None).

    Returns
    -------
    EmfFit
        Coefficients, their errors, residuals and diagnostics per height.

    Warns
    -----
    DegenerateFitWarning
        If any height is degenerate.

    Notes
    -----
    The result is an estimate under a local, linear, instantaneous EMF ansatz; memory effects, non-local
    kernels or terms not in the model end up in the residual or bias the coefficients.

    References
    ----------
    A. Brandenburg & D. Sokoloff 2002, Geophys. Astrophys. Fluid Dyn. 96, 319.
    E. Racine et al. 2011, ApJ 735, 46.
    H. R. Kunsch 1989, Ann. Stat. 17, 1217 (moving-block bootstrap).

    Examples
    --------
    >>> import numpy as np
    >>> from fluxfunnel.measure import fit_emf
    >>> rng = np.random.default_rng(3)
    >>> nt, nz = 400, 8
    >>> z = np.linspace(0.0, 7.0, nz)
    >>> b = np.zeros((nt, nz, 3))
    >>> b[..., 0] = rng.normal(size=(nt, 1)) + np.outer(rng.normal(size=nt), z)
    >>> b[..., 1] = rng.normal(size=(nt, 1)) - np.outer(rng.normal(size=nt), z)
    >>> e = 0.3 * b  # alpha_xx = alpha_yy = 0.3, eta = 0
    >>> fit = fit_emf(b, e, z, seed=1)
    >>> np.round(fit.alpha[2], 6)
    array([[0.3, 0. ],
           [0. , 0.3]])
    """
    b_arr = _vector_series("mean_b", mean_b)
    e_arr = _vector_series("emf", emf)
    if e_arr.shape[0] != b_arr.shape[0]:
        raise InputError(
            f"emf: has {e_arr.shape[0]} time samples but mean_b has {b_arr.shape[0]} (mismatched time axes)"
        )
    if e_arr.shape != b_arr.shape:
        raise InputError(f"emf: must have the shape of mean_b {b_arr.shape}, got {e_arr.shape}")
    nt = b_arr.shape[0]
    if nt < 2:
        raise InputError(f"mean_b: needs more than one time sample to fit, got {nt}")
    z_arr = as_float("z", z, unit="cm")
    check_increasing("z", z_arr, min_len=3)
    if z_arr.size != b_arr.shape[1]:
        raise InputError(f"z: has {z_arr.size} heights but mean_b has {b_arr.shape[1]}")
    dt = 1.0
    if t is not None:
        t_arr = as_float("t", t, unit="s")
        check_increasing("t", t_arr)
        if t_arr.size != nt:
            raise InputError(f"t: has {t_arr.size} times but mean_b has {nt} samples (mismatched time axes)")
        steps = np.diff(t_arr)
        dt = float(np.mean(steps))
        if np.max(np.abs(steps - dt)) > 1e-3 * dt:
            raise InputError(
                f"t: resampling errors need a regular cadence, but the steps range from {steps.min():.6g} "
                f"to {steps.max():.6g} s; resample the series onto a regular cadence first"
            )
    names = tuple(terms) if not isinstance(terms, str) else (terms,)
    unknown = [n for n in names if n not in ("alpha", "eta")]
    if unknown or not names:
        raise InputError(f"terms: must name one or both of 'alpha', 'eta', got {terms!r}")
    if method not in ("lstsq", "svd"):
        raise InputError(f"method: must be 'lstsq' or 'svd', got {method!r}")
    if errors not in ("bootstrap", "blocks"):
        raise InputError(f"errors: must be 'bootstrap' or 'blocks', got {errors!r}")
    n_res = _count("n_resamples", n_resamples, 2)
    n_blk = _count("n_blocks", n_blocks, 2)
    blk = None if block_length is None else _count("block_length", block_length, 1)
    rc = float(np.finfo(np.float64).eps * nt) if rcond is None else float(rcond)
    if not 0.0 <= rc < 1.0:
        raise InputError(f"rcond: must be in [0, 1), got {rcond!r}")
    if not (np.isfinite(cond_limit) and cond_limit > 1.0):
        raise InputError(f"cond_limit: must be a finite number above 1, got {cond_limit!r}")
    if seed is None:
        seed_val = int(np.random.default_rng().integers(0, 2**63))
    else:
        seed_val = _count("seed", seed, 0)
        if seed_val >= 2**64:
            raise InputError(f"seed: must be below 2**64, got {seed!r}")
    out = _core._fit_emf(
        b_arr,
        e_arr,
        z_arr,
        "alpha" in names,
        "eta" in names,
        method,
        rc,
        errors,
        n_res,
        blk,
        n_blk,
        float(cond_limit),
        seed_val,
    )
    degenerate = np.asarray(out["degenerate"], dtype=bool)
    if np.any(degenerate):
        where = np.flatnonzero(degenerate)
        shown = ", ".join(f"{z_arr[i]:.4g}" for i in where[:5]) + (", ..." if where.size > 5 else "")
        warnings.warn(
            DegenerateFitWarning(
                f"fit_emf: degenerate fit at {where.size} of {z_arr.size} heights (z = {shown} cm): the scaled "
                f"design matrix has condition number above cond_limit = {cond_limit:.3g}, so the mean field "
                "and its current do not vary independently there (a mean field that barely changes, or a "
                "single Beltrami-like mode). Those heights are returned as NaN."
            ),
            stacklevel=2,
        )
    return EmfFit(
        z=z_arr,
        alpha=out["alpha"],
        eta=out["eta"],
        alpha_err=out["alpha_err"],
        eta_err=out["eta_err"],
        offset=out["offset"],
        offset_err=out["offset_err"],
        residual=out["residual"],
        condition_number=out["condition_number"],
        degenerate=degenerate,
        correlation_time=out["correlation_samples"] * dt,
        block_length=np.asarray(out["block_length"], dtype=np.int64),
        method=method,
        errors=errors,
    )


def _vector_series(name: str, value: Any) -> FloatArray:
    arr = as_float(name, value, unit=None)
    if arr.ndim != 3 or arr.shape[-1] not in (2, 3):
        raise InputError(f"{name}: must have shape (nt, nz, 3) or (nt, nz, 2), got {arr.shape}")
    check_finite(name, arr)
    if arr.shape[-1] == 2:
        arr = np.concatenate([arr, np.zeros(arr.shape[:-1] + (1,))], axis=-1)
    return np.ascontiguousarray(arr)


def _count(name: str, value: Any, minimum: int) -> int:
    if isinstance(value, bool) or not isinstance(value, (int, np.integer)) or value < minimum:
        raise InputError(f"{name}: must be a whole number >= {minimum}, got {value!r}")
    return int(value)


@dataclass(frozen=True, repr=False)
class TestFieldResult:
    r"""Kinematic test-field coefficients of a prescribed flow.

    Attributes
    ----------
    alpha : ndarray, shape (nz, 2, 2) or (2, 2)
        :math:`\alpha_{ij}`, cm s^-1 (z-averaged when ``profile=False``).
    eta : ndarray, shape (nz, 2, 2) or (2, 2)
        :math:`\eta_{ij}`, cm^2 s^-1, at the test wavenumber.
    z : ndarray, shape (nz,)
        Grid heights, cm.
    k_test : float
        Test-field wavenumber, rad cm^-1.
    soca : bool
        Whether the fluctuation-fluctuation term was dropped.
    time : ndarray, shape (n_records,)
        Times of the recorded history, s.
    alpha_history, eta_history : ndarray, shape (n_records, 2, 2)
        z-averaged coefficients at those times (check them for convergence).
    dt : float
        Time step, s.
    n_steps : int
        Steps taken.
    mean_flow_rms : float
        Rms of the horizontal mean flow removed from ``u`` (first snapshot), cm s^-1.
    """

    __test__ = False  # not a pytest test class despite its name

    alpha: FloatArray
    eta: FloatArray
    z: FloatArray
    k_test: float
    soca: bool
    time: FloatArray
    alpha_history: FloatArray
    eta_history: FloatArray
    dt: float
    n_steps: int
    mean_flow_rms: float

    def to_xarray(self) -> Any:
        """Return the result as an ``xarray.Dataset`` (dimensions ``z`` if a profile, ``i``, ``j``, ``time``)."""
        tensor: tuple[str, ...] = ("z", "i", "j") if np.ndim(self.alpha) == 3 else ("i", "j")
        variables: dict[str, tuple[tuple[str, ...], Any]] = {
            "alpha": (tensor, self.alpha),
            "eta": (tensor, self.eta),
            "alpha_history": (("time", "i", "j"), self.alpha_history),
            "eta_history": (("time", "i", "j"), self.eta_history),
        }
        coords: dict[str, Any] = {"time": ("time", self.time, {"units": "s"}), "i": ["x", "y"], "j": ["x", "y"]}
        if len(tensor) == 3:
            coords["z"] = ("z", self.z, {"units": "cm"})
        attrs = {"k_test": self.k_test, "soca": int(self.soca), "dt": self.dt, "n_steps": self.n_steps}
        return _dataset(variables, coords, attrs)

    def __repr__(self) -> str:
        a = np.asarray(self.alpha)
        e = np.asarray(self.eta)
        am = a if a.ndim == 2 else a.mean(axis=0)
        em = e if e.ndim == 2 else e.mean(axis=0)
        return (
            f"TestFieldResult(k_test={self.k_test:.4g}, soca={self.soca}, t_end={self.time[-1]:.4g}, "
            f"<alpha_xx>={am[0, 0]:.4g}, <alpha_yy>={am[1, 1]:.4g}, <eta_xx>={em[0, 0]:.4g}, "
            f"<eta_yy>={em[1, 1]:.4g})"
        )


def _flow_array(value: Any, name: str = "u") -> FloatArray:
    arr = as_float(name, value, unit="cm / s")
    if arr.ndim != 4 or arr.shape[0] != 3:
        raise InputError(f"{name}: must have shape (3, nx, ny, nz), got {arr.shape}")
    check_finite(name, arr)
    return np.ascontiguousarray(arr)


def test_field(
    u: Any,
    *,
    eta: float,
    k_test: float,
    spacing: Any,
    t_end: float,
    soca: bool = False,
    profile: bool = True,
    dt: float | None = None,
    cfl: float = 0.4,
    average_from: float | None = None,
    n_records: int = 50,
    progress: bool | None = None,
) -> TestFieldResult:
    r"""Kinematic test-field coefficients of a prescribed flow in a periodic box.

    For the four test fields :math:`\mathbf B^T = (\cos kz, 0, 0), (\sin kz, 0, 0), (0, \cos kz, 0),
    (0, \sin kz, 0)` with :math:`k` = ``k_test``, solve from :math:`\mathbf b = 0`

    .. math::

        \partial_t \mathbf b = \nabla\times\left(\mathbf u\times\mathbf B^T + \mathbf u\times\mathbf b
        - \langle\mathbf u\times\mathbf b\rangle\right) + \eta\nabla^2\mathbf b

    (``soca=True`` drops :math:`\mathbf u\times\mathbf b - \langle\mathbf u\times\mathbf b\rangle`), take the
    EMFs :math:`\mathcal E^T = \langle\mathbf u\times\mathbf b\rangle` (horizontal averages) and invert them
    pointwise in z for :math:`\alpha_{ij}(z)`, :math:`\eta_{ij}(z)` of the convention in the module
    docstring: :math:`\alpha_{i1} = c\,\mathcal E^{1c}_i + s\,\mathcal E^{1s}_i`,
    :math:`k\eta_{i2} = s\,\mathcal E^{1c}_i - c\,\mathcal E^{1s}_i`, and likewise for the y test fields
    (:math:`c = \cos kz`, :math:`s = \sin kz`).

    Pseudo-spectral in Rust: products on the grid, two-thirds dealiasing, diffusion integrated exactly by
    second-order exponential time differencing (ETDRK2, Cox & Matthews 2002), so a steady flow relaxes to
    the exact discrete steady state for any time step. The horizontal mean of ``u`` is removed (there is no
    mean-flow term). The coefficients belong to the test wavenumber ``k_test``; for a scale-independent
    answer use ``k_test`` much smaller than the flow's wavenumber or compare several ``k_test``.

    Parameters
    ----------
    u : array_like, shape (3, nx, ny, nz), or callable
        Velocity, cm s^-1, periodic on the grid; or a function of time t (s) returning such an array.
    eta : float
        Microscopic magnetic diffusivity, cm^2 s^-1.
    k_test : float
        Test wavenumber, rad cm^-1: :math:`2\pi m/L_z` with whole :math:`m \le n_z/3`.
    spacing : float or tuple of float
        Grid spacing ``dx`` (all axes) or ``(dx, dy, dz)``, cm.
    t_end : float
        Integration time, s. Several diffusion times :math:`1/(\eta k^2)` of the flow's scale for a steady
        flow.
    soca : bool
        Second-order correlation approximation.
    profile : bool
        Return ``(nz, 2, 2)`` profiles (True) or their z-average ``(2, 2)``.
    dt : float, optional
        Time step, s (default ``cfl * min(spacing) / max|u|``, adjusted to land on ``t_end``).
    cfl : float
        Courant number for the default time step.
    average_from : float, optional
        If given, average the recorded profiles over ``t >= average_from`` (for time-dependent flows);
        otherwise return the state at ``t_end``.
    n_records : int
        Number of recorded history points.
    progress : bool, optional
        Progress bar (default: only when writing to a terminal).

    Returns
    -------
    TestFieldResult
        ``alpha``, ``eta`` and the convergence history.

    Notes
    -----
    Kinematic: the flow is prescribed and does not respond to the field. With a small-scale dynamo
    (large Rm) ``b`` grows without bound and the numbers are meaningless; inspect ``alpha_history``.

    References
    ----------
    M. Schrinner et al. 2005, Astron. Nachr. 326, 245; 2007, Geophys. Astrophys. Fluid Dyn. 101, 81.
    A. Brandenburg, K.-H. Radler, M. Rheinhardt & P. J. Kapyla 2008, ApJ 676, 740.
    S. M. Cox & P. C. Matthews 2002, J. Comput. Phys. 176, 430.

    Examples
    --------
    >>> import numpy as np
    >>> from fluxfunnel.flows import roberts_flow
    >>> from fluxfunnel.measure import test_field
    >>> n, k = 8, 1.0
    >>> h = (2 * np.pi / n, 2 * np.pi / n, 2 * np.pi / 6)  # box 2 pi on a side, 8 x 8 x 6 points
    >>> u = roberts_flow((n, n, 6), u0=0.1, k=k, spacing=h)
    >>> r = test_field(u, eta=1.0, k_test=1.0, spacing=h, t_end=20.0, soca=True, profile=False)
    >>> k_f = np.sqrt(2) * k
    >>> bool(np.isclose(r.alpha[0, 0], -(0.1**2 / (2 * k_f)) * k_f**2 / (k_f**2 + 1.0)))
    True
    """
    from tqdm.auto import tqdm

    steady = not callable(u)
    flow_of: Callable[[float], FloatArray]
    if steady:
        u_first = _flow_array(u)
    else:
        fn = u

        def flow_of(time: float) -> FloatArray:
            return _flow_array(fn(time), "u(t)")

        u_first = flow_of(0.0)
    shape = u_first.shape[1:]
    h = as_float("spacing", spacing, unit="cm")
    h = np.full(3, float(h)) if h.ndim == 0 else h
    if h.shape != (3,):
        raise InputError(f"spacing: must be a number or three numbers (dx, dy, dz), got shape {h.shape}")
    check_positive("spacing", h)
    eta_v = as_scalar("eta", eta, "cm2 / s", positive=True)
    k_v = as_scalar("k_test", k_test, "1 / cm", positive=True)
    t_v = as_scalar("t_end", t_end, "s", positive=True)
    records = _count("n_records", n_records, 1)
    umax = float(np.max(np.sqrt(np.sum(u_first**2, axis=0))))
    if dt is None:
        if not (np.isfinite(cfl) and cfl > 0):
            raise InputError(f"cfl: must be positive, got {cfl!r}")
        if umax == 0.0:
            raise InputError("u: the flow is zero everywhere; give dt explicitly or a non-zero flow")
        dt_v = cfl * float(np.min(h)) / umax
    else:
        dt_v = as_scalar("dt", dt, "s", positive=True)
    n_steps = max(1, math.ceil(t_v / dt_v - 1e-9))
    dt_v = t_v / n_steps
    if average_from is not None and not (0.0 <= float(average_from) < t_v):
        raise InputError(f"average_from: must lie in [0, t_end), got {average_from!r}")
    grid = (int(shape[0]), int(shape[1]), int(shape[2]))
    cells = (float(h[0]), float(h[1]), float(h[2]))
    solver = _core._TestFieldSolver(grid, cells, eta_v, k_v, bool(soca))
    marks = sorted({max(1, round(n_steps * (i + 1) / records)) for i in range(records)})
    mean_flow = np.mean(u_first, axis=(1, 2))
    mean_flow_rms = float(np.sqrt(np.mean(np.sum(mean_flow**2, axis=0))))

    times: list[float] = []
    a_hist: list[FloatArray] = []
    e_hist: list[FloatArray] = []
    a_sum = np.zeros((shape[2], 2, 2))
    e_sum = np.zeros((shape[2], 2, 2))
    n_avg = 0
    u_now = u_first
    done = 0
    a_prof = e_prof = np.zeros((shape[2], 2, 2))
    with tqdm(total=n_steps, disable=None if progress is None else not progress, desc="test field") as bar:
        for mark in marks:
            if steady:
                solver.step(u_now, None, dt_v, mark - done)
            else:
                for s in range(done, mark):
                    u_next = flow_of((s + 1) * dt_v)
                    if u_next.shape != u_first.shape:
                        raise InputError(f"u(t): changed shape from {u_first.shape} to {u_next.shape}")
                    solver.step(u_now, u_next, dt_v, 1)
                    u_now = u_next
            bar.update(mark - done)
            done = mark
            a_prof, e_prof = solver.coefficients(u_now)
            t_now = done * dt_v
            times.append(t_now)
            a_hist.append(a_prof.mean(axis=0))
            e_hist.append(e_prof.mean(axis=0))
            if average_from is not None and t_now >= float(average_from) - 1e-12 * t_v:
                a_sum += a_prof
                e_sum += e_prof
                n_avg += 1
    if average_from is not None:
        if n_avg == 0:
            raise InputError("average_from: no recorded time falls after it; raise n_records or lower it")
        a_prof, e_prof = a_sum / n_avg, e_sum / n_avg
    alpha_out = a_prof if profile else a_prof.mean(axis=0)
    eta_out = e_prof if profile else e_prof.mean(axis=0)
    return TestFieldResult(
        alpha=alpha_out,
        eta=eta_out,
        z=np.arange(shape[2]) * h[2],
        k_test=k_v,
        soca=bool(soca),
        time=np.asarray(times),
        alpha_history=np.asarray(a_hist),
        eta_history=np.asarray(e_hist),
        dt=dt_v,
        n_steps=n_steps,
        mean_flow_rms=mean_flow_rms,
    )


@dataclass(frozen=True, repr=False)
class Comparison:
    """Measured coefficients beside predicted ones.

    Attributes
    ----------
    z : ndarray or None
        Heights, cm (None if neither side carries them).
    measured, predicted, residual : dict of str to ndarray
        Per quantity (``"alpha"``, ``"eta"``), broadcast to a common shape; residual = measured - predicted.
    normalized_residual : dict of str to ndarray
        Residual divided by the measured standard error, for quantities whose errors are known.
    rms_residual : dict of str to ndarray, shape (2, 2)
        Root-mean-square residual over heights, per tensor component (NaN entries ignored).
    errors : dict of str to ndarray
        The measured standard errors used for ``normalized_residual`` (and the error bars of ``plot``).
    """

    z: FloatArray | None
    measured: dict[str, FloatArray]
    predicted: dict[str, FloatArray]
    residual: dict[str, FloatArray]
    normalized_residual: dict[str, FloatArray] = field(default_factory=dict)
    rms_residual: dict[str, FloatArray] = field(default_factory=dict)
    errors: dict[str, FloatArray] = field(default_factory=dict)

    def __repr__(self) -> str:
        parts = [f"{q}: rms residual diag=({r[0, 0]:.3g}, {r[1, 1]:.3g})" for q, r in self.rms_residual.items()]
        return f"Comparison({'; '.join(parts)})"

    def plot(self, *, axes: Any = None) -> Any:
        """Plot measured (with error bars) and predicted profiles against height, one panel per component.

        Parameters
        ----------
        axes : array of matplotlib Axes, shape (n_quantities, 4), optional
            Where to draw; a new figure is made if None.

        Returns
        -------
        matplotlib.figure.Figure
            The figure drawn on.
        """
        try:
            import matplotlib.pyplot as plt
        except ImportError as exc:  # pragma: no cover - depends on the environment
            raise ImportError("Comparison.plot needs matplotlib: pip install 'fluxfunnel[plot]'") from exc
        names = list(self.measured)
        if axes is None:
            fig, axes = plt.subplots(len(names), 4, figsize=(12, 2.8 * len(names)), squeeze=False)
        else:
            axes = np.atleast_2d(np.asarray(axes, dtype=object))
            fig = axes[0, 0].figure
        units = {"alpha": "cm s$^{-1}$", "eta": "cm$^2$ s$^{-1}$"}
        for row, q in enumerate(names):
            m, p = self.measured[q], self.predicted[q]
            err = self.errors.get(q)
            for col, (i, j) in enumerate(((0, 0), (0, 1), (1, 0), (1, 1))):
                ax = axes[row, col]
                label = f"{q}_{'xy'[i]}{'xy'[j]}"
                if m.ndim == 3 and self.z is not None:
                    zz = self.z
                    if err is not None:
                        ax.errorbar(m[:, i, j], zz, xerr=err[:, i, j], fmt="o", ms=3, label="measured")
                    else:
                        ax.plot(m[:, i, j], zz, "o", ms=3, label="measured")
                    ax.plot(p[:, i, j], zz, "-", label="predicted")
                    ax.set_ylabel("z [cm]")
                else:
                    ax.bar(["measured", "predicted"], [float(np.mean(m[..., i, j])), float(np.mean(p[..., i, j]))])
                ax.set_title(f"{label} [{units.get(q, '')}]")
            axes[row, 0].legend(fontsize="small")
        fig.tight_layout()
        return fig


def _quantities(obj: Any, name: str) -> tuple[dict[str, FloatArray], dict[str, FloatArray], FloatArray | None]:
    values: dict[str, FloatArray] = {}
    errs: dict[str, FloatArray] = {}
    z = None
    for q in ("alpha", "eta"):
        if isinstance(obj, Mapping):
            v = obj.get(q)
            e = obj.get(f"{q}_err")
            z = obj.get("z", z)
        else:
            v = getattr(obj, q, None)
            e = getattr(obj, f"{q}_err", None)
            z = getattr(obj, "z", z)
        if v is None:
            continue
        arr = as_float(f"{name}.{q}", v)
        if arr.ndim not in (2, 3) or arr.shape[-2:] != (2, 2):
            raise InputError(f"{name}.{q}: must have shape (nz, 2, 2) or (2, 2), got {arr.shape}")
        values[q] = arr
        if e is not None:
            errs[q] = as_float(f"{name}.{q}_err", e)
    if not values:
        raise InputError(f"{name}: carries neither 'alpha' nor 'eta' (as attributes or mapping keys)")
    return values, errs, None if z is None else as_float(f"{name}.z", z, unit="cm")


def compare(measured: Any, predicted: Any) -> Comparison:
    r"""Set measured coefficients beside predicted ones, with residuals.

    Parameters
    ----------
    measured : EmfFit, TestFieldResult or mapping
        Anything with ``alpha`` and/or ``eta`` (cm s^-1, cm^2 s^-1; shape ``(nz, 2, 2)`` or ``(2, 2)``) as
        attributes or keys, optionally ``alpha_err``, ``eta_err`` and ``z`` (cm).
    predicted : object or mapping
        The same for the prediction (for example a closure's output on the same heights).

    Returns
    -------
    Comparison
        Residuals :math:`r = m - p`, normalised residuals :math:`r/\sigma_m` where errors are known, their
        rms over heights, and a ``plot()`` helper (matplotlib).

    Notes
    -----
    Only quantities present on both sides are compared. NaN (unfitted or degenerate) entries stay NaN and
    are left out of the rms. Agreement within errors supports the closure for this data under its stated
    assumptions; it does not validate the closure in general.

    Examples
    --------
    >>> import numpy as np
    >>> from fluxfunnel.measure import compare
    >>> c = compare({"alpha": np.full((4, 2, 2), 1.0)}, {"alpha": np.eye(2)})
    >>> c.rms_residual["alpha"]
    array([[0., 1.],
           [1., 0.]])
    """
    m_vals, m_errs, m_z = _quantities(measured, "measured")
    p_vals, _, p_z = _quantities(predicted, "predicted")
    common = [q for q in m_vals if q in p_vals]
    if not common:
        raise InputError(
            f"predicted: shares no quantity with measured (measured has {sorted(m_vals)}, "
            f"predicted has {sorted(p_vals)})"
        )
    z = m_z if m_z is not None else p_z
    if m_z is not None and p_z is not None and (m_z.shape != p_z.shape or not np.allclose(m_z, p_z)):
        raise InputError("predicted.z: differs from measured.z; evaluate the prediction on the measured heights")
    meas: dict[str, FloatArray] = {}
    pred: dict[str, FloatArray] = {}
    res: dict[str, FloatArray] = {}
    norm: dict[str, FloatArray] = {}
    rms: dict[str, FloatArray] = {}
    errs: dict[str, FloatArray] = {}
    for q in common:
        try:
            m, p = np.broadcast_arrays(m_vals[q], p_vals[q])
        except ValueError as exc:
            raise InputError(
                f"predicted.{q}: shape {p_vals[q].shape} does not broadcast with measured {m_vals[q].shape}"
            ) from exc
        meas[q], pred[q] = np.array(m), np.array(p)
        r = meas[q] - pred[q]
        res[q] = r
        flat = r.reshape(-1, 2, 2)
        with warnings.catch_warnings():
            warnings.simplefilter("ignore", RuntimeWarning)  # all-NaN components give NaN, as documented
            rms[q] = np.sqrt(np.nanmean(flat**2, axis=0))
        if q in m_errs:
            err = np.broadcast_to(m_errs[q], r.shape)
            errs[q] = np.array(err)
            with np.errstate(divide="ignore", invalid="ignore"):
                norm[q] = np.where(err > 0, r / err, np.nan)
    return Comparison(
        z=z, measured=meas, predicted=pred, residual=res, normalized_residual=norm, rms_residual=rms, errors=errs
    )


# pytest collects callables named ``test_*`` that a test module imports; this one is not a test.
test_field.__test__ = False  # type: ignore[attr-defined]
