//! Turbulence statistics from simulation snapshots, per height.
//!
//! Fields are `(3, nx, ny, nz)` arrays (components x, y, z; z the last grid axis), any strides, f32 or f64.
//! Averages `<.>` are horizontal (x-y) averages at each height; primes are deviations from them.
//!
//! - [`point`]: one-point profiles in real space (mean fields, Reynolds and Maxwell tensors, mean EMF).
//! - [`spectral`]: profiles that need Fourier space (the fourth-rank moments `<(K_jm f_n) f_k>` of the
//!   operator `K_jm` with symbol `k_j k_m / k^2`, their contraction the shape tensor, and `<f . curl f>`),
//!   using the mixed representation of [`crate::numerics::fft`]: horizontal transforms once, then one z
//!   line at a time, so memory stays near one copy of the field.

pub mod point;
pub mod spectral;

pub use point::{point_profiles, PointProfiles};
pub use spectral::{spectral_profiles, MeanRemoval, SpectralOptions, SpectralProfiles};

use ndarray::ArrayView4;
use rayon::prelude::*;

use crate::error::{CoreError, CoreResult};
use crate::numerics::fft::Real;

/// Shape check shared by the kernels: `(3, nx, ny, nz)` with every grid size at least 2.
pub(crate) fn check_vector_field<T>(arg: &str, f: &ArrayView4<'_, T>) -> CoreResult<()> {
    let s = f.shape();
    if s[0] != 3 || s[1] < 2 || s[2] < 2 || s[3] < 2 {
        return Err(CoreError::input(
            arg,
            format!("must have shape (3, nx, ny, nz) with nx, ny, nz >= 2, got {s:?}"),
        ));
    }
    Ok(())
}

/// Error naming the first non-finite element of `f`, if any (called only when a sum came out non-finite).
pub(crate) fn locate_non_finite<T: Real>(arg: &str, f: &ArrayView4<'_, T>) -> CoreResult<()> {
    let (nc, nx) = (f.shape()[0], f.shape()[1]);
    let found = (0..nc * nx).into_par_iter().find_map_first(|ci| {
        let (c, i) = (ci / nx, ci % nx);
        f.slice(ndarray::s![c, i, .., ..])
            .indexed_iter()
            .find(|(_, v)| !v.is_finite())
            .map(|((j, k), v)| (c, i, j, k, v.widen()))
    });
    match found {
        Some((c, i, j, k, v)) => Err(CoreError::input(
            arg,
            format!("must be finite, found {v} at index ({c}, {i}, {j}, {k})"),
        )),
        None => Ok(()),
    }
}
