//! Global flux transport across a thin disk: the ring-current kernel, the nonlocal operator between the
//! surface radial field and the flux function, implicit time stepping and the steady state.

pub mod kernel;
pub mod model;
