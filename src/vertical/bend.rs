//! Steady field-line bending through a thin disk and the flux transport speed.
//!
//! In a steady thin disk the azimuthal electric field is the same at every height, so with
//! `b(z) = B_r/B_z` and `g = d ln B_z / dR` the radial field obeys
//!
//! ```text
//! eta b' - v_z b = u_psi - v_r + eta g,      b(0) = 0,
//! ```
//!
//! where `u_psi` is the radial speed of the flux surfaces. With the integrating factor
//! `mu(z) = exp(-int_0^z v_z/eta)` and `h` the top of the grid,
//!
//! ```text
//! u_psi = u_adv + u_grad + u_dif b(h),
//! u_adv = int mu v_r/eta / int mu/eta,  u_dif = mu(h) / int mu/eta,  u_grad = -g int mu / int mu/eta.
//! ```
//!
//! The integrals use the cubic cumulative rule of [`super::quad`]; `ln mu` is normalised by its maximum so
//! no exponential overflows. See `docs/theory.md`, "Vertical structure".

use ndarray::{Array1, Array2, ArrayView1, ArrayView2, Axis};
use rayon::prelude::*;

use super::quad::CumulativeRule;
use crate::error::{CoreError, CoreResult};
use crate::numerics::checks;

/// How the surface value `B_r(h)/B_z` is chosen.
#[derive(Debug, Clone, Copy)]
pub enum Surface<'a> {
    /// No profile: return the transport split only.
    SplitOnly,
    /// The given surface ratio, one per column.
    Given(ArrayView1<'a, f64>),
    /// The ratio that makes the flux locally stationary (`u_psi = 0`).
    Steady,
}

/// Results for a batch of columns.
#[derive(Debug, Clone)]
pub struct Bending {
    /// Conductivity-weighted advection speed per column \[cm s^-1\].
    pub u_adv: Array1<f64>,
    /// Coefficient of the surface ratio in `u_psi` per column \[cm s^-1\].
    pub u_dif: Array1<f64>,
    /// Radial-gradient diffusion term per column \[cm s^-1\].
    pub u_grad: Array1<f64>,
    /// Surface ratio with `u_psi = 0` per column.
    pub steady_ratio: Array1<f64>,
    /// `B_r/B_z` against height, `(columns, nz)`, when a surface was asked for.
    pub ratio: Option<Array2<f64>>,
    /// Heights where `eta` was replaced by the floor, `(columns, nz)`.
    pub floored: Array2<bool>,
}

struct ColumnOut {
    u_adv: f64,
    u_dif: f64,
    u_grad: f64,
    steady: f64,
    ratio: Option<Vec<f64>>,
    floored: Vec<bool>,
}

/// Check the height grid of [`bend_columns`]: strictly increasing, from the midplane, at least four nodes.
pub fn check_heights(z: ArrayView1<'_, f64>) -> CoreResult<Vec<f64>> {
    let zv: Vec<f64> = z.iter().copied().collect();
    checks::increasing("z", &zv, 4)?;
    if zv[0] != 0.0 {
        return Err(CoreError::input(
            "z",
            format!(
                "must start at the midplane z = 0 (even symmetry), got z[0] = {}",
                zv[0]
            ),
        ));
    }
    Ok(zv)
}

