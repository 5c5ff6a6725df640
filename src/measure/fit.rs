//! Per-height least-squares fit of the mean EMF to the mean field and its current,
//! `E_i = E0_i + alpha_ij B_j - eta_ij J_j` (i, j in x, y; `J = curl B = (-dB_y/dz, dB_x/dz)`), with
//! resampling errors for time-correlated samples.
//!
//! Every height is an independent problem and runs on its own rayon task. The design matrix has columns
//! `1, B_x, B_y, J_x, J_y` (the last four as selected by [`Terms`]), each scaled to unit root-mean-square so
//! the reported condition number does not depend on units. The full fit uses Householder QR (method
//! [`Method::Lstsq`]) or a truncated SVD of the triangular factor ([`Method::Svd`]). Resampled fits reuse
//! prefix sums of the normal-equation terms, so one resample costs O(blocks p^2), not O(nt p^2).

use ndarray::{Array1, Array2, Array3, ArrayView1, ArrayView3};
use rayon::prelude::*;

use super::linalg::{
    back_substitute, cholesky_solve, condition, householder_qr, jacobi_svd, svd_solve,
};
use super::rng::SplitMix64;
use crate::error::{CoreError, CoreResult};
use crate::numerics::checks;
use crate::numerics::Cancel;

/// Which coefficient groups enter the fit (the offset `E0` always does).
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct Terms {
    /// Fit `alpha_ij` (columns `B_x`, `B_y`).
    pub alpha: bool,
    /// Fit `eta_ij` (columns `J_x`, `J_y`).
    pub eta: bool,
}

/// How the full-sample fit is solved.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Method {
    /// Householder QR and back substitution.
    Lstsq,
    /// SVD of the triangular factor; singular values below `rcond * s_max` are dropped.
    Svd {
        /// Relative cut-off for singular values.
        rcond: f64,
    },
}

/// How the standard errors are estimated.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Errors {
    /// Moving-block bootstrap: `n_resamples` series built from random contiguous blocks of
    /// `block_length` samples (automatic from the residual autocorrelation when `None`).
    Bootstrap {
        /// Number of bootstrap resamples.
        n_resamples: usize,
        /// Block length in samples, or `None` for automatic.
        block_length: Option<usize>,
    },
    /// Batch means: fit each of `n_blocks` contiguous sub-intervals, error = spread / sqrt(n_blocks).
    Blocks {
        /// Number of contiguous sub-intervals.
        n_blocks: usize,
    },
}

/// Options of [`fit_emf`].
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct FitOptions {
    /// Coefficient groups to fit.
    pub terms: Terms,
    /// Solver of the full fit.
    pub method: Method,
    /// Error estimate.
    pub errors: Errors,
    /// Fits whose scaled design matrix has a condition number above this are degenerate.
    pub cond_limit: f64,
    /// Seed of the bootstrap random numbers (each height derives its own stream from it).
    pub seed: u64,
}

/// Result of [`fit_emf`]; unfitted or degenerate entries are NaN.
#[derive(Debug, Clone)]
pub struct FitOutput {
    /// `alpha_ij` per height, `(nz, 2, 2)`.
    pub alpha: Array3<f64>,
    /// `eta_ij` per height, `(nz, 2, 2)`.
    pub eta: Array3<f64>,
    /// Standard errors of `alpha`.
    pub alpha_err: Array3<f64>,
    /// Standard errors of `eta`.
    pub eta_err: Array3<f64>,
    /// `E0_i` per height, `(nz, 2)`.
    pub offset: Array2<f64>,
    /// Standard errors of `offset`.
    pub offset_err: Array2<f64>,
    /// Root-mean-square residual of each EMF component, `(nz, 2)`.
    pub residual: Array2<f64>,
    /// Condition number of the column-scaled design matrix, `(nz,)`.
    pub condition_number: Array1<f64>,
    /// Whether the fit at each height was degenerate (condition number above the limit).
    pub degenerate: Vec<bool>,
    /// Integrated autocorrelation time of the residuals, in samples, `(nz,)`.
    pub correlation_samples: Array1<f64>,
    /// Block length used by the bootstrap, in samples (batch length for `Blocks`), `(nz,)`.
    pub block_length: Vec<usize>,
}

/// Coefficients `[E0, alpha, eta]` of one component i, flattened per height.
struct HeightFit {
    coef: [[f64; 5]; 2],
    err: [[f64; 5]; 2],
    residual: [f64; 2],
    cond: f64,
    degenerate: bool,
    tau: f64,
    block: usize,
}

