//! Adaptive integrating-factor RK4(3).
//!
//! The pair: classical RK4 (in the integrating-factor variable) and its third-order companion
//! with weights (1/6, 1/3, 1/3, 0, 1/6) on (k1, k2, k3, k4, k5), where `k5 = N(v_new)` is the next
//! step's `k1` ("first same as last"). The companion satisfies the four order-3 conditions
//! (sum b = 1, sum b c = 1/2, sum b c^2 = 1/3, sum b A c = 1/6; common practice, checked by hand),
//! so the estimate `(h/6)(k4 - k5)` costs no extra evaluation on accepted steps. Why this pair:
//! it keeps the stage nodes 0, 1/2, 1 of the fixed IF-RK4, so each trial step needs only
//! `e^{hL/2}` and `e^{hL}`, and the scheme is the well-tested fixed one plus a controller.
//! The step advances with the fourth-order result (local extrapolation).

use num_complex::Complex64;
use rustfft::FftPlanner;

use super::ifrk4::IfStages;
use super::{symbol, zeros, Exponentials, Scheme, Stepper};
use crate::equation::Equation;
use crate::error::Result;
use crate::grid::Grid;
use crate::simd::kernel;
use crate::spectral::{check_modes, Probe};

/// Safety factor and bounds of the step-size controller (common practice, no source).
const SAFETY: f64 = 0.9;
const MIN_FACTOR: f64 = 0.2;
const MAX_FACTOR: f64 = 5.0;
/// Growth below this factor keeps the step, so the exponentials are reused (step-size hysteresis;
/// common practice, no source): recomputing them costs as much as the rest of a step.
const HOLD_FACTOR: f64 = 1.25;

/// The outcome of one trial step.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Attempt {
    /// Whether the step met the tolerance (then `v` holds the new state).
    pub accepted: bool,
    /// The estimated relative L2 error of the step.
    pub error: f64,
    /// The step size to try next.
    pub h_next: f64,
    /// The field at the end of the trial step.
    pub probe: Probe,
}

/// The adaptive IF-RK4(3) scheme.
pub struct IfRk43 {
    lin: Vec<Complex64>,
    /// Exponentials for the two most recent step sizes, updated in place (no allocation); the
    /// second slot holds the short landing step on a requested time.
    ex: [(f64, Exponentials); 2],
    stages: IfStages,
    v_new: Vec<Complex64>,
    k5: Vec<Complex64>,
    fsal: bool,
}

impl IfRk43 {
    /// The scheme for `eq` on `grid`.
    pub fn new(planner: &mut FftPlanner<f64>, grid: &Grid, eq: &Equation) -> Self {
        let m = grid.modes();
        let lin = symbol(grid, eq);
        IfRk43 {
            ex: [
                (0.0, Exponentials::new(&lin, 0.0)),
                (0.0, Exponentials::new(&lin, 0.0)),
            ],
            lin,
            stages: IfStages::new(planner, grid, eq),
            v_new: zeros(m),
            k5: zeros(m),
            fsal: false,
        }
    }

    /// Forgets the stored `N(v)`: call when the state is replaced.
    pub fn reset(&mut self) {
        self.fsal = false;
    }

    /// Makes slot 0 hold the exponentials of `h`.
    fn exponentials(&mut self, h: f64) {
        if self.ex[0].0 == h {
            return;
        }
        self.ex.swap(0, 1);
        if self.ex[0].0 != h {
            self.ex[0].1.update(&self.lin, h);
            self.ex[0].0 = h;
        }
    }

