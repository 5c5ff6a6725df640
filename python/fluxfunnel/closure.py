r"""Quasi-linear (tau-closure) coefficients of the mean electromotive force.

From one-point turbulence statistics on a grid of any shape ``G`` (a z-profile, an (x, z) grid, a 3D box)
this module predicts the coefficients of the mean electromotive force :math:`\mathcal{E} = \langle u\times
b\rangle` (units cm s^-1 G), each mechanism separately and in total:

.. math::

    \mathcal{E}_i = a_{ij} B_j + b_{ijk}\,\partial_k B_j
                  = \alpha_{ij} B_j + (\gamma\times B)_i - \eta_{ij} J_j \quad (i, j \in \{x, y\}),

the last form for horizontally averaged fields, with :math:`J = \nabla\times B`. Axes are the local frame
of a disk: x radial, y azimuthal, z vertical (gravity toward the midplane). CGS (Gaussian) units.

Every number here is a **model prediction** of the tau closure under its stated assumptions (correlation
time ``tau`` local and constant along the relaxation, no rotation or shear in the response, homogeneous
statistics inside the diffusion terms, incompressible response, helicity spectrum with the angular shape of
the energy spectrum). It is not a measurement; compare it with coefficients measured from simulations.
Derivations: ``docs/theory.md``; symbolic re-derivation: ``docs/derive_closure.py``.

References
----------
Steenbeck, Krause & Raedler 1966, Z. Naturforsch. 21a, 369. Krause & Raedler 1980, *Mean-Field
Magnetohydrodynamics and Dynamo Theory*. Raedler 1968, Z. Naturforsch. 23a. Pouquet, Frisch & Leorat 1976,
JFM 77, 321. Blackman & Field 2002, PRL 89, 265007. Brandenburg & Subramanian 2005, Phys. Rep. 417, 1.
Raedler, Kleeorin & Rogachevskii 2003, GAFD 97, 249. Vainshtein & Cattaneo 1992, ApJ 393, 165.
Kleeorin & Ruzmaikin 1982, Magnetohydrodynamics 18, 116. Blackman & Brandenburg 2002, ApJ 579, 359.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Any, Literal

import numpy as np
from numpy.typing import NDArray

from . import _core
from ._errors import InputError
from ._validate import as_float, check_increasing, check_non_negative, check_positive, scalar_or_array

__all__ = [
    "TurbulenceState",
    "ClosureCoefficients",
    "EMFDecomposition",
    "emf_coefficients",
    "field_response",
    "decompose",
    "emf_from_tensors",
    "isotropic_shape_moments",
    "steady_quenched_alpha",
    "quenching_rhs",
    "quenching_relaxation_time",
    "helicity_flux_divergence",
]

Array = NDArray[np.float64]
_AXIS_INDEX = {"x": 0, "y": 1, "z": 2}
_DEFAULT_AXES = {1: ("z",), 2: ("x", "z"), 3: ("x", "y", "z")}


def _levi_civita() -> Array:
    eps = np.zeros((3, 3, 3))
    for i, j, k in ((0, 1, 2), (1, 2, 0), (2, 0, 1)):
        eps[i, j, k] = 1.0
        eps[i, k, j] = -1.0
    return eps


_EPS = _levi_civita()


def isotropic_shape_moments() -> Array:
    r"""Return the normalised fourth-rank shape moments of isotropic solenoidal fluctuations.

    .. math::

        \frac{\langle(\mathcal{K}_{jm} b_l) b_k\rangle}{\langle b^2\rangle}
        = \frac{1}{30}\left(4\delta_{jm}\delta_{lk} - \delta_{jl}\delta_{mk} - \delta_{jk}\delta_{ml}\right),

    :math:`\mathcal{K}_{jm}` the operator with Fourier symbol :math:`k_j k_m/k^2`. Derived in
    ``docs/theory.md`` section 4 from the angular average of :math:`\hat k_j\hat k_m(\delta_{lk}-\hat k_l\hat
    k_k)` over the sphere.

    Returns
    -------
    ndarray, shape (3, 3, 3, 3)
        Dimensionless, indices ``[j, m, l, k]``.

    Examples
    --------
    >>> from fluxfunnel.closure import isotropic_shape_moments
    >>> s = isotropic_shape_moments()
    >>> round(s[0, 0, 2, 2] * 15, 12)
    2.0
    """
    d = np.eye(3)
    return (4 * np.einsum("jm,lk->jmlk", d, d) - np.einsum("jl,mk->jmlk", d, d) - np.einsum("jk,ml->jmlk", d, d)) / 30.0


def _tensor_field(
    name: str, value: Any, grid: tuple[int, ...] | None, tail: tuple[int, ...], unit: str | None
) -> Array:
    arr = as_float(name, value, unit=unit)
    if arr.shape[len(arr.shape) - len(tail) :] != tail or arr.ndim < len(tail):
        raise InputError(f"{name}: must have trailing shape {tail}, got shape {arr.shape}")
    if grid is None:
        return arr
    try:
        return np.broadcast_to(arr, grid + tail)
    except ValueError as exc:
        raise InputError(f"{name}: shape {arr.shape} does not broadcast to the grid {grid + tail}") from exc


def _scalar_field(name: str, value: Any, grid: tuple[int, ...], unit: str | None) -> Array:
    arr = as_float(name, value, unit=unit)
    try:
        return np.broadcast_to(arr, grid)
    except ValueError as exc:
        raise InputError(f"{name}: shape {arr.shape} does not broadcast to the grid {grid}") from exc


@dataclass(frozen=True, kw_only=True, repr=False)
class TurbulenceState:
    r"""One-point turbulence statistics on a grid, the input of `emf_coefficients`.

    All arguments are keyword-only. Tensors carry their indices last, so a grid of shape ``G`` holds
    ``reynolds`` as ``G + (3, 3)``. Arguments other than ``reynolds`` broadcast to the grid (a scalar
    ``tau`` is the same everywhere). ``astropy.units.Quantity`` inputs are converted to the CGS units below.

    Parameters
    ----------
    z : array_like, shape (nz,), optional
        Vertical coordinate [cm] of a z-profile (strictly increasing, at least 3 points). Same as
        ``coords=(z,)``.
    coords : tuple of array_like, optional
        One strictly increasing 1D coordinate [cm] per grid axis, for multi-dimensional grids.
    reynolds : array_like, shape G + (3, 3)
        Reynolds tensor :math:`R_{ij} = \langle u_i u_j\rangle` [cm^2 s^-2] (symmetric, non-negative diagonal).
    maxwell : array_like, shape G + (3, 3), optional
        Maxwell tensor :math:`M_{ij} = \langle b_i b_j\rangle` [G^2]; zero when omitted.
    kinetic_helicity : array_like, optional
        :math:`\langle u\cdot\nabla\times u\rangle` [cm s^-2].
    current_helicity : array_like, optional
        :math:`\langle b\cdot\nabla\times b\rangle` [G^2 cm^-1] (curl units: the physical current density is
        c/(4 pi) times the curl).
    u_shape, b_shape : array_like, shape G + (3, 3), optional
        Eddy shape tensors :math:`N_{jm} = \langle(\mathcal{K}_{jm} f)\cdot f\rangle/\langle f\cdot f\rangle`
        (dimensionless, trace 1); isotropic (identity/3) when omitted.
    b_shape4 : array_like, shape G + (3, 3, 3, 3), optional
        Fourth-rank magnetic moments ``b_shape4[..., j, m, n, k]`` :math:`= \langle(\mathcal{K}_{jm} b_n)
        b_k\rangle/\langle b^2\rangle`. When omitted, the moments of a projected spectrum
        :math:`\phi(k) P(k)` with shape tensor ``b_shape`` are used (exact for the terms the closure needs).
    tau : array_like
        Correlation time [s], positive.
    rho : array_like
        Density [g cm^-3], positive.
    gravity : array_like, optional
        Signed vertical gravity :math:`g = -g_z` [cm s^-2]: positive where gravity points to -z (the upper
        half of a disk, :math:`g = \Omega^2 z`), negative below the midplane.
    brunt_vaisala2 : array_like, optional
        Brunt-Vaisala frequency squared :math:`N^2` [s^-2]; positive for stable stratification.
    sound_speed : array_like, optional
        Isothermal sound speed :math:`\sqrt{p/\rho}` [cm s^-1]; needed wherever ``gravity`` is non-zero.
    axes : tuple of {'x', 'y', 'z'}, optional
        Which spatial direction each grid axis runs along. Defaults: ('z',) for 1D, ('x', 'z') for 2D,
        ('x', 'y', 'z') for 3D grids. Gradients are Cartesian (local frame).
    div_reynolds : array_like, shape G + (3,), optional
        Explicit :math:`(\nabla\cdot R)_i = \partial_j R_{ij}` [cm s^-2], instead of differentiating on the grid.
    div_maxwell : array_like, shape G + (3,), optional
        Explicit :math:`\partial_j M_{ij}` [G^2 cm^-1].
    grad_rho : array_like, shape G + (3,), optional
        Explicit density gradient [g cm^-4], used with ``density_placement='inside'``.

    Notes
    -----
    Without a grid and without explicit divergences the statistics are taken as homogeneous, so the
    pumping terms vanish; `ClosureCoefficients.gradients` records which case applied. Gradients on a grid
    are second order, also on non-uniform coordinates (three-point Lagrange stencils, one-sided at the ends).
    The values are checked when the coefficients are computed (symmetry, signs, finiteness, trace 1).

    Examples
    --------
    >>> import numpy as np
    >>> from fluxfunnel.closure import TurbulenceState, emf_coefficients
    >>> z = np.linspace(-2e11, 2e11, 9)
    >>> u2 = 1e10 * np.exp(-(z / 1e11) ** 2)
    >>> state = TurbulenceState(z=z, reynolds=u2[:, None, None] * np.eye(3) / 3, tau=1e5, rho=1e-9)
    >>> c = emf_coefficients(state)
    >>> c.eta.shape
    (9, 3, 3)
    """

    z: Any = None
    coords: Any = None
    reynolds: Any
    maxwell: Any = None
    kinetic_helicity: Any = 0.0
    current_helicity: Any = 0.0
    u_shape: Any = None
    b_shape: Any = None
    b_shape4: Any = None
    tau: Any
    rho: Any
    gravity: Any = 0.0
    brunt_vaisala2: Any = 0.0
    sound_speed: Any = None
    axes: Any = None
    div_reynolds: Any = None
    div_maxwell: Any = None
    grad_rho: Any = None
    grid_shape: tuple[int, ...] = field(init=False)

    def __post_init__(self) -> None:
        def put(name: str, value: Any) -> None:
            object.__setattr__(self, name, value)

        if self.z is not None and self.coords is not None:
            raise InputError("z: give either z or coords, not both")
        coords: tuple[Array, ...] | None = None
        if self.z is not None:
            coords = (as_float("z", self.z, unit="cm"),)
        elif self.coords is not None:
            if not isinstance(self.coords, (tuple, list)) or len(self.coords) == 0:
                raise InputError("coords: must be a non-empty tuple of 1D coordinates")
            coords = tuple(as_float(f"coords[{i}]", c, unit="cm") for i, c in enumerate(self.coords))
        grid: tuple[int, ...] | None = None
        if coords is not None:
            for i, c in enumerate(coords):
                check_increasing("z" if self.z is not None else f"coords[{i}]", c, min_len=3)
            grid = tuple(c.size for c in coords)
            axes = _DEFAULT_AXES.get(len(coords)) if self.axes is None else tuple(self.axes)
            if axes is None or len(axes) != len(coords) or any(a not in _AXIS_INDEX for a in axes):
                raise InputError(f"axes: need one of 'x', 'y', 'z' per grid axis, got {self.axes!r}")
            if len(set(axes)) != len(axes):
                raise InputError(f"axes: each direction at most once, got {axes}")
            put("axes", axes)
        elif self.axes is not None:
            raise InputError("axes: only meaningful with z or coords")
        put("coords", coords)
        put("z", coords[0] if (coords is not None and self.z is not None) else None)

        reynolds = _tensor_field("reynolds", self.reynolds, None, (3, 3), "cm2 / s2")
        if grid is None:
            grid = reynolds.shape[:-2]
        elif reynolds.shape[:-2] != grid:
            try:
                reynolds = np.broadcast_to(reynolds, grid + (3, 3))
            except ValueError as exc:
                raise InputError(f"reynolds: shape {reynolds.shape} does not fit the grid {grid}") from exc
        put("grid_shape", grid)
        put("reynolds", reynolds)
        maxwell = np.zeros((3, 3)) if self.maxwell is None else self.maxwell
        put("maxwell", _tensor_field("maxwell", maxwell, grid, (3, 3), "G2"))
        iso = np.eye(3) / 3.0
        put("u_shape", _tensor_field("u_shape", iso if self.u_shape is None else self.u_shape, grid, (3, 3), None))
        if self.b_shape4 is not None:
            put("b_shape4", _tensor_field("b_shape4", self.b_shape4, grid, (3, 3, 3, 3), None))
            if self.b_shape is not None:
                put("b_shape", _tensor_field("b_shape", self.b_shape, grid, (3, 3), None))
        else:
            put("b_shape", _tensor_field("b_shape", iso if self.b_shape is None else self.b_shape, grid, (3, 3), None))
        put("kinetic_helicity", _scalar_field("kinetic_helicity", self.kinetic_helicity, grid, "cm / s2"))
        put("current_helicity", _scalar_field("current_helicity", self.current_helicity, grid, "G2 / cm"))
        put("tau", _scalar_field("tau", self.tau, grid, "s"))
        put("rho", _scalar_field("rho", self.rho, grid, "g / cm3"))
        put("gravity", _scalar_field("gravity", self.gravity, grid, "cm / s2"))
        put("brunt_vaisala2", _scalar_field("brunt_vaisala2", self.brunt_vaisala2, grid, "1 / s2"))
        if self.sound_speed is not None:
            cs = _scalar_field("sound_speed", self.sound_speed, grid, "cm / s")
            check_positive("sound_speed", np.asarray(as_float("sound_speed", self.sound_speed, unit="cm / s")))
            put("sound_speed", cs)
        for name, unit in (("div_reynolds", "cm / s2"), ("div_maxwell", "G2 / cm"), ("grad_rho", "g / cm4")):
            value = getattr(self, name)
            if value is not None:
                put(name, _tensor_field(name, value, grid, (3,), unit))

    def __repr__(self) -> str:
        grid = "no grid" if self.coords is None else f"axes {self.axes}"
        return f"TurbulenceState(grid_shape={self.grid_shape}, {grid})"

    @classmethod
    def from_profiles(
        cls,
        profiles: Any,
        *,
        tau: Any,
        rho: Any = None,
        gravity: Any = 0.0,
        brunt_vaisala2: Any = 0.0,
        sound_speed: Any = None,
    ) -> TurbulenceState:
        """Build a state from a height-profile result (any object with the attributes below).

        Reads ``z``, ``reynolds`` (nz, 3, 3) [cm^2 s^-2], ``maxwell`` (nz, 3, 3) [G^2],
        ``kinetic_helicity`` and ``current_helicity`` (nz,), ``u_shape`` and ``b_shape`` (nz, 3, 3),
        ``b_shape4`` (nz, 3, 3, 3, 3, optional) and ``rho`` (nz,) or None, by name.

        Parameters
        ----------
        profiles : object
            For example a ``fluxfunnel.stats.turbulence_profiles`` result.
        tau : array_like
            Correlation time [s].
        rho : array_like, optional
            Density [g cm^-3]; overrides ``profiles.rho``. One of the two is required.
        gravity, brunt_vaisala2, sound_speed : array_like, optional
            As in `TurbulenceState` [cm s^-2], [s^-2], [cm s^-1].

        Returns
        -------
        TurbulenceState

        Examples
        --------
        >>> import numpy as np
        >>> from types import SimpleNamespace
        >>> from fluxfunnel.closure import TurbulenceState
        >>> z = np.linspace(-1.0, 1.0, 5)
        >>> p = SimpleNamespace(z=z, reynolds=np.broadcast_to(np.eye(3), (5, 3, 3)), maxwell=None,
        ...                     kinetic_helicity=0.0, current_helicity=0.0, u_shape=None, b_shape=None, rho=None)
        >>> TurbulenceState.from_profiles(p, tau=1.0, rho=1.0).grid_shape
        (5,)
        """
        missing = [n for n in ("z", "reynolds") if not hasattr(profiles, n)]
        if missing:
            raise InputError(f"profiles: has no attribute(s) {', '.join(missing)}")
        if rho is None:
            rho = getattr(profiles, "rho", None)
            if rho is None:
                raise InputError("rho: not given and profiles.rho is None")
        return cls(
            z=profiles.z,
            reynolds=profiles.reynolds,
            maxwell=getattr(profiles, "maxwell", None),
            kinetic_helicity=_or(getattr(profiles, "kinetic_helicity", None), 0.0),
            current_helicity=_or(getattr(profiles, "current_helicity", None), 0.0),
            u_shape=getattr(profiles, "u_shape", None),
            b_shape=getattr(profiles, "b_shape", None),
            b_shape4=getattr(profiles, "b_shape4", None),
            tau=tau,
            rho=rho,
            gravity=gravity,
            brunt_vaisala2=brunt_vaisala2,
            sound_speed=sound_speed,
        )


def _or(value: Any, default: Any) -> Any:
    return default if value is None else value


# Field name -> (offset, shape) in the kernel record; must match src/closure/kernel.rs `Layout`.
_RECORD: dict[str, tuple[int, tuple[int, ...]]] = {
    "alpha": (0, (3, 3)),
    "alpha_kinetic": (9, (3, 3)),
    "alpha_magnetic": (18, (3, 3)),
    "alpha_buoyancy": (27, (3, 3)),
    "pumping_kinetic": (36, (3,)),
    "pumping_magnetic": (39, (3,)),
    "buoyancy": (42, (3,)),
    "buoyancy_gamma": (45, (3,)),
    "entropy_drift": (48, (3,)),
    "gamma": (51, (3,)),
    "eta": (54, (3, 3)),
    "eta_kinetic": (63, (3, 3)),
    "eta_magnetic": (72, (3, 3)),
}
_B_TENSOR = 83  # offset of the full b tensor in the record; slots 81, 82 hold the flags, returned separately

_UNITS = {
    "alpha": "cm / s",
    "pumping": "cm / s",
    "buoyancy": "cm / s",
    "entropy": "cm / s",
    "gamma": "cm / s",
    "eta": "cm2 / s",
}


def _unit(name: str) -> str:
    return next(u for k, u in _UNITS.items() if name.startswith(k))


@dataclass(frozen=True, repr=False)
class ClosureCoefficients:
    r"""Tau-closure coefficients on a grid; every term separately and in total (model predictions).

    Sign conventions: :math:`\mathcal{E}_i = \alpha_{ij}B_j + (\gamma\times B)_i - \eta_{ij}J_j` for
    horizontally averaged fields (i, j horizontal, :math:`J=\nabla\times B`); a positive ``gamma_z`` carries
    mean field upward; positive ``eta`` diffuses.

    Attributes
    ----------
    alpha, alpha_kinetic, alpha_magnetic, alpha_buoyancy : ndarray, shape G + (3, 3)
        [cm s^-1]. ``alpha`` = kinetic + magnetic + buoyancy alpha (the symmetric part of the buoyancy
        tensor, odd in gravity, non-zero only for tilted magnetic eddies).
    pumping_kinetic, pumping_magnetic : ndarray, shape G + (3,)
        [cm s^-1]. :math:`-(\tau/2)\nabla\cdot R` (away from strong turbulence) and
        :math:`+(\tau/2)\nabla\cdot M/(4\pi\rho)` (toward strong magnetic fluctuations).
    buoyancy : ndarray, shape G + (3,)
        [cm s^-1] drift perpendicular to a mean field along the requested ``field_direction``, from the
        full buoyancy tensor (upward where ``gravity`` > 0 for isotropic eddies).
    buoyancy_gamma : ndarray, shape G + (3,)
        [cm s^-1] the axial vector of the buoyancy tensor, the part of it that enters ``gamma``; equal to
        ``buoyancy`` when the magnetic eddies are axisymmetric about z.
    entropy_drift : ndarray, shape G + (3,)
        [cm s^-1] change of the vertical drifts by stable stratification, :math:`(f-1)(\gamma^K_z +
        \gamma^M_z + \gamma^B_z)` with :math:`f = 1/(1+N^2\tau^2)` (a modelling choice, see theory).
    gamma : ndarray, shape G + (3,)
        [cm s^-1] ``pumping_kinetic + pumping_magnetic + buoyancy_gamma + entropy_drift``.
    eta, eta_kinetic, eta_magnetic : ndarray, shape G + (3, 3)
        [cm^2 s^-1] diffusion tensor acting on the mean current of horizontally averaged fields (x-y block;
        the z row and column are zero).
    negative_diffusion : ndarray of bool, shape G
        Where the symmetric part of the horizontal ``eta`` has a negative eigenvalue (anti-diffusion).
    convectively_unstable : ndarray of bool, shape G
        Where ``brunt_vaisala2`` < 0. There the closure's relaxation picture fails; no stratification factor
        is applied and the values should not be trusted.
    b_tensor : ndarray, shape G + (3, 3, 3), or None
        Full :math:`b_{ijk}` [cm^2 s^-1] of :math:`\mathcal{E}_i = a_{ij}B_j + b_{ijk}\partial_k B_j`, for mean
        fields varying in any direction (only with ``full_tensor=True``).
    gradients : str
        'grid', 'explicit' or 'homogeneous': how the pumping divergences were obtained ('field response
        (periodic box)' for results of `field_response`).
    coords, axes : tuple or None
        The grid of the state.
    settings : dict
        The knobs used.
    """

    alpha: Array
    alpha_kinetic: Array
    alpha_magnetic: Array
    alpha_buoyancy: Array
    pumping_kinetic: Array
    pumping_magnetic: Array
    buoyancy: Array
    buoyancy_gamma: Array
    entropy_drift: Array
    gamma: Array
    eta: Array
    eta_kinetic: Array
    eta_magnetic: Array
    negative_diffusion: NDArray[np.bool_]
    convectively_unstable: NDArray[np.bool_]
    b_tensor: Array | None
    gradients: str
    coords: tuple[Array, ...] | None
    axes: tuple[str, ...] | None
    settings: dict[str, Any]

    def __repr__(self) -> str:
        shape = self.negative_diffusion.shape
        neg = int(np.count_nonzero(self.negative_diffusion))
        return (
            f"ClosureCoefficients(grid_shape={shape}, closure={self.settings['closure']!r}, "
            f"gradients={self.gradients!r}, negative_diffusion at {neg} point(s), "
            f"b_tensor={'yes' if self.b_tensor is not None else 'no'})"
        )

    @property
    def a_tensor(self) -> Array:
        r"""The tensor :math:`a_{ij} = \alpha_{ij} - \epsilon_{ijk}\gamma_k` [cm s^-1], shape G + (3, 3)."""
        return self.alpha - np.einsum("ijk,...k->...ij", _EPS, self.gamma)

    def emf(self, mean_b: Any, grad_mean_b: Any = None) -> Array:
        r"""Evaluate the mean EMF the coefficients imply for a given mean field.

        .. math:: \mathcal{E}_i = a_{ij}B_j + b_{ijk}\,\partial_k B_j

        With ``b_tensor`` (``full_tensor=True``) any gradient is allowed; otherwise only z-derivatives of
        the horizontal components (horizontally averaged fields) and :math:`-\eta_{ij}J_j` is used.

        Parameters
        ----------
        mean_b : array_like, shape G + (3,)
            Mean field [G].
        grad_mean_b : array_like, shape G + (3, 3), optional
            ``grad_mean_b[..., j, k]`` = :math:`\partial_k B_j` [G cm^-1]; zero when omitted.

        Returns
        -------
        ndarray, shape G + (3,)
            :math:`\mathcal{E}` [cm s^-1 G] (model prediction).
        """
        b = as_float("mean_b", mean_b, unit="G")
        if b.shape[-1:] != (3,):
            raise InputError(f"mean_b: must end in 3 components, got shape {b.shape}")
        out = np.einsum("...ij,...j->...i", self.a_tensor, b)
        if grad_mean_b is None:
            return out
        g = as_float("grad_mean_b", grad_mean_b, unit="G / cm")
        if g.shape[-2:] != (3, 3):
            raise InputError(f"grad_mean_b: must end in (3, 3), got shape {g.shape}")
        if self.b_tensor is not None:
            return out + np.einsum("...ijk,...jk->...i", self.b_tensor, g)
        if np.any(g[..., :, :2] != 0) or np.any(g[..., 2, 2] != 0):
            raise InputError(
                "grad_mean_b: without b_tensor only z-derivatives of B_x, B_y are allowed "
                "(horizontally averaged fields); use emf_coefficients(..., full_tensor=True)"
            )
        current = np.stack([-g[..., 1, 2], g[..., 0, 2], np.zeros_like(g[..., 0, 2])], axis=-1)
        return out - np.einsum("...ij,...j->...i", self.eta, current)

    def to_xarray(self) -> Any:
        """Return the coefficients as an ``xarray.Dataset`` (needs the optional xarray package).

        Grid dimensions are named after the state's axes (or ``point_0, ...`` without a grid), tensor
        dimensions ``i``, ``j``, ``k`` (components x, y, z); units and sign conventions are in the attributes.
        """
        try:
            import xarray as xr
        except ImportError as exc:  # pragma: no cover - depends on the environment
            raise ImportError("to_xarray needs the optional package xarray (pip install xarray)") from exc
        shape = self.negative_diffusion.shape
        dims = list(self.axes) if self.axes is not None else [f"point_{i}" for i in range(len(shape))]
        data: dict[str, Any] = {}
        for name, (_, tail) in _RECORD.items():
            tdims = ["i", "j", "k"][: len(tail)]
            data[name] = (dims + tdims, getattr(self, name), {"units": _unit(name)})
        data["negative_diffusion"] = (dims, self.negative_diffusion)
        data["convectively_unstable"] = (dims, self.convectively_unstable)
        if self.b_tensor is not None:
            data["b_tensor"] = (dims + ["i", "j", "k"], self.b_tensor, {"units": "cm2 / s"})
        coords: dict[str, Any] = {c: ("i" if c == "i" else c, ["x", "y", "z"]) for c in ("i", "j", "k")}
        if self.coords is not None:
            for d, c in zip(dims, self.coords, strict=True):
                coords[d] = (d, c, {"units": "cm"})
        attrs = {
            "convention": "E_i = alpha_ij B_j + (gamma x B)_i - eta_ij (curl B)_j; E_i = a_ij B_j + b_ijk d_k B_j",
            "note": "tau-closure model predictions under the assumptions stated in fluxfunnel.closure",
            "gradients": self.gradients,
            **{k: str(v) for k, v in self.settings.items()},
        }
        return xr.Dataset(data, coords=coords, attrs=attrs)


def _flat(a: Array, n: int, tail: tuple[int, ...]) -> Array:
    return np.asarray(a, dtype=np.float64).reshape((n,) + tail)


def _divergence(state: TurbulenceState, tensor: Array) -> Array:
    """``d_j T_ij`` along the grid's axes, second order (Rust kernel)."""
    assert state.coords is not None and state.axes is not None
    out = np.zeros(state.grid_shape + (3,))
    for axis, (coord, direction) in enumerate(zip(state.coords, state.axes, strict=True)):
        comp = np.ascontiguousarray(tensor[..., :, _AXIS_INDEX[direction]], dtype=np.float64)
        out += _core._closure_gradient(comp, coord, axis)
    return out


def _gradient(state: TurbulenceState, scalar: Array) -> Array:
    assert state.coords is not None and state.axes is not None
    out = np.zeros(state.grid_shape + (3,))
    for axis, (coord, direction) in enumerate(zip(state.coords, state.axes, strict=True)):
        out[..., _AXIS_INDEX[direction]] = _core._closure_gradient(np.ascontiguousarray(scalar), coord, axis)
    return out


def emf_coefficients(
    state: TurbulenceState,
    *,
    closure: Literal["projected", "partial", "unprojected"] = "projected",
    density_placement: Literal["outside", "inside"] = "outside",
    thermal_response: Literal["isothermal", "adiabatic"] = "isothermal",
    adiabatic_index: float = 5.0 / 3.0,
    field_direction: tuple[float, float, float] = (0.0, 1.0, 0.0),
    stratification: bool = True,
    full_tensor: bool = False,
) -> ClosureCoefficients:
    r"""Predict the mean-EMF coefficients of the tau closure from one-point statistics.

    With :math:`q = 4\pi\rho`, :math:`\langle b^2\rangle = \mathrm{tr}\,M`, shape tensors :math:`N^u, N^b`
    and :math:`S_{jmlk} = \langle(\mathcal{K}_{jm}b_l)b_k\rangle`, :math:`W_{iml}=\epsilon_{ijk}S_{jmlk}`:

    .. math::

        \alpha^K = -\tau\langle u\cdot\omega\rangle N^u, \qquad
        \alpha^M = +\tau\frac{\langle b\cdot\nabla\times b\rangle}{q} N^b, \\
        \gamma^K = -\frac{\tau}{2}\nabla\cdot R, \qquad \gamma^M = +\frac{\tau}{2}\frac{\nabla\cdot M}{q}, \\
        b_{iml} = -\tau\epsilon_{ijm}R_{jl} + \frac{\tau}{q}\left(\epsilon_{imk}M_{lk} - s\,W_{iml}\right),
        \qquad a^B_{il} = \frac{\tau g}{q c_*^2}\left(\epsilon_{izk}M_{lk} - p\,W_{izl}\right),

    where :math:`b_{iml}` multiplies :math:`\partial_l B_m`; :math:`s = 2, 1, 0` and :math:`p = 1, 1, 0` for
    ``closure`` = 'projected', 'partial', 'unprojected'. For isotropic turbulence these reduce to
    :math:`\alpha = -(\tau/3)(\langle u\cdot\omega\rangle - \langle b\cdot\nabla\times b\rangle/q)`,
    :math:`\eta_t = \tau\langle u^2\rangle/3` (no magnetic part with the consistent pressure) and a buoyant
    rise :math:`\tau g\langle b^2\rangle/(6 q c_*^2)`, half of the unprojected value.

    Parameters
    ----------
    state : TurbulenceState
        The statistics and their grid.
    closure : {'projected', 'partial', 'unprojected'}, optional
        Pressure treatment of the Lorentz-force response: the whole linear force projected with the Leray
        operator (consistent, default); the projector applied to the :math:`(b\cdot\nabla)B` term only; no
        projection (tension terms only). The last two are offered for comparison with simpler treatments.
    density_placement : {'outside', 'inside'}, optional
        Magnetic pumping :math:`\nabla\cdot M/(4\pi\rho)` ('outside') or :math:`\nabla\cdot(M/4\pi\rho)`
        ('inside'). For stratified disks the two differ by a term as large as the effect: a model choice.
    thermal_response : {'isothermal', 'adiabatic'}, optional
        Density response to a magnetic-pressure fluctuation: :math:`c_*^2 = c_s^2` or :math:`\gamma c_s^2`.
    adiabatic_index : float, optional
        :math:`\gamma` for the adiabatic response.
    field_direction : tuple of float, optional
        Horizontal unit vector of the mean field whose buoyant drift ``buoyancy`` reports (default azimuthal).
    stratification : bool, optional
        Apply the stable-stratification factor :math:`1/(1+N^2\tau^2)` to vertical transport that rests on
        vertical-velocity correlations (vertical drifts, the z-derivative kinetic diffusion).
    full_tensor : bool, optional
        Also return the full :math:`b_{ijk}` (27 more numbers per point).

    Returns
    -------
    ClosureCoefficients
        Model predictions, with every term separately and in total.

    Raises
    ------
    InputError
        For non-symmetric stress tensors, negative energies, shape tensors without trace 1, tau or rho not
        positive, NaN, gravity without sound speed, or unknown options; the message names the argument.

    Notes
    -----
    The tau closure replaces triple correlations by a relaxation :math:`-\mathcal{E}/\tau` (Blackman & Field
    2002; Brandenburg & Subramanian 2005). Pointwise tau: with :math:`\tau` varying in space, the pumping is
    :math:`-(\tau/2)\nabla\cdot R`, not :math:`-(1/2)\nabla\eta_t`. Not included: rotation and shear in the
    response, the rotation-stratification alpha, cross-helicity terms, nonlocality in space and time.
    For :math:`N^2<0` the closure with a fixed :math:`\tau` does not hold (growth, not relaxation); those points
    are flagged in ``convectively_unstable`` and left without a stratification factor.

    References
    ----------
    Krause & Raedler 1980; Raedler 1968; Pouquet, Frisch & Leorat 1976; Raedler, Kleeorin & Rogachevskii
    2003; Kichatinov & Pipin 1993 (mean-field buoyancy); ``docs/theory.md``.

    Examples
    --------
    >>> import numpy as np
    >>> from fluxfunnel.closure import TurbulenceState, emf_coefficients
    >>> s = TurbulenceState(reynolds=np.eye(3) * 100 / 3, kinetic_helicity=2.0, tau=10.0, rho=1e-9)
    >>> c = emf_coefficients(s)
    >>> round(float(c.alpha[0, 0]), 4), round(float(c.eta[0, 0]), 2)
    (-6.6667, 333.33)
    """
    if closure not in ("projected", "partial", "unprojected"):
        raise InputError(f"closure: must be 'projected', 'partial' or 'unprojected', got {closure!r}")
    if density_placement not in ("outside", "inside"):
        raise InputError(f"density_placement: must be 'outside' or 'inside', got {density_placement!r}")
    if thermal_response not in ("isothermal", "adiabatic"):
        raise InputError(f"thermal_response: must be 'isothermal' or 'adiabatic', got {thermal_response!r}")
    if not (math.isfinite(adiabatic_index) and adiabatic_index >= 1.0):
        raise InputError(f"adiabatic_index: must be finite and >= 1, got {adiabatic_index}")
    e = np.asarray(as_float("field_direction", field_direction), dtype=np.float64)
    if e.shape != (3,):
        raise InputError(f"field_direction: must have 3 components, got shape {e.shape}")
    if not isinstance(state, TurbulenceState):
        raise InputError(f"state: must be a TurbulenceState, got {type(state).__name__}")

    grid = state.grid_shape
    n = int(np.prod(grid, dtype=np.int64))
    rho = np.asarray(state.rho)
    check_positive("rho", rho)
    zero3 = np.broadcast_to(np.zeros(3), grid + (3,))  # no memory behind a zero divergence

    # Divergences for the pumping terms. With the density outside the derivative the kernel divides the
    # divergence of the Maxwell tensor by 4 pi rho itself (one pass over the grid fewer).
    divide = False
    if state.div_reynolds is not None or state.div_maxwell is not None:
        gradients = "explicit"
        div_r = zero3 if state.div_reynolds is None else state.div_reynolds
        div_m = zero3 if state.div_maxwell is None else state.div_maxwell
        if density_placement == "inside":
            if state.grad_rho is not None:
                grad_rho = state.grad_rho
            elif state.coords is not None:
                grad_rho = _gradient(state, np.asarray(state.rho, dtype=np.float64))
            else:
                raise InputError("grad_rho: needed with density_placement='inside' and explicit div_maxwell")
            four_pi_rho = 4.0 * math.pi * rho
            mag = div_m / four_pi_rho[..., None] - np.einsum("...ij,...j->...i", state.maxwell, grad_rho) / (
                four_pi_rho[..., None] * rho[..., None]
            )
        else:
            mag, divide = div_m, True
    elif state.coords is not None:
        gradients = "grid"
        div_r = _divergence(state, np.asarray(state.reynolds))
        if density_placement == "inside":
            mag = _divergence(state, np.asarray(state.maxwell) / (4.0 * math.pi * rho)[..., None, None])
        else:
            mag, divide = _divergence(state, np.asarray(state.maxwell)), True
    else:
        gradients = "homogeneous"
        div_r = mag = zero3

    if state.sound_speed is None:
        c2 = np.broadcast_to(0.0, grid)
    else:
        c2 = np.asarray(state.sound_speed) ** 2
        if thermal_response == "adiabatic":
            c2 = adiabatic_index * c2

    b_shape4 = None if state.b_shape4 is None else _flat(state.b_shape4, n, (3, 3, 3, 3))
    b_shape = None if state.b_shape4 is not None else _flat(state.b_shape, n, (3, 3))
    record, negative, unstable = _core._closure_coefficients(
        _flat(state.reynolds, n, (3, 3)),
        _flat(state.maxwell, n, (3, 3)),
        _flat(state.kinetic_helicity, n, ()),
        _flat(state.current_helicity, n, ()),
        _flat(state.u_shape, n, (3, 3)),
        b_shape,
        b_shape4,
        _flat(state.tau, n, ()),
        _flat(state.rho, n, ()),
        _flat(state.gravity, n, ()),
        _flat(state.brunt_vaisala2, n, ()),
        _flat(np.broadcast_to(c2, grid), n, ()),
        _flat(div_r, n, (3,)),
        _flat(mag, n, (3,)),
        pressure=closure,
        field_direction=(float(e[0]), float(e[1]), float(e[2])),
        stratification=bool(stratification),
        with_b_tensor=bool(full_tensor),
        divide_magnetic_div=divide,
    )
    fields = {
        name: record[:, off : off + int(np.prod(tail))].reshape(grid + tail) for name, (off, tail) in _RECORD.items()
    }
    return ClosureCoefficients(
        **fields,
        negative_diffusion=negative.reshape(grid),
        convectively_unstable=unstable.reshape(grid),
        b_tensor=record[:, _B_TENSOR : _B_TENSOR + 27].reshape(grid + (3, 3, 3)) if full_tensor else None,
        gradients=gradients,
        coords=state.coords,
        axes=state.axes,
        settings={
            "closure": closure,
            "density_placement": density_placement,
            "thermal_response": thermal_response,
            "adiabatic_index": adiabatic_index,
            "field_direction": tuple(float(x) for x in e),
            "stratification": bool(stratification),
        },
    )


def field_response(
    u: Any,
    b: Any,
    *,
    rho: float,
    tau: float,
    spacing: Any,
    gravity: float = 0.0,
    sound_speed: float | None = None,
    closure: Literal["projected", "partial", "unprojected"] = "projected",
    thermal_response: Literal["isothermal", "adiabatic"] = "isothermal",
    adiabatic_index: float = 5.0 / 3.0,
    field_direction: tuple[float, float, float] = (0.0, 1.0, 0.0),
) -> ClosureCoefficients:
    r"""Predict the tau-closure coefficients from the fluctuation fields themselves (the second route).

    Each unit mean field :math:`B = e_l` and unit mean-field gradient :math:`\partial_n B_m = 1` is imposed in
    turn on the periodic box; the linear responses are built from the fields,

    .. math::

        \dot b = (B\cdot\nabla)u - (u\cdot\nabla)B, \qquad
        \dot u = P\left[(B\cdot\nabla)b + (b\cdot\nabla)B - \nabla(B\cdot b)\right]/(4\pi\rho)
                + \frac{g\,(B\cdot b)}{4\pi\rho c_*^2} P\hat z,

    with the Leray projector :math:`P` applied in Fourier space, and :math:`\tau(\langle u\times\dot b\rangle +
    \langle\dot u\times b\rangle)` is averaged over the box. No spectral shape is assumed (the kinetic and
    magnetic alpha use the measured correlations :math:`\langle u_j\partial_l u_k\rangle`,
    :math:`\langle(\partial_l b_j)b_k\rangle`, not the helicity times a shape tensor), so comparing with
    `emf_coefficients` on statistics of the same fields tests the one-point modelling.

    Parameters
    ----------
    u : array_like, shape (3, nx, ny, nz)
        Velocity [cm s^-1] on a periodic box (its box mean is removed).
    b : array_like, shape (3, nx, ny, nz)
        Magnetic field [G], same grid (its box mean is removed; solenoidal fields expected).
    rho : float
        Density [g cm^-3] (uniform: the response is incompressible).
    tau : float
        Correlation time [s].
    spacing : float or tuple of 3 floats
        Grid spacings [cm].
    gravity : float, optional
        Signed gravity :math:`g = -g_z` [cm s^-2].
    sound_speed : float, optional
        Isothermal sound speed [cm s^-1]; needed when ``gravity`` is non-zero.
    closure, thermal_response, adiabatic_index, field_direction
        As in `emf_coefficients`.

    Returns
    -------
    ClosureCoefficients
        Box-averaged coefficients (grid shape ``()``). Pumping of a periodic, homogeneous box vanishes; no
        stratification factor is applied (``entropy_drift`` is zero). Model predictions of the tau closure.

    Notes
    -----
    Derivatives are spectral (the Nyquist wavenumber of an even axis is given zero derivative). The work
    (about 45 inverse FFTs of the box) runs in Rust without the GIL and stops on Ctrl-C.

    Examples
    --------
    >>> import numpy as np
    >>> from fluxfunnel.closure import field_response
    >>> z = np.arange(8) * 2 * np.pi / 8
    >>> u = np.zeros((3, 8, 8, 8))
    >>> u[0], u[1] = np.cos(z), np.sin(z)
    >>> r = field_response(u, np.zeros_like(u), rho=1.0, tau=2.0, spacing=2 * np.pi / 8)
    >>> round(float(r.alpha_kinetic[2, 2]), 6)
    2.0
    """
    if closure not in ("projected", "partial", "unprojected"):
        raise InputError(f"closure: must be 'projected', 'partial' or 'unprojected', got {closure!r}")
    if thermal_response not in ("isothermal", "adiabatic"):
        raise InputError(f"thermal_response: must be 'isothermal' or 'adiabatic', got {thermal_response!r}")
    uu = np.ascontiguousarray(as_float("u", u, unit="cm / s"))
    bb = np.ascontiguousarray(as_float("b", b, unit="G"))
    if uu.ndim != 4 or uu.shape[0] != 3:
        raise InputError(f"u: must have shape (3, nx, ny, nz), got {uu.shape}")
    if bb.shape != uu.shape:
        raise InputError(f"b: must have the shape of u {uu.shape}, got {bb.shape}")
    d = np.broadcast_to(as_float("spacing", spacing, unit="cm"), (3,)) if np.ndim(spacing) <= 1 else None
    if d is None:
        raise InputError("spacing: must be a number or three numbers")
    check_positive("spacing", np.asarray(d))
    e = np.asarray(as_float("field_direction", field_direction), dtype=np.float64)
    if e.shape != (3,) or e[2] != 0.0 or abs(float(np.linalg.norm(e)) - 1.0) > 1e-12:
        raise InputError(f"field_direction: must be a horizontal unit vector, got {field_direction!r}")
    c2 = 0.0
    if sound_speed is not None:
        cs = float(as_float("sound_speed", sound_speed, unit="cm / s"))
        check_positive("sound_speed", np.asarray(cs))
        c2 = cs**2 * (adiabatic_index if thermal_response == "adiabatic" else 1.0)
    packed = _core._closure_field_response(
        uu,
        bb,
        tau=float(as_float("tau", tau, unit="s")),
        rho=float(as_float("rho", rho, unit="g / cm3")),
        gravity=float(as_float("gravity", gravity, unit="cm / s2")),
        response_speed2=c2,
        spacing=(float(d[0]), float(d[1]), float(d[2])),
        pressure=closure,
    )
    a_k, a_m, a_b = (packed[9 * i : 9 * i + 9].reshape(3, 3) for i in range(3))
    b_k, b_m = packed[27:54].reshape(3, 3, 3), packed[54:81].reshape(3, 3, 3)

    def sym(a: Array) -> Array:
        return 0.5 * (a + a.T)

    def axial(a: Array) -> Array:
        return -0.5 * np.einsum("ijk,jk->i", _EPS, a)

    def horizontal(bt: Array) -> Array:
        eta = np.zeros((3, 3))
        eta[:2, 0] = bt[:2, 1, 2]
        eta[:2, 1] = -bt[:2, 0, 2]
        return eta

    eta_k, eta_m = horizontal(b_k), horizontal(b_m)
    eta = eta_k + eta_m
    sym_eta = sym(eta[:2, :2])
    gamma = axial(a_k) + axial(a_m) + axial(a_b)
    return ClosureCoefficients(
        alpha=sym(a_k) + sym(a_m) + sym(a_b),
        alpha_kinetic=sym(a_k),
        alpha_magnetic=sym(a_m),
        alpha_buoyancy=sym(a_b),
        pumping_kinetic=axial(a_k),
        pumping_magnetic=axial(a_m),
        buoyancy=np.cross(e, a_b @ e),
        buoyancy_gamma=axial(a_b),
        entropy_drift=np.zeros(3),
        gamma=gamma,
        eta=eta,
        eta_kinetic=eta_k,
        eta_magnetic=eta_m,
        negative_diffusion=np.asarray(np.linalg.eigvalsh(sym_eta).min() < 0),
        convectively_unstable=np.asarray(False),
        b_tensor=b_k + b_m,
        gradients="field response (periodic box)",
        coords=None,
        axes=None,
        settings={
            "closure": closure,
            "thermal_response": thermal_response,
            "adiabatic_index": adiabatic_index,
            "field_direction": tuple(float(x) for x in e),
            "stratification": False,
        },
    )


# --- decomposition of a_ij, b_ijk (general representation) -------------------------------------------------


@dataclass(frozen=True, repr=False)
class EMFDecomposition:
    r"""Coefficients of the general representation of the mean EMF.

    :math:`\mathcal{E} = \alpha\cdot B + \gamma\times B - \beta\cdot J - \delta\times J - \kappa:(\nabla B)^s`.

    Attributes
    ----------
    alpha : ndarray, shape (..., 3, 3)
        Symmetric alpha tensor [cm s^-1].
    gamma : ndarray, shape (..., 3)
        Pumping velocity [cm s^-1].
    beta : ndarray, shape (..., 3, 3)
        Symmetric diffusion tensor [cm^2 s^-1].
    delta : ndarray, shape (..., 3)
        The "Omega x J"-type vector [cm^2 s^-1].
    kappa : ndarray, shape (..., 3, 3, 3)
        Acts on the symmetric gradient, symmetric in its last two indices [cm^2 s^-1].
    """

    alpha: Array
    gamma: Array
    beta: Array
    delta: Array
    kappa: Array

    def __repr__(self) -> str:
        return f"EMFDecomposition(shape={self.gamma.shape[:-1]})"

    def emf(self, mean_b: Any, grad_mean_b: Any) -> Array:
        r"""Rebuild the mean EMF [cm s^-1 G].

        Parameters
        ----------
        mean_b : array_like, shape (..., 3)
            Mean field [G].
        grad_mean_b : array_like, shape (..., 3, 3)
            ``grad_mean_b[..., j, k]`` = :math:`\partial_k B_j` [G cm^-1].

        Returns
        -------
        ndarray, shape (..., 3)
        """
        b = as_float("mean_b", mean_b)
        g = as_float("grad_mean_b", grad_mean_b)
        current = np.einsum("ijk,...kj->...i", _EPS, g)
        sym_grad = 0.5 * (g + np.swapaxes(g, -1, -2))
        return (
            np.einsum("...ij,...j->...i", self.alpha, b)
            + np.cross(self.gamma, b)
            - np.einsum("...ij,...j->...i", self.beta, current)
            - np.cross(self.delta, current)
            - np.einsum("...ijk,...jk->...i", self.kappa, sym_grad)
        )


def decompose(a: Any, b: Any) -> EMFDecomposition:
    r"""Split the tensors of the mean EMF into alpha, gamma, beta, delta and kappa.

    The input is :math:`a_{ij}`, :math:`b_{ijk}` of :math:`\mathcal{E}_i = a_{ij}B_j + b_{ijk}\partial_k B_j`:

    .. math::

        \alpha_{ij} = \tfrac12(a_{ij}+a_{ji}),\quad \gamma_i = -\tfrac12\epsilon_{ijk}a_{jk},\quad
        \beta_{ij} = \tfrac14(\epsilon_{ikl}b_{jkl}+\epsilon_{jkl}b_{ikl}),\\
        \delta_i = \tfrac14(b_{jji}-b_{jij}),\quad \kappa_{ijk} = -\tfrac12(b_{ijk}+b_{ikj}).

    This is the sign layout with plus signs on alpha and gamma; in the all-minus layout alpha and gamma
    change sign and beta, delta, kappa stay the same.

    Parameters
    ----------
    a : array_like, shape (..., 3, 3)
        [cm s^-1].
    b : array_like, shape (..., 3, 3, 3)
        [cm^2 s^-1], ``b[..., i, j, k]`` multiplies :math:`\partial_k B_j`.

    Returns
    -------
    EMFDecomposition

    Examples
    --------
    >>> import numpy as np
    >>> from fluxfunnel.closure import decompose
    >>> d = decompose(np.zeros((3, 3)), np.zeros((3, 3, 3)))
    >>> d.beta.shape
    (3, 3)
    """
    a = as_float("a", a)
    b = as_float("b", b)
    if a.shape[-2:] != (3, 3):
        raise InputError(f"a: must end in (3, 3), got shape {a.shape}")
    if b.shape[-3:] != (3, 3, 3):
        raise InputError(f"b: must end in (3, 3, 3), got shape {b.shape}")
    alpha = 0.5 * (a + np.swapaxes(a, -1, -2))
    gamma = -0.5 * np.einsum("ijk,...jk->...i", _EPS, a)
    t = np.einsum("ikl,...jkl->...ij", _EPS, b)
    beta = 0.25 * (t + np.swapaxes(t, -1, -2))
    delta = 0.25 * (np.einsum("...jji->...i", b) - np.einsum("...jij->...i", b))
    kappa = -0.5 * (b + np.swapaxes(b, -1, -2))
    return EMFDecomposition(alpha=alpha, gamma=gamma, beta=beta, delta=delta, kappa=kappa)


def emf_from_tensors(a: Any, b: Any, mean_b: Any, grad_mean_b: Any) -> Array:
    r"""Return :math:`\mathcal{E}_i = a_{ij}B_j + b_{ijk}\partial_k B_j` [cm s^-1 G].

    Parameters
    ----------
    a : array_like, shape (..., 3, 3)
        [cm s^-1].
    b : array_like, shape (..., 3, 3, 3)
        [cm^2 s^-1].
    mean_b : array_like, shape (..., 3)
        [G].
    grad_mean_b : array_like, shape (..., 3, 3)
        ``grad_mean_b[..., j, k]`` = :math:`\partial_k B_j` [G cm^-1].

    Returns
    -------
    ndarray, shape (..., 3)
    """
    a = as_float("a", a)
    b = as_float("b", b)
    return np.einsum("...ij,...j->...i", a, as_float("mean_b", mean_b)) + np.einsum(
        "...ijk,...jk->...i", b, as_float("grad_mean_b", grad_mean_b)
    )


# --- helicity back-reaction ---------------------------------------------------------------------------------


def steady_quenched_alpha(
    alpha_kinetic: Any,
    mean_field: Any,
    equipartition_field: Any,
    magnetic_reynolds: Any,
    *,
    current_dot_field: Any = 0.0,
    eta_t: Any = None,
) -> Any:
    r"""Steady state of dynamical alpha quenching without helicity fluxes.

    .. math::

        \alpha = \frac{\alpha_K + R_m\,\eta_t\,J\cdot B/B_{eq}^2}{1 + R_m B^2/B_{eq}^2},
        \qquad R_m = \eta_t/\eta,\quad B_{eq}^2 = 4\pi\rho\langle u^2\rangle .

    With :math:`J\cdot B = 0` this is the catastrophic quenching :math:`\alpha_K/(1+R_m B^2/B_{eq}^2)`
    (Vainshtein & Cattaneo 1992; Gruzinov & Diamond 1994). Model prediction: assumes the steady state of
    `quenching_rhs`, isotropic :math:`\eta_t`, no helicity flux.

    Parameters
    ----------
    alpha_kinetic : array_like
        Kinetic alpha [cm s^-1].
    mean_field : array_like
        Mean-field strength :math:`|B|` [G].
    equipartition_field : array_like
        :math:`B_{eq}` [G], positive.
    magnetic_reynolds : array_like
        :math:`R_m = \eta_t/\eta`, positive.
    current_dot_field : array_like, optional
        :math:`J\cdot B` with :math:`J = \nabla\times B` [G^2 cm^-1].
    eta_t : array_like, optional
        Turbulent diffusivity [cm^2 s^-1]; required when ``current_dot_field`` is non-zero.

    Returns
    -------
    float or ndarray
        Total alpha [cm s^-1], broadcast over the inputs (scalar in, scalar out).

    Examples
    --------
    >>> from fluxfunnel.closure import steady_quenched_alpha
    >>> round(steady_quenched_alpha(1.0, 0.1, 1.0, 1e3), 6)
    0.090909
    """
    ak = as_float("alpha_kinetic", alpha_kinetic, unit="cm / s")
    b = as_float("mean_field", mean_field, unit="G")
    beq = as_float("equipartition_field", equipartition_field, unit="G")
    rm = as_float("magnetic_reynolds", magnetic_reynolds)
    jb = as_float("current_dot_field", current_dot_field, unit="G2 / cm")
    for name, arr in (("alpha_kinetic", ak), ("mean_field", b), ("current_dot_field", jb)):
        if not np.all(np.isfinite(arr)):
            raise InputError(f"{name}: must be finite")
    check_positive("equipartition_field", beq)
    check_positive("magnetic_reynolds", rm)
    if eta_t is None:
        if np.any(jb != 0):
            raise InputError("eta_t: required when current_dot_field is non-zero")
        et = np.zeros(())
    else:
        et = as_float("eta_t", eta_t, unit="cm2 / s")
        check_non_negative("eta_t", et)
    x = (b / beq) ** 2
    out = (ak + rm * et * jb / beq**2) / (1.0 + rm * x)
    return scalar_or_array(
        np.asarray(out),
        alpha_kinetic,
        mean_field,
        equipartition_field,
        magnetic_reynolds,
        current_dot_field,
        eta_t if eta_t is not None else 0.0,
    )


def quenching_rhs(
    alpha_magnetic: Any,
    emf_dot_field: Any,
    eta_t: Any,
    forcing_wavenumber: Any,
    equipartition_field: Any,
    magnetic_reynolds: Any,
    *,
    flux_divergence: Any = 0.0,
) -> Any:
    r"""Right-hand side of the dynamical-quenching equation for the magnetic alpha.

    .. math::

        \frac{\partial\alpha_M}{\partial t} = -2\eta_t k_f^2\left[\frac{\mathcal{E}\cdot B}{B_{eq}^2}
        + \frac{\alpha_M}{R_m}\right] - \nabla\cdot F_\alpha

    from the small-scale helicity budget with :math:`\langle b\cdot\nabla\times b\rangle\approx k_f^2\langle
    a\cdot b\rangle`, :math:`\alpha_M = (\tau/3)\langle b\cdot\nabla\times b\rangle/(4\pi\rho)` and
    :math:`\tau/3 = \eta_t/\langle u^2\rangle` (Kleeorin & Ruzmaikin 1982; Blackman & Brandenburg 2002).
    The total alpha is :math:`\alpha_K + \alpha_M`. For use inside a time stepper; pointwise, any grid.

    Parameters
    ----------
    alpha_magnetic : array_like
        :math:`\alpha_M` [cm s^-1].
    emf_dot_field : array_like
        :math:`\mathcal{E}\cdot B` [cm s^-1 G^2].
    eta_t : array_like
        Turbulent diffusivity [cm^2 s^-1], non-negative.
    forcing_wavenumber : array_like
        :math:`k_f` [cm^-1], positive.
    equipartition_field : array_like
        :math:`B_{eq}` [G], positive.
    magnetic_reynolds : array_like
        :math:`R_m = \eta_t/\eta`, positive.
    flux_divergence : array_like, optional
        :math:`\nabla\cdot F_\alpha` [cm s^-2] (see `helicity_flux_divergence`).

    Returns
    -------
    float or ndarray
        :math:`\partial\alpha_M/\partial t` [cm s^-2].

    Examples
    --------
    >>> from fluxfunnel.closure import quenching_rhs
    >>> quenching_rhs(0.0, 0.0, 1.0, 1.0, 1.0, 1e3)
    -0.0
    """
    am = as_float("alpha_magnetic", alpha_magnetic, unit="cm / s")
    eb = as_float("emf_dot_field", emf_dot_field)
    et = as_float("eta_t", eta_t, unit="cm2 / s")
    kf = as_float("forcing_wavenumber", forcing_wavenumber, unit="1 / cm")
    beq = as_float("equipartition_field", equipartition_field, unit="G")
    rm = as_float("magnetic_reynolds", magnetic_reynolds)
    fd = as_float("flux_divergence", flux_divergence, unit="cm / s2")
    for name, arr in (("alpha_magnetic", am), ("emf_dot_field", eb), ("flux_divergence", fd)):
        if not np.all(np.isfinite(arr)):
            raise InputError(f"{name}: must be finite")
    check_non_negative("eta_t", et)
    check_positive("forcing_wavenumber", kf)
    check_positive("equipartition_field", beq)
    check_positive("magnetic_reynolds", rm)
    out = -2.0 * et * kf**2 * (eb / beq**2 + am / rm) - fd
    return scalar_or_array(
        np.asarray(out),
        alpha_magnetic,
        emf_dot_field,
        eta_t,
        forcing_wavenumber,
        equipartition_field,
        magnetic_reynolds,
        flux_divergence,
    )


def quenching_relaxation_time(
    eta_t: Any, forcing_wavenumber: Any, mean_field: Any, equipartition_field: Any, magnetic_reynolds: Any
) -> Any:
    r"""E-folding time [s] of the magnetic alpha toward its steady state for a frozen mean field.

    .. math:: t_q = \left[2\eta_t k_f^2\left(B^2/B_{eq}^2 + 1/R_m\right)\right]^{-1}

    Parameters
    ----------
    eta_t : array_like
        [cm^2 s^-1], positive.
    forcing_wavenumber : array_like
        [cm^-1], positive.
    mean_field : array_like
        [G].
    equipartition_field : array_like
        [G], positive.
    magnetic_reynolds : array_like
        :math:`\eta_t/\eta`, positive.

    Returns
    -------
    float or ndarray

    Examples
    --------
    >>> from fluxfunnel.closure import quenching_relaxation_time
    >>> round(quenching_relaxation_time(1.0, 1.0, 0.1, 1.0, 1e3), 4)
    45.4545
    """
    et = as_float("eta_t", eta_t, unit="cm2 / s")
    kf = as_float("forcing_wavenumber", forcing_wavenumber, unit="1 / cm")
    b = as_float("mean_field", mean_field, unit="G")
    beq = as_float("equipartition_field", equipartition_field, unit="G")
    rm = as_float("magnetic_reynolds", magnetic_reynolds)
    check_positive("eta_t", et)
    check_positive("forcing_wavenumber", kf)
    if not np.all(np.isfinite(b)):
        raise InputError("mean_field: must be finite")
    check_positive("equipartition_field", beq)
    check_positive("magnetic_reynolds", rm)
    out = 1.0 / (2.0 * et * kf**2 * ((b / beq) ** 2 + 1.0 / rm))
    return scalar_or_array(
        np.asarray(out), eta_t, forcing_wavenumber, mean_field, equipartition_field, magnetic_reynolds
    )


def helicity_flux_divergence(alpha_magnetic: Any, z: Any, *, diffusivity: Any = 0.0, velocity: Any = 0.0) -> Array:
    r"""Divergence of the helicity flux :math:`F_\alpha = -\kappa_\alpha\,\partial_z\alpha_M + U_z\alpha_M` on a z-grid.

    Second-order derivatives on the (possibly non-uniform) grid. Diffusive fluxes with
    :math:`\kappa_\alpha\sim\eta_t` and advective fluxes by winds are common closures of the flux; which to
    use is a modelling choice.

    Parameters
    ----------
    alpha_magnetic : array_like, shape (..., nz)
        :math:`\alpha_M(z)` [cm s^-1], z the last axis.
    z : array_like, shape (nz,)
        Strictly increasing heights [cm], at least 3 points.
    diffusivity : array_like, optional
        :math:`\kappa_\alpha` [cm^2 s^-1], broadcast to ``alpha_magnetic``.
    velocity : array_like, optional
        :math:`U_z` [cm s^-1], broadcast to ``alpha_magnetic``.

    Returns
    -------
    ndarray
        :math:`\partial_z F_\alpha` [cm s^-2], the shape of ``alpha_magnetic``.

    Examples
    --------
    >>> import numpy as np
    >>> from fluxfunnel.closure import helicity_flux_divergence
    >>> z = np.linspace(0.0, 1.0, 11)
    >>> float(np.max(np.abs(helicity_flux_divergence(z, z, velocity=1.0) - 1.0))) < 1e-12
    True
    """
    am = as_float("alpha_magnetic", alpha_magnetic, unit="cm / s")
    zz = as_float("z", z, unit="cm")
    check_increasing("z", zz, min_len=3)
    if am.ndim == 0 or am.shape[-1] != zz.size:
        raise InputError(f"alpha_magnetic: last axis must match z ({zz.size}), got shape {am.shape}")
    kappa = np.broadcast_to(as_float("diffusivity", diffusivity, unit="cm2 / s"), am.shape)
    u = np.broadcast_to(as_float("velocity", velocity, unit="cm / s"), am.shape)
    check_non_negative("diffusivity", np.asarray(kappa))
    axis = am.ndim - 1
    dadz = _core._closure_gradient(np.ascontiguousarray(am), zz, axis)
    flux = -kappa * dadz + u * am
    return np.asarray(_core._closure_gradient(np.ascontiguousarray(flux), zz, axis))
