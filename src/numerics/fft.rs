//! Real-to-complex FFT plans over `(nx, ny, nz)` grids, shared by every stage that works in Fourier space.
//!
//! Layout. A real field `f[x, y, z]` (any strides) is transformed in two steps:
//!
//! 1. [`Fft3::forward_xy`]: a real-to-complex transform along y (keeping `ny/2 + 1` wavenumbers, `ky >= 0`)
//!    followed by a complex transform along x, giving the *mixed* representation `F[kx, ky, z]` of shape
//!    `(nx, ny/2 + 1, nz)`, z contiguous. The column `F[0, 0, :]` is `nx ny` times the horizontal mean.
//! 2. [`Fft3::z_forward`] / [`Fft3::z_inverse`]: complex transforms of one z line of length `nz_transform`
//!    (equal to `nz` for periodic z; `2 nz` for zero-padded, non-periodic z, the extra points being zero).
//!
//! [`Fft3::forward`] and [`Fft3::inverse`] chain these into full 3D transforms (for stages that need the
//! whole spectrum, e.g. a Leray projection). Transforms are unnormalised, like `numpy.fft` forward
//! transforms; [`Fft3::inverse`] divides by the number of points so that `inverse(forward(f)) = f`.
//! Wavenumbers follow `numpy.fft.fftfreq` (x, z) and `numpy.fft.rfftfreq` (y), times `2 pi`.

use std::sync::Arc;

use ndarray::{Array3, ArrayView3, ArrayViewMut3, Axis};
use rayon::prelude::*;
use realfft::num_complex::Complex;
use realfft::num_traits::Float;
use realfft::{ComplexToReal, FftNum, RealFftPlanner, RealToComplex};
use rustfft::{Fft, FftPlanner};

use crate::error::{CoreError, CoreResult};

/// A float type the transforms run in (f32 or f64), with lossless widening to f64.
pub trait Real: FftNum + Float {
    /// Widen to f64.
    fn widen(self) -> f64;
    /// Narrow from f64 (rounding for f32).
    fn narrow(v: f64) -> Self;
}

impl Real for f32 {
    fn widen(self) -> f64 {
        f64::from(self)
    }
    fn narrow(v: f64) -> Self {
        v as f32
    }
}

impl Real for f64 {
    fn widen(self) -> f64 {
        self
    }
    fn narrow(v: f64) -> Self {
        v
    }
}

/// Angular wavenumbers `2 pi fftfreq(n, d)` (`half = false`) or `2 pi rfftfreq(n, d)` (`half = true`).
pub fn wavenumbers(n: usize, d: f64, half: bool) -> Vec<f64> {
    let base = 2.0 * std::f64::consts::PI / (n as f64 * d);
    if half {
        (0..n / 2 + 1).map(|i| i as f64 * base).collect()
    } else {
        (0..n)
            .map(|i| {
                let m = if i < n.div_ceil(2) {
                    i as isize
                } else {
                    i as isize - n as isize
                };
                m as f64 * base
            })
            .collect()
    }
}

/// The same wavenumbers with the Nyquist entry (present when `n` is even) set to zero: the convention for
/// odd powers of k (first derivatives, `k_j k_m` with `j != m`), which keeps a real field real.
pub fn wavenumbers_odd(n: usize, d: f64, half: bool) -> Vec<f64> {
    let mut k = wavenumbers(n, d, half);
    if n % 2 == 0 {
        let nyq = n / 2;
        k[nyq] = 0.0;
    }
    k
}

/// FFT plans for one `(nx, ny, nz)` grid and one float type.
pub struct Fft3<T: Real> {
    nx: usize,
    ny: usize,
    nz: usize,
    nz_transform: usize,
    r2c_y: Arc<dyn RealToComplex<T>>,
    c2r_y: Arc<dyn ComplexToReal<T>>,
    fwd_x: Arc<dyn Fft<T>>,
    inv_x: Arc<dyn Fft<T>>,
    fwd_z: Arc<dyn Fft<T>>,
    inv_z: Arc<dyn Fft<T>>,
}

