"""Vertical structure of a thin disk: field-line bending, flux transport speed, and a 1D column model.

Two tools, both in CGS (Gaussian) units:

- :func:`bend_profile` solves the steady thin-disk problem at one or many radii: given the diffusivity
  ``eta(z)``, the vertical transport velocity ``v_z(z)`` and the radial velocity ``v_r(z)`` on heights from the
  midplane to the disk surface, it returns ``B_r/B_z`` against height, the surface inclination and the radial
  speed ``u_psi`` of the poloidal flux, split as ``u_psi = u_adv + u_grad + u_dif * (B_rs/B_z)``.
- :class:`ColumnModel` evolves the radial and azimuthal mean field of a disk column in time (shear, alpha
  effect, vertical pumping, diffusion, dynamical alpha quenching by magnetic helicity with a helicity flux)
  and returns the history (butterfly-diagram data) with a plot helper.

Everything here is a model prediction under stated mean-field assumptions (thin disk, axisymmetric mean
field, coefficients given); the derivations are in ``docs/theory.md``, section "Vertical structure".
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Any, Literal

import numpy as np
from numpy.typing import ArrayLike, NDArray

from . import _core
from ._errors import InputError
from ._validate import as_float, as_scalar, check_finite, check_increasing, check_positive

__all__ = [
    "BendResult",
    "bend_profile",
    "midplane_grid",
    "DynamicalQuenching",
    "ColumnModel",
    "ColumnHistory",
]

FloatArray = NDArray[np.float64]


def _shape_text(value: Any) -> str:
    if value is None:
        return "None"
    if np.ndim(value) == 0:
        return f"{float(value):.4g}"
    return f"array{tuple(np.shape(value))}"


@dataclass(frozen=True, repr=False)
class BendResult:
    """Steady bending of the field through a thin disk and the radial flux transport speed.

    All speeds are in cm s^-1 with the sign convention of the radius: ``u < 0`` moves flux inward.
    Batch-shaped fields are Python floats when every batch input was a scalar.

    Attributes
    ----------
    z : ndarray, shape (nz,)
        Heights above the midplane [cm]; ``z[-1]`` is the surface where ``B_rs`` is taken.
    u_adv : float or ndarray
        Conductivity-weighted advection speed ``int mu v_r/eta dz / int mu/eta dz`` [cm s^-1].
    u_dif : float or ndarray
        Diffusion coefficient of the surface ratio, ``mu(h) / int mu/eta dz`` [cm s^-1]; positive, so a
        field fanning outward (``B_rs/B_z > 0``) diffuses outward.
    u_grad : float or ndarray
        Diffusion by the radial gradient of ``B_z``, ``-(d ln B_z/dR) int mu dz / int mu/eta dz``
        [cm s^-1]; zero when ``d_bz_dr = 0``.
    steady_surface_ratio : float or ndarray
        The surface ratio ``B_rs/B_z`` for which the flux is locally stationary (``u_psi = 0``).
    surface_ratio : float or ndarray or None
        The surface ratio used for the profile (given, or the steady one), ``None`` for the split only.
    u_psi : float or ndarray or None
        Flux transport speed ``u_adv + u_grad + u_dif * surface_ratio`` [cm s^-1]; ``None`` for the split only.
    surface_inclination_deg : float or ndarray or None
        Inclination of the field from the vertical at the surface, ``arctan(B_rs/B_z)`` [degrees].
    b_r_over_b_z : ndarray or None
        ``B_r/B_z`` at every height, shape ``(..., nz)``; ``None`` for the split only.
    regularised : ndarray of bool, shape (..., nz)
        Heights where ``eta`` was replaced by ``eta_floor``; all false unless a floor was asked for.
    u_mass : float or ndarray or None
        Density-weighted radial speed ``int rho v_r dz / int rho dz`` [cm s^-1], the speed at which the mass
        moves, for comparison with ``u_adv``; ``None`` unless ``density`` was given.
    """

    z: FloatArray
    u_adv: Any
    u_dif: Any
    u_grad: Any
    steady_surface_ratio: Any
    surface_ratio: Any
    u_psi: Any
    surface_inclination_deg: Any
    b_r_over_b_z: FloatArray | None
    regularised: NDArray[np.bool_]
    u_mass: Any = None

    def __repr__(self) -> str:
        parts = ", ".join(
            f"{name}={_shape_text(getattr(self, name))}"
            for name in ("u_adv", "u_dif", "u_grad", "u_psi", "surface_inclination_deg", "u_mass")
        )
        return f"BendResult(nz={self.z.size}, {parts}, regularised={int(np.count_nonzero(self.regularised))})"

    def to_xarray(self) -> Any:
        """Return the result as an ``xarray.Dataset`` (batch axes ``column_0, ...``, height ``z``; units kept)."""
        import xarray as xr

        batch = np.shape(self.u_adv)
        dims = tuple(f"column_{i}" for i in range(len(batch)))
        units = {
            "u_adv": "cm s-1",
            "u_dif": "cm s-1",
            "u_grad": "cm s-1",
            "steady_surface_ratio": "1",
            "surface_ratio": "1",
            "u_psi": "cm s-1",
            "surface_inclination_deg": "degree",
            "u_mass": "cm s-1",
        }
        data: dict[str, Any] = {}
        for name, unit in units.items():
            value = getattr(self, name)
            if value is not None:
                data[name] = (dims, np.broadcast_to(np.asarray(value, dtype=float), batch), {"units": unit})
        if self.b_r_over_b_z is not None:
            prof = np.asarray(self.b_r_over_b_z, dtype=float)
            data["b_r_over_b_z"] = ((*dims, "z"), np.broadcast_to(prof, (*batch, self.z.size)), {"units": "1"})
        data["regularised"] = (
            (*dims, "z"),
            np.broadcast_to(self.regularised, (*batch, self.z.size)).astype(np.int8),
            {"units": "1", "long_name": "eta replaced by eta_floor (1) or not (0)"},
        )
        coords = {"z": ("z", self.z, {"units": "cm", "long_name": "height above the midplane"})}
        return xr.Dataset(data, coords=coords, attrs={"comment": "steady thin-disk bending; model prediction"})


def _profile_arg(name: str, value: Any, unit: str | None) -> FloatArray:
    arr = as_float(name, value, unit=unit)
    check_finite(name, arr)
    return arr


def bend_profile(
    z: ArrayLike,
    *,
    eta: ArrayLike,
    v_z: ArrayLike = 0.0,
    v_r: ArrayLike = 0.0,
    b_z: ArrayLike = 1.0,
    surface_ratio: ArrayLike | Literal["steady"] | None = None,
    d_bz_dr: ArrayLike = 0.0,
    eta_floor: float | None = None,
    density: ArrayLike | None = None,
) -> BendResult:
    r"""Steady field-line bending through a thin disk and the radial speed of the poloidal flux.

    In a steady thin disk the azimuthal electric field is the same at every height. With
    ``b(z) = B_r/B_z`` and ``g = d ln B_z/dR`` that gives, for ``0 <= z <= h`` (``h = z[-1]``),

    .. math::

        \eta b' - v_z b = u_\psi - v_r + \eta g, \qquad b(0) = 0,

    whose constant ``u_psi`` is the radial speed of the flux surfaces
    (:math:`\partial\psi/\partial t = -R u_\psi B_z`). With :math:`\mu = \exp(-\int_0^z v_z/\eta)`,

    .. math::

        u_\psi = \frac{\int_0^h \mu v_r/\eta\,dz + \mu(h) b_s - g\int_0^h \mu\,dz}{\int_0^h \mu/\eta\,dz}
               = u_{adv} + u_{grad} + u_{dif}\, b_s .

    The integrals use a fourth-order cumulative rule on the given heights (cubic through four neighbouring
    nodes), with ``ln mu`` normalised by its maximum. The result is a model prediction: it assumes a thin
    disk (``H/R << 1``), a quasi-vertical field inside the disk, steady state, and the given profiles.

    Parameters
    ----------
    z : array_like, shape (nz,)
        Heights above the midplane [cm], strictly increasing, ``z[0] = 0``, ``nz >= 4``. The top ``z[-1]``
        is the surface ``h`` where the outside field is matched (the scale height in the classic problem).
    eta : array_like, shape (..., nz)
        Effective magnetic diffusivity acting on ``dB_r/dz`` [cm^2 s^-1]; broadcasts against ``z``. Must be
        positive unless ``eta_floor`` is given.
    v_z : array_like, shape (..., nz), optional
        Total vertical transport velocity (mean flow, turbulent pumping, buoyancy, entropy drift)
        [cm s^-1]; positive lifts the field away from the midplane.
    v_r : array_like, shape (..., nz), optional
        Radial velocity (mean flow plus radial pumping) [cm s^-1]; negative is inflow.
    b_z : array_like, optional
        Vertical field at the midplane [G], batch-shaped; nonzero. Used only through ``d_bz_dr / b_z``.
    surface_ratio : array_like or "steady" or None, optional
        Surface ratio ``B_rs/B_z`` (batch-shaped), set by the field outside the disk. ``"steady"`` uses the
        ratio that makes ``u_psi = 0``; ``None`` (default) returns the split only, without a profile.
    d_bz_dr : array_like, optional
        Radial gradient of ``B_z`` [G cm^-1], batch-shaped. The term it gives is of order ``(H/R)/tan i``
        relative to the surface term.
    eta_floor : float, optional
        Regularisation [cm^2 s^-1] where ``eta`` vanishes or turns negative (anti-diffusion), where the
        equation is singular. Without it such a point raises `InputError` naming the column and height.
        With it, ``eta`` is replaced by ``max(eta, eta_floor)``: those heights become a highly conducting
        layer that pins the flux to the gas there (``u_psi`` tends to ``v_r`` of the layer), and the result
        then depends on the floor; ``regularised`` marks where it acted.
    density : array_like, shape (..., nz), optional
        Gas density [g cm^-3], non-negative; when given, the result also carries the density-weighted
        radial speed ``u_mass`` of the mass, which differs from the conductivity-weighted ``u_adv`` whenever
        ``v_r`` varies with height.

    Returns
    -------
    BendResult
        Profile, surface inclination, ``u_psi`` and its split; see `BendResult`.

    Raises
    ------
    InputError
        Non-monotonic or too short ``z``, ``z[0] != 0``, NaN or infinity, shapes that do not broadcast,
        ``b_z = 0``, ``eta <= 0`` without a floor, or an upward transport so strong for the grid that the
        surface weight ``mu(h)/max(mu)`` underflows (Peclet numbers of several hundred), where the split no
        longer means anything in double precision.

    Notes
    -----
    Sign conventions: ``u < 0`` moves flux inward; ``B_rs/B_z > 0`` means field lines fan outward above the
    disk (flux concentrated toward the centre). Uniform ``eta``, no vertical transport and
    ``v_r = -3 nu/(2R)`` give the steady ``tan i = |v_r| h/eta = 1.5 Pm h/R`` (Lubow, Papaloizou &
    Pringle 1994, MNRAS 267, 235, whose global steady state has ``tan i = 1.52/D``, ``D = (R/H)/Pm``).

    The equation is unchanged by a rescaling of height, so columns with different surface heights ``h`` can
    share one call: pass ``z / h`` as the heights, ``eta / h`` as ``eta`` and ``d_bz_dr * h`` as ``d_bz_dr``;
    the speeds are still in cm s^-1.

    References
    ----------
    Lubow, S. H., Papaloizou, J. C. B. & Pringle, J. E. 1994, MNRAS 267, 235.
    Guilet, J. & Ogilvie, G. I. 2012, MNRAS 424, 2097 (conductivity-weighted transport).

    Examples
    --------
    >>> import numpy as np
    >>> from fluxfunnel.vertical import bend_profile
    >>> z = np.linspace(0.0, 1.0e11, 64)          # cm, an invented disk with h = 1e11 cm
    >>> res = bend_profile(z, eta=1.0e16, v_r=-2.0e4, surface_ratio="steady")
    >>> round(res.steady_surface_ratio, 6)        # |v_r| h / eta
    0.2
    >>> round(res.u_psi, 9)
    0.0
    """
    zz = as_float("z", z, unit="cm")
    check_increasing("z", zz, min_len=4)
    if zz[0] != 0.0:
        raise InputError(f"z: must start at the midplane z = 0 (even symmetry), got z[0] = {zz[0]}")
    nz = zz.size
    eta_a = _profile_arg("eta", eta, "cm2 / s")
    vz_a = _profile_arg("v_z", v_z, "cm / s")
    vr_a = _profile_arg("v_r", v_r, "cm / s")
    try:
        prof_shape = np.broadcast_shapes(eta_a.shape, vz_a.shape, vr_a.shape, (nz,))
    except ValueError as exc:
        raise InputError(
            f"eta, v_z, v_r: shapes {eta_a.shape}, {vz_a.shape}, {vr_a.shape} do not broadcast against "
            f"z ({nz},) along the last axis"
        ) from exc
    if prof_shape[-1] != nz:
        raise InputError(f"eta, v_z, v_r: last axis must have the length of z ({nz}), got {prof_shape[-1]}")
    bz_a = _profile_arg("b_z", b_z, "G")
    if np.any(bz_a == 0):
        raise InputError("b_z: must be nonzero (it divides d_bz_dr)")
    grad_a = _profile_arg("d_bz_dr", d_bz_dr, "G / cm")
    steady = isinstance(surface_ratio, str)
    if steady and surface_ratio != "steady":
        raise InputError(f"surface_ratio: must be a number, an array, 'steady' or None, got {surface_ratio!r}")
    bs_a = None if (surface_ratio is None or steady) else _profile_arg("surface_ratio", surface_ratio, None)
    batch_shapes = [prof_shape[:-1], bz_a.shape, grad_a.shape] + ([] if bs_a is None else [bs_a.shape])
    try:
        batch = np.broadcast_shapes(*batch_shapes)
    except ValueError as exc:
        raise InputError(f"b_z, d_bz_dr, surface_ratio: batch shapes {batch_shapes} do not broadcast together") from exc
    if eta_floor is not None:
        floor = float(as_float("eta_floor", eta_floor, unit="cm2 / s"))
        check_positive("eta_floor", np.asarray(floor))
    else:
        floor = None
    m = math.prod(batch)

    def rows(a: FloatArray) -> FloatArray:
        return np.broadcast_to(a, batch + (nz,)).reshape(m, nz)

    def flat(a: FloatArray) -> FloatArray:
        return np.broadcast_to(a, batch).reshape(m)

    grad = flat(grad_a) / flat(bz_a)
    bs = None if bs_a is None else np.ascontiguousarray(flat(bs_a))
    u_adv, u_dif, u_grad, steady_ratio, ratio, floored = _core._bend_columns(
        zz, rows(eta_a), rows(vz_a), rows(vr_a), np.ascontiguousarray(grad), bs, steady, floor
    )

    def out(a: FloatArray) -> Any:
        a = a.reshape(batch)
        return float(a) if batch == () else a

    used = None
    u_psi = None
    incl = None
    if bs is not None or steady:
        used_flat = steady_ratio if bs is None else bs
        used = out(np.array(used_flat, dtype=np.float64))
        u_psi = out(u_adv + u_grad + u_dif * used_flat)
        incl = out(np.degrees(np.arctan(used_flat)))
    u_mass = None
    if density is not None:
        rho = _profile_arg("density", density, "g / cm3")
        try:
            rho_b = np.broadcast_to(rho, batch + (nz,)).reshape(m, nz)
        except ValueError as exc:
            raise InputError(f"density: shape {rho.shape} does not broadcast to {batch + (nz,)}") from exc
        u_mass = out(_core._mass_speed(zz, rho_b, rows(vr_a)))
    return BendResult(
        z=zz,
        u_adv=out(u_adv),
        u_dif=out(u_dif),
        u_grad=out(u_grad),
        steady_surface_ratio=out(steady_ratio),
        surface_ratio=used,
        u_psi=u_psi,
        surface_inclination_deg=incl,
        b_r_over_b_z=None if ratio is None else ratio.reshape(batch + (nz,)),
        regularised=floored.reshape(batch + (nz,)),
        u_mass=u_mass,
    )


def midplane_grid(scale_height: float, *, n: int = 256, top: float = 1.0) -> FloatArray:
    """Heights from the midplane to ``top`` scale heights, uniform, for :func:`bend_profile`.

    Parameters
    ----------
    scale_height : float
        Disk scale height ``H`` [cm]; positive.
    n : int, optional
        Number of heights (at least 4).
    top : float, optional
        Height of the surface in units of ``H`` (1 for the classic thin-disk problem); positive.

    Returns
    -------
    ndarray, shape (n,)
        ``z`` [cm] from 0 to ``top * scale_height``.

    Examples
    --------
    >>> from fluxfunnel.vertical import midplane_grid
    >>> midplane_grid(2.0e10, n=5)
    array([0.0e+00, 5.0e+09, 1.0e+10, 1.5e+10, 2.0e+10])
    """
    h = as_float("scale_height", scale_height, unit="cm")
    if h.ndim != 0:
        raise InputError(f"scale_height: must be a scalar, got shape {h.shape}")
    check_positive("scale_height", h)
    check_positive("top", as_float("top", top))
    if int(n) != n or n < 4:
        raise InputError(f"n: must be an integer >= 4, got {n!r}")
    return np.linspace(0.0, float(top) * float(h), int(n))


# ---------------------------------------------------------------------------------------------------------
# Column model


@dataclass(frozen=True)
class DynamicalQuenching:
    r"""Dynamical alpha quenching by the small-scale magnetic helicity, with a diffusive helicity flux.

    The magnetic alpha obeys (Kleeorin & Ruzmaikin 1982; Blackman & Brandenburg 2002)

    .. math::

        \partial_t \alpha_M = -2\eta k_f^2\left(\frac{\mathcal{E}\cdot B}{B_{eq}^2} + \frac{\alpha_M}{R_m}\right)
        + \kappa_\alpha \partial_z^2 \alpha_M,
        \qquad \mathcal{E}\cdot B = \alpha B^2 - \eta J\cdot B,

    with ``alpha = alpha_K + alpha_M``, ``R_m = eta/eta_molecular`` and ``J = curl B``. Without a flux and with
    ``J.B = 0`` the steady state is ``alpha = alpha_K/(1 + R_m B^2/B_eq^2)`` (catastrophic quenching). Assumes
    isotropic turbulent diffusion when forming ``E.B`` and a uniform helicity-to-alpha factor.

    Parameters
    ----------
    b_eq : float or array_like, shape (nz,)
        Equipartition field ``sqrt(4 pi rho <u^2>)`` at each height [G]; positive.
    k_f : float
        Wavenumber of the energy-carrying eddies [cm^-1]; positive.
    helicity_diffusivity : float, optional
        ``kappa_alpha`` of the diffusive helicity flux ``-kappa_alpha d alpha_M/dz`` [cm^2 s^-1]; 0 (default)
        switches the flux off. With the vertical-field boundary, ``alpha_M = 0`` at the end nodes, so the
        flux carries helicity out through the surfaces.
    """

    b_eq: Any
    k_f: float
    helicity_diffusivity: float = 0.0


@dataclass(frozen=True, repr=False)
class ColumnHistory:
    """Snapshots of a column-model run (the data of a butterfly diagram).

    Attributes
    ----------
    t : ndarray, shape (nt,)
        Times [s], starting with the state before the run.
    z : ndarray, shape (nz,)
        Heights [cm].
    b_x, b_y : ndarray, shape (nt, nz)
        Radial and azimuthal mean field [G].
    alpha : ndarray, shape (nt, nz)
        Total alpha ``alpha_K + alpha_M`` [cm s^-1].
    """

    t: FloatArray
    z: FloatArray
    b_x: FloatArray
    b_y: FloatArray
    alpha: FloatArray

    def __repr__(self) -> str:
        rms = float(np.sqrt(np.mean(self.b_x[-1] ** 2 + self.b_y[-1] ** 2)))
        return (
            f"ColumnHistory(nt={self.t.size}, nz={self.z.size}, t=[{self.t[0]:.4g}, {self.t[-1]:.4g}] s, "
            f"final rms B={rms:.4g} G)"
        )

    @property
    def rms_field(self) -> FloatArray:
        """Root-mean-square field ``sqrt(<B_x^2 + B_y^2>_z)`` of every snapshot [G]."""
        return np.sqrt(np.mean(self.b_x**2 + self.b_y**2, axis=1))

    def to_xarray(self) -> Any:
        """Return the history as an ``xarray.Dataset`` with coordinates ``t``, ``z`` and units in attributes.

        Returns
        -------
        xarray.Dataset
            Variables ``b_x``, ``b_y`` [G] and ``alpha`` [cm s^-1] on dimensions ``(t, z)``.
        """
        import xarray as xr

        dims = ("t", "z")
        return xr.Dataset(
            {
                "b_x": (dims, self.b_x, {"units": "G", "long_name": "radial mean field"}),
                "b_y": (dims, self.b_y, {"units": "G", "long_name": "azimuthal mean field"}),
                "alpha": (dims, self.alpha, {"units": "cm s-1", "long_name": "total alpha (kinetic + magnetic)"}),
            },
            coords={"t": ("t", self.t, {"units": "s"}), "z": ("z", self.z, {"units": "cm"})},
            attrs={"note": "fluxfunnel column model: a mean-field model prediction, not a measurement"},
        )

    def plot(self, field: Literal["b_x", "b_y", "alpha"] = "b_y", *, ax: Any = None) -> Any:
        """Draw a butterfly diagram: ``field`` against time (horizontal) and height (vertical).

        Parameters
        ----------
        field : {"b_x", "b_y", "alpha"}, optional
            Which quantity to draw (default the azimuthal field).
        ax : matplotlib.axes.Axes, optional
            Axes to draw on; a new figure is made when omitted.

        Returns
        -------
        matplotlib.axes.Axes
            The axes, with a colour bar and labelled axes (time in s, height in cm).
        """
        if field not in ("b_x", "b_y", "alpha"):
            raise InputError(f"field: must be 'b_x', 'b_y' or 'alpha', got {field!r}")
        try:
            import matplotlib.pyplot as plt
        except ImportError as exc:  # pragma: no cover - depends on the installation
            raise ImportError("ColumnHistory.plot needs matplotlib: pip install 'fluxfunnel[plot]'") from exc
        data = getattr(self, field)
        if ax is None:
            _, ax = plt.subplots()
        lim = float(np.max(np.abs(data))) or 1.0
        mesh = ax.pcolormesh(self.t, self.z, data.T, shading="auto", cmap="RdBu_r", vmin=-lim, vmax=lim)
        unit = "cm s$^{-1}$" if field == "alpha" else "G"
        ax.figure.colorbar(mesh, ax=ax, label=f"{field} [{unit}]")
        ax.set_xlabel("t [s]")
        ax.set_ylabel("z [cm]")
        return ax



def _column_profile(name: str, value: Any, nz: int, unit: str) -> FloatArray:
    arr = as_float(name, value, unit=unit)
    check_finite(name, arr)
    if arr.ndim == 0:
        return np.full(nz, float(arr))
    if arr.shape != (nz,):
        raise InputError(f"{name}: must be a scalar or have the shape of z ({nz},), got {arr.shape}")
    return np.ascontiguousarray(arr)


class ColumnModel:
    r"""Time-dependent one-dimensional mean-field model of a disk column.

    Evolves the radial and azimuthal mean field ``B_x(z, t)``, ``B_y(z, t)`` (local frame: x radial, y
    azimuthal) under shear, an alpha effect, vertical turbulent pumping, turbulent plus molecular diffusion
    and, optionally, dynamical alpha quenching:

    .. math::

        \partial_t B_x &= -\partial_z(\alpha B_y + \gamma B_x) + \partial_z(\eta_T \partial_z B_x), \\
        \partial_t B_y &= \partial_z(\alpha B_x - \gamma B_y) + \partial_z(\eta_T \partial_z B_y) + S B_x,

    with ``S = -q Omega`` and ``eta_T = eta + eta_molecular``. Second-order conservative differences on a
    uniform grid; each step is implicit in every term of the field equations (theta method, alpha frozen
    over the step), so it stays stable for steps far beyond the explicit diffusive limit; the magnetic alpha
    takes an implicit (backward-Euler) step after the field. Centred pumping needs a cell Peclet number
    ``|gamma| dz/eta < 2`` to avoid grid oscillations. A model prediction under mean-field assumptions.

    Parameters
    ----------
    z : array_like, shape (nz,)
        Uniformly spaced heights [cm]. Periodic: nodes of one period (length ``nz * dz``); vertical-field
        boundary: the end nodes are the boundaries, where ``B_x = B_y = 0``.
    shear : float
        Dimensionless shear rate ``q = -d ln Omega / d ln R`` (1.5 for Keplerian rotation).
    omega : float
        Angular velocity ``Omega`` [s^-1]; with ``shear`` it gives ``S = -q Omega``.
    alpha : float or array_like, shape (nz,)
        Kinetic alpha ``alpha_K(z)`` [cm s^-1] (odd in z in a disk).
    gamma : float or array_like, shape (nz,)
        Vertical pumping velocity [cm s^-1]; positive carries field upward.
    eta : float or array_like, shape (nz,)
        Turbulent diffusivity [cm^2 s^-1]; positive.
    quenching : DynamicalQuenching, optional
        Dynamical alpha quenching; ``None`` (default) for a kinematic model.
    eta_molecular : float, optional
        Uniform molecular diffusivity [cm^2 s^-1]; needed (positive) with quenching, where
        ``R_m = eta/eta_molecular``.
    boundary : {"vertical_field", "periodic"}, optional
        ``"vertical_field"`` (default): ``B_x = B_y = alpha_M = 0`` at the end nodes; ``"periodic"``.
    alpha_omega : bool, optional
        Drop alpha from the azimuthal equation (the alpha-Omega approximation).
    theta : float, optional
        Implicitness in ``[0.5, 1]``: 0.5 Crank-Nicolson (default, second order), 1 backward Euler
        (first order, strongly damping).
    b_x0, b_y0 : float or array_like, optional
        Initial field [G]. Default: ``b_x0 = 1e-6 G * sin(pi (z - z0)/L)``, one half wave over the column
        (a full wave over the period ``L`` when periodic), and ``b_y0 = 0``; a seed only.

    Examples
    --------
    An invented column with a uniform alpha in a periodic box grows at ``|alpha| k - eta k^2``:

    >>> import numpy as np
    >>> from fluxfunnel.vertical import ColumnModel
    >>> z = np.linspace(0.0, 2 * np.pi, 64, endpoint=False)
    >>> model = ColumnModel(z, shear=0.0, omega=1.0, alpha=2.0, gamma=0.0, eta=1.0, boundary="periodic")
    >>> hist = model.run(3.0, dt=0.01, n_snapshots=3, progress=False)
    >>> float(np.log(hist.rms_field[-1] / hist.rms_field[-2]))  # growth over one time unit, about 1
    ... # doctest: +ELLIPSIS
    0.99...
    """

    z: FloatArray
    shear: float
    omega: float
    alpha: FloatArray
    gamma: FloatArray
    eta: FloatArray
    quenching: DynamicalQuenching | None
    eta_molecular: float
    boundary: str
    alpha_omega: bool
    theta: float
    t: float
    b_x: FloatArray
    b_y: FloatArray
    alpha_m: FloatArray

    def __init__(
        self,
        z: ArrayLike,
        *,
        shear: float,
        omega: float,
        alpha: ArrayLike,
        gamma: ArrayLike,
        eta: ArrayLike,
        quenching: DynamicalQuenching | None = None,
        eta_molecular: float = 0.0,
        boundary: Literal["vertical_field", "periodic"] = "vertical_field",
        alpha_omega: bool = False,
        theta: float = 0.5,
        b_x0: ArrayLike | None = None,
        b_y0: ArrayLike | None = None,
    ) -> None:
        zz = as_float("z", z, unit="cm")
        check_increasing("z", zz, min_len=5)
        steps = np.diff(zz)
        if not np.allclose(steps, steps[0], rtol=1e-9, atol=0.0):
            raise InputError("z: must be uniformly spaced for the column model")
        nz = zz.size
        if boundary not in ("vertical_field", "periodic"):
            raise InputError(f"boundary: must be 'vertical_field' or 'periodic', got {boundary!r}")
        self.z = zz
        self.boundary = boundary
        self.shear = as_scalar("shear", shear, None)
        self.omega = as_scalar("omega", omega, "1 / s")
        self.alpha = _column_profile("alpha", alpha, nz, "cm / s")
        self.gamma = _column_profile("gamma", gamma, nz, "cm / s")
        self.eta = _column_profile("eta", eta, nz, "cm2 / s")
        check_positive("eta", self.eta)
        self.eta_molecular = float(as_float("eta_molecular", eta_molecular, unit="cm2 / s"))
        if not (math.isfinite(self.eta_molecular) and self.eta_molecular >= 0.0):
            raise InputError(f"eta_molecular: must be finite and non-negative, got {self.eta_molecular}")
        if not 0.5 <= float(theta) <= 1.0:
            raise InputError(f"theta: must lie in [0.5, 1], got {theta}")
        self.theta = float(theta)
        self.alpha_omega = bool(alpha_omega)
        self.quenching = quenching
        if quenching is not None:
            if self.eta_molecular <= 0.0:
                raise InputError("eta_molecular: must be positive with dynamical quenching (R_m = eta/eta_molecular)")
            self._b_eq = _column_profile("b_eq", quenching.b_eq, nz, "G")
            check_positive("b_eq", self._b_eq)
            check_positive("k_f", as_float("k_f", quenching.k_f, unit="1 / cm"))
            kappa = as_float("helicity_diffusivity", quenching.helicity_diffusivity, unit="cm2 / s")
            check_finite("helicity_diffusivity", kappa)
            if kappa < 0:
                raise InputError(f"helicity_diffusivity: must be non-negative, got {float(kappa)}")
        length = zz[-1] - zz[0] + (steps[0] if boundary == "periodic" else 0.0)
        waves = 2.0 if boundary == "periodic" else 1.0
        seed = 1e-6 * np.sin(waves * np.pi * (zz - zz[0]) / length)
        if boundary == "vertical_field":
            seed[[0, -1]] = 0.0
        self.b_x = seed if b_x0 is None else _column_profile("b_x0", b_x0, nz, "G")
        self.b_y = np.zeros(nz) if b_y0 is None else _column_profile("b_y0", b_y0, nz, "G")
        if boundary == "vertical_field":
            for name, b in (("b_x0", self.b_x), ("b_y0", self.b_y)):
                if b[0] != 0.0 or b[-1] != 0.0:
                    raise InputError(f"{name}: must vanish at both end nodes with the vertical-field boundary")
        self.alpha_m = np.zeros(nz)
        self.t = 0.0

    @property
    def dz(self) -> float:
        """Grid spacing [cm]."""
        return float(self.z[1] - self.z[0])

    @property
    def shear_rate(self) -> float:
        """``S = -q Omega`` [s^-1]."""
        return -self.shear * self.omega

    def __repr__(self) -> str:
        return (
            f"ColumnModel(nz={self.z.size}, boundary={self.boundary!r}, S={self.shear_rate:.4g} s^-1, "
            f"quenching={'on' if self.quenching is not None else 'off'}, t={self.t:.4g} s)"
        )

    def _default_dt(self) -> float:
        # Accuracy rule (common practice): a tenth of the fastest advective or shear time; diffusion is
        # implicit and does not limit the step.
        rates = [np.max(np.abs(self.alpha)) / self.dz, np.max(np.abs(self.gamma)) / self.dz, abs(self.shear_rate)]
        rate = max(rates)
        if rate == 0.0:
            # Pure diffusion: a hundredth of the column's diffusion time L^2/eta.
            length = float(self.z[-1] - self.z[0])
            rate = 10.0 * float(np.max(self.eta + self.eta_molecular)) / length**2
        return 0.1 / rate

    def run(
        self,
        t_end: float,
        *,
        dt: float | None = None,
        n_snapshots: int = 100,
        progress: bool | None = None,
    ) -> ColumnHistory:
        """Advance the column to time ``t_end`` and return the snapshots.

        Parameters
        ----------
        t_end : float
            Final time [s]; later than the model's current time ``t`` (the model keeps its state, so
            successive runs continue one another).
        dt : float, optional
            Time step [s]; shortened so that every snapshot interval holds a whole number of steps.
            Default: a tenth of the fastest advective (``dz/|alpha|``, ``dz/|gamma|``) or shear time, or a
            hundredth of the diffusion time ``L^2/eta`` of the column when there is neither.
        n_snapshots : int, optional
            Snapshots after the initial one, evenly spaced in time.
        progress : bool, optional
            Show a tqdm progress bar; ``None`` (default) shows it only on a terminal.

        Returns
        -------
        ColumnHistory
            ``n_snapshots + 1`` snapshots from the current time to ``t_end``.

        Notes
        -----
        Ctrl-C stops the run; the model then holds the last completed snapshot.
        """
        from tqdm.auto import tqdm

        t_end = float(as_float("t_end", t_end, unit="s"))
        if not math.isfinite(t_end) or t_end <= self.t:
            raise InputError(f"t_end: must be finite and later than the current time {self.t}, got {t_end}")
        if int(n_snapshots) != n_snapshots or n_snapshots < 1:
            raise InputError(f"n_snapshots: must be a positive integer, got {n_snapshots!r}")
        n_snapshots = int(n_snapshots)
        step = self._default_dt() if dt is None else float(as_float("dt", dt, unit="s"))
        if not math.isfinite(step) or step <= 0.0:
            raise InputError(f"dt: must be finite and positive, got {step}")
        interval = (t_end - self.t) / n_snapshots
        nsteps = max(1, math.ceil(interval / step - 1e-9))
        step = interval / nsteps
        periodic = self.boundary == "periodic"
        q = self.quenching
        b_eq = self._b_eq if q is not None else None
        k_f = float(q.k_f) if q is not None else 0.0
        kappa = float(q.helicity_diffusivity) if q is not None else 0.0
        ts = [self.t]
        bx = [self.b_x.copy()]
        by = [self.b_y.copy()]
        al = [self.alpha + self.alpha_m]
        t0 = self.t
        with tqdm(total=n_snapshots, disable=None if progress is None else not progress, desc="column") as bar:
            for k in range(n_snapshots):
                self.b_x, self.b_y, self.alpha_m = _core._column_advance(
                    self.dz,
                    periodic,
                    self.alpha,
                    self.gamma,
                    self.eta,
                    self.eta_molecular,
                    self.shear_rate,
                    self.alpha_omega,
                    self.theta,
                    b_eq,
                    k_f,
                    kappa,
                    step,
                    nsteps,
                    self.b_x,
                    self.b_y,
                    self.alpha_m,
                )
                self.t = t0 + (k + 1) * interval
                ts.append(self.t)
                bx.append(self.b_x.copy())
                by.append(self.b_y.copy())
                al.append(self.alpha + self.alpha_m)
                bar.update(1)
        return ColumnHistory(t=np.array(ts), z=self.z, b_x=np.array(bx), b_y=np.array(by), alpha=np.array(al))
