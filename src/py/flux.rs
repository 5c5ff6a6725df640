//! Bindings of the global flux stage: kernels, the operator, the model and its time stepper.

use std::sync::Arc;

use numpy::{IntoPyArray, PyArray1, PyArray2, PyReadonlyArray1};
use pyo3::prelude::*;

use super::run::{run_long, run_short};
use crate::error::{CoreError, CoreResult};
use crate::flux::kernel;
use crate::flux::model::{FluxSystem, InnerEdge, Method, OuterEdge, Stepper};
use crate::numerics::dense::Lu;
use crate::numerics::elliptic;

fn vec1(a: &PyReadonlyArray1<'_, f64>) -> Vec<f64> {
    a.as_array().iter().copied().collect()
}

fn map1<'py>(
    py: Python<'py>,
    a: PyReadonlyArray1<'py, f64>,
    f: fn(f64) -> f64,
) -> Bound<'py, PyArray1<f64>> {
    a.as_array().mapv(f).into_pyarray(py)
}

/// One elementwise binding per complete elliptic integral (same shape in, same shape out).
macro_rules! elementwise {
    ($($(#[$doc:meta])* $name:ident => $f:path;)*) => {$(
        $(#[$doc])*
        #[pyfunction]
        pub fn $name<'py>(py: Python<'py>, x: PyReadonlyArray1<'py, f64>) -> Bound<'py, PyArray1<f64>> {
            map1(py, x, $f)
        }
    )*};
}

elementwise! {
    /// K(m), parameter m = k^2 (NaN outside m <= 1).
    flux_ellipk => elliptic::ellipk;
    /// K from the complementary parameter p = 1 - m.
    flux_ellipkm1 => elliptic::ellipkm1;
    /// E(m), parameter m = k^2.
    flux_ellipe => elliptic::ellipe;
    /// E from the complementary parameter p = 1 - m.
    flux_ellipem1 => elliptic::ellipem1;
}

fn map3<'py>(
    py: Python<'py>,
    x: PyReadonlyArray1<'py, f64>,
    y: PyReadonlyArray1<'py, f64>,
    z: PyReadonlyArray1<'py, f64>,
    f: fn(f64, f64, f64) -> f64,
) -> PyResult<Bound<'py, PyArray1<f64>>> {
    let (x, y, z) = (x.as_array(), y.as_array(), z.as_array());
    if x.len() != y.len() || x.len() != z.len() {
        return Err(CoreError::input("x, y, z", "must have the same length").into());
    }
    let out: Vec<f64> = (0..x.len()).map(|i| f(x[i], y[i], z[i])).collect();
    Ok(out.into_pyarray(py))
}

/// One elementwise binding per Carlson symmetric integral (three equal-length arrays in).
macro_rules! elementwise3 {
    ($($(#[$doc:meta])* $name:ident => $f:path;)*) => {$(
        $(#[$doc])*
        #[pyfunction]
        pub fn $name<'py>(
            py: Python<'py>,
            x: PyReadonlyArray1<'py, f64>,
            y: PyReadonlyArray1<'py, f64>,
            z: PyReadonlyArray1<'py, f64>,
        ) -> PyResult<Bound<'py, PyArray1<f64>>> {
            map3(py, x, y, z, $f)
        }
    )*};
}

elementwise3! {
    /// Carlson's R_F(x, y, z).
    flux_elliprf => elliptic::carlson_rf;
    /// Carlson's R_D(x, y, z).
    flux_elliprd => elliptic::carlson_rd;
}

/// G(r, r_src) elementwise for equal-length arrays of positive radii.
#[pyfunction]
pub fn flux_ring_kernel<'py>(
    py: Python<'py>,
    r: PyReadonlyArray1<'py, f64>,
    r_src: PyReadonlyArray1<'py, f64>,
) -> PyResult<Bound<'py, PyArray1<f64>>> {
    let (a, b) = (vec1(&r), vec1(&r_src));
    let out = run_short(py, move || {
        crate::numerics::checks::same_len("r", a.len(), "r_src", b.len())?;
        crate::numerics::checks::positive("r", &a)?;
        crate::numerics::checks::positive("r_src", &b)?;
        Ok(a.iter()
            .zip(&b)
            .map(|(x, y)| kernel::ring_kernel(*x, *y))
            .collect::<Vec<f64>>())
    })?;
    Ok(out.into_pyarray(py))
}

