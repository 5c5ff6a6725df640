//! Population sweeps in Rust: for each system, alpha disk -> built-in turbulence template -> vertical
//! transport speeds -> steady flux -> critical radius by the inclination criterion, in parallel over
//! systems with rayon.
//!
//! The same pipeline as `fluxfunnel.population.jet_capability` with a built-in template (uniform
//! `eta = nu/Pm` plus the buoyant rise `v_z/c_s = A zeta^p / (1 + beta_q/beta)`; A = 0 is plain diffusion).

use ndarray::Array2;
use rayon::prelude::*;

use crate::disk::AlphaDisk;
use crate::error::{CoreError, CoreResult};
use crate::flux::model::{FluxSystem, InnerEdge, OuterEdge};
use crate::numerics::Cancel;
use crate::vertical::{bend_columns, Surface};

/// One system.
#[derive(Debug, Clone, Copy)]
pub struct System {
    /// Central mass \[g\].
    pub mass: f64,
    /// Accretion rate \[g s^-1\].
    pub mdot: f64,
    /// Environment's uniform vertical field \[G\].
    pub external_field: f64,
    /// Inner edge of the disk \[cm\].
    pub inner_radius: f64,
    /// Outer radius where the field is anchored \[cm\].
    pub outer_radius: f64,
}

/// Settings shared by every system of a sweep.
#[derive(Debug, Clone, Copy)]
pub struct Settings {
    /// Viscosity parameter.
    pub alpha: f64,
    /// Magnetic Prandtl number nu/eta.
    pub pm: f64,
    /// Buoyant rise at z = H for weak fields, in units of c_s (0: plain diffusion).
    pub amplitude: f64,
    /// Growth power of the rise with height.
    pub power: f64,
    /// Midplane beta below which the rise is suppressed.
    pub beta_quench: f64,
    /// Matching surface in units of H.
    pub top: f64,
    /// Radii per system.
    pub n_r: usize,
    /// Heights per column.
    pub nz: usize,
    /// Inclination threshold \[degrees\].
    pub threshold_deg: f64,
    /// Boundary layers left out of the critical-radius search (fractions, as in Python).
    pub inner_buffer: f64,
    /// See `inner_buffer`.
    pub outer_buffer: f64,
    /// Disk microphysics: mean molecular weight, Kramers coefficient, hydrogen fraction, midplane factor.
    pub disk: [f64; 4],
}

/// What a sweep returns per system.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Outcome {
    /// Critical radius \[cm\] (NaN when not reached).
    pub critical_radius: f64,
    /// Whether the criterion holds at the inner edge (outside its buffer).
    pub reached: bool,
    /// `2 pi psi(r_0)` \[G cm^2\].
    pub flux_inner: f64,
    /// `B_rs/B_z` at the first radius outside the inner buffer.
    pub inner_tan_inclination: f64,
    /// Whether the disk's own assumptions hold on the whole grid.
    pub disk_valid: bool,
}

/// Outermost radius of the region, from the inner edge (outside its buffer), where the surface field leans
/// more than `threshold_deg` from the vertical; linear interpolation in ln r to the crossing. Returns
/// `(radius, reached, first index searched)`.
pub fn critical_radius_inclination(
    r: &[f64],
    b_z: &[f64],
    b_rs: &[f64],
    threshold_deg: f64,
    inner_buffer: f64,
    outer_buffer: f64,
) -> (f64, bool, usize) {
    let n = r.len();
    let keep: Vec<usize> = (0..n)
        .filter(|&i| r[i] >= r[0] * (1.0 + inner_buffer) && r[i] <= r[n - 1] * (1.0 - outer_buffer))
        .collect();
    if keep.is_empty() {
        return (f64::NAN, false, 0);
    }
    let measure = |i: usize| b_rs[i].atan2(b_z[i]).to_degrees() - threshold_deg;
    let first = keep[0];
    if measure(first) <= 0.0 {
        return (f64::NAN, false, first);
    }
    for w in keep.windows(2) {
        let (a, b) = (w[0], w[1]);
        let (m0, m1) = (measure(a), measure(b));
        if m1 <= 0.0 {
            let frac = m0 / (m0 - m1);
            let x = r[a].ln() + frac * (r[b].ln() - r[a].ln());
            return (x.exp(), true, first);
        }
    }
    (r[*keep.last().unwrap_or(&first)], true, first)
}

/// Temperature [K] below which the disk model flags its Kramers opacity and mu as inapplicable; the same
/// common-practice default as `fluxfunnel.disk.AlphaDisk(ionisation_temperature=1e4)`.
const DEFAULT_IONISATION_TEMPERATURE: f64 = 1.0e4;

