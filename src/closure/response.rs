//! The second route: coefficients from the fluctuation fields themselves, by their linear response.
//!
//! For a periodic box holding fluctuations `u`, `b` (shape (3, nx, ny, nz)), each unit mean field
//! `B = e_l` and each unit mean-field gradient `d_n B_m = 1` is imposed in turn, the linear responses
//! `db/dt` (induction) and `du/dt` (Lorentz force and buoyancy, projected on solenoidal fields in Fourier
//! space) are built from the fields, and `tau (<u x db/dt> + <du/dt x b>)` is averaged over the box. No
//! spectral shape is assumed: correlations and projections are evaluated on the fields as they are.
//!
//! * uniform `B = e_l`: `db/dt = d_l u`, `du/dt = d_l b / q`, buoyancy `du_j/dt = g b_l P_jz / (q c*^2)`;
//! * gradient `d_n B_m`: `db_k/dt = -u_n delta_km`, `du_j/dt = [delta_jm b_n - w (K_jm b_n)] / q`, the second
//!   term being the pressure of the non-uniform field (`w = 2` consistent, 1 partial, 0 none).
//!
//! Derivatives are spectral; the Nyquist wavenumber of an even axis is given zero derivative.

// Tensor algebra reads best with explicit indices i, j, k as in the formulas.
#![allow(clippy::needless_range_loop)]

#[cfg(test)]
use ndarray::Array4;
use ndarray::{Array1, Array3, ArrayView4, Axis, Zip};
use rustfft::num_complex::Complex64;
use rustfft::FftPlanner;

use super::tensor::{levi, Mat3, Ten3};
use crate::error::{CoreError, CoreResult};
use crate::numerics::fft::wavenumbers_odd;
use crate::numerics::Cancel;

/// Box-averaged response coefficients, each `a` coefficient of `B_l`, each `b` of `d_l B_m` as `[i][m][l]`.
#[derive(Debug, Clone)]
pub struct Response {
    /// Kinetic `a_il`.
    pub a_kinetic: Mat3,
    /// Magnetic (Lorentz-force) `a_il`.
    pub a_magnetic: Mat3,
    /// Buoyancy `a_il`.
    pub a_buoyancy: Mat3,
    /// Kinetic `b_iml`.
    pub b_kinetic: Ten3,
    /// Magnetic `b_iml`.
    pub b_magnetic: Ten3,
}

/// Physical and modelling parameters of the response.
#[derive(Debug, Clone, Copy)]
pub struct ResponseSettings {
    /// Correlation time \[s\].
    pub tau: f64,
    /// Density \[g cm^-3\].
    pub rho: f64,
    /// Signed gravity `g = -g_z` \[cm s^-2\].
    pub gravity: f64,
    /// `c*^2` of the thermal response \[cm^2 s^-2\] (unused when gravity is 0).
    pub response_speed2: f64,
    /// Grid spacings \[cm\].
    pub spacing: [f64; 3],
    /// Weight of the pressure term in the gradient response (2 consistent, 1 partial, 0 none).
    pub pressure_weight: f64,
    /// 1 to project the buoyancy force, 0 not to.
    pub buoyancy_weight: f64,
}

fn fft3(data: &mut Array3<Complex64>, inverse: bool) {
    let mut planner = FftPlanner::<f64>::new();
    for axis in 0..3 {
        let n = data.len_of(Axis(axis));
        let plan = if inverse {
            planner.plan_fft_inverse(n)
        } else {
            planner.plan_fft_forward(n)
        };
        Zip::from(data.lanes_mut(Axis(axis))).par_for_each(|mut lane| {
            let mut buf: Vec<Complex64> = lane.iter().copied().collect();
            plan.process(&mut buf);
            for (x, y) in lane.iter_mut().zip(buf) {
                *x = y;
            }
        });
    }
    if inverse {
        let norm = 1.0 / data.len() as f64;
        data.mapv_inplace(|x| x * norm);
    }
}

/// Box average of the product of two real fields.
fn mean_product(a: &Array3<f64>, b: &Array3<f64>) -> f64 {
    let s: f64 = Zip::from(a)
        .and(b)
        .par_fold(|| 0.0, |acc, x, y| acc + x * y, |p, q| p + q);
    s / a.len() as f64
}

