"""fluxfunnel.constants against astropy.constants and scipy.constants."""

import math

import astropy.constants as ac
import astropy.constants.codata2018 as codata2018
import astropy.constants.iau2015 as iau2015
import pytest
import scipy.constants as sc
from fluxfunnel import constants as k

# Source: astropy.constants.codata2018 (CODATA 2018, the release fluxfunnel.constants cites), converted to CGS.
CODATA_2018 = [
    ("G", codata2018.G),
    ("C", codata2018.c),
    ("M_P", codata2018.m_p),
    ("M_E", codata2018.m_e),
    ("M_U", codata2018.u),
    ("K_B", codata2018.k_B),
    ("H_PLANCK", codata2018.h),
    ("SIGMA_T", codata2018.sigma_T),
    ("SIGMA_SB", codata2018.sigma_sb),
]


@pytest.mark.parametrize(("name", "ref"), CODATA_2018)
def test_codata_2018_values_match_astropy(name, ref):
    assert getattr(k, name) == pytest.approx(ref.cgs.value, rel=1e-14)


# Source: astropy.constants.iau2015 (IAU 2015 B3 nominal values, IAU 2012 B2 au, IAU 2015 B2 parsec).
@pytest.mark.parametrize(
    ("name", "ref"),
    [("GM_SUN", iau2015.GM_sun), ("R_SUN", iau2015.R_sun), ("AU", iau2015.au), ("PARSEC", iau2015.pc)],
)
def test_iau_values_match_astropy(name, ref):
    assert getattr(k, name) == pytest.approx(ref.cgs.value, rel=1e-14)


def test_solar_mass_is_gm_over_g():
    # Source: IAU 2015 Resolution B3 recommends M_sun = GM_sun / G; astropy's M_sun uses CODATA 2022 G,
    # which equals CODATA 2018 G (6.67430e-11), so the two agree to rounding.
    assert k.M_SUN == pytest.approx(ac.M_sun.cgs.value, rel=1e-14)


# Source: scipy.constants.physical_constants (this SciPy ships CODATA 2022). Values measured, not fixed by the
# SI, moved between the 2018 and 2022 releases; they must agree within three combined standard
# uncertainties (2018 uncertainty from astropy.constants.codata2018 plus the 2022 one from SciPy).
@pytest.mark.parametrize(
    ("name", "key", "to_cgs", "ref2018"),
    [
        ("G", "Newtonian constant of gravitation", 1e3, codata2018.G),
        ("C", "speed of light in vacuum", 1e2, codata2018.c),
        ("M_P", "proton mass", 1e3, codata2018.m_p),
        ("M_E", "electron mass", 1e3, codata2018.m_e),
        ("M_U", "atomic mass constant", 1e3, codata2018.u),
        ("K_B", "Boltzmann constant", 1e7, codata2018.k_B),
        ("H_PLANCK", "Planck constant", 1e7, codata2018.h),
        ("SIGMA_T", "Thomson cross section", 1e4, codata2018.sigma_T),
        ("SIGMA_SB", "Stefan-Boltzmann constant", 1e3, codata2018.sigma_sb),
    ],
)
def test_values_agree_with_scipy_within_stated_uncertainty(name, key, to_cgs, ref2018):
    value, _unit, unc = sc.physical_constants[key]
    ours = getattr(k, name)
    allowed = 3.0 * (unc + ref2018.uncertainty) * to_cgs
    # Exact SI constants have zero uncertainty; SIGMA_SB is printed to 10 digits (rounding 4e-11 relative).
    allowed = max(allowed, 1e-10 * abs(ours))
    assert abs(ours - value * to_cgs) <= allowed


def test_exact_and_derived_constants():
    # Source: SI 2019 exact constants, sigma = 2 pi^5 k^4 / (15 h^3 c^2); scipy.constants for the year, au, pc.
    sigma = 2 * math.pi**5 * k.K_B**4 / (15 * k.H_PLANCK**3 * k.C**2)
    assert k.SIGMA_SB == pytest.approx(sigma, rel=1e-10)
    assert k.A_RAD == pytest.approx(4 * sigma / k.C, rel=1e-10)
    assert k.YEAR == pytest.approx(sc.Julian_year, rel=1e-15)
    assert k.AU == pytest.approx(sc.au * 1e2, rel=1e-15)
    assert k.PARSEC == pytest.approx(sc.parsec * 1e2, rel=1e-14)