fn one(sys: &System, s: &Settings) -> CoreResult<Outcome> {
    let [mu, kappa0, x_h, factor] = s.disk;
    let disk = AlphaDisk::new(
        sys.mass,
        sys.mdot,
        s.alpha,
        sys.inner_radius,
        mu,
        kappa0,
        x_h,
        factor,
        DEFAULT_IONISATION_TEMPERATURE,
    )?;
    let n = s.n_r;
    let (lo, hi) = ((1.1 * sys.inner_radius).ln(), sys.outer_radius.ln());
    let r: Vec<f64> = (0..n)
        .map(|i| (lo + (hi - lo) * i as f64 / (n - 1) as f64).exp())
        .collect();
    let states: Vec<_> = r.iter().map(|&ri| disk.state(ri)).collect();
    let valid = states.iter().all(|st| disk.validity_of(st).holds());
    let zeta: Vec<f64> = (0..s.nz)
        .map(|k| s.top * k as f64 / (s.nz - 1) as f64)
        .collect();
    let mut eta = Array2::<f64>::zeros((n, s.nz));
    let mut v_z = Array2::<f64>::zeros((n, s.nz));
    let mut v_r = Array2::<f64>::zeros((n, s.nz));
    let b2 = sys.external_field * sys.external_field;
    for (i, st) in states.iter().enumerate() {
        let e = st.viscosity / (s.pm * st.sound_speed * st.scale_height);
        let beta = 8.0 * std::f64::consts::PI * st.pressure / b2;
        for (k, z) in zeta.iter().enumerate() {
            eta[[i, k]] = e;
            v_z[[i, k]] = if s.amplitude > 0.0 {
                s.amplitude * z.powf(s.power) / (1.0 + s.beta_quench / beta)
            } else {
                0.0
            };
            v_r[[i, k]] = st.radial_velocity / st.sound_speed;
        }
    }
    let z = ndarray::Array1::from(zeta);
    let grad = ndarray::Array1::<f64>::zeros(n);
    let bend = bend_columns(
        z.view(),
        eta.view(),
        v_z.view(),
        v_r.view(),
        grad.view(),
        Surface::SplitOnly,
        None,
    )?;
    let u_adv: Vec<f64> = (0..n)
        .map(|i| bend.u_adv[i] * states[i].sound_speed)
        .collect();
    let u_dif: Vec<f64> = (0..n)
        .map(|i| bend.u_dif[i] * states[i].sound_speed)
        .collect();
    let psi_ext: Vec<f64> = r
        .iter()
        .map(|ri| 0.5 * sys.external_field * ri * ri)
        .collect();
    let model = FluxSystem::new(
        &r,
        &u_adv,
        &u_dif,
        &vec![0.0; n],
        &psi_ext,
        InnerEdge::Same,
        OuterEdge::Anchored,
    )?;
    let (psi, b_rs) = model.steady_state()?;
    let b_z = model.b_z(&psi);
    let (radius, reached, first) = critical_radius_inclination(
        &r,
        &b_z,
        &b_rs,
        s.threshold_deg,
        s.inner_buffer,
        s.outer_buffer,
    );
    Ok(Outcome {
        critical_radius: radius,
        reached,
        flux_inner: 2.0 * std::f64::consts::PI * psi[0],
        inner_tan_inclination: b_rs[first] / b_z[first],
        disk_valid: valid,
    })
}

/// Run every system in parallel; stops early (Interrupted) when `cancel` is set.
pub fn sweep(systems: &[System], settings: &Settings, cancel: &Cancel) -> CoreResult<Vec<Outcome>> {
    if settings.n_r < 16 || settings.nz < 8 {
        return Err(CoreError::input("n_r", "needs n_r >= 16 and nz >= 8"));
    }
    for (i, sys) in systems.iter().enumerate() {
        let ok = sys.outer_radius > 10.0 * sys.inner_radius && sys.external_field > 0.0;
        if !ok || sys.outer_radius.is_nan() {
            return Err(CoreError::input(
                "outer_radius",
                format!("system {i}: needs outer_radius > 10 inner_radius and a positive external field"),
            ));
        }
    }
    systems
        .par_iter()
        .map(|sys| {
            cancel.check()?;
            let out = one(sys, settings);
            cancel.advance(1);
            out
        })
        .collect()
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn crossing_is_interpolated_in_log_radius() {
        // tan i = 1 (45 deg) inside r = 10, 0 outside: the 30 deg crossing lies a third of the way in ln r
        // between the last node above and the first node below (linear interpolation of the angle).
        let r: Vec<f64> = (0..41).map(|i| 10f64.powf(i as f64 / 20.0)).collect();
        let b_z = vec![1.0; 41];
        let b_rs: Vec<f64> = r
            .iter()
            .map(|&x| if x < 10.0 + 1e-9 { 1.0 } else { 0.0 })
            .collect();
        let (rc, reached, _) = critical_radius_inclination(&r, &b_z, &b_rs, 30.0, 0.0, 0.0);
        assert!(reached);
        let expect = (r[20].ln() + (15.0 / 45.0) * (r[21].ln() - r[20].ln())).exp();
        approx::assert_relative_eq!(rc, expect, max_relative = 1e-12);
        let (rc2, reached2, _) =
            critical_radius_inclination(&r, &b_z, &vec![0.1; 41], 30.0, 0.0, 0.0);
        assert!(!reached2 && rc2.is_nan());
    }
}
