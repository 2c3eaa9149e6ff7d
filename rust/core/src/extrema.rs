//! Sub-grid extrema of periodic frames on their trigonometric interpolants.
//!
//! A frame sampled at `x_j = -L/2 + j L/n` is the trigonometric polynomial
//! `p(x) = Re sum_m w_m U_m e^{i k_m (x + L/2)}` (`U` its unnormalised real-to-complex spectrum,
//! `w_0 = w_{n/2} = 1/n`, `w_m = 2/n` otherwise; the Nyquist mode enters as a cosine). Each
//! candidate (a discrete extremum of `s u`, `s = +-1`, at grid index `j` of a frame) is refined by
//! a safeguarded Newton iteration on `p'(x) = 0`: it starts at the vertex of the parabola through
//! the three samples around `j`, keeps a bracket inside `[x_j - dx, x_j + dx]` from the sign of
//! `s p'`, and switches to bisection on that sign for good when a Newton step leaves the bracket
//! or meets the wrong curvature (common practice, e.g. Press et al., Numerical Recipes, 3rd ed.
//! 2007, section 9.4, `rtsafe` \[memory\]).
//!
//! Before the search, the modes of a frame that sit at a noise floor can be dropped
//! ([`drop_noise_band`]), so noise cannot make spurious extrema out of the unresolved band.

use num_complex::Complex64;
use rustfft::FftPlanner;

use crate::error::{CoreError, Result};
use crate::memory::try_filled;
use crate::simd::kernel;
use crate::spectral::Transforms;

/// Modes whose magnitude stays below this multiple of the high-band noise floor are dropped.
pub const NOISE_FACTOR: f64 = 10.0;
/// The top quarter of the band is a noise plateau if its median magnitude is at least this
/// fraction of the median of the quarter below it.
pub const PLATEAU: f64 = 0.3;
/// Iterations allowed per extremum (Newton converges in a few from the parabola's vertex; the
/// bisection halves a bracket of two grid steps).
pub const MAX_ITERATIONS: usize = 40;
/// The iteration stops at a Newton step (or a bracket) below this many units of
/// `max(1, L)`.
pub const TOLERANCE: f64 = 1e-13;
/// Frames transformed between two calls of the progress hook.
const HOOK_EVERY: usize = 64;

/// Positions and values of refined extrema, one per candidate, in the candidates' order.
#[derive(Debug, Clone, PartialEq)]
pub struct Extrema {
    /// Positions, not wrapped: within a grid step of the candidate's grid point.
    pub x: Vec<f64>,
    /// The interpolant's values there (signed).
    pub height: Vec<f64>,
    /// Whether the iteration met its tolerance within [`MAX_ITERATIONS`].
    pub converged: Vec<bool>,
}

/// Zeroes, in place, the modes of one frame's spectrum (`n/2 + 1` modes, unnormalised) above the
/// last one that stands clear of a noise plateau in the top quarter of the band: when the median
/// magnitude of that quarter is positive and at least [`PLATEAU`] times the median of the quarter
/// below it, every mode above the last one exceeding [`NOISE_FACTOR`] times it is dropped. A
/// spectrum still decaying there, or one too short to have quarters of 4 modes, is left whole.
/// `scratch` holds at least `spec.len()` values.
pub fn drop_noise_band(spec: &mut [Complex64], scratch: &mut [f64]) {
    let m = spec.len();
    let (half, quarter) = (m / 2, 3 * m / 4);
    if m - quarter < 4 || scratch.len() < m {
        return;
    }
    let below = median_norm(&spec[half..quarter], &mut scratch[..quarter - half]);
    let floor = median_norm(&spec[quarter..], &mut scratch[..m - quarter]);
    if !(floor > 0.0 && floor >= PLATEAU * below) {
        return;
    }
    // |z| > t, with |z|^2 > 0.99 t^2 first (hypot only near the cut).
    let cut = NOISE_FACTOR * floor;
    let near = 0.99 * cut * cut;
    if let Some(last) = spec
        .iter()
        .rposition(|z| z.norm_sqr() > near && z.norm() > cut)
    {
        spec[last + 1..].fill(Complex64::new(0.0, 0.0));
    }
}

