//! Element-wise kernels over arrays of any shape, parallel with rayon once the array is large enough.
//!
//! Inputs are `ArrayView`s (any strides, including the zero strides of a broadcast view); all inputs of
//! one call must share the output shape, which the caller obtains by broadcasting first.

use ndarray::{ArrayD, ArrayViewD, Zip};

use crate::error::{CoreError, CoreResult};

/// Below this many elements a kernel runs on the calling thread; above it rayon splits the work.
pub const PARALLEL_THRESHOLD: usize = 1 << 14;

/// `InputError` unless `b` (named `arg_b`) has the shape of `a` (named `arg_a`).
pub fn same_shape(
    arg_a: &str,
    a: &ArrayViewD<'_, f64>,
    arg_b: &str,
    b: &ArrayViewD<'_, f64>,
) -> CoreResult<()> {
    if a.shape() != b.shape() {
        return Err(CoreError::input(
            arg_b,
            format!(
                "has shape {:?} but {arg_a} has shape {:?}",
                b.shape(),
                a.shape()
            ),
        ));
    }
    Ok(())
}

/// `out[i] = f(a[i])`.
pub fn map1<F>(a: &ArrayViewD<'_, f64>, f: F) -> ArrayD<f64>
where
    F: Fn(f64) -> f64 + Sync + Send,
{
    let mut out = ArrayD::<f64>::zeros(a.raw_dim());
    let zip = Zip::from(&mut out).and(a);
    if a.len() >= PARALLEL_THRESHOLD {
        zip.par_for_each(|o, &x| *o = f(x));
    } else {
        zip.for_each(|o, &x| *o = f(x));
    }
    out
}

/// `out[i] = f(a[i], b[i])`; the shapes must agree (named in the error).
pub fn map2<F>(
    names: [&str; 2],
    a: &ArrayViewD<'_, f64>,
    b: &ArrayViewD<'_, f64>,
    f: F,
) -> CoreResult<ArrayD<f64>>
where
    F: Fn(f64, f64) -> f64 + Sync + Send,
{
    same_shape(names[0], a, names[1], b)?;
    let mut out = ArrayD::<f64>::zeros(a.raw_dim());
    let zip = Zip::from(&mut out).and(a).and(b);
    if a.len() >= PARALLEL_THRESHOLD {
        zip.par_for_each(|o, &x, &y| *o = f(x, y));
    } else {
        zip.for_each(|o, &x, &y| *o = f(x, y));
    }
    Ok(out)
}

/// `out[i] = f(a[i], b[i], c[i])`; the shapes must agree (named in the error).
pub fn map3<F>(
    names: [&str; 3],
    a: &ArrayViewD<'_, f64>,
    b: &ArrayViewD<'_, f64>,
    c: &ArrayViewD<'_, f64>,
    f: F,
) -> CoreResult<ArrayD<f64>>
where
    F: Fn(f64, f64, f64) -> f64 + Sync + Send,
{
    same_shape(names[0], a, names[1], b)?;
    same_shape(names[0], a, names[2], c)?;
    let mut out = ArrayD::<f64>::zeros(a.raw_dim());
    let zip = Zip::from(&mut out).and(a).and(b).and(c);
    if a.len() >= PARALLEL_THRESHOLD {
        zip.par_for_each(|o, &x, &y, &z| *o = f(x, y, z));
    } else {
        zip.for_each(|o, &x, &y, &z| *o = f(x, y, z));
    }
    Ok(out)
}

#[cfg(test)]
mod tests {
    use super::*;
    use ndarray::{Array1, Array2, IxDyn};

    #[test]
    fn maps_honour_strides_and_shapes() {
        let a = Array2::from_shape_fn((3, 4), |(i, j)| (i * 4 + j) as f64);
        let t = a.t().into_dyn();
        let out = map1(&t, |x| 2.0 * x);
        assert_eq!(out.shape(), &[4, 3]);
        assert_eq!(out[IxDyn(&[1, 2])], 2.0 * a[(2, 1)]);
        // A broadcast view (zero stride) is read correctly.
        let row = Array1::from(vec![1.0, 2.0, 3.0]);
        let b = row.broadcast((4, 3)).unwrap().into_dyn();
        let s = map2(["a", "b"], &t, &b, |x, y| x + y).unwrap();
        assert_eq!(s[IxDyn(&[3, 2])], a[(2, 3)] + 3.0);
        let big = ArrayD::<f64>::ones(IxDyn(&[PARALLEL_THRESHOLD + 7]));
        let p = map3(
            ["a", "b", "c"],
            &big.view(),
            &big.view(),
            &big.view(),
            |x, y, z| x + y + z,
        )
        .unwrap();
        assert!(p.iter().all(|&v| v == 3.0));
    }

    #[test]
    fn mismatched_shapes_name_the_argument() {
        let a = ArrayD::<f64>::zeros(IxDyn(&[3]));
        let b = ArrayD::<f64>::zeros(IxDyn(&[4]));
        let e = map2(["r", "z"], &a.view(), &b.view(), |x, _| x).unwrap_err();
        assert!(e
            .to_string()
            .starts_with("z: has shape [4] but r has shape [3]"));
    }
}
