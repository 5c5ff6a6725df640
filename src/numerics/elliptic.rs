//! Complete elliptic integrals K(m), E(m) of the first and second kind, and Carlson's symmetric forms.
//!
//! Parameter convention `m = k^2` (as SciPy's `ellipk`/`ellipe`), with an entry point in the
//! complementary parameter `p = 1 - m` for the logarithmic regime m -> 1, where forming `1 - m` from `m`
//! would throw away digits.
//!
//! - K from the arithmetic-geometric mean: `K = pi / (2 AGM(1, sqrt(p)))` (Abramowitz & Stegun 17.6).
//! - E from Carlson's R_D with only positive terms, no cancellation as m -> 1:
//!   `E = (p/3) [R_D(0, p, 1) + R_D(0, 1, p)]` (DLMF 19.25.1).
//! - R_F and R_D by Carlson's duplication algorithm with the fifth-order series (Carlson 1995, Numer.
//!   Algorithms 10, 13; DLMF 19.36.1-2).
//!
//! Out-of-domain arguments (m > 1, p < 0, NaN) give NaN, as SciPy does; callers validate first.

use std::f64::consts::PI;

/// Error tolerance parameter r of Carlson's algorithm (relative error of order r).
const CARLSON_R: f64 = 1e-17;
/// Iteration cap for the duplication and AGM loops (each converges in far fewer steps).
const MAX_ITER: usize = 200;

/// Arithmetic-geometric mean of two non-negative numbers.
pub fn agm(mut a: f64, mut b: f64) -> f64 {
    for _ in 0..MAX_ITER {
        if (a - b).abs() <= 2.0 * f64::EPSILON * a {
            break;
        }
        let an = 0.5 * (a + b);
        b = (a * b).sqrt();
        a = an;
    }
    0.5 * (a + b)
}

/// Complete elliptic integral of the first kind from the complementary parameter `p = 1 - m`.
/// `K = inf` at p = 0; NaN for p < 0 or NaN.
pub fn ellipkm1(p: f64) -> f64 {
    if p.is_nan() || p < 0.0 {
        return f64::NAN;
    }
    if p == 0.0 {
        return f64::INFINITY;
    }
    if p.is_infinite() {
        return 0.0;
    }
    PI / (2.0 * agm(1.0, p.sqrt()))
}

/// Complete elliptic integral of the first kind K(m), parameter m = k^2 <= 1.
pub fn ellipk(m: f64) -> f64 {
    if m.is_nan() || m > 1.0 {
        return f64::NAN;
    }
    ellipkm1(1.0 - m)
}

/// Complete elliptic integral of the second kind from the complementary parameter `p = 1 - m`.
pub fn ellipem1(p: f64) -> f64 {
    if p.is_nan() || p < 0.0 {
        return f64::NAN;
    }
    if p == 0.0 {
        return 1.0;
    }
    if p.is_infinite() {
        return f64::INFINITY;
    }
    (p / 3.0) * (carlson_rd(0.0, p, 1.0) + carlson_rd(0.0, 1.0, p))
}

/// Complete elliptic integral of the second kind E(m), parameter m = k^2 <= 1.
pub fn ellipe(m: f64) -> f64 {
    if m.is_nan() || m > 1.0 {
        return f64::NAN;
    }
    ellipem1(1.0 - m)
}

fn max3(a: f64, b: f64, c: f64) -> f64 {
    a.max(b).max(c)
}

/// Carlson's duplication: iterate `(x, y, z, A) -> ((x + lam)/4, ...)` until `4^-n q < |A_n|`, calling
/// `each(z_n, lam_n, 4^-n)` before every step; returns `(A_n, 4^-n)`.
fn duplicate(mut v: [f64; 4], q: f64, mut each: impl FnMut(f64, f64, f64)) -> (f64, f64) {
    let mut fac = 1.0;
    for _ in 0..MAX_ITER {
        if fac * q < v[3].abs() {
            break;
        }
        let (sx, sy, sz) = (v[0].sqrt(), v[1].sqrt(), v[2].sqrt());
        let lam = sx * sy + sx * sz + sy * sz;
        each(v[2], lam, fac);
        for e in v.iter_mut() {
            *e = 0.25 * (*e + lam);
        }
        fac *= 0.25;
    }
    (v[3], fac)
}

