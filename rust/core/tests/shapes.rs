//! A spectrum of the wrong length is an error, never a panic, and leaves the spectrum unchanged.

use kdvsweep_core::schemes::{stepper, IfRk43};
use kdvsweep_core::spectral::Nonlinear;
use kdvsweep_core::{CoreError, Equation, Grid, Scheme};
use num_complex::Complex64;
use rustfft::FftPlanner;

fn spectrum(len: usize) -> Vec<Complex64> {
    (0..len)
        .map(|j| Complex64::new(1.0 / (1.0 + j as f64), 0.5))
        .collect()
}

fn assert_shape_error<T: std::fmt::Debug>(
    result: kdvsweep_core::Result<T>,
    got: usize,
    modes: usize,
) {
    assert_eq!(
        result.err(),
        Some(CoreError::ShapeMismatch {
            name: "v",
            expected: modes,
            got,
        })
    );
}

#[test]
fn every_stepper_rejects_a_wrongly_sized_spectrum() {
    let grid = Grid::new(64, 20.0).unwrap();
    let modes = grid.modes();
    for eq in [Equation::kdv(), Equation::mkdv()] {
        let mut planner = FftPlanner::new();
        for scheme in Scheme::ALL {
            let mut st = stepper(&mut planner, scheme, &grid, &eq);
            // Shorter than the dealiased band, short by one, long by one, empty.
            for len in [3, modes - 1, modes + 1, 0] {
                let mut v = spectrum(len);
                assert_shape_error(st.step(&mut v, 1e-3), len, modes);
                assert_eq!(v, spectrum(len), "{scheme} changed a rejected spectrum");
            }
            let mut v = spectrum(modes);
            assert!(
                st.step(&mut v, 1e-3).is_ok(),
                "{scheme} refused the right length"
            );
        }
        let mut adaptive = IfRk43::new(&mut planner, &grid, &eq);
        let mut good = spectrum(modes);
        adaptive.attempt(&mut good, 1e-3, 1e-6).unwrap();
        // After an accepted attempt the scheme reuses its last evaluation: still checked.
        for len in [3, modes - 1, modes + 1, 0] {
            let mut v = spectrum(len);
            assert_shape_error(adaptive.attempt(&mut v, 1e-3, 1e-6), len, modes);
            assert_eq!(v, spectrum(len));
        }
        let mut nl = Nonlinear::new(&mut planner, &grid, &eq);
        assert_shape_error(nl.load(&spectrum(3)), 3, modes);
        assert!(nl.load(&spectrum(modes)).is_ok());
    }
}
