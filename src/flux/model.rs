//! The kinematic flux-transport model on a fixed radial grid: `d psi/dt = -R (u_adv B_z + u_dif B_rs
//! - eta_R dB_z/dR)`, with `B_z = R^-2 d psi/d ln R` and `B_rs = W^-1 (psi - psi_ext)`.
//!
//! The unknowns of each implicit step are the sheet-field values b = B_rs (psi = W b + psi_ext), so a
//! step matrix `W + gamma dt (L W + U)` costs O(N^2) to form and one LU; it is factored once per step size
//! and reused (the operator is fixed in a kinematic run). See docs/theory.md, "Global flux".

// Several arrays share one index (psi, b, psi_ext, held-row flags): plain index loops read best here.
#![allow(clippy::needless_range_loop)]

use std::sync::Arc;

use rayon::prelude::*;

use super::kernel::{check_grid, flux_operator};
use crate::error::{CoreError, CoreResult};
use crate::numerics::checks;
use crate::numerics::dense::{Dense, Lu};
use crate::numerics::Cancel;

/// What happens at the inner grid edge.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum InnerEdge {
    /// The same transport equation, with one-sided derivatives (flux may cross the edge either way).
    Same,
    /// psi held fixed: no flux crosses the inner edge.
    Closed,
}

/// What happens at the outer grid edge.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum OuterEdge {
    /// psi held at its initial value (the environment's flux is fixed there).
    Anchored,
    /// The same transport equation, with one-sided derivatives.
    Same,
}

/// Implicit time-stepping method.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Method {
    /// Backward Euler (first order, L-stable).
    Be,
    /// Crank-Nicolson (second order, A-stable, not L-stable).
    Cn,
    /// Second-order backward differentiation (L-stable), started by one backward Euler step.
    Bdf2,
}

impl Method {
    /// Parse the Python spelling.
    pub fn parse(name: &str) -> CoreResult<Self> {
        match name {
            "be" => Ok(Method::Be),
            "cn" => Ok(Method::Cn),
            "bdf2" => Ok(Method::Bdf2),
            other => Err(CoreError::input(
                "method",
                format!("must be 'bdf2', 'cn' or 'be', got {other:?}"),
            )),
        }
    }
}

type SparseRow = Vec<(usize, f64)>;

/// Three-point weights of d/dx at `x0` from the nodes `xs` (Lagrange, second order on any spacing).
fn deriv_weights(x0: f64, xs: [f64; 3]) -> [f64; 3] {
    let [a, b, c] = xs;
    [
        (2.0 * x0 - b - c) / ((a - b) * (a - c)),
        (2.0 * x0 - a - c) / ((b - a) * (b - c)),
        (2.0 * x0 - a - b) / ((c - a) * (c - b)),
    ]
}

/// Rows of d/dx on the grid `x`: three-point Lagrange weights (exact for quadratics in x), centred inside,
/// one-sided at the ends.
fn ddx_rows(x: &[f64]) -> Vec<SparseRow> {
    let n = x.len();
    (0..n)
        .map(|i| {
            let lo = i.saturating_sub(1).min(n - 3);
            let w = deriv_weights(x[i], [x[lo], x[lo + 1], x[lo + 2]]);
            (0..3).map(|k| (lo + k, w[k])).collect()
        })
        .collect()
}

fn add_into(row: &mut SparseRow, j: usize, v: f64) {
    match row.iter_mut().find(|(k, _)| *k == j) {
        Some(e) => e.1 += v,
        None => row.push((j, v)),
    }
}

/// The assembled model: grid, operator, its LU, the local (banded) part and the boundary rows.
#[derive(Debug)]
pub struct FluxSystem {
    /// Radii \[cm\].
    pub r: Vec<f64>,
    w: Dense,
    w_lu: Lu,
    psi_ext: Vec<f64>,
    bz_rows: Vec<SparseRow>,
    local: Vec<SparseRow>,
    u_diag: Vec<f64>,
    fixed: Vec<bool>,
    lw: Dense,
}