/// Carlson's symmetric integral R_F(x, y, z) = (1/2) int_0^inf dt / sqrt((t+x)(t+y)(t+z)).
/// Requires x, y, z >= 0 with at most one of them zero; NaN otherwise.
pub fn carlson_rf(x: f64, y: f64, z: f64) -> f64 {
    if !(x >= 0.0 && y >= 0.0 && z >= 0.0)
        || (x == 0.0) as u8 + (y == 0.0) as u8 + (z == 0.0) as u8 > 1
    {
        return f64::NAN;
    }
    let a0 = (x + y + z) / 3.0;
    let q =
        (3.0 * CARLSON_R).powf(-1.0 / 6.0) * max3((a0 - x).abs(), (a0 - y).abs(), (a0 - z).abs());
    let (am, fac) = duplicate([x, y, z, a0], q, |_, _, _| {});
    let xx = fac * (a0 - x) / am;
    let yy = fac * (a0 - y) / am;
    let zz = -xx - yy;
    let e2 = xx * yy - zz * zz;
    let e3 = xx * yy * zz;
    (1.0 - e2 / 10.0 + e3 / 14.0 + e2 * e2 / 24.0 - 3.0 * e2 * e3 / 44.0) / am.sqrt()
}

/// Carlson's symmetric integral R_D(x, y, z) = (3/2) int_0^inf dt / [(t+z) sqrt((t+x)(t+y)(t+z))].
/// Requires x, y >= 0 (not both zero) and z > 0; NaN otherwise.
pub fn carlson_rd(x: f64, y: f64, z: f64) -> f64 {
    if !(x >= 0.0 && y >= 0.0 && z > 0.0) || x + y == 0.0 {
        return f64::NAN;
    }
    let a0 = (x + y + 3.0 * z) / 5.0;
    let q =
        (0.25 * CARLSON_R).powf(-1.0 / 6.0) * max3((a0 - x).abs(), (a0 - y).abs(), (a0 - z).abs());
    let mut sum = 0.0;
    let (am, fac) = duplicate([x, y, z, a0], q, |zm, lam, fac| {
        sum += fac / (zm.sqrt() * (zm + lam))
    });
    let xx = fac * (a0 - x) / am;
    let yy = fac * (a0 - y) / am;
    let zz = -(xx + yy) / 3.0;
    let xy = xx * yy;
    let z2 = zz * zz;
    let e2 = xy - 6.0 * z2;
    let e3 = (3.0 * xy - 8.0 * z2) * zz;
    let e4 = 3.0 * (xy - z2) * z2;
    let e5 = xy * z2 * zz;
    let series = 1.0 - 3.0 * e2 / 14.0 + e3 / 6.0 + 9.0 * e2 * e2 / 88.0
        - 3.0 * e4 / 22.0
        - 9.0 * e2 * e3 / 52.0
        + 3.0 * e5 / 26.0;
    fac * series / (am * am.sqrt()) + 3.0 * sum
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_relative_eq;

    #[test]
    fn special_values() {
        // Source: DLMF 19.6.1, K(0) = E(0) = pi/2, E(1) = 1; DLMF 19.20.1/19.20.4, R_F(0,1,1)... via
        // R_F(x,x,x) = x^-1/2 and R_D(x,x,x) = x^-3/2 (homogeneity, DLMF 19.20.1 and 19.20.18).
        assert_relative_eq!(ellipk(0.0), PI / 2.0, max_relative = 1e-15);
        assert_relative_eq!(ellipe(0.0), PI / 2.0, max_relative = 1e-15);
        assert_eq!(ellipe(1.0), 1.0);
        assert!(ellipk(1.0).is_infinite());
        assert_relative_eq!(carlson_rf(4.0, 4.0, 4.0), 0.5, max_relative = 1e-15);
        assert_relative_eq!(carlson_rd(4.0, 4.0, 4.0), 0.125, max_relative = 1e-15);
        assert!(ellipk(1.5).is_nan() && ellipkm1(-1e-3).is_nan() && ellipe(f64::NAN).is_nan());
    }

    #[test]
    fn legendre_relation_holds() {
        // Source: DLMF 19.7.1 (Legendre's relation) E K' + E' K - K K' = pi/2.
        for &m in &[1e-12, 1e-6, 0.01, 0.3, 0.5, 0.77, 0.999, 1.0 - 1e-9] {
            let p = 1.0 - m;
            let (k, e, kp, ep) = (ellipk(m), ellipe(m), ellipkm1(m), ellipem1(m));
            let _ = p;
            assert_relative_eq!(e * kp + ep * k - k * kp, PI / 2.0, max_relative = 1e-13);
        }
    }

    #[test]
    fn carlson_forms_reproduce_legendre_forms() {
        // Source: DLMF 19.25.1, K(k) = R_F(0, k'^2, 1).
        for &p in &[1e-300, 1e-30, 1e-8, 0.2, 0.9, 3.0] {
            assert_relative_eq!(ellipkm1(p), carlson_rf(0.0, p, 1.0), max_relative = 5e-15);
        }
    }

    #[test]
    fn log_limit_near_m_one() {
        // Source: Abramowitz & Stegun 17.3.26, K ~ ln(4/sqrt(p)) + (p/4)(ln(4/sqrt(p)) - 1) as p -> 0.
        let p: f64 = 1e-20;
        let l = (4.0 / p.sqrt()).ln();
        assert_relative_eq!(ellipkm1(p), l + 0.25 * p * (l - 1.0), max_relative = 1e-15);
    }
}