impl<T: Real> Fft3<T> {
    /// Plans for a grid of `nx * ny * nz` points; `zero_pad_z` doubles the z transform length.
    pub fn new(nx: usize, ny: usize, nz: usize, zero_pad_z: bool) -> CoreResult<Self> {
        for (arg, n) in [("nx", nx), ("ny", ny), ("nz", nz)] {
            if n < 2 {
                return Err(CoreError::input(
                    "shape",
                    format!("{arg} must be at least 2, got {n}"),
                ));
            }
        }
        let nz_transform = if zero_pad_z { 2 * nz } else { nz };
        let mut real = RealFftPlanner::<T>::new();
        let mut cplx = FftPlanner::<T>::new();
        Ok(Self {
            nx,
            ny,
            nz,
            nz_transform,
            r2c_y: real.plan_fft_forward(ny),
            c2r_y: real.plan_fft_inverse(ny),
            fwd_x: cplx.plan_fft_forward(nx),
            inv_x: cplx.plan_fft_inverse(nx),
            fwd_z: cplx.plan_fft_forward(nz_transform),
            inv_z: cplx.plan_fft_inverse(nz_transform),
        })
    }

    /// Grid size `(nx, ny, nz)`.
    pub fn shape(&self) -> (usize, usize, usize) {
        (self.nx, self.ny, self.nz)
    }

    /// Number of y wavenumbers kept (`ny/2 + 1`).
    pub fn nky(&self) -> usize {
        self.ny / 2 + 1
    }

    /// Length of the z transforms (`nz`, or `2 nz` when zero-padded).
    pub fn nz_transform(&self) -> usize {
        self.nz_transform
    }

    /// Horizontal transform of a real field `(nx, ny, nz)` (any strides) into `out` `(nx, ny/2+1, nz)`.
    pub fn forward_xy(
        &self,
        field: ArrayView3<'_, T>,
        mut out: ArrayViewMut3<'_, Complex<T>>,
    ) -> CoreResult<()> {
        let (nx, ny, nz) = self.shape();
        let nky = self.nky();
        if field.dim() != (nx, ny, nz) || out.dim() != (nx, nky, nz) {
            return Err(CoreError::input(
                "field",
                format!(
                    "shape {:?} does not match the plan ({nx}, {ny}, {nz})",
                    field.dim()
                ),
            ));
        }
        // Along y, one x slab per task.
        out.axis_iter_mut(Axis(0))
            .into_par_iter()
            .zip(field.axis_iter(Axis(0)).into_par_iter())
            .for_each(|(mut o, f)| {
                let mut line = vec![T::zero(); ny];
                let mut spec = vec![Complex::new(T::zero(), T::zero()); nky];
                let mut scratch = self.r2c_y.make_scratch_vec();
                for iz in 0..nz {
                    for (iy, v) in line.iter_mut().enumerate() {
                        *v = f[[iy, iz]];
                    }
                    // Lengths match the plan, so the transform cannot fail.
                    let _ = self
                        .r2c_y
                        .process_with_scratch(&mut line, &mut spec, &mut scratch);
                    for (iy, s) in spec.iter().enumerate() {
                        o[[iy, iz]] = *s;
                    }
                }
            });
        // Along x, one ky slab per task.
        self.along_x(out, false);
        Ok(())
    }

    fn along_x(&self, mut data: ArrayViewMut3<'_, Complex<T>>, inverse: bool) {
        let nx = self.nx;
        let plan = if inverse { &self.inv_x } else { &self.fwd_x };
        data.axis_iter_mut(Axis(1))
            .into_par_iter()
            .for_each(|mut slab| {
                let nz = slab.dim().1;
                let mut line = vec![Complex::new(T::zero(), T::zero()); nx];
                let mut scratch =
                    vec![Complex::new(T::zero(), T::zero()); plan.get_inplace_scratch_len()];
                for iz in 0..nz {
                    for (ix, v) in line.iter_mut().enumerate() {
                        *v = slab[[ix, iz]];
                    }
                    plan.process_with_scratch(&mut line, &mut scratch);
                    for (ix, v) in line.iter().enumerate() {
                        slab[[ix, iz]] = *v;
                    }
                }
            });
    }

    /// Scratch buffer for [`Fft3::z_forward`] and [`Fft3::z_inverse`].
    pub fn z_scratch(&self) -> Vec<Complex<T>> {
        let n = self
            .fwd_z
            .get_inplace_scratch_len()
            .max(self.inv_z.get_inplace_scratch_len());
        vec![Complex::new(T::zero(), T::zero()); n]
    }