/// Weights and indices of the second-order derivative along z at height `k` (the rule of `numpy.gradient`
/// with `edge_order=2`, valid on non-uniform grids).
pub fn derivative_stencil(z: &[f64], k: usize) -> ([usize; 3], [f64; 3]) {
    let nz = z.len();
    if k == 0 {
        let (h1, h2) = (z[1] - z[0], z[2] - z[1]);
        let a = -(2.0 * h1 + h2) / (h1 * (h1 + h2));
        let b = (h1 + h2) / (h1 * h2);
        let c = -h1 / (h2 * (h1 + h2));
        ([0, 1, 2], [a, b, c])
    } else if k == nz - 1 {
        let (h1, h2) = (z[nz - 2] - z[nz - 3], z[nz - 1] - z[nz - 2]);
        let a = h2 / (h1 * (h1 + h2));
        let b = -(h2 + h1) / (h1 * h2);
        let c = (2.0 * h2 + h1) / (h2 * (h1 + h2));
        ([nz - 3, nz - 2, nz - 1], [a, b, c])
    } else {
        let (h1, h2) = (z[k] - z[k - 1], z[k + 1] - z[k]);
        let d = h1 * h2 * (h1 + h2);
        (
            [k - 1, k, k + 1],
            [-h2 * h2 / d, (h2 * h2 - h1 * h1) / d, h1 * h1 / d],
        )
    }
}

/// Fit the mean EMF at every height; see the module docs. `mean_b` and `emf` are `(nt, nz, 3)`, `z` is
/// `(nz,)` and strictly increasing.
pub fn fit_emf(
    mean_b: ArrayView3<f64>,
    emf: ArrayView3<f64>,
    z: ArrayView1<f64>,
    opts: &FitOptions,
    cancel: &Cancel,
) -> CoreResult<FitOutput> {
    let (nt, nz, nc) = mean_b.dim();
    if nc != 3 {
        return Err(CoreError::input(
            "mean_b",
            format!(
                "last axis must have 3 components, got shape {:?}",
                mean_b.shape()
            ),
        ));
    }
    if emf.dim() != (nt, nz, 3) {
        return Err(CoreError::input(
            "emf",
            format!(
                "must have the shape of mean_b {:?}, got {:?}",
                mean_b.shape(),
                emf.shape()
            ),
        ));
    }
    let zv: Vec<f64> = z.iter().cloned().collect();
    checks::same_len("z", zv.len(), "mean_b axis 1", nz)?;
    checks::increasing("z", &zv, 3)?;
    checks::finite("mean_b", mean_b.iter())?;
    checks::finite("emf", emf.iter())?;
    if !opts.terms.alpha && !opts.terms.eta {
        return Err(CoreError::input(
            "terms",
            "must name at least one of alpha, eta",
        ));
    }
    let p = 1 + 2 * usize::from(opts.terms.alpha) + 2 * usize::from(opts.terms.eta);
    if nt < p + 2 {
        return Err(CoreError::input(
            "mean_b",
            format!(
                "needs at least {} time samples for {p} unknowns per component, got {nt}",
                p + 2
            ),
        ));
    }
    match opts.errors {
        Errors::Bootstrap {
            n_resamples,
            block_length,
        } => {
            if n_resamples < 2 {
                return Err(CoreError::input(
                    "n_resamples",
                    format!("must be at least 2, got {n_resamples}"),
                ));
            }
            if let Some(l) = block_length {
                if l == 0 || l > nt {
                    return Err(CoreError::input(
                        "block_length",
                        format!("must be between 1 and the number of samples {nt}, got {l}"),
                    ));
                }
            }
        }
        Errors::Blocks { n_blocks } => {
            if n_blocks < 2 || nt / n_blocks < p + 1 {
                return Err(CoreError::input(
                    "n_blocks",
                    format!(
                        "needs 2 or more blocks of at least {} samples each; {nt} samples in {n_blocks} blocks",
                        p + 1
                    ),
                ));
            }
        }
    }
    if let Method::Svd { rcond } = opts.method {
        if !(rcond.is_finite() && (0.0..1.0).contains(&rcond)) {
            return Err(CoreError::input(
                "rcond",
                format!("must be in [0, 1), got {rcond}"),
            ));
        }
    }
    if opts.cond_limit.is_nan() || opts.cond_limit <= 1.0 {
        return Err(CoreError::input(
            "cond_limit",
            format!("must exceed 1, got {}", opts.cond_limit),
        ));
    }

    // Heights are processed in chunks: each chunk's data (plus the stencil neighbours) is first copied
    // into a height-major buffer, so the per-height work reads contiguous memory instead of striding
    // through the whole (nt, nz, 3) array; cancellation is checked between heights.
    let mut fits: Vec<HeightFit> = Vec::with_capacity(nz);
    for k0 in (0..nz).step_by(CHUNK) {
        cancel.check()?;
        let k1 = (k0 + CHUNK).min(nz);
        let chunk = Chunk::gather(&mean_b, &emf, k0.saturating_sub(2), (k1 + 2).min(nz));
        let part = (k0..k1)
            .into_par_iter()
            .map(|k| {
                cancel.check()?;
                let out = fit_height(&chunk, &zv, k, opts);
                cancel.advance(1);
                Ok(out)
            })
            .collect::<CoreResult<Vec<_>>>()?;
        fits.extend(part);
    }

    let mut out = FitOutput {
        alpha: Array3::from_elem((nz, 2, 2), f64::NAN),
        eta: Array3::from_elem((nz, 2, 2), f64::NAN),
        alpha_err: Array3::from_elem((nz, 2, 2), f64::NAN),
        eta_err: Array3::from_elem((nz, 2, 2), f64::NAN),
        offset: Array2::from_elem((nz, 2), f64::NAN),
        offset_err: Array2::from_elem((nz, 2), f64::NAN),
        residual: Array2::from_elem((nz, 2), f64::NAN),
        condition_number: Array1::zeros(nz),
        degenerate: vec![false; nz],
        correlation_samples: Array1::zeros(nz),
        block_length: vec![0; nz],
    };
    for (k, f) in fits.iter().enumerate() {
        out.condition_number[k] = f.cond;
        out.degenerate[k] = f.degenerate;
        out.correlation_samples[k] = f.tau;
        out.block_length[k] = f.block;
        for i in 0..2 {
            out.residual[[k, i]] = f.residual[i];
            out.offset[[k, i]] = f.coef[i][0];
            out.offset_err[[k, i]] = f.err[i][0];
            for j in 0..2 {
                if opts.terms.alpha {
                    out.alpha[[k, i, j]] = f.coef[i][1 + j];
                    out.alpha_err[[k, i, j]] = f.err[i][1 + j];
                }
                if opts.terms.eta {
                    // The J columns carry -eta_ij.
                    out.eta[[k, i, j]] = -f.coef[i][3 + j];
                    out.eta_err[[k, i, j]] = f.err[i][3 + j];
                }
            }
        }
    }
    Ok(out)
}

