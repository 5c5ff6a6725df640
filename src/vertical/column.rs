//! A time-dependent one-dimensional mean-field model of a disk column.
//!
//! Radial and azimuthal mean field `B_x(z, t)`, `B_y(z, t)` under shear `S = dU_y/dx` (`S = -q Omega`), an
//! alpha effect, vertical turbulent pumping `gamma` (acting as a velocity along z), turbulent diffusion
//! `eta(z)` plus a uniform molecular `eta_mol`:
//!
//! ```text
//! dB_x/dt = -d/dz(alpha B_y + gamma B_x) + d/dz((eta + eta_mol) dB_x/dz)
//! dB_y/dt =  d/dz(alpha B_x - gamma B_y) + d/dz((eta + eta_mol) dB_y/dz) + S B_x
//! ```
//!
//! with `alpha = alpha_K + alpha_M` and, when dynamical quenching is on, the magnetic alpha from the
//! small-scale helicity budget (`R_m = eta/eta_mol`):
//!
//! ```text
//! d alpha_M/dt = -2 eta k_f^2 (E.B / B_eq^2 + alpha_M / R_m) + kappa d^2 alpha_M/dz^2,  E.B = alpha B^2 - eta J.B.
//! ```
//!
//! Second-order conservative differences on a uniform grid. The field takes a theta step (Crank-Nicolson
//! for `theta = 1/2`, backward Euler for `theta = 1`) that treats diffusion, alpha, pumping and shear
//! implicitly with alpha frozen over the step; alpha_M then takes a backward-Euler step with the new field,
//! implicit in its decay and its flux. Boundaries: periodic, or `B_x = B_y = alpha_M = 0` at both ends.

use super::tridiag::{solve_scalar, BlockTridiag, I2, M2, V2};
use crate::error::{CoreError, CoreResult};
use crate::numerics::Cancel;

/// The `(lower, diag, upper)` blocks of the semi-discrete operator at one node.
type Stencil = (M2, M2, M2);

/// Dynamical (helicity) quenching parameters.
#[derive(Debug, Clone, PartialEq)]
pub struct Quenching {
    /// Equipartition field at each node \[G\].
    pub b_eq: Vec<f64>,
    /// Wavenumber of the energy-carrying eddies \[cm^-1\].
    pub k_f: f64,
    /// Diffusivity of the magnetic alpha (diffusive helicity flux) \[cm^2 s^-1\].
    pub kappa: f64,
}

/// Everything that stays fixed during a run.
#[derive(Debug, Clone, PartialEq)]
pub struct ColumnSpec {
    /// Grid spacing \[cm\].
    pub dz: f64,
    /// Periodic column; otherwise the horizontal field vanishes at both end nodes.
    pub periodic: bool,
    /// Kinetic alpha at each node \[cm s^-1\].
    pub alpha_k: Vec<f64>,
    /// Vertical pumping velocity at each node \[cm s^-1\].
    pub gamma: Vec<f64>,
    /// Turbulent diffusivity at each node \[cm^2 s^-1\].
    pub eta: Vec<f64>,
    /// Uniform molecular diffusivity \[cm^2 s^-1\].
    pub eta_mol: f64,
    /// Shear rate `S = dU_y/dx` \[s^-1\].
    pub shear: f64,
    /// Drop alpha from the azimuthal equation (the alpha-Omega approximation).
    pub alpha_omega: bool,
    /// Implicitness of the field step, in `[1/2, 1]`.
    pub theta: f64,
    /// Dynamical quenching, or `None` for a kinematic run.
    pub quenching: Option<Quenching>,
}

/// The evolving state.
#[derive(Debug, Clone, PartialEq)]
pub struct ColumnState {
    /// Radial field at each node \[G\].
    pub b_x: Vec<f64>,
    /// Azimuthal field at each node \[G\].
    pub b_y: Vec<f64>,
    /// Magnetic alpha at each node \[cm s^-1\].
    pub alpha_m: Vec<f64>,
}

