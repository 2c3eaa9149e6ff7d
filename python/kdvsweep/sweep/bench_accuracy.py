"""The accuracy benchmark (``kdvsweep bench --accuracy``): do the runs reach the accuracy asked for,
and do their error estimates say how far they are?

Two sweeps are run at each target (``[accuracy] shift``, ``dt``, ``points``, positions, length and
end ``"auto"``, every run verified):

- *pairs*: the demo's collisions (KdV, mKdV of the same and of opposite polarities) with the fast
  soliton kappa = 1 and the slow one ``k2`` from 0.3 to 0.7, which for KdV crosses Lax's three
  regimes (absorb-emit above the amplitude ratio 3, mixed between 2.618 and 3, exchange below);
- *triple*: KdV three-solitons kappa = (1, k2, k3), every pair overtaking once: pairs in each of
  Lax's regimes (e.g. (1, 0.6) mixed, (1, 0.75) exchange, (0.6, 0.25) absorb-emit).

For each soliton it compares the measured shift with the pair formula (Gardner, Greene, Kruskal &
Miura 1974; summed over the pairs for three solitons, Zakharov 1971:
:func:`kdvsweep.theory.phase_shifts` with every pair meeting once), relative to the predicted
shift, and with the run's ``shift_error_estimate``. The cost of the runs (steps times ``n log2
n``, without the re-runs of the verification) is set against the same runs at today's hand-picked
settings: the demo's steps (``data/demo.toml``) for the pairs and the three-soliton example's
(``sweeps/three-solitons.toml``: ``dt`` = 2.5e-3) for the triple, both at ``points = "auto"``
without a target and ``sizing.tail`` = 1e-8.

The runs go through the farm (:func:`kdvsweep.sweep.run`) into a temporary store, as a sweep would.
"""

from __future__ import annotations

import math
import tempfile
from collections.abc import Callable, Sequence
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

#: Targets of ``kdvsweep bench --accuracy`` by default.
TARGETS = (1e-5, 1e-7)
#: ``sizing.tail`` of the hand-picked settings (the demo's), and of any run without a target.
HAND_TAIL = 1e-8
#: The slow soliton's kappa of the pairs by default (the demo's range, every other value).
PAIR_K2 = (0.3, 0.4, 0.5, 0.6, 0.7)
#: The triples' (k2, k3) by default.
TRIPLE_K = ((0.6, 0.25), (0.6, 0.35), (0.75, 0.25), (0.75, 0.35))
#: ``--quick``: fewer runs (KdV absorb-emit, mixed and exchange; one triple).
QUICK_PAIR_K2 = (0.3, 0.6, 0.7)
QUICK_TRIPLE_K = ((0.6, 0.35),)
#: The accuracy the hand-picked settings reach (the KdV pair (1, 0.5) at the demo's dt = 2.5e-3 is
#: 3.9e-6 off the formula, see :data:`kdvsweep.sweep.accuracy.ERROR_CONSTANT`): a target at or
#: above it should cost no more than they do.
HAND_TARGET = 1e-5
#: The hand-picked step of each pair equation (the demo's) and of the triple (the example's).
HAND_DT = {("kdv", 1): 2.5e-3, ("mkdv", 1): 6.25e-4, ("mkdv", -1): 3.125e-4}
HAND_TRIPLE_DT = 2.5e-3

_PAIRS = """
[sweep]
name = "accuracy-pairs"

[[vary]]
equation = ["kdv", "mkdv", "mkdv"]
polarity = [1, 1, -1]
{dts}
[[vary]]
k2 = [{k2}]

[model]
equation = "{{equation}}"
scheme = "etdrk4"
dt = {dt}
points = "auto"
length = "auto"

[initial]
kind = "solitons"
kappa = [1.0, "k2"]
position = "auto"
polarity = [1, "polarity"]

[run]
end = "auto"
frame_every = 0.1

[sizing]
tail = {tail!r}
{accuracy}"""

_TRIPLE = """
[sweep]
name = "accuracy-triple"

[[vary]]
k2 = [{k2}]
k3 = [{k3}]

[model]
equation = "kdv"
scheme = "etdrk4"
dt = {dt}
points = "auto"
length = "auto"

[initial]
kind = "solitons"
kappa = [1.0, "k2", "k3"]
position = "auto"

[run]
end = "auto"
frame_every = 0.1

[sizing]
tail = {tail!r}
{accuracy}"""


def _numbers(values: Sequence[float]) -> str:
    return ", ".join(repr(float(v)) for v in values)