/// The response coefficients of the fluctuation fields `u` \[cm s^-1\] and `b` \[G\].
pub fn field_response(
    u: ArrayView4<'_, f64>,
    b: ArrayView4<'_, f64>,
    set: &ResponseSettings,
    cancel: &Cancel,
) -> CoreResult<Response> {
    if u.shape() != b.shape() {
        return Err(CoreError::input(
            "b",
            format!("shape {:?} differs from u's {:?}", b.shape(), u.shape()),
        ));
    }
    if u.len_of(Axis(0)) != 3 || u.shape()[1..].iter().any(|&n| n < 4) {
        return Err(CoreError::input(
            "u",
            format!(
                "must have shape (3, nx, ny, nz) with each n >= 4, got {:?}",
                u.shape()
            ),
        ));
    }
    for (arg, f) in [("u", &u), ("b", &b)] {
        if let Some(x) = f.iter().find(|x| !x.is_finite()) {
            return Err(CoreError::input(arg, format!("must be finite, found {x}")));
        }
    }
    for (arg, v) in [("tau", set.tau), ("rho", set.rho)] {
        if !(v.is_finite() && v > 0.0) {
            return Err(CoreError::input(
                arg,
                format!("must be finite and positive, got {v}"),
            ));
        }
    }
    if set.spacing.iter().any(|d| !(d.is_finite() && *d > 0.0)) {
        return Err(CoreError::input(
            "spacing",
            format!(
                "must be three finite positive numbers, got {:?}",
                set.spacing
            ),
        ));
    }
    if !set.gravity.is_finite()
        || (set.gravity != 0.0 && (set.response_speed2.is_nan() || set.response_speed2 <= 0.0))
    {
        return Err(CoreError::input(
            "sound_speed",
            "must be given and positive when gravity is non-zero",
        ));
    }
    let shape = (u.shape()[1], u.shape()[2], u.shape()[3]);
    let k: Vec<Vec<f64>> = (0..3)
        .map(|a| wavenumbers_odd([shape.0, shape.1, shape.2][a], set.spacing[a], false))
        .collect();
    let kvec = |i: usize, j: usize, l: usize| [k[0][i], k[1][j], k[2][l]];

    // Fluctuations (box mean removed) and their spectra.
    let prep = |f: &ArrayView4<'_, f64>| -> (Vec<Array3<f64>>, Vec<Array3<Complex64>>) {
        let mut real = Vec::with_capacity(3);
        let mut spec = Vec::with_capacity(3);
        for c in 0..3 {
            let comp = f.index_axis(Axis(0), c);
            let mean = comp.mean().unwrap_or(0.0);
            let r = comp.mapv(|x| x - mean);
            let mut s = r.mapv(|x| Complex64::new(x, 0.0));
            fft3(&mut s, false);
            real.push(r);
            spec.push(s);
        }
        (real, spec)
    };
    let (ur, us) = prep(&u);
    cancel.check()?;
    let (br, bs) = prep(&b);
    cancel.check()?;

    // Real field of (symbol) x spectrum.
    let apply = |spec: &Array3<Complex64>,
                 symbol: &(dyn Fn([f64; 3]) -> Complex64 + Sync)|
     -> Array3<f64> {
        let mut out = spec.clone();
        Zip::indexed(&mut out).par_for_each(|(i, j, l), x| *x *= symbol(kvec(i, j, l)));
        fft3(&mut out, true);
        out.mapv(|z| z.re)
    };
    let deriv = |l: usize| move |kv: [f64; 3]| Complex64::new(0.0, kv[l]);
    let kk = |j: usize, m: usize| {
        move |kv: [f64; 3]| {
            let k2 = kv[0] * kv[0] + kv[1] * kv[1] + kv[2] * kv[2];
            Complex64::new(if k2 > 0.0 { kv[j] * kv[m] / k2 } else { 0.0 }, 0.0)
        }
    };

    let q = 4.0 * std::f64::consts::PI * set.rho;
    let tau = set.tau;
    let mut r = [[0.0; 3]; 3];
    let mut m = [[0.0; 3]; 3];
    for i in 0..3 {
        for j in 0..3 {
            r[i][j] = mean_product(&ur[i], &ur[j]);
            m[i][j] = mean_product(&br[i], &br[j]);
        }
    }
    // C_jlk = <u_j d_l u_k>, D_ljk = <(d_l b_j) b_k>.
    let mut c = [[[0.0; 3]; 3]; 3];
    let mut d = [[[0.0; 3]; 3]; 3];
    for l in 0..3 {
        for kc in 0..3 {
            let du = apply(&us[kc], &deriv(l));
            let db = apply(&bs[kc], &deriv(l));
            for j in 0..3 {
                c[j][l][kc] = mean_product(&ur[j], &du);
                d[l][kc][j] = mean_product(&db, &br[j]);
            }
        }
        cancel.check()?;
    }
    // S_jmnk = <(K_jm b_n) b_k>.
    let mut s = [[[[0.0; 3]; 3]; 3]; 3];
    for j in 0..3 {
        for mm in j..3 {
            for n in 0..3 {
                let kb = apply(&bs[n], &kk(j, mm));
                for kc in 0..3 {
                    let v = mean_product(&kb, &br[kc]);
                    s[j][mm][n][kc] = v;
                    s[mm][j][n][kc] = v;
                }
            }
            cancel.check()?;
        }
    }

    let mut out = Response {
        a_kinetic: [[0.0; 3]; 3],
        a_magnetic: [[0.0; 3]; 3],
        a_buoyancy: [[0.0; 3]; 3],
        b_kinetic: [[[0.0; 3]; 3]; 3],
        b_magnetic: [[[0.0; 3]; 3]; 3],
    };
    let cb = if set.gravity != 0.0 {
        tau * set.gravity / (q * set.response_speed2)
    } else {
        0.0
    };
    for i in 0..3 {
        for l in 0..3 {
            for j in 0..3 {
                for kc in 0..3 {
                    let e = levi(i, j, kc);
                    if e == 0.0 {
                        continue;
                    }
                    // <u x db/dt> with db_k/dt = d_l u_k; <du/dt x b> with du_j/dt = d_l b_j / q.
                    out.a_kinetic[i][l] += tau * e * c[j][l][kc];
                    out.a_magnetic[i][l] += tau * e * d[l][j][kc] / q;
                    // Buoyancy: du_j/dt = g b_l (delta_jz - p K_jz) / (q c*^2).
                    let pz = if j == 2 { m[l][kc] } else { 0.0 };
                    out.a_buoyancy[i][l] += cb * e * (pz - set.buoyancy_weight * s[j][2][l][kc]);
                }
            }
            for mm in 0..3 {
                let mut bk = 0.0;
                let mut bm = 0.0;
                for j in 0..3 {
                    // db_k/dt = -u_l delta_km for the gradient d_l B_m.
                    bk -= levi(i, j, mm) * r[j][l];
                    for kc in 0..3 {
                        let e = levi(i, j, kc);
                        if e == 0.0 {
                            continue;
                        }
                        let local = if j == mm { m[l][kc] } else { 0.0 };
                        bm += e * (local - set.pressure_weight * s[j][mm][l][kc]);
                    }
                }
                out.b_kinetic[i][mm][l] = tau * bk;
                out.b_magnetic[i][mm][l] = tau * bm / q;
            }
        }
    }
    Ok(out)
}

