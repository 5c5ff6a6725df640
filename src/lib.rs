//! fluxfunnel's Rust core.
//!
//! One folder per stage of the pipeline (pure Rust, no pyo3), `numerics` for what several stages share,
//! `error` for the one error type, and `py` for the thin binding layer. The `_core` Python module below
//! only registers what `py` provides.

pub mod closure;
pub mod constants;
pub mod disk;
pub mod error;
pub mod flux;
pub mod measure;
pub mod numerics;
pub mod objects;
pub mod population;
pub mod py;
pub mod stats;
pub mod vertical;

use pyo3::prelude::*;

/// The compiled half of the `fluxfunnel` Python package.
#[pymodule(gil_used = false)]
mod _core {
    use super::*;

    #[pymodule_init]
    fn init(m: &Bound<'_, PyModule>) -> PyResult<()> {
        m.add("__version__", env!("CARGO_PKG_VERSION"))?;
        crate::py::register_all(m)
    }
}
