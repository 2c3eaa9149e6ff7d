//! `kdvsweep._core`: the Python shell over `kdvsweep-core`. Conversion only: arrays in as slices,
//! results out as new arrays, core errors as `kdvsweep.exceptions` classes. The equation crosses
//! by named keyword fields (`a, b, d, f, g, v, dealias`), never by position.

mod detach;
mod errors;

use kdvsweep_core as kc;
use numpy::{
    Complex64, IntoPyArray, PyArray1, PyArray2, PyArrayMethods, PyReadonlyArray1, PyReadonlyArray2,
    PyUntypedArrayMethods,
};
use pyo3::prelude::*;

use crate::detach::run_detached;
use crate::errors::to_py;

/// The core's checked equation from its named fields (`dealias = None`: the core's own rule).
#[allow(clippy::too_many_arguments)] // the model's six coefficients and its dealiasing fraction
fn equation(
    a: f64,
    b: f64,
    d: f64,
    f: f64,
    g: f64,
    v: f64,
    dealias: Option<f64>,
) -> PyResult<kc::Equation> {
    let coefficients = kc::Coefficients { a, b, d, f, g, v };
    kc::Equation::new(coefficients, dealias).map_err(to_py)
}

/// Time stepping of ``u_t + (a u + b u^2) u_x + d u_xxx + f u_xxxxx = -g u + v u_xx`` on a
/// periodic grid of ``n`` points on ``[-length/2, length/2)``, in the Rust core.
///
/// The public wrapper is ``kdvsweep.Simulation``, which checks and coerces its inputs; this class
/// checks its own arguments too and raises ``kdvsweep.ConfigError`` (bad value),
/// ``kdvsweep.ShapeError`` (bad length), ``kdvsweep.NumericalError`` (unstable run, or float64
/// times too coarse for the step), ``kdvsweep.exceptions.TimeLimitError`` (the time limit ran
/// out) or ``kdvsweep.exceptions.OutOfMemoryError`` (a buffer that cannot be allocated).
///
/// Parameters
/// ----------
/// n : int
///     Grid points, even and at least 16.
/// length : float
///     Period of the domain, positive.
/// a, b, d, f, g, v : float
///     Coefficients of the equation (keyword only); ``v >= 0``.
/// scheme : str
///     One of ``SCHEMES``: ``"etdrk4"``, ``"ifrk4"``, ``"strang"`` or ``"adaptive"``.
/// dt : float
///     The step (fixed schemes) or the first trial step (adaptive).
/// tol : float
///     Relative L2 error allowed per step, in (0, 1); used by the adaptive scheme only.
/// dealias : float or None
///     Fraction of the Nyquist band kept in the nonlinear term, in (0, 1]; ``None`` picks the
///     alias-free fraction (see ``dealias_fraction``).
/// max_amplitude : float or None
///     Blow-up bound on ``max|u|``; ``None`` means ``1e3 * max(1, max|u0|)``, set with each state.
/// time_limit : float or None
///     Wall-clock seconds that stepping (``advance`` and ``record`` together) may take since the
///     state was set, checked every 256 steps; ``None``: no limit.
#[pyclass(module = "kdvsweep._core")]
struct Simulation {
    inner: kc::Simulation,
}

