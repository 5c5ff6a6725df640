//! Compact objects: gravitational and ISCO radii, white-dwarf mass-radius relation, Eddington limits,
//! magnetospheric truncation and the inner edge of the disk that surrounds them.
//!
//! Scalar formulas first, then array kernels that validate their inputs (errors name the argument) and run
//! element-wise over any shape (`crate::numerics::elementwise`). CGS units throughout.

use ndarray::{ArrayD, ArrayViewD, Zip};

use crate::constants::{C, G, M_P, M_SUN, R_SUN, SIGMA_T};
use crate::error::{CoreError, CoreResult};
use crate::numerics::checks;
use crate::numerics::elementwise::{map1, map2, map3, same_shape, PARALLEL_THRESHOLD};

/// Nauenberg (1972) mass-radius fit: radius scale 0.0225 R_sun / mu_e.
pub const NAUENBERG_RADIUS_COEFF: f64 = 0.0225;
/// Nauenberg (1972) mass-radius fit: limiting mass 5.816 M_sun / mu_e^2.
pub const NAUENBERG_MASS_COEFF: f64 = 5.816;

/// Gravitational radius `G M / c^2` \[cm\] of a mass \[g\].
pub fn gravitational_radius(mass: f64) -> f64 {
    G * mass / (C * C)
}

/// Radius of the innermost stable circular orbit of a Kerr black hole in units of `G M / c^2`
/// (Bardeen, Press & Teukolsky 1972), for a dimensionless spin `0 <= spin <= 1`.
///
/// `Z1 = 1 + (1 - a^2)^(1/3) [(1 + a)^(1/3) + (1 - a)^(1/3)]`, `Z2 = (3 a^2 + Z1^2)^(1/2)`,
/// `r = 3 + Z2 -/+ [(3 - Z1)(3 + Z1 + 2 Z2)]^(1/2)` (upper sign prograde).
pub fn isco_in_gravitational_radii(spin: f64, prograde: bool) -> f64 {
    let a = spin;
    let z1 = 1.0 + (1.0 - a * a).cbrt() * ((1.0 + a).cbrt() + (1.0 - a).cbrt());
    let z2 = (3.0 * a * a + z1 * z1).sqrt();
    // (3 - Z1) >= 0 for 0 <= a <= 1; guard the last ulp at a = 1.
    let root = ((3.0 - z1).max(0.0) * (3.0 + z1 + 2.0 * z2)).sqrt();
    if prograde {
        3.0 + z2 - root
    } else {
        3.0 + z2 + root
    }
}

/// Outer event horizon `r_+ = (1 + (1 - a^2)^(1/2)) G M / c^2` \[cm\].
pub fn horizon_radius(mass: f64, spin: f64) -> f64 {
    gravitational_radius(mass) * (1.0 + (1.0 - spin * spin).max(0.0).sqrt())
}

/// Limiting mass of the Nauenberg (1972) relation, `5.816 M_sun / mu_e^2` \[g\].
pub fn nauenberg_limiting_mass(mu_e: f64) -> f64 {
    NAUENBERG_MASS_COEFF * M_SUN / (mu_e * mu_e)
}

/// White-dwarf radius \[cm\] from Nauenberg (1972):
/// `R = (0.0225 R_sun / mu_e) [1 - (M/M3)^(4/3)]^(1/2) / (M/M3)^(1/3)`, `M3 = 5.816 M_sun / mu_e^2`.
/// Only defined for `0 < M < M3`.
pub fn white_dwarf_radius(mass: f64, mu_e: f64) -> f64 {
    let x = mass / nauenberg_limiting_mass(mu_e);
    NAUENBERG_RADIUS_COEFF * R_SUN / mu_e * (1.0 - x.powf(4.0 / 3.0)).sqrt() / x.cbrt()
}

/// Eddington luminosity \[erg s^-1\] for pure hydrogen and Thomson (electron) scattering:
/// `L = 4 pi G M m_p c / sigma_T`.
pub fn eddington_luminosity(mass: f64) -> f64 {
    4.0 * std::f64::consts::PI * G * mass * M_P * C / SIGMA_T
}

/// Eddington accretion rate \[g s^-1\], `L_Edd / (efficiency c^2)`.
pub fn eddington_accretion_rate(mass: f64, efficiency: f64) -> f64 {
    eddington_luminosity(mass) / (efficiency * C * C)
}

