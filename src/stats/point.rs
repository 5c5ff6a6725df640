//! One-point profiles in real space: horizontal means and second moments of the fluctuations.

use ndarray::{Array2, Array3, ArrayView4};
use rayon::prelude::*;

use super::{check_vector_field, locate_non_finite};
use crate::error::{CoreError, CoreResult};
use crate::numerics::fft::Real;
use crate::numerics::Cancel;

/// Per-height one-point statistics of a velocity `u` and a magnetic field `b`.
#[derive(Debug, Clone)]
pub struct PointProfiles {
    /// Horizontal mean of u, `(nz, 3)`.
    pub mean_u: Array2<f64>,
    /// Horizontal mean of b, `(nz, 3)`.
    pub mean_b: Array2<f64>,
    /// `<u'_i u'_j>`, `(nz, 3, 3)`.
    pub reynolds: Array3<f64>,
    /// `<b'_i b'_j>`, `(nz, 3, 3)`.
    pub maxwell: Array3<f64>,
    /// `<u' x b'>`, `(nz, 3)`.
    pub emf: Array2<f64>,
}

/// Sums over each x slab of `f(slab, acc)`, reduced over slabs; `width` numbers per height.
fn slab_sums<F>(nx: usize, nz: usize, width: usize, f: F) -> Vec<f64>
where
    F: Fn(usize, &mut [f64]) + Sync,
{
    (0..nx)
        .into_par_iter()
        .fold(
            || vec![0.0; nz * width],
            |mut acc, ix| {
                f(ix, &mut acc);
                acc
            },
        )
        .reduce(
            || vec![0.0; nz * width],
            |mut a, b| {
                a.iter_mut().zip(b).for_each(|(x, y)| *x += y);
                a
            },
        )
}

/// Horizontal means of both fields: `(nz, 6)` as a flat vector, u components then b components.
fn means<T: Real, U: Real>(u: &ArrayView4<'_, T>, b: &ArrayView4<'_, U>) -> Vec<f64> {
    let (nx, ny, nz) = (u.shape()[1], u.shape()[2], u.shape()[3]);
    let mut s = slab_sums(nx, nz, 6, |ix, acc| {
        for iy in 0..ny {
            for iz in 0..nz {
                let row = &mut acc[iz * 6..iz * 6 + 6];
                for c in 0..3 {
                    row[c] += u[[c, ix, iy, iz]].widen();
                    row[3 + c] += b[[c, ix, iy, iz]].widen();
                }
            }
        }
    });
    let n = (nx * ny) as f64;
    s.iter_mut().for_each(|v| *v /= n);
    s
}

/// Mean fields, Reynolds and Maxwell tensors and mean EMF per height (two passes: means, then moments).
pub fn point_profiles<T: Real, U: Real>(
    u: ArrayView4<'_, T>,
    b: ArrayView4<'_, U>,
    cancel: &Cancel,
) -> CoreResult<PointProfiles> {
    check_vector_field("u", &u)?;
    check_vector_field("b", &b)?;
    if u.shape() != b.shape() {
        return Err(CoreError::input(
            "b",
            format!(
                "shape {:?} differs from the shape of u {:?}",
                b.shape(),
                u.shape()
            ),
        ));
    }
    let (nx, ny, nz) = (u.shape()[1], u.shape()[2], u.shape()[3]);
    let m = means(&u, &b);
    if m.iter().any(|v| !v.is_finite()) {
        locate_non_finite("u", &u)?;
        locate_non_finite("b", &b)?;
    }
    cancel.check()?;
    // Per height: 6 Reynolds (xx yy zz xy xz yz), 6 Maxwell, 3 EMF.
    const W: usize = 15;
    let s = slab_sums(nx, nz, W, |ix, acc| {
        for iy in 0..ny {
            for iz in 0..nz {
                let mz = &m[iz * 6..iz * 6 + 6];
                let mut up = [0.0; 3];
                let mut bp = [0.0; 3];
                for c in 0..3 {
                    up[c] = u[[c, ix, iy, iz]].widen() - mz[c];
                    bp[c] = b[[c, ix, iy, iz]].widen() - mz[3 + c];
                }
                let row = &mut acc[iz * W..iz * W + W];
                for (p, (i, j)) in PAIRS.iter().enumerate() {
                    row[p] += up[*i] * up[*j];
                    row[6 + p] += bp[*i] * bp[*j];
                }
                row[12] += up[1] * bp[2] - up[2] * bp[1];
                row[13] += up[2] * bp[0] - up[0] * bp[2];
                row[14] += up[0] * bp[1] - up[1] * bp[0];
            }
        }
    });
    let n = (nx * ny) as f64;
    let mut out = PointProfiles {
        mean_u: Array2::zeros((nz, 3)),
        mean_b: Array2::zeros((nz, 3)),
        reynolds: Array3::zeros((nz, 3, 3)),
        maxwell: Array3::zeros((nz, 3, 3)),
        emf: Array2::zeros((nz, 3)),
    };
    for iz in 0..nz {
        for c in 0..3 {
            out.mean_u[[iz, c]] = m[iz * 6 + c];
            out.mean_b[[iz, c]] = m[iz * 6 + 3 + c];
            out.emf[[iz, c]] = s[iz * W + 12 + c] / n;
        }
        for (p, (i, j)) in PAIRS.iter().enumerate() {
            for (t, off) in [(&mut out.reynolds, 0), (&mut out.maxwell, 6)] {
                let v = s[iz * W + off + p] / n;
                t[[iz, *i, *j]] = v;
                t[[iz, *j, *i]] = v;
            }
        }
    }
    Ok(out)
}

