//! The binding layer: thin `#[pyfunction]` wrappers, one file per stage, plus the error mapping and the
//! helper that runs long work without the GIL. Nothing outside this folder uses pyo3.

pub mod closure;
pub mod diagnostics;
pub mod disk;
pub mod errors;
pub mod flux;
pub mod measure;
pub mod objects;
pub mod population;
pub mod run;
pub mod stats;
pub mod vertical;

use pyo3::prelude::*;

/// Register every stage's functions on the `_core` module.
pub fn register_all(m: &Bound<'_, PyModule>) -> PyResult<()> {
    closure::register(m)?;
    diagnostics::register(m)?;
    objects::register(m)?;
    disk::register(m)?;
    stats::register(m)?;
    measure::register(m)?;
    vertical::register(m)?;
    flux::register(m)?;
    population::register(m)?;
    Ok(())
}
