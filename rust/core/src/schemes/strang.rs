//! Strang splitting: `e^{hL/2}`, one classical RK4 step of `v_t = N(v)`, `e^{hL/2}`. Second order
//! from the splitting; the RK4 substep's own error is O(h^5) per step.

use num_complex::Complex64;
use rustfft::FftPlanner;

use super::{linear, symbol, zeros, CoeffCache, Exponentials, Scheme, Stepper};
use crate::equation::Equation;
use crate::error::Result;
use crate::grid::Grid;
use crate::simd::kernel;
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
        let ex = self.cache.get(h, |h| Exponentials::new(lin, h));
        let e = &ex.half;
        let kept = self.nl.kept();
        let (vk, tail) = v.split_at_mut(kept);
        linear(vk, &e[..kept]);
        self.nl.input().copy_from_slice(vk);
        // The probe sees the state after the first linear half step: same max|u| for dispersion,
        // and finiteness is what matters.
        let probe = self.nl.eval_probed(&mut self.k1)?;
        let hh = 0.5 * h;
        euler(self.nl.input(), vk, &self.k1[..kept], hh);
        self.nl.eval(&mut self.k2)?;
        euler(self.nl.input(), vk, &self.k2[..kept], hh);
        self.nl.eval(&mut self.k3)?;
        euler(self.nl.input(), vk, &self.k3[..kept], h);
        self.nl.eval(&mut self.k4)?;
        let ks = [
            &self.k1[..kept],
            &self.k2[..kept],
            &self.k3[..kept],
            &self.k4[..kept],
        ];
        update(vk, &e[..kept], ks, h / 6.0);
        linear(tail, &ex.full[kept..]);
        Ok(probe)
    }
}

kernel! {
    /// `input = v + c k` (a stage of the RK4 substep).
    fn euler(input: &mut [Complex64], v: &[Complex64], k: &[Complex64], c: f64) {
        let n = input.len();
        let (v, k) = (&v[..n], &k[..n]);
        for j in 0..n {
            input[j] = v[j] + c * k[j];
        }
    }
}

kernel! {
    /// `v = E (v + (h/6) (k1 + 2 (k2 + k3) + k4))`.
    fn update(v: &mut [Complex64], e: &[Complex64], ks: [&[Complex64]; 4], h6: f64) {
        let n = v.len();
        let e = &e[..n];
        let (k1, k2, k3, k4) = (&ks[0][..n], &ks[1][..n], &ks[2][..n], &ks[3][..n]);
        for j in 0..n {
            let nonlinear = k1[j] + 2.0 * (k2[j] + k3[j]) + k4[j];
            v[j] = e[j] * (v[j] + h6 * nonlinear);
        }
    }
}
