r"""Global transport of poloidal magnetic flux across a thin accretion disk.

The flux function ``psi(R) = R A_phi`` (flux per radian; ``Phi(R) = 2 pi psi(R)``) obeys, in a thin disk,

.. math::

    \partial_t \psi = -R\,u_\psi B_z,\qquad
    u_\psi = u_\mathrm{adv} + u_\mathrm{dif}\,\frac{B_{rs}}{B_z} - \eta_R\,\partial_R \ln B_z,

with ``B_z = R^-1 dpsi/dR`` and the surface radial field ``B_rs`` set by the current-free field outside the
disk: ``psi = psi_ext + int G(R, R') B_rs(R') dR'``, ``G`` the ring-current kernel built on complete
elliptic integrals (Jackson's loop formula). CGS (Gaussian) units throughout.

Everything here is a kinematic mean-field model: the transport speeds are inputs (from the ``vertical``
stage or given), the exterior is current-free, the disk is a thin sheet. Results are model predictions under
those assumptions, not measurements. Derivations: ``docs/theory.md``, section "Global flux".
"""

from __future__ import annotations

import math
from collections.abc import Callable
from dataclasses import dataclass
from typing import Any, Literal

import numpy as np
from numpy.typing import ArrayLike, NDArray
from tqdm.auto import tqdm

from . import _core
from . import constants as const
from ._errors import InputError
from ._validate import as_float, as_scalar, broadcast, check_finite, check_increasing, check_positive, scalar_or_array

__all__ = [
    "ring_kernel",
    "power_law_ratio",
    "flux_operator",
    "flux_function",
    "surface_radial_field",
    "FluxModel",
    "FluxSolution",
    "CriticalRadius",
    "critical_radius",
    "TurbulenceTemplate",
    "TransportSpeeds",
    "transport_speeds",
    "template_from_statistics",
    "template_from_profiles",
]

Float = NDArray[np.float64]


def _grid(r: ArrayLike) -> Float:
    arr = as_float("r", r, unit="cm")
    check_increasing("r", arr, min_len=2)
    check_positive("r", arr)
    return np.ascontiguousarray(arr)


def _on_grid(name: str, value: ArrayLike, r: Float, unit: str | None) -> Float:
    arr = as_float(name, value, unit=unit)
    check_finite(name, arr)
    try:
        out = np.broadcast_to(arr, r.shape)
    except ValueError as exc:
        raise InputError(f"{name}: shape {arr.shape} does not broadcast to the grid shape {r.shape}") from exc
    return np.ascontiguousarray(out, dtype=np.float64)



def ring_kernel(r: ArrayLike, r_src: ArrayLike) -> Any:
    r"""Flux function in the disk plane of a ring of sheet current (the kernel ``G`` of the flux operator).

    Parameters
    ----------
    r : array_like
        Radius where the flux function is evaluated [cm], > 0.
    r_src : array_like
        Radius of the current ring [cm], > 0. Broadcasts with ``r``.

    Returns
    -------
    float or ndarray
        ``G(r, r_src)`` [cm]: the flux function ``psi(r)`` [G cm^2] of a strip of sheet current at
        ``r_src`` of unit radial width (1 cm) carrying a surface radial field ``B_rs`` = 1 G (sheet current
        ``c B_rs / (2 pi)``). A loop of current ``I`` [statA] gives ``psi = (2 pi I / c) G``.

    Notes
    -----
    .. math::

        G(R, R') = \frac{R + R'}{2\pi}\,[(2 - m) K(m) - 2 E(m)],\qquad m = \frac{4 R R'}{(R + R')^2},

    from Jackson's loop formula (Jackson 1999, section 5.5). ``K`` and ``E`` come from the complementary
    parameter ``1 - m = ((R - R')/(R + R'))^2`` (accurate on the logarithmic singularity ``R' -> R``); in the
    far field, ``(R^2 + R'^2)/(2 R R') >= 1.5``, where the elliptic combination cancels, the equivalent
    ``G = (R R')^{1/2} Q_{1/2}(chi) / pi`` with the hypergeometric series of ``Q_{1/2}`` is used.

    References
    ----------
    J. D. Jackson, *Classical Electrodynamics*, 3rd ed. (1999), section 5.5.
    H. S. Cohl and J. E. Tohline, ApJ 527, 86 (1999) (the Legendre-function form).

    Examples
    --------
    >>> from fluxfunnel.flux import ring_kernel
    >>> round(ring_kernel(1.0, 1e6) * 1e6, 6)  # far ring: uniform field, G -> r^2 / (2 r_src)
    0.5
    """
    a = as_float("r", r, unit="cm")
    b = as_float("r_src", r_src, unit="cm")
    check_positive("r", a)
    check_positive("r_src", b)
    a2, b2 = broadcast(r=a, r_src=b)
    out = _core.flux_ring_kernel(a2.ravel(), b2.ravel()).reshape(a2.shape)
    return scalar_or_array(out, r, r_src)


def power_law_ratio(n: ArrayLike) -> Any:
    """Ratio ``B_rs / B_z`` of the current-free field above a disk whose vertical field is a power law.

    Parameters
    ----------
    n : array_like
        Power-law index of ``B_z = R^-n`` (dimensionless), ``0 < n < 2``.

    Returns
    -------
    float or ndarray
        ``f(n) = Gamma((n+1)/2) Gamma(1 - n/2) / [Gamma((3-n)/2) Gamma(n/2)]``; ``f(1) = 1``,
        ``f(n) f(2-n) = 1``.

    Notes
    -----
    Derived from the Hankel-transform form of the exterior potential field (``docs/theory.md``, "Global
    flux"); the surface field of a pure power law is the same power law times ``f(n)``.

    Examples
    --------
    >>> from fluxfunnel.flux import power_law_ratio
    >>> power_law_ratio(1.0)
    1.0
    """
    arr = as_float("n", n)
    check_finite("n", arr)
    if np.any((arr <= 0) | (arr >= 2)):
        raise InputError(f"n: must lie strictly between 0 and 2, got values in [{arr.min()}, {arr.max()}]")
    lg = np.vectorize(math.lgamma, otypes=[float])
    out = np.exp(lg((arr + 1) / 2) + lg(1 - arr / 2) - lg((3 - arr) / 2) - lg(arr / 2))
    return scalar_or_array(out, n)


def flux_operator(r: ArrayLike) -> Float:
    """Build the matrix ``W`` with ``psi - psi_ext = W B_rs`` on the grid ``r``.

    Parameters
    ----------
    r : array_like
        Strictly increasing positive radii [cm], ideally uniform in ``ln r`` (then only O(N) kernel integrals
        are needed; any spacing works).

    Returns
    -------
    ndarray, shape (N, N)
        ``W`` [cm^2]. ``B_rs`` is piecewise linear in ``ln R`` between the nodes (half hats at the two ends:
        no sheet current outside ``[r[0], r[-1]]``); each interval is integrated with 12-point
        Gauss-Legendre, with the substitution ``x' = x_i +- dx s^2`` on the intervals touching the field
        point, which removes the logarithmic singularity of the kernel. Second order in the grid spacing.

    Examples
    --------
    >>> import numpy as np
    >>> from fluxfunnel.flux import flux_operator
    >>> flux_operator(np.geomspace(1.0, 100.0, 5)).shape
    (5, 5)
    """
    return np.asarray(_core.flux_operator(_grid(r)))