/// Pack a [`Response`] as a flat array: a_kinetic, a_magnetic, a_buoyancy (9 each), b_kinetic,
/// b_magnetic (27 each).
pub fn pack(r: &Response) -> Array1<f64> {
    let mut v = Vec::with_capacity(81);
    for a in [&r.a_kinetic, &r.a_magnetic, &r.a_buoyancy] {
        v.extend(a.iter().flatten());
    }
    for t in [&r.b_kinetic, &r.b_magnetic] {
        v.extend(t.iter().flatten().flatten());
    }
    Array1::from(v)
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_relative_eq;

    #[test]
    fn single_helical_wave_gives_the_isotropic_alpha_direction() {
        // A circularly polarised wave along z, u = (cos kz, sin kz, 0): helicity <u.curl u> = -k, so
        // alpha_xx = alpha_yy = -tau H N_xx... with N = e_z e_z the kinetic alpha acts only along z:
        // alpha_zz = -tau <u.curl u> (Derived: docs/theory.md section Closure 2, helical-wave lemma).
        let n = 8;
        let dz = 1.0;
        let kz = 2.0 * std::f64::consts::PI / (n as f64 * dz);
        let mut u = Array4::<f64>::zeros((3, n, n, n));
        for i in 0..n {
            for j in 0..n {
                for l in 0..n {
                    let z = l as f64 * dz;
                    u[[0, i, j, l]] = (kz * z).cos();
                    u[[1, i, j, l]] = (kz * z).sin();
                }
            }
        }
        let b = Array4::<f64>::zeros((3, n, n, n));
        let set = ResponseSettings {
            tau: 2.0,
            rho: 1.0,
            gravity: 0.0,
            response_speed2: 0.0,
            spacing: [1.0, 1.0, dz],
            pressure_weight: 2.0,
            buoyancy_weight: 1.0,
        };
        let r = field_response(u.view(), b.view(), &set, &Cancel::new()).unwrap();
        // <u.curl u> = -kz here; alpha_zz = -tau (-kz) = 2 kz.
        assert_relative_eq!(r.a_kinetic[2][2], 2.0 * kz, max_relative = 1e-12);
        assert!(r.a_kinetic[0][0].abs() < 1e-12 && r.a_kinetic[1][1].abs() < 1e-12);
        // eta for z-gradients comes from <u_z^2> = 0 here.
        assert!(r.b_kinetic[0][1][2].abs() < 1e-12);
        assert!(field_response(
            u.view(),
            b.slice(ndarray::s![.., ..4, .., ..]),
            &set,
            &Cancel::new()
        )
        .is_err());
    }
}
