"""The steady Shakura-Sunyaev alpha disk (gas pressure, Kramers opacity) and its vertical profiles.

`AlphaDisk` solves the defining equations of the thin, steady, optically thick alpha disk at every radius
asked for (no tabulated power-law coefficients), and warns with `AssumptionWarning` wherever its own
assumptions fail: radiation pressure above gas pressure, electron scattering above Kramers opacity, or an
optically thin disk. Every number it returns is a model prediction under those assumptions. CGS units.

References
----------
.. [SS73] Shakura, N. I. & Sunyaev, R. A. 1973, A&A 24, 337.
.. [FKR02] Frank, J., King, A. & Raine, D. 2002, *Accretion Power in Astrophysics*, 3rd ed., CUP, section 5.6.
"""

from __future__ import annotations

import math
import warnings
from dataclasses import dataclass
from typing import Any, Literal

import numpy as np

from . import _core
from ._errors import InputError
from ._validate import as_float, broadcast, scalar_or_array

__all__ = ["AlphaDisk", "AssumptionWarning", "DiskValidity", "KRAMERS_COEFFICIENT"]

KRAMERS_COEFFICIENT: float = 5.0e24
r"""Kramers opacity coefficient :math:`\kappa_0` in :math:`\kappa = \kappa_0 \rho T^{-7/2}`
[cm^5 g^-2 K^(7/2)], the value of [FKR02]_ section 5.6 (recalled, medium confidence)."""

_MIDPLANE = {"gaussian": math.sqrt(2.0 * math.pi), "one-zone": 1.0}


class AssumptionWarning(UserWarning):
    """The disk model was evaluated where one of its own assumptions fails.

    Raised (as a warning) when radiation pressure exceeds gas pressure, electron scattering exceeds the
    Kramers opacity, or the vertical optical depth falls below one, anywhere in the radii asked for. The
    values returned there are still those of the gas-pressure / Kramers model, which no longer describes
    the disk; `AlphaDisk.validity` gives the ratios.
    """


@dataclass(frozen=True, eq=False)
class DiskValidity:
    r"""The ratios that test an `AlphaDisk`'s assumptions, at the radii asked for.

    Attributes
    ----------
    radiation_to_gas_pressure : float or ndarray
        :math:`(a T_c^4/3) / (\rho_c k T_c / \mu m_p)`; the model needs it below 1.
    scattering_to_kramers_opacity : float or ndarray
        :math:`0.2(1 + X) / (\kappa_0 \rho_c T_c^{-7/2})`; the model needs it below 1.
    optical_depth : float or ndarray
        :math:`\tau = \Sigma \kappa`; the model needs it above 1.
    holds : bool or ndarray of bool
        Where all three conditions hold.
    """

    radiation_to_gas_pressure: Any
    scattering_to_kramers_opacity: Any
    optical_depth: Any
    holds: Any

    def __repr__(self) -> str:
        if isinstance(self.holds, bool):
            return (
                f"DiskValidity(radiation_to_gas_pressure={self.radiation_to_gas_pressure:.3g}, "
                f"scattering_to_kramers_opacity={self.scattering_to_kramers_opacity:.3g}, "
                f"optical_depth={self.optical_depth:.3g}, holds={self.holds})"
            )
        return f"DiskValidity(shape={self.holds.shape}, holds everywhere={bool(self.holds.all())})"