impl ColumnSpec {
    /// Check sizes, signs and finiteness; each error names the Python argument.
    pub fn validate(&self, state: &ColumnState) -> CoreResult<()> {
        use crate::numerics::checks::{finite, non_negative, positive, same_len};
        let n = self.eta.len();
        let min = if self.periodic { 4 } else { 5 };
        if n < min {
            return Err(CoreError::input(
                "z",
                format!("needs at least {min} points, got {n}"),
            ));
        }
        positive("dz", [self.dz].iter())?;
        same_len("alpha", self.alpha_k.len(), "z", n)?;
        same_len("gamma", self.gamma.len(), "z", n)?;
        finite("alpha", &self.alpha_k)?;
        finite("gamma", &self.gamma)?;
        positive("eta", &self.eta)?;
        non_negative("eta_molecular", [self.eta_mol].iter())?;
        finite("shear", [self.shear].iter())?;
        if !(0.5..=1.0).contains(&self.theta) {
            return Err(CoreError::input(
                "theta",
                format!("must lie in [0.5, 1], got {}", self.theta),
            ));
        }
        if let Some(q) = &self.quenching {
            same_len("b_eq", q.b_eq.len(), "z", n)?;
            positive("b_eq", &q.b_eq)?;
            positive("k_f", [q.k_f].iter())?;
            non_negative("helicity_diffusivity", [q.kappa].iter())?;
            if self.eta_mol <= 0.0 {
                return Err(CoreError::input(
                    "eta_molecular",
                    "must be positive with dynamical quenching (it sets R_m = eta/eta_molecular)",
                ));
            }
        }
        for (name, v) in [
            ("b_x", &state.b_x),
            ("b_y", &state.b_y),
            ("alpha_m", &state.alpha_m),
        ] {
            same_len(name, v.len(), "z", n)?;
            finite(name, v.iter())?;
        }
        Ok(())
    }

    /// Indices of the unknown nodes.
    fn unknowns(&self) -> std::ops::Range<usize> {
        let n = self.eta.len();
        if self.periodic {
            0..n
        } else {
            1..n - 1
        }
    }

    fn neighbours(&self, i: usize) -> (usize, usize) {
        let n = self.eta.len();
        ((i + n - 1) % n, (i + 1) % n)
    }

    /// Blocks `(lower, diag, upper)` of the semi-discrete operator at node `i` for the total alpha `alpha`.
    fn blocks(&self, i: usize, alpha: &[f64]) -> Stencil {
        let (im, ip) = self.neighbours(i);
        let c = 0.5 / self.dz;
        let d = 1.0 / (self.dz * self.dz);
        let em = 0.5 * (self.eta[i] + self.eta[im]) + self.eta_mol;
        let ep = 0.5 * (self.eta[i] + self.eta[ip]) + self.eta_mol;
        let a = if self.alpha_omega { 0.0 } else { 1.0 };
        let (gm, gp) = (self.gamma[im], self.gamma[ip]);
        let (am, ap) = (alpha[im], alpha[ip]);
        let lower = [[gm * c + em * d, am * c], [-a * am * c, gm * c + em * d]];
        let upper = [[-gp * c + ep * d, -ap * c], [a * ap * c, -gp * c + ep * d]];
        let diag = [[-(em + ep) * d, 0.0], [self.shear, -(em + ep) * d]];
        (lower, diag, upper)
    }

    /// Factor `I - theta dt L` and build the explicit operator's blocks.
    fn step_matrices(&self, alpha: &[f64], dt: f64) -> CoreResult<(BlockTridiag, Vec<Stencil>)> {
        let ops: Vec<Stencil> = self.unknowns().map(|i| self.blocks(i, alpha)).collect();
        let s = self.theta * dt;
        let scale = |m: &M2, f: f64| -> M2 {
            std::array::from_fn(|r| std::array::from_fn(|c| f * m[r][c]))
        };
        let lower = ops.iter().map(|o| scale(&o.0, -s)).collect();
        let upper = ops.iter().map(|o| scale(&o.2, -s)).collect();
        let diag = ops
            .iter()
            .map(|o| std::array::from_fn(|r| std::array::from_fn(|c| I2[r][c] - s * o.1[r][c])))
            .collect();
        Ok((BlockTridiag::new(lower, diag, upper, self.periodic)?, ops))
    }