    /// Forward z transform of a line of `nz` values into `buf` (length `nz_transform`, zero-padded).
    pub fn z_forward(
        &self,
        line: &[Complex<T>],
        buf: &mut [Complex<T>],
        scratch: &mut [Complex<T>],
    ) {
        let n = line.len().min(buf.len());
        buf[..n].copy_from_slice(&line[..n]);
        for v in buf[n..].iter_mut() {
            *v = Complex::new(T::zero(), T::zero());
        }
        self.fwd_z.process_with_scratch(buf, scratch);
    }

    /// Unnormalised inverse z transform of `buf` (length `nz_transform`), in place.
    pub fn z_inverse(&self, buf: &mut [Complex<T>], scratch: &mut [Complex<T>]) {
        self.inv_z.process_with_scratch(buf, scratch);
    }

    /// Full 3D forward transform: returns `(nx, ny/2+1, nz_transform)` (z zero-padded when planned so).
    pub fn forward(&self, field: ArrayView3<'_, T>) -> CoreResult<Array3<Complex<T>>> {
        let (nx, _, nz) = self.shape();
        let mut mixed = Array3::from_elem((nx, self.nky(), nz), Complex::new(T::zero(), T::zero()));
        self.forward_xy(field, mixed.view_mut())?;
        let nzt = self.nz_transform;
        let mut out = Array3::from_elem((nx, self.nky(), nzt), Complex::new(T::zero(), T::zero()));
        out.axis_iter_mut(Axis(0))
            .into_par_iter()
            .zip(mixed.axis_iter(Axis(0)).into_par_iter())
            .for_each(|(mut o, m)| {
                let mut scratch = self.z_scratch();
                let mut buf = vec![Complex::new(T::zero(), T::zero()); nzt];
                let mut line = vec![Complex::new(T::zero(), T::zero()); nz];
                for iy in 0..m.dim().0 {
                    for (iz, v) in line.iter_mut().enumerate() {
                        *v = m[[iy, iz]];
                    }
                    self.z_forward(&line, &mut buf, &mut scratch);
                    for (iz, v) in buf.iter().enumerate() {
                        o[[iy, iz]] = *v;
                    }
                }
            });
        Ok(out)
    }

