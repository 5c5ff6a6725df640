//! Python bindings of `crate::objects`: array in, array out, no logic beyond type conversion.

use numpy::{IntoPyArray, PyArrayDyn, PyReadonlyArrayDyn};
use pyo3::prelude::*;

use super::run::run_short;
use crate::objects;

type In<'py> = PyReadonlyArrayDyn<'py, f64>;
type Out<'py> = PyResult<Bound<'py, PyArrayDyn<f64>>>;

/// Gravitational radius G M / c^2 [cm] of `mass` [g].
#[pyfunction]
fn objects_gravitational_radius<'py>(py: Python<'py>, mass: In<'py>) -> Out<'py> {
    let m = mass.as_array();
    Ok(run_short(py, || objects::gravitational_radius_array(&m))?.into_pyarray(py))
}

/// Kerr ISCO radius [cm] for `mass` [g] and `spin` in [0, 1] of one shape.
#[pyfunction]
fn objects_isco_radius<'py>(
    py: Python<'py>,
    mass: In<'py>,
    spin: In<'py>,
    prograde: bool,
) -> Out<'py> {
    let (m, a) = (mass.as_array(), spin.as_array());
    Ok(run_short(py, || objects::isco_radius_array(&m, &a, prograde))?.into_pyarray(py))
}

/// Outer horizon radius [cm] for `mass` [g] and `spin` in [0, 1] of one shape.
#[pyfunction]
fn objects_horizon_radius<'py>(py: Python<'py>, mass: In<'py>, spin: In<'py>) -> Out<'py> {
    let (m, a) = (mass.as_array(), spin.as_array());
    Ok(run_short(py, || objects::horizon_radius_array(&m, &a))?.into_pyarray(py))
}

/// White-dwarf radius [cm] (Nauenberg 1972) for `mass` [g].
#[pyfunction]
fn objects_white_dwarf_radius<'py>(py: Python<'py>, mass: In<'py>, mu_e: f64) -> Out<'py> {
    let m = mass.as_array();
    Ok(run_short(py, || objects::white_dwarf_radius_array(&m, mu_e))?.into_pyarray(py))
}

/// Eddington luminosity [erg/s] (hydrogen, Thomson scattering) for `mass` [g].
#[pyfunction]
fn objects_eddington_luminosity<'py>(py: Python<'py>, mass: In<'py>) -> Out<'py> {
    let m = mass.as_array();
    Ok(run_short(py, || objects::eddington_luminosity_array(&m))?.into_pyarray(py))
}

/// Eddington accretion rate [g/s] for `mass` [g] and `efficiency` of one shape.
#[pyfunction]
fn objects_eddington_accretion_rate<'py>(
    py: Python<'py>,
    mass: In<'py>,
    efficiency: In<'py>,
) -> Out<'py> {
    let (m, e) = (mass.as_array(), efficiency.as_array());
    Ok(run_short(py, || objects::eddington_accretion_rate_array(&m, &e))?.into_pyarray(py))
}

/// Magnetospheric truncation radius [cm].
#[pyfunction]
fn objects_magnetospheric_radius<'py>(
    py: Python<'py>,
    magnetic_moment: In<'py>,
    mass: In<'py>,
    mdot: In<'py>,
    xi: f64,
) -> Out<'py> {
    let (mu, m, md) = (magnetic_moment.as_array(), mass.as_array(), mdot.as_array());
    Ok(run_short(py, || {
        objects::magnetospheric_radius_array(&mu, &m, &md, xi)
    })?
    .into_pyarray(py))
}

type EdgeOut<'py> = (
    Bound<'py, PyArrayDyn<f64>>,
    Bound<'py, PyArrayDyn<f64>>,
    Bound<'py, PyArrayDyn<f64>>,
    Bound<'py, PyArrayDyn<u8>>,
);

/// Inner edge, truncation radius, ISCO radius and the code of what set the edge (0 magnetosphere,
/// 1 surface, 2 ISCO), for arrays of one shape.
#[pyfunction]
#[allow(clippy::too_many_arguments)]
fn objects_inner_edge<'py>(
    py: Python<'py>,
    mass: In<'py>,
    spin: In<'py>,
    radius: In<'py>,
    magnetic_moment: In<'py>,
    mdot: In<'py>,
    xi: f64,
    prograde: bool,
) -> PyResult<EdgeOut<'py>> {
    let views = [
        mass.as_array(),
        spin.as_array(),
        radius.as_array(),
        magnetic_moment.as_array(),
        mdot.as_array(),
    ];
    let obj = objects::ObjectArrays {
        mass: &views[0],
        spin: &views[1],
        radius: &views[2],
        moment: &views[3],
        mdot: &views[4],
    };
    let out = run_short(py, || objects::inner_edge_array(obj, xi, prograde))?;
    Ok((
        out.radius.into_pyarray(py),
        out.truncation.into_pyarray(py),
        out.isco.into_pyarray(py),
        out.set_by.into_pyarray(py),
    ))
}

pub fn register(m: &Bound<'_, PyModule>) -> PyResult<()> {
    m.add_function(wrap_pyfunction!(objects_gravitational_radius, m)?)?;
    m.add_function(wrap_pyfunction!(objects_isco_radius, m)?)?;
    m.add_function(wrap_pyfunction!(objects_horizon_radius, m)?)?;
    m.add_function(wrap_pyfunction!(objects_white_dwarf_radius, m)?)?;
    m.add_function(wrap_pyfunction!(objects_eddington_luminosity, m)?)?;
    m.add_function(wrap_pyfunction!(objects_eddington_accretion_rate, m)?)?;
    m.add_function(wrap_pyfunction!(objects_magnetospheric_radius, m)?)?;
    m.add_function(wrap_pyfunction!(objects_inner_edge, m)?)?;
    Ok(())
}