#[pymethods]
impl Simulation {
    #[new]
    #[pyo3(signature = (
        n, length, *, a, b, d, f, g, v, scheme, dt, tol, dealias=None, max_amplitude=None,
        time_limit=None
    ))]
    #[allow(clippy::too_many_arguments)] // mirrors the Python constructor one to one
    fn new(
        n: usize,
        length: f64,
        a: f64,
        b: f64,
        d: f64,
        f: f64,
        g: f64,
        v: f64,
        scheme: &str,
        dt: f64,
        tol: f64,
        dealias: Option<f64>,
        max_amplitude: Option<f64>,
        time_limit: Option<f64>,
    ) -> PyResult<Self> {
        let grid = kc::Grid::new(n, length).map_err(to_py)?;
        let eq = equation(a, b, d, f, g, v, dealias)?;
        let scheme: kc::Scheme = scheme.parse().map_err(to_py)?;
        let mut inner =
            kc::Simulation::new(grid, &eq, scheme, dt, tol, max_amplitude).map_err(to_py)?;
        inner.set_time_limit(time_limit).map_err(to_py)?;
        Ok(Simulation { inner })
    }

    /// Replace the state by the profile ``u`` (float64, length ``n``) at time ``time``.
    ///
    /// Resets the step counters and, unless ``max_amplitude`` was given, the blow-up bound.
    /// Raises ``ShapeError`` for a wrong length and ``ConfigError`` for a non-finite value or time.
    fn set_state(&mut self, u: PyReadonlyArray1<'_, f64>, time: f64) -> PyResult<()> {
        self.inner.set_state(u.as_slice()?, time).map_err(to_py)
    }

    /// Step forward by ``duration`` (at least 0), not to it, with the GIL released.
    ///
    /// Ctrl-C and the time limit are honoured every 256 steps (the state is then valid at the time
    /// reached). Raises ``ConfigError`` for a negative or non-finite duration, ``NumericalError``
    /// when the run goes unstable or float64 times are too coarse for the step, and
    /// ``TimeLimitError`` when the time limit runs out.
    fn advance(&mut self, py: Python<'_>, duration: f64) -> PyResult<()> {
        let sim = &mut self.inner;
        run_detached(py, move |hook| sim.advance_with(duration, hook))
    }

    /// Advance through the non-decreasing ``times`` (all at least ``time``) and return the states
    /// there as a new array of shape ``(len(times), n)``, with the GIL released.
    ///
    /// Fixed-step schemes cross each interval with the largest equal steps of at most ``dt``, so
    /// every row is the state exactly at its time. Raises ``ConfigError`` for decreasing,
    /// non-finite or past times, ``OutOfMemoryError`` if the frames cannot be allocated (checked
    /// before any step), and the errors of ``advance``.
    fn record<'py>(
        &mut self,
        py: Python<'py>,
        times: PyReadonlyArray1<'py, f64>,
    ) -> PyResult<Bound<'py, PyArray2<f64>>> {
        let times = times.as_slice()?;
        let n = self.inner.grid().n();
        // The frames first: a table that cannot exist is refused before the times are copied.
        let mut out =
            kc::memory::try_table("the recorded frames", times.len(), n).map_err(to_py)?;
        let times = kc::memory::try_copy("the record times", times).map_err(to_py)?;
        let sim = &mut self.inner;
        let frames = &mut out;
        run_detached(py, move |hook| sim.record(&times, frames, hook))?;
        let rows = out.len() / n;
        out.into_pyarray(py).reshape([rows, n])
    }

    /// The current time.
    #[getter]
    fn time(&self) -> f64 {
        self.inner.time()
    }

    /// Accepted steps since the state was set.
    #[getter]
    fn steps(&self) -> u64 {
        self.inner.steps()
    }

    /// Rejected trial steps since the state was set (adaptive scheme; 0 otherwise).
    #[getter]
    fn rejected(&self) -> u64 {
        self.inner.rejected()
    }

    /// The wall-clock limit on stepping since the state was set, seconds (``None``: no limit).
    #[getter]
    fn time_limit(&self) -> Option<f64> {
        self.inner.time_limit()
    }

    /// The blow-up bound on ``max|u|`` in force.
    #[getter]
    fn bound(&self) -> f64 {
        self.inner.bound()
    }

    /// A copy of the current profile (a new float64 array of length ``n``).
    #[getter]
    fn state<'py>(&mut self, py: Python<'py>) -> Bound<'py, PyArray1<f64>> {
        self.inner.state().into_pyarray(py)
    }
}