/// Magnetospheric truncation radius \[cm\], `xi (mu^4 / (2 G M Mdot^2))^(1/7)`, from the balance of the
/// dipole's magnetic pressure `B^2 / 8 pi` with the ram pressure `rho v^2 / 2` of spherical free fall.
/// A zero magnetic moment gives zero (no truncation).
pub fn magnetospheric_radius(moment: f64, mass: f64, mdot: f64, xi: f64) -> f64 {
    xi * (moment.powi(4) / (2.0 * G * mass * mdot * mdot)).powf(1.0 / 7.0)
}

/// Which radius sets the inner edge of the disk.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
#[repr(u8)]
pub enum EdgeSetter {
    /// The magnetospheric truncation radius.
    Magnetosphere = 0,
    /// The surface of the object (the horizon for a black hole).
    Surface = 1,
    /// The innermost stable circular orbit.
    Isco = 2,
}

/// Inner edge and its three candidates at one point.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct InnerEdge {
    /// `max(truncation, surface, isco)` \[cm\].
    pub radius: f64,
    /// Magnetospheric truncation radius \[cm\] (zero without a field).
    pub truncation: f64,
    /// Surface radius \[cm\] as given.
    pub surface: f64,
    /// ISCO radius \[cm\].
    pub isco: f64,
    /// Which candidate is the largest (ties go to the ISCO, then the surface).
    pub set_by: EdgeSetter,
}

/// The inner edge `max(truncation, surface, isco)` for an object of `mass` \[g\], `spin`, surface `radius`
/// \[cm\], dipole `moment` \[G cm^3\] fed at `mdot` \[g s^-1\].
pub fn inner_edge(
    mass: f64,
    spin: f64,
    radius: f64,
    moment: f64,
    mdot: f64,
    xi: f64,
    prograde: bool,
) -> InnerEdge {
    let isco = gravitational_radius(mass) * isco_in_gravitational_radii(spin, prograde);
    let truncation = magnetospheric_radius(moment, mass, mdot, xi);
    let (edge, set_by) = pick_edge(truncation, radius, isco);
    InnerEdge {
        radius: edge,
        truncation,
        surface: radius,
        isco,
        set_by,
    }
}

/// The largest of the three candidates and which it is; ties go to the ISCO, then the surface.
fn pick_edge(truncation: f64, surface: f64, isco: f64) -> (f64, EdgeSetter) {
    let (mut edge, mut set_by) = (isco, EdgeSetter::Isco);
    if surface > edge {
        (edge, set_by) = (surface, EdgeSetter::Surface);
    }
    if truncation > edge {
        (edge, set_by) = (truncation, EdgeSetter::Magnetosphere);
    }
    (edge, set_by)
}

fn check_spin(spin: &ArrayViewD<'_, f64>) -> CoreResult<()> {
    for (i, &a) in spin.iter().enumerate() {
        if !(0.0..=1.0).contains(&a) {
            return Err(CoreError::input(
                "spin",
                format!(
                    "must lie in [0, 1] (use prograde=False for retrograde orbits), found {a} at flat index {i}"
                ),
            ));
        }
    }
    Ok(())
}

fn check_scalar_positive(arg: &str, v: f64) -> CoreResult<()> {
    checks::positive(arg, [v].iter())
}

/// Array form of [`gravitational_radius`]; `mass` must be positive.
pub fn gravitational_radius_array(mass: &ArrayViewD<'_, f64>) -> CoreResult<ArrayD<f64>> {
    checks::positive("mass", mass.iter())?;
    Ok(map1(mass, gravitational_radius))
}

/// ISCO radius \[cm\] for arrays of `mass` \[g\] and `spin` of one shape.
pub fn isco_radius_array(
    mass: &ArrayViewD<'_, f64>,
    spin: &ArrayViewD<'_, f64>,
    prograde: bool,
) -> CoreResult<ArrayD<f64>> {
    checks::positive("mass", mass.iter())?;
    check_spin(spin)?;
    map2(["mass", "spin"], mass, spin, |m, a| {
        gravitational_radius(m) * isco_in_gravitational_radii(a, prograde)
    })
}

/// Outer horizon radius \[cm\] for arrays of `mass` \[g\] and `spin` of one shape.
pub fn horizon_radius_array(
    mass: &ArrayViewD<'_, f64>,
    spin: &ArrayViewD<'_, f64>,
) -> CoreResult<ArrayD<f64>> {
    checks::positive("mass", mass.iter())?;
    check_spin(spin)?;
    map2(["mass", "spin"], mass, spin, horizon_radius)
}

