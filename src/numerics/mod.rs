//! Numerical tools shared by several stages: cancellation, argument checks, parallel chunking.

pub mod cancel;
pub mod checks;
pub mod dense;
pub mod elementwise;
pub mod elliptic;
pub mod fft;
pub mod quadrature;

pub use cancel::Cancel;
