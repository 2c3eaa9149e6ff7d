"""Which figures a store can give, and drawing them: each with its one-line reason when not.

:func:`plan_figures` lists the figures of a store (each with the one-line reason when it cannot be
drawn), :func:`draw` makes one, :func:`iter_figures` and :func:`plot_store` make and save them all.
Each run's equation is read from the store (``eq_a`` .. ``eq_v``, ``dealias``), never from a name.
"""

from __future__ import annotations

import os
import tomllib
from collections.abc import Iterator, Mapping, Sequence
from dataclasses import dataclass, field
from pathlib import Path
from typing import TYPE_CHECKING, Any

import numpy as np
import pandas as pd
from matplotlib.figure import Figure

from .. import units as physunits
from ..analysis import RunAnalysis, analyse_run
from ..analysis.content import ContentMeasurement, measure_content
from ..exceptions import ConfigError, KdvsweepError
from ..model import Equation, Grid
from .figures import (
    FORMATS,
    add_caution,
    adiabatic_decay,
    check_formats,
    content_comparison,
    figure_style,
    format_value,
    readable_unit,
    relative_error,
    save,
    shift_comparison,
    spacetime,
)

if TYPE_CHECKING:
    from ..results import Results


@dataclass(frozen=True)
class FigurePlan:
    """One figure of a store: what to draw, or the one-line reason it cannot be drawn.

    Attributes
    ----------
    stem
        File name without suffix (``shift_comparison``, ``relative_error_k2``, ``spacetime_run4``,
        ``content_comparison``).
    kind
        ``"shift_comparison"``, ``"relative_error"``, ``"spacetime"`` or
        ``"content_comparison"``.
    parameter
        The horizontal axis of a relative-error figure.
    run_id
        The run of a space-time figure.
    group_by, color_by
        Columns splitting the series, and colouring scattered points.
    reason
        Empty when the figure can be drawn; else why not, in one line.
    notes
        One-line caveats of a figure that is drawn (e.g. runs left out).
    """

    stem: str
    kind: str
    parameter: str | None = None
    run_id: int | None = None
    group_by: tuple[str, ...] = ()
    color_by: str | None = None
    reason: str = ""
    notes: tuple[str, ...] = ()

    @property
    def drawable(self) -> bool:
        """True when the figure can be drawn."""
        return not self.reason


@dataclass
class FigureOutcome:
    """What became of one :class:`FigurePlan`: the files written, and the one-line notes."""

    plan: FigurePlan
    paths: list[Path] = field(default_factory=list)
    notes: list[str] = field(default_factory=list)


def _series_columns(runs: pd.DataFrame, parameters: Sequence[str], x: str | None) -> list[str]:
    """Swept parameters with few values, used to split series (not the horizontal one)."""
    out: list[str] = []
    for p in parameters:
        if p != x and p in runs.columns and runs[p].nunique(dropna=False) <= 6:
            # A parameter zipped with those already chosen (fixed by them) adds no information.
            if out and runs.groupby(out, dropna=False)[p].nunique(dropna=False).max() == 1:
                continue
            out.append(p)
    return out


def _axis_parameters(runs: pd.DataFrame, parameters: Sequence[str]) -> list[str]:
    """Numeric swept parameters with enough values for a curve."""
    return [
        p
        for p in parameters
        if p in runs.columns and pd.api.types.is_numeric_dtype(runs[p]) and runs[p].nunique() > 3
    ]


def _equations(runs: pd.DataFrame) -> tuple[dict[int, Equation], str]:
    """The equation of each run, read from its row; and the error when the store lacks them."""
    out: dict[int, Equation] = {}
    for row in runs.to_dict("records"):
        try:
            out[int(row["run_id"])] = Equation.from_columns(row)
        except ConfigError as err:
            return {}, str(err)
    return out, ""


