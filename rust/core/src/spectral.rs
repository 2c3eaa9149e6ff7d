//! Real-to-complex transforms and the dealiased pseudo-spectral nonlinear term.
//!
//! Spectra are unnormalised (`v_j = sum_x u(x) e^{-i k_j x}`); the inverse transform is
//! unnormalised too and is divided by `n` where physical values are needed.
//!
//! A real transform of even length `n` is one complex transform of length `n/2` of the packed field
//! `z_j = u_{2j} + i u_{2j+1}`, with a pass that separates (forward) or combines (inverse) the
//! spectra of the even and odd samples (e.g. Press et al., Numerical Recipes, 3rd ed. 2007,
//! section 12.3.2 \[memory\]). Those passes, the flux and the derivative are `simd::kernel!` loops, and
//! the nonlinear term keeps its field packed, so a step copies nothing between transforms.

use std::sync::Arc;

use num_complex::Complex64;
use rustfft::{Fft, FftPlanner};

use crate::equation::Equation;
use crate::error::{CoreError, Result};
use crate::grid::Grid;
use crate::memory::{bytes_of, ensure_available};
use crate::simd::{kernel, pair_pass, PairMap};

/// Complex values per grid point that a pair of plans (forward and inverse) with their scratch and
/// packing buffers may hold: measured near 4 for sizes whose half has a large prime factor (padded
/// transforms), near 1.5 for powers of two, plus one for the packing buffers; 6 leaves room.
const PLAN_VALUES_PER_POINT: u128 = 6;

/// What a nonlinear evaluation saw of the physical field it transformed.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Probe {
    /// `max |u|` over the grid.
    pub max_abs: f64,
    /// Whether every value was finite.
    pub finite: bool,
}

/// The complex transforms of half length behind the real transforms of one size, with their
/// twiddle factors, scratch and packing buffers.
pub struct Transforms {
    n: usize,
    fwd: Arc<dyn Fft<f64>>,
    inv: Arc<dyn Fft<f64>>,
    /// `-(i/2) e^{-2 pi i k/n}` for `k = 0..=n/4`: separates the packed spectrum (forward).
    tw_fwd: Vec<Complex64>,
    /// `i e^{2 pi i k/n}` for `k = 0..=n/4`: combines the half spectra (inverse).
    tw_inv: Vec<Complex64>,
    scratch: Vec<Complex64>,
    packed: Vec<Complex64>,
    spare: Vec<Complex64>,
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
    pub fn try_new(planner: &mut FftPlanner<f64>, n: usize) -> Result<Self> {
        ensure_available("the FFT plans", Self::memory_bound(n))?;
        Ok(Self::new(planner, n))
    }

    /// Plans for `n` points (`n` even; an odd `n` is treated as `n - 1`, which callers never
    /// ask for: grids have an even number of points).
    pub fn new(planner: &mut FftPlanner<f64>, n: usize) -> Self {
        let half = n / 2;
        let fwd = planner.plan_fft_forward(half);
        let inv = planner.plan_fft_inverse(half);
        let scratch_len = fwd
            .get_outofplace_scratch_len()
            .max(inv.get_outofplace_scratch_len());
        let twiddle = |k: usize| {
            let angle = -2.0 * std::f64::consts::PI * k as f64 / (2 * half) as f64;
            Complex64::from_polar(1.0, angle)
        };
        let quarter = half / 2;
        let zero = Complex64::new(0.0, 0.0);
        Transforms {
            n: 2 * half,
            fwd,
            inv,
            tw_fwd: (0..=quarter)
                .map(|k| Complex64::new(0.0, -0.5) * twiddle(k))
                .collect(),
            tw_inv: (0..=quarter)
                .map(|k| Complex64::new(0.0, 1.0) * twiddle(k).conj())
                .collect(),
            scratch: vec![zero; scratch_len],
            packed: vec![zero; half],
            spare: vec![zero; half],
        }
    }

