//! A step allocates nothing (the core's promise for long runs). A counting global allocator in
//! this test binary sees every heap allocation; it counts per thread, so allocations of the test
//! harness's other threads cannot make the test fail.

// Test helpers outside #[test] functions may unwrap: a failure is a test failure.
#![allow(clippy::unwrap_used)]

use std::alloc::{GlobalAlloc, Layout, System};
use std::cell::Cell;

use kdvsweep_core::schemes::{stepper, IfRk43};
use kdvsweep_core::spectral::Transforms;
use kdvsweep_core::{exact, Equation, Grid, Scheme};
use num_complex::Complex64;
use rustfft::FftPlanner;

struct Counting;

thread_local! {
    // Const-initialised: reading it never allocates (no lazy initialisation).
    static ALLOCATIONS: Cell<usize> = const { Cell::new(0) };
}

/// Heap allocations made so far by the calling thread.
fn allocations() -> usize {
    ALLOCATIONS.with(Cell::get)
}

// SAFETY: every call is forwarded unchanged to the system allocator.
unsafe impl GlobalAlloc for Counting {
    unsafe fn alloc(&self, layout: Layout) -> *mut u8 {
        // `try_with`: a thread being torn down has no counter any more; its allocations do not count.
        let _ = ALLOCATIONS.try_with(|n| n.set(n.get() + 1));
        unsafe { System.alloc(layout) }
    }
    unsafe fn dealloc(&self, ptr: *mut u8, layout: Layout) {
        unsafe { System.dealloc(ptr, layout) }
    }
}

#[global_allocator]
static GLOBAL: Counting = Counting;

fn spectrum(grid: &Grid) -> Vec<Complex64> {
    let x = grid.x();
    let mut u = vec![0.0; x.len()];
    exact::kdv_multisoliton(&x, 0.0, &[1.0, 0.6], &[-5.0, 0.0], 6.0, 1.0, &mut u).unwrap();
    let mut v = vec![Complex64::new(0.0, 0.0); grid.modes()];
    Transforms::new(&mut FftPlanner::new(), grid.n())
        .forward(&u, &mut v)
        .unwrap();
    v
}

#[test]
fn steps_do_not_allocate() {
    let start = allocations();
    let witness = std::hint::black_box(vec![1u8; 16]);
    assert!(allocations() > start, "the counter must see allocations");
    drop(witness);
    let grid = Grid::new(256, 40.0).unwrap();
    let eq = Equation::kdv();
    let mut v = spectrum(&grid);
    for scheme in [Scheme::Etdrk4, Scheme::IfRk4, Scheme::Strang] {
        let mut st = stepper(&mut FftPlanner::new(), scheme, &grid, &eq);
        st.step(&mut v, 1e-3).unwrap(); // builds the coefficient set for this step size
        let before = allocations();
        for _ in 0..50 {
            st.step(&mut v, 1e-3).unwrap();
        }
        assert_eq!(allocations(), before, "{scheme} allocated in a step");
    }
    let mut adaptive = IfRk43::new(&mut FftPlanner::new(), &grid, &eq);
    let mut h = 1e-3;
    adaptive.attempt(&mut v, h, 1e-9).unwrap();
    let before = allocations();
    for _ in 0..50 {
        h = adaptive.attempt(&mut v, h, 1e-9).unwrap().h_next;
    }
    assert_eq!(allocations(), before, "adaptive allocated in a step");
}