def _describe_equations(equations: Sequence[Equation]) -> str:
    forms = sorted({eq.describe() for eq in equations})
    more = f" and {len(forms) - 2} more" if len(forms) > 2 else ""
    return "; ".join(forms[:2]) + more


def plan_figures(
    results: Results, parameter: str | None = None, runs: Sequence[int] | None = None
) -> list[FigurePlan]:
    """The standard figures of a store, each with the reason when it cannot be drawn.

    Parameters
    ----------
    results
        The store's tables (:func:`kdvsweep.load`).
    parameter
        Swept parameter for the relative-error figure; default every numeric swept parameter with
        more than three values.
    runs
        Run ids for space-time diagrams; default the first stored run of each series (at most 4).

    Returns
    -------
    list of FigurePlan

    Raises
    ------
    ConfigError
        A requested run is not stored, failed or kept no frames; ``parameter`` is not a column.
    """
    params = results.parameters
    table = results.runs
    ok = table[table["status"] == "ok"] if "status" in table else table
    if parameter is not None and parameter not in ok.columns:
        raise ConfigError(
            f"plot: no parameter {parameter!r} in the runs table; swept parameters: "
            f"{', '.join(params) or 'none'}"
        )
    plans = _shift_plans(results, ok, params, parameter) if _collisions(results) else []
    plans.append(_decay_plan(results, ok, params))
    if _content(results):
        plans.append(_content_plan(results, ok, params))
    for run_id in (
        runs if runs is not None else _default_runs(ok, _series_columns(ok, params, None))
    ):
        plans.append(_spacetime_plan(results, int(run_id), explicit=runs is not None))
    return plans


def _shift_plans(
    results: Results, ok: pd.DataFrame, params: Sequence[str], parameter: str | None
) -> list[FigurePlan]:
    """Plans of the shift comparison and the relative-error figures."""
    axes = [parameter] if parameter else _axis_parameters(ok, params)
    stems: list[tuple[str, str, str | None]] = [("shift_comparison", "shift_comparison", None)]
    stems += [(f"relative_error_{p}", "relative_error", p) for p in axes]

    def none_drawn(reason: str) -> list[FigurePlan]:
        return [FigurePlan(stem, kind, parameter=p, reason=reason) for stem, kind, p in stems]

    solitons = results.solitons
    if solitons.empty:
        return none_drawn("the store has no soliton rows (no run started from solitons)")
    equations, missing = _equations(ok)
    if missing:
        return none_drawn(missing)
    if solitons.groupby("run_id").size().max() < 2:
        return none_drawn(
            "every run has one soliton: no collision, so no phase shift (its decay under g or v "
            "is in adiabatic_decay)"
        )
    kept, why_not = _shift_runs(solitons, equations)
    notes: tuple[str, ...] = ()
    if why_not:
        if not kept:
            return none_drawn("; ".join(why_not))
        notes = tuple(f"left out: {why}" for why in why_not)
    measured = solitons[solitons["run_id"].isin(kept)].dropna(
        subset=["shift_predicted", "shift_measured"]
    )
    if measured.empty:
        return none_drawn(
            "no run has measured shifts (see the reason column of `kdvsweep table OUT --runs`)"
        )
    sub = ok[ok["run_id"].isin(kept)]
    perturbation = perturbation_column(sub, params, {r: equations[r] for r in kept})
    plans = []
    for stem, kind, p in stems:
        series = tuple(_series_columns(sub, params, p if p else (axes[0] if axes else None)))
        if perturbation is not None:  # the colour tells the perturbation; panels stay for others
            series = tuple(c for c in series if c != perturbation)
        color_by = perturbation if perturbation != p else None
        if p is not None and color_by is None:
            others = [q for q in _axis_parameters(sub, params) if q != p and q not in series]
            if others:
                color_by = others[0]
        plans.append(FigurePlan(stem, kind, p, None, series, color_by, "", notes))
    return plans


#: The coefficients of the perturbation terms (fifth-order dispersion, damping, viscosity).
PERTURBATION_TERMS = ("f", "g", "v")