/// The median magnitude of `values` (mean of the two central ones for an even count), found by
/// selection on the squared magnitudes in `scratch` (of the same length).
fn median_norm(values: &[Complex64], scratch: &mut [f64]) -> f64 {
    for (s, z) in scratch.iter_mut().zip(values) {
        *s = z.norm_sqr();
    }
    let w = scratch.len();
    if w == 0 {
        return 0.0;
    }
    let mid = w / 2;
    let (left, &mut upper, _) = scratch.select_nth_unstable_by(mid, f64::total_cmp);
    // The magnitude itself (hypot) of the selected value, as the mean of the central two takes it.
    let norm_of = |sq: f64| {
        values
            .iter()
            .find(|z| z.norm_sqr() == sq)
            .map_or(sq.sqrt(), |z| z.norm())
    };
    if w % 2 == 0 {
        let lower = left.iter().copied().fold(f64::NEG_INFINITY, f64::max);
        0.5 * (norm_of(lower) + norm_of(upper))
    } else {
        norm_of(upper)
    }
}

fn check_frames(frames: &[f64], n: usize) -> Result<usize> {
    if n < 4 || n % 2 != 0 {
        return Err(CoreError::invalid("n", n, "an even number >= 4"));
    }
    if frames.len() % n != 0 {
        return Err(CoreError::invalid(
            "frames",
            format!("{} values", frames.len()),
            format!("a whole number of frames of {n} points"),
        ));
    }
    Ok(frames.len() / n)
}

fn check_finite(frame: &[f64], index: usize) -> Result<()> {
    match frame.iter().find(|v| !v.is_finite()) {
        None => Ok(()),
        Some(v) => Err(CoreError::invalid(
            "frames",
            format!("{v} in frame {index}"),
            "finite values",
        )),
    }
}

/// One frame's spectrum: the transform of `frame` into `spec`, then the noise band dropped when
/// `denoise` is set.
fn transform(
    tr: &mut Transforms,
    frame: &[f64],
    spec: &mut [Complex64],
    scratch: &mut [f64],
    denoise: bool,
) -> Result<()> {
    tr.forward(frame, spec)?;
    if denoise {
        drop_noise_band(spec, scratch);
    }
    Ok(())
}

/// The spectra (`n/2 + 1` unnormalised modes each, row after row) of the frames (`m x n`,
/// row-major) of period-`n` samples, with the noise band of each dropped when `denoise` is set
/// (see [`drop_noise_band`]).
///
/// # Errors
/// [`CoreError::InvalidParameter`] for an odd `n` below 4, a length that is not a whole number of
/// frames, or a non-finite value; [`CoreError::OutOfMemory`] if the output cannot be allocated.
pub fn spectra(frames: &[f64], n: usize, denoise: bool) -> Result<Vec<Complex64>> {
    let m = check_frames(frames, n)?;
    let modes = n / 2 + 1;
    let total = m.checked_mul(modes).ok_or(CoreError::OutOfMemory {
        what: "the spectra",
        bytes: crate::memory::bytes_of::<Complex64>(m as u128 * modes as u128),
    })?;
    let mut out = try_filled("the spectra", total, Complex64::new(0.0, 0.0))?;
    if m == 0 {
        return Ok(out);
    }
    let mut tr = Transforms::try_new(&mut FftPlanner::new(), n)?;
    let mut scratch = try_filled("the noise-band scratch", modes, 0.0)?;
    for (f, (frame, spec)) in frames
        .chunks_exact(n)
        .zip(out.chunks_exact_mut(modes))
        .enumerate()
    {
        check_finite(frame, f)?;
        transform(&mut tr, frame, spec, &mut scratch, denoise)?;
    }
    Ok(out)
}

/// One frame's interpolant as a series in `e^{i m k_1 theta}`, `theta = x + L/2`: the weighted
/// coefficients in groups of [`LANES`] consecutive modes, cut after the last group with a
/// non-zero coefficient.
struct Series {
    groups: Vec<Group>,
    len: usize,
    k1: f64,
    half_length: f64,
}