/// The six index pairs of a symmetric 3x3 tensor.
pub(crate) const PAIRS: [(usize, usize); 6] = [(0, 0), (1, 1), (2, 2), (0, 1), (0, 2), (1, 2)];

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_relative_eq;
    use ndarray::Array4;

    #[test]
    fn moments_of_a_hand_made_field() {
        // u' = (cos x, 0, 0) on top of a mean (1, 2, 3); b' = 2 u' plus mean (0, 0, 5): <u'x'^2> = 1/2,
        // <b'x b'x> = 2, u' x b' = 0 (parallel fluctuations). Source: elementary averages of cos^2.
        let (nx, ny, nz) = (8, 4, 3);
        let tau = 2.0 * std::f64::consts::PI;
        let u = Array4::from_shape_fn((3, nx, ny, nz), |(c, i, _, _)| {
            let x = tau * i as f64 / nx as f64;
            [1.0 + x.cos(), 2.0, 3.0][c]
        });
        let b = Array4::from_shape_fn((3, nx, ny, nz), |(c, i, _, _)| {
            let x = tau * i as f64 / nx as f64;
            [2.0 * x.cos(), 0.0, 5.0][c]
        });
        let p = point_profiles(u.view(), b.view(), &Cancel::new()).unwrap();
        for iz in 0..nz {
            assert_relative_eq!(p.mean_u[[iz, 1]], 2.0, epsilon = 1e-14);
            assert_relative_eq!(p.mean_b[[iz, 2]], 5.0, epsilon = 1e-14);
            assert_relative_eq!(p.reynolds[[iz, 0, 0]], 0.5, epsilon = 1e-14);
            assert_relative_eq!(p.maxwell[[iz, 0, 0]], 2.0, epsilon = 1e-14);
            assert_relative_eq!(p.reynolds[[iz, 1, 1]], 0.0, epsilon = 1e-14);
            for c in 0..3 {
                assert_relative_eq!(p.emf[[iz, c]], 0.0, epsilon = 1e-14);
            }
        }
    }

    #[test]
    fn rejects_bad_shapes_and_nan() {
        let u = Array4::<f64>::zeros((3, 4, 4, 4));
        let b = Array4::<f32>::zeros((3, 4, 4, 5));
        let e = point_profiles(u.view(), b.view(), &Cancel::new()).unwrap_err();
        assert!(e.to_string().starts_with("b:"));
        let mut b = Array4::<f32>::zeros((3, 4, 4, 4));
        b[[1, 2, 3, 0]] = f32::NAN;
        let e = point_profiles(u.view(), b.view(), &Cancel::new()).unwrap_err();
        assert!(e.to_string().contains("(1, 2, 3, 0)"), "{e}");
        let u2 = Array4::<f64>::zeros((2, 4, 4, 4));
        assert!(point_profiles(u2.view(), u2.view(), &Cancel::new()).is_err());
    }
}