def _shift_runs(
    solitons: pd.DataFrame, equations: dict[int, Equation]
) -> tuple[list[int], list[str]]:
    """The runs of the shift figures, and why others are left out (one line each): runs whose
    equation has no soliton form, and perturbed runs whose shifts were not measured against
    reference runs (lines fitted before and after do not share a slope there)."""
    formed = _with_form(equations)
    nothing = [equations[r] for r in equations if r not in set(formed)]
    reference = set()
    if "shift_method" in solitons:
        reference = set(solitons.loc[solitons["shift_method"] == "reference", "run_id"].tolist())
    asymptotes = [r for r in formed if equations[r].perturbed and r not in reference]
    kept = [r for r in formed if r not in set(asymptotes)]
    notes = []
    if nothing:
        notes.append(
            "phase shifts are predicted for KdV, focusing mKdV and Gardner solitons only; "
            f"{len(nothing)} run(s) have {_describe_equations(nothing)}"
        )
    if asymptotes:
        notes.append(
            f"{len(asymptotes)} perturbed run(s) have no shift measured against reference runs "
            f"({_describe_equations([equations[r] for r in asymptotes])})"
        )
    return kept, notes


def _with_form(equations: dict[int, Equation]) -> list[int]:
    """Runs whose equation has a soliton form (KdV, focusing mKdV, Gardner; perturbed or not)."""
    return [rid for rid, eq in equations.items() if eq.soliton_form_or_none() is not None]


def perturbation_column(
    runs: pd.DataFrame, params: Sequence[str], equations: dict[int, Equation]
) -> str | None:
    """The column that tells a perturbation sweep's runs apart: the swept parameter equal to the
    first of ``f, g, v`` that differs between the runs, else that coefficient's ``eq_<term>``
    column; None when every run has the same ``f, g, v``."""
    for term in PERTURBATION_TERMS:
        values = {rid: getattr(eq, term) for rid, eq in equations.items()}
        if len(set(values.values())) <= 1:
            continue
        rows = runs[runs["run_id"].isin(list(values))]
        wanted = rows["run_id"].map(values).to_numpy(dtype=float)
        for p in params:
            if p in rows and pd.api.types.is_numeric_dtype(rows[p]):
                if np.array_equal(rows[p].to_numpy(dtype=float), wanted):
                    return p
        return f"eq_{term}"
    return None


def _decay_plan(results: Results, ok: pd.DataFrame, params: Sequence[str]) -> FigurePlan:
    """The adiabatic-decay figure: end-of-run amplitudes of damped or viscous solitons."""
    stem = "adiabatic_decay"
    sol = results.solitons
    if not _collisions(results):
        return FigurePlan(
            stem,
            stem,
            reason="end-of-run amplitudes are measured for soliton initial data only; this "
            "store's data are profiles or files (see content_comparison)",
        )
    if "amplitude_end" not in sol or "amplitude_predicted" not in sol:
        return FigurePlan(
            stem,
            stem,
            reason="the store has no amplitude_end column (written before end-of-run values were "
            "measured); run the sweep again into a new folder",
        )
    equations, missing = _equations(ok)
    if missing:
        return FigurePlan(stem, stem, reason=missing)
    decaying = [r for r, eq in equations.items() if eq.g != 0 or eq.v != 0]
    if not decaying:
        return FigurePlan(
            stem,
            stem,
            reason="no run has damping or viscosity (g = v = 0 in every run): nothing decays",
        )
    kept = [r for r in _with_form(equations) if equations[r].f == 0]
    rows = sol[sol["run_id"].isin(kept)].dropna(subset=["amplitude_end", "amplitude_predicted"])
    rows = rows[rows["run_id"].isin(decaying)]
    fifth = [r for r in decaying if equations[r].f != 0]
    no_prediction = f"no adiabatic prediction with f != 0 ({len(fifth)} run(s))"
    if rows.empty:
        return FigurePlan(
            stem,
            stem,
            reason=no_prediction
            if len(fifth) == len(decaying)
            else "no damped or viscous soliton has both amplitude_end and amplitude_predicted "
            "(see the reason column of `kdvsweep table OUT --runs`)",
        )
    notes = []
    if fifth:
        notes.append(f"left out: {no_prediction}")
    shown = sol[sol["run_id"].isin(kept)]
    lacking = int(shown[["amplitude_end", "amplitude_predicted"]].isna().any(axis=1).sum())
    if lacking:
        notes.append(
            f"{lacking} soliton(s) without an end amplitude or a prediction (not apart in the "
            "last frames, or no prediction: see the runs' reason)"
        )
    decay_runs = {r: equations[r] for r in kept if r in set(decaying)}
    perturbation = perturbation_column(ok, params, decay_runs)
    return FigurePlan(stem, stem, parameter=perturbation, color_by=perturbation, notes=tuple(notes))


