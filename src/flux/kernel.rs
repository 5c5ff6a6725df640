//! The ring-current kernel G(R, R') of a thin current sheet and the discretised operator W between the
//! surface radial field B_rs and the flux function psi on a logarithmic grid.
//!
//! `psi(R) = psi_ext(R) + int G(R, R') B_rs(R') dR'` with
//! `G(R, R') = (R + R') / (2 pi) [(2 - m) K(m) - 2 E(m)]`, `m = 4 R R' / (R + R')^2`,
//! from Jackson's loop formula (Classical Electrodynamics, section 5.5) and the sheet current
//! `K_phi = c B_rs / (2 pi)`. See docs/theory.md, "Global flux".

use std::f64::consts::PI;

use rayon::prelude::*;

use crate::error::CoreResult;
use crate::numerics::checks;
use crate::numerics::dense::Dense;
use crate::numerics::elliptic::{ellipem1, ellipkm1};
use crate::numerics::quadrature::gauss_legendre;

/// Above this chi = (R^2 + R'^2) / (2 R R') the elliptic combination is replaced by the hypergeometric
/// series of the Legendre function Q_{1/2}, where (2 - m) K - 2 E cancels.
const CHI_FAR: f64 = 1.5;
/// Gauss-Legendre points per grid interval.
const GL_POINTS: usize = 12;

/// Legendre function of the second kind Q_{1/2}(chi), chi >= 1.5, from
/// `Q_{1/2}(chi) = (pi/2) (2 chi)^{-3/2} 2F1(5/4, 3/4; 2; chi^{-2})` (DLMF 14.3.7 with 15.8.x
/// quadratic transformation; Cohl & Tohline 1999).
fn q_half_far(chi: f64) -> f64 {
    let z = 1.0 / (chi * chi);
    let (a, b, c) = (1.25, 0.75, 2.0);
    let mut term = 1.0;
    let mut sum = 1.0;
    for k in 0..200 {
        let kf = k as f64;
        term *= (a + kf) * (b + kf) / ((c + kf) * (kf + 1.0)) * z;
        sum += term;
        if term.abs() <= 1e-17 * sum {
            break;
        }
    }
    0.5 * PI * (2.0 * chi).powf(-1.5) * sum
}

/// `G(1, e^d)`: the kernel for a unit field radius and a source at log-distance d = ln(R'/R).
/// Homogeneity gives `G(R, R e^d) = R g(d)`. Infinite at d = 0 (logarithmic singularity).
pub fn kernel_log(d: f64) -> f64 {
    let chi = d.cosh();
    if chi >= CHI_FAR {
        (0.5 * d).exp() / PI * q_half_far(chi)
    } else {
        let t = (0.5 * d).tanh();
        let p = t * t;
        (1.0 + d.exp()) / (2.0 * PI) * ((1.0 + p) * ellipkm1(p) - 2.0 * ellipem1(p))
    }
}

/// `G(R, R')` for R, R' > 0 (flux function at R per unit B_rs per unit radial width of sheet at R').
pub fn ring_kernel(r: f64, r_src: f64) -> f64 {
    let chi = 0.5 * (r / r_src + r_src / r);
    if chi >= CHI_FAR {
        (r * r_src).sqrt() / PI * q_half_far(chi)
    } else {
        let q = (r - r_src) / (r + r_src);
        let p = q * q;
        (r + r_src) / (2.0 * PI) * ((1.0 + p) * ellipkm1(p) - 2.0 * ellipem1(p))
    }
}

/// Validate a radial grid: finite, positive, strictly increasing, at least `min_len` points.
pub fn check_grid(arg: &str, r: &[f64], min_len: usize) -> CoreResult<()> {
    checks::increasing(arg, r, min_len)?;
    checks::positive(arg, r)
}

/// Gauss-Legendre rule mapped to [0, 1].
fn unit_rule() -> (Vec<f64>, Vec<f64>) {
    let (x, w) = gauss_legendre(GL_POINTS);
    (
        x.iter().map(|v| 0.5 * (v + 1.0)).collect(),
        w.iter().map(|v| 0.5 * v).collect(),
    )
}

/// `int g(d) e^d hat(d) dd` over d in [a, b] (log-distances from the field point), with the hat equal to 1
/// at `b` when `rising` and at `a` otherwise. If the field point sits at an endpoint (`a == 0` or `b == 0`
/// exactly) the substitution d = end +- L s^2 removes the logarithmic singularity there.
fn half_hat(a: f64, b: f64, rising: bool, rule: &(Vec<f64>, Vec<f64>)) -> f64 {
    let len = b - a;
    let hat = |d: f64| if rising { (d - a) / len } else { (b - d) / len };
    let f = |d: f64| kernel_log(d) * d.exp() * hat(d);
    let (s, w) = rule;
    if a == 0.0 {
        s.iter()
            .zip(w)
            .map(|(s, w)| w * 2.0 * len * s * f(len * s * s))
            .sum()
    } else if b == 0.0 {
        s.iter()
            .zip(w)
            .map(|(s, w)| w * 2.0 * len * s * f(-len * s * s))
            .sum()
    } else {
        s.iter().zip(w).map(|(s, w)| w * len * f(a + len * s)).sum()
    }
}

/// Whether ln r is uniformly spaced to a relative 1e-9.
pub fn is_log_uniform(r: &[f64]) -> bool {
    let x: Vec<f64> = r.iter().map(|v| v.ln()).collect();
    let n = x.len();
    let dx = (x[n - 1] - x[0]) / (n - 1) as f64;
    x.windows(2)
        .all(|w| ((w[1] - w[0]) - dx).abs() <= 1e-9 * dx)
}

