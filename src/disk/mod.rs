//! The steady Shakura-Sunyaev alpha disk with gas pressure and Kramers opacity, solved from its defining
//! equations at each radius, plus its vertical profiles and the ratios that say where it stops being valid.
//!
//! Defining equations (Frank, King & Raine 2002, section 5.6), with `f^4 = 1 - (r_in / r)^(1/2)`:
//!
//! ```text
//! Omega = (G M / r^3)^(1/2),   c_s^2 = k T_c / (mu m_p),   H = c_s / Omega,   nu = alpha c_s H,
//! nu Sigma = (Mdot / 3 pi) f^4,   rho_c = Sigma / (g H),   kappa = kappa_0 rho_c T_c^(-7/2),   tau = Sigma kappa,
//! 4 sigma T_c^4 / (3 tau) = 3 G M Mdot f^4 / (8 pi r^3).
//! ```
//!
//! `g` fixes the midplane convention: `g = sqrt(2 pi)` makes `rho_c` the midplane value of the Gaussian
//! profile that integrates to `Sigma`; `g = 1` is the one-zone `rho = Sigma / H` of the textbook. Eliminating
//! everything but `T_c` leaves one power law,
//! `T_c^10 = kappa_0 Omega^5 (Mdot f^4)^3 / (32 pi^3 sigma g alpha^2 (k / mu m_p)^(5/2))`,
//! which this module solves exactly; the other quantities follow down the chain. Derivation:
//! `docs/disk_and_objects.md`.

use ndarray::{ArrayD, ArrayViewD, Zip};

use crate::constants::{A_RAD, G, K_B, M_P, SIGMA_SB, SIGMA_T};
use crate::error::{CoreError, CoreResult};
use crate::numerics::checks;
use crate::numerics::elementwise::{same_shape, PARALLEL_THRESHOLD};

use std::f64::consts::PI;

/// Parameters of a steady alpha disk (CGS).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct AlphaDisk {
    /// Central mass \[g\].
    pub mass: f64,
    /// Accretion rate \[g s^-1\].
    pub mdot: f64,
    /// Shakura-Sunyaev viscosity parameter, `0 < alpha <= 1`.
    pub alpha: f64,
    /// Inner (zero-torque) edge \[cm\].
    pub r_in: f64,
    /// Mean molecular weight.
    pub mu: f64,
    /// Kramers opacity coefficient \[cm^5 g^-2 K^(7/2)\].
    pub kappa0: f64,
    /// Hydrogen mass fraction, for the electron-scattering opacity `0.2 (1 + X)`.
    pub hydrogen_fraction: f64,
    /// Midplane convention `g` in `rho_c = Sigma / (g H)`: `sqrt(2 pi)` (Gaussian) or 1 (one-zone).
    pub midplane_factor: f64,
}

/// Every quantity of the disk at one radius.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct DiskState {
    /// Keplerian angular velocity \[s^-1\].
    pub omega: f64,
    /// Midplane temperature \[K\].
    pub temperature: f64,
    /// Isothermal sound speed \[cm s^-1\].
    pub sound_speed: f64,
    /// Scale height \[cm\].
    pub scale_height: f64,
    /// Kinematic viscosity \[cm^2 s^-1\].
    pub viscosity: f64,
    /// Surface density \[g cm^-2\].
    pub surface_density: f64,
    /// Midplane density \[g cm^-3\].
    pub density: f64,
    /// Midplane gas pressure \[dyn cm^-2\].
    pub pressure: f64,
    /// Vertical optical depth `Sigma kappa`.
    pub optical_depth: f64,
    /// Radial velocity \[cm s^-1\], negative for inflow.
    pub radial_velocity: f64,
}

/// A quantity [`AlphaDisk::profile`] can return.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Quantity {
    /// Keplerian angular velocity.
    Omega,
    /// Surface density.
    SurfaceDensity,
    /// Scale height.
    ScaleHeight,
    /// Midplane temperature.
    MidplaneTemperature,
    /// Midplane density.
    MidplaneDensity,
    /// Midplane pressure.
    MidplanePressure,
    /// Sound speed.
    SoundSpeed,
    /// Viscosity.
    Viscosity,
    /// Radial velocity.
    RadialVelocity,
    /// `H / r`.
    AspectRatio,
    /// Optical depth.
    OpticalDepth,
    /// `(8 pi P_c)^(1/2)`.
    EquipartitionField,
}

