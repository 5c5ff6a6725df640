//! Mapping of [`CoreError`] to the Python exception classes of `fluxfunnel._errors`.

use pyo3::exceptions::{PyKeyboardInterrupt, PyRuntimeError, PyValueError};
use pyo3::prelude::*;

use crate::error::CoreError;

fn build(py: Python<'_>, class: &str, message: String, residual: Option<f64>) -> PyResult<PyErr> {
    let module = py.import("fluxfunnel._errors")?;
    let cls = module.getattr(class)?;
    let value = match residual {
        Some(r) => cls.call1((message, r))?,
        None => cls.call1((message,))?,
    };
    Ok(PyErr::from_value(value))
}

impl From<CoreError> for PyErr {
    fn from(err: CoreError) -> PyErr {
        let message = err.to_string();
        match err {
            CoreError::Interrupted => PyKeyboardInterrupt::new_err(message),
            CoreError::Input { .. } => Python::attach(|py| {
                build(py, "InputError", message.clone(), None)
                    .unwrap_or_else(|_| PyValueError::new_err(message))
            }),
            CoreError::Convergence { residual, .. } => Python::attach(|py| {
                build(py, "ConvergenceError", message.clone(), Some(residual))
                    .unwrap_or_else(|_| PyRuntimeError::new_err(message))
            }),
        }
    }
}
