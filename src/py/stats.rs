//! Bindings of the `stats` stage: thin wrappers that only convert types (see `fluxfunnel.stats`).

use numpy::{IntoPyArray, PyArray1, PyArray2, PyArray3, PyArray5, PyReadonlyArray4};
use pyo3::prelude::*;

use super::run::run_long;
use crate::error::CoreError;
use crate::stats::{point_profiles, spectral_profiles, MeanRemoval, SpectralOptions};

/// A vector field of either float type, borrowed without a copy (C, Fortran or any strides).
enum Field<'py> {
    F32(PyReadonlyArray4<'py, f32>),
    F64(PyReadonlyArray4<'py, f64>),
}

fn field<'py>(arg: &str, obj: &Bound<'py, PyAny>) -> PyResult<Field<'py>> {
    if let Ok(a) = obj.extract::<PyReadonlyArray4<'py, f64>>() {
        return Ok(Field::F64(a));
    }
    if let Ok(a) = obj.extract::<PyReadonlyArray4<'py, f32>>() {
        return Ok(Field::F32(a));
    }
    Err(CoreError::input(
        arg,
        "must be a 4-dimensional float32 or float64 numpy array",
    )
    .into())
}

type PointOut<'py> = (
    Bound<'py, PyArray2<f64>>,
    Bound<'py, PyArray2<f64>>,
    Bound<'py, PyArray3<f64>>,
    Bound<'py, PyArray3<f64>>,
    Bound<'py, PyArray2<f64>>,
);

/// Mean fields, Reynolds and Maxwell tensors and mean EMF per height.
#[pyfunction]
pub fn _stats_point<'py>(
    py: Python<'py>,
    u: &Bound<'py, PyAny>,
    b: &Bound<'py, PyAny>,
) -> PyResult<PointOut<'py>> {
    let (u, b) = (field("u", u)?, field("b", b)?);
    let p = match (&u, &b) {
        (Field::F64(u), Field::F64(b)) => {
            let (u, b) = (u.as_array(), b.as_array());
            run_long(py, move |c| point_profiles(u, b, c))?
        }
        (Field::F64(u), Field::F32(b)) => {
            let (u, b) = (u.as_array(), b.as_array());
            run_long(py, move |c| point_profiles(u, b, c))?
        }
        (Field::F32(u), Field::F64(b)) => {
            let (u, b) = (u.as_array(), b.as_array());
            run_long(py, move |c| point_profiles(u, b, c))?
        }
        (Field::F32(u), Field::F32(b)) => {
            let (u, b) = (u.as_array(), b.as_array());
            run_long(py, move |c| point_profiles(u, b, c))?
        }
    };
    Ok((
        p.mean_u.into_pyarray(py),
        p.mean_b.into_pyarray(py),
        p.reynolds.into_pyarray(py),
        p.maxwell.into_pyarray(py),
        p.emf.into_pyarray(py),
    ))
}

type SpectralOut<'py> = (
    Bound<'py, PyArray1<f64>>,
    Option<Bound<'py, PyArray5<f64>>>,
    Option<Bound<'py, PyArray1<f64>>>,
);

/// Per-height energy, fourth-rank moments `<(K_jm f_n) f_k>` and helicity of one field's fluctuations.
#[pyfunction]
#[pyo3(signature = (field_, spacing, periodic_z, volume_mean, moments, helicity))]
pub fn _stats_spectral<'py>(
    py: Python<'py>,
    field_: &Bound<'py, PyAny>,
    spacing: (f64, f64, f64),
    periodic_z: bool,
    volume_mean: bool,
    moments: bool,
    helicity: bool,
) -> PyResult<SpectralOut<'py>> {
    let opts = SpectralOptions {
        spacing: [spacing.0, spacing.1, spacing.2],
        periodic_z,
        mean: if volume_mean {
            MeanRemoval::Volume
        } else {
            MeanRemoval::Horizontal
        },
        moments,
        helicity,
    };
    let s = match field("field", field_)? {
        Field::F64(a) => {
            let v = a.as_array();
            run_long(py, move |c| spectral_profiles(v, &opts, c))?
        }
        Field::F32(a) => {
            let v = a.as_array();
            run_long(py, move |c| spectral_profiles(v, &opts, c))?
        }
    };
    Ok((
        s.energy.into_pyarray(py),
        s.moments.map(|m| m.into_pyarray(py)),
        s.helicity.map(|h| h.into_pyarray(py)),
    ))
}

pub fn register(m: &Bound<'_, PyModule>) -> PyResult<()> {
    m.add_function(wrap_pyfunction!(_stats_point, m)?)?;
    m.add_function(wrap_pyfunction!(_stats_spectral, m)?)?;
    Ok(())
}
