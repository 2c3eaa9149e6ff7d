//! kdvsweep-core: pseudo-spectral time stepping for the KdV family
//! `u_t + (a u + b u^2) u_x + d u_xxx + f u_xxxxx = -g u + v u_xx` on a periodic domain.
//!
//! Pure Rust, no Python types; the Python package `kdvsweep` is a thin shell over it.
//!
//! # Conventions
//! - Domain `[-L/2, L/2)` with `n` points (even); spectra are real-to-complex, `n/2 + 1` modes,
//!   wavenumbers `k_j = 2 pi j / L`, unnormalised (`v_j = sum u(x) e^{-i k_j x}`).
//! - Canonical KdV `u_t + 6 u u_x + u_xxx = 0` (soliton `2 kappa^2 sech^2(kappa(x - 4 kappa^2 t))`),
//!   focusing mKdV `u_t + 6 u^2 u_x + u_xxx = 0` (soliton `2 kappa sech(2 kappa(x - 4 kappa^2 t))`).
//! - The nonlinear term is dealiased by truncation to a fraction of the Nyquist band chosen by the
//!   highest power of the flux (2/3 quadratic, 1/2 cubic).
//!
//! # Example
//! ```
//! use kdvsweep_core::{exact, Equation, Grid, Scheme, Simulation};
//! let grid = Grid::new(256, 40.0).unwrap();
//! let x = grid.x();
//! let mut u0 = vec![0.0; x.len()];
//! exact::kdv_multisoliton(&x, 0.0, &[1.0], &[-5.0], 6.0, 1.0, &mut u0).unwrap();
//! let mut sim = Simulation::new(grid, &Equation::kdv(), Scheme::Etdrk4, 1e-3, 1e-9, None).unwrap();
//! sim.set_state(&u0, 0.0).unwrap();
//! sim.advance(0.5).unwrap();
//! assert!((sim.time() - 0.5).abs() < 1e-12);
//! ```
// The only unsafe code is the call of the AVX2 copies of the kernels, in `simd`.
#![deny(unsafe_code)]
#![warn(missing_docs)]

pub mod bench;
pub mod equation;
pub mod error;
pub mod exact;
pub mod extrema;
pub mod grid;
pub mod invariants;
pub mod memory;
pub mod schemes;
pub mod simd;
pub mod simulation;
pub mod spectral;

pub use equation::{Coefficients, Equation};
pub use error::{CoreError, Result};
pub use grid::Grid;
pub use invariants::{invariants, Invariants};
pub use schemes::{Scheme, Stepper};
pub use simulation::Simulation;