/// Mass ``int u``, momentum ``int u^2`` and energy of the profile ``u`` (float64, periodic on a
/// domain of period ``length``), computed spectrally, as a tuple ``(mass, momentum, energy)``.
///
/// The energy is the Hamiltonian of the conservative part,
/// ``int (a u^3/6 + b u^4/12 - d u_x^2/2 + f u_xx^2/2)``; for KdV (``a = 6, d = 1``) it is the third
/// invariant of Miura, Gardner & Kruskal (1968). ``dealias`` is checked but does not enter.
#[pyfunction]
#[pyo3(signature = (u, length, *, a, b, d, f, g, v, dealias=None))]
#[allow(clippy::too_many_arguments)] // a profile, its period and the named equation fields
fn invariants(
    u: PyReadonlyArray1<'_, f64>,
    length: f64,
    a: f64,
    b: f64,
    d: f64,
    f: f64,
    g: f64,
    v: f64,
    dealias: Option<f64>,
) -> PyResult<(f64, f64, f64)> {
    let u = u.as_slice()?;
    let eq = equation(a, b, d, f, g, v, dealias)?;
    let grid = kc::Grid::new(u.len(), length).map_err(to_py)?;
    let inv = kc::invariants(u, &grid, &eq).map_err(to_py)?;
    Ok((inv.mass, inv.momentum, inv.energy))
}

/// The fraction of the Nyquist band the core keeps in the nonlinear term of this equation.
///
/// ``dealias`` itself when given (checked to lie in (0, 1]); otherwise the alias-free fraction
/// ``2/(p+1)`` for the highest power ``p`` of the flux (Orszag 1971): 2/3 for a quadratic flux,
/// 1/2 for a cubic one, 1 for a linear equation. Raises ``ConfigError`` for an invalid equation.
#[pyfunction]
#[pyo3(signature = (*, a, b, d, f, g, v, dealias=None))]
#[allow(clippy::too_many_arguments)] // the named equation fields
fn dealias_fraction(
    a: f64,
    b: f64,
    d: f64,
    f: f64,
    g: f64,
    v: f64,
    dealias: Option<f64>,
) -> PyResult<f64> {
    Ok(equation(a, b, d, f, g, v, dealias)?.dealias())
}

/// The KdV N-soliton of ``u_t + a u u_x + d u_xxx = 0`` at the points ``x`` and time ``t`` (on the
/// infinite line, no periodic images), as a new float64 array.
///
/// ``kappas`` are the distinct positive wavenumbers and ``x0s`` the positions each soliton would
/// have alone at ``t = 0``; a single soliton is ``(12 d / a) kappa^2 sech^2(kappa (x - x0 -
/// 4 d kappa^2 t))``. Raises ``ConfigError`` or ``ShapeError`` for bad parameters, including
/// parameters whose solution would not be finite. Runs with the GIL released and honours Ctrl-C
/// (the cost is ``len(x) * 2^N``).
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
    let x = kc::memory::try_copy("the points", x.as_slice()?).map_err(to_py)?;
    let kappas = kc::memory::try_copy("the kappas", kappas.as_slice()?).map_err(to_py)?;
    let x0s = kc::memory::try_copy("the positions", x0s.as_slice()?).map_err(to_py)?;
    let mut out = kc::memory::try_filled("the solution", x.len(), 0.0).map_err(to_py)?;
    let values = &mut out;
    run_detached(py, move |hook| {
        kc::exact::kdv_multisoliton_with(&x, t, &kappas, &x0s, a, d, values, hook)
    })?;
    Ok(out.into_pyarray(py))
}