def flux_function(r: ArrayLike, b_rs: ArrayLike, *, psi_ext: ArrayLike = 0.0) -> Float:
    """Flux function of the disk's sheet currents plus an external part: ``psi = psi_ext + W B_rs``.

    Parameters
    ----------
    r : array_like, shape (N,)
        Radii [cm], strictly increasing and positive.
    b_rs : array_like, shape (N,)
        Surface radial field just above the disk [G] (odd about the midplane).
    psi_ext : array_like, optional
        Flux function of every current outside the disk sheet [G cm^2], broadcast to ``r``; a uniform field
        ``B`` gives ``B r^2 / 2``.

    Returns
    -------
    ndarray, shape (N,)
        ``psi`` [G cm^2].

    Examples
    --------
    >>> import numpy as np
    >>> from fluxfunnel.flux import flux_function
    >>> r = np.geomspace(1.0, 10.0, 8)
    >>> bool(np.all(flux_function(r, np.zeros(8), psi_ext=r**2 / 2) == r**2 / 2))
    True
    """
    rr = _grid(r)
    b = _on_grid("b_rs", b_rs, rr, "G")
    p = _on_grid("psi_ext", psi_ext, rr, "G cm2")
    return np.asarray(_core.flux_psi_from_field(rr, b, p))


def surface_radial_field(r: ArrayLike, psi: ArrayLike, *, psi_ext: ArrayLike = 0.0) -> Float:
    """Surface radial field ``B_rs`` that the disk's currents need to carry the flux function ``psi``.

    Parameters
    ----------
    r : array_like, shape (N,)
        Radii [cm], strictly increasing and positive.
    psi : array_like, shape (N,)
        Flux function ``R A_phi`` in the disk plane [G cm^2].
    psi_ext : array_like, optional
        Flux function of everything outside the disk sheet [G cm^2] (uniform field ``B r^2/2``, central
        dipole ``mu / r``, ...), broadcast to ``r``.

    Returns
    -------
    ndarray, shape (N,)
        ``B_rs = W^-1 (psi - psi_ext)`` [G]. ``W`` is a first-kind (log-kernel) operator: its inverse acts
        like a derivative, so noisy ``psi`` gives noisy ``B_rs``; the result is exact only to the grid's
        second-order accuracy.

    Examples
    --------
    >>> import numpy as np
    >>> from fluxfunnel.flux import surface_radial_field
    >>> r = np.geomspace(1.0, 10.0, 8)
    >>> float(np.abs(surface_radial_field(r, 3 * r**2 / 2, psi_ext=3 * r**2 / 2)).max())  # uniform field
    0.0
    """
    rr = _grid(r)
    p = _on_grid("psi", psi, rr, "G cm2")
    pe = _on_grid("psi_ext", psi_ext, rr, "G cm2")
    return np.asarray(_core.flux_field_from_psi(rr, p, pe))


@dataclass(frozen=True, repr=False)
class FluxSolution:
    """Flux profiles of a `FluxModel` at one or more times.

    Attributes
    ----------
    r : ndarray, shape (N,)
        Radii [cm].
    t : ndarray, shape (T,)
        Times [s] (``[inf]`` for a steady state).
    psi : ndarray, shape (T, N)
        Flux function ``R A_phi`` [G cm^2]; the flux through radius ``R`` is ``2 pi psi``.
    b_z : ndarray, shape (T, N)
        Vertical field at the disk [G].
    b_rs : ndarray, shape (T, N)
        Radial field at the upper surface [G].
    method : str
        ``"bdf2"``, ``"cn"``, ``"be"`` or ``"steady"``.
    """

    r: Float
    t: Float
    psi: Float
    b_z: Float
    b_rs: Float
    method: str

    @property
    def tan_inclination(self) -> Float:
        """``B_rs / B_z`` (dimensionless), shape (T, N); > 0 where field lines fan outward above the disk."""
        with np.errstate(divide="ignore", invalid="ignore"):
            return self.b_rs / self.b_z

    @property
    def inclination(self) -> Float:
        """Angle of the surface field from the vertical [degrees], shape (T, N); beyond +-90 where B_z < 0."""
        return np.degrees(np.arctan2(self.b_rs, self.b_z))

    @property
    def flux_inner(self) -> Float:
        """Flux through the inner edge, ``Phi_in = 2 pi psi(r[0])`` [G cm^2], shape (T,)."""
        return 2.0 * np.pi * self.psi[:, 0]

    def midplane_beta(self, p_mid: ArrayLike) -> Float:
        """Midplane plasma beta ``8 pi P / B_z^2`` (dimensionless), shape (T, N).

        Parameters
        ----------
        p_mid : array_like
            Midplane gas (plus radiation) pressure of the disk model [dyn cm^-2], broadcast to ``r``.
        """
        p = _on_grid("p_mid", p_mid, self.r, "dyn / cm2")
        check_positive("p_mid", p)
        with np.errstate(divide="ignore"):
            return 8.0 * np.pi * p / self.b_z**2

    def dimensionless_flux(self, mass: float, mdot: float) -> Float:
        """Inner-edge flux in units of ``(Mdot r_g^2 c)^{1/2}`` (Gaussian), shape (T,).

        Parameters
        ----------
        mass : float
            Black-hole mass [g].
        mdot : float
            Accretion rate [g s^-1].

        Notes
        -----
        ``phi = Phi_in / (Mdot r_g^2 c)^{1/2}``, ``r_g = G M / c^2`` (Tchekhovskoy, Narayan & McKinney 2011).
        Values of order 50 (Gaussian) mark a magnetically arrested flow in their simulations; a kinematic
        model that reaches such values only says the flux supply would allow it.
        """
        m = as_float("mass", mass, unit="g")
        md = as_float("mdot", mdot, unit="g / s")
        check_positive("mass", m)
        check_positive("mdot", md)
        r_g = const.G * float(m) / const.C**2
        return self.flux_inner / math.sqrt(float(md) * r_g**2 * const.C)

    def to_xarray(self) -> Any:
        """Return the profiles as an ``xarray.Dataset`` with units in the attributes."""
        import xarray as xr

        coords = {"t": ("t", self.t, {"units": "s"}), "r": ("r", self.r, {"units": "cm"})}
        data = {
            "psi": (("t", "r"), self.psi, {"units": "G cm2", "long_name": "flux function R A_phi"}),
            "b_z": (("t", "r"), self.b_z, {"units": "G"}),
            "b_rs": (("t", "r"), self.b_rs, {"units": "G"}),
            "inclination": (("t", "r"), self.inclination, {"units": "deg"}),
        }
        return xr.Dataset(data, coords=coords, attrs={"method": self.method})

    def __repr__(self) -> str:
        return (
            f"FluxSolution(method={self.method!r}, n_r={self.r.size}, n_t={self.t.size}, "
            f"r=[{self.r[0]:.3g}, {self.r[-1]:.3g}] cm, t_last={self.t[-1]:.3g} s, "
            f"Phi_in={self.flux_inner[-1]:.3g} G cm^2)"
        )