    fn field_step(&self, state: &mut ColumnState, fact: &BlockTridiag, ops: &[Stencil], dt: f64) {
        let e = (1.0 - self.theta) * dt;
        let nodes: Vec<usize> = self.unknowns().collect();
        let x = |j: usize| -> V2 { [state.b_x[j], state.b_y[j]] };
        let mut rhs: Vec<V2> = nodes
            .iter()
            .zip(ops)
            .map(|(&i, (lo, di, up))| {
                let (im, ip) = self.neighbours(i);
                let (xm, x0, xp) = (x(im), x(i), x(ip));
                // Off-grid neighbours of the end unknowns are boundary nodes held at zero.
                std::array::from_fn(|r| {
                    x0[r]
                        + e * (lo[r][0] * xm[0]
                            + lo[r][1] * xm[1]
                            + di[r][0] * x0[0]
                            + di[r][1] * x0[1]
                            + up[r][0] * xp[0]
                            + up[r][1] * xp[1])
                })
            })
            .collect();
        fact.solve(&mut rhs);
        for (&i, v) in nodes.iter().zip(&rhs) {
            state.b_x[i] = v[0];
            state.b_y[i] = v[1];
        }
    }

    fn helicity_step(&self, q: &Quenching, state: &mut ColumnState, dt: f64) -> CoreResult<()> {
        let nodes: Vec<usize> = self.unknowns().collect();
        let k2 = q.k_f * q.k_f;
        let dk = dt * q.kappa / (self.dz * self.dz);
        let c = 0.5 / self.dz;
        let m = nodes.len();
        let (mut a, mut b, mut cc, mut r) =
            (vec![-dk; m], vec![0.0; m], vec![-dk; m], vec![0.0; m]);
        for (k, &i) in nodes.iter().enumerate() {
            let (im, ip) = self.neighbours(i);
            let (bx, by) = (state.b_x[i], state.b_y[i]);
            let b2 = bx * bx + by * by;
            // J = curl B = (-dB_y/dz, dB_x/dz, 0).
            let jb = -bx * (state.b_y[ip] - state.b_y[im]) * c
                + by * (state.b_x[ip] - state.b_x[im]) * c;
            let beq2 = q.b_eq[i] * q.b_eq[i];
            let eta = self.eta[i];
            b[k] = 1.0 + 2.0 * dt * k2 * (eta * b2 / beq2 + self.eta_mol) + 2.0 * dk;
            r[k] =
                state.alpha_m[i] - 2.0 * dt * eta * k2 * (self.alpha_k[i] * b2 - eta * jb) / beq2;
        }
        if !self.periodic {
            a[0] = 0.0;
            cc[m - 1] = 0.0;
        }
        solve_scalar(&a, &b, &cc, &mut r, self.periodic)?;
        for (&i, v) in nodes.iter().zip(&r) {
            state.alpha_m[i] = *v;
        }
        Ok(())
    }
}