    /// Full 3D inverse of [`Fft3::forward`], normalised, returning the real field `(nx, ny, nz)` (the
    /// padded half of z, if any, is dropped). The input must be Hermitian-consistent; the imaginary parts
    /// that a real field cannot have (ky = 0 and ky = Nyquist of the y transform) are ignored.
    pub fn inverse(&self, spectrum: ArrayView3<'_, Complex<T>>) -> CoreResult<Array3<T>> {
        let (nx, ny, nz) = self.shape();
        let nky = self.nky();
        let nzt = self.nz_transform;
        if spectrum.dim() != (nx, nky, nzt) {
            return Err(CoreError::input(
                "spectrum",
                format!(
                    "shape {:?} does not match the plan ({nx}, {nky}, {nzt})",
                    spectrum.dim()
                ),
            ));
        }
        let mut mixed = Array3::from_elem((nx, nky, nz), Complex::new(T::zero(), T::zero()));
        mixed
            .axis_iter_mut(Axis(0))
            .into_par_iter()
            .zip(spectrum.axis_iter(Axis(0)).into_par_iter())
            .for_each(|(mut o, s)| {
                let mut scratch = self.z_scratch();
                let mut buf = vec![Complex::new(T::zero(), T::zero()); nzt];
                for iy in 0..nky {
                    for (iz, v) in buf.iter_mut().enumerate() {
                        *v = s[[iy, iz]];
                    }
                    self.z_inverse(&mut buf, &mut scratch);
                    for iz in 0..nz {
                        o[[iy, iz]] = buf[iz];
                    }
                }
            });
        self.along_x(mixed.view_mut(), true);
        let mut out = Array3::from_elem((nx, ny, nz), T::zero());
        let norm = T::narrow(1.0 / (nx as f64 * ny as f64 * nzt as f64));
        out.axis_iter_mut(Axis(0))
            .into_par_iter()
            .zip(mixed.axis_iter(Axis(0)).into_par_iter())
            .for_each(|(mut o, m)| {
                let mut spec = vec![Complex::new(T::zero(), T::zero()); nky];
                let mut line = vec![T::zero(); ny];
                let mut scratch = self.c2r_y.make_scratch_vec();
                for iz in 0..nz {
                    for (iy, v) in spec.iter_mut().enumerate() {
                        *v = m[[iy, iz]];
                    }
                    spec[0].im = T::zero();
                    if ny % 2 == 0 {
                        spec[nky - 1].im = T::zero();
                    }
                    let _ = self
                        .c2r_y
                        .process_with_scratch(&mut spec, &mut line, &mut scratch);
                    for (iy, v) in line.iter().enumerate() {
                        o[[iy, iz]] = *v * norm;
                    }
                }
            });
        Ok(out)
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_relative_eq;

    fn field(nx: usize, ny: usize, nz: usize) -> Array3<f64> {
        // A deterministic, non-symmetric test pattern.
        Array3::from_shape_fn((nx, ny, nz), |(i, j, k)| {
            ((i * 7 + j * 3 + k * 11) % 13) as f64 - 6.0 + 0.1 * (i as f64) * (k as f64)
        })
    }

    #[test]
    fn wavenumbers_match_numpy_fftfreq() {
        // Source: numpy.fft.fftfreq(5, 0.5) = [0, 0.4, 0.8, -0.8, -0.4]; rfftfreq(4, 1) = [0, .25, .5].
        let tau = 2.0 * std::f64::consts::PI;
        let k = wavenumbers(5, 0.5, false);
        for (a, b) in k.iter().zip([0.0, 0.4, 0.8, -0.8, -0.4]) {
            assert_relative_eq!(*a, b * tau, epsilon = 1e-14);
        }
        let k = wavenumbers(4, 1.0, false);
        assert_relative_eq!(k[2], -0.5 * tau, epsilon = 1e-14);
        let k = wavenumbers(4, 1.0, true);
        assert_eq!(k.len(), 3);
        assert_relative_eq!(k[2], 0.5 * tau, epsilon = 1e-14);
        assert_eq!(wavenumbers_odd(4, 1.0, true)[2], 0.0);
        assert_eq!(wavenumbers_odd(4, 1.0, false)[2], 0.0);
        assert!(wavenumbers_odd(5, 1.0, false)[2] != 0.0);
    }

    #[test]
    fn mean_column_and_direct_dft() {
        let (nx, ny, nz) = (4, 6, 5);
        let f = field(nx, ny, nz);
        let plan = Fft3::<f64>::new(nx, ny, nz, false).unwrap();
        let s = plan.forward(f.view()).unwrap();
        // DC term = sum of all values (definition of the unnormalised DFT).
        assert_relative_eq!(s[[0, 0, 0]].re, f.sum(), epsilon = 1e-10);
        // One mode against the direct DFT sum.
        let (a, b, c) = (1usize, 2usize, 3usize);
        let mut want = Complex::new(0.0, 0.0);
        for ((i, j, k), v) in f.indexed_iter() {
            let ph = -2.0
                * std::f64::consts::PI
                * (a as f64 * i as f64 / nx as f64
                    + b as f64 * j as f64 / ny as f64
                    + c as f64 * k as f64 / nz as f64);
            want += Complex::new(ph.cos(), ph.sin()) * *v;
        }
        assert_relative_eq!(s[[a, b, c]].re, want.re, epsilon = 1e-9);
        assert_relative_eq!(s[[a, b, c]].im, want.im, epsilon = 1e-9);
    }

    #[test]
    fn round_trip_any_strides_and_padding() {
        for pad in [false, true] {
            let (nx, ny, nz) = (6, 5, 4);
            let f = field(nx, ny, nz);
            let fortran = f.t().to_owned();
            let view = fortran.t(); // same values, Fortran strides
            let plan = Fft3::<f64>::new(nx, ny, nz, pad).unwrap();
            let back = plan.inverse(plan.forward(view).unwrap().view()).unwrap();
            for (a, b) in back.iter().zip(f.iter()) {
                assert_relative_eq!(*a, *b, epsilon = 1e-12);
            }
        }
        let f32field = field(4, 4, 4).mapv(|v| v as f32);
        let plan = Fft3::<f32>::new(4, 4, 4, false).unwrap();
        let back = plan
            .inverse(plan.forward(f32field.view()).unwrap().view())
            .unwrap();
        for (a, b) in back.iter().zip(f32field.iter()) {
            assert_relative_eq!(*a, *b, epsilon = 1e-4);
        }
    }

    #[test]
    fn rejects_tiny_grids_and_mismatched_shapes() {
        assert!(Fft3::<f64>::new(1, 4, 4, false).is_err());
        let plan = Fft3::<f64>::new(4, 4, 4, false).unwrap();
        let f = Array3::<f64>::zeros((4, 4, 3));
        assert!(plan.forward(f.view()).is_err());
    }
}
