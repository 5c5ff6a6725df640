//! Small dense linear algebra for the per-height fits: Householder QR of a tall design matrix, one-sided
//! Jacobi SVD of a small square matrix, and a pseudo-inverse solve. Matrices are row-major `Vec<f64>`;
//! the number of columns is at most a handful, so plain loops are the fastest option.

/// Householder QR of the `n x p` row-major matrix `a` (n >= p), applied in place to the right-hand sides
/// `rhs` (`n x m`, row-major). Returns the `p x p` upper-triangular `R` (row-major); on return the first
/// `p` rows of `rhs` hold `Q^T rhs` and the rest the residual part.
pub fn householder_qr(a: &mut [f64], n: usize, p: usize, rhs: &mut [f64], m: usize) -> Vec<f64> {
    let mut v = vec![0.0; n];
    for j in 0..p {
        let mut norm2 = 0.0;
        for i in j..n {
            norm2 += a[i * p + j] * a[i * p + j];
        }
        let norm = norm2.sqrt();
        if norm == 0.0 {
            continue;
        }
        let alpha = if a[j * p + j] > 0.0 { -norm } else { norm };
        for i in j..n {
            v[i] = a[i * p + j];
        }
        v[j] -= alpha;
        let vnorm2 = norm2 - a[j * p + j] * a[j * p + j] + v[j] * v[j];
        if vnorm2 == 0.0 {
            continue;
        }
        for c in j..p {
            let mut s = 0.0;
            for i in j..n {
                s += v[i] * a[i * p + c];
            }
            let f = 2.0 * s / vnorm2;
            for i in j..n {
                a[i * p + c] -= f * v[i];
            }
        }
        for c in 0..m {
            let mut s = 0.0;
            for i in j..n {
                s += v[i] * rhs[i * m + c];
            }
            let f = 2.0 * s / vnorm2;
            for i in j..n {
                rhs[i * m + c] -= f * v[i];
            }
        }
    }
    let mut r = vec![0.0; p * p];
    for i in 0..p {
        for j in i..p {
            r[i * p + j] = a[i * p + j];
        }
    }
    r
}

/// Singular value decomposition `a = U diag(s) V^T` of a square `p x p` row-major matrix by one-sided
/// Jacobi rotations (Hestenes). Returns `(u, s, v)`, `u` and `v` row-major `p x p`, `s` unsorted. Columns
/// of `u` belonging to zero singular values are left as zero vectors.
pub fn jacobi_svd(a: &[f64], p: usize) -> (Vec<f64>, Vec<f64>, Vec<f64>) {
    let mut w = a.to_vec();
    let mut v = vec![0.0; p * p];
    for i in 0..p {
        v[i * p + i] = 1.0;
    }
    for _sweep in 0..60 {
        let mut off = 0.0_f64;
        for j in 0..p {
            for k in (j + 1)..p {
                let (mut alpha, mut beta, mut gamma) = (0.0, 0.0, 0.0);
                for i in 0..p {
                    alpha += w[i * p + j] * w[i * p + j];
                    beta += w[i * p + k] * w[i * p + k];
                    gamma += w[i * p + j] * w[i * p + k];
                }
                if gamma == 0.0 || alpha == 0.0 || beta == 0.0 {
                    continue;
                }
                off = off.max(gamma.abs() / (alpha * beta).sqrt());
                let zeta = (beta - alpha) / (2.0 * gamma);
                let t = zeta.signum() / (zeta.abs() + (1.0 + zeta * zeta).sqrt());
                let t = if zeta == 0.0 { 1.0 } else { t };
                let c = 1.0 / (1.0 + t * t).sqrt();
                let s = c * t;
                for i in 0..p {
                    let (x, y) = (w[i * p + j], w[i * p + k]);
                    w[i * p + j] = c * x - s * y;
                    w[i * p + k] = s * x + c * y;
                    let (x, y) = (v[i * p + j], v[i * p + k]);
                    v[i * p + j] = c * x - s * y;
                    v[i * p + k] = s * x + c * y;
                }
            }
        }
        if off < 1e-15 {
            break;
        }
    }
    let mut s = vec![0.0; p];
    let mut u = vec![0.0; p * p];
    for j in 0..p {
        let norm = (0..p)
            .map(|i| w[i * p + j] * w[i * p + j])
            .sum::<f64>()
            .sqrt();
        s[j] = norm;
        if norm > 0.0 {
            for i in 0..p {
                u[i * p + j] = w[i * p + j] / norm;
            }
        }
    }
    (u, s, v)
}

/// Ratio of the largest to the smallest singular value (infinite when the smallest is zero).
pub fn condition(s: &[f64]) -> f64 {
    let max = s.iter().cloned().fold(0.0, f64::max);
    let min = s.iter().cloned().fold(f64::INFINITY, f64::min);
    if min > 0.0 {
        max / min
    } else {
        f64::INFINITY
    }
}

/// Solve the square system `a x = b` (`p x p`, `m` right-hand sides, row-major) through the SVD of `a`,
/// dropping singular values below `rcond * s_max` (minimum-norm solution). Returns `x` (`p x m`).
pub fn svd_solve(a: &[f64], p: usize, b: &[f64], m: usize, rcond: f64) -> Vec<f64> {
    let (u, s, v) = jacobi_svd(a, p);
    let smax = s.iter().cloned().fold(0.0, f64::max);
    let mut x = vec![0.0; p * m];
    for (l, &sl) in s.iter().enumerate() {
        if sl <= rcond * smax || sl == 0.0 {
            continue;
        }
        for c in 0..m {
            let mut proj = 0.0;
            for i in 0..p {
                proj += u[i * p + l] * b[i * m + c];
            }
            let f = proj / sl;
            for i in 0..p {
                x[i * m + c] += v[i * p + l] * f;
            }
        }
    }
    x
}

