//! Real-to-complex transforms and the dealiased pseudo-spectral nonlinear term.
//!
//! Spectra are unnormalised (`v_j = sum_x u(x) e^{-i k_j x}`), as realfft returns them; the inverse
//! transform is divided by `n` where physical values are needed.

use std::sync::Arc;

use num_complex::Complex64;
use realfft::{ComplexToReal, RealFftPlanner, RealToComplex};

use crate::equation::Equation;
use crate::error::{CoreError, Result};
use crate::grid::Grid;
use crate::memory::{bytes_of, ensure_available};

/// Complex values per grid point that a pair of plans (forward and inverse) with their scratch
/// may hold: measured near 4 for sizes whose half has a large prime factor (padded transforms),
/// near 1.5 for powers of two; 6 leaves room.
const PLAN_VALUES_PER_POINT: u128 = 6;

/// What a nonlinear evaluation saw of the physical field it transformed.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Probe {
    /// `max |u|` over the grid.
    pub max_abs: f64,
    /// Whether every value was finite.
    pub finite: bool,
}

/// A pair of real FFT plans of one size with their scratch buffers.
pub struct Transforms {
    r2c: Arc<dyn RealToComplex<f64>>,
    c2r: Arc<dyn ComplexToReal<f64>>,
    scratch_fwd: Vec<Complex64>,
    scratch_inv: Vec<Complex64>,
}

impl Transforms {
    /// An upper bound of the bytes held by the transforms of `n` points.
    pub fn memory_bound(n: usize) -> u128 {
        bytes_of::<Complex64>(PLAN_VALUES_PER_POINT * n as u128)
    }

    /// As [`Transforms::new`], after checking that [`Transforms::memory_bound`] bytes can be
    /// reserved (the plans allocate infallibly).
    ///
    /// # Errors
    /// [`CoreError::OutOfMemory`] otherwise.
    pub fn try_new(planner: &mut RealFftPlanner<f64>, n: usize) -> Result<Self> {
        ensure_available("the FFT plans", Self::memory_bound(n))?;
        Ok(Self::new(planner, n))
    }

    /// Plans for `n` points.
    pub fn new(planner: &mut RealFftPlanner<f64>, n: usize) -> Self {
        let r2c = planner.plan_fft_forward(n);
        let c2r = planner.plan_fft_inverse(n);
        let scratch_fwd = r2c.make_scratch_vec();
        let scratch_inv = c2r.make_scratch_vec();
        Transforms {
            r2c,
            c2r,
            scratch_fwd,
            scratch_inv,
        }
    }

    /// Forward transform; `input` is used as scratch and left undefined.
    ///
    /// # Errors
    /// [`crate::CoreError::Fft`] on a length mismatch (callers size buffers from the grid).
    pub fn forward(&mut self, input: &mut [f64], output: &mut [Complex64]) -> Result<()> {
        Ok(self
            .r2c
            .process_with_scratch(input, output, &mut self.scratch_fwd)?)
    }

    /// Inverse transform (unnormalised); `input` is used as scratch and left undefined. The imaginary
    /// parts of the first and the Nyquist mode are ignored (set to zero first).
    ///
    /// # Errors
    /// [`crate::CoreError::Fft`] on a length mismatch.
    pub fn inverse(&mut self, input: &mut [Complex64], output: &mut [f64]) -> Result<()> {
        if let Some(first) = input.first_mut() {
            first.im = 0.0;
        }
        if let Some(last) = input.last_mut() {
            last.im = 0.0;
        }
        Ok(self
            .c2r
            .process_with_scratch(input, output, &mut self.scratch_inv)?)
    }
}

/// The dealiased nonlinear term `N(v) = -i k P F[(a/2) u^2 + (b/3) u^3]`, `u = F^{-1}[P v]`, with
/// `P` the projection on the modes kept by the dealiasing rule.
///
/// Callers write the modes `0..kept()` of the argument into [`Nonlinear::input`] (often fused with
/// the stage arithmetic of a scheme) and call [`Nonlinear::eval`]; nothing is allocated per call.
pub struct Nonlinear {
    transforms: Transforms,
    kept: usize,
    k: Vec<f64>,
    half_a: f64,
    third_b: f64,
    inv_n: f64,
    phys: Vec<f64>,
    input: Vec<Complex64>,
}

impl Nonlinear {
    /// The nonlinear term of `eq` on `grid`.
    pub fn new(planner: &mut RealFftPlanner<f64>, grid: &Grid, eq: &Equation) -> Self {
        let n = grid.n();
        let m = grid.modes();
        // Keep j < dealias * n/2: for the power p, j < n/(p+1) is alias-free (Orszag 1971).
        let cut = eq.dealias() * n as f64 / 2.0;
        let kept = ((cut - 1e-9).ceil() as usize).clamp(1, m);
        let mut k = grid.wavenumbers();
        k.iter_mut().skip(kept).for_each(|kj| *kj = 0.0);
        Nonlinear {
            transforms: Transforms::new(planner, n),
            kept,
            k,
            half_a: 0.5 * eq.a(),
            third_b: eq.b() / 3.0,
            inv_n: 1.0 / n as f64,
            phys: vec![0.0; n],
            input: vec![Complex64::new(0.0, 0.0); m],
        }
    }

