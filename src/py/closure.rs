//! Bindings of the closure stage: the one-point coefficient kernel and the grid derivative.

use ndarray::Axis;
use numpy::{
    IntoPyArray, PyArray2, PyArrayDyn, PyReadonlyArray1, PyReadonlyArray2, PyReadonlyArray3,
};
use numpy::{PyArray1, PyArrayMethods, PyReadonlyArray4, PyReadonlyArray5, PyReadonlyArrayDyn};
use pyo3::prelude::*;

use super::run::{run_long, run_short};
use crate::closure::response::ResponseSettings;
use crate::closure::{self, PointInputs, PressureTreatment, Settings, ShapeSource};
use crate::error::CoreError;

/// The record and the two per-point flags (negative diffusion, convectively unstable).
type CoefficientArrays<'py> = (
    Bound<'py, PyArray2<f64>>,
    Bound<'py, PyArray1<bool>>,
    Bound<'py, PyArray1<bool>>,
);

/// All one-point closure coefficients as an (n, record) array (see `closure::kernel::Layout`) and the two
/// flags as boolean arrays of length n.
#[pyfunction]
#[pyo3(signature = (reynolds, maxwell, kinetic_helicity, current_helicity, u_shape, b_shape, b_shape4,
    tau, rho, gravity, brunt_vaisala2, response_speed2, div_reynolds, magnetic_div, *, pressure,
    field_direction, stratification, with_b_tensor, divide_magnetic_div=false))]
#[allow(clippy::too_many_arguments)]
pub fn _closure_coefficients<'py>(
    py: Python<'py>,
    reynolds: PyReadonlyArray3<'py, f64>,
    maxwell: PyReadonlyArray3<'py, f64>,
    kinetic_helicity: PyReadonlyArray1<'py, f64>,
    current_helicity: PyReadonlyArray1<'py, f64>,
    u_shape: PyReadonlyArray3<'py, f64>,
    b_shape: Option<PyReadonlyArray3<'py, f64>>,
    b_shape4: Option<PyReadonlyArray5<'py, f64>>,
    tau: PyReadonlyArray1<'py, f64>,
    rho: PyReadonlyArray1<'py, f64>,
    gravity: PyReadonlyArray1<'py, f64>,
    brunt_vaisala2: PyReadonlyArray1<'py, f64>,
    response_speed2: PyReadonlyArray1<'py, f64>,
    div_reynolds: PyReadonlyArray2<'py, f64>,
    magnetic_div: PyReadonlyArray2<'py, f64>,
    pressure: &str,
    field_direction: (f64, f64, f64),
    stratification: bool,
    with_b_tensor: bool,
    divide_magnetic_div: bool,
) -> PyResult<CoefficientArrays<'py>> {
    let pressure = match pressure {
        "projected" => PressureTreatment::Projected,
        "partial" => PressureTreatment::Partial,
        "unprojected" => PressureTreatment::Unprojected,
        other => {
            return Err(CoreError::input(
                "closure",
                format!("must be 'projected', 'partial' or 'unprojected', got {other:?}"),
            )
            .into())
        }
    };
    let b_source = match (&b_shape, &b_shape4) {
        (_, Some(s4)) => ShapeSource::Fourth(s4.as_array()),
        (Some(s2), None) => ShapeSource::Second(s2.as_array()),
        (None, None) => {
            return Err(CoreError::input("b_shape", "one of b_shape or b_shape4 is needed").into())
        }
    };
    let inputs = PointInputs {
        reynolds: reynolds.as_array(),
        maxwell: maxwell.as_array(),
        kinetic_helicity: kinetic_helicity.as_array(),
        current_helicity: current_helicity.as_array(),
        u_shape: u_shape.as_array(),
        b_shape: b_source,
        tau: tau.as_array(),
        rho: rho.as_array(),
        gravity: gravity.as_array(),
        brunt_vaisala2: brunt_vaisala2.as_array(),
        response_speed2: response_speed2.as_array(),
        div_reynolds: div_reynolds.as_array(),
        magnetic_div: magnetic_div.as_array(),
    };
    let settings = Settings {
        pressure,
        field_direction: [field_direction.0, field_direction.1, field_direction.2],
        stratification,
        with_b_tensor,
        divide_magnetic_div,
    };
    // The record is allocated by NumPy (its allocator asks the kernel for huge pages on large buffers,
    // which halves the cost of first touching the pages) and filled in place with the GIL released.
    let n = inputs.reynolds.len_of(Axis(0));
    let out = PyArray2::<f64>::zeros(py, [n, closure::record_len(&settings)], false);
    let negative = PyArray1::<bool>::zeros(py, n, false);
    let unstable = PyArray1::<bool>::zeros(py, n, false);
    {
        let mut guard = out.readwrite();
        let (mut neg, mut unst) = (negative.readwrite(), unstable.readwrite());
        let view = guard.as_array_mut();
        let (neg, unst) = (neg.as_slice_mut()?, unst.as_slice_mut()?);
        run_long(py, |cancel| {
            closure::coefficients_into(&inputs, &settings, cancel, view, neg, unst)
        })?;
    }
    Ok((out, negative, unstable))
}

/// Second-order derivative of `values` along `axis` on the non-uniform coordinate `coord`.
#[pyfunction]
pub fn _closure_gradient<'py>(
    py: Python<'py>,
    values: PyReadonlyArrayDyn<'py, f64>,
    coord: PyReadonlyArray1<'py, f64>,
    axis: usize,
) -> PyResult<Bound<'py, PyArrayDyn<f64>>> {
    let v = values.as_array();
    let x = coord.as_array();
    let out = run_short(py, || closure::gradient_along(v, x, axis))?;
    Ok(out.into_pyarray(py))
}

/// Box-averaged response coefficients of periodic fluctuation fields, packed as 81 numbers
/// (see `closure::response::pack`).
#[pyfunction]
#[pyo3(signature = (u, b, *, tau, rho, gravity, response_speed2, spacing, pressure))]
#[allow(clippy::too_many_arguments)]
pub fn _closure_field_response<'py>(
    py: Python<'py>,
    u: PyReadonlyArray4<'py, f64>,
    b: PyReadonlyArray4<'py, f64>,
    tau: f64,
    rho: f64,
    gravity: f64,
    response_speed2: f64,
    spacing: (f64, f64, f64),
    pressure: &str,
) -> PyResult<Bound<'py, PyArray1<f64>>> {
    let (pressure_weight, buoyancy_weight) = match pressure {
        "projected" => (2.0, 1.0),
        "partial" => (1.0, 1.0),
        "unprojected" => (0.0, 0.0),
        other => {
            return Err(CoreError::input(
                "closure",
                format!("must be 'projected', 'partial' or 'unprojected', got {other:?}"),
            )
            .into())
        }
    };
    let settings = ResponseSettings {
        tau,
        rho,
        gravity,
        response_speed2,
        spacing: [spacing.0, spacing.1, spacing.2],
        pressure_weight,
        buoyancy_weight,
    };
    let (uv, bv) = (u.as_array(), b.as_array());
    let out = run_long(py, |cancel| {
        closure::response::field_response(uv, bv, &settings, cancel)
    })?;
    Ok(closure::response::pack(&out).into_pyarray(py))
}

pub fn register(m: &Bound<'_, PyModule>) -> PyResult<()> {
    m.add_function(wrap_pyfunction!(_closure_coefficients, m)?)?;
    m.add_function(wrap_pyfunction!(_closure_gradient, m)?)?;
    m.add_function(wrap_pyfunction!(_closure_field_response, m)?)?;
    Ok(())
}