/// Modes summed side by side: independent phase recurrences and accumulators (two AVX2
/// vectors, so the recurrence's latency overlaps).
const LANES: usize = 8;

/// [`LANES`] consecutive modes: the real and imaginary parts of the weighted coefficients and
/// the powers `k_m^r`, `r = 1, 2, 3`, of their wavenumbers.
#[derive(Clone, Copy)]
struct Group {
    re: [f64; LANES],
    im: [f64; LANES],
    k: [f64; LANES],
    k2: [f64; LANES],
    k3: [f64; LANES],
}

/// The values of a series and of its first three derivatives at one point.
#[derive(Clone, Copy)]
struct Derivatives {
    p: f64,
    d1: f64,
    d2: f64,
    d3: f64,
}

kernel! {
    /// `sum_m z_m`, `sum k_m Im z_m`, `sum k_m^2 Re z_m`, `sum k_m^3 Im z_m` with
    /// `z_m = (re_m + i im_m) e^{i m phi}`: lane `l` starts at `(pr_l, pi_l) = e^{i l phi}` and
    /// steps by `(sr, si) = e^{i LANES phi}` (the phases by recurrence, no sine or cosine per
    /// mode).
    fn series_sums(groups: &[Group], start: [[f64; LANES]; 2], stride: [f64; 2]) -> [f64; 4] {
        let [mut pr, mut pi] = start;
        let [sr, si] = stride;
        let (mut s0, mut s1, mut s2, mut s3) =
            ([0.0; LANES], [0.0; LANES], [0.0; LANES], [0.0; LANES]);
        for g in groups {
            for l in 0..LANES {
                let zr = g.re[l] * pr[l] - g.im[l] * pi[l];
                let zi = g.re[l] * pi[l] + g.im[l] * pr[l];
                s0[l] += zr;
                s1[l] += g.k[l] * zi;
                s2[l] += g.k2[l] * zr;
                s3[l] += g.k3[l] * zi;
                let next = pr[l] * sr - pi[l] * si;
                pi[l] = pr[l] * si + pi[l] * sr;
                pr[l] = next;
            }
        }
        [s0, s1, s2, s3].map(|s| s.iter().sum())
    }
}

impl Series {
    fn new(modes: usize, length: f64) -> Result<Self> {
        let k1 = 2.0 * std::f64::consts::PI / length;
        let zero = [0.0; LANES];
        let empty = Group {
            re: zero,
            im: zero,
            k: zero,
            k2: zero,
            k3: zero,
        };
        let mut groups = try_filled("the series", modes.div_ceil(LANES), empty)?;
        for (i, g) in groups.iter_mut().enumerate() {
            for l in 0..LANES {
                let k = k1 * (i * LANES + l) as f64;
                (g.k[l], g.k2[l], g.k3[l]) = (k, k * k, k * k * k);
            }
        }
        Ok(Series {
            groups,
            len: 0,
            k1,
            half_length: 0.5 * length,
        })
    }

    /// Loads the weighted coefficients `w_m U_m` of a spectrum of `n/2 + 1` modes.
    fn load(&mut self, spec: &[Complex64]) {
        let last = spec.len() - 1;
        let n = 2.0 * last as f64;
        let mut used = 0;
        for (i, g) in self.groups.iter_mut().enumerate() {
            for l in 0..LANES {
                let j = i * LANES + l;
                let (re, im) = match spec.get(j) {
                    // The Nyquist mode is a cosine: its imaginary part (zero for real data) is
                    // dropped.
                    Some(z) if j == last => (z.re * (1.0 / n), 0.0),
                    Some(z) if j == 0 => (z.re * (1.0 / n), z.im * (1.0 / n)),
                    Some(z) => (z.re * (2.0 / n), z.im * (2.0 / n)),
                    None => (0.0, 0.0),
                };
                (g.re[l], g.im[l]) = (re, im);
                if re != 0.0 || im != 0.0 {
                    used = i + 1;
                }
            }
        }
        self.len = used;
    }