/// The focusing mKdV N-soliton of ``u_t + b u^2 u_x + d u_xxx = 0`` (``b d > 0``) at the points
/// ``x`` and time ``t`` (on the infinite line), as a new float64 array.
///
/// ``kappas`` are the distinct positive wavenumbers, ``x0s`` the lone-soliton positions at
/// ``t = 0`` and ``signs`` the polarities (+1 or -1) of the solitons. Raises ``ConfigError`` or
/// ``ShapeError`` for bad parameters, including parameters whose solution would not be finite.
/// Runs with the GIL released and honours Ctrl-C.
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
    let x = kc::memory::try_copy("the points", x.as_slice()?).map_err(to_py)?;
    let kappas = kc::memory::try_copy("the kappas", kappas.as_slice()?).map_err(to_py)?;
    let x0s = kc::memory::try_copy("the positions", x0s.as_slice()?).map_err(to_py)?;
    let signs = kc::memory::try_copy("the signs", signs.as_slice()?).map_err(to_py)?;
    let mut out = kc::memory::try_filled("the solution", x.len(), 0.0).map_err(to_py)?;
    let values = &mut out;
    run_detached(py, move |hook| {
        kc::exact::mkdv_multisoliton_with(&x, t, &kappas, &x0s, &signs, b, d, values, hook)
    })?;
    Ok(out.into_pyarray(py))
}

/// Seconds per set of ``forward`` real-to-complex plus ``inverse`` complex-to-real transforms of
/// size ``n`` (even), averaged over ``repeats`` sets: the FFT floor of a step, for benchmarks.
/// Runs with the GIL released.
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

/// The steps a fixed-step ``Simulation`` with step ``dt`` takes from time ``start`` to record each
/// of ``times`` in turn (its own rule: the fewest equal steps of at most ``dt`` across each
/// interval, a whole number of steps up to round-off taking exactly that many). For plans.
/// Raises ``ConfigError`` unless ``dt`` is positive and ``start`` and ``times`` finite and
/// non-decreasing.
#[pyfunction]
fn fixed_step_count(start: f64, times: PyReadonlyArray1<'_, f64>, dt: f64) -> PyResult<u64> {
    kc::simulation::fixed_step_count(start, times.as_slice()?, dt).map_err(to_py)
}

/// An upper bound of the bytes a ``Simulation`` of ``n`` points allocates, any scheme (stage
/// buffers, cached step coefficients and FFT plans; the recorded frames come on top, 8 bytes a
/// value). The core refuses a grid when this much memory cannot be reserved.
#[pyfunction]
fn simulation_memory(n: usize) -> u128 {
    kc::simulation::memory_bound(n)
}

/// Indices from an int64 array, each checked to be non-negative.
fn indices(name: &'static str, values: &[i64]) -> PyResult<Vec<usize>> {
    let mut out = kc::memory::try_filled(name, values.len(), 0usize).map_err(to_py)?;
    for (o, &v) in out.iter_mut().zip(values) {
        *o = usize::try_from(v).map_err(|_| {
            to_py(kc::CoreError::InvalidParameter {
                name,
                value: v.to_string(),
                expected: "a non-negative index".into(),
            })
        })?;
    }
    Ok(out)
}