impl Quantity {
    /// Parse the Python-side name (`"surface_density"`, ...).
    pub fn from_name(name: &str) -> CoreResult<Self> {
        Ok(match name {
            "omega" => Self::Omega,
            "surface_density" => Self::SurfaceDensity,
            "scale_height" => Self::ScaleHeight,
            "midplane_temperature" => Self::MidplaneTemperature,
            "midplane_density" => Self::MidplaneDensity,
            "midplane_pressure" => Self::MidplanePressure,
            "sound_speed" => Self::SoundSpeed,
            "viscosity" => Self::Viscosity,
            "radial_velocity" => Self::RadialVelocity,
            "aspect_ratio" => Self::AspectRatio,
            "optical_depth" => Self::OpticalDepth,
            "equipartition_field" => Self::EquipartitionField,
            other => {
                return Err(CoreError::input(
                    "quantity",
                    format!("unknown disk quantity {other:?}"),
                ))
            }
        })
    }

    fn of(self, s: &DiskState, r: f64) -> f64 {
        match self {
            Self::Omega => s.omega,
            Self::SurfaceDensity => s.surface_density,
            Self::ScaleHeight => s.scale_height,
            Self::MidplaneTemperature => s.temperature,
            Self::MidplaneDensity => s.density,
            Self::MidplanePressure => s.pressure,
            Self::SoundSpeed => s.sound_speed,
            Self::Viscosity => s.viscosity,
            Self::RadialVelocity => s.radial_velocity,
            Self::AspectRatio => s.scale_height / r,
            Self::OpticalDepth => s.optical_depth,
            Self::EquipartitionField => (8.0 * PI * s.pressure).sqrt(),
        }
    }
}

/// Vertical profile of the density.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Vertical {
    /// Vertically isothermal: `rho = Sigma / (sqrt(2 pi) H) exp(-z^2 / 2 H^2)`.
    Gaussian,
    /// Polytrope of index `n` in the vertical gravity `-Omega^2 z`, with the midplane sound speed of the
    /// disk: `rho = rho_0 (1 - z^2 / Z^2)^n` for `|z| < Z = (2 (n + 1))^(1/2) H`, normalised to `Sigma`.
    Polytropic(f64),
}

/// Ratios that measure the disk's own assumptions at one radius.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Validity {
    /// Radiation over gas pressure at the midplane, `(a T^4 / 3) / (rho k T / mu m_p)`.
    pub radiation_to_gas_pressure: f64,
    /// Electron-scattering over Kramers opacity, `0.2 (1 + X) / (kappa_0 rho T^(-7/2))`.
    pub scattering_to_kramers_opacity: f64,
    /// Vertical optical depth `Sigma kappa` (the model needs it large).
    pub optical_depth: f64,
}

impl AlphaDisk {
    /// Check the parameters; every error names the argument.
    #[allow(clippy::too_many_arguments)]
    pub fn new(
        mass: f64,
        mdot: f64,
        alpha: f64,
        r_in: f64,
        mu: f64,
        kappa0: f64,
        hydrogen_fraction: f64,
        midplane_factor: f64,
    ) -> CoreResult<Self> {
        for (name, v) in [
            ("mass", mass),
            ("mdot", mdot),
            ("alpha", alpha),
            ("r_in", r_in),
            ("mu", mu),
            ("kappa0", kappa0),
            ("midplane_factor", midplane_factor),
        ] {
            checks::positive(name, [v].iter())?;
        }
        if alpha > 1.0 {
            return Err(CoreError::input(
                "alpha",
                format!("must not exceed 1 (turbulence would be supersonic), got {alpha}"),
            ));
        }
        if !(0.0..=1.0).contains(&hydrogen_fraction) {
            return Err(CoreError::input(
                "hydrogen_fraction",
                format!("must lie in [0, 1], got {hydrogen_fraction}"),
            ));
        }
        Ok(Self {
            mass,
            mdot,
            alpha,
            r_in,
            mu,
            kappa0,
            hydrogen_fraction,
            midplane_factor,
        })
    }

    /// Keplerian angular velocity `(G M / r^3)^(1/2)` \[s^-1\].
    pub fn omega(&self, r: f64) -> f64 {
        (G * self.mass / (r * r * r)).sqrt()
    }