def _layout(results: Results) -> dict[str, object]:
    layout = results.manifest.get("layout", {})
    return layout if isinstance(layout, dict) else {}


def _collisions(results: Results) -> bool:
    """The store's runs start from solitons (the collision analysis and its shift figures)."""
    return bool(_layout(results).get("analysis", True))


def _content(results: Results) -> bool:
    """The store has the soliton content's columns (profile data, or ``predict_content``)."""
    return bool(_layout(results).get("content", False)) and "kind" in results.solitons


def _content_plan(results: Results, ok: pd.DataFrame, params: Sequence[str]) -> FigurePlan:
    """The content figure, coloured by the first swept parameter that varies (numeric first)."""
    stem = "content_comparison"
    sol = results.solitons
    sol = sol[sol["run_id"].isin(ok["run_id"])]
    if "found" not in sol or not sol["found"].astype("boolean").fillna(False).any():
        return FigurePlan(
            stem,
            stem,
            reason="no measured soliton is matched to a predicted one (see ist_status and "
            "content_status in `kdvsweep table OUT --runs`)",
        )
    varying = [p for p in params if p in ok.columns and ok[p].nunique() > 1]
    numeric = [p for p in varying if pd.api.types.is_numeric_dtype(ok[p])]
    color_by = next(iter(numeric or varying), None)
    notes: tuple[str, ...] = ()
    missing = int((~sol["found"].astype("boolean").fillna(False)).sum())
    if missing:
        notes = (f"{missing} predicted soliton(s) not measured: crosses on the axis (see note)",)
    return FigurePlan(stem, stem, color_by=color_by, notes=notes)


def _spacetime_plan(results: Results, run_id: int, explicit: bool) -> FigurePlan:
    stem = f"spacetime_run{run_id}"
    table = results.runs
    row = table[table["run_id"] == run_id]
    if row.empty:
        ids = table["run_id"].to_numpy()
        have = f"stored run ids {ids.min()}..{ids.max()}" if ids.size else "no run is stored"
        raise ConfigError(f"plot: run {run_id} is not in the store {results.path} ({have})")
    rec = row.iloc[0]
    if rec.get("status", "ok") != "ok":
        raise ConfigError(f"plot: run {run_id} failed ({rec.get('reason')}); it has no frames")
    if int(rec.get("frames_stored", 0) or 0) == 0:
        raise ConfigError(
            f"plot: run {run_id} kept no frames; set keep_frames = true in the sweep's [run] "
            "table and run it into a new folder"
        )
    try:
        eq = Equation.from_columns(rec.to_dict())
    except ConfigError as err:
        return FigurePlan(stem, "spacetime", run_id=run_id, reason=str(err))
    notes: tuple[str, ...] = ()
    if eq.soliton_form_or_none() is None:
        what = "collision analysis" if _collisions(results) else "content measurement"
        notes = (
            f"field only: the {what} follows KdV, focusing-mKdV and Gardner solitons; "
            f"this run has {eq.describe()}",
        )
    return FigurePlan(stem, "spacetime", run_id=run_id, notes=notes)


