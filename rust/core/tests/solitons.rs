//! One-soliton transport against the exact solution, every scheme.

// Test helpers outside #[test] functions may unwrap: a failure is a test failure.
#![allow(clippy::unwrap_used)]

use kdvsweep_core::{exact, Equation, Grid, Scheme, Simulation};

/// The periodic KdV soliton: the sum of the images of `2 k^2 sech^2(k(x - 4 k^2 t - x0))`
/// (Korteweg & de Vries 1895; normalised form e.g. Ablowitz 2011, Eq. 1.5).
fn periodic_kdv(grid: &Grid, t: f64, kappa: f64, x0: f64) -> Vec<f64> {
    let x = grid.x();
    let mut total = vec![0.0; x.len()];
    let mut image = vec![0.0; x.len()];
    let l = grid.length();
    let centre = x0 + 4.0 * kappa * kappa * t;
    let wrapped = centre - l * (centre / l).round();
    for shift in -2..=2 {
        exact::kdv_multisoliton(
            &x,
            0.0,
            &[kappa],
            &[wrapped + shift as f64 * l],
            6.0,
            1.0,
            &mut image,
        )
        .unwrap();
        total.iter_mut().zip(&image).for_each(|(a, b)| *a += b);
    }
    total
}

fn max_error(a: &[f64], b: &[f64]) -> f64 {
    a.iter().zip(b).fold(0.0, |m, (x, y)| m.max((x - y).abs()))
}

#[test]
fn kdv_soliton_20_time_units_all_schemes() {
    let grid = Grid::new(512, 40.0).unwrap();
    let u0 = periodic_kdv(&grid, 0.0, 1.0, -5.0);
    let exact = periodic_kdv(&grid, 20.0, 1.0, -5.0);
    for (scheme, dt, tol) in [
        // 4th order: dt chosen from a convergence run (error 1.8e-8 per 2 time units at dt = 1e-3).
        (Scheme::Etdrk4, 2.5e-4, 1e-8),
        (Scheme::IfRk4, 2.5e-4, 1e-8),
        (Scheme::Strang, 5e-4, 2e-4),
        (Scheme::Adaptive, 1e-3, 1e-7),
    ] {
        let mut sim =
            Simulation::new(grid.clone(), &Equation::kdv(), scheme, dt, 1e-10, None).unwrap();
        sim.set_state(&u0, 0.0).unwrap();
        sim.advance(20.0).unwrap();
        let err = max_error(&sim.state(), &exact);
        eprintln!(
            "{scheme}: steps {} rejected {} max error {err:.3e}",
            sim.steps(),
            sim.rejected()
        );
        assert!(err < tol, "{scheme}: max error {err:.3e} >= {tol:.1e}");
    }
}