    /// Solve the defining equations at radius `r > r_in` \[cm\].
    pub fn state(&self, r: f64) -> DiskState {
        let omega = self.omega(r);
        let f4 = 1.0 - (self.r_in / r).sqrt();
        let mdot_f4 = self.mdot * f4;
        let gas = K_B / (self.mu * M_P);
        // T_c^10 from the elimination in the module docs; written as a product of powers so that no
        // intermediate over- or underflows for supermassive or tiny systems.
        let t10 = self.kappa0
            / (32.0 * PI.powi(3) * SIGMA_SB * self.midplane_factor * self.alpha * self.alpha)
            * omega.powi(5)
            * mdot_f4.powi(3)
            / gas.powf(2.5);
        let temperature = t10.powf(0.1);
        let sound_speed = (gas * temperature).sqrt();
        let scale_height = sound_speed / omega;
        let viscosity = self.alpha * sound_speed * scale_height;
        let surface_density = mdot_f4 / (3.0 * PI * viscosity);
        let density = surface_density / (self.midplane_factor * scale_height);
        let pressure = density * sound_speed * sound_speed;
        let kappa = self.kappa0 * density * temperature.powf(-3.5);
        DiskState {
            omega,
            temperature,
            sound_speed,
            scale_height,
            viscosity,
            surface_density,
            density,
            pressure,
            optical_depth: surface_density * kappa,
            radial_velocity: -self.mdot / (2.0 * PI * r * surface_density),
        }
    }

    /// The assumption ratios of a solved state.
    pub fn validity_of(&self, s: &DiskState) -> Validity {
        let kappa_es = SIGMA_T * (1.0 + self.hydrogen_fraction) / (2.0 * M_P);
        let kappa_kramers = s.optical_depth / s.surface_density;
        Validity {
            radiation_to_gas_pressure: A_RAD * s.temperature.powi(4) / 3.0 / s.pressure,
            scattering_to_kramers_opacity: kappa_es / kappa_kramers,
            optical_depth: s.optical_depth,
        }
    }

    fn check_radii(&self, r: &ArrayViewD<'_, f64>) -> CoreResult<()> {
        checks::finite("r", r.iter())?;
        if let Some((i, &v)) = r.iter().enumerate().find(|(_, &v)| v <= self.r_in) {
            return Err(CoreError::input(
                "r",
                format!(
                    "must exceed the inner edge r_in = {:e} cm (the zero-torque edge), found {v:e} at flat index {i}",
                    self.r_in
                ),
            ));
        }
        Ok(())
    }

    /// `out[i] = f(state(r[i]), r[i], w[i])` in one pass that also records the worst assumption ratios.
    fn evaluate<F>(
        &self,
        r: &ArrayViewD<'_, f64>,
        w: &ArrayViewD<'_, f64>,
        f: F,
    ) -> (ArrayD<f64>, Validity)
    where
        F: Fn(&DiskState, f64, f64) -> f64 + Sync + Send,
    {
        let mut out = ArrayD::<f64>::zeros(r.raw_dim());
        let zip = Zip::from(&mut out).and(r).and(w);
        let fold = |acc: Validity, o: &mut f64, &x: &f64, &y: &f64| {
            let s = self.state(x);
            *o = f(&s, x, y);
            acc.worst(&self.validity_of(&s))
        };
        let worst = if r.len() >= PARALLEL_THRESHOLD {
            zip.par_fold(Validity::best, fold, |a, b| a.worst(&b))
        } else {
            zip.fold(Validity::best(), fold)
        };
        (out, worst)
    }

    /// One quantity at every radius of `r` \[cm\], and the worst assumption ratios met on the way.
    pub fn profile(
        &self,
        r: &ArrayViewD<'_, f64>,
        q: Quantity,
    ) -> CoreResult<(ArrayD<f64>, Validity)> {
        self.check_radii(r)?;
        Ok(self.evaluate(r, r, |s, x, _| q.of(s, x)))
    }

    /// Density \[g cm^-3\] at `(r, z)` (arrays of one shape) for the chosen vertical profile.
    pub fn density(
        &self,
        r: &ArrayViewD<'_, f64>,
        z: &ArrayViewD<'_, f64>,
        vertical: Vertical,
    ) -> CoreResult<(ArrayD<f64>, Validity)> {
        self.check_radii(r)?;
        checks::finite("z", z.iter())?;
        same_shape("r", r, "z", z)?;
        let polytrope_norm = match vertical {
            Vertical::Gaussian => 0.0,
            Vertical::Polytropic(n) => {
                if !(n.is_finite() && n > 0.0) {
                    return Err(CoreError::input(
                        "polytropic_index",
                        format!("must be finite and positive, got {n}"),
                    ));
                }
                // integral_{-1}^{1} (1 - x^2)^n dx = B(1/2, n + 1) = sqrt(pi) Gamma(n + 1) / Gamma(n + 3/2).
                (0.5 * PI.ln() + libm::lgamma(n + 1.0) - libm::lgamma(n + 1.5)).exp()
            }
        };
        Ok(self.evaluate(r, z, |s, _, height| match vertical {
            Vertical::Gaussian => {
                let u = height / s.scale_height;
                s.surface_density / ((2.0 * PI).sqrt() * s.scale_height) * (-0.5 * u * u).exp()
            }
            Vertical::Polytropic(n) => {
                let top = (2.0 * (n + 1.0)).sqrt() * s.scale_height;
                let u = height / top;
                if u.abs() >= 1.0 {
                    0.0
                } else {
                    s.surface_density / (top * polytrope_norm) * (1.0 - u * u).powf(n)
                }
            }
        }))
    }

