//! Gauss-Legendre quadrature nodes and weights on [-1, 1] (Newton iteration on P_n from the three-term
//! recurrence; Abramowitz & Stegun 25.4.29).

use std::f64::consts::PI;

/// Nodes and weights of the `n`-point Gauss-Legendre rule on [-1, 1], nodes increasing.
pub fn gauss_legendre(n: usize) -> (Vec<f64>, Vec<f64>) {
    let mut nodes = vec![0.0; n];
    let mut weights = vec![0.0; n];
    for i in 0..n.div_ceil(2) {
        // Initial guess (Tricomi), then Newton on P_n.
        let mut x = (PI * (i as f64 + 0.75) / (n as f64 + 0.5)).cos();
        let mut dp = 1.0;
        for _ in 0..100 {
            let (mut p0, mut p1) = (1.0, x);
            for k in 2..=n {
                let kf = k as f64;
                let p2 = ((2.0 * kf - 1.0) * x * p1 - (kf - 1.0) * p0) / kf;
                p0 = p1;
                p1 = p2;
            }
            let pn = if n == 0 { 1.0 } else { p1 };
            let pnm1 = if n <= 1 { 1.0 } else { p0 };
            dp = n as f64 * (x * pn - pnm1) / (x * x - 1.0);
            let dx = pn / dp;
            x -= dx;
            if dx.abs() <= 1e-16 {
                break;
            }
        }
        let w = 2.0 / ((1.0 - x * x) * dp * dp);
        nodes[i] = -x;
        nodes[n - 1 - i] = x;
        weights[i] = w;
        weights[n - 1 - i] = w;
    }
    (nodes, weights)
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_relative_eq;

    #[test]
    fn integrates_polynomials_exactly() {
        // Source: an n-point Gauss-Legendre rule is exact for degree <= 2n - 1 (Abramowitz & Stegun 25.4.29).
        for n in [1usize, 2, 5, 10, 12, 16] {
            let (x, w) = gauss_legendre(n);
            assert_relative_eq!(w.iter().sum::<f64>(), 2.0, max_relative = 1e-14);
            let deg = 2 * n - 2;
            let s: f64 = x.iter().zip(&w).map(|(x, w)| w * x.powi(deg as i32)).sum();
            assert_relative_eq!(s, 2.0 / (deg as f64 + 1.0), max_relative = 1e-13);
        }
    }
}