/// Bending and transport speeds for `eta`, `v_z`, `v_r` of shape `(columns, nz)` on the heights `z`
/// (from 0 to the surface), with `grad = d ln B_z/dR` per column \[cm^-1\].
///
/// Where `eta <= 0` the equation is singular: without `eta_floor` that is an error naming the first
/// column and height; with `eta_floor = Some(f)` such heights use `eta = f` and are flagged in `floored`.
pub fn bend_columns(
    z: ArrayView1<'_, f64>,
    eta: ArrayView2<'_, f64>,
    v_z: ArrayView2<'_, f64>,
    v_r: ArrayView2<'_, f64>,
    grad: ArrayView1<'_, f64>,
    surface: Surface<'_>,
    eta_floor: Option<f64>,
) -> CoreResult<Bending> {
    let zv = check_heights(z)?;
    let nz = zv.len();
    let m = eta.nrows();
    for (name, a) in [("eta", &eta), ("v_z", &v_z), ("v_r", &v_r)] {
        if a.dim() != (m, nz) {
            return Err(CoreError::input(
                name,
                format!("has shape {:?}, expected ({m}, {nz})", a.dim()),
            ));
        }
    }
    checks::same_len("d_bz_dr", grad.len(), "the batch", m)?;
    if let Surface::Given(bs) = surface {
        checks::same_len("surface_ratio", bs.len(), "the batch", m)?;
    }
    if let Some(f) = eta_floor {
        if !f.is_finite() || f <= 0.0 {
            return Err(CoreError::input(
                "eta_floor",
                format!("must be finite and positive, got {f}"),
            ));
        }
    }
    let rule = CumulativeRule::new(&zv);
    let outs: Vec<ColumnOut> = (0..m)
        .into_par_iter()
        .map(|i| {
            let bs = match surface {
                Surface::SplitOnly => None,
                Surface::Given(b) => Some(Some(b[i])),
                Surface::Steady => Some(None),
            };
            column(
                &rule,
                &zv,
                i,
                eta.index_axis(Axis(0), i),
                v_z.index_axis(Axis(0), i),
                v_r.index_axis(Axis(0), i),
                grad[i],
                bs,
                eta_floor,
            )
        })
        .collect::<CoreResult<_>>()?;
    let mut out = Bending {
        u_adv: Array1::zeros(m),
        u_dif: Array1::zeros(m),
        u_grad: Array1::zeros(m),
        steady_ratio: Array1::zeros(m),
        ratio: match surface {
            Surface::SplitOnly => None,
            _ => Some(Array2::zeros((m, nz))),
        },
        floored: Array2::from_elem((m, nz), false),
    };
    for (i, c) in outs.into_iter().enumerate() {
        out.u_adv[i] = c.u_adv;
        out.u_dif[i] = c.u_dif;
        out.u_grad[i] = c.u_grad;
        out.steady_ratio[i] = c.steady;
        if let (Some(dst), Some(src)) = (out.ratio.as_mut(), c.ratio) {
            dst.row_mut(i).assign(&Array1::from(src));
        }
        out.floored.row_mut(i).assign(&Array1::from(c.floored));
    }
    Ok(out)
}

