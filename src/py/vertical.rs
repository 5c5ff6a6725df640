//! Bindings of the vertical stage: steady bending of a batch of columns, and chunks of column-model steps.

use numpy::{IntoPyArray, PyArray1, PyArray2, PyReadonlyArray1, PyReadonlyArray2};
use pyo3::prelude::*;

use super::run::{run_long, run_short};
use crate::vertical::{self, ColumnSpec, ColumnState, Quenching, Surface};

type BendOut<'py> = (
    Bound<'py, PyArray1<f64>>,
    Bound<'py, PyArray1<f64>>,
    Bound<'py, PyArray1<f64>>,
    Bound<'py, PyArray1<f64>>,
    Option<Bound<'py, PyArray2<f64>>>,
    Bound<'py, PyArray2<bool>>,
);

/// Steady bending of `(columns, nz)` profiles: returns
/// `(u_adv, u_dif, u_grad, steady_ratio, ratio_or_None, floored)`.
#[pyfunction]
#[pyo3(signature = (z, eta, v_z, v_r, grad, surface_ratio, steady, eta_floor))]
#[allow(clippy::too_many_arguments)]
pub fn _bend_columns<'py>(
    py: Python<'py>,
    z: PyReadonlyArray1<'py, f64>,
    eta: PyReadonlyArray2<'py, f64>,
    v_z: PyReadonlyArray2<'py, f64>,
    v_r: PyReadonlyArray2<'py, f64>,
    grad: PyReadonlyArray1<'py, f64>,
    surface_ratio: Option<PyReadonlyArray1<'py, f64>>,
    steady: bool,
    eta_floor: Option<f64>,
) -> PyResult<BendOut<'py>> {
    let (zv, ev, vzv, vrv, gv) = (
        z.as_array(),
        eta.as_array(),
        v_z.as_array(),
        v_r.as_array(),
        grad.as_array(),
    );
    let bs = surface_ratio.as_ref().map(|b| b.as_array());
    let surface = match (bs, steady) {
        (Some(b), _) => Surface::Given(b),
        (None, true) => Surface::Steady,
        (None, false) => Surface::SplitOnly,
    };
    let out = run_short(py, move || {
        vertical::bend_columns(zv, ev, vzv, vrv, gv, surface, eta_floor)
    })?;
    Ok((
        out.u_adv.into_pyarray(py),
        out.u_dif.into_pyarray(py),
        out.u_grad.into_pyarray(py),
        out.steady_ratio.into_pyarray(py),
        out.ratio.map(|r| r.into_pyarray(py)),
        out.floored.into_pyarray(py),
    ))
}

type ColumnOut<'py> = (
    Bound<'py, PyArray1<f64>>,
    Bound<'py, PyArray1<f64>>,
    Bound<'py, PyArray1<f64>>,
);

fn to_vec(a: &PyReadonlyArray1<'_, f64>) -> Vec<f64> {
    a.as_array().iter().copied().collect()
}

/// Advance the column model by `nsteps` steps of `dt`; returns the new `(b_x, b_y, alpha_m)`.
#[pyfunction]
#[pyo3(signature = (dz, periodic, alpha_k, gamma, eta, eta_mol, shear, alpha_omega, theta, b_eq, k_f, kappa,
                    dt, nsteps, b_x, b_y, alpha_m))]
#[allow(clippy::too_many_arguments)]
pub fn _column_advance<'py>(
    py: Python<'py>,
    dz: f64,
    periodic: bool,
    alpha_k: PyReadonlyArray1<'py, f64>,
    gamma: PyReadonlyArray1<'py, f64>,
    eta: PyReadonlyArray1<'py, f64>,
    eta_mol: f64,
    shear: f64,
    alpha_omega: bool,
    theta: f64,
    b_eq: Option<PyReadonlyArray1<'py, f64>>,
    k_f: f64,
    kappa: f64,
    dt: f64,
    nsteps: usize,
    b_x: PyReadonlyArray1<'py, f64>,
    b_y: PyReadonlyArray1<'py, f64>,
    alpha_m: PyReadonlyArray1<'py, f64>,
) -> PyResult<ColumnOut<'py>> {
    let spec = ColumnSpec {
        dz,
        periodic,
        alpha_k: to_vec(&alpha_k),
        gamma: to_vec(&gamma),
        eta: to_vec(&eta),
        eta_mol,
        shear,
        alpha_omega,
        theta,
        quenching: b_eq.map(|b| Quenching {
            b_eq: to_vec(&b),
            k_f,
            kappa,
        }),
    };
    let mut state = ColumnState {
        b_x: to_vec(&b_x),
        b_y: to_vec(&b_y),
        alpha_m: to_vec(&alpha_m),
    };
    let state = run_long(py, move |cancel| {
        vertical::advance(&spec, &mut state, dt, nsteps, cancel)?;
        Ok(state)
    })?;
    Ok((
        PyArray1::from_vec(py, state.b_x),
        PyArray1::from_vec(py, state.b_y),
        PyArray1::from_vec(py, state.alpha_m),
    ))
}

pub fn register(m: &Bound<'_, PyModule>) -> PyResult<()> {
    m.add_function(wrap_pyfunction!(_bend_columns, m)?)?;
    m.add_function(wrap_pyfunction!(_column_advance, m)?)?;
    Ok(())
}
