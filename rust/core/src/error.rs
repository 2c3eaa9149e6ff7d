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

impl From<realfft::FftError> for CoreError {
    fn from(e: realfft::FftError) -> Self {
        CoreError::Fft(e.to_string())
    }
}
