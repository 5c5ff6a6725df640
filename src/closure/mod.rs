//! Quasi-linear (tau-closure) coefficients of the mean electromotive force.
//!
//! From one-point turbulence statistics (Reynolds and Maxwell tensors, helicities, eddy shape tensors, the
//! correlation time, density, gravity and the entropy stratification) the kernels here give the tensors
//! `a_ij` and `b_ijk` of `E_i = a_ij B_j + b_ijk d_k B_j` split by mechanism: kinetic and magnetic alpha,
//! kinetic and magnetic pumping, magnetic buoyancy with the Leray projection of the force response, the
//! suppression of vertical transport by stable stratification, and the diffusion tensor with its magnetic
//! part. `gradient` holds the second-order derivative along non-uniform grid coordinates used for the
//! pumping terms. The derivations are in `docs/theory.md`; `docs/derive_closure.py` re-derives them.

pub mod gradient;
pub mod kernel;
pub mod response;
pub mod tensor;

pub use gradient::gradient_along;
pub use kernel::{
    coefficients, coefficients_into, record_len, Layout, PointInputs, PressureTreatment, Settings,
    ShapeSource,
};
