//! `kdvsweep._core`: the Python shell over `kdvsweep-core`. Conversion only: arrays in as slices,
//! results out as new arrays, core errors as `kdvsweep.exceptions` classes.

mod detach;
mod errors;

use kdvsweep_core as kc;
use numpy::{IntoPyArray, PyArray1, PyArray2, PyArrayMethods, PyReadonlyArray1};
use pyo3::prelude::*;

use crate::detach::run_detached;
use crate::errors::to_py;

type Coefficients = (f64, f64, f64, f64, f64, f64);

fn equation(c: Coefficients, dealias: f64) -> PyResult<kc::Equation> {
    kc::Equation::with_dealias(c.0, c.1, c.2, c.3, c.4, c.5, dealias).map_err(to_py)
}

/// A simulation of one equation on one grid (wrapped by `kdvsweep.Simulation`).
#[pyclass(module = "kdvsweep._core")]
struct Simulation {
    inner: kc::Simulation,
}

#[pymethods]
impl Simulation {
    #[new]
    #[pyo3(signature = (n, length, coefficients, dealias, scheme, dt, tol, max_amplitude=None))]
    #[allow(clippy::too_many_arguments)] // mirrors the Python constructor one to one
    fn new(
        n: usize,
        length: f64,
        coefficients: Coefficients,
        dealias: f64,
        scheme: &str,
        dt: f64,
        tol: f64,
        max_amplitude: Option<f64>,
    ) -> PyResult<Self> {
        let grid = kc::Grid::new(n, length).map_err(to_py)?;
        let eq = equation(coefficients, dealias)?;
        let scheme: kc::Scheme = scheme.parse().map_err(to_py)?;
        let inner =
            kc::Simulation::new(grid, &eq, scheme, dt, tol, max_amplitude).map_err(to_py)?;
        Ok(Simulation { inner })
    }

    fn set_state(&mut self, u: PyReadonlyArray1<'_, f64>, time: f64) -> PyResult<()> {
        self.inner.set_state(u.as_slice()?, time).map_err(to_py)
    }

    fn advance(&mut self, py: Python<'_>, duration: f64) -> PyResult<()> {
        let sim = &mut self.inner;
        run_detached(py, move |hook| sim.advance_with(duration, hook))
    }

    fn record<'py>(
        &mut self,
        py: Python<'py>,
        times: PyReadonlyArray1<'py, f64>,
    ) -> PyResult<Bound<'py, PyArray2<f64>>> {
        let times = times.as_slice()?.to_vec();
        let n = self.inner.grid().n();
        let mut out = vec![0.0; times.len() * n];
        let sim = &mut self.inner;
        let frames = &mut out;
        run_detached(py, move |hook| sim.record(&times, frames, hook))?;
        let rows = out.len() / n;
        out.into_pyarray(py).reshape([rows, n])
    }

    #[getter]
    fn time(&self) -> f64 {
        self.inner.time()
    }

    #[getter]
    fn steps(&self) -> u64 {
        self.inner.steps()
    }

    #[getter]
    fn rejected(&self) -> u64 {
        self.inner.rejected()
    }

    #[getter]
    fn bound(&self) -> f64 {
        self.inner.bound()
    }

    #[getter]
    fn state<'py>(&mut self, py: Python<'py>) -> Bound<'py, PyArray1<f64>> {
        self.inner.state().into_pyarray(py)
    }
}

/// Mass, momentum and energy of a profile.
#[pyfunction]
fn invariants(
    u: PyReadonlyArray1<'_, f64>,
    length: f64,
    coefficients: Coefficients,
) -> PyResult<(f64, f64, f64)> {
    let u = u.as_slice()?;
    let grid = kc::Grid::new(u.len(), length).map_err(to_py)?;
    let inv = kc::invariants(u, &grid, &equation(coefficients, 1.0)?).map_err(to_py)?;
    Ok((inv.mass, inv.momentum, inv.energy))
}

/// The KdV N-soliton of `u_t + a u u_x + d u_xxx = 0`.
#[pyfunction]
fn kdv_multisoliton<'py>(
    py: Python<'py>,
    x: PyReadonlyArray1<'py, f64>,
    t: f64,
    kappas: PyReadonlyArray1<'py, f64>,
    x0s: PyReadonlyArray1<'py, f64>,
    a: f64,
    d: f64,
) -> PyResult<Bound<'py, PyArray1<f64>>> {
    let x = x.as_slice()?;
    let mut out = vec![0.0; x.len()];
    kc::exact::kdv_multisoliton(x, t, kappas.as_slice()?, x0s.as_slice()?, a, d, &mut out)
        .map_err(to_py)?;
    Ok(out.into_pyarray(py))
}

/// The focusing mKdV N-soliton of `u_t + b u^2 u_x + d u_xxx = 0` with polarities `signs`.
#[pyfunction]
#[allow(clippy::too_many_arguments)] // the solution's parameters
fn mkdv_multisoliton<'py>(
    py: Python<'py>,
    x: PyReadonlyArray1<'py, f64>,
    t: f64,
    kappas: PyReadonlyArray1<'py, f64>,
    x0s: PyReadonlyArray1<'py, f64>,
    signs: PyReadonlyArray1<'py, f64>,
    b: f64,
    d: f64,
) -> PyResult<Bound<'py, PyArray1<f64>>> {
    let x = x.as_slice()?;
    let mut out = vec![0.0; x.len()];
    kc::exact::mkdv_multisoliton(
        x,
        t,
        kappas.as_slice()?,
        x0s.as_slice()?,
        signs.as_slice()?,
        b,
        d,
        &mut out,
    )
    .map_err(to_py)?;
    Ok(out.into_pyarray(py))
}

/// Seconds per set of `forward` + `inverse` bare real transforms of size `n` (benchmark floor).
#[pyfunction]
fn fft_floor(
    py: Python<'_>,
    n: usize,
    forward: usize,
    inverse: usize,
    repeats: usize,
) -> PyResult<f64> {
    py.detach(|| kc::bench::fft_floor(n, forward, inverse, repeats))
        .map_err(to_py)
}

#[pymodule]
fn _core(m: &Bound<'_, PyModule>) -> PyResult<()> {
    m.add_class::<Simulation>()?;
    m.add_function(wrap_pyfunction!(invariants, m)?)?;
    m.add_function(wrap_pyfunction!(kdv_multisoliton, m)?)?;
    m.add_function(wrap_pyfunction!(mkdv_multisoliton, m)?)?;
    m.add_function(wrap_pyfunction!(fft_floor, m)?)?;
    m.add("SCHEMES", kc::Scheme::ALL.map(|s| s.name()).to_vec())?;
    Ok(())
}