def _default_runs(runs: pd.DataFrame, series: Sequence[str]) -> list[int]:
    if "frames_stored" in runs:
        runs = runs[runs["frames_stored"] > 0]
    if runs.empty:
        return []
    if not series:
        return [int(runs["run_id"].iloc[0])]
    firsts = [int(part["run_id"].iloc[0]) for _, part in runs.groupby(list(series), sort=True)]
    if len(firsts) <= 4:
        return firsts
    # four series spread over all of them (first and last included), not the first four
    return [firsts[round(i)] for i in np.linspace(0, len(firsts) - 1, 4)]


def _joined(results: Results, *extra: str | None) -> pd.DataFrame:
    """Soliton rows of the ok runs with their runs' parameters (and the runs' columns ``extra``,
    e.g. ``eq_g``)."""
    params = results.parameters
    table = results.runs
    ok = table[table["status"] == "ok"] if "status" in table else table
    wanted = {c for c in extra if c and c not in results.solitons.columns}
    keep = ["run_id", *(c for c in ok.columns if c in params or c == "equation" or c in wanted)]
    return results.solitons.merge(ok[list(dict.fromkeys(keep))], on="run_id", how="inner")


# --- physical units ----------------------------------------------------------------------------


def store_units(results: Results) -> type[physunits.System] | None:
    """The ``[units]`` system of a store (its class: ``UNITS``, ``WATER``), or ``None``."""
    name = physunits.store_system(results.manifest)
    return physunits.SYSTEMS[name] if name is not None else None


def parameter_labels(results: Results) -> dict[str, str]:
    """Axis labels with units of the swept parameters whose unit the sweep file tells: one used
    alone as a ``[units]`` key (``depth = "depth"``: metres) or as a size of ``[initial]``
    (``amplitude = ["phi", 0.08]``: the system's height unit). Empty without ``[units]``."""
    system = store_units(results)
    if system is None:
        return {}
    try:
        doc = tomllib.loads(str(results.manifest.get("sweep_text", "")))
    except tomllib.TOMLDecodeError:
        return {}
    params = set(results.parameters)
    out: dict[str, str] = {}

    def name_of(value: Any) -> str | None:
        text = value.strip() if isinstance(value, str) else None
        return text if text in params else None

    units = doc.get("units", {})
    keys = {p.key: p.unit for p in system.PARAMETERS}
    for key, value in units.items() if isinstance(units, dict) else ():
        name = name_of(value)
        if name is not None and key in keys:
            out.setdefault(name, f"{name} ({keys[key]})")
    initial = doc.get("initial", {})
    for key, dimension in physunits.INITIAL_DIMENSIONS.items():
        raw = initial.get(key) if isinstance(initial, dict) else None
        for value in raw if isinstance(raw, list) else [raw]:
            name = name_of(value)
            unit = system.UNITS.get(dimension)
            if name is not None and unit:
                out.setdefault(name, f"{name} ({unit})")
    return out


#: Canonical columns of the figures and the physical ones shown in their place (``phys_*``).
_PHYSICAL_COLUMNS = {
    "shift_predicted": "phys_shift_predicted",
    "shift_measured": "phys_shift_measured",
    "shift_uncertainty": "phys_shift_uncertainty",
    "amplitude_end": "phys_amplitude_end",
    "amplitude_predicted": "phys_amplitude_predicted",
    "amplitude": "phys_amplitude",
    "amplitude_ist": "phys_amplitude_ist",
    "amplitude_uncertainty": "phys_amplitude_uncertainty",
    "speed_uncertainty": "phys_speed_uncertainty",
}