    /// Midplane plasma beta `8 pi P_c / b_z^2` for a vertical field `b_z` \[G\] (same shape as `r`).
    pub fn plasma_beta(
        &self,
        r: &ArrayViewD<'_, f64>,
        b_z: &ArrayViewD<'_, f64>,
    ) -> CoreResult<(ArrayD<f64>, Validity)> {
        self.check_radii(r)?;
        checks::finite("b_z", b_z.iter())?;
        same_shape("r", r, "b_z", b_z)?;
        Ok(self.evaluate(r, b_z, |s, _, b| 8.0 * PI * s.pressure / (b * b)))
    }

    /// The three assumption ratios at every radius of `r`.
    pub fn validity(&self, r: &ArrayViewD<'_, f64>) -> CoreResult<[ArrayD<f64>; 3]> {
        self.check_radii(r)?;
        let mut prad = ArrayD::<f64>::zeros(r.raw_dim());
        let mut kes = ArrayD::<f64>::zeros(r.raw_dim());
        let mut tau = ArrayD::<f64>::zeros(r.raw_dim());
        let zip = Zip::from(&mut prad).and(&mut kes).and(&mut tau).and(r);
        let kernel = |p: &mut f64, k: &mut f64, t: &mut f64, &x: &f64| {
            let v = self.validity_of(&self.state(x));
            (*p, *k, *t) = (
                v.radiation_to_gas_pressure,
                v.scattering_to_kramers_opacity,
                v.optical_depth,
            );
        };
        if r.len() >= PARALLEL_THRESHOLD {
            zip.par_for_each(kernel);
        } else {
            zip.for_each(kernel);
        }
        Ok([prad, kes, tau])
    }
}

impl Validity {
    /// The identity of [`Validity::worst`]: no radiation pressure, no scattering, infinite depth.
    pub fn best() -> Self {
        Self {
            radiation_to_gas_pressure: 0.0,
            scattering_to_kramers_opacity: 0.0,
            optical_depth: f64::INFINITY,
        }
    }

    /// Element-wise worst of two: the larger ratios and the smaller optical depth.
    pub fn worst(&self, other: &Self) -> Self {
        Self {
            radiation_to_gas_pressure: self
                .radiation_to_gas_pressure
                .max(other.radiation_to_gas_pressure),
            scattering_to_kramers_opacity: self
                .scattering_to_kramers_opacity
                .max(other.scattering_to_kramers_opacity),
            optical_depth: self.optical_depth.min(other.optical_depth),
        }
    }

