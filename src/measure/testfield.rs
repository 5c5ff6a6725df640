//! Kinematic test-field method on a triply periodic box, solved pseudo-spectrally.
//!
//! For each of the four test fields `B^T = (cos kz, 0, 0), (sin kz, 0, 0), (0, cos kz, 0), (0, sin kz, 0)`
//! the fluctuation `b` obeys
//!
//! ```text
//! db/dt = curl(u x B^T + u x b - <u x b>) + eta lap b        (full)
//! db/dt = curl(u x B^T) + eta lap b                           (SOCA: fluctuation-fluctuation term dropped)
//! ```
//!
//! with `<.>` the horizontal (x-y) average and `u` the flow with its horizontal mean removed. Time stepping is
//! the second-order exponential time differencing scheme ETDRK2 (Cox & Matthews 2002): diffusion is
//! integrated exactly, and a steady state of the discrete equations is a fixed point of the scheme, so a
//! steady flow converges to the exact spectral steady state whatever the time step. Products are formed on
//! the grid and the right-hand side is truncated by the two-thirds rule. The EMFs `E^T = <u x b>` of the
//! four problems give `alpha_ij(z)`, `eta_ij(z)` pointwise through the inversion in [`coefficients`].

use ndarray::{Array3, ArrayView4};
use rayon::prelude::*;
use rustfft::num_complex::Complex64;

use super::spectral::{signed_index, Fft3};
use crate::error::{CoreError, CoreResult};
use crate::numerics::checks;

const TWO_PI: f64 = 2.0 * std::f64::consts::PI;

/// A flow on the grid, stored contiguously with its horizontal mean removed.
pub struct Flow {
    comps: [Vec<f64>; 3],
    /// Root-mean-square of the removed horizontal mean flow `<u>_xy(z)` over the box, cm s^-1.
    pub mean_rms: f64,
}

impl Flow {
    /// Copy `u` `(3, nx, ny, nz)` (any strides) and remove its horizontal mean. `arg` names the argument.
    pub fn from_view(u: ArrayView4<f64>, n: [usize; 3], arg: &str) -> CoreResult<Self> {
        if u.dim() != (3, n[0], n[1], n[2]) {
            return Err(CoreError::input(
                arg,
                format!(
                    "must have shape (3, {}, {}, {}), got {:?}",
                    n[0],
                    n[1],
                    n[2],
                    u.shape()
                ),
            ));
        }
        checks::finite(arg, u.iter())?;
        let [nx, ny, nz] = n;
        let mut comps: [Vec<f64>; 3] = Default::default();
        let mut mean_sq = 0.0;
        for (c, comp) in comps.iter_mut().enumerate() {
            let mut v = vec![0.0; nx * ny * nz];
            let mut mean = vec![0.0; nz];
            for x in 0..nx {
                for y in 0..ny {
                    for z in 0..nz {
                        let val = u[[c, x, y, z]];
                        v[(x * ny + y) * nz + z] = val;
                        mean[z] += val;
                    }
                }
            }
            for m in mean.iter_mut() {
                *m /= (nx * ny) as f64;
                mean_sq += *m * *m / nz as f64;
            }
            for (i, val) in v.iter_mut().enumerate() {
                *val -= mean[i % nz];
            }
            *comp = v;
        }
        Ok(Self {
            comps,
            mean_rms: mean_sq.sqrt(),
        })
    }
}

/// State of the four test-field problems.
pub struct TestFieldSolver {
    fft: Fft3,
    spacing: [f64; 3],
    eta: f64,
    k_test: f64,
    soca: bool,
    /// Wavenumbers (rad cm^-1) of the x, y, z bins.
    k: [Vec<f64>; 3],
    /// Two-thirds-rule mask times "not a horizontal mean mode", per spectral index.
    keep: Vec<bool>,
    /// Spectra of `b` for the four tests, each three components.
    b: Vec<[Vec<Complex64>; 3]>,
    /// ETDRK2 factors for the current time step: `e^{L h}`, `(e^{L h} - 1)/L`, `(e^{L h} - 1 - L h)/(h L^2)`.
    etd: Option<(f64, Vec<[f64; 3]>)>,
    /// Elapsed model time, s.
    pub time: f64,
    /// Time steps taken.
    pub steps: usize,
}

