//! Bindings of the `measure` stage: the EMF fit and the test-field solver. Types only; the work is in
//! `crate::measure`.

use numpy::{IntoPyArray, PyArray3, PyReadonlyArray1, PyReadonlyArray3, PyReadonlyArray4};
use pyo3::prelude::*;
use pyo3::types::PyDict;

use super::run::{run_long, run_short};
use crate::error::CoreError;
use crate::measure::fit::{fit_emf, Errors, FitOptions, Method, Terms};
use crate::measure::testfield::{Flow, TestFieldSolver};

/// Fit `E_i = E0_i + alpha_ij B_j - eta_ij J_j` per height; returns a dict of arrays (see `fluxfunnel.measure`).
#[pyfunction]
#[pyo3(signature = (mean_b, emf, z, fit_alpha, fit_eta, method, rcond, errors, n_resamples, block_length,
                    n_blocks, cond_limit, seed))]
#[allow(clippy::too_many_arguments)]
pub fn _fit_emf<'py>(
    py: Python<'py>,
    mean_b: PyReadonlyArray3<'py, f64>,
    emf: PyReadonlyArray3<'py, f64>,
    z: PyReadonlyArray1<'py, f64>,
    fit_alpha: bool,
    fit_eta: bool,
    method: &str,
    rcond: f64,
    errors: &str,
    n_resamples: usize,
    block_length: Option<usize>,
    n_blocks: usize,
    cond_limit: f64,
    seed: u64,
) -> PyResult<Bound<'py, PyDict>> {
    let method = match method {
        "lstsq" => Method::Lstsq,
        "svd" => Method::Svd { rcond },
        other => {
            return Err(CoreError::input(
                "method",
                format!("must be 'lstsq' or 'svd', got {other:?}"),
            )
            .into())
        }
    };
    let errors = match errors {
        "bootstrap" => Errors::Bootstrap {
            n_resamples,
            block_length,
        },
        "blocks" => Errors::Blocks { n_blocks },
        other => {
            return Err(CoreError::input(
                "errors",
                format!("must be 'bootstrap' or 'blocks', got {other:?}"),
            )
            .into())
        }
    };
    let opts = FitOptions {
        terms: Terms {
            alpha: fit_alpha,
            eta: fit_eta,
        },
        method,
        errors,
        cond_limit,
        seed,
    };
    let (b, e, zz) = (mean_b.as_array(), emf.as_array(), z.as_array());
    let out = run_long(py, |cancel| fit_emf(b, e, zz, &opts, cancel))?;
    let d = PyDict::new(py);
    d.set_item("alpha", out.alpha.into_pyarray(py))?;
    d.set_item("eta", out.eta.into_pyarray(py))?;
    d.set_item("alpha_err", out.alpha_err.into_pyarray(py))?;
    d.set_item("eta_err", out.eta_err.into_pyarray(py))?;
    d.set_item("offset", out.offset.into_pyarray(py))?;
    d.set_item("offset_err", out.offset_err.into_pyarray(py))?;
    d.set_item("residual", out.residual.into_pyarray(py))?;
    d.set_item("condition_number", out.condition_number.into_pyarray(py))?;
    d.set_item("degenerate", out.degenerate.into_pyarray(py))?;
    d.set_item(
        "correlation_samples",
        out.correlation_samples.into_pyarray(py),
    )?;
    d.set_item("block_length", out.block_length.into_pyarray(py))?;
    Ok(d)
}

/// A pair of `(nz, 2, 2)` coefficient arrays.
type CoefficientPair<'py> = (Bound<'py, PyArray3<f64>>, Bound<'py, PyArray3<f64>>);

/// The four kinematic test-field problems on a periodic box (driven from `fluxfunnel.measure.test_field`).
#[pyclass(module = "fluxfunnel._core", name = "_TestFieldSolver")]
pub struct PyTestFieldSolver {
    inner: TestFieldSolver,
}

#[pymethods]
impl PyTestFieldSolver {
    #[new]
    #[pyo3(signature = (shape, spacing, eta, k_test, soca))]
    fn new(
        shape: (usize, usize, usize),
        spacing: (f64, f64, f64),
        eta: f64,
        k_test: f64,
        soca: bool,
    ) -> PyResult<Self> {
        let inner = TestFieldSolver::new(
            [shape.0, shape.1, shape.2],
            [spacing.0, spacing.1, spacing.2],
            eta,
            k_test,
            soca,
        )?;
        Ok(Self { inner })
    }

    /// Take `nsteps` steps of `dt` seconds with flow `u0` at the start and `u1` (default `u0`) at the end of
    /// each step; GIL released, Ctrl-C checked between steps.
    #[pyo3(signature = (u0, u1, dt, nsteps))]
    fn step(
        &mut self,
        py: Python<'_>,
        u0: PyReadonlyArray4<'_, f64>,
        u1: Option<PyReadonlyArray4<'_, f64>>,
        dt: f64,
        nsteps: usize,
    ) -> PyResult<()> {
        let n = self.inner.shape();
        let v0 = u0.as_array();
        let v1 = u1.as_ref().map(|a| a.as_array());
        let inner = &mut self.inner;
        run_long(py, move |cancel| {
            let f0 = Flow::from_view(v0, n, "u")?;
            let f1 = match v1 {
                Some(v) => Some(Flow::from_view(v, n, "u")?),
                None => None,
            };
            for _ in 0..nsteps {
                cancel.check()?;
                inner.step(&f0, f1.as_ref().unwrap_or(&f0), dt)?;
                cancel.advance(1);
            }
            Ok(())
        })
    }

    /// `(alpha, eta)`, each `(nz, 2, 2)`, from the current state and flow `u`.
    fn coefficients<'py>(
        &self,
        py: Python<'py>,
        u: PyReadonlyArray4<'py, f64>,
    ) -> PyResult<CoefficientPair<'py>> {
        let n = self.inner.shape();
        let v = u.as_array();
        let inner = &self.inner;
        let (a, e) = run_short(py, move || {
            let f = Flow::from_view(v, n, "u")?;
            inner.coefficients(&f)
        })?;
        Ok((a.into_pyarray(py), e.into_pyarray(py)))
    }

    /// Elapsed model time, s.
    #[getter]
    fn time(&self) -> f64 {
        self.inner.time
    }

    /// Number of steps taken.
    #[getter]
    fn steps(&self) -> usize {
        self.inner.steps
    }
}

pub fn register(m: &Bound<'_, PyModule>) -> PyResult<()> {
    m.add_function(wrap_pyfunction!(_fit_emf, m)?)?;
    m.add_class::<PyTestFieldSolver>()?;
    Ok(())
}