/// The N x N operator W (psi - psi_ext = W B_rs) on the grid r.
#[pyfunction]
pub fn flux_operator<'py>(
    py: Python<'py>,
    r: PyReadonlyArray1<'py, f64>,
) -> PyResult<Bound<'py, PyArray2<f64>>> {
    let r = vec1(&r);
    let w = run_short(py, move || kernel::flux_operator(&r))?;
    let n = w.n;
    let arr = numpy::ndarray::Array2::from_shape_vec((n, n), w.a)
        .map_err(|e| PyErr::from(CoreError::input("r", e.to_string())))?;
    Ok(arr.into_pyarray(py))
}

/// psi = psi_ext + W b_rs.
#[pyfunction]
pub fn flux_psi_from_field<'py>(
    py: Python<'py>,
    r: PyReadonlyArray1<'py, f64>,
    b_rs: PyReadonlyArray1<'py, f64>,
    psi_ext: PyReadonlyArray1<'py, f64>,
) -> PyResult<Bound<'py, PyArray1<f64>>> {
    let (r, b, p) = (vec1(&r), vec1(&b_rs), vec1(&psi_ext));
    let out = run_short(py, move || {
        crate::numerics::checks::same_len("b_rs", b.len(), "r", r.len())?;
        crate::numerics::checks::finite("b_rs", &b)?;
        let w = kernel::flux_operator(&r)?;
        Ok(w.matvec(&b)
            .iter()
            .zip(&p)
            .map(|(a, c)| a + c)
            .collect::<Vec<f64>>())
    })?;
    Ok(out.into_pyarray(py))
}

/// b_rs = W^-1 (psi - psi_ext).
#[pyfunction]
pub fn flux_field_from_psi<'py>(
    py: Python<'py>,
    r: PyReadonlyArray1<'py, f64>,
    psi: PyReadonlyArray1<'py, f64>,
    psi_ext: PyReadonlyArray1<'py, f64>,
) -> PyResult<Bound<'py, PyArray1<f64>>> {
    let (r, psi, p) = (vec1(&r), vec1(&psi), vec1(&psi_ext));
    let out = run_short(py, move || {
        crate::numerics::checks::same_len("psi", psi.len(), "r", r.len())?;
        crate::numerics::checks::finite("psi", &psi)?;
        let w = kernel::flux_operator(&r)?;
        let lu = Lu::factor(w, "flux operator W")?;
        Ok(lu.solve(&psi.iter().zip(&p).map(|(a, c)| a - c).collect::<Vec<f64>>()))
    })?;
    Ok(out.into_pyarray(py))
}

fn parse_inner(s: &str) -> CoreResult<InnerEdge> {
    match s {
        "same" => Ok(InnerEdge::Same),
        "closed" => Ok(InnerEdge::Closed),
        other => Err(CoreError::input(
            "inner_edge",
            format!("must be 'same' or 'closed', got {other:?}"),
        )),
    }
}

fn parse_outer(s: &str) -> CoreResult<OuterEdge> {
    match s {
        "anchored" => Ok(OuterEdge::Anchored),
        "same" => Ok(OuterEdge::Same),
        other => Err(CoreError::input(
            "outer_edge",
            format!("must be 'anchored' or 'same', got {other:?}"),
        )),
    }
}

/// The assembled kinematic flux-transport model (operator factored once).
#[pyclass(name = "FluxSystem", module = "fluxfunnel._core", frozen)]
pub struct PyFluxSystem {
    inner: Arc<FluxSystem>,
}

#[pymethods]
impl PyFluxSystem {
    #[new]
    #[allow(clippy::too_many_arguments)]
    fn new(
        py: Python<'_>,
        r: PyReadonlyArray1<'_, f64>,
        u_adv: PyReadonlyArray1<'_, f64>,
        u_dif: PyReadonlyArray1<'_, f64>,
        radial_diffusivity: PyReadonlyArray1<'_, f64>,
        psi_ext: PyReadonlyArray1<'_, f64>,
        inner_edge: &str,
        outer_edge: &str,
    ) -> PyResult<Self> {
        let (r, ua, ud, er, pe) = (
            vec1(&r),
            vec1(&u_adv),
            vec1(&u_dif),
            vec1(&radial_diffusivity),
            vec1(&psi_ext),
        );
        let (ie, oe) = (parse_inner(inner_edge)?, parse_outer(outer_edge)?);
        let sys = run_long(py, move |_| FluxSystem::new(&r, &ua, &ud, &er, &pe, ie, oe))?;
        Ok(Self {
            inner: Arc::new(sys),
        })
    }

