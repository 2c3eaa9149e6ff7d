//! Strang splitting: `e^{hL/2}`, one classical RK4 step of `v_t = N(v)`, `e^{hL/2}`. Second order
//! from the splitting; the RK4 substep's own error is O(h^5) per step.

use num_complex::Complex64;
use rustfft::FftPlanner;

use super::{symbol, zeros, CoeffCache, Exponentials, Scheme, Stepper};
use crate::equation::Equation;
use crate::error::Result;
use crate::grid::Grid;
use crate::spectral::{check_modes, Nonlinear, Probe};

/// The Strang split-step scheme.
pub struct Strang {
    lin: Vec<Complex64>,
    cache: CoeffCache<Exponentials>,
    nl: Nonlinear,
    k1: Vec<Complex64>,
    k2: Vec<Complex64>,
    k3: Vec<Complex64>,
    k4: Vec<Complex64>,
}

impl Strang {
    /// The scheme for `eq` on `grid`.
    pub fn new(planner: &mut FftPlanner<f64>, grid: &Grid, eq: &Equation) -> Self {
        let m = grid.modes();
        Strang {
            lin: symbol(grid, eq),
            cache: CoeffCache::new(),
            nl: Nonlinear::new(planner, grid, eq),
            k1: zeros(m),
            k2: zeros(m),
            k3: zeros(m),
            k4: zeros(m),
        }
    }
}

impl Stepper for Strang {
    fn scheme(&self) -> Scheme {
        Scheme::Strang
    }

    fn step(&mut self, v: &mut [Complex64], h: f64) -> Result<Probe> {
        check_modes(v, self.nl.modes())?;
        let lin = &self.lin;
        let e = &self.cache.get(h, |h| Exponentials::new(lin, h)).half;
        let kept = self.nl.kept();
        let hh = 0.5 * h;
        for j in 0..kept {
            v[j] *= e[j];
        }
        self.nl.load(v)?;
        // The probe sees the state after the first linear half step: same max|u| for dispersion,
        // and finiteness is what matters.
        let probe = self.nl.eval_probed(&mut self.k1)?;
        {
            let input = self.nl.input();
            for j in 0..kept {
                input[j] = v[j] + hh * self.k1[j];
            }
        }
        self.nl.eval(&mut self.k2)?;
        {
            let input = self.nl.input();
            for j in 0..kept {
                input[j] = v[j] + hh * self.k2[j];
            }
        }
        self.nl.eval(&mut self.k3)?;
        {
            let input = self.nl.input();
            for j in 0..kept {
                input[j] = v[j] + h * self.k3[j];
            }
        }
        self.nl.eval(&mut self.k4)?;
        let h6 = h / 6.0;
        for j in 0..kept {
            let nonlinear = self.k1[j] + 2.0 * (self.k2[j] + self.k3[j]) + self.k4[j];
            v[j] = e[j] * (v[j] + h6 * nonlinear);
        }
        for j in kept..v.len() {
            v[j] *= e[j] * e[j];
        }
        Ok(probe)
    }
}