    /// `p` and its first three derivatives at `x` (one sine and cosine per call).
    fn eval(&self, x: f64) -> Derivatives {
        let (s, c) = (self.k1 * (x + self.half_length)).sin_cos();
        let w = Complex64::new(c, s);
        let mut phase = [Complex64::new(1.0, 0.0); LANES];
        for l in 1..LANES {
            phase[l] = phase[l - 1] * w;
        }
        let stride = phase[LANES - 1] * w;
        let [s0, s1, s2, s3] = series_sums(
            &self.groups[..self.len],
            [phase.map(|z| z.re), phase.map(|z| z.im)],
            [stride.re, stride.im],
        );
        // p^(r) = Re sum (i k)^r z: p' = -sum k Im z, p'' = -sum k^2 Re z, p''' = sum k^3 Im z.
        Derivatives {
            p: s0,
            d1: -s1,
            d2: -s2,
            d3: s3,
        }
    }

    /// The extremum of `sign * p` near the grid point `x0` (spacing `dx`), from `start`:
    /// `(position, value, converged)`. The iteration stops at a Newton step (or a bracket) of at
    /// most `tol`, or at a Newton step `s_k` after which the error estimated from the last two
    /// steps, `|s_k|^3 / |s_(k-1)|^2` (the quadratic rate `|s_k| / |s_(k-1)|^2` times `s_k^2`; an
    /// overestimate when convergence is faster, as at a symmetric peak), is below a thousandth
    /// of `tol`.
    fn refine(&self, x0: f64, dx: f64, sign: f64, start: f64, tol: f64) -> (f64, f64, bool) {
        let (mut lo, mut hi) = (x0 - dx, x0 + dx);
        let mut x = start;
        let mut bisect = false;
        let mut height = f64::NAN;
        let mut previous = 0.0;
        for _ in 0..MAX_ITERATIONS {
            let d = self.eval(x);
            let (g, h) = (sign * d.d1, sign * d.d2);
            if g > 0.0 {
                lo = lo.max(x);
            }
            if g < 0.0 {
                hi = hi.min(x);
            }
            let newton = if h < 0.0 { x - g / h } else { f64::NAN };
            bisect |= !(newton.is_finite() && newton >= lo && newton <= hi);
            let next = if bisect { 0.5 * (lo + hi) } else { newton };
            let step = next - x;
            // The value at the new point from the Taylor polynomial of degree 3: the step is
            // tiny when it is kept, so the quartic term is far below round-off.
            height = d.p + step * (d.d1 + step * (0.5 * d.d2 + step * d.d3 / 6.0));
            let done = if bisect {
                hi - lo <= tol
            } else {
                let s = step.abs();
                s <= tol || s * s * s <= 1e-3 * tol * previous * previous
            };
            previous = step.abs();
            x = next;
            if done {
                return (x, height, true);
            }
        }
        (x, height, false)
    }
}

/// The offset from grid point `j` of the vertex of the parabola through the samples around it
/// (of `sign * frame`), clipped to half a grid step; zero where the parabola is not concave.
fn vertex(frame: &[f64], j: usize, sign: f64, dx: f64) -> f64 {
    let n = frame.len();
    let a = sign * frame[(j + n - 1) % n];
    let b = sign * frame[j];
    let c = sign * frame[(j + 1) % n];
    let den = a - 2.0 * b + c;
    let off = if den < 0.0 { 0.5 * (a - c) / den } else { 0.0 };
    off.clamp(-0.5, 0.5) * dx
}

