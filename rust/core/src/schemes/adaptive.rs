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

        let last = v.len() - 1;
        let (mut err2, mut norm2) = (0.0, 0.0);
        for (j, ((k4, k5), vn)) in self
            .stages
            .k4
            .iter()
            .zip(&self.k5)
            .zip(&self.v_new)
            .enumerate()
        {
            // Parseval weights of a real-to-complex spectrum.
            let w = if j == 0 || j == last { 1.0 } else { 2.0 };
            err2 += w * (k4 - k5).norm_sqr();
            norm2 += w * vn.norm_sqr();
        }
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