def sweep_text(
    kind: str,
    target: float | None,
    pair_k2: Sequence[float] = PAIR_K2,
    triple_k: Sequence[tuple[float, float]] = TRIPLE_K,
) -> str:
    """The sweep file of ``kind`` (``"pairs"`` or ``"triple"``): with a ``target``, ``dt =
    "auto"``, every run verified (the loader then lowers ``sizing.tail`` to a hundredth of the
    target, :func:`kdvsweep.sweep.accuracy.auto_tail`); without, the hand-picked steps."""
    tail = HAND_TAIL
    accuracy = "" if target is None else f"\n[accuracy]\nshift = {target!r}\nverify = 1\n"
    if kind == "pairs":
        dts = f"dt = [{_numbers(list(HAND_DT.values()))}]\n" if target is None else ""
        return _PAIRS.format(
            dts=dts,
            k2=_numbers(pair_k2),
            dt='"dt"' if target is None else '"auto"',
            tail=tail,
            accuracy=accuracy,
        )
    if kind == "triple":
        return _TRIPLE.format(
            k2=_numbers([k[0] for k in triple_k]),
            k3=_numbers([k[1] for k in triple_k]),
            dt=repr(HAND_TRIPLE_DT) if target is None else '"auto"',
            tail=tail,
            accuracy=accuracy,
        )
    raise ValueError(f"accuracy benchmark: unknown sweep {kind!r}; expected 'pairs' or 'triple'")


def initial_rows(spec: Any) -> list[dict[str, Any]]:
    """The input solitons of a run (kappa, sign, ...), left to right."""
    from ..initial import input_solitons

    return input_solitons(spec.initial)


def sweep_cost(text: str, folder: Path) -> float:
    """Steps times ``n log2 n`` summed over a sweep's runs, as the plan counts steps
    (:func:`kdvsweep.sweep.plan.fixed_steps`), without verification re-runs."""
    from .config import load_sweep
    from .plan import fixed_steps

    path = folder / "cost.toml"
    path.write_text(text)
    total = 0.0
    for spec in load_sweep(path).runs:
        n = spec.model.grid.n
        total += fixed_steps(spec.run.record_times, spec.model.dt) * n * math.log2(n)
    return total


@dataclass(frozen=True)
class ShiftCheck:
    """One soliton of one run of the benchmark.

    Attributes
    ----------
    sweep, target
        ``"pairs"`` or ``"triple"``, and the accuracy asked for.
    run_id, label, regimes
        The run, its equation and kappas, and Lax's regime of each KdV pair in it.
    n, dt, t_end, cost
        The run's grid, step, end time and steps times ``n log2 n``.
    soliton, kappa
        Which soliton (left to right at the start).
    predicted
        The pair formula's shift (summed over its collisions).
    error
        ``|shift_measured - predicted| / |predicted|`` (NaN when the run did not report it).
    estimate
        ``shift_error_estimate / |predicted|``.
    balance
        The run's sum rule ``sum_i kappa_i Delta x_i`` of the measured shifts (zero for any
        collision: :func:`kdvsweep.theory.shift_balance`) over ``sum_i |kappa_i Delta x_i|``
        (NaN when a shift was not reported).
    """

    sweep: str
    target: float
    run_id: int
    label: str
    regimes: str
    n: int
    dt: float
    t_end: float
    cost: float
    soliton: int
    kappa: float
    predicted: float
    error: float
    estimate: float
    balance: float = math.nan

    @property
    def reported(self) -> bool:
        """The run reported the shift (its uncertainty is within the target)."""
        return math.isfinite(self.error)

    @property
    def brackets(self) -> bool:
        """The estimate is at least the error."""
        return self.reported and math.isfinite(self.estimate) and self.estimate >= self.error

    @property
    def understatement(self) -> float:
        """``error / estimate`` (above 1: the estimate understates the error)."""
        if not self.reported:
            return math.nan
        return self.error / self.estimate if self.estimate > 0 else math.inf


@dataclass
class AccuracyBenchmark:
    """What :func:`measure` found.

    Attributes
    ----------
    checks
        One :class:`ShiftCheck` per soliton and run.
    costs
        ``{(sweep, target): cost}``: the runs' steps times ``n log2 n``.
    verified_costs
        The same with the verification re-runs (their steps as run).
    hand_costs
        ``{sweep: cost}`` of the same runs at the hand-picked settings.
    failures
        Runs that failed or whose analysis did not finish, with the reason.
    """

    checks: list[ShiftCheck] = field(default_factory=list)
    costs: dict[tuple[str, float], float] = field(default_factory=dict)
    verified_costs: dict[tuple[str, float], float] = field(default_factory=dict)
    hand_costs: dict[str, float] = field(default_factory=dict)
    failures: list[str] = field(default_factory=list)

    def summary(self, target: float) -> dict[str, float]:
        """For one target: shifts, how many were reported and within the target, the largest
        error, the fraction whose estimate brackets the error, the largest understatement, and
        the cost over the hand-picked one (both sweeps together)."""
        rows = [c for c in self.checks if c.target == target]
        reported = [c for c in rows if c.reported]
        sweeps = {c.sweep for c in rows}
        cost = sum(self.costs.get((s, target), 0.0) for s in sweeps)
        hand = sum(self.hand_costs.get(s, 0.0) for s in sweeps)
        return {
            "shifts": float(len(rows)),
            "reported": float(len(reported)),
            "within": float(sum(c.error <= target for c in reported)),
            "max_error": max((c.error for c in reported), default=math.nan),
            "bracketed": (
                sum(c.brackets for c in reported) / len(reported) if reported else math.nan
            ),
            "max_understatement": max((c.understatement for c in reported), default=math.nan),
            "cost_ratio": cost / hand if hand > 0 else math.nan,
        }


