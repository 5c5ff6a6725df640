//! Python bindings of `crate::disk`: a frozen class holding the disk parameters, array in, array out.

use numpy::{IntoPyArray, PyArrayDyn, PyReadonlyArrayDyn};
use pyo3::prelude::*;

use super::run::run_short;
use crate::disk::{AlphaDisk, Quantity, Validity, Vertical};

type In<'py> = PyReadonlyArrayDyn<'py, f64>;
type Out<'py> = PyResult<(Bound<'py, PyArrayDyn<f64>>, Worst)>;
/// Worst radiation-to-gas pressure, scattering-to-Kramers opacity and optical depth met.
type Worst = (f64, f64, f64);

fn worst(v: Validity) -> Worst {
    (
        v.radiation_to_gas_pressure,
        v.scattering_to_kramers_opacity,
        v.optical_depth,
    )
}
type Triple<'py> = (
    Bound<'py, PyArrayDyn<f64>>,
    Bound<'py, PyArrayDyn<f64>>,
    Bound<'py, PyArrayDyn<f64>>,
);

/// The steady gas-pressure / Kramers-opacity alpha disk of `crate::disk` (CGS).
#[pyclass(frozen, module = "fluxfunnel._core")]
pub struct AlphaDiskCore {
    disk: AlphaDisk,
}

#[pymethods]
impl AlphaDiskCore {
    #[new]
    #[allow(clippy::too_many_arguments)]
    fn new(
        mass: f64,
        mdot: f64,
        alpha: f64,
        r_in: f64,
        mu: f64,
        kappa0: f64,
        hydrogen_fraction: f64,
        midplane_factor: f64,
    ) -> PyResult<Self> {
        let disk = AlphaDisk::new(
            mass,
            mdot,
            alpha,
            r_in,
            mu,
            kappa0,
            hydrogen_fraction,
            midplane_factor,
        )?;
        Ok(Self { disk })
    }

    /// One named quantity at every radius `r` [cm], with the worst assumption ratios met.
    fn profile<'py>(&self, py: Python<'py>, r: In<'py>, quantity: &str) -> Out<'py> {
        let q = Quantity::from_name(quantity)?;
        let rv = r.as_array();
        let (out, w) = run_short(py, || self.disk.profile(&rv, q))?;
        Ok((out.into_pyarray(py), worst(w)))
    }

    /// Density [g/cm^3] at (r, z) of one shape; Gaussian when `polytropic_index` is None.
    #[pyo3(signature = (r, z, polytropic_index=None))]
    fn density<'py>(
        &self,
        py: Python<'py>,
        r: In<'py>,
        z: In<'py>,
        polytropic_index: Option<f64>,
    ) -> Out<'py> {
        let vertical = polytropic_index.map_or(Vertical::Gaussian, Vertical::Polytropic);
        let (rv, zv) = (r.as_array(), z.as_array());
        let (out, w) = run_short(py, || self.disk.density(&rv, &zv, vertical))?;
        Ok((out.into_pyarray(py), worst(w)))
    }

    /// Midplane plasma beta for a vertical field `b_z` [G] of the shape of `r`.
    fn plasma_beta<'py>(&self, py: Python<'py>, r: In<'py>, b_z: In<'py>) -> Out<'py> {
        let (rv, bv) = (r.as_array(), b_z.as_array());
        let (out, w) = run_short(py, || self.disk.plasma_beta(&rv, &bv))?;
        Ok((out.into_pyarray(py), worst(w)))
    }

    /// Radiation-to-gas pressure, scattering-to-Kramers opacity and optical depth at every radius.
    fn validity<'py>(&self, py: Python<'py>, r: In<'py>) -> PyResult<Triple<'py>> {
        let rv = r.as_array();
        let [p, k, t] = run_short(py, || self.disk.validity(&rv))?;
        Ok((p.into_pyarray(py), k.into_pyarray(py), t.into_pyarray(py)))
    }
}

pub fn register(m: &Bound<'_, PyModule>) -> PyResult<()> {
    m.add_class::<AlphaDiskCore>()?;
    Ok(())
}