def physical_rows(rows: pd.DataFrame, runs: pd.DataFrame, columns: Sequence[str]) -> pd.DataFrame:
    """``rows`` (solitons joined with their runs) with the canonical ``columns`` replaced by their
    ``phys_*`` twins; speeds (``speed``, ``speed_ist``) become speeds in the run's frame,
    ``phys_* - phys_c0``. Raises KeyError when a physical column is missing (an older store)."""
    out = rows.copy()
    frame = ["phys_c0", "phys_height_scale"]
    if any(c not in out for c in frame):
        extra = runs[["run_id", *(c for c in frame if c not in out)]]
        out = out.merge(extra, on="run_id", how="left")
    for column in columns:
        if column in ("speed", "speed_ist"):
            out[column] = out[f"phys_{column}"] - out["phys_c0"]
        elif column in out:
            out[column] = out[_PHYSICAL_COLUMNS[column]]
    return out


def _decay_figure(
    results: Results,
    merged: pd.DataFrame,
    plan: FigurePlan,
    equations: dict[int, Equation],
    notes: list[str],
) -> Figure:
    """The adiabatic-decay figure of the runs with damping or viscosity (and none with f)."""
    keep = [r for r, eq in equations.items() if (eq.g != 0 or eq.v != 0) and eq.f == 0]
    rows = merged[merged["run_id"].isin(keep)].copy()
    rows["amplitude_start"] = [
        _start_amplitude(equations[int(r)], k, sg)
        for r, k, sg in zip(rows["run_id"], rows["kappa"], rows["sign"], strict=True)
    ]
    if plan.parameter is not None and (rows[plan.parameter] <= 0).any():
        notes.append(f"runs with {plan.parameter} <= 0 are on the left panel only (log axis)")
    count = rows["run_id"].nunique()
    title = (
        f"{results.manifest.get('sweep_name', '')}: amplitude at the end of {count} damped or "
        "viscous run(s) against the adiabatic law"
    )
    system = _physical_system(results, rows, ("amplitude_end", "amplitude_predicted"))
    unit = None
    if system is not None:
        rows = physical_rows(rows, results.runs, ("amplitude_end", "amplitude_predicted"))
        rows["amplitude_start"] = rows["amplitude_start"] * rows["phys_height_scale"]
        unit = system.UNITS["height"]
    labels = parameter_labels(results)
    return adiabatic_decay(rows, plan.parameter, plan.color_by, title, unit, labels)


def _physical_system(
    results: Results, rows: pd.DataFrame, columns: Sequence[str]
) -> type[physunits.System] | None:
    """The store's ``[units]`` system when ``rows`` have the ``phys_*`` twins of ``columns``
    (stores with units always do); else ``None`` (the canonical figure)."""
    system = store_units(results)
    if system is None:
        return None
    wanted = [_PHYSICAL_COLUMNS.get(c, f"phys_{c}") for c in columns]
    return system if all(c in rows for c in wanted) else None


def _start_amplitude(eq: Equation, kappa: float, sign: float) -> float:
    """The soliton's amplitude at t = 0 from its kappa (NaN when unknown)."""
    try:
        return float(eq.soliton_form.amplitude(float(kappa), int(sign)))
    except (ConfigError, ValueError, TypeError):
        return float("nan")