/// Back substitution `r x = b` for upper-triangular `r` (`p x p`), `m` right-hand sides. A zero pivot gives
/// NaN in the affected unknowns (callers flag such fits as degenerate before using them).
pub fn back_substitute(r: &[f64], p: usize, b: &[f64], m: usize) -> Vec<f64> {
    let mut x = vec![0.0; p * m];
    for c in 0..m {
        for i in (0..p).rev() {
            let mut s = b[i * m + c];
            for j in (i + 1)..p {
                s -= r[i * p + j] * x[j * m + c];
            }
            x[i * m + c] = s / r[i * p + i];
        }
    }
    x
}

/// Cholesky solve of the symmetric positive-definite system `g x = b` (`p x p`, `m` right-hand sides).
/// Returns `None` when `g` is not numerically positive definite.
pub fn cholesky_solve(g: &[f64], p: usize, b: &[f64], m: usize) -> Option<Vec<f64>> {
    let mut l = vec![0.0; p * p];
    for i in 0..p {
        for j in 0..=i {
            let mut s = g[i * p + j];
            for k in 0..j {
                s -= l[i * p + k] * l[j * p + k];
            }
            if i == j {
                if s <= 0.0 || !s.is_finite() {
                    return None;
                }
                l[i * p + i] = s.sqrt();
            } else {
                l[i * p + j] = s / l[j * p + j];
            }
        }
    }
    let mut x = b.to_vec();
    for c in 0..m {
        for i in 0..p {
            let mut s = x[i * m + c];
            for k in 0..i {
                s -= l[i * p + k] * x[k * m + c];
            }
            x[i * m + c] = s / l[i * p + i];
        }
        for i in (0..p).rev() {
            let mut s = x[i * m + c];
            for k in (i + 1)..p {
                s -= l[k * p + i] * x[k * m + c];
            }
            x[i * m + c] = s / l[i * p + i];
        }
    }
    Some(x)
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_relative_eq;

    fn matmul(a: &[f64], b: &[f64], n: usize, k: usize, m: usize) -> Vec<f64> {
        let mut c = vec![0.0; n * m];
        for i in 0..n {
            for j in 0..m {
                for l in 0..k {
                    c[i * m + j] += a[i * k + l] * b[l * m + j];
                }
            }
        }
        c
    }

    #[test]
    fn svd_reconstructs_and_matches_known_singular_values() {
        // Source: diag(3, 2) rotated by orthogonal matrices has singular values 3 and 2 (definition of SVD).
        let (c, s) = (0.6_f64, 0.8_f64);
        let q = [c, -s, s, c];
        let d = [3.0, 0.0, 0.0, 2.0];
        let a = matmul(&matmul(&q, &d, 2, 2, 2), &[c, s, -s, c], 2, 2, 2);
        let (u, sv, v) = jacobi_svd(&a, 2);
        let mut sorted = sv.clone();
        sorted.sort_by(|x, y| y.partial_cmp(x).unwrap());
        assert_relative_eq!(sorted[0], 3.0, epsilon = 1e-14);
        assert_relative_eq!(sorted[1], 2.0, epsilon = 1e-14);
        let us: Vec<f64> = (0..4).map(|i| u[i] * sv[i % 2]).collect();
        let vt = [v[0], v[2], v[1], v[3]];
        let back = matmul(&us, &vt, 2, 2, 2);
        for i in 0..4 {
            assert_relative_eq!(back[i], a[i], epsilon = 1e-14);
        }
        assert_relative_eq!(condition(&sv), 1.5, epsilon = 1e-14);
    }

    #[test]
    fn qr_cholesky_and_svd_solve_agree_on_an_exact_system() {
        // Derived: an exactly consistent overdetermined system has the generating vector as its solution.
        let n = 7;
        let p = 3;
        let x_true = [1.5, -2.0, 0.25];
        let mut a = vec![0.0; n * p];
        for i in 0..n {
            let t = i as f64;
            a[i * p] = 1.0;
            a[i * p + 1] = t;
            a[i * p + 2] = (0.7 * t).sin();
        }
        let y: Vec<f64> = (0..n)
            .map(|i| (0..p).map(|j| a[i * p + j] * x_true[j]).sum())
            .collect();
        let mut g = vec![0.0; p * p];
        let mut r = vec![0.0; p];
        for i in 0..n {
            for j in 0..p {
                r[j] += a[i * p + j] * y[i];
                for k in 0..p {
                    g[j * p + k] += a[i * p + j] * a[i * p + k];
                }
            }
        }
        let xc = cholesky_solve(&g, p, &r, 1).unwrap();
        let xs = svd_solve(&g, p, &r, 1, 1e-14);
        let mut aq = a.clone();
        let mut yq = y.clone();
        let rr = householder_qr(&mut aq, n, p, &mut yq, 1);
        let xq = back_substitute(&rr, p, &yq[..p], 1);
        for j in 0..p {
            assert_relative_eq!(xc[j], x_true[j], epsilon = 1e-10);
            assert_relative_eq!(xs[j], x_true[j], epsilon = 1e-10);
            assert_relative_eq!(xq[j], x_true[j], epsilon = 1e-12);
        }
        assert!(cholesky_solve(&[1.0, 1.0, 1.0, 1.0], 2, &[1.0, 1.0], 1).is_none());
    }
}
