//! Fallible allocation: sizes are computed with checked arithmetic and reserved with
//! `try_reserve_exact`, so a request that cannot be met is a [`CoreError::OutOfMemory`] naming the
//! memory it needs, never an abort of the process.

use std::mem::size_of;

use crate::error::{CoreError, Result};

/// Bytes of `count` values of `T` (saturating: a count that overflows is refused anyway).
pub fn bytes_of<T>(count: u128) -> u128 {
    count.saturating_mul(size_of::<T>() as u128)
}

/// A vector of `len` copies of `value`, or [`CoreError::OutOfMemory`] naming `what`.
///
/// # Errors
/// [`CoreError::OutOfMemory`] if the memory cannot be reserved.
pub fn try_filled<T: Clone>(what: &'static str, len: usize, value: T) -> Result<Vec<T>> {
    let mut out = Vec::new();
    out.try_reserve_exact(len)
        .map_err(|_| CoreError::OutOfMemory {
            what,
            bytes: bytes_of::<T>(len as u128),
        })?;
    out.resize(len, value);
    Ok(out)
}

/// A copy of `values`, or [`CoreError::OutOfMemory`] naming `what`.
///
/// # Errors
/// [`CoreError::OutOfMemory`] if the memory cannot be reserved.
pub fn try_copy<T: Clone>(what: &'static str, values: &[T]) -> Result<Vec<T>> {
    let mut out = Vec::new();
    out.try_reserve_exact(values.len())
        .map_err(|_| CoreError::OutOfMemory {
            what,
            bytes: bytes_of::<T>(values.len() as u128),
        })?;
    out.extend_from_slice(values);
    Ok(out)
}

/// A vector of `rows * cols` zeros (a table of frames), with the product checked.
///
/// # Errors
/// [`CoreError::OutOfMemory`] if the product overflows or the memory cannot be reserved.
pub fn try_table(what: &'static str, rows: usize, cols: usize) -> Result<Vec<f64>> {
    let len = rows.checked_mul(cols).ok_or(CoreError::OutOfMemory {
        what,
        bytes: bytes_of::<f64>(rows as u128 * cols as u128),
    })?;
    try_filled(what, len, 0.0)
}

/// Checks that `bytes` can be reserved at all, without touching the memory: the reservation is
/// released at once. Used before building structures whose parts (FFT plans) allocate
/// infallibly, with `bytes` an upper bound of what they need together.
///
/// # Errors
/// [`CoreError::OutOfMemory`] if `bytes` cannot be reserved.
pub fn ensure_available(what: &'static str, bytes: u128) -> Result<()> {
    let refused = CoreError::OutOfMemory { what, bytes };
    let len = usize::try_from(bytes).map_err(|_| refused.clone())?;
    let mut probe: Vec<u8> = Vec::new();
    probe.try_reserve_exact(len).map_err(|_| refused)?;
    // The probe is never written: without this the optimiser may drop the allocation and its
    // failure with it (it did once a new module changed the crate's inlining).
    std::hint::black_box(&mut probe);
    Ok(())
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn impossible_sizes_are_errors_naming_the_bytes() {
        // 2^40 * 2^30 values overflow usize: refused before any allocation.
        let err = try_table("frames", 1 << 40, 1 << 30).unwrap_err();
        assert_eq!(
            err,
            CoreError::OutOfMemory {
                what: "frames",
                bytes: 8 << 70
            }
        );
        let big = 1u128 << 60; // 1 EiB: more than any address space allows
        let msg = ensure_available("probe", big).unwrap_err().to_string();
        assert!(
            msg.starts_with(
                "out of memory: cannot allocate 1.00 EiB (1152921504606846976 bytes) for probe;"
            ),
            "{msg}"
        );
        assert!(try_filled("x", usize::MAX / 8, 0.0f64).is_err());
        assert_eq!(try_copy("c", &[1.0, 2.0]).unwrap(), vec![1.0, 2.0]);
        assert!(ensure_available("small", 1 << 20).is_ok());
    }
}