def draw(results: Results, plan: FigurePlan) -> tuple[Figure, list[str]]:
    """Draw one planned figure; returns it with the one-line notes found while drawing.

    Raises
    ------
    ConfigError
        The plan cannot be drawn (its ``reason``).
    """
    if plan.reason:
        raise ConfigError(f"{plan.stem}: {plan.reason}")
    notes = list(plan.notes)
    if plan.kind == "spacetime":
        assert plan.run_id is not None
        return _spacetime_of_run(results, plan.run_id, notes), notes
    if plan.kind == "content_comparison":
        merged = _joined(results)
        runs = results.runs["run_id"].nunique()
        kinds = merged.loc[merged["found"].astype("boolean").fillna(False), "kind"]
        title = (
            f"{results.manifest.get('sweep_name', '')}: {int((kinds == 'soliton').sum())} "
            f"solitons, {int((kinds == 'breather').sum())} breathers measured in {runs} runs"
        )
        quantities = [c for c in CONTENT_COLUMNS if c in merged]
        system = _physical_system(results, merged, quantities)
        units: Mapping[str, str] | None = None
        if system is not None:
            merged = physical_rows(merged, results.runs, quantities)
            units = system.UNITS
        labels = parameter_labels(results)
        fig = content_comparison(merged, plan.color_by, title, units, labels)
        return fig, notes
    table = results.runs
    ok = table[table["status"] == "ok"] if "status" in table else table
    equations, _ = _equations(ok)
    merged = _joined(results, plan.color_by, plan.parameter)
    if plan.kind == "adiabatic_decay":
        merged = merged[merged["run_id"].isin(_with_form(equations))]
        return _decay_figure(results, merged, plan, equations, notes), notes
    kept, _ = _shift_runs(results.solitons, equations)
    merged = merged[merged["run_id"].isin(kept)]
    labels = parameter_labels(results)
    if plan.kind == "shift_comparison":
        system = _physical_system(results, merged, SHIFT_COLUMNS)
        unit = None
        if system is not None:
            merged = physical_rows(merged, results.runs, SHIFT_COLUMNS)
            size = float(merged[list(SHIFT_COLUMNS[:2])].abs().max().max())
            unit, factor = readable_unit(system.UNITS["length"], size)  # mm for a plasma's
            for column in SHIFT_COLUMNS:
                if column in merged:
                    merged[column] = merged[column] / factor
        fig = shift_comparison(
            merged, plan.group_by, color_by=plan.color_by, unit=unit, column_labels=labels
        )
        return fig, notes
    assert plan.parameter is not None
    fig = relative_error(
        merged, plan.parameter, plan.group_by, color_by=plan.color_by, column_labels=labels
    )
    return fig, notes


#: The columns of the shift figures shown in physical units with ``[units]``.
SHIFT_COLUMNS = ("shift_predicted", "shift_measured", "shift_uncertainty")
#: The columns of the content figure shown in physical units with ``[units]`` (speeds in the
#: run's frame).
CONTENT_COLUMNS = (
    "amplitude",
    "amplitude_ist",
    "amplitude_uncertainty",
    "speed",
    "speed_ist",
    "speed_uncertainty",
)


def _spacetime_of_run(results: Results, run_id: int, notes: list[str]) -> Figure:
    row = results.runs[results.runs["run_id"] == run_id].iloc[0]
    eq = Equation.from_columns(row.to_dict())
    frames = results.frames(run_id)
    grid = Grid(int(row["n"]), float(row["length"]))
    analysis: RunAnalysis | None = None
    content: ContentMeasurement | None = None
    if eq.soliton_form_or_none() is not None and not _collisions(results):
        try:
            content = measure_content(
                frames.u, frames.times, grid, eq, min_amplitude=_content_floor(results, frames.u)
            )
        except KdvsweepError as err:
            notes.append(f"field only: the content measurement failed: {err}")
        else:
            if not content.emerging:
                notes.append(f"field only: no soliton emerged ({content.reason or 'none found'})")
    elif eq.soliton_form_or_none() is not None:
        sol = results.solitons[results.solitons["run_id"] == run_id].sort_values("soliton")
        kappas = sol["kappa"].to_numpy(float) if len(sol) else None
        if kappas is not None and not np.all(np.isfinite(kappas)):
            kappas = None
        try:
            analysis = analyse_run(frames.u, frames.times, grid, eq, kappas)
        except (KdvsweepError, ValueError) as err:  # the field is still worth drawing
            notes.append(f"field only: the collision analysis failed: {err}")
        else:
            if analysis.tracks.reason:
                notes.append(f"field only: {analysis.tracks.reason}")
                analysis = None
            elif not analysis.ok:
                notes.append(
                    "no asymptotes: " + str(analysis.summary.get("analysis_reason", "not fitted"))
                )
    params = [p for p in results.parameters if p in row.index and p != "equation"]
    names = parameter_labels(results)
    label = ", ".join(_value_label(names.get(p, p), row[p]) for p in params)
    title = eq.describe() + (f"\n{label}" if label else "")
    system = store_units(results)
    axes = physunits.axes_for_run(results.manifest, results.runs, run_id)
    if system is not None and axes is not None:
        c0 = f"c0 = {row['phys_c0']:.4g} {system.UNITS['speed']} (the frame's speed)"
        title = f"{system.NAME}: {eq.describe()}\n{c0}" + (f"; {label}" if label else "")
    units = system.UNITS if system is not None and axes is not None else None
    return spacetime(
        frames.u,
        frames.times,
        grid,
        analysis,
        title=title,
        content=content,
        axes=axes,
        units=units,
    )


