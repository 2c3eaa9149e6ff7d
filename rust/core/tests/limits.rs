//! Limits of the driver: float64 time resolution, the wall-clock time limit, impossible memory.

// Test helpers outside #[test] functions may unwrap: a failure is a test failure.
#![allow(clippy::unwrap_used)]

use std::time::Instant;

use kdvsweep_core::simulation::{memory_bound, MAX_TIME_SPACING};
use kdvsweep_core::{exact, CoreError, Equation, Grid, Scheme, Simulation};

fn soliton_sim(scheme: Scheme, dt: f64) -> Simulation {
    let grid = Grid::new(128, 40.0).unwrap();
    let mut u0 = vec![0.0; grid.n()];
    exact::kdv_multisoliton(&grid.x(), 0.0, &[1.0], &[0.0], 6.0, 1.0, &mut u0).unwrap();
    let mut sim = Simulation::new(grid, &Equation::kdv(), scheme, dt, 1e-8, None).unwrap();
    sim.set_state(&u0, 0.0).unwrap();
    sim
}

#[test]
fn steps_that_cannot_move_a_large_time_are_refused() {
    // Near t = 1e12 float64 numbers are 2^-13 = 1.22e-4 apart (IEEE 754 binary64, common
    // practice, no source): a step of 1e-3 is only 8 spacings, so every scheme refuses it and
    // leaves the time where it was (before this check the time jumped by 1 with no step).
    for scheme in Scheme::ALL {
        let mut sim = soliton_sim(scheme, 1e-3);
        let u = sim.state();
        sim.set_state(&u, 1e12).unwrap();
        let err = sim.advance(1.0).unwrap_err();
        match err {
            CoreError::TimeResolution {
                time,
                step,
                spacing,
                max_ratio,
            } => {
                assert_eq!(time, 1e12);
                assert!(step <= 1e-3 && step > 0.0, "{scheme}: step {step}");
                assert_eq!(spacing, 2f64.powi(-13));
                assert_eq!(max_ratio, MAX_TIME_SPACING);
            }
            other => panic!("{scheme}: expected TimeResolution, got {other:?}"),
        }
        assert_eq!((sim.time(), sim.steps()), (1e12, 0), "{scheme}");
        // At 1e9 the spacing is 2^-23 = 1.19e-7, below 1e-3 of a step: the run proceeds.
        sim.set_state(&u, 1e9).unwrap();
        sim.advance(1.0).unwrap();
        assert_eq!(sim.time(), 1e9 + 1.0, "{scheme}");
        assert!(
            sim.steps() >= 1000 || scheme == Scheme::Adaptive,
            "{scheme}"
        );
        assert!(sim.steps() > 0, "{scheme}");
    }
}

#[test]
fn round_off_short_of_a_time_still_counts_as_reached() {
    // 0.1 + 0.2 - 0.3 is 5.6e-17 (round-off): advancing by it takes no step and is not an error.
    let mut sim = soliton_sim(Scheme::Etdrk4, 1e-3);
    sim.advance(0.3).unwrap();
    let steps = sim.steps();
    sim.advance((0.1 + 0.2) - 0.3).unwrap();
    assert_eq!(sim.steps(), steps);
}

#[test]
fn the_time_limit_stops_a_run_with_a_valid_state() {
    for scheme in [Scheme::Etdrk4, Scheme::Adaptive] {
        let mut sim = soliton_sim(scheme, 1e-6);
        sim.set_time_limit(Some(0.05)).unwrap();
        let start = Instant::now();
        let err = sim.advance(1e6).unwrap_err();
        let elapsed = start.elapsed().as_secs_f64();
        match err {
            CoreError::TimeLimit { limit, time, step } => {
                assert_eq!(limit, 0.05);
                assert!(time > 0.0 && time < 1e6, "{scheme}: {time}");
                assert_eq!(time, sim.time());
                assert_eq!(step, sim.steps());
                assert_eq!(step % 256, 0, "checked where the hook is called");
            }
            other => panic!("{scheme}: expected TimeLimit, got {other:?}"),
        }
        // Bounded: well under a minute even on a loaded machine (the run would take days).
        assert!(elapsed < 30.0, "{elapsed}");
        assert!(sim.state().iter().all(|x| x.is_finite()));
        // The budget counts all stepping since the state was set: the next call stops at once.
        let t = sim.time();
        assert!(matches!(sim.advance(1.0), Err(CoreError::TimeLimit { .. })));
        assert_eq!(sim.time(), t);
        // Setting the state starts a new budget.
        let u = sim.state();
        sim.set_state(&u, 0.0).unwrap();
        sim.advance(1e-4).unwrap();
    }
}

#[test]
fn a_time_limit_must_be_finite_and_positive() {
    let mut sim = soliton_sim(Scheme::Etdrk4, 1e-3);
    for bad in [0.0, -1.0, f64::NAN, f64::INFINITY] {
        assert!(matches!(
            sim.set_time_limit(Some(bad)),
            Err(CoreError::InvalidParameter {
                name: "time_limit",
                ..
            })
        ));
    }
    // A huge limit is no limit in practice (it must not overflow the clock).
    sim.set_time_limit(Some(1e300)).unwrap();
    sim.advance(0.01).unwrap();
    sim.set_time_limit(None).unwrap();
    assert_eq!(sim.time_limit(), None);
}

#[test]
fn an_impossible_grid_is_refused_before_anything_is_allocated() {
    // 2^40 points need hundreds of TiB: more than the address space, so the reservation fails.
    let grid = Grid::new(1 << 40, 10.0).unwrap();
    let bytes = memory_bound(1 << 40);
    assert!(bytes > 1u128 << 47, "{bytes}");
    for scheme in Scheme::ALL {
        let err = Simulation::new(grid.clone(), &Equation::kdv(), scheme, 1e-3, 1e-8, None)
            .err()
            .unwrap();
        assert_eq!(
            err,
            CoreError::OutOfMemory {
                what: "a simulation on this grid",
                bytes
            }
        );
        assert!(err
            .to_string()
            .starts_with("out of memory: cannot allocate 464.00 TiB"));
    }
}