    /// Whether the gas-pressure, Kramers-opacity, optically thick assumptions all hold.
    pub fn holds(&self) -> bool {
        self.radiation_to_gas_pressure <= 1.0
            && self.scattering_to_kramers_opacity <= 1.0
            && self.optical_depth >= 1.0
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::constants::M_SUN;
    use approx::assert_relative_eq;
    use ndarray::{arr1, IxDyn};

    fn fkr_disk(g: f64) -> AlphaDisk {
        AlphaDisk::new(M_SUN, 1e16, 0.1, 1e9, 0.615, 5e24, 0.7, g).unwrap()
    }

    #[test]
    fn state_satisfies_the_defining_equations() {
        let d = fkr_disk((2.0 * PI).sqrt());
        for r in [1.01e9, 3e9, 1e10, 1e12] {
            let s = d.state(r);
            let f4 = 1.0 - (d.r_in / r).sqrt();
            // Source: Frank, King & Raine 2002 section 5.6, the equations of the module docs.
            assert_relative_eq!(
                s.viscosity * s.surface_density,
                d.mdot * f4 / (3.0 * PI),
                max_relative = 1e-12
            );
            assert_relative_eq!(
                s.scale_height * s.omega,
                s.sound_speed,
                max_relative = 1e-12
            );
            assert_relative_eq!(
                s.viscosity,
                d.alpha * s.sound_speed * s.scale_height,
                max_relative = 1e-12
            );
            let tau = s.surface_density * d.kappa0 * s.density * s.temperature.powf(-3.5);
            let lhs = 4.0 * SIGMA_SB * s.temperature.powi(4) / (3.0 * tau);
            let rhs = 3.0 * G * d.mass * d.mdot * f4 / (8.0 * PI * r.powi(3));
            assert_relative_eq!(lhs, rhs, max_relative = 1e-10);
            assert_relative_eq!(
                s.pressure,
                s.density * K_B * s.temperature / (d.mu * M_P),
                max_relative = 1e-12
            );
        }
    }

    #[test]
    fn one_zone_disk_is_near_the_textbook_coefficients() {
        // Source: Frank, King & Raine 2002 eq. 5.49 (coefficients recalled, PHYSICS.md Part B section 4 [mem-M]);
        // the printed set is not self-consistent, so only a factor of two is asked for.
        let d = AlphaDisk::new(M_SUN, 1e16, 1.0, 1.0, 0.615, 5e24, 0.7, 1.0).unwrap();
        let s = d.state(1e10);
        for (got, book) in [
            (s.surface_density, 5.2),
            (s.temperature, 1.4e4),
            (s.scale_height, 1.7e8),
        ] {
            assert!(got / book > 0.5 && got / book < 2.0, "{got} vs {book}");
        }
    }

    #[test]
    fn polytrope_tends_to_the_gaussian() {
        let d = fkr_disk((2.0 * PI).sqrt());
        let r = arr1(&[5e9, 5e9, 5e9]).into_dyn();
        let s = d.state(5e9);
        let z = arr1(&[0.0, 0.7 * s.scale_height, 1.5 * s.scale_height]).into_dyn();
        let (gauss, _) = d.density(&r.view(), &z.view(), Vertical::Gaussian).unwrap();
        let (poly, _) = d
            .density(&r.view(), &z.view(), Vertical::Polytropic(2000.0))
            .unwrap();
        assert_relative_eq!(gauss[0], s.density, max_relative = 1e-12);
        for i in 0..3 {
            assert_relative_eq!(poly[i], gauss[i], max_relative = 2e-3);
        }
    }

    #[test]
    fn bad_input_names_the_argument() {
        assert!(AlphaDisk::new(-1.0, 1e16, 0.1, 1e9, 0.6, 5e24, 0.7, 1.0)
            .unwrap_err()
            .to_string()
            .starts_with("mass:"));
        assert!(AlphaDisk::new(1.0, 1e16, 1.5, 1e9, 0.6, 5e24, 0.7, 1.0)
            .unwrap_err()
            .to_string()
            .starts_with("alpha:"));
        let d = fkr_disk(1.0);
        let r = arr1(&[2e9, 5e8]).into_dyn();
        let e = d.profile(&r.view(), Quantity::SurfaceDensity).unwrap_err();
        assert!(e.to_string().starts_with("r: must exceed the inner edge"));
        assert!(Quantity::from_name("colour").is_err());
        let r = ArrayD::from_elem(IxDyn(&[2]), 2e9);
        let z = ArrayD::zeros(IxDyn(&[3]));
        assert!(d.density(&r.view(), &z.view(), Vertical::Gaussian).is_err());
        assert!(d
            .density(&r.view(), &r.view(), Vertical::Polytropic(-1.0))
            .is_err());
    }

    #[test]
    fn validity_grows_toward_the_centre_of_a_bright_disk() {
        let d = AlphaDisk::new(
            10.0 * M_SUN,
            1e19,
            0.1,
            1e7,
            0.615,
            5e24,
            0.7,
            (2.0 * PI).sqrt(),
        )
        .unwrap();
        let r = arr1(&[1e8, 1e10]).into_dyn();
        let [prad, kes, _] = d.validity(&r.view()).unwrap();
        assert!(prad[0] > 1.0 && prad[1] < prad[0]);
        assert!(kes[0] > 1.0 && kes[1] < kes[0]);
        // The one-pass worst ratios of a profile agree with the point-wise ratios.
        let (_, worst) = d.profile(&r.view(), Quantity::SurfaceDensity).unwrap();
        assert_eq!(worst.radiation_to_gas_pressure, prad[0]);
        assert_eq!(worst.scattering_to_kramers_opacity, kes[0]);
        assert!(!worst.holds());
        let big = ArrayD::from_shape_fn(IxDyn(&[PARALLEL_THRESHOLD + 1]), |i| {
            1e8 + 1e6 * i[0] as f64
        });
        let (_, w) = d.profile(&big.view(), Quantity::Omega).unwrap();
        let [p, _, t] = d.validity(&big.view()).unwrap();
        assert_eq!(
            w.radiation_to_gas_pressure,
            p.fold(0.0, |a: f64, &b| a.max(b))
        );
        assert_eq!(
            w.optical_depth,
            t.fold(f64::INFINITY, |a: f64, &b| a.min(b))
        );
    }
}