/// Number of entries of one sample's normal-equation terms: the upper triangle of `a a^T` and `a y^T`.
fn n_terms(p: usize) -> usize {
    p * (p + 1) / 2 + 2 * p
}

/// Heights per chunk of [`fit_emf`].
const CHUNK: usize = 32;

/// The x and y components of `mean_b` and `emf` for heights `lo..hi`, height-major and contiguous in time.
struct Chunk {
    lo: usize,
    nt: usize,
    b: Vec<f64>,
    e: Vec<f64>,
}

impl Chunk {
    fn gather(mean_b: &ArrayView3<f64>, emf: &ArrayView3<f64>, lo: usize, hi: usize) -> Self {
        let nt = mean_b.dim().0;
        let width = hi - lo;
        let mut b = vec![0.0; width * 2 * nt];
        let mut e = vec![0.0; width * 2 * nt];
        for t in 0..nt {
            for h in lo..hi {
                for c in 0..2 {
                    b[((h - lo) * 2 + c) * nt + t] = mean_b[[t, h, c]];
                    e[((h - lo) * 2 + c) * nt + t] = emf[[t, h, c]];
                }
            }
        }
        Self { lo, nt, b, e }
    }

    fn b(&self, h: usize, c: usize) -> &[f64] {
        let start = ((h - self.lo) * 2 + c) * self.nt;
        &self.b[start..start + self.nt]
    }

    fn e(&self, h: usize, c: usize) -> &[f64] {
        let start = ((h - self.lo) * 2 + c) * self.nt;
        &self.e[start..start + self.nt]
    }
}

