//! Second-order derivatives along one axis of an n-dimensional array on a non-uniform coordinate.
//!
//! Interior points use the three-point formula for unequal spacing; the two end points use the one-sided
//! three-point formulas, so the result is second-order accurate everywhere (the scheme is the standard
//! Lagrange-interpolation derivative, the same that `numpy.gradient(..., edge_order=2)` uses).

use ndarray::{ArrayD, ArrayView1, ArrayViewD, Axis, Zip};

use crate::error::{CoreError, CoreResult};
use crate::numerics::checks;

/// Derivative of `values` along `axis` with respect to the coordinate `coord` (strictly increasing, at
/// least three points, length equal to the axis length).
pub fn gradient_along(
    values: ArrayViewD<'_, f64>,
    coord: ArrayView1<'_, f64>,
    axis: usize,
) -> CoreResult<ArrayD<f64>> {
    if axis >= values.ndim() {
        return Err(CoreError::input(
            "axis",
            format!("is {axis} but the array has {} dimensions", values.ndim()),
        ));
    }
    let x: Vec<f64> = coord.iter().copied().collect();
    checks::increasing("coords", &x, 3)?;
    checks::same_len(
        "coords",
        x.len(),
        "the grid axis",
        values.len_of(Axis(axis)),
    )?;
    checks::finite("values", values.iter())?;
    let n = x.len();
    // Stencil weights per output point: (offset of the first of three points, three weights).
    let mut stencil = Vec::with_capacity(n);
    for i in 0..n {
        if i == 0 {
            let (h1, h2) = (x[1] - x[0], x[2] - x[1]);
            stencil.push((
                0usize,
                [
                    -(2.0 * h1 + h2) / (h1 * (h1 + h2)),
                    (h1 + h2) / (h1 * h2),
                    -h1 / (h2 * (h1 + h2)),
                ],
            ));
        } else if i == n - 1 {
            let (h1, h2) = (x[n - 2] - x[n - 3], x[n - 1] - x[n - 2]);
            stencil.push((
                n - 3,
                [
                    h2 / (h1 * (h1 + h2)),
                    -(h1 + h2) / (h1 * h2),
                    (2.0 * h2 + h1) / (h2 * (h1 + h2)),
                ],
            ));
        } else {
            let (hl, hr) = (x[i] - x[i - 1], x[i + 1] - x[i]);
            stencil.push((
                i - 1,
                [
                    -hr / (hl * (hl + hr)),
                    (hr - hl) / (hl * hr),
                    hl / (hr * (hl + hr)),
                ],
            ));
        }
    }
    let mut out = ArrayD::<f64>::zeros(values.raw_dim());
    Zip::from(out.lanes_mut(Axis(axis)))
        .and(values.lanes(Axis(axis)))
        .par_for_each(|mut o, v| {
            for (i, (start, w)) in stencil.iter().enumerate() {
                o[i] = w[0] * v[*start] + w[1] * v[start + 1] + w[2] * v[start + 2];
            }
        });
    Ok(out)
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_abs_diff_eq;
    use ndarray::{Array1, Array2};

    #[test]
    fn exact_for_quadratics_on_a_non_uniform_grid() {
        // A three-point Lagrange derivative is exact for polynomials of degree two.
        let x = Array1::from(vec![0.0, 0.1, 0.35, 0.5, 1.2, 1.3]);
        let f = x.mapv(|t| 3.0 * t * t - 2.0 * t + 0.5);
        let d = gradient_along(f.view().into_dyn(), x.view(), 0).unwrap();
        for (xi, di) in x.iter().zip(d.iter()) {
            assert_abs_diff_eq!(*di, 6.0 * xi - 2.0, epsilon = 1e-12);
        }
    }

    #[test]
    fn second_order_convergence_and_axis_choice() {
        // Error ratio of about 4 per halving of the spacing: second order.
        let err = |n: usize| {
            let x = Array1::from_iter((0..n).map(|i| {
                let s = i as f64 / (n - 1) as f64;
                s + 0.2 * s * s
            }));
            let mut f = Array2::<f64>::zeros((2, n));
            for (i, xi) in x.iter().enumerate() {
                f[[0, i]] = xi.sin();
                f[[1, i]] = xi.exp();
            }
            let d = gradient_along(f.view().into_dyn(), x.view(), 1).unwrap();
            let mut e: f64 = 0.0;
            for (i, xi) in x.iter().enumerate() {
                e = e.max((d[[0, i]] - xi.cos()).abs());
                e = e.max((d[[1, i]] - xi.exp()).abs());
            }
            e
        };
        let ratio = err(41) / err(81);
        assert!(ratio > 3.5 && ratio < 4.5, "ratio {ratio}");
    }

    #[test]
    fn rejects_bad_grids() {
        let f = Array1::from(vec![1.0, 2.0, 3.0]);
        let bad = Array1::from(vec![0.0, 2.0, 1.0]);
        assert!(gradient_along(f.view().into_dyn(), bad.view(), 0).is_err());
        let short = Array1::from(vec![0.0, 1.0]);
        assert!(gradient_along(f.view().into_dyn(), short.view(), 0).is_err());
        let x = Array1::from(vec![0.0, 1.0, 2.0]);
        assert!(gradient_along(f.view().into_dyn(), x.view(), 1).is_err());
    }
}
