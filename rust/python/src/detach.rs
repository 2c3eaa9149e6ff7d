//! The one place where the GIL policy lives: long core calls run detached from the interpreter
//! and come back every few hundred steps to let Ctrl-C through.

use kdvsweep_core::{CoreError, Result};
use pyo3::prelude::*;

use crate::errors::to_py;

/// Runs `work` without the GIL; its hook re-attaches to check for signals. A pending
/// `KeyboardInterrupt` (or any signal handler's exception) is returned as is.
pub fn run_detached<T, F>(py: Python<'_>, work: F) -> PyResult<T>
where
    T: Send,
    F: FnOnce(&mut dyn FnMut() -> bool) -> Result<T> + Send,
{
    let mut pending: Option<PyErr> = None;
    let result = py.detach(|| {
        let mut hook = || match Python::attach(|py| py.check_signals()) {
            Ok(()) => true,
            Err(e) => {
                pending = Some(e);
                false
            }
        };
        work(&mut hook)
    });
    match (result, pending) {
        (Err(CoreError::Interrupted { .. }), Some(e)) => Err(e),
        (r, _) => r.map_err(to_py),
    }
}