impl FluxSystem {
    /// Assemble the model. `u_adv` \[cm/s\] (negative = inward), `u_dif` \[cm/s\] >= 0 (the coefficient of
    /// B_rs/B_z in u_psi), `eta_r` \[cm^2/s\] >= 0 (radial diffusion; zeros to leave it out), `psi_ext`
    /// \[G cm^2\] the flux function of all currents outside the disk sheet.
    pub fn new(
        r: &[f64],
        u_adv: &[f64],
        u_dif: &[f64],
        eta_r: &[f64],
        psi_ext: &[f64],
        inner: InnerEdge,
        outer: OuterEdge,
    ) -> CoreResult<Self> {
        check_grid("r", r, 4)?;
        let n = r.len();
        for (name, v) in [
            ("u_adv", u_adv),
            ("u_dif", u_dif),
            ("radial_diffusivity", eta_r),
            ("psi_ext", psi_ext),
        ] {
            checks::same_len(name, v.len(), "r", n)?;
        }
        checks::finite("u_adv", u_adv)?;
        checks::non_negative("u_dif", u_dif)?;
        checks::non_negative("radial_diffusivity", eta_r)?;
        checks::finite("psi_ext", psi_ext)?;
        let w = flux_operator(r)?;
        let w_lu = Lu::factor(w.clone(), "flux operator W")?;
        // Derivatives in R itself: B_z = (1/R) d psi/dR is then exact for a uniform field (psi ~ R^2).
        let d = ddx_rows(r);
        let bz_rows: Vec<SparseRow> = d
            .iter()
            .zip(r)
            .map(|(row, ri)| row.iter().map(|&(j, v)| (j, v / ri)).collect())
            .collect();
        let mut fixed = vec![false; n];
        fixed[0] = inner == InnerEdge::Closed;
        fixed[n - 1] = outer == OuterEdge::Anchored;
        let mut local = Vec::with_capacity(n);
        for i in 0..n {
            let mut row: SparseRow = Vec::new();
            if !fixed[i] {
                for &(j, v) in &bz_rows[i] {
                    add_into(&mut row, j, r[i] * u_adv[i] * v);
                }
                if eta_r[i] != 0.0 {
                    // -R eta dB_z/dR
                    for &(k, dk) in &d[i] {
                        for &(j, v) in &bz_rows[k] {
                            add_into(&mut row, j, -r[i] * eta_r[i] * dk * v);
                        }
                    }
                }
            }
            local.push(row);
        }
        let u_diag: Vec<f64> = (0..n)
            .map(|i| if fixed[i] { 0.0 } else { r[i] * u_dif[i] })
            .collect();
        let mut lw = Dense::zeros(n);
        lw.a.par_chunks_mut(n).enumerate().for_each(|(i, out)| {
            for &(l, v) in &local[i] {
                for (o, wv) in out.iter_mut().zip(w.row(l)) {
                    *o += v * wv;
                }
            }
        });
        Ok(Self {
            r: r.to_vec(),
            w,
            w_lu,
            psi_ext: psi_ext.to_vec(),
            bz_rows,
            local,
            u_diag,
            fixed,
            lw,
        })
    }

    /// Number of radii.
    pub fn len(&self) -> usize {
        self.r.len()
    }

    /// Always false (a system has at least four radii).
    pub fn is_empty(&self) -> bool {
        self.r.is_empty()
    }

    /// B_z \[G\] from psi.
    pub fn b_z(&self, psi: &[f64]) -> Vec<f64> {
        self.bz_rows
            .iter()
            .map(|row| row.iter().map(|&(j, v)| v * psi[j]).sum())
            .collect()
    }

    /// B_rs \[G\] from psi: solves W b = psi - psi_ext.
    pub fn b_rs(&self, psi: &[f64]) -> Vec<f64> {
        let rhs: Vec<f64> = psi.iter().zip(&self.psi_ext).map(|(a, b)| a - b).collect();
        self.w_lu.solve(&rhs)
    }

    /// psi from B_rs: psi_ext + W b.
    pub fn psi_of(&self, b: &[f64]) -> Vec<f64> {
        self.w
            .matvec(b)
            .iter()
            .zip(&self.psi_ext)
            .map(|(a, p)| a + p)
            .collect()
    }

    /// The external flux function.
    pub fn psi_ext(&self) -> &[f64] {
        &self.psi_ext
    }

    /// The rate -d psi/dt = L psi + U b (zero on held rows).
    fn rate(&self, psi: &[f64], b: &[f64]) -> Vec<f64> {
        (0..self.len())
            .map(|i| {
                self.local[i].iter().map(|&(j, v)| v * psi[j]).sum::<f64>() + self.u_diag[i] * b[i]
            })
            .collect()
    }

    /// d psi/dt \[G cm^2 / s\] at the state psi.
    pub fn dpsi_dt(&self, psi: &[f64]) -> Vec<f64> {
        let b = self.b_rs(psi);
        self.rate(psi, &b).iter().map(|v| -v).collect()
    }

    /// `W + g (L W + U)` with held rows left as W, factored.
    fn step_matrix(&self, g: f64, what: &str) -> CoreResult<Lu> {
        let n = self.len();
        let mut m = self.w.clone();
        m.a.par_chunks_mut(n).enumerate().for_each(|(i, row)| {
            if !self.fixed[i] {
                for (v, lw) in row.iter_mut().zip(self.lw.row(i)) {
                    *v += g * lw;
                }
                row[i] += g * self.u_diag[i];
            }
        });
        Lu::factor(m, what)
    }

