//! The one error type of the core. Every message names the argument, what was given and what was
//! expected, so the Python layer can pass it through unchanged.

use thiserror::Error;

/// Errors returned by the core.
///
/// Exhaustive on purpose: a new variant must be handled by every `match` on it, such as the Python
/// shell's map from core errors to exception classes.
#[derive(Debug, Error, Clone, PartialEq)]
pub enum CoreError {
    /// A parameter is out of its domain.
    #[error("{name}: expected {expected}, got {value}")]
    InvalidParameter {
        /// Name of the parameter.
        name: &'static str,
        /// The value given, formatted.
        value: String,
        /// What was expected.
        expected: String,
    },
    /// An array has the wrong length.
    #[error("{name}: expected length {expected}, got {got}")]
    ShapeMismatch {
        /// Name of the array.
        name: &'static str,
        /// Expected length.
        expected: usize,
        /// Length given.
        got: usize,
    },
    /// The solution became non-finite.
    #[error("non-finite values in the solution at t = {time} (step {step}); reduce dt or check the data")]
    NonFinite {
        /// Time of the last finite state.
        time: f64,
        /// Steps taken when it was seen.
        step: u64,
    },
    /// The solution grew past the blow-up bound.
    #[error("solution blew up at t = {time} (step {step}): max|u| = {max_abs:.6e} exceeds the bound {bound:.6e}; reduce dt or raise max_amplitude")]
    BlowUp {
        /// Time at which it was seen.
        time: f64,
        /// Steps taken when it was seen.
        step: u64,
        /// The offending max |u|.
        max_abs: f64,
        /// The bound.
        bound: f64,
    },
    /// The adaptive controller could not meet the tolerance.
    #[error("adaptive step size fell to {h:.3e} at t = {time}: the tolerance cannot be met (solution unstable?)")]
    StepSizeUnderflow {
        /// Time reached.
        time: f64,
        /// The step size that was too small.
        h: f64,
    },
    /// The caller's progress hook asked to stop.
    #[error("interrupted at t = {time}")]
    Interrupted {
        /// Time reached.
        time: f64,
    },
    /// The wall-clock time limit of the stepping ran out.
    #[error("time limit: {limit} s of wall-clock time used up at t = {time} (step {step}); raise time_limit or shorten the run")]
    TimeLimit {
        /// The limit, seconds.
        limit: f64,
        /// Time reached (the state is valid there).
        time: f64,
        /// Steps taken since the state was set.
        step: u64,
    },
    /// The spacing of floating-point times near `time` is too coarse for the step: the steps
    /// would not advance the time by what they integrate.
    #[error("time resolution: at t = {time} float64 times are {spacing:.3e} apart, too coarse for the step {step:.3e} (at most {max_ratio:e} of a step); start from a smaller time or take longer steps")]
    TimeResolution {
        /// The time reached.
        time: f64,
        /// The step size.
        step: f64,
        /// Spacing of float64 numbers near `time`.
        spacing: f64,
        /// The largest spacing accepted, as a fraction of the step.
        max_ratio: f64,
    },
    /// A buffer could not be allocated (or its size does not fit in memory at all).
    #[error("out of memory: cannot allocate {} ({bytes} bytes) for {what}; use fewer points or frames", human_bytes(*.bytes))]
    OutOfMemory {
        /// What needed the memory.
        what: &'static str,
        /// Bytes needed (saturated at `u128::MAX`).
        bytes: u128,
    },
    /// An FFT failed (a bug: lengths are checked before any transform).
    #[error("internal FFT error: {0}")]
    Fft(String),
}

/// Result with [`CoreError`].
pub type Result<T> = std::result::Result<T, CoreError>;

impl CoreError {
    pub(crate) fn invalid(
        name: &'static str,
        value: impl ToString,
        expected: impl ToString,
    ) -> Self {
        CoreError::InvalidParameter {
            name,
            value: value.to_string(),
            expected: expected.to_string(),
        }
    }
}

/// `value` for a message: plain digits for ordinary magnitudes, exponent notation (`1e200`) for
/// very large or very small ones.
pub fn number(value: f64) -> String {
    let size = value.abs();
    if size != 0.0 && size.is_finite() && !(1e-4..1e15).contains(&size) {
        format!("{value:e}")
    } else {
        format!("{value}")
    }
}

/// `bytes` with a binary unit, e.g. `2.00 TiB`.
pub fn human_bytes(bytes: u128) -> String {
    const UNITS: [&str; 7] = ["bytes", "KiB", "MiB", "GiB", "TiB", "PiB", "EiB"];
    let mut value = bytes as f64;
    let mut unit = 0;
    while value >= 1024.0 && unit + 1 < UNITS.len() {
        value /= 1024.0;
        unit += 1;
    }
    if unit == 0 {
        format!("{bytes} bytes")
    } else {
        format!("{value:.2} {}", UNITS[unit])
    }
}
