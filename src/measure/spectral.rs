//! Three-dimensional real FFT on a periodic box, for the test-field solver.
//!
//! Layout: real fields are `(nx, ny, nz)` row-major (z fastest); their spectra are `(nx, ny, nz/2 + 1)`
//! row-major complex arrays (real transform along z, complex transforms along y and x). The forward
//! transform is unnormalised; the inverse divides by `nx ny nz`, so `inverse(forward(f)) = f`.

use std::sync::Arc;

use realfft::{ComplexToReal, RealFftPlanner, RealToComplex};
use rustfft::num_complex::Complex64;
use rustfft::{Fft, FftPlanner};

use crate::error::{CoreError, CoreResult};

/// Plans for one box size.
pub struct Fft3 {
    /// Grid points along x, y, z.
    pub n: [usize; 3],
    /// Spectral points along z (`nz/2 + 1`).
    pub nzh: usize,
    r2c: Arc<dyn RealToComplex<f64>>,
    c2r: Arc<dyn ComplexToReal<f64>>,
    fx: Arc<dyn Fft<f64>>,
    fy: Arc<dyn Fft<f64>>,
    ix: Arc<dyn Fft<f64>>,
    iy: Arc<dyn Fft<f64>>,
}

impl Fft3 {
    /// Plans for an `nx x ny x nz` box.
    pub fn new(nx: usize, ny: usize, nz: usize) -> Self {
        let mut rp = RealFftPlanner::<f64>::new();
        let mut cp = FftPlanner::<f64>::new();
        Self {
            n: [nx, ny, nz],
            nzh: nz / 2 + 1,
            r2c: rp.plan_fft_forward(nz),
            c2r: rp.plan_fft_inverse(nz),
            fx: cp.plan_fft_forward(nx),
            fy: cp.plan_fft_forward(ny),
            ix: cp.plan_fft_inverse(nx),
            iy: cp.plan_fft_inverse(ny),
        }
    }

    /// Number of complex spectral values.
    pub fn spectral_len(&self) -> usize {
        self.n[0] * self.n[1] * self.nzh
    }

    /// Forward transform of `real` (length `nx ny nz`, overwritten as scratch) into `spec`.
    pub fn forward(&self, real: &mut [f64], spec: &mut [Complex64]) -> CoreResult<()> {
        let [nx, ny, nz] = self.n;
        let nzh = self.nzh;
        for line in 0..nx * ny {
            self.r2c
                .process(
                    &mut real[line * nz..(line + 1) * nz],
                    &mut spec[line * nzh..(line + 1) * nzh],
                )
                .map_err(|e| {
                    CoreError::convergence(format!("internal FFT error: {e}"), f64::NAN)
                })?;
        }
        self.lines(spec, &*self.fy, &*self.fx);
        Ok(())
    }

    /// Inverse transform of `spec` (overwritten as scratch) into `real`, normalised.
    pub fn inverse(&self, spec: &mut [Complex64], real: &mut [f64]) -> CoreResult<()> {
        let [nx, ny, nz] = self.n;
        let nzh = self.nzh;
        self.lines(spec, &*self.iy, &*self.ix);
        let norm = 1.0 / (nx * ny * nz) as f64;
        for line in 0..nx * ny {
            let s = &mut spec[line * nzh..(line + 1) * nzh];
            // The zero and Nyquist bins of a real signal are real; drop rounding-level imaginary parts.
            s[0].im = 0.0;
            if nz % 2 == 0 {
                s[nzh - 1].im = 0.0;
            }
            self.c2r
                .process(s, &mut real[line * nz..(line + 1) * nz])
                .map_err(|e| {
                    CoreError::convergence(format!("internal FFT error: {e}"), f64::NAN)
                })?;
        }
        for v in real.iter_mut() {
            *v *= norm;
        }
        Ok(())
    }

    /// Complex transforms along y then x, in place.
    fn lines(&self, spec: &mut [Complex64], fy: &dyn Fft<f64>, fx: &dyn Fft<f64>) {
        let [nx, ny, _] = self.n;
        let nzh = self.nzh;
        let mut buf = vec![Complex64::new(0.0, 0.0); ny.max(nx)];
        for x in 0..nx {
            for kz in 0..nzh {
                for y in 0..ny {
                    buf[y] = spec[(x * ny + y) * nzh + kz];
                }
                fy.process(&mut buf[..ny]);
                for y in 0..ny {
                    spec[(x * ny + y) * nzh + kz] = buf[y];
                }
            }
        }
        for y in 0..ny {
            for kz in 0..nzh {
                for x in 0..nx {
                    buf[x] = spec[(x * ny + y) * nzh + kz];
                }
                fx.process(&mut buf[..nx]);
                for x in 0..nx {
                    spec[(x * ny + y) * nzh + kz] = buf[x];
                }
            }
        }
    }
}

/// Signed integer wavenumber index of FFT bin `i` of `n` (`i` for `i <= n/2`, else `i - n`).
pub fn signed_index(i: usize, n: usize) -> i64 {
    if i <= n / 2 {
        i as i64
    } else {
        i as i64 - n as i64
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_relative_eq;

    #[test]
    fn a_single_mode_lands_in_its_bin_and_round_trips() {
        // Source: discrete Fourier transform definition, sum_x cos(2 pi m x / n) e^{-2 pi i m x / n} = n / 2.
        let (nx, ny, nz) = (4, 6, 8);
        let fft = Fft3::new(nx, ny, nz);
        let mut real = vec![0.0; nx * ny * nz];
        for x in 0..nx {
            for y in 0..ny {
                for z in 0..nz {
                    let (px, py, pz) = (
                        2.0 * std::f64::consts::PI * x as f64 / nx as f64,
                        2.0 * std::f64::consts::PI * 2.0 * y as f64 / ny as f64,
                        2.0 * std::f64::consts::PI * 3.0 * z as f64 / nz as f64,
                    );
                    real[(x * ny + y) * nz + z] = (px + py + pz).cos();
                }
            }
        }
        let orig = real.clone();
        let mut spec = vec![Complex64::new(0.0, 0.0); fft.spectral_len()];
        fft.forward(&mut real, &mut spec).unwrap();
        let nzh = fft.nzh;
        let n_total = (nx * ny * nz) as f64;
        assert_relative_eq!(spec[(ny + 2) * nzh + 3].re, n_total / 2.0, epsilon = 1e-9);
        let total: f64 = spec.iter().map(|c| c.norm()).sum();
        assert_relative_eq!(total, n_total / 2.0, epsilon = 1e-9);
        let mut back = vec![0.0; nx * ny * nz];
        fft.inverse(&mut spec, &mut back).unwrap();
        for (a, b) in back.iter().zip(orig.iter()) {
            assert_relative_eq!(a, b, epsilon = 1e-13);
        }
        assert_eq!(signed_index(5, 8), -3);
        assert_eq!(signed_index(4, 8), 4);
    }
}
