//! Small functions that exercise the binding layer itself (used by the test suite).

use std::time::{Duration, Instant};

use pyo3::prelude::*;

use super::run::run_long;
use crate::error::CoreError;

/// Spin for `seconds` in chunks of 10 ms on the worker thread, checking for cancellation between chunks.
/// Raises `InputError` for a negative or non-finite duration. Used to test Ctrl-C handling.
#[pyfunction]
pub fn _busy_wait(py: Python<'_>, seconds: f64) -> PyResult<f64> {
    run_long(py, move |cancel| {
        if !seconds.is_finite() || seconds < 0.0 {
            return Err(CoreError::input(
                "seconds",
                format!("must be finite and non-negative, got {seconds}"),
            ));
        }
        let start = Instant::now();
        while start.elapsed().as_secs_f64() < seconds {
            cancel.check()?;
            std::thread::sleep(Duration::from_millis(10));
            cancel.advance(1);
        }
        Ok(start.elapsed().as_secs_f64())
    })
}

/// Raise the mapped Python exception for each core error kind: `"input"`, `"convergence"`, `"interrupted"`.
#[pyfunction]
pub fn _raise_core_error(kind: &str) -> PyResult<()> {
    let err = match kind {
        "input" => CoreError::input("mass", "must be positive, got -1"),
        "convergence" => CoreError::convergence("steady state after 3 iterations", 0.25),
        "interrupted" => CoreError::Interrupted,
        other => CoreError::input("kind", format!("unknown error kind {other:?}")),
    };
    Err(err.into())
}

pub fn register(m: &Bound<'_, PyModule>) -> PyResult<()> {
    m.add_function(wrap_pyfunction!(_busy_wait, m)?)?;
    m.add_function(wrap_pyfunction!(_raise_core_error, m)?)?;
    Ok(())
}