impl TestFieldSolver {
    /// A solver on an `n` grid with cell sizes `spacing` (cm), diffusivity `eta` (cm^2 s^-1) and test
    /// wavenumber `k_test` (rad cm^-1), which must be a resolved harmonic of the box height.
    pub fn new(
        n: [usize; 3],
        spacing: [f64; 3],
        eta: f64,
        k_test: f64,
        soca: bool,
    ) -> CoreResult<Self> {
        for (i, &ni) in n.iter().enumerate() {
            if ni < 4 {
                return Err(CoreError::input(
                    "u",
                    format!(
                        "needs at least 4 grid points along axis {}, got {ni}",
                        i + 1
                    ),
                ));
            }
        }
        checks::positive("spacing", &spacing)?;
        checks::positive("eta", &[eta])?;
        checks::positive("k_test", &[k_test])?;
        let lz = n[2] as f64 * spacing[2];
        let m = k_test * lz / TWO_PI;
        let mi = m.round();
        if (m - mi).abs() > 1e-8 * m.max(1.0) || mi < 1.0 {
            return Err(CoreError::input(
                "k_test",
                format!("must be 2 pi m / L_z for a whole m >= 1 (L_z = {lz} cm), got k_test L_z / 2 pi = {m}"),
            ));
        }
        if mi > (n[2] / 3) as f64 {
            return Err(CoreError::input(
                "k_test",
                format!(
                    "harmonic m = {mi} is not resolved by {} points along z after two-thirds dealiasing \
                     (needs m <= {})",
                    n[2],
                    n[2] / 3
                ),
            ));
        }
        let fft = Fft3::new(n[0], n[1], n[2]);
        let nzh = fft.nzh;
        let mut k: [Vec<f64>; 3] = Default::default();
        let mut cut = [0i64; 3];
        for a in 0..3 {
            let len = if a == 2 { nzh } else { n[a] };
            let dk = TWO_PI / (n[a] as f64 * spacing[a]);
            k[a] = (0..len)
                .map(|i| signed_index(i, n[a]) as f64 * dk)
                .collect();
            cut[a] = (n[a] / 3) as i64;
        }
        let len = fft.spectral_len();
        let mut keep = vec![false; len];
        for x in 0..n[0] {
            for y in 0..n[1] {
                for z in 0..nzh {
                    let (ix, iy, iz) = (signed_index(x, n[0]), signed_index(y, n[1]), z as i64);
                    let horizontal_mean = ix == 0 && iy == 0;
                    keep[(x * n[1] + y) * nzh + z] = !horizontal_mean
                        && ix.abs() <= cut[0]
                        && iy.abs() <= cut[1]
                        && iz <= cut[2];
                }
            }
        }
        let zero = vec![Complex64::new(0.0, 0.0); len];
        Ok(Self {
            fft,
            spacing,
            eta,
            k_test,
            soca,
            k,
            keep,
            b: (0..4)
                .map(|_| [zero.clone(), zero.clone(), zero.clone()])
                .collect(),
            etd: None,
            time: 0.0,
            steps: 0,
        })
    }

    /// Grid points along x, y, z.
    pub fn shape(&self) -> [usize; 3] {
        self.fft.n
    }

    fn wavevector(&self, idx: usize) -> [f64; 3] {
        let [_, ny, _] = self.fft.n;
        let nzh = self.fft.nzh;
        let z = idx % nzh;
        let y = (idx / nzh) % ny;
        let x = idx / (nzh * ny);
        [self.k[0][x], self.k[1][y], self.k[2][z]]
    }