fn fit_height(chunk: &Chunk, z: &[f64], k: usize, opts: &FitOptions) -> HeightFit {
    let nt = chunk.nt;
    let (idx, w) = derivative_stencil(z, k);
    let mut cols: Vec<usize> = vec![0];
    if opts.terms.alpha {
        cols.extend([1, 2]);
    }
    if opts.terms.eta {
        cols.extend([3, 4]);
    }
    let p = cols.len();
    // Design matrix (row-major nt x p) and right-hand sides (nt x 2).
    let mut a = vec![0.0; nt * p];
    let mut y = vec![0.0; nt * 2];
    let (bx, by) = (chunk.b(k, 0), chunk.b(k, 1));
    let sx = [chunk.b(idx[0], 0), chunk.b(idx[1], 0), chunk.b(idx[2], 0)];
    let sy = [chunk.b(idx[0], 1), chunk.b(idx[1], 1), chunk.b(idx[2], 1)];
    let (ex, ey) = (chunk.e(k, 0), chunk.e(k, 1));
    for t in 0..nt {
        let dbx = w[0] * sx[0][t] + w[1] * sx[1][t] + w[2] * sx[2][t];
        let dby = w[0] * sy[0][t] + w[1] * sy[1][t] + w[2] * sy[2][t];
        let full = [1.0, bx[t], by[t], -dby, dbx];
        for (c, &col) in cols.iter().enumerate() {
            a[t * p + c] = full[col];
        }
        y[t * 2] = ex[t];
        y[t * 2 + 1] = ey[t];
    }
    let mut scale = vec![0.0; p];
    for c in 0..p {
        scale[c] = ((0..nt).map(|t| a[t * p + c] * a[t * p + c]).sum::<f64>() / nt as f64).sqrt();
    }
    let nan = HeightFit {
        coef: [[f64::NAN; 5]; 2],
        err: [[f64::NAN; 5]; 2],
        residual: [f64::NAN; 2],
        cond: f64::INFINITY,
        degenerate: true,
        tau: f64::NAN,
        block: 0,
    };
    if scale.iter().any(|&s| s == 0.0 || !s.is_finite()) {
        return nan;
    }
    for t in 0..nt {
        for c in 0..p {
            a[t * p + c] /= scale[c];
        }
    }
    let mut aq = a.clone();
    let mut qy = y.clone();
    let r = householder_qr(&mut aq, nt, p, &mut qy, 2);
    let (_, s, _) = jacobi_svd(&r, p);
    let cond = condition(&s);
    if cond.is_nan() || cond > opts.cond_limit {
        return HeightFit { cond, ..nan };
    }
    let x = match opts.method {
        Method::Lstsq => back_substitute(&r, p, &qy[..2 * p], 2),
        Method::Svd { rcond } => svd_solve(&r, p, &qy[..2 * p], 2, rcond),
    };
    // Residual series in time order (needed for the automatic block length).
    let mut res = vec![0.0; nt * 2];
    let mut residual = [0.0; 2];
    for t in 0..nt {
        for i in 0..2 {
            let fit: f64 = (0..p).map(|c| a[t * p + c] * x[c * 2 + i]).sum();
            res[t * 2 + i] = y[t * 2 + i] - fit;
            residual[i] += res[t * 2 + i] * res[t * 2 + i];
        }
    }
    for r in residual.iter_mut() {
        *r = (*r / nt as f64).sqrt();
    }
    let tau = (0..2)
        .map(|i| integrated_time(&res, i, nt))
        .fold(1.0, f64::max);

    // Prefix sums of the per-sample normal-equation terms.
    let q = n_terms(p);
    let mut prefix = vec![0.0; (nt + 1) * q];
    for t in 0..nt {
        let (head, tail) = prefix.split_at_mut((t + 1) * q);
        let prev = &head[t * q..];
        let cur = &mut tail[..q];
        let row = &a[t * p..(t + 1) * p];
        let mut e = 0;
        for i in 0..p {
            for j in i..p {
                cur[e] = prev[e] + row[i] * row[j];
                e += 1;
            }
        }
        for &ri in row {
            for c in 0..2 {
                cur[e] = prev[e] + ri * y[t * 2 + c];
                e += 1;
            }
        }
    }
    let solve_range = |acc: &[f64]| -> Vec<f64> {
        let mut g = vec![0.0; p * p];
        let mut rhs = vec![0.0; p * 2];
        let mut e = 0;
        for i in 0..p {
            for j in i..p {
                g[i * p + j] = acc[e];
                g[j * p + i] = acc[e];
                e += 1;
            }
        }
        rhs.copy_from_slice(&acc[e..e + 2 * p]);
        match opts.method {
            Method::Lstsq => {
                cholesky_solve(&g, p, &rhs, 2).unwrap_or_else(|| svd_solve(&g, p, &rhs, 2, 1e-14))
            }
            Method::Svd { rcond } => svd_solve(&g, p, &rhs, 2, rcond * rcond),
        }
    };
    let add_range = |acc: &mut [f64], lo: usize, hi: usize| {
        for e in 0..q {
            acc[e] += prefix[hi * q + e] - prefix[lo * q + e];
        }
    };

    let mut samples: Vec<Vec<f64>> = Vec::new();
    let (block, spread_factor) = match opts.errors {
        Errors::Bootstrap {
            n_resamples,
            block_length,
        } => {
            let l = block_length.unwrap_or_else(|| auto_block_length(nt, tau));
            let mut rng =
                SplitMix64::new(opts.seed ^ (k as u64).wrapping_mul(0x9E37_79B9_7F4A_7C15));
            let n_blocks = nt.div_ceil(l);
            for _ in 0..n_resamples {
                let mut acc = vec![0.0; q];
                let mut left = nt;
                for _ in 0..n_blocks {
                    let len = l.min(left);
                    let start = rng.below((nt - l + 1) as u64) as usize;
                    add_range(&mut acc, start, start + len);
                    left -= len;
                }
                samples.push(solve_range(&acc));
            }
            (l, 1.0)
        }
        Errors::Blocks { n_blocks } => {
            for b in 0..n_blocks {
                let lo = b * nt / n_blocks;
                let hi = (b + 1) * nt / n_blocks;
                let mut acc = vec![0.0; q];
                add_range(&mut acc, lo, hi);
                samples.push(solve_range(&acc));
            }
            (nt / n_blocks, 1.0 / (n_blocks as f64).sqrt())
        }
    };

    let mut coef = [[f64::NAN; 5]; 2];
    let mut err = [[f64::NAN; 5]; 2];
    let m = samples.len() as f64;
    for (c, &col) in cols.iter().enumerate() {
        for i in 0..2 {
            coef[i][col] = x[c * 2 + i] / scale[c];
            let mean = samples.iter().map(|s| s[c * 2 + i]).sum::<f64>() / m;
            let var = samples
                .iter()
                .map(|s| (s[c * 2 + i] - mean).powi(2))
                .sum::<f64>()
                / (m - 1.0);
            err[i][col] = var.sqrt() * spread_factor / scale[c];
        }
    }
    HeightFit {
        coef,
        err,
        residual,
        cond,
        degenerate: false,
        tau,
        block,
    }
}

