//! Numerical tools shared by several stages: cancellation, argument checks, parallel chunking.

pub mod cancel;
pub mod checks;
pub mod elementwise;
pub mod fft;

pub use cancel::Cancel;
