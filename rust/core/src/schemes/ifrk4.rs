//! Integrating-factor RK4: classical RK4 on `w = e^{-L t} v`, written back in `v` (the form of
//! Trefethen 2000, Program 27), with `E = e^{hL/2}`.

use num_complex::Complex64;
use rustfft::FftPlanner;

use super::{symbol, zeros, CoeffCache, Exponentials, Scheme, Stepper};
use crate::equation::Equation;
use crate::error::Result;
use crate::grid::Grid;
use crate::spectral::{check_modes, Nonlinear, Probe};

/// Stage buffers of an IF-RK4 step, shared with the adaptive scheme built on it.
pub(crate) struct IfStages {
    pub(crate) nl: Nonlinear,
    pub(crate) k1: Vec<Complex64>,
    k2: Vec<Complex64>,
    k3: Vec<Complex64>,
    pub(crate) k4: Vec<Complex64>,
    ev: Vec<Complex64>,
}

impl IfStages {
    pub(crate) fn new(planner: &mut FftPlanner<f64>, grid: &Grid, eq: &Equation) -> Self {
        let m = grid.modes();
        IfStages {
            nl: Nonlinear::new(planner, grid, eq),
            k1: zeros(m),
            k2: zeros(m),
            k3: zeros(m),
            k4: zeros(m),
            ev: zeros(m),
        }
    }

    /// Stages 2-4 given `k1 = N(v)` already in place; overwrites `v` with the new spectrum (every
    /// mode of `v` is read before it is written, so no copy is needed).
    pub(crate) fn finish(&mut self, v: &mut [Complex64], ex: &Exponentials, h: f64) -> Result<()> {
        let k = self.nl.kept();
        // Slices of one length `k` let the compiler drop the bounds checks in the stage loops.
        let (e, e2) = (&ex.half[..k], &ex.full[..k]);
        let hh = 0.5 * h;
        {
            let (input, ev, k1, vk) = (self.nl.input(), &mut self.ev[..k], &self.k1[..k], &v[..k]);
            for j in 0..k {
                ev[j] = e[j] * vk[j];
                input[j] = ev[j] + hh * e[j] * k1[j];
            }
        }
        self.nl.eval(&mut self.k2)?;
        {
            let (input, ev, k2) = (self.nl.input(), &self.ev[..k], &self.k2[..k]);
            for j in 0..k {
                input[j] = ev[j] + hh * k2[j];
            }
        }
        self.nl.eval(&mut self.k3)?;
        {
            let (input, k3, vk) = (self.nl.input(), &self.k3[..k], &v[..k]);
            for j in 0..k {
                input[j] = e2[j] * vk[j] + h * e[j] * k3[j];
            }
        }
        self.nl.eval(&mut self.k4)?;
        let h6 = h / 6.0;
        let (k1, k2, k3, k4) = (&self.k1[..k], &self.k2[..k], &self.k3[..k], &self.k4[..k]);
        let (vk, tail) = v.split_at_mut(k);
        for j in 0..k {
            vk[j] = e2[j] * (vk[j] + h6 * k1[j]) + h6 * (2.0 * e[j] * (k2[j] + k3[j]) + k4[j]);
        }
        for (vj, ej) in tail.iter_mut().zip(&ex.full[k..]) {
            *vj *= ej;
        }
        Ok(())
    }
}

/// The integrating-factor RK4 scheme.
pub struct IfRk4 {
    lin: Vec<Complex64>,
    cache: CoeffCache<Exponentials>,
    stages: IfStages,
}

impl IfRk4 {
    /// The scheme for `eq` on `grid`.
    pub fn new(planner: &mut FftPlanner<f64>, grid: &Grid, eq: &Equation) -> Self {
        IfRk4 {
            lin: symbol(grid, eq),
            cache: CoeffCache::new(),
            stages: IfStages::new(planner, grid, eq),
        }
    }
}

impl Stepper for IfRk4 {
    fn scheme(&self) -> Scheme {
        Scheme::IfRk4
    }

    fn step(&mut self, v: &mut [Complex64], h: f64) -> Result<Probe> {
        check_modes(v, self.stages.nl.modes())?;
        let lin = &self.lin;
        let ex = self.cache.get(h, |h| Exponentials::new(lin, h));
        self.stages.nl.load(v)?;
        let probe = self.stages.nl.eval_probed(&mut self.stages.k1)?;
        self.stages.finish(v, ex, h)?;
        Ok(probe)
    }
}
