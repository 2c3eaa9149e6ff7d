"""Step your own NumPy array with kdvsweep and watch the invariants.

A Gaussian hump is not a soliton: under KdV it sheds a train of solitons and a dispersive tail.
Mass, momentum and energy stay constant all the while, which is the first thing to check on any
run. Run with ``python examples/step_own_array.py`` (about a second).
"""

from __future__ import annotations

import numpy as np

import kdvsweep as kv


def row(t: float, u: np.ndarray, inv: dict[str, float]) -> str:
    """One line of the table."""
    values = " ".join(f"{inv[key]:>12.8f}" for key in ("mass", "momentum", "energy"))
    return f"{t:>5.1f} {u.max():>9.4f} {values}"


def main() -> None:
    """Step a Gaussian under KdV and print its peak and invariants at a few times."""
    grid = kv.Grid(n=1024, length=100.0)
    u0 = 2.0 * np.exp(-((grid.x + 30.0) ** 2) / 4.0)  # any float array of length n will do

    sim = kv.Simulation(grid, kv.Equation.kdv(), scheme="etdrk4", dt=1e-3)
    sim.set_state(u0)
    start = sim.invariants()

    times = np.array([0.5, 1.0, 2.0, 4.0])
    frames = sim.record(times)  # the state exactly at each time, shape (4, n)

    print(f"{'t':>5} {'max u':>9} {'mass':>12} {'momentum':>12} {'energy':>12}")
    print(row(0.0, u0, start))
    for t, u in zip(times, frames, strict=True):
        print(row(t, u, kv.invariants(u, grid, sim.equation)))

    end = sim.invariants()
    drift = max(abs(end[key] - start[key]) / abs(start[key]) for key in start)
    print(f"steps: {sim.steps}, largest relative drift of an invariant: {drift:.1e}")


if __name__ == "__main__":
    main()
