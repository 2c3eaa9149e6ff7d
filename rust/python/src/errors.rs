//! Core errors as the Python exception classes of `kdvsweep.exceptions`.

use kdvsweep_core::CoreError;
use pyo3::PyErr;

pyo3::import_exception!(kdvsweep.exceptions, KdvsweepError);
pyo3::import_exception!(kdvsweep.exceptions, ConfigError);
pyo3::import_exception!(kdvsweep.exceptions, ShapeError);
pyo3::import_exception!(kdvsweep.exceptions, NumericalError);

/// The Python exception for a core error; the message is the core's own.
pub fn to_py(err: CoreError) -> PyErr {
    let msg = err.to_string();
    match err {
        CoreError::InvalidParameter { .. } => ConfigError::new_err(msg),
        CoreError::ShapeMismatch { .. } => ShapeError::new_err(msg),
        CoreError::NonFinite { .. }
        | CoreError::BlowUp { .. }
        | CoreError::StepSizeUnderflow { .. } => NumericalError::new_err(msg),
        _ => KdvsweepError::new_err(msg),
    }
}
