//! Physical and astronomical constants in CGS (Gaussian) units, the only place the core defines them.
//!
//! Sources: CODATA 2018 recommended values (Tiesinga et al. 2021, Rev. Mod. Phys. 93, 025010), the SI
//! exact defining constants (2019), and IAU 2015 Resolution B3 nominal solar values; IAU 2012 Resolution
//! B2 for the astronomical unit. `python/fluxfunnel/constants.py` carries the same numbers.

/// Newtonian constant of gravitation \[cm^3 g^-1 s^-2\]; CODATA 2018.
pub const G: f64 = 6.674_30e-8;
/// Speed of light in vacuum \[cm s^-1\]; exact (SI 2019).
pub const C: f64 = 2.997_924_58e10;
/// Nominal solar mass parameter GM_sun \[cm^3 s^-2\]; IAU 2015 Resolution B3.
pub const GM_SUN: f64 = 1.327_124_4e26;
/// Solar mass \[g\], GM_sun / G with the CODATA 2018 G (as IAU 2015 B3 recommends).
pub const M_SUN: f64 = GM_SUN / G;
/// Nominal solar radius \[cm\]; IAU 2015 Resolution B3.
pub const R_SUN: f64 = 6.957e10;
/// Proton mass \[g\]; CODATA 2018.
pub const M_P: f64 = 1.672_621_923_69e-24;
/// Electron mass \[g\]; CODATA 2018.
pub const M_E: f64 = 9.109_383_701_5e-28;
/// Atomic mass constant \[g\]; CODATA 2018.
pub const M_U: f64 = 1.660_539_066_60e-24;
/// Boltzmann constant \[erg K^-1\]; exact (SI 2019).
pub const K_B: f64 = 1.380_649e-16;
/// Planck constant \[erg s\]; exact (SI 2019).
pub const H_PLANCK: f64 = 6.626_070_15e-27;
/// Thomson cross-section \[cm^2\]; CODATA 2018.
pub const SIGMA_T: f64 = 6.652_458_732_1e-25;
/// Stefan-Boltzmann constant \[erg cm^-2 s^-1 K^-4\]; CODATA 2018 (exact given h, k, c).
pub const SIGMA_SB: f64 = 5.670_374_419e-5;
/// Radiation constant a = 4 sigma / c \[erg cm^-3 K^-4\].
pub const A_RAD: f64 = 4.0 * SIGMA_SB / C;
/// Julian year \[s\] (365.25 days of 86400 s); IAU.
pub const YEAR: f64 = 3.155_76e7;
/// Astronomical unit \[cm\]; exact, IAU 2012 Resolution B2.
pub const AU: f64 = 1.495_978_707e13;
/// Parsec \[cm\] = (648000 / pi) au; IAU 2015 Resolution B2.
pub const PARSEC: f64 = 648_000.0 / std::f64::consts::PI * AU;

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_relative_eq;

    #[test]
    fn derived_values_match_handbook() {
        // Source: IAU 2015 B3 / astropy.constants (from memory): M_sun = 1.98841e33 g, pc = 3.0856776e18 cm.
        assert_relative_eq!(M_SUN, 1.988_41e33, max_relative = 1e-5);
        assert_relative_eq!(PARSEC, 3.085_677_581_491_367e18, max_relative = 1e-14);
        // Source: CODATA 2018, a = 7.5657e-15 erg cm^-3 K^-4.
        assert_relative_eq!(A_RAD, 7.565_723e-15, max_relative = 1e-6);
    }
}