    fn check(&self, real: usize, spectrum: usize) -> Result<()> {
        let (n, m) = (self.n, self.n / 2 + 1);
        if real == n && spectrum == m {
            Ok(())
        } else {
            Err(CoreError::Fft(format!(
                "lengths {real} and {spectrum}, expected {n} points and {m} modes"
            )))
        }
    }

    /// Forward transform of `input` (`n` values, left unchanged) into `output` (`n/2 + 1` modes).
    ///
    /// # Errors
    /// [`crate::CoreError::Fft`] on a length mismatch (callers size buffers from the grid).
    pub fn forward(&mut self, input: &[f64], output: &mut [Complex64]) -> Result<()> {
        self.check(input.len(), output.len())?;
        for (z, pair) in self.packed.iter_mut().zip(input.chunks_exact(2)) {
            *z = Complex64::new(pair[0], pair[1]);
        }
        self.fwd.process_outofplace_with_scratch(
            &mut self.packed,
            &mut self.spare,
            &mut self.scratch,
        );
        separate(&self.spare, output, &self.tw_fwd, None);
        Ok(())
    }

    /// Inverse transform (unnormalised) of `input` (`n/2 + 1` modes, left unchanged) into
    /// `output` (`n` values). The imaginary parts of the first and the Nyquist mode are ignored.
    ///
    /// # Errors
    /// [`crate::CoreError::Fft`] on a length mismatch.
    pub fn inverse(&mut self, input: &[Complex64], output: &mut [f64]) -> Result<()> {
        self.check(output.len(), input.len())?;
        combine(input, &mut self.packed, &self.tw_inv);
        self.inv.process_outofplace_with_scratch(
            &mut self.packed,
            &mut self.spare,
            &mut self.scratch,
        );
        for (pair, z) in output.chunks_exact_mut(2).zip(&self.spare) {
            pair[0] = z.re;
            pair[1] = z.im;
        }
        Ok(())
    }

    /// As [`Transforms::forward`] from the packed field `z_j = u_{2j} + i u_{2j+1}` (`n/2`
    /// values, left undefined).
    ///
    /// # Errors
    /// [`crate::CoreError::Fft`] on a length mismatch.
    pub fn forward_packed(
        &mut self,
        packed: &mut [Complex64],
        output: &mut [Complex64],
    ) -> Result<()> {
        self.forward_packed_map(packed, output, None)
    }

    /// As [`Transforms::forward_packed`], then `output_j *= -i k_j` (the derivative; `k` has
    /// `n/2 + 1` values, zero on the modes to drop), in the same pass.
    ///
    /// # Errors
    /// [`crate::CoreError::Fft`] on a length mismatch.
    pub fn forward_packed_derivative(
        &mut self,
        packed: &mut [Complex64],
        output: &mut [Complex64],
        k: &[f64],
    ) -> Result<()> {
        self.check(self.n, k.len())?;
        self.forward_packed_map(packed, output, Some(k))
    }

    fn forward_packed_map(
        &mut self,
        packed: &mut [Complex64],
        output: &mut [Complex64],
        k: Option<&[f64]>,
    ) -> Result<()> {
        self.check(2 * packed.len(), output.len())?;
        self.fwd
            .process_outofplace_with_scratch(packed, &mut self.spare, &mut self.scratch);
        separate(&self.spare, output, &self.tw_fwd, k);
        Ok(())
    }

    /// As [`Transforms::inverse`] into the packed field `z_j = u_{2j} + i u_{2j+1}` (`n/2`
    /// values).
    ///
    /// # Errors
    /// [`crate::CoreError::Fft`] on a length mismatch.
    pub fn inverse_packed(&mut self, input: &[Complex64], packed: &mut [Complex64]) -> Result<()> {
        self.check(2 * packed.len(), input.len())?;
        combine(input, &mut self.packed, &self.tw_inv);
        self.inv
            .process_outofplace_with_scratch(&mut self.packed, packed, &mut self.scratch);
        Ok(())
    }
}