/// The operator W with `psi_i = psi_ext,i + sum_j W_ij B_rs,j` for B_rs piecewise linear in x = ln R
/// between the nodes `r` (half hats at the two ends: no sheet current outside [r_0, r_{N-1}]).
///
/// On a uniform log grid `W_ij = R_i^2 S_{j-i}` (homogeneity of G), so only O(N) integrals are needed;
/// otherwise every interval is integrated (O(N^2), in parallel).
pub fn flux_operator(r: &[f64]) -> CoreResult<Dense> {
    check_grid("r", r, 2)?;
    let n = r.len();
    let rule = unit_rule();
    let mut w = Dense::zeros(n);
    if is_log_uniform(r) {
        let dx = (r[n - 1].ln() - r[0].ln()) / (n - 1) as f64;
        // left[k]: integral over [(k-1) dx, k dx] of the hat centred at k dx (rising part);
        // right[k]: over [k dx, (k+1) dx] (falling part). Offsets k = j - i in -(n-1)..=(n-1).
        let offsets: Vec<i64> = (-(n as i64 - 1)..=(n as i64 - 1)).collect();
        let halves: Vec<(f64, f64)> = offsets
            .par_iter()
            .map(|&k| {
                let kf = k as f64;
                let left = half_hat((kf - 1.0) * dx, kf * dx, true, &rule);
                let right = half_hat(kf * dx, (kf + 1.0) * dx, false, &rule);
                (left, right)
            })
            .collect();
        w.a.par_chunks_mut(n).enumerate().for_each(|(i, row)| {
            let r2 = r[i] * r[i];
            for (j, v) in row.iter_mut().enumerate() {
                let (left, right) = halves[j + n - 1 - i];
                let s = match j {
                    0 => right,
                    _ if j == n - 1 => left,
                    _ => left + right,
                };
                *v = r2 * s;
            }
        });
    } else {
        let x: Vec<f64> = r.iter().map(|v| v.ln()).collect();
        w.a.par_chunks_mut(n).enumerate().for_each(|(i, row)| {
            let r2 = r[i] * r[i];
            for (j, v) in row.iter_mut().enumerate() {
                let mut s = 0.0;
                if j > 0 {
                    s += half_hat(x[j - 1] - x[i], x[j] - x[i], true, &rule);
                }
                if j + 1 < n {
                    s += half_hat(x[j] - x[i], x[j + 1] - x[i], false, &rule);
                }
                *v = r2 * s;
            }
        });
    }
    Ok(w)
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_relative_eq;

    #[test]
    fn symmetric_and_homogeneous() {
        // Derived: docs/theory.md "Global flux", G is a mutual inductance (symmetric) of degree 1.
        // Tolerance 1e-12: scaling 3.0001 by 7 rounds |R - R'| by ~1e-13 relative near the log singularity.
        for &(a, b) in &[(1.0, 1.3), (0.2, 5.0), (3.0, 3.0001), (1.0, 1e4)] {
            assert_relative_eq!(ring_kernel(a, b), ring_kernel(b, a), max_relative = 1e-14);
            assert_relative_eq!(
                ring_kernel(7.0 * a, 7.0 * b),
                7.0 * ring_kernel(a, b),
                max_relative = 1e-12
            );
            assert_relative_eq!(
                ring_kernel(a, b),
                a * kernel_log((b / a).ln()),
                max_relative = 1e-12
            );
        }
    }

    #[test]
    fn branches_agree_at_the_switch() {
        // The elliptic and hypergeometric forms of the same function (Cohl & Tohline 1999 identity).
        let d = CHI_FAR.acosh();
        let t = (0.5 * d).tanh();
        let p = t * t;
        let elliptic = (1.0 + d.exp()) / (2.0 * PI) * ((1.0 + p) * ellipkm1(p) - 2.0 * ellipem1(p));
        assert_relative_eq!(elliptic, kernel_log(d), max_relative = 1e-14);
        assert_relative_eq!(
            elliptic,
            kernel_log(d * (1.0 + 1e-15)),
            max_relative = 1e-13
        );
    }

    #[test]
    fn far_field_limits() {
        // Derived: docs/theory.md "Global flux": G -> R^2 / (2 R') for R' >> R (uniform field of a
        // distant ring) and G -> R'^2 / (2 R) for R' << R (dipole far field).
        assert_relative_eq!(ring_kernel(1.0, 1e6), 0.5e-6, max_relative = 1e-11);
        assert_relative_eq!(ring_kernel(1e6, 1.0), 0.5e-6, max_relative = 1e-11);
    }

    #[test]
    fn operator_is_toeplitz_consistent() {
        // The O(N) uniform path and the O(N^2) general path integrate the same intervals.
        let r: Vec<f64> = (0..40).map(|i| (0.1 * i as f64).exp()).collect();
        let fast = flux_operator(&r).unwrap();
        let mut r2 = r.clone();
        r2[39] *= 1.0 + 1e-7; // breaks uniformity, forces the general path
        let slow = flux_operator(&r2).unwrap();
        for i in 0..39 {
            for j in 0..38 {
                assert_relative_eq!(fast.get(i, j), slow.get(i, j), max_relative = 1e-6);
            }
        }
        assert!(flux_operator(&[1.0, 0.5]).is_err());
    }
}