    /// Tries a step of size `h` with relative L2 tolerance `tol`; on success `v` is advanced.
    ///
    /// # Errors
    /// [`crate::CoreError::ShapeMismatch`] if `v` does not have `n/2 + 1` modes.
    pub fn attempt(&mut self, v: &mut [Complex64], h: f64, tol: f64) -> Result<Attempt> {
        check_modes(v, self.stages.nl.modes())?;
        self.exponentials(h);
        if !self.fsal {
            self.stages.nl.load(v)?;
            self.stages.nl.eval(&mut self.stages.k1)?;
            self.fsal = true;
        }
        self.v_new.copy_from_slice(v);
        self.stages.finish(&mut self.v_new, &self.ex[0].1, h)?;
        self.stages.nl.load(&self.v_new)?;
        let probe = self.stages.nl.eval_probed(&mut self.k5)?;

        let (err2, norm2) = error_norms(&self.stages.k4, &self.k5, &self.v_new);
        let error = if probe.finite {
            h / 6.0 * err2.sqrt() / norm2.sqrt().max(f64::MIN_POSITIVE)
        } else {
            f64::INFINITY
        };
        let accepted = error <= tol;
        let mut factor = if error == 0.0 {
            MAX_FACTOR
        } else {
            (SAFETY * (tol / error).powf(0.25)).clamp(MIN_FACTOR, MAX_FACTOR)
        };
        if accepted {
            if (1.0..HOLD_FACTOR).contains(&factor) {
                factor = 1.0;
            }
            v.copy_from_slice(&self.v_new);
            std::mem::swap(&mut self.stages.k1, &mut self.k5);
        } else {
            factor = factor.min(1.0);
        }
        Ok(Attempt {
            accepted,
            error,
            h_next: h * factor,
            probe,
        })
    }
}

impl Stepper for IfRk43 {
    fn scheme(&self) -> Scheme {
        Scheme::Adaptive
    }

    /// A fixed step with the fourth-order member of the pair.
    fn step(&mut self, v: &mut [Complex64], h: f64) -> Result<Probe> {
        check_modes(v, self.stages.nl.modes())?;
        self.exponentials(h);
        self.stages.nl.load(v)?;
        let probe = self.stages.nl.eval_probed(&mut self.stages.k1)?;
        self.stages.finish(v, &self.ex[0].1, h)?;
        self.fsal = false;
        Ok(probe)
    }
}

kernel! {
    /// `(|k4 - k5|^2, |v_new|^2)` with the Parseval weights of a real-to-complex spectrum (1 for the
    /// first and the last mode, 2 for the others).
    fn error_norms(k4: &[Complex64], k5: &[Complex64], v_new: &[Complex64]) -> (f64, f64) {
        let n = k4.len();
        if n == 0 || k5.len() != n || v_new.len() != n {
            return (0.0, 0.0); // buffers of one spectrum; never reached
        }
        let (k5, v_new) = (&k5[..n], &v_new[..n]);
        // Four accumulators each (the real and imaginary parts of two modes): a single running sum
        // is a serial dependency chain the compiler may not reorder.
        let (mut err, mut norm) = ([0.0f64; 4], [0.0f64; 4]);
        let pairs = n / 2;
        for p in 0..pairs {
            for i in 0..2 {
                let j = 2 * p + i;
                let d = k4[j] - k5[j];
                err[2 * i] += d.re * d.re;
                err[2 * i + 1] += d.im * d.im;
                norm[2 * i] += v_new[j].re * v_new[j].re;
                norm[2 * i + 1] += v_new[j].im * v_new[j].im;
            }
        }
        let (mut err2, mut norm2) = (err.iter().sum::<f64>(), norm.iter().sum::<f64>());
        if n % 2 == 1 {
            err2 += (k4[n - 1] - k5[n - 1]).norm_sqr();
            norm2 += v_new[n - 1].norm_sqr();
        }
        // Weight 2 everywhere, less the first and the last mode once.
        let ends = [0, n.saturating_sub(1)];
        let end_err: f64 = ends.iter().map(|&j| (k4[j] - k5[j]).norm_sqr()).sum();
        let end_norm: f64 = ends.iter().map(|&j| v_new[j].norm_sqr()).sum();
        ((2.0 * err2 - end_err).max(0.0), (2.0 * norm2 - end_norm).max(0.0))
    }
}