/// The forward pass: `z` (`m` values, the transform of the packed field) into the `m + 1` modes
/// `x` of the real transform, times `-i k` if `k` is given (`m + 1` wavenumbers).
fn separate(z: &[Complex64], x: &mut [Complex64], tw: &[Complex64], k: Option<&[f64]>) {
    let m = z.len();
    if x.len() != m + 1 || tw.len() < m / 2 + 1 || k.is_some_and(|k| k.len() != m + 1) {
        return; // sized by `Transforms`; never reached
    }
    let map = |j: usize, v: Complex64| match k {
        Some(k) => Complex64::new(k[j] * v.im, -(k[j] * v.re)),
        None => v,
    };
    let z0 = z[0];
    x[0] = map(0, Complex64::new(z0.re + z0.im, 0.0));
    x[m] = map(m, Complex64::new(z0.re - z0.im, 0.0));
    // Pairs (j, m - j) for j = 1..=count; for an even m the centre m/2 is its own partner.
    let count = m.div_ceil(2) - 1;
    let (x_lo, rest) = x[1..m].split_at_mut(count);
    let (x_centre, x_hi) = rest.split_at_mut(rest.len() - count);
    let pairs = match k {
        Some(k) => PairMap::Derivative(&k[1..=count], &k[m - count..m]),
        None => PairMap::Plain,
    };
    let (z_lo, z_hi) = (&z[1..=count], &z[m - count..m]);
    pair_pass(z_lo, z_hi, x_lo, x_hi, &tw[1..=count], 0.5, pairs);
    if let Some(c) = x_centre.first_mut() {
        *c = map(count + 1, z[count + 1].conj());
    }
}

/// The inverse pass: the `m + 1` modes `x` into the `m` values `z` whose inverse transform is the
/// packed field (the imaginary parts of the first and the last mode are ignored).
fn combine(x: &[Complex64], z: &mut [Complex64], tw: &[Complex64]) {
    let m = z.len();
    if x.len() != m + 1 || tw.len() < m / 2 + 1 {
        return; // sized by `Transforms`; never reached
    }
    z[0] = Complex64::new(x[0].re + x[m].re, x[0].re - x[m].re);
    let count = m.div_ceil(2) - 1;
    let (z_lo, rest) = z[1..].split_at_mut(count);
    let (z_centre, z_hi) = rest.split_at_mut(rest.len() - count);
    let (x_lo, x_hi) = (&x[1..=count], &x[m - count..m]);
    pair_pass(x_lo, x_hi, z_lo, z_hi, &tw[1..=count], 1.0, PairMap::Plain);
    if let Some(c) = z_centre.first_mut() {
        let xc = x[count + 1];
        *c = Complex64::new(2.0 * xc.re, -2.0 * xc.im);
    }
}

kernel! {
    /// The flux `p^2 (c2 + c3 p)` in place on the packed values `p = n u`.
    fn flux(phys: &mut [Complex64], c2: f64, c3: f64) {
        for z in phys.iter_mut() {
            let (a, b) = (z.re, z.im);
            *z = Complex64::new(a * a * (c2 + c3 * a), b * b * (c2 + c3 * b));
        }
    }
}