class FluxModel:
    """Kinematic evolution of poloidal flux across a thin disk with given transport speeds.

    Parameters
    ----------
    r : array_like, shape (N,)
        Radii [cm], strictly increasing, positive, N >= 4; uniform in ``ln r`` is fastest. Place the outer
        edge far out: interior profiles are set by the anchoring there, and an anchored outer edge with
        inflow carries a thin boundary layer (a few per cent of ``r[-1]``) where ``B_z`` reverses.
    u_adv : array_like
        Advective flux-transport speed [cm s^-1] (negative = inward), broadcast to ``r``.
    u_dif : array_like
        Coefficient of ``B_rs/B_z`` in the transport speed [cm s^-1], >= 0; ``eta / h_s`` for a disk of
        diffusivity ``eta`` and surface height ``h_s``.
    external_field : float, optional
        Uniform vertical field of the environment [G] (``psi_ext = B r^2 / 2``).
    dipole_moment : float, optional
        Aligned dipole of a central star [G cm^3] (``psi_ext += mu / r``, ``B_z = -mu / r^3`` in the plane).
    radial_diffusivity : array_like, optional
        Diffusivity ``eta_R`` [cm^2 s^-1] of the term ``-eta_R d ln B_z / dR`` in ``u_psi``; omitted when
        ``None`` (its size relative to the surface term is of order ``(H/R) / tan i``).
    inner_edge : {"same", "closed"}
        ``"same"``: the transport equation also holds at ``r[0]`` (one-sided derivatives), flux crosses the
        edge freely. ``"closed"``: ``psi(r[0])`` is held at its initial value.
    outer_edge : {"anchored", "same"}
        ``"anchored"``: ``psi(r[-1])`` held at its initial value (the environment's flux). ``"same"``: the
        transport equation holds there too.

    Notes
    -----
    ``d psi/dt = -R (u_adv B_z + u_dif B_rs - eta_R dB_z/dR)``, ``B_z = R^-1 dpsi/dR`` (three-point,
    second order, exact for a uniform field), ``B_rs = W^-1 (psi - psi_ext)`` (see `flux_operator`). The
    nonlocal term is stiff (rates up to about ``pi u_dif / (r[0] dln r)``), so time stepping is implicit.
    The flux held by currents inside ``r[0]`` is whatever ``psi_ext`` puts there: this model has no
    separate current ring for flux captured by a black hole. A kinematic model: the speeds do not respond
    to the field they move; its results are predictions under that assumption.

    Examples
    --------
    >>> import numpy as np
    >>> from fluxfunnel.flux import FluxModel
    >>> r = np.geomspace(1e9, 1e13, 101)
    >>> model = FluxModel(r, u_adv=0.0, u_dif=1e3, external_field=1e-3)
    >>> sol = model.steady_state()
    >>> bool(np.allclose(sol.b_z[0, 1:-1], 1e-3))
    True
    """

    def __init__(
        self,
        r: ArrayLike,
        *,
        u_adv: ArrayLike,
        u_dif: ArrayLike,
        external_field: float = 0.0,
        dipole_moment: float = 0.0,
        radial_diffusivity: ArrayLike | None = None,
        inner_edge: Literal["same", "closed"] = "same",
        outer_edge: Literal["anchored", "same"] = "anchored",
    ) -> None:
        rr = _grid(r)
        if rr.size < 4:
            raise InputError(f"r: needs at least 4 points, got {rr.size}")
        self.r = rr
        self.u_adv = _on_grid("u_adv", u_adv, rr, "cm / s")
        self.u_dif = _on_grid("u_dif", u_dif, rr, "cm / s")
        if np.any(self.u_dif < 0):
            i = int(np.argmax(self.u_dif < 0))
            raise InputError(
                f"u_dif: must be non-negative (negative diffusion is not a well-posed transport problem), "
                f"found {self.u_dif[i]} at index {i}"
            )
        eta = 0.0 if radial_diffusivity is None else radial_diffusivity
        self.radial_diffusivity = _on_grid("radial_diffusivity", eta, rr, "cm2 / s")
        if np.any(self.radial_diffusivity < 0):
            raise InputError("radial_diffusivity: must be non-negative")
        b_ext = as_scalar("external_field", external_field, "G")
        mu = as_scalar("dipole_moment", dipole_moment, "G cm3")
        if inner_edge not in ("same", "closed"):
            raise InputError(f"inner_edge: must be 'same' or 'closed', got {inner_edge!r}")
        if outer_edge not in ("anchored", "same"):
            raise InputError(f"outer_edge: must be 'anchored' or 'same', got {outer_edge!r}")
        self.external_field = b_ext
        self.dipole_moment = mu
        self.inner_edge = inner_edge
        self.outer_edge = outer_edge
        self.psi_ext = 0.5 * b_ext * rr**2 + mu / rr
        self._system = _core.FluxSystem(
            rr, self.u_adv, self.u_dif, self.radial_diffusivity, self.psi_ext, inner_edge, outer_edge
        )

    def __repr__(self) -> str:
        return (
            f"FluxModel(n_r={self.r.size}, r=[{self.r[0]:.3g}, {self.r[-1]:.3g}] cm, "
            f"external_field={self.external_field:.3g} G, inner_edge={self.inner_edge!r}, "
            f"outer_edge={self.outer_edge!r})"
        )

    def _solution(self, t: Float, psi: Float, b_rs: Float, method: str) -> FluxSolution:
        b_z = np.stack([np.asarray(self._system.b_z(np.ascontiguousarray(p))) for p in psi])
        return FluxSolution(r=self.r, t=t, psi=psi, b_z=b_z, b_rs=b_rs, method=method)

    def steady_state(self) -> FluxSolution:
        """Solve for the steady state ``d psi/dt = 0`` with held edges at their ``psi_ext`` values.

        Returns
        -------
        FluxSolution
            One profile, ``t = [inf]``.

        Raises
        ------
        ConvergenceError
            When there is no unique steady state (singular system, for instance no advection and no
            diffusion) or the solution misses the equations by more than 1e-8 relative; carries the
            residual.
        """
        psi, b = self._system.steady_state()
        return self._solution(np.array([np.inf]), np.asarray(psi)[None, :], np.asarray(b)[None, :], "steady")

    def evolve(
        self,
        t_end: float,
        *,
        method: Literal["bdf2", "cn", "be"] = "bdf2",
        n_steps: int = 200,
        n_save: int = 51,
        psi0: ArrayLike | None = None,
        progress: bool | None = None,
    ) -> FluxSolution:
        """Integrate from ``psi0`` to ``t_end`` with a fixed implicit step.

        Parameters
        ----------
        t_end : float
            End time [s], > 0.
        method : {"bdf2", "cn", "be"}
            Second-order BDF (L-stable, default; first step backward Euler), Crank-Nicolson (second order,
            may ring on rough data), backward Euler (first order).
        n_steps : int
            Number of equal steps; the step matrix is factored once and reused.
        n_save : int
            Number of stored profiles, including t = 0 and t_end (spread evenly over the steps).
        psi0 : array_like, optional
            Initial flux function [G cm^2]; default ``psi_ext`` (no disk currents at t = 0).
        progress : bool or None
            Show a progress bar; ``None`` shows it only on a terminal.

        Returns
        -------
        FluxSolution
            Profiles at the saved times. Ctrl-C stops between steps (KeyboardInterrupt).
        """
        t_end_f = as_scalar("t_end", t_end, "s")
        if not t_end_f > 0:
            raise InputError(f"t_end: must be positive, got {t_end_f}")
        if method not in ("bdf2", "cn", "be"):
            raise InputError(f"method: must be 'bdf2', 'cn' or 'be', got {method!r}")
        if int(n_steps) != n_steps or n_steps < 1:
            raise InputError(f"n_steps: must be a positive integer, got {n_steps!r}")
        if int(n_save) != n_save or n_save < 2:
            raise InputError(f"n_save: must be an integer >= 2, got {n_save!r}")
        n_steps = int(n_steps)
        p0 = self.psi_ext if psi0 is None else _on_grid("psi0", psi0, self.r, "G cm2")
        dt = t_end_f / n_steps
        marks = np.unique(np.linspace(0, n_steps, min(int(n_save), n_steps + 1)).round().astype(int))
        stepper = _core.FluxStepper(self._system, np.ascontiguousarray(p0), dt, method)
        ts, psis, brs = [0.0], [np.asarray(stepper.psi())], [np.asarray(stepper.b_rs())]
        with tqdm(total=n_steps, disable=(None if progress is None else not progress), unit="step") as bar:
            done = 0
            for mark in marks[1:]:
                while done < mark:
                    chunk = int(min(mark - done, max(1, n_steps // 100)))
                    stepper.advance(chunk)
                    done += chunk
                    bar.update(chunk)
                ts.append(done * dt)
                psis.append(np.asarray(stepper.psi()))
                brs.append(np.asarray(stepper.b_rs()))
        return self._solution(np.array(ts), np.stack(psis), np.stack(brs), method)


@dataclass(frozen=True)
class CriticalRadius:
    """Where the field becomes dynamically dominant.

    Attributes
    ----------
    radius : float
        Outermost radius [cm] of the region, starting at the inner edge, where the criterion holds
        (interpolated in ``ln r`` to the crossing for the built-in criteria); NaN when it fails already at
        the inner edge.
    reached : bool
        Whether the criterion holds at the inner edge (the disk reaches its critical radius).
    criterion : str
        ``"inclination"``, ``"beta"`` or ``"callable"``.
    threshold : float
        Threshold used (degrees for the inclination, dimensionless for beta; NaN for a callable).
    """

    radius: float
    reached: bool
    criterion: str
    threshold: float


def critical_radius(
    solution: FluxSolution,
    *,
    criterion: Literal["inclination", "beta"] | Callable[[Float, Float, Float], ArrayLike] = "inclination",
    threshold: float | None = None,
    p_mid: ArrayLike | None = None,
    time_index: int = -1,
    inner_buffer: float = 0.1,
    outer_buffer: float = 0.05,
) -> CriticalRadius:
    """Outermost radius inside which the field is dynamically dominant by the chosen criterion.

    Parameters
    ----------
    solution : FluxSolution
        Result of `FluxModel.evolve` or `FluxModel.steady_state`.
    criterion : {"inclination", "beta"} or callable
        ``"inclination"``: surface field more than ``threshold`` degrees from the vertical (default 30, the
        Blandford & Payne 1982 condition for centrifugal launching of a cold wind). ``"beta"``: midplane
        plasma beta ``8 pi P / B_z^2`` below ``threshold`` (default 1, rough equipartition; common practice),
        needs ``p_mid``. A callable ``f(r, b_z, b_rs)`` [cm, G, G] returning a boolean array.
    threshold : float, optional
        See ``criterion``.
    p_mid : array_like, optional
        Midplane pressure of the disk [dyn cm^-2] for ``criterion="beta"``.
    time_index : int
        Which saved profile to use (default the last).
    inner_buffer, outer_buffer : float
        Boundary layers left out of the search (dimensionless): radii below ``r[0] (1 + inner_buffer)``
        and above ``r[-1] (1 - outer_buffer)``. Both grid edges carry thin layers set by the edge
        conditions rather than by the disk (near ``r[0]`` ``B_z ~ (R - R_in)^(-arctan(lambda)/pi)``; an
        anchored outer edge with inflow reverses ``B_z`` over a few per cent of ``r[-1]``).

    Returns
    -------
    CriticalRadius
        ``reached`` refers to the first radius outside the inner buffer. A model prediction: it inherits
        every assumption of the flux model (kinematic, thin disk, current-free exterior) and of the
        criterion (cold, rigid field lines for the 30 degree rule).

    References
    ----------
    R. D. Blandford and D. G. Payne, MNRAS 199, 883 (1982).

    Examples
    --------
    >>> import numpy as np
    >>> from fluxfunnel.flux import FluxModel, critical_radius
    >>> r = np.geomspace(1.0, 1e4, 121)
    >>> model = FluxModel(r, u_adv=-0.9 / r, u_dif=1.0 / r, external_field=1.0)
    >>> critical_radius(model.steady_state()).reached
    True
    """
    if not isinstance(solution, FluxSolution):
        raise InputError(f"solution: must be a FluxSolution, got {type(solution).__name__}")
    try:
        b_z = solution.b_z[time_index]
        b_rs = solution.b_rs[time_index]
    except IndexError as exc:
        raise InputError(f"time_index: {time_index} is out of range for {solution.t.size} profiles") from exc
    for name, val in (("inner_buffer", inner_buffer), ("outer_buffer", outer_buffer)):
        if not 0.0 <= float(val) < 1.0:
            raise InputError(f"{name}: must lie in [0, 1), got {val}")
    keep = (solution.r >= solution.r[0] * (1 + inner_buffer)) & (solution.r <= solution.r[-1] * (1 - outer_buffer))
    if not np.any(keep):
        raise InputError("inner_buffer, outer_buffer: together they leave no radius to search")
    r = solution.r
    measure: Float | None
    if callable(criterion):
        ok = np.asarray(criterion(r, b_z, b_rs), dtype=bool)
        if ok.shape != r.shape:
            raise InputError(f"criterion: the callable must return shape {r.shape}, got {ok.shape}")
        name, thr, measure = "callable", float("nan"), None
    elif criterion == "inclination":
        thr = 30.0 if threshold is None else float(threshold)
        if not 0.0 < thr < 90.0:
            raise InputError(f"threshold: an inclination must lie in (0, 90) degrees, got {thr}")
        measure = np.degrees(np.arctan2(b_rs, b_z)) - thr
        ok = measure > 0
        name = "inclination"
    elif criterion == "beta":
        if p_mid is None:
            raise InputError("p_mid: the beta criterion needs the midplane pressure profile")
        thr = 1.0 if threshold is None else float(threshold)
        if not thr > 0:
            raise InputError(f"threshold: beta threshold must be positive, got {thr}")
        beta = solution.midplane_beta(p_mid)[time_index]
        measure = np.log(thr) - np.log(beta)
        ok = measure > 0
        name = "beta"
    else:
        raise InputError(f"criterion: must be 'inclination', 'beta' or a callable, got {criterion!r}")
    r, ok = r[keep], ok[keep]
    if measure is not None:
        measure = measure[keep]
    if not ok[0]:
        return CriticalRadius(radius=float("nan"), reached=False, criterion=name, threshold=thr)
    fails = np.flatnonzero(~ok)
    if fails.size == 0:
        return CriticalRadius(radius=float(r[-1]), reached=True, criterion=name, threshold=thr)
    k = int(fails[0])
    radius = float(r[k - 1])
    if measure is not None:
        m0, m1 = float(measure[k - 1]), float(measure[k])
        frac = m0 / (m0 - m1)
        radius = float(np.exp(np.log(r[k - 1]) + frac * (np.log(r[k]) - np.log(r[k - 1]))))
    return CriticalRadius(radius=radius, reached=True, criterion=name, threshold=thr)


# --- from local turbulence to transport speeds at every radius ---------------------------------------------

VerticalProfile = Callable[[Float, Float], Float]


def _no_vertical(zeta: Float, beta: Float) -> Float:
    return np.zeros(np.broadcast_shapes(zeta.shape, beta.shape))


@dataclass(frozen=True)
class TurbulenceTemplate:
    """Transport coefficients of the turbulence in units of the local disk, against ``zeta = z/H``.

    Parameters
    ----------
    name : str
        Label used in results and plots.
    pm : float
        Turbulent magnetic Prandtl number ``nu/eta`` at the midplane (dimensionless), ``nu = alpha c_s H``.
    eta_shape : callable
        ``eta(z)/eta(0)`` as a function of ``zeta`` (array in, array out, positive).
    vertical : dict of str to callable
        Vertical transport velocities by mechanism (``"pumping"``, ``"buoyancy"``, ``"entropy drift"``,
        ...), each ``f(zeta, beta) -> v_z / c_s`` (dimensionless, > 0 lifts the field), with ``beta`` the
        local midplane plasma beta of the mean field, broadcast as ``(N, 1)`` against ``zeta`` ``(nz,)``.
    top : float
        Height of the surface where the outside field is matched, in units of ``H``.
    builtin : tuple of float or None
        ``(amplitude, power, beta_quench)`` of the built-in buoyant form (amplitude 0 for plain diffusion),
        set by the constructors; lets population sweeps run the whole pipeline in Rust. ``None`` for
        user-defined templates.

    Notes
    -----
    A template is the stage where turbulence statistics enter as coefficients; this version takes the
    coefficients themselves (what the closure stage predicts), so any closure result or shearing-box
    measurement can be put in as profiles. The built-in constructors are `plain_diffusion` and `buoyant`.
    """

    name: str
    pm: float
    eta_shape: Callable[[Float], Float]
    vertical: dict[str, VerticalProfile]
    top: float = 1.0
    builtin: tuple[float, float, float] | None = None

    @classmethod
    def plain_diffusion(cls, pm: float = 1.0) -> TurbulenceTemplate:
        """Uniform diffusivity ``eta = nu/Pm`` and no vertical transport (the classic thin-disk problem).

        Parameters
        ----------
        pm : float
            Turbulent magnetic Prandtl number (dimensionless). Shearing-box MRI turbulence gives values of
            order 1 (common practice, no single source).
        """
        if not (math.isfinite(pm) and pm > 0):
            raise InputError(f"pm: must be finite and positive, got {pm}")
        return cls(
            name=f"plain diffusion (Pm={pm:g})",
            pm=float(pm),
            eta_shape=np.ones_like,
            vertical={},
            builtin=(0.0, 3.0, 10.0),
        )

    @classmethod
    def buoyant(
        cls, pm: float = 1.0, *, amplitude: float = 0.3, power: float = 3.0, beta_quench: float = 10.0
    ) -> TurbulenceTemplate:
        """Uniform ``eta = nu/Pm`` plus a buoyant rise that grows above the midplane.

        ``v_z / c_s = amplitude * zeta**power / (1 + beta_quench / beta)``.

        Parameters
        ----------
        pm : float
            Turbulent magnetic Prandtl number (dimensionless).
        amplitude : float
            Rise speed at ``z = H`` for a weak mean field, in units of ``c_s`` (dimensionless). A few tenths
            of the sound speed is of the order of the Alfven speed of the turbulent field one scale height
            up, where the turbulent beta has dropped to order 10 (common practice, no single source; an
            illustrative default, not a fit). The Peclet number of the rise, ``amplitude Pm /(4 alpha)``
            for ``power = 3``, decides how much it matters.
        power : float
            Growth of the rise speed with height (dimensionless), > 0.
        beta_quench : float
            Midplane beta of the mean field below which the rise is suppressed (strong mean fields stiffen
            the turbulence that makes it); the ``1/(1 + beta_quench/beta)`` form is our modelling choice.
        """
        for name, v in (("pm", pm), ("amplitude", amplitude), ("power", power), ("beta_quench", beta_quench)):
            if not (math.isfinite(v) and v > 0):
                raise InputError(f"{name}: must be finite and positive, got {v}")

        def rise(zeta: Float, beta: Float) -> Float:
            return amplitude * zeta**power / (1.0 + beta_quench / beta)

        return cls(
            name=f"buoyant (Pm={pm:g}, v_b(H)={amplitude:g} c_s)",
            pm=float(pm),
            eta_shape=np.ones_like,
            vertical={"buoyancy": rise},
            builtin=(float(amplitude), float(power), float(beta_quench)),
        )

    @classmethod
    def magnetorotational(
        cls,
        alpha: float,
        *,
        velocity_dispersion: float = 0.03,
        midplane_turbulent_beta: float = 30.0,
        tau_omega: float = 0.7,
        b_shape: tuple[float, float, float] = (1 / 3, 1 / 3, 1 / 3),
        top: float = 1.5,
        eta_floor: float | None = None,
    ) -> TurbulenceTemplate:
        r"""Default magnetorotational turbulence, run through the tau closure (`template_from_statistics`).

        Profiles against ``zeta = z/H`` in a vertically isothermal disk: uniform ``<u^2>/c_s^2``; a
        turbulent magnetic energy density uniform with height, ``<b^2>/8 pi = p_0 / beta_t``, so that
        ``<b^2>/(4 pi rho c_s^2) = (2/beta_t) exp(zeta^2/2)`` grows as the gas thins; isotropic velocity eddies.
        Every number is common practice for stratified shearing boxes (no single source): turbulent velocities
        of a few tenths of the sound speed, midplane turbulent beta of order 10 to 100 with magnetic energy a
        few times the kinetic, correlation time of order ``1/(q Omega)``; magnetic pressure that falls more
        slowly with height than the gas pressure. Illustrative defaults, not a fit to any simulation.

        Parameters
        ----------
        alpha : float
            Viscosity parameter of the disk this template is used with (sets ``Pm = alpha c_s H / eta(0)``).
        velocity_dispersion : float
            ``<u^2>/c_s^2`` (dimensionless).
        midplane_turbulent_beta : float
            ``8 pi p_0 / <b^2>`` at the midplane (dimensionless).
        tau_omega : float
            Correlation time in units of ``1/Omega`` (dimensionless).
        b_shape : tuple of 3 floats
            Diagonal of the magnetic eddy shape tensor (sums to 1). Azimuthally stretched eddies
            (``N_y < N_x``) lower ``eta_yy`` and can make it negative high up (then pass ``eta_floor``).
        top : float
            Matching height of the outside field, in units of ``H``. The default 1.5 keeps the column
            inside the turbulent disk body: higher up the turbulent field nears equipartition (with the
            defaults ``<b^2>/(4 pi rho c_s^2)`` reaches 0.5 at ``2 H``), where the weak-field closure and the
            thin-disk matching stop applying, and the exponential Peclet factor of the buoyant rise makes
            the bending very sensitive to this choice (a modelling choice; state it with results).
        eta_floor : float, optional
            See `template_from_statistics`.

        Returns
        -------
        TurbulenceTemplate
        """
        for label, v in (
            ("velocity_dispersion", velocity_dispersion),
            ("midplane_turbulent_beta", midplane_turbulent_beta),
            ("tau_omega", tau_omega),
            ("top", top),
        ):
            if not (math.isfinite(v) and v > 0):
                raise InputError(f"{label}: must be finite and positive, got {v}")
        n_b = np.asarray(b_shape, dtype=float)
        if n_b.shape != (3,) or np.any(n_b < 0) or abs(n_b.sum() - 1.0) > 1e-9:
            raise InputError(f"b_shape: must be 3 non-negative numbers summing to 1, got {b_shape!r}")
        zeta = np.linspace(0.0, top, 65)
        return template_from_statistics(
            zeta,
            velocity_dispersion=np.full(zeta.size, velocity_dispersion),
            field_dispersion=2.0 / midplane_turbulent_beta * np.exp(0.5 * zeta**2),
            tau_omega=tau_omega,
            alpha=alpha,
            b_shape=np.diag(n_b),
            eta_floor=eta_floor,
            top=top,
            name=f"magnetorotational closure (beta_t={midplane_turbulent_beta:g}, tau Omega={tau_omega:g})",
        )


@dataclass(frozen=True, repr=False)
class TransportSpeeds:
    """Flux transport speeds at every radius, with the vertical mechanisms kept apart.

    Attributes
    ----------
    r : ndarray, shape (N,)
        Radii [cm].
    u_adv : ndarray, shape (N,)
        Advection speed (conductivity-weighted mean inflow) [cm s^-1]; negative drags flux inward.
    u_dif : ndarray, shape (N,)
        Coefficient of ``B_rs/B_z`` with every vertical mechanism [cm s^-1].
    u_dif_diffusion_only : ndarray, shape (N,)
        The same with no vertical transport (``eta/h`` for uniform ``eta``) [cm s^-1].
    u_dif_by_mechanism : dict of str to ndarray
        The same with diffusion plus one mechanism at a time [cm s^-1].
    zeta : ndarray, shape (nz,)
        Heights ``z/H`` of the vertical profiles.
    b_r_over_b_z : ndarray, shape (N, nz)
        Steady ``B_r/B_z`` through the disk (the bending profile at ``u_psi = 0``).
    beta : ndarray, shape (N,)
        Midplane beta of the mean field used by the template (inf when no field was given).
    template : str
        Template name.
    """

    r: Float
    u_adv: Float
    u_dif: Float
    u_dif_diffusion_only: Float
    u_dif_by_mechanism: dict[str, Float]
    zeta: Float
    b_r_over_b_z: Float
    beta: Float
    template: str

    @property
    def steady_tan_inclination(self) -> Float:
        """Local steady surface ratio ``-u_adv/u_dif`` (dimensionless)."""
        return -self.u_adv / self.u_dif

    def to_xarray(self) -> Any:
        """Return the speeds as an ``xarray.Dataset`` against ``r`` (and ``zeta`` for the profiles)."""
        import xarray as xr

        data: dict[str, Any] = {
            "u_adv": ("r", self.u_adv, {"units": "cm s-1", "long_name": "flux advection speed (negative inward)"}),
            "u_dif": ("r", self.u_dif, {"units": "cm s-1", "long_name": "coefficient of B_rs/B_z"}),
            "u_dif_diffusion_only": ("r", self.u_dif_diffusion_only, {"units": "cm s-1"}),
            "beta": ("r", self.beta, {"units": "1", "long_name": "midplane beta of the mean field"}),
            "b_r_over_b_z": (("r", "zeta"), self.b_r_over_b_z, {"units": "1"}),
        }
        for mech, u in self.u_dif_by_mechanism.items():
            key = "u_dif_" + mech.replace(" ", "_").replace("(", "").replace(")", "")
            data[key] = ("r", u, {"units": "cm s-1", "long_name": f"u_dif with diffusion and {mech} only"})
        coords = {
            "r": ("r", self.r, {"units": "cm", "long_name": "cylindrical radius"}),
            "zeta": ("zeta", self.zeta, {"units": "1", "long_name": "height over scale height"}),
        }
        return xr.Dataset(data, coords=coords, attrs={"template": self.template})

    def __repr__(self) -> str:
        return (
            f"TransportSpeeds(template={self.template!r}, n_r={self.r.size}, "
            f"steady tan i in [{self.steady_tan_inclination.min():.3g}, {self.steady_tan_inclination.max():.3g}])"
        )


def transport_speeds(
    disk: Any,
    template: TurbulenceTemplate,
    r: ArrayLike,
    *,
    pm: float | None = None,
    b_z: ArrayLike | None = None,
    nz: int = 129,
) -> TransportSpeeds:
    """Scale a turbulence template with the local disk at each radius and get the flux transport speeds.

    Parameters
    ----------
    disk : fluxfunnel.disk.AlphaDisk
        Disk model: anything with ``sound_speed``, ``scale_height``, ``viscosity``, ``radial_velocity`` and
        ``midplane_pressure`` methods of radius [cm].
    template : TurbulenceTemplate
        Coefficients in local disk units.
    r : array_like, shape (N,)
        Radii [cm], strictly increasing, outside the disk's inner edge.
    pm : float, optional
        Overrides the template's magnetic Prandtl number (dimensionless).
    b_z : array_like, optional
        Mean vertical field at the disk [G], broadcast to ``r``, for templates that depend on the midplane
        beta ``8 pi P / B_z^2``; default: no field (beta = inf).
    nz : int
        Heights per column for the vertical stage.

    Returns
    -------
    TransportSpeeds
        ``u_adv``, ``u_dif`` and their parts. These are model predictions: steady thin-disk vertical
        balance (``fluxfunnel.vertical.bend_profile``), mean inflow uniform with height, and the template's
        coefficients, which are assumptions, not measurements.

    Notes
    -----
    At each radius, heights ``z = zeta H``; ``eta(z) = (nu/Pm) eta_shape(zeta)``, ``v_z = c_s sum_k f_k``
    and ``v_r`` the disk's radial velocity; ``u_adv`` and ``u_dif`` follow from the integrating-factor
    solution of the vertical balance (docs/theory.md, "Vertical structure"). The disk's radial velocity
    includes its inner-edge factor ``(1 - (r_in/r)^{1/2})^{-1}``.

    Examples
    --------
    >>> import numpy as np
    >>> from fluxfunnel import constants as k
    >>> from fluxfunnel.disk import AlphaDisk
    >>> from fluxfunnel.flux import TurbulenceTemplate, transport_speeds
    >>> disk = AlphaDisk(k.M_SUN, 1e17, 0.1, r_in=1e9)
    >>> sp = transport_speeds(disk, TurbulenceTemplate.plain_diffusion(1.0), np.geomspace(1e10, 1e11, 4))
    >>> bool(np.all(sp.steady_tan_inclination < 0.2))  # tan i = 1.5 Pm H/R: a few degrees
    True
    """
    from .vertical import bend_profile

    if not isinstance(template, TurbulenceTemplate):
        raise InputError(f"template: must be a TurbulenceTemplate, got {type(template).__name__}")
    rr = _grid(r)
    p_m = template.pm if pm is None else as_scalar("pm", pm, None)
    if not p_m > 0:
        raise InputError(f"pm: must be positive, got {p_m}")
    if int(nz) != nz or nz < 8:
        raise InputError(f"nz: must be an integer >= 8, got {nz!r}")
    c_s = np.asarray(disk.sound_speed(rr), dtype=float)
    h = np.asarray(disk.scale_height(rr), dtype=float)
    nu = np.asarray(disk.viscosity(rr), dtype=float)
    v_r = np.asarray(disk.radial_velocity(rr), dtype=float)
    if b_z is None:
        beta = np.full(rr.shape, np.inf)
    else:
        bz = _on_grid("b_z", b_z, rr, "G")
        if np.any(bz == 0):
            raise InputError("b_z: must be nonzero")
        beta = 8 * np.pi * np.asarray(disk.midplane_pressure(rr), dtype=float) / bz**2
    zeta = np.linspace(0.0, template.top, int(nz))
    eta = (nu / (p_m * c_s * h))[:, None] * np.asarray(template.eta_shape(zeta), dtype=float)[None, :]
    if np.any(~np.isfinite(eta)) or np.any(eta <= 0):
        raise InputError("template: eta_shape must be finite and positive at every height")
    vr = (v_r / c_s)[:, None] * np.ones_like(zeta)

    def run(mechanisms: list[str]) -> Any:
        vz = np.zeros((rr.size, zeta.size))
        for name in mechanisms:
            vz = vz + np.asarray(template.vertical[name](zeta[None, :], beta[:, None]), dtype=float)
        return bend_profile(zeta, eta=eta, v_z=vz, v_r=vr, surface_ratio="steady")

    full = run(list(template.vertical))
    plain = run([])
    by_mech = {name: np.asarray(run([name]).u_dif, dtype=float) * c_s for name in template.vertical}
    return TransportSpeeds(
        r=rr,
        u_adv=np.asarray(full.u_adv, dtype=float) * c_s,
        u_dif=np.asarray(full.u_dif, dtype=float) * c_s,
        u_dif_diffusion_only=np.asarray(plain.u_dif, dtype=float) * c_s,
        u_dif_by_mechanism=by_mech,
        zeta=zeta,
        b_r_over_b_z=np.asarray(full.b_r_over_b_z),
        beta=beta,
        template=template.name,
    )


# --- templates from turbulence statistics through the closure stage -------------------------------------------

_MECHANISMS = (
    ("pumping (kinetic)", "pumping_kinetic"),
    ("pumping (magnetic)", "pumping_magnetic"),
    ("buoyancy", "buoyancy"),
    ("entropy drift", "entropy_drift"),
)


def _interpolant(zeta: Float, values: Float) -> Callable[[Float], Float]:
    def f(x: Float) -> Float:
        return np.interp(np.abs(np.asarray(x, dtype=float)), zeta, values)

    return f


def _mechanism(profile: Callable[[Float], Float]) -> VerticalProfile:
    def f(zeta: Float, beta: Float) -> Float:
        return np.broadcast_to(profile(zeta), np.broadcast_shapes(np.shape(zeta), np.shape(beta)))

    return f


def _template_from_coefficients(
    name: str, zeta: Float, coeffs: Any, *, alpha: float, eta_floor: float | None, top: float | None
) -> TurbulenceTemplate:
    """Turn closure coefficients on a reference column (c_s = Omega = H = 1) into a template."""
    eta = np.asarray(coeffs.eta[..., 1, 1], dtype=float)  # eta_yy: acts on J_y = dB_x/dz, bends B_r
    upper = zeta >= -1e-12 * np.max(np.abs(zeta))  # the midplane point may carry rounding of either sign
    z_up, eta_up = np.maximum(zeta[upper], 0.0), eta[upper]
    order = np.argsort(z_up)
    z_up, eta_up = z_up[order], eta_up[order]
    if eta_floor is not None:
        if not (math.isfinite(eta_floor) and 0 < eta_floor < 1):
            raise InputError(f"eta_floor: must lie strictly between 0 and 1, got {eta_floor}")
        kinetic = np.asarray(coeffs.eta_kinetic[..., 1, 1], dtype=float)[upper][order]
        eta_up = np.maximum(eta_up, eta_floor * kinetic)
    if np.any(~np.isfinite(eta_up)) or np.any(eta_up <= 0):
        i = int(np.argmax(~(eta_up > 0)))
        raise InputError(
            f"template: the closure's diffusivity eta_yy turns non-positive at z/H = {z_up[i]:.3g} "
            f"({eta_up[i]:.3g} c_s H): anisotropic magnetic eddies give negative diffusion there, and the steady "
            "bending problem is ill-posed; pass eta_floor (a fraction of the kinetic diffusivity) to regularise"
        )
    eta0 = float(np.interp(0.0, z_up, eta_up))
    mechanisms: dict[str, VerticalProfile] = {}
    for label, field in _MECHANISMS:
        v = np.asarray(getattr(coeffs, field)[..., 2], dtype=float)[upper][order]
        if np.max(np.abs(v)) > 1e-12:  # in units of c_s; smaller values are rounding of terms that vanish
            mechanisms[label] = _mechanism(_interpolant(z_up, v))
    a = float(alpha)
    if not (math.isfinite(a) and 0 < a <= 1):
        raise InputError(f"alpha: must lie in (0, 1], got {alpha}")
    return TurbulenceTemplate(
        name=name,
        pm=a / eta0,
        eta_shape=_interpolant(z_up, eta_up / eta0),
        vertical=mechanisms,
        top=float(z_up[-1] if top is None else top),
        builtin=None,
    )


def template_from_statistics(
    zeta: ArrayLike,
    *,
    velocity_dispersion: ArrayLike,
    field_dispersion: ArrayLike,
    tau_omega: ArrayLike,
    alpha: float,
    u_shape: ArrayLike | None = None,
    b_shape: ArrayLike | None = None,
    kinetic_helicity: ArrayLike = 0.0,
    current_helicity: ArrayLike = 0.0,
    stratification: Literal["isothermal", "adiabatic"] = "isothermal",
    adiabatic_index: float = 5.0 / 3.0,
    eta_floor: float | None = None,
    top: float | None = None,
    name: str = "closure",
    closure_options: dict[str, Any] | None = None,
) -> TurbulenceTemplate:
    r"""Build a turbulence template from dimensionless turbulence statistics, through the tau closure.

    The statistics are given in units of the local disk against ``zeta = z/H`` (``H = c_s/Omega``) and put on a
    reference column with ``c_s = Omega = H = 1`` and a Gaussian density ``exp(-zeta^2/2)`` (vertically
    isothermal disk, gravity ``Omega^2 z``). `fluxfunnel.closure.emf_coefficients` gives there the diffusivity
    ``eta_yy`` that acts on the radial field and the vertical drifts (kinetic and magnetic pumping, buoyancy of
    a radial field, entropy-gradient drift), all in units of ``c_s H`` and ``c_s``; `transport_speeds` then
    scales them with each radius's disk.

    Parameters
    ----------
    zeta : array_like, shape (nz,)
        Heights ``z/H`` (dimensionless), strictly increasing, at least 3 points, ``>= 0`` (upper half; the
        lower half is the mirror image).
    velocity_dispersion : array_like, shape (nz,) or (nz, 3, 3)
        ``<u^2>/c_s^2`` (isotropic split into components by the shape tensor) or the Reynolds tensor over
        ``c_s^2`` (dimensionless).
    field_dispersion : array_like, shape (nz,) or (nz, 3, 3)
        ``<b^2>/(4 pi rho c_s^2)`` or the Maxwell tensor over ``4 pi rho c_s^2`` (dimensionless).
    tau_omega : array_like, shape (nz,) or scalar
        Correlation time times the orbital frequency (dimensionless).
    alpha : float
        Viscosity parameter of the disk the template will be used with: the template's Prandtl number is
        ``Pm = alpha / (eta(0) / c_s H)``, so that ``transport_speeds`` reproduces the closure's ``eta``.
    u_shape, b_shape : array_like, shape (nz, 3, 3) or (3, 3), optional
        Eddy shape tensors (trace 1); isotropic when omitted.
    kinetic_helicity, current_helicity : array_like
        ``<u.curl u>/(c_s Omega)`` and ``<b.curl b>/(4 pi rho c_s Omega)`` (dimensionless); they set the alpha
        effect, which does not enter the poloidal bending, and are passed on for completeness.
    stratification : {"isothermal", "adiabatic"}
        Entropy stratification of the reference column: ``"isothermal"`` (``N^2 = 0``: gamma = 1 response)
        or ``"adiabatic"`` perturbations of an isothermal disk, ``N^2 = Omega^2 zeta^2 (1 - 1/gamma)`` (stable).
    adiabatic_index : float
        ``gamma`` for ``stratification="adiabatic"`` (the closure's own thermal response stays isothermal
        unless ``closure_options`` sets ``thermal_response``).
    eta_floor : float, optional
        Regularisation where anisotropic magnetic eddies make ``eta_yy`` non-positive: ``eta`` is raised to this
        fraction of the kinetic part. Without it a non-positive ``eta`` raises `InputError` (the steady bending
        problem is ill-posed there, see `fluxfunnel.vertical.bend_profile`).
    top : float, optional
        Matching height of the outside field (``z/H``); default the last ``zeta``.
    name : str
        Label used in results.
    closure_options : dict, optional
        Extra keywords for `fluxfunnel.closure.emf_coefficients` (for example ``closure="unprojected"``).

    Returns
    -------
    TurbulenceTemplate
        With ``eta_shape`` and one vertical mechanism per non-zero closure term. A model prediction: it
        carries every assumption of the tau closure and of the reference column.
    """
    from .closure import TurbulenceState, emf_coefficients

    z = np.asarray(as_float("zeta", zeta), dtype=float)
    check_increasing("zeta", z, min_len=3)
    if z[0] < 0:
        raise InputError(f"zeta: must be >= 0 (the upper half of the disk), got {z[0]}")
    nz = z.size
    isotropic = np.eye(3) / 3.0

    def tensor(label: str, value: ArrayLike | None, shape: ArrayLike | None) -> Float:
        if value is None:
            return np.zeros((nz, 3, 3))
        v = np.asarray(as_float(label, value), dtype=float)
        check_finite(label, v)
        if v.ndim <= 1:
            v = np.broadcast_to(v, (nz,)).copy()
            if np.any(v < 0):
                raise InputError(f"{label}: must be non-negative")
            n = isotropic if shape is None else np.broadcast_to(np.asarray(shape, dtype=float), (nz, 3, 3))
            # For projected spectra <f_i f_j>/<f^2> = (delta_ij - N_ij)/2 (docs/stats.md).
            return v[:, None, None] * (np.eye(3) - n) / 2.0
        return np.broadcast_to(v, (nz, 3, 3)).copy()

    reynolds = tensor("velocity_dispersion", velocity_dispersion, u_shape)
    field_t = tensor("field_dispersion", field_dispersion, b_shape)
    if np.any(np.diagonal(reynolds, axis1=-2, axis2=-1) < 0) or np.any(np.diagonal(field_t, axis1=-2, axis2=-1) < 0):
        raise InputError("velocity_dispersion, field_dispersion: diagonal components must be non-negative")

    # Mirror onto a column symmetric about the midplane so that vertical gradients are centred there.
    lower = slice(None, 0, -1) if z[0] == 0 else slice(None, None, -1)
    zz = np.concatenate([-z[lower], z])

    def even(a: Any) -> Float:
        a = np.asarray(a, dtype=float)
        return np.concatenate([a[lower], a])

    def odd(a: Any) -> Float:
        a = np.broadcast_to(np.asarray(a, dtype=float), (nz,))
        return np.concatenate([-a[lower], a])

    rho = np.exp(-0.5 * zz**2)
    if stratification == "isothermal":
        n2 = np.zeros(zz.size)
    elif stratification == "adiabatic":
        n2 = zz**2 * (1.0 - 1.0 / float(adiabatic_index))
    else:
        raise InputError(f"stratification: must be 'isothermal' or 'adiabatic', got {stratification!r}")

    def shape_arg(label: str, value: ArrayLike | None) -> Float | None:
        if value is None:
            return None
        v = np.asarray(as_float(label, value), dtype=float)
        return even(np.broadcast_to(v, (nz, 3, 3)))

    state = TurbulenceState(
        z=zz,
        reynolds=even(reynolds),
        maxwell=even(field_t) * (4.0 * np.pi * rho)[:, None, None],
        # Helicities change sign across the midplane; the values given are those of the upper half.
        kinetic_helicity=odd(kinetic_helicity),
        current_helicity=odd(current_helicity) * 4.0 * np.pi * rho,
        u_shape=shape_arg("u_shape", u_shape),
        b_shape=shape_arg("b_shape", b_shape),
        tau=even(np.broadcast_to(np.asarray(tau_omega, dtype=float), (nz,))),
        rho=rho,
        gravity=zz,
        brunt_vaisala2=n2,
        sound_speed=np.ones(zz.size),
    )
    opts: dict[str, Any] = {"field_direction": (1.0, 0.0, 0.0)}
    opts.update(closure_options or {})
    coeffs = emf_coefficients(state, **opts)
    return _template_from_coefficients(name, zz, coeffs, alpha=alpha, eta_floor=eta_floor, top=top)


def template_from_profiles(
    profiles: Any,
    *,
    sound_speed: float,
    omega: float,
    tau: ArrayLike,
    alpha: float,
    rho: ArrayLike | None = None,
    eta_floor: float | None = None,
    name: str = "from snapshots",
    closure_options: dict[str, Any] | None = None,
) -> TurbulenceTemplate:
    """Build a turbulence template from a shearing-box `fluxfunnel.stats.turbulence_profiles` result.

    `fluxfunnel.closure.emf_coefficients` runs on the box's own profiles (all measured moments, including the
    fourth-rank ones; gravity ``Omega^2 z``; the box's isothermal sound speed), and the coefficients are put in
    local disk units, ``eta / (c_s H)`` and ``v / c_s`` against ``zeta = z Omega / c_s``; the upper half
    (``z > 0``) becomes the template. No entropy stratification unless the closure options add it.

    Parameters
    ----------
    profiles : object
        Anything with the attributes ``z`` (nz,) [cm], ``reynolds``, ``maxwell`` (nz, 3, 3) [cm^2 s^-2, G^2],
        ``u_shape``, ``b_shape`` (nz, 3, 3) and ``rho`` (nz,) or None [g cm^-3], as `turbulence_profiles` returns.
    sound_speed : float
        Isothermal sound speed of the box [cm s^-1] (code units are fine if every input uses them).
    omega : float
        Orbital frequency of the box [s^-1].
    tau : array_like
        Correlation time [s], scalar or (nz,) (for example from `fluxfunnel.stats.correlation_time`).
    alpha : float
        Viscosity parameter of the disk the template will be used with (see `template_from_statistics`).
    rho : array_like, optional
        Density profile [g cm^-3] when ``profiles.rho`` is None.
    eta_floor, name, closure_options
        As for `template_from_statistics`.

    Returns
    -------
    TurbulenceTemplate
    """
    import types

    from .closure import TurbulenceState, emf_coefficients

    c_s = as_scalar("sound_speed", sound_speed, "cm / s")
    om = as_scalar("omega", omega, "1 / s")
    if not (c_s > 0 and om > 0):
        raise InputError("sound_speed, omega: must be positive")
    z = np.asarray(profiles.z, dtype=float)
    if getattr(profiles, "rho", None) is None and rho is None:
        raise InputError("rho: the profiles carry no density; pass rho")
    if np.count_nonzero(z > 0) < 3:
        raise InputError("profiles: need at least 3 heights above the midplane")
    state = TurbulenceState.from_profiles(
        profiles, tau=tau, rho=rho, gravity=om**2 * z, sound_speed=np.full(z.shape, c_s)
    )
    opts: dict[str, Any] = {"field_direction": (1.0, 0.0, 0.0)}
    opts.update(closure_options or {})
    coeffs = emf_coefficients(state, **opts)
    h = c_s / om
    scaled = types.SimpleNamespace(
        eta=np.asarray(coeffs.eta) / (c_s * h),
        eta_kinetic=np.asarray(coeffs.eta_kinetic) / (c_s * h),
        **{field: np.asarray(getattr(coeffs, field)) / c_s for _, field in _MECHANISMS},
    )
    return _template_from_coefficients(name, z / h, scaled, alpha=alpha, eta_floor=eta_floor, top=None)