/// White-dwarf radius \[cm\] for an array of `mass` \[g\]; every mass must lie below the limiting mass.
pub fn white_dwarf_radius_array(mass: &ArrayViewD<'_, f64>, mu_e: f64) -> CoreResult<ArrayD<f64>> {
    check_scalar_positive("mu_e", mu_e)?;
    checks::positive("mass", mass.iter())?;
    let limit = nauenberg_limiting_mass(mu_e);
    if let Some((i, m)) = mass.iter().enumerate().find(|(_, &m)| m >= limit) {
        return Err(CoreError::input(
            "mass",
            format!(
                "must lie below the limiting mass 5.816 M_sun / mu_e^2 = {limit:.6e} g, found {m} at flat index {i}"
            ),
        ));
    }
    Ok(map1(mass, |m| white_dwarf_radius(m, mu_e)))
}

/// Eddington luminosity \[erg s^-1\] for an array of `mass` \[g\].
pub fn eddington_luminosity_array(mass: &ArrayViewD<'_, f64>) -> CoreResult<ArrayD<f64>> {
    checks::positive("mass", mass.iter())?;
    Ok(map1(mass, eddington_luminosity))
}

/// Eddington accretion rate \[g s^-1\] for arrays of `mass` \[g\] and `efficiency` of one shape.
pub fn eddington_accretion_rate_array(
    mass: &ArrayViewD<'_, f64>,
    efficiency: &ArrayViewD<'_, f64>,
) -> CoreResult<ArrayD<f64>> {
    checks::positive("mass", mass.iter())?;
    checks::positive("efficiency", efficiency.iter())?;
    if let Some((i, e)) = efficiency.iter().enumerate().find(|(_, &e)| e > 1.0) {
        return Err(CoreError::input(
            "efficiency",
            format!("must not exceed 1 (it is a fraction of the rest-mass energy), found {e} at flat index {i}"),
        ));
    }
    map2(
        ["mass", "efficiency"],
        mass,
        efficiency,
        eddington_accretion_rate,
    )
}

/// Magnetospheric radius \[cm\] for arrays of `magnetic_moment` \[G cm^3\], `mass` \[g\], `mdot` \[g s^-1\].
pub fn magnetospheric_radius_array(
    moment: &ArrayViewD<'_, f64>,
    mass: &ArrayViewD<'_, f64>,
    mdot: &ArrayViewD<'_, f64>,
    xi: f64,
) -> CoreResult<ArrayD<f64>> {
    checks::non_negative("magnetic_moment", moment.iter())?;
    checks::positive("mass", mass.iter())?;
    checks::positive("mdot", mdot.iter())?;
    check_scalar_positive("xi", xi)?;
    map3(
        ["magnetic_moment", "mass", "mdot"],
        moment,
        mass,
        mdot,
        |mu, m, md| magnetospheric_radius(mu, m, md, xi),
    )
}

/// Arrays of the inner edge, its candidates and which one set it (codes of [`EdgeSetter`]).
#[derive(Debug, Clone)]
pub struct InnerEdgeArrays {
    /// Inner edge \[cm\].
    pub radius: ArrayD<f64>,
    /// Magnetospheric truncation radius \[cm\].
    pub truncation: ArrayD<f64>,
    /// ISCO radius \[cm\].
    pub isco: ArrayD<f64>,
    /// `EdgeSetter as u8` per element.
    pub set_by: ArrayD<u8>,
}

/// Inputs of [`inner_edge_array`], all of one shape.
#[derive(Debug, Clone, Copy)]
pub struct ObjectArrays<'a, 'v> {
    /// Mass \[g\].
    pub mass: &'a ArrayViewD<'v, f64>,
    /// Dimensionless spin in \[0, 1\].
    pub spin: &'a ArrayViewD<'v, f64>,
    /// Surface radius \[cm\] (non-negative).
    pub radius: &'a ArrayViewD<'v, f64>,
    /// Dipole moment \[G cm^3\] (non-negative).
    pub moment: &'a ArrayViewD<'v, f64>,
    /// Accretion rate \[g s^-1\].
    pub mdot: &'a ArrayViewD<'v, f64>,
}

