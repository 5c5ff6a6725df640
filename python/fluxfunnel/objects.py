"""Compact objects and the inner edge of the disks around them.

Every function takes CGS inputs (or ``astropy.units.Quantity``, converted at the edge), broadcasts like a
ufunc and returns a float for scalar input. The numbers are model values under the stated assumptions
(Kerr geodesics, a cold white-dwarf fit, an aligned dipole in spherical free fall); they are not
measurements of any real object.

References
----------
.. [BPT72] Bardeen, J. M., Press, W. H. & Teukolsky, S. A. 1972, ApJ 178, 347.
.. [N72] Nauenberg, M. 1972, ApJ 175, 417.
.. [FKR02] Frank, J., King, A. & Raine, D. 2002, *Accretion Power in Astrophysics*, 3rd ed., CUP, sections
   1.2 and 6.3.
.. [GL79] Ghosh, P. & Lamb, F. K. 1979, ApJ 232, 259.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any, Literal

import numpy as np
from numpy.typing import NDArray

from . import _core
from ._validate import as_float, broadcast, check_non_negative, check_positive, scalar_or_array

__all__ = [
    "gravitational_radius",
    "isco_radius",
    "horizon_radius",
    "white_dwarf_radius",
    "eddington_luminosity",
    "eddington_accretion_rate",
    "magnetospheric_radius",
    "CompactObject",
    "InnerEdge",
    "NEUTRON_STAR_RADIUS",
    "NEUTRON_STAR_FIELD",
    "WHITE_DWARF_FIELD",
]

NEUTRON_STAR_RADIUS: float = 1.2e6
"""Default neutron-star radius [cm] (12 km). Common practice (no single source): 10 km is the traditional
canonical value; pulse-profile fits of the 2019-2021 era favour 12-13 km."""
NEUTRON_STAR_FIELD: float = 1.0e8
"""Default equatorial surface dipole field of an accreting neutron star [G]. Common practice (no single
source): 1e8-1e9 G for neutron stars in low-mass X-ray binaries."""
WHITE_DWARF_FIELD: float = 0.0
"""Default surface field of a white dwarf [G]: zero, i.e. a non-magnetic white dwarf whose disk reaches its
surface. Common practice (no single source); intermediate polars have 1e6-1e7 G."""

_SETTERS = np.array(["magnetosphere", "surface", "isco"])


def gravitational_radius(mass: Any) -> Any:
    r"""Gravitational radius :math:`r_g = G M / c^2`.

    Parameters
    ----------
    mass : array_like or Quantity
        Mass [g].

    Returns
    -------
    float or ndarray
        :math:`r_g` [cm].

    Examples
    --------
    >>> from fluxfunnel import constants as k
    >>> round(gravitational_radius(k.M_SUN) / 1e5, 4)
    1.4766
    """
    m = as_float("mass", mass, unit="g")
    return scalar_or_array(_core.objects_gravitational_radius(m), mass)


def isco_radius(mass: Any, spin: Any = 0.0, *, prograde: bool = True) -> Any:
    r"""Radius of the innermost stable circular orbit of a Kerr black hole [BPT72]_.

    .. math::

        Z_1 = 1 + (1 - a^2)^{1/3}\left[(1 + a)^{1/3} + (1 - a)^{1/3}\right],\quad
        Z_2 = (3 a^2 + Z_1^2)^{1/2},

        r_\mathrm{ISCO} = \frac{GM}{c^2}\left\{3 + Z_2 \mp \left[(3 - Z_1)(3 + Z_1 + 2 Z_2)\right]^{1/2}\right\},

    upper sign for prograde orbits. Boyer-Lindquist radius; :math:`a = 0` gives 6, :math:`a = 1` gives 1
    (prograde) or 9 (retrograde) :math:`GM/c^2`.

    Parameters
    ----------
    mass : array_like or Quantity
        Mass [g].
    spin : array_like
        Dimensionless spin :math:`a = Jc/(GM^2)` in [0, 1] (dimensionless); broadcasts with ``mass``.
    prograde : bool, keyword-only
        Orbit co-rotating with the hole (default) or counter-rotating.

    Returns
    -------
    float or ndarray
        ISCO radius [cm].

    Examples
    --------
    >>> from fluxfunnel import constants as k
    >>> round(isco_radius(k.M_SUN, 1.0, prograde=False) / gravitational_radius(k.M_SUN), 10)
    9.0
    """
    m = as_float("mass", mass, unit="g")
    a = as_float("spin", spin, unit=None)
    m, a = broadcast(mass=m, spin=a)
    return scalar_or_array(_core.objects_isco_radius(m, a, bool(prograde)), mass, spin)


def horizon_radius(mass: Any, spin: Any = 0.0) -> Any:
    r"""Outer event horizon :math:`r_+ = (GM/c^2)\left[1 + (1 - a^2)^{1/2}\right]` of a Kerr black hole.

    Parameters
    ----------
    mass : array_like or Quantity
        Mass [g].
    spin : array_like
        Dimensionless spin in [0, 1]; broadcasts with ``mass``.

    Returns
    -------
    float or ndarray
        Horizon radius [cm] (Boyer-Lindquist).

    Examples
    --------
    >>> from fluxfunnel import constants as k
    >>> round(horizon_radius(k.M_SUN) / gravitational_radius(k.M_SUN), 12)
    2.0
    """
    m = as_float("mass", mass, unit="g")
    a = as_float("spin", spin, unit=None)
    m, a = broadcast(mass=m, spin=a)
    return scalar_or_array(_core.objects_horizon_radius(m, a), mass, spin)


def white_dwarf_radius(mass: Any, *, mu_e: float = 2.0) -> Any:
    r"""Radius of a cold white dwarf from the mass-radius fit of Nauenberg [N72]_.

    .. math::

        R = \frac{0.0225\,R_\odot}{\mu_e}\,\frac{\left[1 - (M/M_3)^{4/3}\right]^{1/2}}{(M/M_3)^{1/3}},\qquad
        M_3 = \frac{5.816\,M_\odot}{\mu_e^2}.

    A fit to the zero-temperature, fully degenerate sequence: no thermal envelope, no rotation. The
    coefficients are as recalled from the paper (medium confidence).

    Parameters
    ----------
    mass : array_like or Quantity
        Mass [g], below :math:`M_3` (1.454 :math:`M_\odot` for :math:`\mu_e = 2`).
    mu_e : float, keyword-only
        Mean molecular weight per electron (2 for carbon-oxygen or helium), dimensionless.

    Returns
    -------
    float or ndarray
        Radius [cm].

    Examples
    --------
    >>> from fluxfunnel import constants as k
    >>> 5e8 < white_dwarf_radius(0.8 * k.M_SUN) < 9e8
    True
    """
    m = as_float("mass", mass, unit="g")
    return scalar_or_array(_core.objects_white_dwarf_radius(m, float(mu_e)), mass)


def eddington_luminosity(mass: Any) -> Any:
    r"""Eddington luminosity for pure hydrogen with Thomson (electron-scattering) opacity.

    .. math::

        L_\mathrm{Edd} = \frac{4\pi G M m_p c}{\sigma_T}
        \approx 1.257\times10^{38}\,(M/M_\odot)\ \mathrm{erg\,s^{-1}}.

    A composition with hydrogen fraction :math:`X` has opacity :math:`0.2(1+X)` and a luminosity larger by
    :math:`2/(1+X)`; this function does not include that factor [FKR02]_.

    Parameters
    ----------
    mass : array_like or Quantity
        Mass [g].

    Returns
    -------
    float or ndarray
        :math:`L_\mathrm{Edd}` [erg s^-1].

    Examples
    --------
    >>> from fluxfunnel import constants as k
    >>> round(eddington_luminosity(k.M_SUN) / 1e38, 3)
    1.257
    """
    m = as_float("mass", mass, unit="g")
    return scalar_or_array(_core.objects_eddington_luminosity(m), mass)


def eddington_accretion_rate(mass: Any, *, efficiency: Any = 0.1) -> Any:
    r"""Eddington accretion rate :math:`\dot M_\mathrm{Edd} = L_\mathrm{Edd} / (\epsilon c^2)`.

    The convention includes the radiative efficiency :math:`\epsilon`; some authors use
    :math:`L_\mathrm{Edd}/c^2` instead (``efficiency=1``).

    Parameters
    ----------
    mass : array_like or Quantity
        Mass [g].
    efficiency : array_like, keyword-only
        Radiative efficiency :math:`\epsilon` in (0, 1], dimensionless; broadcasts with ``mass``.

    Returns
    -------
    float or ndarray
        :math:`\dot M_\mathrm{Edd}` [g s^-1].

    Examples
    --------
    >>> from fluxfunnel import constants as k
    >>> round(eddington_accretion_rate(k.M_SUN) / 1e18, 2)
    1.4
    """
    m = as_float("mass", mass, unit="g")
    e = as_float("efficiency", efficiency, unit=None)
    m, e = broadcast(mass=m, efficiency=e)
    return scalar_or_array(_core.objects_eddington_accretion_rate(m, e), mass, efficiency)


def magnetospheric_radius(magnetic_moment: Any, mass: Any, mdot: Any, *, xi: float = 0.5) -> Any:
    r"""Magnetospheric truncation radius of a disk around a magnetised star.

    The Alfvén radius balances the pressure :math:`B^2/8\pi` of a dipole :math:`B = \mu/r^3` with the ram
    pressure :math:`\rho v^2/2` of spherical free fall (:math:`v = (2GM/r)^{1/2}`,
    :math:`\rho v = \dot M / 4\pi r^2`); a disk is truncated at a fraction :math:`\xi` of it:

    .. math:: r_m = \xi \left(\frac{\mu^4}{2 G M \dot M^2}\right)^{1/7}.

    :math:`\xi \approx 0.5` follows [GL79]_ (later work uses 0.5-1): a model parameter, not a
    measurement [FKR02]_.

    Parameters
    ----------
    magnetic_moment : array_like or Quantity
        Dipole moment :math:`\mu = B_\mathrm{eq} R^3` [G cm^3], non-negative (zero: no truncation).
    mass : array_like or Quantity
        Mass of the star [g].
    mdot : array_like or Quantity
        Accretion rate [g s^-1].
    xi : float, keyword-only
        Ratio of the truncation radius to the spherical Alfvén radius, dimensionless.

    Returns
    -------
    float or ndarray
        :math:`r_m` [cm]; the three inputs broadcast together.

    Examples
    --------
    >>> from fluxfunnel import constants as k
    >>> round(magnetospheric_radius(1e30, k.M_SUN, 1e16, xi=1.0) / 1e8, 2)
    6.26
    """
    mu = as_float("magnetic_moment", magnetic_moment, unit="G cm3")
    m = as_float("mass", mass, unit="g")
    md = as_float("mdot", mdot, unit="g / s")
    mu, m, md = broadcast(magnetic_moment=mu, mass=m, mdot=md)
    return scalar_or_array(_core.objects_magnetospheric_radius(mu, m, md, float(xi)), magnetic_moment, mass, mdot)


def _fmt(x: Any) -> str:
    a = np.asarray(x)
    if a.ndim == 0:
        return f"{float(a):.4g}"
    return f"array{a.shape}"


@dataclass(frozen=True, eq=False)
class InnerEdge:
    r"""Inner edge of a disk and the three radii it is the largest of.

    All radii in cm; arrays when the inputs were arrays. A model prediction: the truncation radius rests
    on the dipole and free-fall assumptions of `magnetospheric_radius`.

    Attributes
    ----------
    radius : float or ndarray
        Inner edge :math:`\max(r_m, R_*, r_\mathrm{ISCO})` [cm].
    set_by : str or ndarray of str
        ``"magnetosphere"``, ``"surface"`` or ``"isco"``: which radius is the largest (ties go to the
        ISCO, then the surface).
    truncation_radius : float or ndarray
        Magnetospheric truncation radius [cm] (zero without a field).
    surface_radius : float or ndarray
        Radius of the surface [cm] (the horizon for a black hole).
    isco_radius : float or ndarray
        ISCO radius [cm] (Schwarzschild value for stars, whose spin is ignored).
    """

    radius: Any
    set_by: Any
    truncation_radius: Any
    surface_radius: Any
    isco_radius: Any

    def __repr__(self) -> str:
        set_by = self.set_by if isinstance(self.set_by, str) else f"array{np.shape(self.set_by)}"
        return f"InnerEdge(radius={_fmt(self.radius)} cm, set_by={set_by!r})"


Kind = Literal["black hole", "neutron star", "white dwarf", "protostar"]


@dataclass(frozen=True, eq=False)
class CompactObject:
    """The central object of a disk: what sets the disk's inner edge.

    Build it with one of the constructors (`black_hole`, `neutron_star`, `white_dwarf`, `protostar`);
    their defaults are common-practice values, documented on each. Fields may be arrays of one broadcast
    shape (a population of objects).

    Attributes
    ----------
    kind : str
        ``"black hole"``, ``"neutron star"``, ``"white dwarf"`` or ``"protostar"``.
    mass : float or ndarray
        Mass [g].
    spin : float or ndarray
        Dimensionless spin, used for the ISCO of a black hole (zero for stars).
    radius : float or ndarray
        Surface radius [cm]; the outer horizon for a black hole.
    surface_field : float or ndarray
        Equatorial dipole field at the surface [G]; the dipole moment is ``surface_field * radius**3``.
    """

    kind: Kind
    mass: Any
    spin: Any
    radius: Any
    surface_field: Any

    def __repr__(self) -> str:
        return (
            f"CompactObject({self.kind}, mass={_fmt(self.mass)} g, spin={_fmt(self.spin)}, "
            f"radius={_fmt(self.radius)} cm, surface_field={_fmt(self.surface_field)} G)"
        )

    @staticmethod
    def _checked(name: str, value: Any, unit: str | None, *, positive: bool = False) -> Any:
        arr = as_float(name, value, unit=unit)
        (check_positive if positive else check_non_negative)(name, arr)
        return float(arr) if arr.ndim == 0 else arr

    @classmethod
    def _star(cls, kind: Kind, mass: Any, radius: Any, surface_field: Any) -> CompactObject:
        """Describe a non-rotating object with a surface and a dipole (neutron star, protostar)."""
        return cls(
            kind,
            cls._checked("mass", mass, "g", positive=True),
            0.0,
            cls._checked("radius", radius, "cm"),
            cls._checked("surface_field", surface_field, "G"),
        )

    @classmethod
    def black_hole(cls, mass: Any, spin: Any = 0.0) -> CompactObject:
        """Describe a Kerr black hole; its disk reaches the ISCO.

        Parameters
        ----------
        mass : array_like or Quantity
            Mass [g].
        spin : array_like
            Dimensionless spin in [0, 1].

        Examples
        --------
        >>> from fluxfunnel import constants as k
        >>> bh = CompactObject.black_hole(10 * k.M_SUN, 0.5)
        >>> bh.inner_edge(1e18).set_by
        'isco'
        """
        m = cls._checked("mass", mass, "g", positive=True)
        a = cls._checked("spin", spin, None)
        return cls("black hole", m, a, horizon_radius(m, a), 0.0)

    @classmethod
    def neutron_star(
        cls, mass: Any, radius: Any = NEUTRON_STAR_RADIUS, surface_field: Any = NEUTRON_STAR_FIELD
    ) -> CompactObject:
        """Describe a magnetised neutron star (its spin is ignored for the ISCO).

        Parameters
        ----------
        mass : array_like or Quantity
            Mass [g]; 1.4 solar masses is the canonical value.
        radius : array_like or Quantity
            Radius [cm]; default `NEUTRON_STAR_RADIUS` (12 km, common practice).
        surface_field : array_like or Quantity
            Equatorial surface dipole field [G]; default `NEUTRON_STAR_FIELD` (1e8 G, common practice).

        Examples
        --------
        >>> from fluxfunnel import constants as k
        >>> CompactObject.neutron_star(1.4 * k.M_SUN).inner_edge(1e16).set_by
        'magnetosphere'
        """
        return cls._star("neutron star", mass, radius, surface_field)

    @classmethod
    def white_dwarf(cls, mass: Any, radius: Any = None, surface_field: Any = WHITE_DWARF_FIELD) -> CompactObject:
        """Describe a white dwarf, by default non-magnetic with the Nauenberg (1972) radius.

        Parameters
        ----------
        mass : array_like or Quantity
            Mass [g].
        radius : array_like or Quantity or None
            Radius [cm]; ``None`` uses `white_dwarf_radius` (cold, ``mu_e = 2``).
        surface_field : array_like or Quantity
            Equatorial surface dipole field [G]; default `WHITE_DWARF_FIELD` (0: non-magnetic).

        Examples
        --------
        >>> from fluxfunnel import constants as k
        >>> CompactObject.white_dwarf(0.8 * k.M_SUN).inner_edge(1e17).set_by
        'surface'
        """
        m = cls._checked("mass", mass, "g", positive=True)
        r = white_dwarf_radius(m) if radius is None else cls._checked("radius", radius, "cm")
        return cls("white dwarf", m, 0.0, r, cls._checked("surface_field", surface_field, "G"))

    @classmethod
    def protostar(cls, mass: Any, radius: Any, surface_field: Any) -> CompactObject:
        """Describe a young (pre-main-sequence) star with a dipole field.

        Typical classical T Tauri values (common practice, no single source): 0.5 solar masses, 2 solar
        radii (1.5-3), a dipole of 0.1 to a few kG.

        Parameters
        ----------
        mass : array_like or Quantity
            Mass [g].
        radius : array_like or Quantity
            Radius [cm].
        surface_field : array_like or Quantity
            Equatorial surface dipole field [G].

        Examples
        --------
        >>> from fluxfunnel import constants as k
        >>> star = CompactObject.protostar(0.5 * k.M_SUN, 2 * k.R_SUN, 1e3)
        >>> star.inner_edge(1e-8 * k.M_SUN / k.YEAR).set_by
        'magnetosphere'
        """
        return cls._star("protostar", mass, radius, surface_field)

    @property
    def magnetic_moment(self) -> Any:
        """Dipole moment ``surface_field * radius**3`` [G cm^3]."""
        return self.surface_field * self.radius**3 if self.kind != "black hole" else 0.0 * self.radius

    @property
    def gravitational_radius(self) -> Any:
        """Gravitational radius G M / c^2 [cm]."""
        return gravitational_radius(self.mass)

    def inner_edge(self, mdot: Any, *, xi: float = 0.5, prograde: bool = True) -> InnerEdge:
        r"""Inner edge of the disk, :math:`\max(r_m, R_*, r_\mathrm{ISCO})`, and which radius set it.

        Parameters
        ----------
        mdot : array_like or Quantity
            Accretion rate [g s^-1]; broadcasts with the object's fields.
        xi : float, keyword-only
            Truncation-to-Alfvén radius ratio (see `magnetospheric_radius`).
        prograde : bool, keyword-only
            For a black hole, whether the disk co-rotates with the hole.

        Returns
        -------
        InnerEdge
            The edge and its candidates [cm]; a model prediction (see `InnerEdge`).

        Examples
        --------
        >>> from fluxfunnel import constants as k
        >>> edge = CompactObject.black_hole(k.M_SUN).inner_edge(1e17)
        >>> round(edge.radius / gravitational_radius(k.M_SUN), 10), edge.set_by
        (6.0, 'isco')
        """
        md = as_float("mdot", mdot, unit="g / s")
        arrays = broadcast(
            mass=np.asarray(self.mass, dtype=np.float64),
            spin=np.asarray(self.spin, dtype=np.float64),
            radius=np.asarray(self.radius, dtype=np.float64),
            magnetic_moment=np.asarray(self.magnetic_moment, dtype=np.float64),
            mdot=md,
        )
        mass, spin, radius, moment, rate = arrays
        edge, trunc, isco, code = _core.objects_inner_edge(mass, spin, radius, moment, rate, float(xi), bool(prograde))
        inputs = (self.mass, self.spin, self.radius, self.surface_field, mdot)
        set_by: NDArray[Any] = _SETTERS[code]
        scalar = all(np.ndim(x) == 0 for x in inputs)
        return InnerEdge(
            radius=scalar_or_array(edge, *inputs),
            set_by=str(set_by.reshape(())) if scalar else set_by,
            truncation_radius=scalar_or_array(trunc, *inputs),
            surface_radius=scalar_or_array(arrays[2], *inputs),
            isco_radius=scalar_or_array(isco, *inputs),
        )

