//! A fixed workload for counting the instructions of a step: `steps` steps of one scheme at
//! n = 512 on KdV `u_t + 6 u u_x + u_xxx = 0`, starting from the soliton `2 sech^2(x + 5)`
//! (kappa = 1) on a box of length 40, step 1e-3.
//!
//! Run with `cargo run --release --example step_count -- <scheme> <steps> [--baseline]`, where
//! `<scheme>` is one of the core's schemes (`adaptive` times the adaptive pair's trial step,
//! `attempt`, at the fixed step with a tolerance it always meets); `--baseline` runs the portable
//! copies of the arithmetic kernels even on a CPU with AVX2 (`kdvsweep_core::simd`). The setup (plans, coefficients) is the same for any
//! `steps`, so the difference of two runs under valgrind's callgrind, divided by the difference of
//! their `steps`, is the cost of one step: `bash rust/core/examples/step_count.sh` does that.

use std::hint::black_box;
use std::process::ExitCode;

use kdvsweep_core::schemes::{stepper, IfRk43};
use kdvsweep_core::spectral::Transforms;
use kdvsweep_core::{exact, simd, Equation, Grid, Result, Scheme};
use num_complex::Complex64;
use rustfft::FftPlanner;

const POINTS: usize = 512;
const LENGTH: f64 = 40.0;
const STEP: f64 = 1e-3;

fn run(scheme: Scheme, steps: usize) -> Result<f64> {
    let grid = Grid::new(POINTS, LENGTH)?;
    let eq = Equation::kdv();
    let x = grid.x();
    let mut u = vec![0.0; POINTS];
    exact::kdv_multisoliton(&x, 0.0, &[1.0], &[-5.0], 6.0, 1.0, &mut u)?;
    let mut planner = FftPlanner::<f64>::new();
    let mut v = vec![Complex64::new(0.0, 0.0); grid.modes()];
    Transforms::new(&mut planner, POINTS).forward(&u, &mut v)?;
    match scheme {
        Scheme::Adaptive => {
            let mut pair = IfRk43::new(&mut planner, &grid, &eq);
            for _ in 0..steps {
                black_box(pair.attempt(black_box(&mut v), STEP, 1.0)?);
            }
        }
        Scheme::Etdrk4 | Scheme::IfRk4 | Scheme::Strang => {
            let mut st = stepper(&mut planner, scheme, &grid, &eq);
            for _ in 0..steps {
                black_box(st.step(black_box(&mut v), STEP)?);
            }
        }
    }
    // The mass (mode 0 / n) as a sign of life: 4 kappa = 4 for this soliton.
    Ok(v[0].re / POINTS as f64)
}

fn main() -> ExitCode {
    let mut args: Vec<String> = std::env::args().skip(1).collect();
    if let Some(i) = args.iter().position(|a| a == "--baseline") {
        args.remove(i);
        simd::force_baseline(true);
    }
    let parsed = match args.as_slice() {
        [scheme, steps] => scheme
            .parse::<Scheme>()
            .map_err(|e| e.to_string())
            .and_then(|sc| {
                steps
                    .parse::<usize>()
                    .map(|n| (sc, n))
                    .map_err(|_| format!("steps must be a whole number, got {steps:?}"))
            }),
        _ => Err("usage: step_count <scheme> <steps> [--baseline]".to_string()),
    };
    let (scheme, steps) = match parsed {
        Ok(p) => p,
        Err(msg) => {
            eprintln!("{msg}");
            return ExitCode::FAILURE;
        }
    };
    match run(scheme, steps) {
        Ok(mass) => {
            let kernels = if simd::avx2() { "avx2" } else { "baseline" };
            println!("{scheme}: {steps} steps, mass {mass:.12}, {kernels} kernels");
            ExitCode::SUCCESS
        }
        Err(e) => {
            eprintln!("{e}");
            ExitCode::FAILURE
        }
    }
}
