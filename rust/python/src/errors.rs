//! Core errors as the Python exception classes of `kdvsweep.exceptions`.

use kdvsweep_core::CoreError;
use pyo3::PyErr;

pyo3::import_exception!(kdvsweep.exceptions, KdvsweepError);
pyo3::import_exception!(kdvsweep.exceptions, ConfigError);
pyo3::import_exception!(kdvsweep.exceptions, ShapeError);
pyo3::import_exception!(kdvsweep.exceptions, NumericalError);
pyo3::import_exception!(kdvsweep.exceptions, TimeLimitError);
pyo3::import_exception!(kdvsweep.exceptions, OutOfMemoryError);

/// The Python exception for a core error; the message is the core's own. Every variant is named
/// (no wildcard arm), so a new core error does not compile until it is mapped here.
pub fn to_py(err: CoreError) -> PyErr {
    let msg = err.to_string();
    match err {
        CoreError::InvalidParameter { .. } => ConfigError::new_err(msg),
        CoreError::ShapeMismatch { .. } => ShapeError::new_err(msg),
        CoreError::NonFinite { .. }
        | CoreError::BlowUp { .. }
        | CoreError::StepSizeUnderflow { .. }
        | CoreError::TimeResolution { .. } => NumericalError::new_err(msg),
        CoreError::TimeLimit { .. } => TimeLimitError::new_err(msg),
        CoreError::OutOfMemory { .. } => OutOfMemoryError::new_err(msg),
        // A stop without a pending Python exception (the shell's hook always leaves one) and an
        // internal FFT failure (lengths are checked first): neither is the caller's input.
        CoreError::Interrupted { .. } | CoreError::Fft(_) => KdvsweepError::new_err(msg),
    }
}
