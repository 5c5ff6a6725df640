//! Numerical tools shared by several stages: cancellation, argument checks, parallel chunking.

pub mod cancel;
pub mod checks;
pub mod dense;
pub mod elliptic;
pub mod quadrature;
pub mod elementwise;

pub use cancel::Cancel;
