//! Fourth-order cumulative quadrature on a non-uniform grid.
//!
//! Each interval `[z_i, z_{i+1}]` is integrated exactly for the cubic through four neighbouring nodes
//! (`i-1 .. i+2`, shifted one-sided at the ends), so the cumulative integral converges as `dz^4` for smooth
//! integrands and is exact for cubics. The weights depend on the grid only and are computed once.

/// Integration weights of one interval: `integral over [z_i, z_{i+1}] = sum_k w[k] f[start + k]`.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct IntervalRule {
    /// First node of the four-point stencil.
    pub start: usize,
    /// Weights of the stencil nodes.
    pub w: [f64; 4],
}

/// Cumulative cubic quadrature rules for a strictly increasing grid of at least four nodes.
#[derive(Debug, Clone, PartialEq)]
pub struct CumulativeRule {
    rules: Vec<IntervalRule>,
}

impl CumulativeRule {
    /// Build the rules; `z` must be strictly increasing with at least four nodes (checked by the caller).
    pub fn new(z: &[f64]) -> Self {
        let n = z.len();
        debug_assert!(n >= 4);
        let rules = (0..n - 1)
            .map(|i| {
                let start = i.saturating_sub(1).min(n - 4);
                let h = z[i + 1] - z[i];
                // Stencil nodes in units of the interval length, measured from z_i.
                let r: [f64; 4] = std::array::from_fn(|k| (z[start + k] - z[i]) / h);
                let w = std::array::from_fn(|k| {
                    let others: Vec<f64> = (0..4).filter(|&j| j != k).map(|j| r[j]).collect();
                    let denom: f64 = others.iter().map(|rj| r[k] - rj).product();
                    h * cubic_integral_01(others[0], others[1], others[2]) / denom
                });
                IntervalRule { start, w }
            })
            .collect();
        Self { rules }
    }

    /// Number of intervals (grid nodes minus one).
    pub fn intervals(&self) -> usize {
        self.rules.len()
    }

    /// The rule of interval `i`.
    pub fn interval(&self, i: usize) -> &IntervalRule {
        &self.rules[i]
    }

    /// Integral of `f` over interval `i`.
    #[inline]
    pub fn over(&self, i: usize, f: &[f64]) -> f64 {
        let r = &self.rules[i];
        r.w.iter()
            .zip(&f[r.start..r.start + 4])
            .map(|(w, v)| w * v)
            .sum()
    }

    /// Integral of `f` over the whole grid.
    pub fn total(&self, f: &[f64]) -> f64 {
        (0..self.rules.len()).map(|i| self.over(i, f)).sum()
    }

    /// Cumulative integral from the first node, written into `out` (same length as `f`, `out[0] = 0`).
    pub fn cumulative(&self, f: &[f64], out: &mut [f64]) {
        out[0] = 0.0;
        for i in 0..self.rules.len() {
            out[i + 1] = out[i] + self.over(i, f);
        }
    }
}

/// `integral_0^1 (u - a)(u - b)(u - c) du`.
fn cubic_integral_01(a: f64, b: f64, c: f64) -> f64 {
    let e1 = a + b + c;
    let e2 = a * b + a * c + b * c;
    let e3 = a * b * c;
    0.25 - e1 / 3.0 + e2 / 2.0 - e3
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_relative_eq;

    fn stretched(n: usize, top: f64) -> Vec<f64> {
        (0..n)
            .map(|i| {
                let s = i as f64 / (n - 1) as f64;
                top * (s + 0.3 * s * s) / 1.3
            })
            .collect()
    }

    #[test]
    fn exact_for_cubics_on_a_stretched_grid() {
        let z = stretched(9, 2.0);
        let f: Vec<f64> = z.iter().map(|x| 1.0 - 2.0 * x + 0.5 * x * x * x).collect();
        let rule = CumulativeRule::new(&z);
        let mut c = vec![0.0; z.len()];
        rule.cumulative(&f, &mut c);
        for (x, ci) in z.iter().zip(&c) {
            // Exact antiderivative x - x^2 + x^4 / 8.
            assert_relative_eq!(*ci, x - x * x + x.powi(4) / 8.0, epsilon = 1e-13);
        }
    }

    #[test]
    fn fourth_order_convergence() {
        // Integral of cos over [0, 2] is sin 2.
        let err = |n: usize| {
            let z = stretched(n, 2.0);
            let f: Vec<f64> = z.iter().map(|x| x.cos()).collect();
            (CumulativeRule::new(&z).total(&f) - 2f64.sin()).abs()
        };
        let order = (err(40) / err(80)).log2();
        assert!(order > 3.7 && order < 4.5, "observed order {order}");
    }
}