def _value_label(label: str, value: Any) -> str:
    """``name = value`` or, for a label with a unit ``name (m)``, ``name = value m``."""
    name, _, unit = label.partition(" (")
    return f"{name} = {format_value(value)}" + (f" {unit.rstrip(')')}" if unit else "")


def _content_floor(results: Results, frames: np.ndarray) -> float | None:
    """The runner's amplitude floor: ``sizing.min_amplitude`` of the sweep (a fraction of
    ``max |u0|``), or ``None`` for the measurement's default."""
    try:
        doc = tomllib.loads(str(results.manifest.get("sweep_text", "")))
    except tomllib.TOMLDecodeError:
        return None
    sizing = doc.get("sizing", {})
    fraction = sizing.get("min_amplitude") if isinstance(sizing, dict) else None
    if not isinstance(fraction, int | float) or isinstance(fraction, bool):
        return None
    return float(fraction) * float(np.max(np.abs(frames[0])))


def iter_figures(
    out: str | os.PathLike[str],
    into: str | os.PathLike[str] | None = None,
    parameter: str | None = None,
    runs: Sequence[int] | None = None,
    formats: Sequence[str] = FORMATS,
) -> Iterator[FigureOutcome]:
    """Make and save the standard figures of a store, one at a time.

    Parameters as :func:`plot_store`. Every figure is planned before the first is drawn, so a
    request that cannot be met (a run that is not stored) fails before anything is written.

    Yields
    ------
    FigureOutcome
        For each planned figure: the files written, or none and the reason in ``notes``.
    """
    from ..results import load

    res = load(out)
    dest = Path(into) if into is not None else Path(out) / "figures"
    check_formats(formats)  # before anything is drawn
    system = store_units(res)
    water = system is not None and system.WATER  # the hazard caution in every figure's footer
    for plan in plan_figures(res, parameter, runs):
        if not plan.drawable:
            yield FigureOutcome(plan, [], [plan.reason])
            continue
        with figure_style():
            fig, notes = draw(res, plan)
            if water:
                add_caution(fig)
            paths = save(fig, dest / plan.stem, formats)
        yield FigureOutcome(plan, paths, notes)


def plot_store(
    out: str | os.PathLike[str],
    into: str | os.PathLike[str] | None = None,
    parameter: str | None = None,
    runs: Sequence[int] | None = None,
    formats: Sequence[str] = FORMATS,
) -> list[Path]:
    """Make the standard figures of a sweep store; returns the files written.

    Parameters
    ----------
    out
        The store folder (read with :func:`kdvsweep.load`).
    into
        Where to write the figures; default ``OUT/figures``.
    parameter
        Swept parameter for the relative-error plot; default every numeric swept parameter with
        more than three values.
    runs
        Run ids for space-time diagrams; default the first stored run of each series.
    formats
        File formats.

    Returns
    -------
    list of pathlib.Path
        The files written (:func:`iter_figures` also says why a figure was not drawn).
    """
    return [
        p for outcome in iter_figures(out, into, parameter, runs, formats) for p in outcome.paths
    ]
