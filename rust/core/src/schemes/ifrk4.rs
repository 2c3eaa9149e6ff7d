//! Integrating-factor RK4: classical RK4 on `w = e^{-L t} v`, written back in `v` (the form of
//! Trefethen 2000, Program 27), with `E = e^{hL/2}`.

use num_complex::Complex64;
use rustfft::FftPlanner;

use super::{linear, symbol, zeros, CoeffCache, Exponentials, Scheme, Stepper};
use crate::equation::Equation;
use crate::error::Result;
use crate::grid::Grid;
use crate::simd::kernel;
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
        let (e, e2) = (&ex.half[..k], &ex.full[..k]);
        let hh = 0.5 * h;
        stage2(
            self.nl.input(),
            &mut self.ev[..k],
            e,
            &self.k1[..k],
            &v[..k],
            hh,
        );
        self.nl.eval(&mut self.k2)?;
        stage3(self.nl.input(), &self.ev[..k], &self.k2[..k], hh);
        self.nl.eval(&mut self.k3)?;
        stage4(self.nl.input(), e, e2, &self.k3[..k], &v[..k], h);
        self.nl.eval(&mut self.k4)?;
        let (vk, tail) = v.split_at_mut(k);
        let ks = [&self.k1[..k], &self.k2[..k], &self.k3[..k], &self.k4[..k]];
        update(vk, e, e2, ks, h / 6.0);
        linear(tail, &ex.full[k..]);
        Ok(())
    }
}

// The stage formulas, one loop each over the kept modes. Every slice is cut to the length of the
// first, which lets the compiler drop the bounds checks and vectorise.

kernel! {
    /// `ev = E v`, `input = ev + (h/2) E k1`.
    fn stage2(input: &mut [Complex64], ev: &mut [Complex64], e: &[Complex64], k1: &[Complex64],
              v: &[Complex64], hh: f64) {
        let n = input.len();
        let (ev, e, k1, v) = (&mut ev[..n], &e[..n], &k1[..n], &v[..n]);
        for j in 0..n {
            ev[j] = e[j] * v[j];
            input[j] = ev[j] + hh * e[j] * k1[j];
        }
    }
}

kernel! {
    /// `input = ev + (h/2) k2`.
    fn stage3(input: &mut [Complex64], ev: &[Complex64], k2: &[Complex64], hh: f64) {
        let n = input.len();
        let (ev, k2) = (&ev[..n], &k2[..n]);
        for j in 0..n {
            input[j] = ev[j] + hh * k2[j];
        }
    }
}

kernel! {
    /// `input = E^2 v + h E k3`.
    fn stage4(input: &mut [Complex64], e: &[Complex64], e2: &[Complex64], k3: &[Complex64],
              v: &[Complex64], h: f64) {
        let n = input.len();
        let (e, e2, k3, v) = (&e[..n], &e2[..n], &k3[..n], &v[..n]);
        for j in 0..n {
            input[j] = e2[j] * v[j] + h * e[j] * k3[j];
        }
    }
}

kernel! {
    /// `v = E^2 (v + (h/6) k1) + (h/6) (2 E (k2 + k3) + k4)`.
    fn update(v: &mut [Complex64], e: &[Complex64], e2: &[Complex64], ks: [&[Complex64]; 4],
              h6: f64) {
        let n = v.len();
        let (e, e2) = (&e[..n], &e2[..n]);
        let (k1, k2, k3, k4) = (&ks[0][..n], &ks[1][..n], &ks[2][..n], &ks[3][..n]);
        for j in 0..n {
            v[j] = e2[j] * (v[j] + h6 * k1[j]) + h6 * (2.0 * e[j] * (k2[j] + k3[j]) + k4[j]);
        }
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
