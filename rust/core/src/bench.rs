//! The FFT floor of a step: bare real transforms of one size, for the benchmark's ratios.

use std::time::Instant;

use num_complex::Complex64;
use rustfft::FftPlanner;

use crate::error::{CoreError, Result};
use crate::memory::try_filled;
use crate::spectral::Transforms;

/// Seconds per set of `forward` real-to-complex and `inverse` complex-to-real transforms of
/// size `n`, averaged over `repeats` sets: the packed transforms of a stepper's nonlinear term,
/// with its plans and scratch (`Transforms::forward_packed`, `Transforms::inverse_packed`).
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
    // The field u_j = sin(0.37 j), packed as u_{2j} + i u_{2j+1}.
    let mut phys = try_filled("the field", n / 2, Complex64::new(0.0, 0.0))?;
    phys.iter_mut().enumerate().for_each(|(j, z)| {
        let x = 2.0 * j as f64 * 0.37;
        *z = Complex64::new(x.sin(), (x + 0.37).sin());
    });
    let mut spec = try_filled("the spectrum", n / 2 + 1, Complex64::new(0.0, 0.0))?;
    // Alternate the transforms so each inverse undoes a forward (times n); rescaling once per set
    // keeps the data normal-sized (no overflow, no subnormals) for a few n operations.
    let rescale = (1.0 / n as f64).powi(forward.min(inverse) as i32);
    let start = Instant::now();
    for _ in 0..repeats {
        for i in 0..forward.max(inverse) {
            if i < forward {
                tr.forward_packed(&mut phys, &mut spec)?;
            }
            if i < inverse {
                tr.inverse_packed(&spec, &mut phys)?;
            }
        }
        phys.iter_mut().for_each(|x| *x *= rescale);
    }
    Ok(start.elapsed().as_secs_f64() / repeats as f64)
}