/// The extrema of the trigonometric interpolants of ``frames`` (float64, shape ``(m, n)``, each
/// row one period ``length`` sampled at ``x_j = -length/2 + j length/n``, ``n`` even) near
/// candidate discrete extrema: candidate ``c`` is the extremum of ``sign[c] * u`` (``sign`` +1 or
/// -1) at grid index ``index[c]`` of frame ``frame[c]`` (int64 arrays of one length).
///
/// Each frame with a candidate is transformed once (its noise band dropped when ``denoise``,
/// see ``interpolant_spectra``); each candidate is refined by Newton's method on the derivative
/// of the Fourier series from the vertex of the parabola through its three samples, kept inside
/// the two grid cells around it (bisection on the derivative's sign when a step leaves them).
/// Returns ``(x, height, converged)``: positions (not wrapped), the interpolant's values there
/// and whether each iteration met its tolerance. Runs with the GIL released. Raises
/// ``ConfigError`` for a bad shape, length, index, sign or a non-finite value in a frame with a
/// candidate, ``ShapeError`` when the candidate arrays differ in length.
#[pyfunction]
#[pyo3(signature = (frames, length, frame, index, sign, *, denoise=true))]
#[allow(clippy::type_complexity)] // the three result arrays
fn locate_extrema<'py>(
    py: Python<'py>,
    frames: PyReadonlyArray2<'py, f64>,
    length: f64,
    frame: PyReadonlyArray1<'py, i64>,
    index: PyReadonlyArray1<'py, i64>,
    sign: PyReadonlyArray1<'py, i64>,
    denoise: bool,
) -> PyResult<(
    Bound<'py, PyArray1<f64>>,
    Bound<'py, PyArray1<f64>>,
    Bound<'py, PyArray1<bool>>,
)> {
    let n = frames.shape()[1];
    let values = kc::memory::try_copy("the frames", frames.as_slice()?).map_err(to_py)?;
    let frame = indices("frame", frame.as_slice()?)?;
    let index = indices("index", index.as_slice()?)?;
    let sign: Vec<f64> = sign.as_slice()?.iter().map(|&s| s as f64).collect();
    let found = run_detached(py, move |hook| {
        kc::extrema::locate_extrema(&values, n, length, &frame, &index, &sign, denoise, hook)
    })?;
    Ok((
        found.x.into_pyarray(py),
        found.height.into_pyarray(py),
        found.converged.into_pyarray(py),
    ))
}

/// The unnormalised real-to-complex spectra (complex128, shape ``(m, n/2 + 1)``) of ``frames``
/// (float64, shape ``(m, n)``, ``n`` even), with the modes of each frame above the last one that
/// stands clear of a noise plateau dropped when ``denoise``: when the median magnitude of the
/// top quarter of the band is positive and at least 0.3 of the median of the quarter below, the
/// modes above the last one exceeding 10 times it are zeroed (a spectrum still decaying there is
/// kept whole). Raises ``ConfigError`` for a bad shape or a non-finite value.
#[pyfunction]
#[pyo3(signature = (frames, *, denoise=true))]
fn interpolant_spectra<'py>(
    py: Python<'py>,
    frames: PyReadonlyArray2<'py, f64>,
    denoise: bool,
) -> PyResult<Bound<'py, PyArray2<Complex64>>> {
    let (m, n) = (frames.shape()[0], frames.shape()[1]);
    let values = kc::memory::try_copy("the frames", frames.as_slice()?).map_err(to_py)?;
    let out = py
        .detach(move || kc::extrema::spectra(&values, n, denoise))
        .map_err(to_py)?;
    out.into_pyarray(py).reshape([m, n / 2 + 1])
}

/// The compiled core of kdvsweep: the ``Simulation`` stepper, spectral ``invariants``, the core's
/// ``dealias_fraction`` rule, exact KdV/mKdV multi-solitons, an FFT timing floor, the memory bound
/// ``simulation_memory``, sub-grid extrema of frames (``locate_extrema``, ``interpolant_spectra``)
/// and ``SCHEMES``
/// (the names of the time-stepping schemes, in documented order).
#[pymodule]
fn _core(m: &Bound<'_, PyModule>) -> PyResult<()> {
    m.add_class::<Simulation>()?;
    m.add_function(wrap_pyfunction!(invariants, m)?)?;
    m.add_function(wrap_pyfunction!(dealias_fraction, m)?)?;
    m.add_function(wrap_pyfunction!(kdv_multisoliton, m)?)?;
    m.add_function(wrap_pyfunction!(mkdv_multisoliton, m)?)?;
    m.add_function(wrap_pyfunction!(fft_floor, m)?)?;
    m.add_function(wrap_pyfunction!(simulation_memory, m)?)?;
    m.add_function(wrap_pyfunction!(fixed_step_count, m)?)?;
    m.add_function(wrap_pyfunction!(locate_extrema, m)?)?;
    m.add_function(wrap_pyfunction!(interpolant_spectra, m)?)?;
    m.add("SCHEMES", kc::Scheme::ALL.map(|s| s.name()).to_vec())?;
    Ok(())
}