/// The extrema near candidate discrete extrema of frames (`m x n`, row-major, samples of period
/// `length` at `x_j = -L/2 + j L/n`): candidate `c` is the extremum of `sign[c] * u` at grid index
/// `index[c]` of frame `frame[c]`. Each frame with a candidate is transformed once (its noise band
/// dropped when `denoise` is set, see [`drop_noise_band`]) and each candidate refined by the
/// safeguarded Newton iteration of the module's description. `hook` is called every few dozen
/// frames; returning `false` stops with [`CoreError::Interrupted`].
///
/// # Errors
/// [`CoreError::InvalidParameter`] for an odd `n` below 4, a length that is not a whole number of
/// frames, a non-positive or non-finite `length`, a frame or index out of range, a sign other
/// than +-1, or a non-finite value in a frame with a candidate; [`CoreError::ShapeMismatch`] when
/// `frame`, `index` and `sign` differ in length; [`CoreError::OutOfMemory`] if the work arrays
/// cannot be allocated.
#[allow(clippy::too_many_arguments)] // the frames, their shape, the candidates and the options
pub fn locate_extrema(
    frames: &[f64],
    n: usize,
    length: f64,
    frame: &[usize],
    index: &[usize],
    sign: &[f64],
    denoise: bool,
    hook: &mut dyn FnMut() -> bool,
) -> Result<Extrema> {
    let m = check_frames(frames, n)?;
    if !(length.is_finite() && length > 0.0) {
        return Err(CoreError::invalid(
            "length",
            length,
            "a finite positive number",
        ));
    }
    let count = frame.len();
    for (name, len) in [("index", index.len()), ("sign", sign.len())] {
        if len != count {
            return Err(CoreError::ShapeMismatch {
                name,
                expected: count,
                got: len,
            });
        }
    }
    if let Some(&f) = frame.iter().find(|&&f| f >= m) {
        return Err(CoreError::invalid(
            "frame",
            f,
            format!("a frame index below {m}"),
        ));
    }
    if let Some(&j) = index.iter().find(|&&j| j >= n) {
        return Err(CoreError::invalid(
            "index",
            j,
            format!("a grid index below {n}"),
        ));
    }
    if let Some(&s) = sign.iter().find(|&&s| s != 1.0 && s != -1.0) {
        return Err(CoreError::invalid("sign", s, "+1 or -1"));
    }
    let mut out = Extrema {
        x: try_filled("the positions", count, 0.0)?,
        height: try_filled("the heights", count, 0.0)?,
        converged: try_filled("the convergence flags", count, false)?,
    };
    if count == 0 {
        return Ok(out);
    }
    // Candidates grouped by frame, so each frame is transformed once.
    let mut order = try_filled("the candidate order", count, 0usize)?;
    order.iter_mut().enumerate().for_each(|(i, o)| *o = i);
    order.sort_unstable_by_key(|&i| (frame[i], i));

    let modes = n / 2 + 1;
    let mut tr = Transforms::try_new(&mut FftPlanner::new(), n)?;
    let mut spec = try_filled("the spectrum", modes, Complex64::new(0.0, 0.0))?;
    let mut scratch = try_filled("the noise-band scratch", modes, 0.0)?;
    let mut series = Series::new(modes, length)?;
    let dx = length / n as f64;
    let tol = TOLERANCE * length.max(1.0);
    let mut loaded = None;
    let mut transformed = 0usize;
    for &c in &order {
        let f = frame[c];
        let samples = &frames[f * n..(f + 1) * n];
        if loaded != Some(f) {
            if transformed % HOOK_EVERY == 0 && transformed > 0 && !hook() {
                return Err(CoreError::Interrupted { time: f64::NAN });
            }
            check_finite(samples, f)?;
            transform(&mut tr, samples, &mut spec, &mut scratch, denoise)?;
            series.load(&spec);
            loaded = Some(f);
            transformed += 1;
        }
        let x0 = -0.5 * length + dx * index[c] as f64;
        let start = x0 + vertex(samples, index[c], sign[c], dx);
        let (x, height, converged) = series.refine(x0, dx, sign[c], start, tol);
        out.x[c] = x;
        out.height[c] = height;
        out.converged[c] = converged;
    }
    Ok(out)
}

#[cfg(test)]
mod tests {
    use super::*;

    const L: f64 = 40.0;

    fn sech2(y: f64) -> f64 {
        let c = 1.0 / y.cosh();
        c * c
    }