#[allow(clippy::too_many_arguments)]
fn column(
    rule: &CumulativeRule,
    z: &[f64],
    col: usize,
    eta: ArrayView1<'_, f64>,
    v_z: ArrayView1<'_, f64>,
    v_r: ArrayView1<'_, f64>,
    grad: f64,
    surface: Option<Option<f64>>,
    eta_floor: Option<f64>,
) -> CoreResult<ColumnOut> {
    let nz = z.len();
    let at = |j: usize| format!("column {col}, height index {j} (z = {:.6e} cm)", z[j]);
    let mut e = Vec::with_capacity(nz);
    let mut floored = vec![false; nz];
    for (j, &v) in eta.iter().enumerate() {
        if !v.is_finite() {
            return Err(CoreError::input(
                "eta",
                format!("must be finite, found {v} at {}", at(j)),
            ));
        }
        if v <= 0.0 {
            match eta_floor {
                Some(f) => {
                    floored[j] = true;
                    e.push(f);
                    continue;
                }
                None => {
                    return Err(CoreError::input(
                        "eta",
                        format!(
                            "vanishes or is negative (anti-diffusion), {v} at {}: the steady bending equation is \
                             singular there; pass eta_floor to treat such heights as a highly conducting layer",
                            at(j)
                        ),
                    ))
                }
            }
        }
        if let Some(f) = eta_floor {
            if v < f {
                floored[j] = true;
                e.push(f);
                continue;
            }
        }
        e.push(v);
    }
    let vz: Vec<f64> = v_z.iter().copied().collect();
    let vr: Vec<f64> = v_r.iter().copied().collect();
    for (name, a) in [("v_z", &vz), ("v_r", &vr)] {
        if let Some(j) = a.iter().position(|v| !v.is_finite()) {
            return Err(CoreError::input(
                name,
                format!("must be finite, found {} at {}", a[j], at(j)),
            ));
        }
    }
    if !grad.is_finite() {
        return Err(CoreError::input(
            "d_bz_dr",
            format!("must be finite, found {grad} in column {col}"),
        ));
    }
    // ln mu = -int v_z/eta, normalised by its maximum.
    let q: Vec<f64> = vz.iter().zip(&e).map(|(v, et)| v / et).collect();
    let mut ln_mu = vec![0.0; nz];
    rule.cumulative(&q, &mut ln_mu);
    let top = ln_mu.iter().fold(f64::NEG_INFINITY, |a, &b| a.max(-b));
    let mu: Vec<f64> = ln_mu
        .iter_mut()
        .map(|l| {
            *l = -*l;
            (*l - top).exp()
        })
        .collect();
    let w_inv: Vec<f64> = mu.iter().zip(&e).map(|(m, et)| m / et).collect();
    let w_adv: Vec<f64> = w_inv.iter().zip(&vr).map(|(w, v)| w * v).collect();
    let i_inv = rule.total(&w_inv);
    let i_adv = rule.total(&w_adv);
    let i_mu = rule.total(&mu);
    let u_adv = i_adv / i_inv;
    let u_dif = mu[nz - 1] / i_inv;
    let u_grad = 0.0 - grad * i_mu / i_inv;
    let steady = -(u_adv + u_grad) / u_dif;
    if ![u_adv, u_dif, u_grad].iter().all(|v| v.is_finite()) || u_dif <= 0.0 {
        return Err(CoreError::input(
            "v_z",
            format!(
                "in column {col} the vertical transport v_z/eta is too strong for the grid: the surface weight of \
                 the integrating factor underflows (refine z or reduce the Peclet number)"
            ),
        ));
    }
    let ratio = surface.map(|given| {
        let bs = given.unwrap_or(steady);
        let u_psi = u_adv + u_grad + u_dif * bs;
        // Source term of (mu b)' = mu f.
        let f: Vec<f64> = e
            .iter()
            .zip(&vr)
            .map(|(et, v)| (u_psi - v) / et + grad)
            .collect();
        let mut b = vec![0.0; nz];
        if mu.iter().all(|m| *m > 1e-200) {
            // Fast path: mu (normalised by its maximum) is representable everywhere; b = int mu f / mu.
            let g: Vec<f64> = mu.iter().zip(&f).map(|(m, fv)| m * fv).collect();
            rule.cumulative(&g, &mut b);
            for (bj, m) in b.iter_mut().zip(&mu) {
                *bj /= m;
            }
        } else {
            // Strong transport: integrate interval by interval, normalising mu at the interval's end.
            let mut local = [0.0; 4];
            for i in 0..rule.intervals() {
                let r = rule.interval(i);
                let ref_l = ln_mu[i + 1];
                for (k, slot) in local.iter_mut().enumerate() {
                    let j = r.start + k;
                    *slot = (ln_mu[j] - ref_l).exp() * f[j];
                }
                let piece: f64 = r.w.iter().zip(&local).map(|(w, v)| w * v).sum();
                b[i + 1] = b[i] * (ln_mu[i] - ref_l).exp() + piece;
            }
        }
        // The last node equals bs up to rounding; store the requested value exactly.
        b[nz - 1] = bs;
        b
    });
    Ok(ColumnOut {
        u_adv,
        u_dif,
        u_grad,
        steady,
        ratio,
        floored,
    })
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_relative_eq;
    use ndarray::{Array, Array2};

    fn grid(n: usize, h: f64) -> Array1<f64> {
        Array::linspace(0.0, h, n)
    }

    /// One column with uniform eta, v_z, v_r on `n` heights up to `h`.
    fn uniform(
        n: usize,
        h: f64,
        eta: f64,
        vz: f64,
        vr: f64,
        surface: Surface<'_>,
    ) -> (Array1<f64>, Bending) {
        let z = grid(n, h);
        let ones = Array2::<f64>::ones((1, n));
        let (e, w, r) = (&ones * eta, &ones * vz, &ones * vr);
        let g = Array1::zeros(1);
        let out = bend_columns(
            z.view(),
            e.view(),
            w.view(),
            r.view(),
            g.view(),
            surface,
            None,
        )
        .unwrap();
        (z, out)
    }

    #[test]
    fn uniform_diffusion_gives_the_thin_disk_balance() {
        // Source: Lubow, Papaloizou & Pringle 1994 local balance; uniform eta, no vertical transport:
        // steady B_rs/B_z = |v_r| h / eta.
        let (h, eta, vr) = (2.0, 3.0, -0.6);
        let (z, out) = uniform(33, h, eta, 0.0, vr, Surface::Steady);
        assert_relative_eq!(
            out.steady_ratio[0],
            vr.abs() * h / eta,
            max_relative = 1e-13
        );
        assert_relative_eq!(out.u_adv[0], vr, max_relative = 1e-13);
        assert_relative_eq!(out.u_dif[0], eta / h, max_relative = 1e-13);
        // Linear profile b = b_s z / h.
        let b = out.ratio.unwrap();
        for (bj, zj) in b.row(0).iter().zip(z.iter()) {
            assert_relative_eq!(*bj, out.steady_ratio[0] * zj / h, epsilon = 1e-13);
        }
    }

    #[test]
    fn uniform_pumping_matches_the_peclet_factor() {
        // Derived: docs/theory.md section "Vertical structure 5", uniform eta and v_z:
        // u_dif = (eta/h) Pe/(e^Pe - 1), Pe = v_z h/eta.
        let (h, eta, vz) = (1.0, 0.5, 4.0);
        let (_, out) = uniform(401, h, eta, vz, 0.0, Surface::SplitOnly);
        let pe: f64 = vz * h / eta;
        assert_relative_eq!(
            out.u_dif[0],
            eta / h * pe / pe.exp_m1(),
            max_relative = 1e-8
        );
    }

    #[test]
    fn strong_transport_path_matches_the_closed_form() {
        // Derived: docs/theory.md section "Vertical structure 5", uniform eta, v_z, v_r, u_psi = 0:
        // b(z) = (|v_r|/v_z) (exp(Pe z/h) - 1); Pe = -500 (downward transport) makes mu(0)/mu(h) = e^-500,
        // which forces the locally normalised path.
        let (h, eta, vz, vr) = (1.0, 1.0, -500.0, -1.0);
        let n = 8001;
        let (z, out) = uniform(n, h, eta, vz, vr, Surface::Steady);
        let b = out.ratio.unwrap();
        for j in (0..n).step_by(800) {
            let expect = vr.abs() / vz * (vz * z[j] / eta).exp_m1();
            assert_relative_eq!(b[[0, j]], expect, max_relative = 1e-6);
        }
    }

    #[test]
    fn negative_eta_is_reported_or_floored() {
        let z = grid(8, 1.0);
        let mut eta = Array2::<f64>::ones((2, 8));
        eta[[1, 5]] = -0.1;
        let zero = Array2::<f64>::zeros((2, 8));
        let g = Array1::zeros(2);
        let err = bend_columns(
            z.view(),
            eta.view(),
            zero.view(),
            zero.view(),
            g.view(),
            Surface::SplitOnly,
            None,
        )
        .unwrap_err();
        let msg = err.to_string();
        assert!(
            msg.starts_with("eta:") && msg.contains("column 1") && msg.contains("height index 5"),
            "{msg}"
        );
        let ok = bend_columns(
            z.view(),
            eta.view(),
            zero.view(),
            zero.view(),
            g.view(),
            Surface::SplitOnly,
            Some(1e-3),
        )
        .unwrap();
        assert!(ok.floored[[1, 5]] && ok.floored.iter().filter(|f| **f).count() == 1);
    }

    #[test]
    fn bad_grids_are_rejected() {
        let zero = Array2::<f64>::zeros((1, 4));
        let one = Array2::<f64>::ones((1, 4));
        let g = Array1::zeros(1);
        for z in [
            vec![0.0, 1.0, 0.5, 2.0],
            vec![0.1, 1.0, 2.0, 3.0],
            vec![0.0, 1.0, 2.0],
        ] {
            let z = Array1::from(z);
            let n = z.len();
            let r = bend_columns(
                z.view(),
                one.slice(ndarray::s![.., ..n]),
                zero.slice(ndarray::s![.., ..n]),
                zero.slice(ndarray::s![.., ..n]),
                g.view(),
                Surface::SplitOnly,
                None,
            );
            assert!(r.unwrap_err().to_string().starts_with("z:"));
        }
    }
}