class AlphaDisk:
    r"""Steady, thin, optically thick alpha disk with gas pressure and Kramers opacity [SS73]_, [FKR02]_.

    At every radius :math:`r > r_\mathrm{in}` the model solves

    .. math::

        \Omega = (GM/r^3)^{1/2},\quad c_s^2 = \frac{k T_c}{\mu m_p},\quad H = \frac{c_s}{\Omega},\quad
        \nu = \alpha c_s H,\quad \nu\Sigma = \frac{\dot M}{3\pi}\left[1 - (r_\mathrm{in}/r)^{1/2}\right],

        \rho_c = \frac{\Sigma}{g H},\quad \kappa = \kappa_0 \rho_c T_c^{-7/2},\quad \tau = \Sigma\kappa,\quad
        \frac{4\sigma T_c^4}{3\tau} = \frac{3 G M \dot M}{8\pi r^3}\left[1 - (r_\mathrm{in}/r)^{1/2}\right],

    with a zero torque at :math:`r_\mathrm{in}`. Eliminating all but :math:`T_c` gives one power law,
    solved exactly; the rest follows. :math:`g = \sqrt{2\pi}` (``midplane="gaussian"``, default) makes
    :math:`\rho_c` the midplane value of the Gaussian profile that integrates to :math:`\Sigma`;
    :math:`g = 1` (``"one-zone"``) is the textbook :math:`\rho = \Sigma/H`, which the printed power-law
    coefficients of [FKR02]_ use. The midplane pressure is the gas pressure :math:`\rho_c c_s^2`.

    Every value is a model prediction under these assumptions; methods warn with `AssumptionWarning`
    where the assumptions fail (see `validity`).

    Parameters
    ----------
    mass : float or Quantity
        Central mass [g].
    mdot : float or Quantity
        Accretion rate [g s^-1].
    alpha : float
        Viscosity parameter, :math:`0 < \alpha \le 1`, dimensionless.
    r_in : float or Quantity, keyword-only
        Inner (zero-torque) edge [cm], for example `CompactObject.inner_edge` ``(mdot).radius``.
    mu : float, keyword-only
        Mean molecular weight (0.615: ionised gas of solar-like composition), dimensionless.
    kappa0 : float, keyword-only
        Kramers coefficient [cm^5 g^-2 K^(7/2)]; default `KRAMERS_COEFFICIENT`.
    hydrogen_fraction : float, keyword-only
        Hydrogen mass fraction :math:`X`, for the electron-scattering opacity :math:`0.2(1+X)` used only
        by the validity check.
    midplane : {"gaussian", "one-zone"}, keyword-only
        Midplane-density convention, see above.

    Examples
    --------
    >>> from fluxfunnel import constants as k
    >>> disk = AlphaDisk(k.M_SUN, 1e16, 0.1, r_in=1e9)
    >>> 1e3 < disk.midplane_temperature(1e10) < 1e5
    True
    >>> disk.aspect_ratio([2e9, 1e10, 1e11]).shape
    (3,)
    """

    def __init__(
        self,
        mass: Any,
        mdot: Any,
        alpha: float,
        *,
        r_in: Any,
        mu: float = 0.615,
        kappa0: float = KRAMERS_COEFFICIENT,
        hydrogen_fraction: float = 0.7,
        midplane: Literal["gaussian", "one-zone"] = "gaussian",
    ) -> None:
        if midplane not in _MIDPLANE:
            raise InputError(f"midplane: must be one of {sorted(_MIDPLANE)}, got {midplane!r}")
        values = {}
        for name, value, unit in (
            ("mass", mass, "g"),
            ("mdot", mdot, "g / s"),
            ("alpha", alpha, None),
            ("r_in", r_in, "cm"),
            ("mu", mu, None),
            ("kappa0", kappa0, None),
            ("hydrogen_fraction", hydrogen_fraction, None),
        ):
            arr = as_float(name, value, unit=unit)
            if arr.ndim != 0:
                raise InputError(f"{name}: must be a scalar, got shape {arr.shape}")
            values[name] = float(arr)
        self.mass: float = values["mass"]
        self.mdot: float = values["mdot"]
        self.alpha: float = values["alpha"]
        self.r_in: float = values["r_in"]
        self.mu: float = values["mu"]
        self.kappa0: float = values["kappa0"]
        self.hydrogen_fraction: float = values["hydrogen_fraction"]
        self.midplane: str = midplane
        self._core = _core.AlphaDiskCore(
            self.mass,
            self.mdot,
            self.alpha,
            self.r_in,
            self.mu,
            self.kappa0,
            self.hydrogen_fraction,
            _MIDPLANE[midplane],
        )

    def __repr__(self) -> str:
        return (
            f"AlphaDisk(mass={self.mass:.4g} g, mdot={self.mdot:.4g} g/s, alpha={self.alpha:.3g}, "
            f"r_in={self.r_in:.4g} cm, midplane={self.midplane!r})"
        )

    # -- evaluation helpers ---------------------------------------------------------------------------------

    @staticmethod
    def _warn(worst: tuple[float, float, float], stacklevel: int = 3) -> None:
        prad, kes, tau = worst
        problems = []
        if prad > 1.0:
            problems.append(f"radiation pressure reaches {prad:.3g} x gas pressure")
        if kes > 1.0:
            problems.append(f"electron scattering reaches {kes:.3g} x Kramers opacity")
        if tau < 1.0:
            problems.append(f"optical depth falls to {tau:.3g}")
        if problems:
            warnings.warn(
                "gas-pressure / Kramers alpha disk evaluated outside its assumptions: "
                + "; ".join(problems)
                + " (see AlphaDisk.validity)",
                AssumptionWarning,
                stacklevel=stacklevel + 1,
            )

    def _profile(self, name: str, r: Any) -> Any:
        arr = as_float("r", r, unit="cm")
        out, worst = self._core.profile(arr, name)
        self._warn(worst, stacklevel=4)
        return scalar_or_array(out, r)

    # -- radial structure -----------------------------------------------------------------------------------

    def omega(self, r: Any) -> Any:
        r"""Keplerian angular velocity :math:`\Omega = (GM/r^3)^{1/2}` [s^-1] at radius ``r`` [cm]."""
        return self._profile("omega", r)

    def surface_density(self, r: Any) -> Any:
        r"""Surface density :math:`\Sigma` [g cm^-2] at radius ``r`` [cm] (``r > r_in``; broadcasts)."""
        return self._profile("surface_density", r)

    def scale_height(self, r: Any) -> Any:
        r"""Scale height :math:`H = c_s/\Omega` [cm] at radius ``r`` [cm]."""
        return self._profile("scale_height", r)

    def midplane_temperature(self, r: Any) -> Any:
        r"""Midplane temperature :math:`T_c` [K] at radius ``r`` [cm]."""
        return self._profile("midplane_temperature", r)

    def midplane_density(self, r: Any) -> Any:
        r"""Midplane density :math:`\rho_c = \Sigma/(gH)` [g cm^-3] at radius ``r`` [cm] (``g`` per ``midplane``)."""
        return self._profile("midplane_density", r)

    def midplane_pressure(self, r: Any) -> Any:
        r"""Midplane gas pressure :math:`P_c = \rho_c c_s^2` [dyn cm^-2] at radius ``r`` [cm]."""
        return self._profile("midplane_pressure", r)

    def sound_speed(self, r: Any) -> Any:
        r"""Isothermal midplane sound speed :math:`c_s = (k T_c/\mu m_p)^{1/2}` [cm s^-1] at ``r`` [cm]."""
        return self._profile("sound_speed", r)

    def viscosity(self, r: Any) -> Any:
        r"""Kinematic viscosity :math:`\nu = \alpha c_s H` [cm^2 s^-1] at radius ``r`` [cm]."""
        return self._profile("viscosity", r)

    def radial_velocity(self, r: Any) -> Any:
        r"""Radial velocity :math:`v_r = -\dot M/(2\pi r\Sigma)` [cm s^-1] (negative: inflow) at ``r`` [cm]."""
        return self._profile("radial_velocity", r)

    def aspect_ratio(self, r: Any) -> Any:
        r"""Aspect ratio :math:`H/r` (dimensionless) at radius ``r`` [cm]."""
        return self._profile("aspect_ratio", r)

    def optical_depth(self, r: Any) -> Any:
        r"""Vertical optical depth :math:`\tau = \Sigma\kappa` (dimensionless) at radius ``r`` [cm]."""
        return self._profile("optical_depth", r)

    def equipartition_field(self, r: Any) -> Any:
        r"""Equipartition field :math:`B_\mathrm{eq} = (8\pi P_c)^{1/2}` [G] at radius ``r`` [cm]."""
        return self._profile("equipartition_field", r)

    # -- vertical structure and fields ----------------------------------------------------------------------

    def density(self, r: Any, z: Any, *, profile: Literal["gaussian", "polytropic"] = "gaussian",
                polytropic_index: float = 1.5) -> Any:
        r"""Density :math:`\rho(r, z)` [g cm^-3] of a vertical profile that integrates to :math:`\Sigma(r)`.

        ``"gaussian"`` (vertically isothermal):
        :math:`\rho = \Sigma/(\sqrt{2\pi}H)\,\exp(-z^2/2H^2)`.
        ``"polytropic"`` (:math:`P \propto \rho^{1 + 1/n}` in the vertical gravity :math:`-\Omega^2 z`, with
        the disk's midplane sound speed): :math:`\rho = \rho_0 (1 - z^2/Z^2)^n` for :math:`|z| < Z`,
        :math:`Z = [2(n+1)]^{1/2} H`, zero above, :math:`\rho_0 = \Sigma / [Z\,B(1/2, n+1)]`; it tends to
        the Gaussian as :math:`n \to \infty`.

        Parameters
        ----------
        r : array_like or Quantity
            Radius [cm], ``r > r_in``.
        z : array_like or Quantity
            Height above the midplane [cm]; broadcasts with ``r``.
        profile : {"gaussian", "polytropic"}, keyword-only
            Vertical profile.
        polytropic_index : float, keyword-only
            Polytropic index :math:`n > 0` (used by ``"polytropic"`` only), dimensionless.

        Returns
        -------
        float or ndarray
            Density [g cm^-3], a model prediction.
        """
        if profile not in ("gaussian", "polytropic"):
            raise InputError(f"profile: must be 'gaussian' or 'polytropic', got {profile!r}")
        ra = as_float("r", r, unit="cm")
        za = as_float("z", z, unit="cm")
        ra, za = broadcast(r=ra, z=za)
        index = float(polytropic_index) if profile == "polytropic" else None
        out, worst = self._core.density(ra, za, index)
        self._warn(worst)
        return scalar_or_array(out, r, z)

    def plasma_beta(self, r: Any, b_z: Any) -> Any:
        r"""Midplane plasma beta :math:`\beta = 8\pi P_c / B_z^2` (dimensionless) for a vertical field.

        Parameters
        ----------
        r : array_like or Quantity
            Radius [cm], ``r > r_in``.
        b_z : array_like or Quantity
            Vertical field [G]; broadcasts with ``r`` (zero gives infinity).

        Returns
        -------
        float or ndarray
            :math:`\beta`, from the model's gas pressure.
        """
        ra = as_float("r", r, unit="cm")
        ba = as_float("b_z", b_z, unit="G")
        ra, ba = broadcast(r=ra, b_z=ba)
        with warnings.catch_warnings():
            warnings.simplefilter("ignore", RuntimeWarning)
            out, worst = self._core.plasma_beta(ra, ba)
        self._warn(worst)
        return scalar_or_array(out, r, b_z)

    def validity(self, r: Any) -> DiskValidity:
        """Return the ratios that test the model's assumptions at radius ``r`` [cm]; never warns.

        Returns
        -------
        DiskValidity
            Radiation-to-gas pressure, scattering-to-Kramers opacity, optical depth, and where all hold.

        Examples
        --------
        >>> from fluxfunnel import constants as k
        >>> AlphaDisk(k.M_SUN, 1e16, 0.1, r_in=1e9).validity(1e10).holds
        True
        """
        arr = as_float("r", r, unit="cm")
        prad, kes, tau = self._core.validity(arr)
        holds = (prad <= 1.0) & (kes <= 1.0) & (tau >= 1.0)
        if np.ndim(r) == 0:
            return DiskValidity(float(prad), float(kes), float(tau), bool(holds))
        return DiskValidity(prad, kes, tau, holds)
