//! Time-stepping schemes for `v_t = L v + N(v)` in spectral space.
//!
//! Each scheme owns its FFT plans (inside [`crate::spectral::Nonlinear`]), stage buffers and
//! coefficient cache; a step allocates nothing. Coefficients depend on the step size and are cached
//! for the two most recent sizes, so a run of equal steps with a shorter final one costs two sets.

// Stage formulas read five or six arrays at one index; zipped iterators would hide the formulas.
#![allow(clippy::needless_range_loop)]

mod adaptive;
mod etdrk4;
mod ifrk4;
mod strang;

use std::fmt;
use std::str::FromStr;

use num_complex::Complex64;
use rustfft::FftPlanner;

pub use adaptive::{Attempt, IfRk43};
pub use etdrk4::Etdrk4;
pub use ifrk4::IfRk4;
pub use strang::Strang;

use crate::equation::Equation;
use crate::error::{CoreError, Result};
use crate::grid::Grid;
use crate::simd::kernel;
use crate::spectral::Probe;

/// The time-stepping schemes.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Scheme {
    /// Exponential time differencing RK4 (Cox & Matthews 2002) with contour-integral coefficients
    /// (Kassam & Trefethen 2005).
    Etdrk4,
    /// Integrating-factor RK4 (e.g. Trefethen 2000, Program 27).
    IfRk4,
    /// Strang splitting: exact linear half steps around an RK4 step of the nonlinear part.
    Strang,
    /// Integrating-factor RK4 with the FSAL third-order companion, tolerance controlled.
    Adaptive,
}

impl Scheme {
    /// All schemes, in the order they are documented.
    pub const ALL: [Scheme; 4] = [
        Scheme::Etdrk4,
        Scheme::IfRk4,
        Scheme::Strang,
        Scheme::Adaptive,
    ];

    /// The scheme's name as accepted by [`Scheme::from_str`].
    pub fn name(self) -> &'static str {
        match self {
            Scheme::Etdrk4 => "etdrk4",
            Scheme::IfRk4 => "ifrk4",
            Scheme::Strang => "strang",
            Scheme::Adaptive => "adaptive",
        }
    }

    /// Formal order of accuracy.
    pub fn order(self) -> u32 {
        match self {
            Scheme::Strang => 2,
            Scheme::Etdrk4 | Scheme::IfRk4 | Scheme::Adaptive => 4,
        }
    }
}

impl fmt::Display for Scheme {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(self.name())
    }
}

impl FromStr for Scheme {
    type Err = CoreError;

    fn from_str(s: &str) -> Result<Self> {
        Scheme::ALL
            .into_iter()
            .find(|sc| sc.name() == s)
            .ok_or_else(|| {
                let names: Vec<&str> = Scheme::ALL.iter().map(|sc| sc.name()).collect();
                CoreError::invalid(
                    "scheme",
                    format!("{s:?}"),
                    format!("one of {}", names.join(", ")),
                )
            })
    }
}

/// One fixed step of a scheme, in place on the spectrum `v` (`n/2 + 1` modes).
pub trait Stepper: Send + Sync {
    /// Which scheme this is.
    fn scheme(&self) -> Scheme;

    /// Advances `v` by `h`; the probe describes the state at the start of the step.
    ///
    /// # Errors
    /// [`CoreError::ShapeMismatch`] if `v` does not have the `n/2 + 1` modes of the stepper's
    /// grid (checked before `v` is touched, so it is left unchanged).
    fn step(&mut self, v: &mut [Complex64], h: f64) -> Result<Probe>;
}

/// Builds the fixed-step stepper of a scheme (the adaptive one steps with its fixed-step rule here),
/// planning its transforms with `planner` (which caches plans, so share one per program part).
pub fn stepper(
    planner: &mut FftPlanner<f64>,
    scheme: Scheme,
    grid: &Grid,
    eq: &Equation,
) -> Box<dyn Stepper> {
    match scheme {
        Scheme::Etdrk4 => Box::new(Etdrk4::new(planner, grid, eq)),
        Scheme::IfRk4 => Box::new(IfRk4::new(planner, grid, eq)),
        Scheme::Strang => Box::new(Strang::new(planner, grid, eq)),
        Scheme::Adaptive => Box::new(IfRk43::new(planner, grid, eq)),
    }
}

/// The linear symbol on the grid's modes.
pub(crate) fn symbol(grid: &Grid, eq: &Equation) -> Vec<Complex64> {
    let m = grid.modes();
    grid.wavenumbers()
        .iter()
        .enumerate()
        .map(|(j, &k)| eq.symbol(k, j == m - 1))
        .collect()
}

/// Step-size-dependent coefficients for the two most recent step sizes. A miss builds a new set
/// (the only allocation a fixed-step scheme makes after construction).
pub(crate) struct CoeffCache<T> {
    entries: Vec<(f64, T)>,
}

impl<T> CoeffCache<T> {
    pub(crate) fn new() -> Self {
        CoeffCache {
            entries: Vec::with_capacity(3),
        }
    }

    /// The coefficients for `h`, built by `make` unless `h` matches a cached size to 1e-12 relative
    /// (equal intervals computed by different subtractions differ in the last bits).
    pub(crate) fn get(&mut self, h: f64, make: impl FnOnce(f64) -> T) -> &T {
        let pos = self
            .entries
            .iter()
            .position(|(hc, _)| (hc - h).abs() <= 1e-12 * h.abs());
        match pos {
            Some(p) => self.entries.swap(0, p),
            None => {
                self.entries.insert(0, (h, make(h)));
                self.entries.truncate(2);
            }
        }
        &self.entries[0].1
    }
}

/// `exp(h L / 2)` and `exp(h L)` on every mode.
pub(crate) struct Exponentials {
    pub(crate) half: Vec<Complex64>,
    pub(crate) full: Vec<Complex64>,
}

impl Exponentials {
    pub(crate) fn new(lin: &[Complex64], h: f64) -> Self {
        let half: Vec<Complex64> = lin.iter().map(|&l| (0.5 * h * l).exp()).collect();
        let full = half.iter().map(|e| e * e).collect();
        Exponentials { half, full }
    }

    /// Recomputes in place (the adaptive scheme changes `h` every step).
    pub(crate) fn update(&mut self, lin: &[Complex64], h: f64) {
        for ((eh, ef), &l) in self.half.iter_mut().zip(self.full.iter_mut()).zip(lin) {
            *eh = (0.5 * h * l).exp();
            *ef = *eh * *eh;
        }
    }
}

kernel! {
    /// `v *= e`: the modes beyond the dealiased band evolve by the linear part alone.
    pub(crate) fn linear(v: &mut [Complex64], e: &[Complex64]) {
        for (vj, ej) in v.iter_mut().zip(e) {
            *vj *= ej;
        }
    }
}

pub(crate) fn zeros(m: usize) -> Vec<Complex64> {
    vec![Complex64::new(0.0, 0.0); m]
}
