//! Dense row-major matrices and an LU factorisation with partial pivoting, reused for many solves.

use rayon::prelude::*;

use crate::error::{CoreError, CoreResult};

/// Trailing-block size (entries) above which an elimination step runs in parallel.
const PARALLEL_BLOCK: usize = 128 * 128;

/// A dense square matrix stored row-major.
#[derive(Debug, Clone, PartialEq)]
pub struct Dense {
    /// Number of rows (and columns).
    pub n: usize,
    /// Entries, row after row.
    pub a: Vec<f64>,
}

impl Dense {
    /// The n x n zero matrix.
    pub fn zeros(n: usize) -> Self {
        Self {
            n,
            a: vec![0.0; n * n],
        }
    }

    /// Entry (i, j).
    pub fn get(&self, i: usize, j: usize) -> f64 {
        self.a[i * self.n + j]
    }

    /// Row i.
    pub fn row(&self, i: usize) -> &[f64] {
        &self.a[i * self.n..(i + 1) * self.n]
    }

    /// y = A x.
    pub fn matvec(&self, x: &[f64]) -> Vec<f64> {
        self.a
            .par_chunks(self.n.max(1))
            .map(|row| row.iter().zip(x).map(|(a, b)| a * b).sum())
            .collect()
    }
}

/// LU factors P A = L U (unit lower L), stored in one matrix.
#[derive(Debug, Clone)]
pub struct Lu {
    lu: Dense,
    perm: Vec<usize>,
}

impl Lu {
    /// Factor `a` with partial pivoting. A zero or non-finite pivot gives a convergence error naming
    /// `what` (the matrix is singular to working precision).
    pub fn factor(mut a: Dense, what: &str) -> CoreResult<Self> {
        let n = a.n;
        let mut perm: Vec<usize> = (0..n).collect();
        let scale = a.a.iter().fold(0.0f64, |s, v| s.max(v.abs()));
        for k in 0..n {
            let (piv, pmax) = (k..n)
                .map(|i| (i, a.a[i * n + k].abs()))
                .fold((k, -1.0), |b, c| if c.1 > b.1 { c } else { b });
            if !pmax.is_finite() || pmax <= scale * 1e-300 {
                return Err(CoreError::convergence(
                    format!("{what}: matrix is singular (zero pivot at column {k})"),
                    f64::INFINITY,
                ));
            }
            if piv != k {
                for j in 0..n {
                    a.a.swap(k * n + j, piv * n + j);
                }
                perm.swap(k, piv);
            }
            let (head, tail) = a.a.split_at_mut((k + 1) * n);
            let pivot_row = &head[k * n..(k + 1) * n];
            let d = pivot_row[k];
            let eliminate = |row: &mut [f64]| {
                let f = row[k] / d;
                row[k] = f;
                if f != 0.0 {
                    for (r, p) in row[k + 1..].iter_mut().zip(&pivot_row[k + 1..]) {
                        *r -= f * p;
                    }
                }
            };
            // Fan out over rayon only when the trailing block is big enough to pay for the tasks.
            if (n - k) * (n - k) >= PARALLEL_BLOCK {
                tail.par_chunks_mut(n).for_each(eliminate);
            } else {
                tail.chunks_mut(n).for_each(eliminate);
            }
        }
        Ok(Self { lu: a, perm })
    }

    /// Solve A x = b.
    pub fn solve(&self, b: &[f64]) -> Vec<f64> {
        let n = self.lu.n;
        let a = &self.lu.a;
        let mut x: Vec<f64> = self.perm.iter().map(|&p| b[p]).collect();
        for i in 0..n {
            let s: f64 = a[i * n..i * n + i]
                .iter()
                .zip(&x[..i])
                .map(|(l, y)| l * y)
                .sum();
            x[i] -= s;
        }
        for i in (0..n).rev() {
            let s: f64 = a[i * n + i + 1..(i + 1) * n]
                .iter()
                .zip(&x[i + 1..])
                .map(|(u, y)| u * y)
                .sum();
            x[i] = (x[i] - s) / a[i * n + i];
        }
        x
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_relative_eq;

    #[test]
    fn solves_a_pivoting_system() {
        // A hand-checkable system that needs a row swap: x = (1, 2, 3).
        let a = Dense {
            n: 3,
            a: vec![0.0, 2.0, 1.0, 1.0, 1.0, 1.0, 2.0, 0.0, 5.0],
        };
        let b = a.matvec(&[1.0, 2.0, 3.0]);
        let x = Lu::factor(a, "test").unwrap().solve(&b);
        for (xi, ei) in x.iter().zip([1.0, 2.0, 3.0]) {
            assert_relative_eq!(*xi, ei, max_relative = 1e-14);
        }
        let singular = Dense {
            n: 2,
            a: vec![1.0, 2.0, 2.0, 4.0],
        };
        assert!(Lu::factor(singular, "test").is_err());
    }
}
