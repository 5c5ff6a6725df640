"""Physical and astronomical constants in CGS (Gaussian) units.

The one place the Python layer defines constants; ``src/constants.rs`` carries the same numbers for the
Rust core. Sources, beside each value:

- CODATA 2018 recommended values (Tiesinga et al. 2021, Rev. Mod. Phys. 93, 025010);
- the exact defining constants of the SI (2019);
- IAU 2015 Resolution B3 (nominal solar values) and B2 (parsec); IAU 2012 Resolution B2 (astronomical unit).

Examples
--------
>>> from fluxfunnel import constants as k
>>> round(k.G * k.M_SUN / k.C**2 / 1e5, 4)  # gravitational radius of the Sun in km
1.4766
"""

from __future__ import annotations

import math

__all__ = [
    "G",
    "C",
    "GM_SUN",
    "M_SUN",
    "R_SUN",
    "M_P",
    "M_E",
    "M_U",
    "K_B",
    "H_PLANCK",
    "SIGMA_T",
    "SIGMA_SB",
    "A_RAD",
    "YEAR",
    "AU",
    "PARSEC",
]

G: float = 6.67430e-8
"""Newtonian constant of gravitation [cm^3 g^-1 s^-2]; CODATA 2018."""
C: float = 2.99792458e10
"""Speed of light in vacuum [cm s^-1]; exact (SI 2019)."""
GM_SUN: float = 1.3271244e26
"""Nominal solar mass parameter [cm^3 s^-2]; IAU 2015 Resolution B3."""
M_SUN: float = GM_SUN / G
"""Solar mass [g], GM_sun / G with CODATA 2018 G (IAU 2015 B3)."""
R_SUN: float = 6.957e10
"""Nominal solar radius [cm]; IAU 2015 Resolution B3."""
M_P: float = 1.67262192369e-24
"""Proton mass [g]; CODATA 2018."""
M_E: float = 9.1093837015e-28
"""Electron mass [g]; CODATA 2018."""
M_U: float = 1.66053906660e-24
"""Atomic mass constant [g]; CODATA 2018."""
K_B: float = 1.380649e-16
"""Boltzmann constant [erg K^-1]; exact (SI 2019)."""
H_PLANCK: float = 6.62607015e-27
"""Planck constant [erg s]; exact (SI 2019)."""
SIGMA_T: float = 6.6524587321e-25
"""Thomson cross-section [cm^2]; CODATA 2018."""
SIGMA_SB: float = 5.670374419e-5
"""Stefan-Boltzmann constant [erg cm^-2 s^-1 K^-4]; CODATA 2018."""
A_RAD: float = 4.0 * SIGMA_SB / C
"""Radiation constant 4 sigma / c [erg cm^-3 K^-4]."""
YEAR: float = 3.15576e7
"""Julian year [s]; IAU."""
AU: float = 1.495978707e13
"""Astronomical unit [cm]; exact, IAU 2012 Resolution B2."""
PARSEC: float = 648000.0 / math.pi * AU
"""Parsec [cm]; IAU 2015 Resolution B2."""