kernel! {
    /// As `flux`, and returns `max |p|` and whether every `p` was finite, seen before the flux.
    fn flux_probed(phys: &mut [Complex64], c2: f64, c3: f64) -> (f64, bool) {
        // Independent accumulators: a single running max is a serial dependency chain.
        const LANES: usize = 4;
        let mut max = [0.0f64; 2 * LANES];
        let mut bad = [0.0f64; 2 * LANES];
        let mut chunks = phys.chunks_exact_mut(LANES);
        for chunk in &mut chunks {
            for i in 0..LANES {
                let (a, b) = (chunk[i].re, chunk[i].im);
                let (aa, ab) = (a.abs(), b.abs());
                max[2 * i] = if aa > max[2 * i] { aa } else { max[2 * i] };
                max[2 * i + 1] = if ab > max[2 * i + 1] { ab } else { max[2 * i + 1] };
                bad[2 * i] += if a.is_finite() { 0.0 } else { 1.0 };
                bad[2 * i + 1] += if b.is_finite() { 0.0 } else { 1.0 };
                chunk[i] = Complex64::new(a * a * (c2 + c3 * a), b * b * (c2 + c3 * b));
            }
        }
        for z in chunks.into_remainder() {
            let (a, b) = (z.re, z.im);
            max[0] = max[0].max(a.abs()).max(b.abs());
            bad[0] += if a.is_finite() && b.is_finite() { 0.0 } else { 1.0 };
            *z = Complex64::new(a * a * (c2 + c3 * a), b * b * (c2 + c3 * b));
        }
        (max.iter().fold(0.0f64, |m, &v| m.max(v)), bad.iter().sum::<f64>() == 0.0)
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
    /// Wavenumbers, zero from `kept` on.
    k: Vec<f64>,
    /// The flux in terms of `p = n u`: `p^2 (c2 + c3 p)`, `c2 = a/(2 n^2)`, `c3 = b/(3 n^3)`.
    c2: f64,
    c3: f64,
    inv_n: f64,
    /// The field, packed (`u_{2j} + i u_{2j+1}`, times `n`).
    phys: Vec<Complex64>,
    /// The argument; modes from `kept` on stay zero (only `..kept` is ever handed out).
    input: Vec<Complex64>,
}

impl Nonlinear {
    /// The nonlinear term of `eq` on `grid`.
    pub fn new(planner: &mut FftPlanner<f64>, grid: &Grid, eq: &Equation) -> Self {
        let n = grid.n();
        let m = grid.modes();
        // Keep j < dealias * n/2: for the power p, j < n/(p+1) is alias-free (Orszag 1971).
        let cut = eq.dealias() * n as f64 / 2.0;
        let kept = ((cut - 1e-9).ceil() as usize).clamp(1, m);
        let mut k = grid.wavenumbers();
        k.iter_mut().skip(kept).for_each(|kj| *kj = 0.0);
        let inv_n = 1.0 / n as f64;
        Nonlinear {
            transforms: Transforms::new(planner, n),
            kept,
            k,
            c2: 0.5 * eq.a() * inv_n * inv_n,
            c3: eq.b() / 3.0 * inv_n * inv_n * inv_n,
            inv_n,
            phys: vec![Complex64::new(0.0, 0.0); n / 2],
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
        self.transforms
            .inverse_packed(&self.input, &mut self.phys)?;
        flux(&mut self.phys, self.c2, self.c3);
        self.forward_flux(out)
    }

    /// As [`Nonlinear::eval`], and reports on the field: schemes call it for the stage that
    /// transforms the state itself, so the check costs no extra transform.
    ///
    /// # Errors
    /// As [`Nonlinear::eval`].
    pub fn eval_probed(&mut self, out: &mut [Complex64]) -> Result<Probe> {
        self.transforms
            .inverse_packed(&self.input, &mut self.phys)?;
        let (max, finite) = flux_probed(&mut self.phys, self.c2, self.c3);
        self.forward_flux(out)?;
        Ok(Probe {
            max_abs: max * self.inv_n,
            finite,
        })
    }

    fn forward_flux(&mut self, out: &mut [Complex64]) -> Result<()> {
        self.transforms
            .forward_packed_derivative(&mut self.phys, out, &self.k)?;
        // Exactly zero beyond the kept band (the derivative left 0 * x there).
        out[self.kept..].fill(Complex64::new(0.0, 0.0));
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
    use num_complex::Complex64;
    use rustfft::FftPlanner;

    use super::{probe, Transforms};

    /// The DFT by its definition, `X_j = sum_x u_x e^{-2 pi i j x/n}`, `j = 0..=n/2`.
    fn dft(u: &[f64]) -> Vec<Complex64> {
        let n = u.len();
        (0..=n / 2)
            .map(|j| {
                u.iter()
                    .enumerate()
                    .map(|(x, &ux)| {
                        let angle = -2.0 * std::f64::consts::PI * ((j * x) % n) as f64 / n as f64;
                        ux * Complex64::from_polar(1.0, angle)
                    })
                    .sum()
            })
            .collect()
    }

    fn field(n: usize) -> Vec<f64> {
        (0..n)
            .map(|x| (0.7 * x as f64).sin() + 0.3 * (x as f64 * x as f64 * 0.01).cos())
            .collect()
    }

    #[test]
    fn real_transforms_match_the_dft_definition() {
        // Common practice, no source: the DFT's definition as the reference. Sizes whose half is
        // odd (no centre mode), even, a power of two, with a large prime factor; 2 is the least.
        for n in [2, 6, 16, 30, 64, 118, 210, 512] {
            let u = field(n);
            let expected = dft(&u);
            let scale = u.iter().map(|x| x.abs()).sum::<f64>();
            let mut tr = Transforms::new(&mut FftPlanner::new(), n);
            let mut spec = vec![Complex64::new(0.0, 0.0); n / 2 + 1];
            tr.forward(&u, &mut spec).unwrap();
            for (j, (got, want)) in spec.iter().zip(&expected).enumerate() {
                assert!(
                    (got - want).norm() <= 1e-13 * scale,
                    "n = {n}, mode {j}: {got} vs {want}"
                );
            }
            // The inverse is unnormalised: n u. The imaginary parts of the first and the last
            // mode must be ignored.
            spec[0].im = 5.0;
            spec[n / 2].im = -3.0;
            let mut back = vec![0.0; n];
            tr.inverse(&spec, &mut back).unwrap();
            for (x, (got, want)) in back.iter().zip(&u).enumerate() {
                assert!(
                    (got / n as f64 - want).abs() <= 1e-13 * scale,
                    "n = {n}, point {x}"
                );
            }
            // The packed forms: the derivative -i k X with k = j (any real weights).
            let k: Vec<f64> = (0..=n / 2).map(|j| j as f64).collect();
            let mut packed: Vec<Complex64> = u
                .chunks_exact(2)
                .map(|p| Complex64::new(p[0], p[1]))
                .collect();
            let mut deriv = vec![Complex64::new(0.0, 0.0); n / 2 + 1];
            tr.forward_packed_derivative(&mut packed, &mut deriv, &k)
                .unwrap();
            for (j, (got, want)) in deriv.iter().zip(&expected).enumerate() {
                let want = Complex64::new(0.0, -(j as f64)) * want;
                assert!(
                    (got - want).norm() <= 1e-13 * scale * n as f64,
                    "n = {n}, mode {j}"
                );
            }
            let mut plain = vec![Complex64::new(0.0, 0.0); n / 2 + 1];
            let mut again: Vec<Complex64> = u
                .chunks_exact(2)
                .map(|p| Complex64::new(p[0], p[1]))
                .collect();
            tr.forward_packed(&mut again, &mut plain).unwrap();
            for (j, (got, want)) in plain.iter().zip(&expected).enumerate() {
                assert!(
                    (got - want).norm() <= 1e-13 * scale,
                    "n = {n}, packed mode {j}"
                );
            }
            tr.inverse_packed(&spec, &mut packed).unwrap();
            for (x, (z, pair)) in packed.iter().zip(u.chunks_exact(2)).enumerate() {
                let err = (z.re / n as f64 - pair[0]).abs() + (z.im / n as f64 - pair[1]).abs();
                assert!(err <= 2e-13 * scale, "n = {n}, packed point {x}");
            }
        }
    }

    #[test]
    fn transforms_refuse_wrong_lengths() {
        let mut tr = Transforms::new(&mut FftPlanner::new(), 16);
        let mut spec = vec![Complex64::new(0.0, 0.0); 9];
        let mut packed = vec![Complex64::new(0.0, 0.0); 8];
        assert!(tr.forward(&[0.0; 15], &mut spec).is_err());
        assert!(tr.forward(&[0.0; 16], &mut spec[..8]).is_err());
        assert!(tr.inverse(&spec, &mut [0.0; 17]).is_err());
        assert!(tr.inverse_packed(&spec[..8], &mut packed).is_err());
        assert!(tr
            .forward_packed_derivative(&mut packed, &mut spec, &[0.0; 8])
            .is_err());
        assert!(tr
            .forward_packed_derivative(&mut packed[..7], &mut spec, &[0.0; 9])
            .is_err());
    }

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
