//! The AVX2 copies of the kernels give the same numbers as the baseline copies, bit for bit, so a
//! run's results do not depend on the CPU it ran on. (On a CPU without AVX2 both runs take the
//! baseline path and the test compares it with itself.)

// Test helpers outside #[test] functions may unwrap: a failure is a test failure.
#![allow(clippy::unwrap_used)]

use kdvsweep_core::schemes::{stepper, IfRk43};
use kdvsweep_core::spectral::Transforms;
use kdvsweep_core::{exact, simd, Coefficients, Equation, Grid, Scheme};
use num_complex::Complex64;
use rustfft::FftPlanner;

/// 40 steps of every scheme (and of the adaptive pair) on a 2-soliton, on `n` points.
fn run(n: usize, eq: &Equation) -> Vec<Vec<Complex64>> {
    let grid = Grid::new(n, 40.0).unwrap();
    let x = grid.x();
    let mut u = vec![0.0; n];
    exact::kdv_multisoliton(&x, 0.0, &[1.0, 0.6], &[-5.0, 0.0], 6.0, 1.0, &mut u).unwrap();
    let mut v0 = vec![Complex64::new(0.0, 0.0); grid.modes()];
    Transforms::new(&mut FftPlanner::new(), n)
        .forward(&u, &mut v0)
        .unwrap();
    let mut out = Vec::new();
    for scheme in Scheme::ALL {
        let mut v = v0.clone();
        let mut st = stepper(&mut FftPlanner::new(), scheme, &grid, eq);
        for _ in 0..40 {
            st.step(&mut v, 1e-3).unwrap();
        }
        out.push(v);
    }
    let mut v = v0.clone();
    let mut pair = IfRk43::new(&mut FftPlanner::new(), &grid, eq);
    let mut h = 1e-3;
    for _ in 0..40 {
        h = pair.attempt(&mut v, h, 1e-8).unwrap().h_next;
    }
    out.push(v);
    let mut back = vec![0.0; n];
    Transforms::new(&mut FftPlanner::new(), n)
        .inverse(&v0, &mut back)
        .unwrap();
    out.push(back.iter().map(|&b| Complex64::new(b, 0.0)).collect());
    out
}

#[test]
fn avx2_and_baseline_agree_bit_for_bit() {
    let gardner = Equation::new(
        Coefficients {
            a: 6.0,
            b: -1.5,
            d: 1.0,
            f: 0.01,
            g: 0.01,
            v: 0.001,
        },
        None,
    )
    .unwrap();
    // 256 (a power of two), 200 (half of it divisible by 4), 198 (odd half: no centre mode).
    for n in [256, 200, 198] {
        for eq in [Equation::kdv(), gardner.clone()] {
            simd::force_baseline(false);
            let wide = run(n, &eq);
            simd::force_baseline(true);
            let base = run(n, &eq);
            simd::force_baseline(false);
            for (i, (w, b)) in wide.iter().zip(&base).enumerate() {
                let same = w.iter().zip(b).all(|(x, y)| {
                    x.re.to_bits() == y.re.to_bits() && x.im.to_bits() == y.im.to_bits()
                });
                assert!(
                    same,
                    "n = {n}, run {i}: the AVX2 and baseline results differ"
                );
            }
        }
    }
    println!("AVX2 in use: {}", simd::avx2());
}