/// Integrated autocorrelation time `1 + 2 sum_k rho_k` of column `i` of the `(nt, 2)` series, summing
/// until the first non-positive lag (at most nt / 4 lags).
fn integrated_time(series: &[f64], i: usize, nt: usize) -> f64 {
    let mean = (0..nt).map(|t| series[t * 2 + i]).sum::<f64>() / nt as f64;
    let var = (0..nt)
        .map(|t| (series[t * 2 + i] - mean).powi(2))
        .sum::<f64>();
    if var == 0.0 {
        return 1.0;
    }
    let mut tau = 1.0;
    for lag in 1..=(nt / 4) {
        let c: f64 = (0..nt - lag)
            .map(|t| (series[t * 2 + i] - mean) * (series[(t + lag) * 2 + i] - mean))
            .sum::<f64>()
            / var;
        if c <= 0.0 {
            break;
        }
        tau += 2.0 * c;
    }
    tau
}

/// Automatic moving-block length: the larger of `nt^(1/3)` and four integrated autocorrelation times,
/// but no more than a fifth of the series.
pub fn auto_block_length(nt: usize, tau: f64) -> usize {
    let l = (nt as f64).cbrt().max(4.0 * tau).ceil() as usize;
    l.clamp(1, (nt / 5).max(1))
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_relative_eq;
    use ndarray::Array3;

    #[test]
    fn derivative_stencil_is_exact_for_quadratics() {
        // Derived: a three-point second-order rule differentiates polynomials of degree <= 2 exactly.
        let z = [0.0, 0.3, 0.7, 1.2, 2.0];
        let f = |x: f64| 1.0 - 2.0 * x + 3.0 * x * x;
        for k in 0..z.len() {
            let (idx, w) = derivative_stencil(&z, k);
            let d: f64 = (0..3).map(|s| w[s] * f(z[idx[s]])).sum();
            assert_relative_eq!(d, -2.0 + 6.0 * z[k], epsilon = 1e-12);
        }
    }

    #[test]
    fn noiseless_data_gives_back_the_coefficients() {
        // Derived: E built exactly from known alpha, eta, E0 is reproduced to rounding.
        let (nt, nz) = (40, 6);
        let z: Vec<f64> = (0..nz).map(|k| k as f64 * 0.5).collect();
        let mut b = Array3::zeros((nt, nz, 3));
        for t in 0..nt {
            for k in 0..nz {
                let (tt, zz) = (t as f64, z[k]);
                b[[t, k, 0]] =
                    (0.3 * tt).sin() + zz * (0.11 * tt).cos() + 0.2 * zz * zz * (0.05 * tt).sin();
                b[[t, k, 1]] = (0.17 * tt).cos() - 0.5 * zz * (0.23 * tt).sin()
                    + 0.1 * zz * zz * (0.4 * tt).cos();
            }
        }
        let alpha = [[0.5, -0.2], [0.1, 0.7]];
        let eta = [[2.0, 0.3], [-0.4, 1.5]];
        let mut e = Array3::zeros((nt, nz, 3));
        for t in 0..nt {
            for k in 0..nz {
                let (idx, w) = derivative_stencil(&z, k);
                let dbx: f64 = (0..3).map(|s| w[s] * b[[t, idx[s], 0]]).sum();
                let dby: f64 = (0..3).map(|s| w[s] * b[[t, idx[s], 1]]).sum();
                let jj = [-dby, dbx];
                for i in 0..2 {
                    e[[t, k, i]] = 0.05 + alpha[i][0] * b[[t, k, 0]] + alpha[i][1] * b[[t, k, 1]]
                        - eta[i][0] * jj[0]
                        - eta[i][1] * jj[1];
                }
            }
        }
        let zz = ndarray::Array1::from(z.clone());
        for method in [Method::Lstsq, Method::Svd { rcond: 1e-12 }] {
            let opts = FitOptions {
                terms: Terms {
                    alpha: true,
                    eta: true,
                },
                method,
                errors: Errors::Blocks { n_blocks: 4 },
                cond_limit: 1e8,
                seed: 1,
            };
            let out = fit_emf(b.view(), e.view(), zz.view(), &opts, &Cancel::new()).unwrap();
            for k in 0..nz {
                for i in 0..2 {
                    assert_relative_eq!(out.offset[[k, i]], 0.05, epsilon = 1e-9);
                    for j in 0..2 {
                        assert_relative_eq!(out.alpha[[k, i, j]], alpha[i][j], epsilon = 1e-9);
                        assert_relative_eq!(out.eta[[k, i, j]], eta[i][j], epsilon = 1e-9);
                    }
                    assert!(out.residual[[k, i]] < 1e-10);
                }
            }
        }
    }

    #[test]
    fn constant_field_is_degenerate_and_bad_input_is_named() {
        // Derived: a mean field that never changes makes the B columns collinear with the offset column.
        let (nt, nz) = (20, 4);
        let b = Array3::from_elem((nt, nz, 3), 1.0);
        let e = Array3::from_elem((nt, nz, 3), 0.5);
        let z = ndarray::Array1::from(vec![0.0, 1.0, 2.0, 3.0]);
        let opts = FitOptions {
            terms: Terms {
                alpha: true,
                eta: false,
            },
            method: Method::Lstsq,
            errors: Errors::Bootstrap {
                n_resamples: 10,
                block_length: None,
            },
            cond_limit: 1e8,
            seed: 0,
        };
        let out = fit_emf(b.view(), e.view(), z.view(), &opts, &Cancel::new()).unwrap();
        assert!(out.degenerate.iter().all(|&d| d));
        assert!(out.alpha.iter().all(|v| v.is_nan()));
        let short = Array3::from_elem((nt - 1, nz, 3), 0.5);
        let err = fit_emf(b.view(), short.view(), z.view(), &opts, &Cancel::new()).unwrap_err();
        assert!(err.to_string().starts_with("emf:"));
    }
}