/// Element-wise [`inner_edge`] over arrays of one shape.
pub fn inner_edge_array(
    obj: ObjectArrays<'_, '_>,
    xi: f64,
    prograde: bool,
) -> CoreResult<InnerEdgeArrays> {
    checks::positive("mass", obj.mass.iter())?;
    check_spin(obj.spin)?;
    checks::non_negative("radius", obj.radius.iter())?;
    checks::non_negative("magnetic_moment", obj.moment.iter())?;
    checks::positive("mdot", obj.mdot.iter())?;
    check_scalar_positive("xi", xi)?;
    same_shape("mass", obj.mass, "spin", obj.spin)?;
    same_shape("mass", obj.mass, "radius", obj.radius)?;
    same_shape("mass", obj.mass, "magnetic_moment", obj.moment)?;
    same_shape("mass", obj.mass, "mdot", obj.mdot)?;
    let truncation = map3(
        ["magnetic_moment", "mass", "mdot"],
        obj.moment,
        obj.mass,
        obj.mdot,
        |mu, m, md| magnetospheric_radius(mu, m, md, xi),
    )?;
    let isco = map2(["mass", "spin"], obj.mass, obj.spin, |m, a| {
        gravitational_radius(m) * isco_in_gravitational_radii(a, prograde)
    })?;
    let mut radius = ArrayD::<f64>::zeros(obj.mass.raw_dim());
    let mut set_by = ArrayD::<u8>::zeros(obj.mass.raw_dim());
    let zip = Zip::from(&mut radius)
        .and(&mut set_by)
        .and(&truncation)
        .and(obj.radius)
        .and(&isco);
    let kernel = |r: &mut f64, s: &mut u8, &t: &f64, &rs: &f64, &i: &f64| {
        let (edge, who) = pick_edge(t, rs, i);
        *r = edge;
        *s = who as u8;
    };
    if obj.mass.len() >= PARALLEL_THRESHOLD {
        zip.par_for_each(kernel);
    } else {
        zip.for_each(kernel);
    }
    Ok(InnerEdgeArrays {
        radius,
        truncation,
        isco,
        set_by,
    })
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_relative_eq;
    use ndarray::{arr1, IxDyn};

    #[test]
    fn isco_limits_of_bardeen_press_teukolsky() {
        // Source: Bardeen, Press & Teukolsky 1972: a = 0 -> 6, a = 1 -> 1 (prograde), 9 (retrograde).
        assert_relative_eq!(
            isco_in_gravitational_radii(0.0, true),
            6.0,
            max_relative = 1e-14
        );
        assert_relative_eq!(
            isco_in_gravitational_radii(0.0, false),
            6.0,
            max_relative = 1e-14
        );
        assert_relative_eq!(
            isco_in_gravitational_radii(1.0, true),
            1.0,
            max_relative = 1e-12
        );
        assert_relative_eq!(
            isco_in_gravitational_radii(1.0, false),
            9.0,
            max_relative = 1e-14
        );
        // Monotone: prograde shrinks, retrograde grows with spin.
        let pro: Vec<f64> = (0..=10)
            .map(|i| isco_in_gravitational_radii(i as f64 / 10.0, true))
            .collect();
        assert!(pro.windows(2).all(|w| w[1] < w[0]));
    }

    #[test]
    fn handbook_magnitudes() {
        // Source: PHYSICS.md Part B section 5 (computed there): r_g(M_sun) = 1.4766e5 cm.
        assert_relative_eq!(gravitational_radius(M_SUN), 1.4766e5, max_relative = 1e-4);
        // Source: PHYSICS.md Part B section 7 (computed there): L_Edd = 1.257e38 erg/s per M_sun.
        assert_relative_eq!(eddington_luminosity(M_SUN), 1.257e38, max_relative = 1e-3);
        assert_relative_eq!(
            eddington_accretion_rate(M_SUN, 0.1),
            1.40e18,
            max_relative = 5e-3
        );
        // Source: PHYSICS.md Part B section 5 (computed from eq. 5.3): r_A = 6.26e8 cm, 1 M_sun, 1e30, 1e16.
        assert_relative_eq!(
            magnetospheric_radius(1e30, M_SUN, 1e16, 1.0),
            6.26e8,
            max_relative = 2e-3
        );
        // Source: Nauenberg 1972 with mu_e = 2: prefactor 0.01125 R_sun, limiting mass 1.454 M_sun.
        assert_relative_eq!(
            nauenberg_limiting_mass(2.0) / M_SUN,
            1.454,
            max_relative = 1e-12
        );
        assert_relative_eq!(white_dwarf_radius(nauenberg_limiting_mass(2.0), 2.0), 0.0);
    }

    #[test]
    fn inner_edge_picks_the_largest() {
        // Black hole: no surface outside the ISCO, no field.
        let bh = inner_edge(
            10.0 * M_SUN,
            0.0,
            horizon_radius(10.0 * M_SUN, 0.0),
            0.0,
            1e18,
            0.5,
            true,
        );
        assert_eq!(bh.set_by, EdgeSetter::Isco);
        assert_relative_eq!(
            bh.radius,
            6.0 * gravitational_radius(10.0 * M_SUN),
            max_relative = 1e-14
        );
        // Maximal spin: horizon and ISCO coincide; the tie goes to the ISCO.
        let x = inner_edge(M_SUN, 1.0, horizon_radius(M_SUN, 1.0), 0.0, 1e18, 0.5, true);
        assert_eq!(x.set_by, EdgeSetter::Isco);
        // Strongly magnetised star: truncated.
        let ns = inner_edge(1.4 * M_SUN, 0.0, 1.2e6, 1e30, 1e16, 0.5, true);
        assert_eq!(ns.set_by, EdgeSetter::Magnetosphere);
        // White dwarf without field: its surface.
        let wd = inner_edge(0.8 * M_SUN, 0.0, 7e8, 0.0, 1e17, 0.5, true);
        assert_eq!(wd.set_by, EdgeSetter::Surface);
        assert_eq!(wd.radius, 7e8);
    }

    #[test]
    fn array_kernels_validate_and_name_arguments() {
        let m = arr1(&[M_SUN, -1.0]).into_dyn();
        let a = arr1(&[0.0, 0.5]).into_dyn();
        let e = isco_radius_array(&m.view(), &a.view(), true).unwrap_err();
        assert!(e.to_string().starts_with("mass:"));
        let m = arr1(&[M_SUN, M_SUN]).into_dyn();
        let bad = arr1(&[0.0, 1.5]).into_dyn();
        let e = isco_radius_array(&m.view(), &bad.view(), true).unwrap_err();
        assert!(e.to_string().starts_with("spin:"));
        let e = white_dwarf_radius_array(&arr1(&[1.5 * M_SUN]).into_dyn().view(), 2.0).unwrap_err();
        assert!(e.to_string().contains("limiting mass"));
        let e = eddington_accretion_rate_array(&m.view(), &arr1(&[0.1, 1.2]).into_dyn().view())
            .unwrap_err();
        assert!(e.to_string().starts_with("efficiency:"));
        let z = ArrayD::<f64>::zeros(IxDyn(&[2]));
        let ones = ArrayD::<f64>::ones(IxDyn(&[3]));
        let e = magnetospheric_radius_array(&z.view(), &m.view(), &ones.view(), 0.5).unwrap_err();
        assert!(e
            .to_string()
            .starts_with("mdot: has shape [3] but magnetic_moment"));
        let bad_mdot = arr1(&[1e17, f64::NAN]).into_dyn();
        let (mv, zv, bv) = (m.view(), z.view(), bad_mdot.view());
        let obj = ObjectArrays {
            mass: &mv,
            spin: &zv,
            radius: &zv,
            moment: &zv,
            mdot: &bv,
        };
        assert!(inner_edge_array(obj, 0.5, true)
            .unwrap_err()
            .to_string()
            .starts_with("mdot:"));
    }

    #[test]
    fn inner_edge_arrays_match_scalar_form() {
        let n = PARALLEL_THRESHOLD + 3;
        let mass = ArrayD::from_shape_fn(IxDyn(&[n]), |i| (1.0 + i[0] as f64 / n as f64) * M_SUN);
        let spin = ArrayD::from_shape_fn(IxDyn(&[n]), |i| i[0] as f64 / n as f64);
        let radius = ArrayD::from_elem(IxDyn(&[n]), 1.2e6);
        let moment = ArrayD::from_shape_fn(IxDyn(&[n]), |i| 1e26 * (i[0] % 7) as f64);
        let mdot = ArrayD::from_elem(IxDyn(&[n]), 1e17);
        let views = [
            mass.view(),
            spin.view(),
            radius.view(),
            moment.view(),
            mdot.view(),
        ];
        let obj = ObjectArrays {
            mass: &views[0],
            spin: &views[1],
            radius: &views[2],
            moment: &views[3],
            mdot: &views[4],
        };
        let out = inner_edge_array(obj, 0.5, true).unwrap();
        for i in [0, 5, n / 2, n - 1] {
            let e = inner_edge(mass[i], spin[i], radius[i], moment[i], mdot[i], 0.5, true);
            assert_eq!(out.radius[i], e.radius);
            assert_eq!(out.set_by[i], e.set_by as u8);
        }
    }
}
