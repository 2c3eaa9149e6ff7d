//! Embedding the core in a Rust program: step a profile of your own with the crate alone.
//!
//! Run with `cargo run --release --example embed`.

use kdvsweep_core::{invariants, Equation, Grid, Result, Scheme, Simulation};

fn main() -> Result<()> {
    // A hump that is not a soliton: under KdV it sheds solitons and a dispersive tail.
    let grid = Grid::new(1024, 100.0)?;
    let u0: Vec<f64> = grid
        .x()
        .iter()
        .map(|x| 2.0 * (-(x + 30.0).powi(2) / 4.0).exp())
        .collect();
    let eq = Equation::kdv();
    let mut sim = Simulation::new(grid.clone(), &eq, Scheme::Etdrk4, 5e-4, 1e-9, None)?;
    sim.set_state(&u0, 0.0)?;
    let before = invariants(&u0, &grid, &eq)?;
    let times = [1.0, 2.0, 4.0];
    let mut frames = vec![0.0; times.len() * grid.n()];
    sim.record(&times, &mut frames, &mut || true)?;
    for (t, frame) in times.iter().zip(frames.chunks_exact(grid.n())) {
        let peak = frame.iter().cloned().fold(f64::MIN, f64::max);
        let inv = invariants(frame, &grid, &eq)?;
        println!(
            "t = {t:4.1}  max u = {peak:.6}  mass drift = {:.2e}  energy drift = {:.2e}",
            (inv.mass - before.mass) / before.mass.abs(),
            (inv.energy - before.energy) / before.energy.abs()
        );
    }
    println!("{} steps", sim.steps());
    Ok(())
}
