//! Measuring transport coefficients: fits of a simulation's mean EMF against its mean field, and the
//! kinematic test-field method for a prescribed flow.
//!
//! Convention (horizontally averaged fields): `E_i = alpha_ij B_j - eta_ij J_j`, `J = curl B`, i, j in x, y.

pub mod fit;
pub mod linalg;
pub mod rng;
pub mod spectral;
pub mod testfield;