def _regimes(kappas: Sequence[float], family: str) -> str:
    from .. import theory

    if family != "kdv":
        return ""
    out = []
    for i in range(len(kappas)):
        for j in range(i + 1, len(kappas)):
            out.append(theory.interaction_regime(kappas[i], kappas[j]))
    return ",".join(out)


def _checks(
    sweep: str, target: float, folder: Path, text: str, workers: int
) -> tuple[list[ShiftCheck], list[str], float]:
    """Run one sweep through the farm and compare each shift with the formula; also the cost of
    its runs with their verification re-runs (the steps as run: the run, twice its steps at
    ``dt / 2``, its steps on ``2 n`` points)."""
    from .. import theory
    from ..results import load
    from .config import load_sweep
    from .farm import run

    path = folder / f"{sweep}-{target:g}.toml"
    path.write_text(text)
    specs = {spec.run_id: spec for spec in load_sweep(path).runs}
    out = folder / f"{sweep}-{target:g}"
    run(path, out, workers=workers)
    tables = load(out)
    runs = tables.runs.set_index("run_id")
    checks, failures = [], []
    verified = 0.0
    for run_id, spec in specs.items():
        row = runs.loc[run_id]
        if row["status"] != "ok" or row.get("analysis_status") != "ok":
            failures.append(f"{sweep} run {run_id}: {row['status']}: {row.get('reason')}")
            continue
        n = spec.model.grid.n
        steps = float(row["steps"])
        verified += 3 * steps * n * math.log2(n) + steps * 2 * n * math.log2(2 * n)
        solitons = tables.solitons[tables.solitons["run_id"] == run_id].sort_values("soliton")
        kappas = [float(k) for k in solitons["kappa"]]
        eq = spec.model.equation
        predicted = theory.phase_shifts(kappas, eq)  # every pair once (Gardner et al. 1974)
        family = eq.soliton_form.family
        polarity = int(spec.params.get("polarity", 1))
        name = eq.name if family == "kdv" else f"{eq.name} {polarity:+d}"
        label = f"{name} kappa=({', '.join(f'{k:g}' for k in kappas)})"
        shifts = [float(v) for v in solitons["shift_measured"]]
        weights = sum(abs(k * d) for k, d in zip(kappas, shifts, strict=True))
        balance = theory.shift_balance(kappas, shifts) / weights if weights > 0 else math.nan
        for (_, sol), pred in zip(solitons.iterrows(), predicted, strict=True):
            measured = float(sol["shift_measured"])
            checks.append(
                ShiftCheck(
                    sweep=sweep,
                    target=target,
                    run_id=int(run_id),
                    label=label,
                    regimes=_regimes(kappas, family),
                    n=n,
                    dt=float(spec.model.dt),
                    t_end=float(spec.run.t_end),
                    cost=steps * n * math.log2(n),
                    soliton=int(sol["soliton"]),
                    kappa=float(sol["kappa"]),
                    predicted=float(pred),
                    error=abs(measured - pred) / abs(pred),
                    estimate=float(sol["shift_error_estimate"]) / abs(pred),
                    balance=balance,
                )
            )
    return checks, failures, verified


def measure(
    targets: Sequence[float] = TARGETS,
    sweeps: Sequence[str] = ("pairs", "triple"),
    workers: int = 2,
    pair_k2: Sequence[float] = PAIR_K2,
    triple_k: Sequence[tuple[float, float]] = TRIPLE_K,
    on_message: Callable[[str], None] | None = None,
) -> AccuracyBenchmark:
    """Run the benchmark's sweeps at each target (see the module's docstring)."""
    for target in targets:
        if not (math.isfinite(target) and 0 < target < 1):
            raise ValueError(f"accuracy benchmark: target {target!r}: expected a number in (0, 1)")
    result = AccuracyBenchmark()
    with tempfile.TemporaryDirectory(prefix="kdvsweep-accuracy-") as tmp:
        folder = Path(tmp)
        for sweep in sweeps:
            result.hand_costs[sweep] = sweep_cost(
                sweep_text(sweep, None, pair_k2, triple_k), folder
            )
            for target in targets:
                if on_message is not None:
                    on_message(f"{sweep} at target {target:g}")
                text = sweep_text(sweep, target, pair_k2, triple_k)
                result.costs[(sweep, target)] = sweep_cost(text, folder)
                checks, failures, verified = _checks(sweep, target, folder, text, workers)
                result.checks += checks
                result.failures += failures
                result.verified_costs[(sweep, target)] = verified
    return result


__all__ = [
    "HAND_DT",
    "HAND_TAIL",
    "HAND_TARGET",
    "HAND_TRIPLE_DT",
    "PAIR_K2",
    "QUICK_PAIR_K2",
    "QUICK_TRIPLE_K",
    "TARGETS",
    "TRIPLE_K",
    "AccuracyBenchmark",
    "ShiftCheck",
    "initial_rows",
    "measure",
    "sweep_cost",
    "sweep_text",
]