    /// Samples of `sum_j a_j sech^2(kappa_j (x - c_j))` with periodic images, on `n` points.
    fn sech2_sum(n: usize, terms: &[(f64, f64, f64)]) -> Vec<f64> {
        let dx = L / n as f64;
        (0..n)
            .map(|j| {
                let x = -0.5 * L + dx * j as f64;
                terms
                    .iter()
                    .map(|&(a, k, c)| {
                        (-3..=3)
                            .map(|w| a * sech2(k * (x - c + L * w as f64)))
                            .sum::<f64>()
                    })
                    .sum()
            })
            .collect()
    }

    fn candidates(u: &[f64], sign: f64) -> Vec<usize> {
        let n = u.len();
        (0..n)
            .filter(|&j| {
                let (a, b, c) = (u[(j + n - 1) % n], u[j], u[(j + 1) % n]);
                sign * b >= sign * a && sign * b > sign * c && sign * b > 0.1
            })
            .collect()
    }

    fn locate(u: &[f64], n: usize, sign: f64) -> Extrema {
        let idx = candidates(u, sign);
        let frames = vec![0; idx.len()];
        let signs = vec![sign; idx.len()];
        locate_extrema(u, n, L, &frames, &idx, &signs, false, &mut || true).unwrap()
    }

    #[test]
    fn one_sech2_peak_is_found_at_its_centre() {
        // A sech^2 soliton resolved to round-off: its maximum is at its centre and its height is
        // its amplitude (the interpolant equals the function there to round-off).
        let n = 512;
        for &centre in &[0.0, 0.123_456, -7.31, 13.0 + 1.0 / 3.0] {
            let u = sech2_sum(n, &[(2.0, 1.0, centre)]);
            let found = locate(&u, n, 1.0);
            assert_eq!(found.x.len(), 1);
            assert!(found.converged[0]);
            assert!(
                (found.x[0] - centre).abs() < 1e-11,
                "{}",
                found.x[0] - centre
            );
            assert!(
                (found.height[0] - 2.0).abs() < 1e-12,
                "{} {}",
                found.height[0] - 2.0,
                found.x[0] - centre
            );
        }
    }

    #[test]
    fn minima_of_a_negative_profile() {
        let n = 256;
        let u: Vec<f64> = sech2_sum(n, &[(1.5, 0.8, -3.3)])
            .iter()
            .map(|v| -v)
            .collect();
        let found = locate(&u, n, -1.0);
        assert_eq!(found.x.len(), 1);
        assert!((found.x[0] + 3.3).abs() < 1e-11);
        assert!((found.height[0] + 1.5).abs() < 1e-12);
    }

    /// The maximum of the exact (periodised) sum near `x`, by bisection on its analytic
    /// derivative `-2 a k sech^2 tanh` (the reference outside the Fourier series).
    fn exact_maximum(terms: &[(f64, f64, f64)], near: f64) -> f64 {
        let deriv = |x: f64| -> f64 {
            terms
                .iter()
                .map(|&(a, k, c)| {
                    (-3..=3)
                        .map(|w| {
                            let y = k * (x - c + L * w as f64);
                            -2.0 * a * k * sech2(y) * y.tanh()
                        })
                        .sum::<f64>()
                })
                .sum()
        };
        let (mut lo, mut hi) = (near - 0.5, near + 0.5);
        assert!(deriv(lo) > 0.0 && deriv(hi) < 0.0);
        for _ in 0..200 {
            let mid = 0.5 * (lo + hi);
            if deriv(mid) > 0.0 {
                lo = mid;
            } else {
                hi = mid;
            }
        }
        0.5 * (lo + hi)
    }

    #[test]
    fn two_overlapping_peaks_match_the_exact_sum() {
        // Overlapping sech^2 waves: the maxima move off the centres; the exact ones come from
        // bisection on the analytic derivative.
        let n = 512;
        let terms = [(2.0, 1.0, -1.7), (0.5, 0.5, 2.9)];
        let u = sech2_sum(n, &terms);
        let found = locate(&u, n, 1.0);
        assert_eq!(found.x.len(), 2);
        for (i, &(_, _, c)) in terms.iter().enumerate() {
            let exact = exact_maximum(&terms, c);
            assert!((exact - c).abs() > 1e-6, "the overlap moves the maximum");
            assert!((found.x[i] - exact).abs() < 1e-10, "{}", found.x[i] - exact);
            assert!(found.converged[i]);
        }
    }