    /// B_z (gauss) from psi.
    fn b_z<'py>(
        &self,
        py: Python<'py>,
        psi: PyReadonlyArray1<'py, f64>,
    ) -> PyResult<Bound<'py, PyArray1<f64>>> {
        self.per_psi(py, psi, FluxSystem::b_z)
    }

    /// B_rs (gauss) from psi.
    fn b_rs<'py>(
        &self,
        py: Python<'py>,
        psi: PyReadonlyArray1<'py, f64>,
    ) -> PyResult<Bound<'py, PyArray1<f64>>> {
        self.per_psi(py, psi, FluxSystem::b_rs)
    }

    /// d psi / dt (G cm^2 / s) at psi.
    fn dpsi_dt<'py>(
        &self,
        py: Python<'py>,
        psi: PyReadonlyArray1<'py, f64>,
    ) -> PyResult<Bound<'py, PyArray1<f64>>> {
        self.per_psi(py, psi, FluxSystem::dpsi_dt)
    }

    /// The external flux function psi_ext (G cm^2).
    fn psi_ext<'py>(&self, py: Python<'py>) -> Bound<'py, PyArray1<f64>> {
        self.inner.psi_ext().to_vec().into_pyarray(py)
    }

    /// Steady state: (psi, b_rs).
    #[allow(clippy::type_complexity)]
    fn steady_state<'py>(
        &self,
        py: Python<'py>,
    ) -> PyResult<(Bound<'py, PyArray1<f64>>, Bound<'py, PyArray1<f64>>)> {
        let sys = self.inner.clone();
        let (psi, b) = run_long(py, move |_| sys.steady_state())?;
        Ok((psi.into_pyarray(py), b.into_pyarray(py)))
    }
}

impl PyFluxSystem {
    fn per_psi<'py>(
        &self,
        py: Python<'py>,
        psi: PyReadonlyArray1<'py, f64>,
        f: fn(&FluxSystem, &[f64]) -> Vec<f64>,
    ) -> PyResult<Bound<'py, PyArray1<f64>>> {
        let psi = vec1(&psi);
        crate::numerics::checks::same_len("psi", psi.len(), "r", self.inner.len())?;
        Ok(f(&self.inner, &psi).into_pyarray(py))
    }
}

/// A time integration in progress (factorisation reused between calls to `advance`).
#[pyclass(name = "FluxStepper", module = "fluxfunnel._core")]
pub struct PyFluxStepper {
    inner: Stepper,
}

#[pymethods]
impl PyFluxStepper {
    #[new]
    fn new(
        py: Python<'_>,
        system: &PyFluxSystem,
        psi0: PyReadonlyArray1<'_, f64>,
        dt: f64,
        method: &str,
    ) -> PyResult<Self> {
        let method = Method::parse(method)?;
        let sys = system.inner.clone();
        let psi0 = vec1(&psi0);
        let inner = run_long(py, move |_| Stepper::new(sys, &psi0, dt, method))?;
        Ok(Self { inner })
    }

    /// Take `n` steps with the GIL released (Ctrl-C stops between steps).
    fn advance(&mut self, py: Python<'_>, n: usize) -> PyResult<()> {
        let st = &mut self.inner;
        run_long(py, move |cancel| st.advance(n, cancel))
    }

    /// Current psi (G cm^2).
    fn psi<'py>(&self, py: Python<'py>) -> Bound<'py, PyArray1<f64>> {
        self.inner.psi().to_vec().into_pyarray(py)
    }

    /// Current B_rs (gauss).
    fn b_rs<'py>(&self, py: Python<'py>) -> Bound<'py, PyArray1<f64>> {
        self.inner.b_rs().to_vec().into_pyarray(py)
    }

    /// Time reached (s).
    #[getter]
    fn t(&self) -> f64 {
        self.inner.t
    }

    /// Steps taken.
    #[getter]
    fn steps(&self) -> usize {
        self.inner.steps
    }
}

pub fn register(m: &Bound<'_, PyModule>) -> PyResult<()> {
    m.add_function(wrap_pyfunction!(flux_ellipk, m)?)?;
    m.add_function(wrap_pyfunction!(flux_ellipkm1, m)?)?;
    m.add_function(wrap_pyfunction!(flux_ellipe, m)?)?;
    m.add_function(wrap_pyfunction!(flux_ellipem1, m)?)?;
    m.add_function(wrap_pyfunction!(flux_elliprf, m)?)?;
    m.add_function(wrap_pyfunction!(flux_elliprd, m)?)?;
    m.add_function(wrap_pyfunction!(flux_ring_kernel, m)?)?;
    m.add_function(wrap_pyfunction!(flux_operator, m)?)?;
    m.add_function(wrap_pyfunction!(flux_psi_from_field, m)?)?;
    m.add_function(wrap_pyfunction!(flux_field_from_psi, m)?)?;
    m.add_class::<PyFluxSystem>()?;
    m.add_class::<PyFluxStepper>()?;
    Ok(())
}