    fn prepare(&mut self, h: f64) {
        if let Some((hh, _)) = &self.etd {
            if *hh == h {
                return;
            }
        }
        let len = self.fft.spectral_len();
        let factors = (0..len)
            .map(|idx| {
                let kv = self.wavevector(idx);
                let l = -self.eta * (kv[0] * kv[0] + kv[1] * kv[1] + kv[2] * kv[2]);
                let zz = l * h;
                let e = zz.exp();
                if zz.abs() < 1e-3 {
                    // Taylor series of phi1 and phi2 avoid cancellation for slowly decaying modes.
                    let phi1 = 1.0 + zz / 2.0 + zz * zz / 6.0 + zz * zz * zz / 24.0;
                    let phi2 = 0.5 + zz / 6.0 + zz * zz / 24.0 + zz * zz * zz / 120.0;
                    [e, h * phi1, h * phi2]
                } else {
                    [e, zz.exp_m1() / l, h * (zz.exp_m1() - zz) / (zz * zz)]
                }
            })
            .collect();
        self.etd = Some((h, factors));
    }

    /// Test-field profile of test `p` at grid height `z` (index): component (0 = x, 1 = y) and value.
    fn test_field(&self, p: usize, z: usize) -> (usize, f64) {
        let phase = self.k_test * z as f64 * self.spacing[2];
        (p / 2, if p % 2 == 0 { phase.cos() } else { phase.sin() })
    }

    /// Right-hand side `curl F` (without diffusion) of test `p` for state `b` and flow `u`.
    fn nonlinear(
        &self,
        p: usize,
        b: &[Vec<Complex64>; 3],
        u: &Flow,
    ) -> CoreResult<[Vec<Complex64>; 3]> {
        let [nx, ny, nz] = self.fft.n;
        let npts = nx * ny * nz;
        let len = self.fft.spectral_len();
        let mut field: [Vec<f64>; 3] = [vec![0.0; npts], vec![0.0; npts], vec![0.0; npts]];
        if !self.soca {
            for c in 0..3 {
                let mut scratch = b[c].clone();
                self.fft.inverse(&mut scratch, &mut field[c])?;
            }
        }
        for z in 0..nz {
            let (c, v) = self.test_field(p, z);
            for line in 0..nx * ny {
                field[c][line * nz + z] += v;
            }
        }
        // F = u x (B^T + b), formed on the grid.
        let mut f: [Vec<f64>; 3] = [vec![0.0; npts], vec![0.0; npts], vec![0.0; npts]];
        for i in 0..npts {
            let (ux, uy, uz) = (u.comps[0][i], u.comps[1][i], u.comps[2][i]);
            let (bx, by, bz) = (field[0][i], field[1][i], field[2][i]);
            f[0][i] = uy * bz - uz * by;
            f[1][i] = uz * bx - ux * bz;
            f[2][i] = ux * by - uy * bx;
        }
        let mut fh: [Vec<Complex64>; 3] = Default::default();
        for c in 0..3 {
            let mut s = vec![Complex64::new(0.0, 0.0); len];
            self.fft.forward(&mut f[c], &mut s)?;
            fh[c] = s;
        }
        let i_unit = Complex64::new(0.0, 1.0);
        let mut out: [Vec<Complex64>; 3] = [vec![Complex64::new(0.0, 0.0); len], vec![], vec![]];
        out[1] = out[0].clone();
        out[2] = out[0].clone();
        for idx in 0..len {
            if !self.keep[idx] {
                continue;
            }
            let [kx, ky, kz] = self.wavevector(idx);
            let (fx, fy, fz) = (fh[0][idx], fh[1][idx], fh[2][idx]);
            out[0][idx] = i_unit * (fz * ky - fy * kz);
            out[1][idx] = i_unit * (fx * kz - fz * kx);
            out[2][idx] = i_unit * (fy * kx - fx * ky);
        }
        Ok(out)
    }