    /// The steady state `d psi/dt = 0` with held rows at their psi_ext values; returns (psi, b_rs).
    /// Raises a convergence error with the relative residual when the linear system is singular or the
    /// solution does not satisfy the equations to 1e-8.
    pub fn steady_state(&self) -> CoreResult<(Vec<f64>, Vec<f64>)> {
        let n = self.len();
        let mut m = self.lw.clone();
        let mut rhs = vec![0.0; n];
        for i in 0..n {
            if self.fixed[i] {
                m.a[i * n..(i + 1) * n].copy_from_slice(self.w.row(i));
                rhs[i] = 0.0; // psi_i = psi_ext,i
            } else {
                m.a[i * n + i] += self.u_diag[i];
                rhs[i] = -self.local[i]
                    .iter()
                    .map(|&(j, v)| v * self.psi_ext[j])
                    .sum::<f64>();
            }
        }
        let lu = Lu::factor(m.clone(), "steady state")?;
        let mut b = lu.solve(&rhs);
        // One step of iterative refinement.
        let mb = m.matvec(&b);
        let corr = lu.solve(&rhs.iter().zip(&mb).map(|(a, c)| a - c).collect::<Vec<_>>());
        for (bi, ci) in b.iter_mut().zip(&corr) {
            *bi += ci;
        }
        let mut psi = self.psi_of(&b);
        for i in 0..n {
            if self.fixed[i] {
                psi[i] = self.psi_ext[i];
            }
        }
        let rate = self.rate(&psi, &b);
        let scale_local: Vec<f64> = (0..n)
            .map(|i| {
                self.local[i]
                    .iter()
                    .map(|&(j, v)| (v * psi[j]).abs())
                    .sum::<f64>()
            })
            .collect();
        let scale = (0..n)
            .map(|i| scale_local[i] + (self.u_diag[i] * b[i]).abs())
            .fold(0.0, f64::max);
        let worst = rate.iter().fold(0.0f64, |s, v| s.max(v.abs()));
        let residual = if scale > 0.0 { worst / scale } else { worst };
        if !residual.is_finite() || residual > 1e-8 || psi.iter().any(|v| !v.is_finite()) {
            return Err(CoreError::convergence(
                "steady state: the linear system is singular or ill-conditioned (no unique steady state)",
                residual,
            ));
        }
        Ok((psi, b))
    }
}

/// A time integration in progress: state, step size and the reused factorisations.
#[derive(Debug)]
pub struct Stepper {
    sys: Arc<FluxSystem>,
    method: Method,
    dt: f64,
    /// Time reached \[s\].
    pub t: f64,
    /// Steps taken.
    pub steps: usize,
    psi: Vec<f64>,
    b: Vec<f64>,
    psi_prev: Option<Vec<f64>>,
    lu: Lu,
    lu_start: Option<Lu>,
}

impl Stepper {
    /// Start from `psi0` \[G cm^2\] at t = 0 with step `dt` \[s\].
    pub fn new(sys: Arc<FluxSystem>, psi0: &[f64], dt: f64, method: Method) -> CoreResult<Self> {
        checks::same_len("psi0", psi0.len(), "r", sys.len())?;
        checks::finite("psi0", psi0)?;
        checks::positive("dt", &[dt])?;
        let gamma = match method {
            Method::Be => 1.0,
            Method::Cn => 0.5,
            Method::Bdf2 => 2.0 / 3.0,
        };
        let lu = sys.step_matrix(gamma * dt, "time step matrix")?;
        let lu_start = match method {
            Method::Bdf2 => Some(sys.step_matrix(dt, "first time step matrix")?),
            _ => None,
        };
        let b = sys.b_rs(psi0);
        Ok(Self {
            sys,
            method,
            dt,
            t: 0.0,
            steps: 0,
            psi: psi0.to_vec(),
            b,
            psi_prev: None,
            lu,
            lu_start,
        })
    }

    /// Current psi.
    pub fn psi(&self) -> &[f64] {
        &self.psi
    }

    /// Current B_rs.
    pub fn b_rs(&self) -> &[f64] {
        &self.b
    }