/// Advance `state` by `nsteps` steps of `dt` seconds, checking `cancel` between chunks of steps.
/// The state is modified only when the whole call succeeds.
pub fn advance(
    spec: &ColumnSpec,
    state: &mut ColumnState,
    dt: f64,
    nsteps: usize,
    cancel: &Cancel,
) -> CoreResult<()> {
    spec.validate(state)?;
    if !dt.is_finite() || dt <= 0.0 {
        return Err(CoreError::input(
            "dt",
            format!("must be finite and positive, got {dt}"),
        ));
    }
    if !spec.periodic {
        let n = spec.eta.len();
        for (name, v) in [("b_x", &state.b_x), ("b_y", &state.b_y)] {
            if v[0] != 0.0 || v[n - 1] != 0.0 {
                return Err(CoreError::input(
                    name,
                    "must vanish at both end nodes with the vertical-field boundary",
                ));
            }
        }
    }
    let mut work = state.clone();
    let alpha_total = |s: &ColumnState| -> Vec<f64> {
        spec.alpha_k
            .iter()
            .zip(&s.alpha_m)
            .map(|(a, m)| a + m)
            .collect()
    };
    let mut frozen = if spec.quenching.is_none() {
        Some(spec.step_matrices(&alpha_total(&work), dt)?)
    } else {
        None
    };
    const CHUNK: usize = 32;
    for step in 0..nsteps {
        if step % CHUNK == 0 {
            cancel.check()?;
        }
        match (&mut frozen, &spec.quenching) {
            (Some((fact, ops)), _) => spec.field_step(&mut work, fact, ops, dt),
            (None, Some(q)) => {
                let (fact, ops) = spec.step_matrices(&alpha_total(&work), dt)?;
                spec.field_step(&mut work, &fact, &ops, dt);
                spec.helicity_step(q, &mut work, dt)?;
            }
            (None, None) => unreachable!("frozen matrices exist for every kinematic run"),
        }
        cancel.advance(1);
    }
    if let Some(i) = work
        .b_x
        .iter()
        .chain(&work.b_y)
        .position(|v| !v.is_finite())
    {
        return Err(CoreError::convergence(
            format!(
                "the column field became non-finite (node {}) : reduce dt",
                i % spec.eta.len()
            ),
            f64::INFINITY,
        ));
    }
    *state = work;
    Ok(())
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_relative_eq;

    fn spec(n: usize, alpha: f64, eta: f64, shear: f64, periodic: bool) -> ColumnSpec {
        ColumnSpec {
            dz: 2.0 * std::f64::consts::PI / n as f64,
            periodic,
            alpha_k: vec![alpha; n],
            gamma: vec![0.0; n],
            eta: vec![eta; n],
            eta_mol: 0.0,
            shear,
            alpha_omega: false,
            theta: 0.5,
            quenching: None,
        }
    }

    #[test]
    fn pure_diffusion_decays_at_eta_k_squared() {
        // Source: heat equation, mode sin(kz) decays as exp(-eta k_d^2 t) with the second-difference
        // wavenumber k_d = (2/dz) sin(k dz/2) (standard finite-difference analysis).
        let n = 32;
        let s = spec(n, 0.0, 0.7, 0.0, true);
        let z: Vec<f64> = (0..n).map(|i| i as f64 * s.dz).collect();
        let mut st = ColumnState {
            b_x: z.iter().map(|x| x.sin()).collect(),
            b_y: vec![0.0; n],
            alpha_m: vec![0.0; n],
        };
        let (dt, steps) = (1e-3, 1000);
        advance(&s, &mut st, dt, steps, &Cancel::new()).unwrap();
        let kd = 2.0 / s.dz * (0.5 * s.dz).sin();
        let expect = (-0.7 * kd * kd * 1.0f64).exp();
        for (b, x) in st.b_x.iter().zip(&z) {
            assert_relative_eq!(*b, expect * x.sin(), epsilon = 1e-6);
        }
    }

    #[test]
    fn large_steps_stay_bounded() {
        // Implicit steps: dt a thousand times the explicit diffusive limit dz^2/(2 eta).
        let n = 64;
        let mut s = spec(n, 0.0, 5.0, 0.0, false);
        s.theta = 1.0;
        let mut st = ColumnState {
            b_x: vec![1.0; n],
            b_y: vec![0.0; n],
            alpha_m: vec![0.0; n],
        };
        st.b_x[0] = 0.0;
        st.b_x[n - 1] = 0.0;
        let dt = 1000.0 * s.dz * s.dz / 10.0;
        advance(&s, &mut st, dt, 20, &Cancel::new()).unwrap();
        assert!(st.b_x.iter().all(|v| v.abs() <= 1.0));
    }

    #[test]
    fn cancellation_leaves_the_state_alone() {
        let n = 16;
        let s = spec(n, 1.0, 1.0, 0.0, true);
        let mut st = ColumnState {
            b_x: vec![0.5; n],
            b_y: vec![0.0; n],
            alpha_m: vec![0.0; n],
        };
        let c = Cancel::new();
        c.request();
        assert_eq!(
            advance(&s, &mut st, 1e-3, 100, &c),
            Err(CoreError::Interrupted)
        );
        assert!(st.b_x.iter().all(|v| *v == 0.5));
    }
}