    /// Advance all four problems by one ETDRK2 step of length `h`, with flow `u0` at the start of the step
    /// and `u1` at its end (the same flow for a steady problem).
    pub fn step(&mut self, u0: &Flow, u1: &Flow, h: f64) -> CoreResult<()> {
        if !(h.is_finite() && h > 0.0) {
            return Err(CoreError::input(
                "dt",
                format!("must be finite and positive, got {h}"),
            ));
        }
        self.prepare(h);
        let factors = &self.etd.as_ref().map(|(_, f)| f).ok_or_else(|| {
            CoreError::convergence("internal error: time-step factors missing", f64::NAN)
        })?;
        let len = self.fft.spectral_len();
        let this = &*self;
        let new_b: Vec<[Vec<Complex64>; 3]> = (0..4)
            .into_par_iter()
            .map(|p| -> CoreResult<[Vec<Complex64>; 3]> {
                let v = &this.b[p];
                let n0 = this.nonlinear(p, v, u0)?;
                let mut a: [Vec<Complex64>; 3] = [vec![], vec![], vec![]];
                for c in 0..3 {
                    a[c] = (0..len)
                        .map(|i| v[c][i] * factors[i][0] + n0[c][i] * factors[i][1])
                        .collect();
                }
                let n1 = this.nonlinear(p, &a, u1)?;
                for c in 0..3 {
                    for i in 0..len {
                        a[c][i] += (n1[c][i] - n0[c][i]) * factors[i][2];
                    }
                }
                Ok(a)
            })
            .collect::<CoreResult<Vec<_>>>()?;
        self.b = new_b;
        self.time += h;
        self.steps += 1;
        Ok(())
    }

    /// The mean EMFs `<u x b>_xy` of the four tests, `(4, nz, 2)` (x and y components).
    pub fn emf(&self, u: &Flow) -> CoreResult<Array3<f64>> {
        let [nx, ny, nz] = self.fft.n;
        let npts = nx * ny * nz;
        let mut out = Array3::zeros((4, nz, 2));
        for p in 0..4 {
            let mut b: [Vec<f64>; 3] = [vec![0.0; npts], vec![0.0; npts], vec![0.0; npts]];
            for (spec, real) in self.b[p].iter().zip(b.iter_mut()) {
                let mut scratch = spec.clone();
                self.fft.inverse(&mut scratch, real)?;
            }
            let [bx, by, bz] = &b;
            for (i, ((&bxi, &byi), &bzi)) in bx.iter().zip(by).zip(bz).enumerate() {
                let z = i % nz;
                let (ux, uy, uz) = (u.comps[0][i], u.comps[1][i], u.comps[2][i]);
                out[[p, z, 0]] += uy * bzi - uz * byi;
                out[[p, z, 1]] += uz * bxi - ux * bzi;
            }
        }
        out /= (nx * ny) as f64;
        Ok(out)
    }

    /// `alpha_ij(z)` and `eta_ij(z)`, each `(nz, 2, 2)`, from the current state and flow `u`.
    pub fn coefficients(&self, u: &Flow) -> CoreResult<(Array3<f64>, Array3<f64>)> {
        let e = self.emf(u)?;
        let nz = self.fft.n[2];
        let k = self.k_test;
        Ok(coefficients(&e, |z| k * z as f64 * self.spacing[2], k, nz))
    }
}

