//! Bindings of the population stage: the Rust sweep over many systems.

use numpy::{IntoPyArray, PyArray1, PyReadonlyArray1};
use pyo3::prelude::*;

use super::run::run_long;
use crate::numerics::checks;
use crate::population::{sweep, Settings, System};

type SweepOut<'py> = (
    Bound<'py, PyArray1<f64>>,
    Bound<'py, PyArray1<bool>>,
    Bound<'py, PyArray1<f64>>,
    Bound<'py, PyArray1<f64>>,
    Bound<'py, PyArray1<bool>>,
);

/// Sweep systems (equal-length 1-D arrays) through disk -> template -> speeds -> steady flux -> critical
/// radius; returns (critical_radius, reached, flux_inner, inner_tan_inclination, disk_valid).
#[pyfunction]
#[allow(clippy::too_many_arguments)]
pub fn population_sweep<'py>(
    py: Python<'py>,
    mass: PyReadonlyArray1<'py, f64>,
    mdot: PyReadonlyArray1<'py, f64>,
    external_field: PyReadonlyArray1<'py, f64>,
    inner_radius: PyReadonlyArray1<'py, f64>,
    outer_radius: PyReadonlyArray1<'py, f64>,
    template: (f64, f64, f64, f64, f64),
    alpha: f64,
    n_r: usize,
    nz: usize,
    criterion: (f64, f64, f64),
    disk: (f64, f64, f64, f64),
) -> PyResult<SweepOut<'py>> {
    let cols: Vec<Vec<f64>> = [&mass, &mdot, &external_field, &inner_radius, &outer_radius]
        .iter()
        .map(|a| a.as_array().iter().copied().collect())
        .collect();
    let (pm, amplitude, power, beta_quench, top) = template;
    let (threshold_deg, inner_buffer, outer_buffer) = criterion;
    let settings = Settings {
        alpha,
        pm,
        amplitude,
        power,
        beta_quench,
        top,
        n_r,
        nz,
        threshold_deg,
        inner_buffer,
        outer_buffer,
        disk: [disk.0, disk.1, disk.2, disk.3],
    };
    let out = run_long(py, move |cancel| {
        let n = cols[0].len();
        for (name, c) in ["mdot", "external_field", "inner_radius", "outer_radius"]
            .iter()
            .zip(&cols[1..])
        {
            checks::same_len(name, c.len(), "mass", n)?;
        }
        let systems: Vec<System> = (0..n)
            .map(|i| System {
                mass: cols[0][i],
                mdot: cols[1][i],
                external_field: cols[2][i],
                inner_radius: cols[3][i],
                outer_radius: cols[4][i],
            })
            .collect();
        sweep(&systems, &settings, cancel)
    })?;
    Ok((
        out.iter()
            .map(|o| o.critical_radius)
            .collect::<Vec<_>>()
            .into_pyarray(py),
        out.iter()
            .map(|o| o.reached)
            .collect::<Vec<_>>()
            .into_pyarray(py),
        out.iter()
            .map(|o| o.flux_inner)
            .collect::<Vec<_>>()
            .into_pyarray(py),
        out.iter()
            .map(|o| o.inner_tan_inclination)
            .collect::<Vec<_>>()
            .into_pyarray(py),
        out.iter()
            .map(|o| o.disk_valid)
            .collect::<Vec<_>>()
            .into_pyarray(py),
    ))
}

pub fn register(m: &Bound<'_, PyModule>) -> PyResult<()> {
    m.add_function(wrap_pyfunction!(population_sweep, m)?)?;
    Ok(())
}
