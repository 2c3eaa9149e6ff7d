//! The periodic grid `x_j = -L/2 + j L/n` and its real-to-complex wavenumbers `k_j = 2 pi j / L`.

use crate::error::{CoreError, Result};

/// Fewest points accepted: below this no soliton is resolved and dealiasing leaves almost nothing.
pub const MIN_POINTS: usize = 16;

/// A periodic grid of `n` points on `[-length/2, length/2)`.
#[derive(Debug, Clone, PartialEq)]
pub struct Grid {
    n: usize,
    length: f64,
}

impl Grid {
    /// A grid of `n` points (even, at least [`MIN_POINTS`]) on a domain of the given length.
    ///
    /// # Errors
    /// [`CoreError::InvalidParameter`] if `n` is odd or too small, or `length` is not finite and positive.
    pub fn new(n: usize, length: f64) -> Result<Self> {
        if n < MIN_POINTS || n % 2 != 0 {
            return Err(CoreError::invalid(
                "n",
                n,
                format!("an even number >= {MIN_POINTS}"),
            ));
        }
        if !(length.is_finite() && length > 0.0) {
            return Err(CoreError::invalid(
                "length",
                length,
                "a finite positive number",
            ));
        }
        Ok(Grid { n, length })
    }

    /// Number of points.
    pub fn n(&self) -> usize {
        self.n
    }

    /// Domain length.
    pub fn length(&self) -> f64 {
        self.length
    }

    /// Number of modes of the real-to-complex spectrum, `n/2 + 1`.
    pub fn modes(&self) -> usize {
        self.n / 2 + 1
    }

    /// Grid spacing.
    pub fn dx(&self) -> f64 {
        self.length / self.n as f64
    }

    /// The grid points.
    pub fn x(&self) -> Vec<f64> {
        (0..self.n)
            .map(|j| -0.5 * self.length + self.dx() * j as f64)
            .collect()
    }

    /// Wavenumbers `2 pi j / L`, `j = 0..=n/2`.
    pub fn wavenumbers(&self) -> Vec<f64> {
        let dk = 2.0 * std::f64::consts::PI / self.length;
        (0..self.modes()).map(|j| dk * j as f64).collect()
    }
}