/// Invert the four test-field EMFs `e` `(4, nz, 2)` (order `1c, 1s, 2c, 2s`) into `alpha_ij`, `eta_ij`
/// `(nz, 2, 2)` pointwise in z, for the convention `E_i = alpha_ij B_j - eta_ij J_j`, `J = curl B`:
/// `alpha_i1 = c E^1c_i + s E^1s_i`, `k eta_i2 = s E^1c_i - c E^1s_i`, `alpha_i2 = c E^2c_i + s E^2s_i`,
/// `k eta_i1 = -s E^2c_i + c E^2s_i`, with `c = cos kz`, `s = sin kz`.
pub fn coefficients(
    e: &Array3<f64>,
    phase: impl Fn(usize) -> f64,
    k: f64,
    nz: usize,
) -> (Array3<f64>, Array3<f64>) {
    let mut alpha = Array3::zeros((nz, 2, 2));
    let mut eta = Array3::zeros((nz, 2, 2));
    for z in 0..nz {
        let (s, c) = phase(z).sin_cos();
        for i in 0..2 {
            alpha[[z, i, 0]] = c * e[[0, z, i]] + s * e[[1, z, i]];
            eta[[z, i, 1]] = (s * e[[0, z, i]] - c * e[[1, z, i]]) / k;
            alpha[[z, i, 1]] = c * e[[2, z, i]] + s * e[[3, z, i]];
            eta[[z, i, 0]] = (-s * e[[2, z, i]] + c * e[[3, z, i]]) / k;
        }
    }
    (alpha, eta)
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_relative_eq;
    use ndarray::Array4;

    #[test]
    fn inversion_returns_the_coefficients_that_made_the_emfs() {
        // Derived: PHYSICS.md section 7.3, identity (7.3) applied to EMFs built from (1.4).
        let alpha = [[0.3, -0.1], [0.25, 0.7]];
        let eta = [[1.1, 0.2], [-0.3, 0.9]];
        let (k, nz) = (2.0, 5);
        let mut e = Array3::zeros((4, nz, 2));
        for z in 0..nz {
            let kz = 0.4 * z as f64 * k;
            let (s, c) = kz.sin_cos();
            // Test fields and their currents J = (-dBy/dz, dBx/dz).
            let tests = [
                ([c, 0.0], [0.0, -k * s]),
                ([s, 0.0], [0.0, k * c]),
                ([0.0, c], [k * s, 0.0]),
                ([0.0, s], [-k * c, 0.0]),
            ];
            for (p, (b, j)) in tests.iter().enumerate() {
                for i in 0..2 {
                    e[[p, z, i]] = alpha[i][0] * b[0] + alpha[i][1] * b[1]
                        - eta[i][0] * j[0]
                        - eta[i][1] * j[1];
                }
            }
        }
        let (a, et) = coefficients(&e, |z| 0.4 * z as f64 * k, k, nz);
        for z in 0..nz {
            for i in 0..2 {
                for j in 0..2 {
                    assert_relative_eq!(a[[z, i, j]], alpha[i][j], epsilon = 1e-14);
                    assert_relative_eq!(et[[z, i, j]], eta[i][j], epsilon = 1e-14);
                }
            }
        }
    }

    #[test]
    fn roberts_flow_soca_steady_state_matches_the_closed_form() {
        // Source: Roberts-flow SOCA alpha and eta_t, PHYSICS.md section 6.1 eq. (6.2) and check rows 23-24.
        let (n, nzp) = (8usize, 6usize);
        let kf = 1.0_f64;
        let dx = TWO_PI / kf / n as f64;
        let dz = TWO_PI / nzp as f64;
        let (u0, eta) = (0.5, 1.0);
        let mut u = Array4::zeros((3, n, n, nzp));
        for x in 0..n {
            for y in 0..n {
                let (px, py) = (kf * x as f64 * dx, kf * y as f64 * dx);
                for z in 0..nzp {
                    u[[0, x, y, z]] = u0 * px.sin() * py.cos();
                    u[[1, x, y, z]] = -u0 * px.cos() * py.sin();
                    u[[2, x, y, z]] = u0 * 2f64.sqrt() * px.sin() * py.sin();
                }
            }
        }
        let flow = Flow::from_view(u.view(), [n, n, nzp], "u").unwrap();
        let mut s = TestFieldSolver::new([n, n, nzp], [dx, dx, dz], eta, 1.0, true).unwrap();
        for _ in 0..40 {
            s.step(&flow, &flow, 1.0).unwrap();
        }
        let (a, e) = s.coefficients(&flow).unwrap();
        let k_f = 2f64.sqrt() * kf;
        let q = 1.0;
        let alpha_ref = -(u0 * u0 / (2.0 * eta * k_f)) * k_f * k_f / (k_f * k_f + q * q);
        let eta_ref = (u0 * u0 / (2.0 * eta * k_f * k_f)) * k_f * k_f / (k_f * k_f + q * q);
        for z in 0..nzp {
            assert_relative_eq!(a[[z, 0, 0]], alpha_ref, epsilon = 1e-10);
            assert_relative_eq!(a[[z, 1, 1]], alpha_ref, epsilon = 1e-10);
            assert_relative_eq!(e[[z, 0, 0]], eta_ref, epsilon = 1e-10);
            assert_relative_eq!(e[[z, 1, 1]], eta_ref, epsilon = 1e-10);
            assert!(a[[z, 0, 1]].abs() < 1e-12 && e[[z, 1, 0]].abs() < 1e-12);
        }
        assert!(TestFieldSolver::new([n, n, nzp], [dx, dx, dz], eta, 0.7, true).is_err());
    }
}
