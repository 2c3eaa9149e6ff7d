//! The first three conserved quantities of the KdV family, computed spectrally.
//!
//! For `u_t + (a u + b u^2) u_x + d u_xxx + f u_xxxxx = 0` (no damping): mass `int u`,
//! momentum `int u^2` and the Hamiltonian `int (a u^3/6 + b u^4/12 - d u_x^2/2 + f u_xx^2/2)`,
//! for which the equation is `u_t = -d/dx (dH/du)`. For KdV (a = 6, d = 1) this is
//! `int (u^3 - u_x^2/2)`, the third invariant of Miura, Gardner & Kruskal (1968).

use num_complex::Complex64;
use rustfft::FftPlanner;

use crate::equation::Equation;
use crate::error::{CoreError, Result};
use crate::grid::Grid;
use crate::memory::try_filled;
use crate::spectral::Transforms;

/// Mass, momentum and energy of one profile.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Invariants {
    /// `int u dx`.
    pub mass: f64,
    /// `int u^2 dx`.
    pub momentum: f64,
    /// The Hamiltonian.
    pub energy: f64,
}

/// The invariants of the profile `u` on `grid` for `eq`. Allocates (not for use inside a step).
///
/// # Errors
/// [`CoreError::ShapeMismatch`] if `u` does not have `n` values; [`CoreError::OutOfMemory`] if
/// the transforms cannot be allocated.
pub fn invariants(u: &[f64], grid: &Grid, eq: &Equation) -> Result<Invariants> {
    let n = grid.n();
    if u.len() != n {
        return Err(CoreError::ShapeMismatch {
            name: "u",
            expected: n,
            got: u.len(),
        });
    }
    let c = eq.coefficients();
    let mut tr = Transforms::try_new(&mut FftPlanner::new(), n)?;
    let mut spec = try_filled("the spectrum", grid.modes(), Complex64::new(0.0, 0.0))?;
    tr.forward(u, &mut spec)?;
    let k = grid.wavenumbers();
    let last = spec.len() - 1;
    let inv_n = 1.0 / n as f64;
    let mut derivative = |power: u32| -> Result<Vec<f64>> {
        // (i k)^power; the odd derivative of the Nyquist mode is zero for a real field.
        let d: Vec<Complex64> = spec
            .iter()
            .zip(&k)
            .enumerate()
            .map(|(j, (s, &kj))| {
                if power % 2 == 1 && j == last {
                    Complex64::new(0.0, 0.0)
                } else {
                    s * Complex64::new(0.0, kj).powu(power) * inv_n
                }
            })
            .collect();
        let mut out = vec![0.0; n];
        tr.inverse(&d, &mut out)?;
        Ok(out)
    };
    let ux = derivative(1)?;
    let uxx = derivative(2)?;
    let dx = grid.dx();
    let (mut mass, mut momentum, mut energy) = (0.0, 0.0, 0.0);
    for ((&ui, &px), &pxx) in u.iter().zip(&ux).zip(&uxx) {
        mass += ui;
        momentum += ui * ui;
        energy += ui * ui * ui * (c.a / 6.0 + c.b * ui / 12.0) - 0.5 * c.d * px * px
            + 0.5 * c.f * pxx * pxx;
    }
    Ok(Invariants {
        mass: mass * dx,
        momentum: momentum * dx,
        energy: energy * dx,
    })
}