    fn one_step(&mut self) {
        let sys = &*self.sys;
        let n = sys.len();
        let pe = &sys.psi_ext;
        // The right-hand side is formed as a deviation from psi_ext, so that psi = psi_ext stays exact.
        let (mut dev, lu, g): (Vec<f64>, &Lu, f64) = match (self.method, &self.psi_prev) {
            (Method::Be, _) => (
                (0..n).map(|i| self.psi[i] - pe[i]).collect(),
                &self.lu,
                self.dt,
            ),
            (Method::Cn, _) => {
                let rate = sys.rate(&self.psi, &self.b);
                let dev = (0..n)
                    .map(|i| (self.psi[i] - pe[i]) - 0.5 * self.dt * rate[i])
                    .collect();
                (dev, &self.lu, 0.5 * self.dt)
            }
            (Method::Bdf2, None) => (
                (0..n).map(|i| self.psi[i] - pe[i]).collect(),
                self.lu_start.as_ref().unwrap_or(&self.lu),
                self.dt,
            ),
            (Method::Bdf2, Some(prev)) => {
                let dev = (0..n)
                    .map(|i| (self.psi[i] - pe[i]) + (self.psi[i] - prev[i]) / 3.0)
                    .collect();
                (dev, &self.lu, 2.0 * self.dt / 3.0)
            }
        };
        for i in 0..n {
            if sys.fixed[i] {
                dev[i] = self.psi[i] - pe[i];
            }
        }
        // M b = dev - g L psi_ext (held rows: W b = psi - psi_ext).
        let rhs: Vec<f64> = (0..n)
            .map(|i| {
                let lp: f64 = sys.local[i].iter().map(|&(j, v)| v * pe[j]).sum();
                dev[i] - g * lp
            })
            .collect();
        let b = lu.solve(&rhs);
        let mut psi = sys.psi_of(&b);
        for i in 0..n {
            if sys.fixed[i] {
                psi[i] = self.psi[i]; // held rows exactly, not to rounding of W b + psi_ext
            }
        }
        if self.method == Method::Bdf2 {
            self.psi_prev = Some(std::mem::replace(&mut self.psi, psi));
        } else {
            self.psi = psi;
        }
        self.b = b;
        self.steps += 1;
        self.t = self.steps as f64 * self.dt;
    }

    /// Take `n` steps, checking for cancellation between them.
    pub fn advance(&mut self, n: usize, cancel: &Cancel) -> CoreResult<()> {
        for _ in 0..n {
            cancel.check()?;
            self.one_step();
            cancel.advance(1);
        }
        Ok(())
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_relative_eq;

    fn grid(n: usize, lo: f64, hi: f64) -> Vec<f64> {
        (0..n)
            .map(|i| (lo.ln() + (hi / lo).ln() * i as f64 / (n - 1) as f64).exp())
            .collect()
    }

    #[test]
    fn uniform_field_without_flow_is_steady() {
        // Source: a uniform field is current-free (B_rs = 0), so with u_adv = 0 it cannot change.
        let r = grid(60, 1.0, 1e3);
        let n = r.len();
        let psi_ext: Vec<f64> = r.iter().map(|v| 0.5 * 2.0 * v * v).collect();
        let sys = Arc::new(
            FluxSystem::new(
                &r,
                &vec![0.0; n],
                &vec![3.0; n],
                &vec![0.0; n],
                &psi_ext,
                InnerEdge::Same,
                OuterEdge::Anchored,
            )
            .unwrap(),
        );
        let mut st = Stepper::new(sys.clone(), &psi_ext, 10.0, Method::Bdf2).unwrap();
        st.advance(20, &Cancel::new()).unwrap();
        for (a, b) in st.psi().iter().zip(&psi_ext) {
            assert_relative_eq!(*a, *b, max_relative = 1e-14);
        }
        for bz in sys.b_z(st.psi()).iter().take(n - 1).skip(1) {
            assert_relative_eq!(*bz, 2.0, max_relative = 1e-12);
        }
    }

    #[test]
    fn closed_edges_conserve_flux_and_cancel_stops() {
        let r = grid(50, 1.0, 1e2);
        let n = r.len();
        let psi_ext: Vec<f64> = r.iter().map(|v| 0.5 * v * v).collect();
        let u_adv: Vec<f64> = r.iter().map(|v| -1.0 / v).collect();
        let sys = Arc::new(
            FluxSystem::new(
                &r,
                &u_adv,
                &vec![1.0; n],
                &vec![0.0; n],
                &psi_ext,
                InnerEdge::Closed,
                OuterEdge::Anchored,
            )
            .unwrap(),
        );
        let mut st = Stepper::new(sys, &psi_ext, 1.0, Method::Cn).unwrap();
        st.advance(5, &Cancel::new()).unwrap();
        assert_eq!(st.psi()[0], psi_ext[0]);
        assert_eq!(st.psi()[n - 1], psi_ext[n - 1]);
        let c = Cancel::new();
        c.request();
        assert_eq!(st.advance(1, &c), Err(CoreError::Interrupted));
        assert!(Method::parse("rk4").is_err());
    }
}