    /// Number of modes kept by the dealiasing rule (modes `0..kept`).
    pub fn kept(&self) -> usize {
        self.kept
    }

    /// The argument buffer: fill modes `0..kept()` before [`Nonlinear::eval`].
    pub fn input(&mut self) -> &mut [Complex64] {
        &mut self.input[..self.kept]
    }

    /// Number of modes of a spectrum on this grid (`n/2 + 1`).
    pub fn modes(&self) -> usize {
        self.input.len()
    }

    /// Copies the kept modes of `v` into the argument buffer.
    ///
    /// # Errors
    /// [`crate::CoreError::ShapeMismatch`] if `v` does not have [`Nonlinear::modes`] modes.
    pub fn load(&mut self, v: &[Complex64]) -> Result<()> {
        check_modes(v, self.modes())?;
        let kept = self.kept;
        self.input[..kept].copy_from_slice(&v[..kept]);
        Ok(())
    }

    /// Evaluates the term at the argument buffer into `out` (all modes; zero beyond `kept()`).
    ///
    /// # Errors
    /// [`crate::CoreError::Fft`] only if `out` does not have `n/2 + 1` modes.
    pub fn eval(&mut self, out: &mut [Complex64]) -> Result<()> {
        self.inverse_input()?;
        self.flux();
        self.forward_flux(out)
    }

    /// As [`Nonlinear::eval`], and reports on the field: schemes call it for the stage that
    /// transforms the state itself, so the check costs no extra transform.
    ///
    /// # Errors
    /// As [`Nonlinear::eval`].
    pub fn eval_probed(&mut self, out: &mut [Complex64]) -> Result<Probe> {
        self.inverse_input()?;
        let probe = probe(&self.phys, self.inv_n);
        self.flux();
        self.forward_flux(out)?;
        Ok(probe)
    }

    /// The flux `(a/2) u^2 + (b/3) u^3` in place (the transform left `n u` in `phys`).
    fn flux(&mut self) {
        let (inv_n, ha, tb) = (self.inv_n, self.half_a, self.third_b);
        for p in self.phys.iter_mut() {
            let u = *p * inv_n;
            *p = u * u * (ha + tb * u);
        }
    }

    fn inverse_input(&mut self) -> Result<()> {
        let kept = self.kept;
        self.input[kept..].fill(Complex64::new(0.0, 0.0));
        self.transforms.inverse(&mut self.input, &mut self.phys)
    }

    fn forward_flux(&mut self, out: &mut [Complex64]) -> Result<()> {
        self.transforms.forward(&mut self.phys, out)?;
        let kept = self.kept;
        for (o, &kj) in out[..kept].iter_mut().zip(&self.k[..kept]) {
            *o = Complex64::new(kj * o.im, -kj * o.re);
        }
        out[kept..].fill(Complex64::new(0.0, 0.0));
        Ok(())
    }
}

/// Checks that the spectrum `v` has `modes` modes (`n/2 + 1` for the grid of its stepper).
///
/// # Errors
/// [`CoreError::ShapeMismatch`] naming `v` otherwise.
pub fn check_modes(v: &[Complex64], modes: usize) -> Result<()> {
    if v.len() == modes {
        Ok(())
    } else {
        Err(CoreError::ShapeMismatch {
            name: "v",
            expected: modes,
            got: v.len(),
        })
    }
}

/// `max |scale * u|` and whether every value is finite. Eight independent accumulators let the
/// compiler vectorise the reductions (a single running max or sum is a serial dependency chain).
pub fn probe(values: &[f64], scale: f64) -> Probe {
    const LANES: usize = 8;
    let mut max = [0.0f64; LANES];
    let mut bad = [0.0f64; LANES];
    let chunks = values.chunks_exact(LANES);
    let tail = chunks.remainder();
    for chunk in chunks {
        for i in 0..LANES {
            let x = chunk[i];
            let a = x.abs();
            max[i] = if a > max[i] { a } else { max[i] };
            bad[i] += if x.is_finite() { 0.0 } else { 1.0 };
        }
    }
    for &x in tail {
        max[0] = max[0].max(x.abs());
        bad[0] += if x.is_finite() { 0.0 } else { 1.0 };
    }
    let max_abs = max.iter().fold(0.0f64, |m, &v| m.max(v)) * scale.abs();
    Probe {
        max_abs,
        finite: bad.iter().sum::<f64>() == 0.0,
    }
}

#[cfg(test)]
mod tests {
    use super::probe;

    #[test]
    fn probe_sees_every_kind_of_bad_value() {
        let mut values: Vec<f64> = (0..37).map(|i| (i as f64 * 0.3).sin()).collect();
        let ok = probe(&values, 2.0);
        assert!(ok.finite);
        let expected = values.iter().fold(0.0f64, |m, x| m.max(x.abs())) * 2.0;
        assert_eq!(ok.max_abs, expected);
        for (i, bad) in [(3, f64::NAN), (36, f64::INFINITY), (20, f64::NEG_INFINITY)] {
            let saved = values[i];
            values[i] = bad;
            assert!(!probe(&values, 1.0).finite, "missed {bad} at {i}");
            values[i] = saved;
        }
    }
}
