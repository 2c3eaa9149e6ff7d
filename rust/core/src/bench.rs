//! The FFT floor of a step: bare real transforms of one size, for the benchmark's ratios.

use std::time::Instant;

use num_complex::Complex64;
use rustfft::FftPlanner;

use crate::error::{CoreError, Result};
use crate::memory::try_filled;
use crate::spectral::Transforms;

/// Seconds per set of `forward` real-to-complex and `inverse` complex-to-real transforms of
/// size `n`, averaged over `repeats` sets (the same plans and scratch use as a stepper's).
///
/// # Errors
/// [`CoreError::InvalidParameter`] for an odd or zero `n` or zero `repeats`;
/// [`CoreError::OutOfMemory`] for an `n` whose transforms cannot be allocated.
pub fn fft_floor(n: usize, forward: usize, inverse: usize, repeats: usize) -> Result<f64> {
    if n < 2 || n % 2 != 0 {
        return Err(CoreError::invalid("n", n, "an even number >= 2"));
    }
    if repeats == 0 {
        return Err(CoreError::invalid("repeats", repeats, "at least 1"));
    }
    let mut tr = Transforms::try_new(&mut FftPlanner::new(), n)?;
    let mut phys = try_filled("the field", n, 0.0)?;
    phys.iter_mut()
        .enumerate()
        .for_each(|(j, x)| *x = (j as f64 * 0.37).sin());
    let mut spec = try_filled("the spectrum", n / 2 + 1, Complex64::new(0.0, 0.0))?;
    // Alternate the transforms so each inverse undoes a forward (times n); rescaling once per set
    // keeps the data normal-sized (no overflow, no subnormals) for a few n operations.
    let rescale = (1.0 / n as f64).powi(forward.min(inverse) as i32);
    let start = Instant::now();
    for _ in 0..repeats {
        for i in 0..forward.max(inverse) {
            if i < forward {
                tr.forward(&phys, &mut spec)?;
            }
            if i < inverse {
                tr.inverse(&spec, &mut phys)?;
            }
        }
        phys.iter_mut().for_each(|x| *x *= rescale);
    }
    Ok(start.elapsed().as_secs_f64() / repeats as f64)
}