    #[test]
    fn matches_dense_sampling_of_the_interpolant() {
        // Coarse grid: the interpolant differs from the sech^2, so compare with the interpolant
        // itself sampled densely (its spectrum zero-padded and transformed back by a direct sum).
        let n = 32;
        let u = sech2_sum(n, &[(1.0, 0.7, 0.77)]);
        let found = locate(&u, n, 1.0);
        assert_eq!(found.x.len(), 1);
        let spec = spectra(&u, n, false).unwrap();
        let mut series = Series::new(n / 2 + 1, L).unwrap();
        series.load(&spec);
        // The interpolant reproduces the samples.
        for (j, &v) in u.iter().enumerate() {
            let x = -0.5 * L + L / n as f64 * j as f64;
            assert!((series.eval(x).p - v).abs() < 1e-13);
        }
        let direct = |x: f64| -> f64 {
            let theta = x + 0.5 * L;
            spec.iter()
                .enumerate()
                .map(|(m, z)| {
                    let w = if m == 0 || m == n / 2 { 1.0 } else { 2.0 } / n as f64;
                    let ph = 2.0 * std::f64::consts::PI / L * m as f64 * theta;
                    w * (z.re * ph.cos() - if m == n / 2 { 0.0 } else { z.im * ph.sin() })
                })
                .sum()
        };
        let (x0, dx) = (found.x[0], 1e-5);
        let (best, _) = (-2000..=2000)
            .map(|i| x0 + dx * i as f64)
            .map(|x| (x, direct(x)))
            .fold((x0, f64::MIN), |a, b| if b.1 > a.1 { b } else { a });
        assert!((best - x0).abs() <= dx, "{best} {x0}");
        assert!((direct(x0) - found.height[0]).abs() < 1e-13);
        assert!(direct(x0) >= direct(best) - 1e-15);
    }

    #[test]
    fn noise_band_is_dropped_only_on_a_plateau() {
        let n = 256;
        let clean = sech2_sum(n, &[(2.0, 1.0, 0.0)]);
        let noisy: Vec<f64> = clean
            .iter()
            .enumerate()
            .map(|(j, v)| v + 1e-6 * ((j as f64 * 12.9898).sin() * 43_758.545).fract())
            .collect();
        let kept = |u: &[f64]| -> usize {
            let s = spectra(u, n, true).unwrap();
            s.iter().rposition(|z| z.norm() > 0.0).unwrap_or(0) + 1
        };
        assert!(kept(&noisy) < n / 2 + 1, "a noise plateau is cut");
        assert_eq!(
            spectra(&clean, n, true).unwrap(),
            spectra(&clean, n, false).unwrap()
        );
    }

    #[test]
    fn bad_input_is_an_error() {
        let u = vec![0.0; 32];
        let run = |u: &[f64], n, f: &[usize], j: &[usize], s: &[f64]| {
            locate_extrema(u, n, L, f, j, s, true, &mut || true)
        };
        assert!(run(&u, 7, &[], &[], &[]).is_err());
        assert!(run(&u, 12, &[], &[], &[]).is_err());
        assert!(run(&u, 16, &[2], &[0], &[1.0]).is_err());
        assert!(run(&u, 16, &[0], &[16], &[1.0]).is_err());
        assert!(run(&u, 16, &[0], &[3], &[0.5]).is_err());
        assert!(run(&u, 16, &[0], &[3, 4], &[1.0]).is_err());
        let mut v = u.clone();
        v[3] = f64::NAN;
        assert!(run(&v, 16, &[0], &[3], &[1.0]).is_err());
        assert!(locate_extrema(&u, 16, -1.0, &[], &[], &[], true, &mut || true).is_err());
        assert!(run(&u, 16, &[], &[], &[]).unwrap().x.is_empty());
    }
}
