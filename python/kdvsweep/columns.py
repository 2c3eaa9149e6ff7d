"""The columns of a store's two tables, ``runs`` and ``solitons``: name, Parquet type, meaning.

This module is the one home of the table layout. The store writes every Parquet part with the
schema built here, so a column has the same type in every part whatever its values (a column that
is empty in one batch is still a string column there), and the README's column lists are checked
against it by the tests.

The runs table has, in this order: ``run_id``; the swept parameters (numbers ``double``, or
``int64`` when every value of the parameter is written as an integer; text ``string``); the fixed
:data:`RUN_COLUMNS`; for sweeps whose initial data are solitons the collision analysis'
:data:`ANALYSIS_COLUMNS`; and for sweeps of any other initial data (profiles, files), or with
``run.predict_content``, the soliton content's :data:`CONTENT_COLUMNS`. A swept parameter named
like one of :data:`MODEL_COLUMNS` takes that column's place (its values are what the file says);
any other parameter name of a column is refused (:func:`reserved_names`).

The solitons table has the :data:`SOLITON_COLUMNS` (filled by the collision analysis; the content
fills those it shares: ``soliton``, ``sign``, ``kappa``, ``kappa_measured``, ``speed``,
``amplitude``) and, with the content, the :data:`CONTENT_SOLITON_COLUMNS`. Whatever cannot be
computed for a run (no spectral problem for its equation, data that do not decay, a soliton left
out) is null, and a status column says why in one line.
"""

from __future__ import annotations

from collections.abc import Iterable, Mapping
from dataclasses import dataclass

import pyarrow as pa

from . import units as physunits
from .model import COEFFICIENT_MEANINGS


@dataclass(frozen=True)
class Column:
    """One column: its name, its Parquet (Arrow) type and a one-line meaning."""

    name: str
    type: pa.DataType
    meaning: str


_F, _I, _S, _B = pa.float64(), pa.int64(), pa.string(), pa.bool_()
_LIST = pa.list_(pa.float64())

#: Arrow type of a swept parameter by the kind of its values.
PARAMETER_TYPES: dict[str, pa.DataType] = {"float": _F, "int": _I, "text": _S}

RUN_ID = Column("run_id", _I, "the run's number, from 0 in the order the sweep file expands")

#: Columns of the model of each run; a swept parameter of the same name takes the column.
MODEL_COLUMNS = ("equation", "n", "length", "scheme", "dt", "tol", "t_end")

#: Kinds of failure of a run (column ``failure``): the stepping left the blow-up bound or became
#: non-finite, the balance residual exceeded ``run.drift_limit``, the wall-clock limit, memory,
#: the analysis of the frames, anything else.
FAILURE_KINDS = ("blow-up", "drift", "time limit", "out of memory", "analysis", "other")

#: Every runs column after the parameters, in table order (the analysis and content ones follow).
RUN_COLUMNS: tuple[Column, ...] = (
    Column("status", _S, '"ok", or "failed" when the run stopped (see reason)'),
    Column("reason", _S, "why the run failed, or a note on an ok run (e.g. analysis not measured)"),
    Column(
        "equation", _S, "the equation's preset name (kdv, kdv-, mkdv, mkdv-, gardner) or custom"
    ),
    *(
        Column(f"eq_{key}", _F, f"coefficient {key} of the equation: {meaning}")
        for key, meaning in COEFFICIENT_MEANINGS.items()
    ),
    Column("dealias", _F, "fraction of the Nyquist band kept in the nonlinear term"),
    Column("n", _I, "grid points"),
    Column("length", _F, "period L of the box [-L/2, L/2)"),
    Column("scheme", _S, "time stepper: etdrk4, ifrk4, strang or adaptive"),
    Column("dt", _F, "time step (adaptive: the first trial step)"),
    Column("tol", _F, "error allowed per step (adaptive scheme; NaN otherwise)"),
    Column("t_end", _F, "end time of the run"),
    Column("steps", _I, "accepted time steps"),
    Column("rejected", _I, "rejected trial steps (adaptive scheme; 0 otherwise)"),
    Column("wall_time", _F, "seconds of wall time for the whole run"),
    Column("cpu_time", _F, "seconds of CPU time of the run's thread"),
    Column(
        "step_time",
        _F,
        "seconds of wall time spent stepping (the run, and the restart around a pair's closest "
        "approach)",
    ),
    Column(
        "analysis_time",
        _F,
        "seconds of wall time spent in the collision analysis or the content measurement "
        "(its restarted stepping counted in step_time)",
    ),
    Column(
        "mass_drift",
        _F,
        "change of int u from start to end, relative (absolute when int u starts below 1e-8 of"
        " int |u|: zero-mean data); the physical decay too under damping",
    ),
    Column("momentum_drift", _F, "relative change of int u^2 from start to end"),
    Column(
        "energy_drift",
        _F,
        "change of the Hamiltonian of the conservative part, relative (absolute when it starts"
        " below 1e-8 of the integral of its terms' absolute values)",
    ),
    Column(
        "mass_residual",
        _F,
        "error of the mass balance dM/dt = -g M at the end: |M(T) - M(0) exp(-g T)|, scaled as"
        " mass_drift (equals it when g = 0)",
    ),
    Column(
        "momentum_residual",
        _F,
        "error of d/dt int u^2 = -2g int u^2 - 2v int u_x^2 integrated over the frames, scaled as"
        " momentum_drift (equals it when g = v = 0); checked against run.drift_limit",
    ),
    Column(
        "energy_residual",
        _F,
        "error of dH/dt = int (dH/du)(-g u + v u_xx) integrated over the frames, scaled as"
        " energy_drift (equals it when g = v = 0)",
    ),
    Column(
        "balance_quadrature",
        _F,
        "estimated error of the time quadrature in momentum_residual and energy_residual (the"
        " larger; Simpson's rule over the frames against the same on every 2nd frame); 0 when"
        " g = v = 0",
    ),
    Column(
        "failure",
        _S,
        f"kind of failure of a failed run: {', '.join(FAILURE_KINDS)} (empty when ok)",
    ),
    Column("max_abs_u", _F, "max |u| of the final state"),
    Column("frames_stored", _I, "frames kept in the frames pack of its part (0 when none)"),
)

#: Runs columns written by the collision analysis (sweeps of soliton initial data only).
ANALYSIS_COLUMNS: tuple[Column, ...] = (
    Column("analysis_status", _S, '"ok", "too_short" (no fit windows) or "failed" (solitons lost)'),
    Column(
        "analysis_reason",
        _S,
        "why the analysis did not measure the shifts, or what it left out (radiated_*, reference"
        " runs); empty when everything was measured",
    ),
    Column("n_solitons", _I, "solitons tracked"),
    Column("regime", _S, "Lax's interaction regime of a KdV pair: exchange, mixed, absorb-emit"),
    Column(
        "amplitude_ratio", _F, "KdV pair: larger over smaller amplitude, (kappa_max / kappa_min)^2"
    ),
    Column("peaks_at_closest", _F, "peaks at a pair's closest approach (run restarted there)"),
    Column("min_peaks", _F, "fewest peaks between the fit windows (a pair: fine frames)"),
    Column("t_closest", _F, "time of the closest approach of a pair"),
    Column(
        "radiation_energy",
        _F,
        "int r^2 of what is left of the last frame after removing the solitons",
    ),
    Column("radiation_fraction", _F, "radiation_energy over int u^2 of the last frame"),
    Column(
        "radiated_mass",
        _F,
        "mass the collisions radiated: int r outside windows of 10 tail lengths 1/(2 kappa) either"
        " side of each soliton in the last frame, r = u less the reference runs' last frames (perturbed"
        " equations), or u at the end less u at the start (integrable)",
    ),
    Column(
        "radiated_energy",
        _F,
        "int r^2 over the same region (the L2 energy, as radiation_energy, but of what the"
        " collisions alone sent away)",
    ),
    Column("frames_before", _I, "fewest frames in a soliton's fit window before its collisions"),
    Column("frames_after", _I, "fewest frames in a soliton's fit window after its collisions"),
    Column("separation", _F, "tail lengths apart that the solitons must be in a fit window"),
    Column("accuracy_target", _F, "accuracy.shift: the relative error wanted in the shifts"),
    Column(
        "accuracy_met",
        _B,
        "verified runs: every shift_error_estimate within accuracy_target of the shift (null when"
        " not verified or no target)",
    ),
)

#: Runs columns of the soliton content: the inverse scattering transform (IST) of the initial data
#: (``ist_*``, the ``*_ist`` radiation) and the solitons measured in the record. Sweeps of profile
#: or file data have them, sweeps of solitons with ``run.predict_content`` too (their content is
#: then not measured: the collision analysis follows them).
CONTENT_COLUMNS: tuple[Column, ...] = (
    Column(
        "ist_status",
        _S,
        '"ok", or why no content was predicted (perturbed equation, data not decaying, switched off)',
    ),
    Column("ist_count", _I, "solitons the IST of the initial data predicts (null unless ist ok)"),
    Column("ist_breathers", _I, "breathers the IST predicts (mKdV complex eigenvalue pairs)"),
    Column("ist_kappas", _LIST, "the predicted solitons' kappas, largest first"),
    Column("content_status", _S, '"ok", or why the emerging solitons were not measured'),
    Column("measured_count", _I, "solitons measured in the record"),
    Column("measured_breathers", _I, "breathers measured in the record"),
    Column(
        "left_out",
        _I,
        "predicted solitons and breathers left out of the comparison (the reason in solitons.note)",
    ),
    Column("all_found", _B, "every predicted soliton and breather not left out was measured"),
    Column(
        "radiation_mass", _F, "int u of the last frame minus the fitted solitons' and breathers'"
    ),
    Column(
        "radiation_mass_ist", _F, "int u of the data minus the predicted solitons' (trace formula)"
    ),
    Column("radiation_momentum", _F, "int u^2 of the last frame minus the fitted shapes'"),
    Column("radiation_momentum_ist", _F, "int u^2 of the data minus the predicted solitons'"),
    Column("radiation_hamiltonian", _F, "Hamiltonian of the last frame minus the fitted shapes'"),
    Column(
        "radiation_hamiltonian_ist", _F, "Hamiltonian of the data minus the predicted solitons'"
    ),
    Column("radiation_l2", _F, "int r^2 of the last frame r after subtracting the fitted shapes"),
)

#: Columns of the runs table that measure the machine, not the physics: they differ between two
#: runs of the same sweep; every other column is reproducible bit for bit.
TIMING_COLUMNS = ("wall_time", "cpu_time", "step_time", "analysis_time")

#: The solitons table, in order (the :data:`CONTENT_SOLITON_COLUMNS` follow with the content).
SOLITON_COLUMNS: tuple[Column, ...] = (
    RUN_ID,
    Column(
        "soliton",
        _I,
        "the soliton's number: from 0 left to right at the start (content: solitons largest "
        "first, then breathers, then predicted ones not found)",
    ),
    Column("sign", _I, "polarity: +1 elevation, -1 depression (0 for a breather)"),
    Column("kappa", _F, "the soliton's kappa as given (measured when not given)"),
    Column("x0", _F, "its centre at t = 0 as given or sized (NaN when not known)"),
    Column(
        "kappa_measured",
        _F,
        "kappa from the measured asymptotic speed (content: of the fitted shape; breather: eta)",
    ),
    Column("kappa_from_height", _F, "kappa from the mean peak height in the fit windows"),
    Column(
        "speed",
        _F,
        "speed of the shared-speed fit to both windows (content: asymptotic speed of the fitted "
        "centre; breather: envelope velocity)",
    ),
    Column("speed_before", _F, "speed fitted before the collisions"),
    Column("speed_after", _F, "speed fitted after the collisions"),
    Column(
        "amplitude",
        _F,
        "mean peak height |u| in the fit windows (content: of the fitted shape; breather: of "
        "its envelope)",
    ),
    Column(
        "amplitude_end",
        _F,
        "soliton data: peak height |u| at the last frame, a quadratic fit to the tracked heights over"
        " the last tenth of the frames (at least 3); NaN unless the solitons are apart in all",
    ),
    Column(
        "speed_end",
        _F,
        "speed at the last frame: slope there of a quadratic fit to the tracked positions over the"
        " frames of amplitude_end",
    ),
    Column(
        "amplitude_predicted",
        _F,
        "predicted |u| at the last frame: unperturbed (integrable) or adiabatic under g, v (README"
        " 'Perturbed equations'); NaN where none, the reason in the run's reason",
    ),
    Column("speed_predicted", _F, "predicted speed at the last frame, as amplitude_predicted"),
    Column("collisions", _I, "collisions the soliton took part in"),
    Column("offset_before", _F, "x^-: position at t = 0 of the asymptote before the collisions"),
    Column("offset_after", _F, "x^+: position at t = 0 of the asymptote after the collisions"),
    Column("shift_predicted", _F, "phase shift of the pairwise formula (Gardner et al. 1974)"),
    Column(
        "shift_measured",
        _F,
        "phase shift measured, by shift_method: offset_after - offset_before, or the mean"
        " position less the soliton alone's after the collisions less the same before",
    ),
    Column("shift_error", _F, "|shift_measured - shift_predicted|"),
    Column("shift_rel_error", _F, "shift_error / |shift_predicted|"),
    Column(
        "shift_uncertainty",
        _F,
        "error estimate of shift_measured: fit error, window bias, speed drift and the bound on"
        " the tail interaction the fit leaves out (reference: scatter and drift of the difference"
        " in both windows)",
    ),
    Column(
        "shift_error_estimate",
        _F,
        "verified runs (accuracy.verify): |shift_measured - the same at dt/2| times 2^p/(2^p - 1),"
        " p the scheme's order (16/15 etdrk4, ifrk4; 4/3 strang), plus |shift_measured - the same"
        " on 2n points|, plus shift_uncertainty (the analysis's own error, which both re-runs"
        " share)",
    ),
    Column("amplitude_error_estimate", _F, "the same estimate for amplitude"),
    Column("speed_error_estimate", _F, "the same estimate for speed"),
    Column(
        "shift_method",
        _S,
        '"asymptotes" (offset_after - offset_before; integrable equations) or "reference" '
        "(perturbed: the position less that of the soliton run alone at the same times, after"
        " the collisions less before)",
    ),
    Column(
        "amplitude_change",
        _F,
        "relative change of the peak height through the collisions: against the soliton run"
        " alone after less before (reference), or after over before - 1 (asymptotes)",
    ),
    Column(
        "speed_change",
        _F,
        "relative change of the speed through the collisions, measured as amplitude_change",
    ),
    Column("fit_residual", _F, "rms residual of the shared-speed line fit"),
    Column("frames_before", _I, "frames used in the fit before its first collision"),
    Column("frames_after", _I, "frames used in the fit after its last collision"),
)

#: Solitons columns of the content (see :data:`CONTENT_COLUMNS`): measured beside predicted, the
#: i-th largest measured against the i-th largest predicted, solitons and breathers apart.
CONTENT_SOLITON_COLUMNS: tuple[Column, ...] = (
    Column("kind", _S, '"soliton" or "breather"'),
    Column("found", _B, "measured and matched to a predicted one (null when none was predicted)"),
    Column("note", _S, "why a predicted soliton was left out or not found (empty otherwise)"),
    Column("kappa_uncertainty", _F, "error estimate of kappa_measured"),
    Column("amplitude_uncertainty", _F, "error estimate of amplitude"),
    Column("speed_uncertainty", _F, "error estimate of speed"),
    Column("t_separated", _F, "time from which it stands clear of the others and the radiation"),
    Column("kappa_ist", _F, "predicted kappa (breather: eta), matched largest to largest"),
    Column("amplitude_ist", _F, "predicted amplitude |u| (breather: of the envelope)"),
    Column("speed_ist", _F, "predicted speed 4 d kappa^2 (breather: envelope velocity)"),
    Column("xi_measured", _F, "breather: measured real part xi of its eigenvalue xi + i eta"),
    Column("xi_ist", _F, "breather: predicted xi"),
    Column("frequency", _F, "breather: measured internal frequency in the envelope frame"),
    Column("frequency_uncertainty", _F, "breather: error estimate of frequency"),
    Column("frequency_ist", _F, "breather: the frequency its predicted eigenvalue gives"),
)

#: ``kappa_ist`` (one of :data:`CONTENT_SOLITON_COLUMNS`).
KAPPA_IST = CONTENT_SOLITON_COLUMNS[7]

#: Physical columns of the runs table (sweeps with ``[units]``; :mod:`kdvsweep.units`), in the
#: system's units (the unit is each field's Parquet metadata ``unit``): converted model columns
#: and the scales, then the parameters of the sweep's system (:data:`PHYS_PARAMETER_COLUMNS`).
PHYS_RUN_COLUMNS: tuple[Column, ...] = tuple(
    Column(name, _F, f"[units] {meaning}") for name, _, _, meaning in physunits.RUN_QUANTITIES
)
#: The parameters of every system as columns (only those of the sweep's system are in a store).
PHYS_PARAMETER_COLUMNS: tuple[Column, ...] = tuple(
    Column(name, _F, f"[units] {systems}: {meaning}")
    for name, systems, meaning in physunits.parameter_columns()
)
#: Physical columns of the solitons table (sweeps with ``[units]``).
PHYS_SOLITON_COLUMNS: tuple[Column, ...] = tuple(
    Column(name, _F, f"[units] {meaning}") for name, _, _, meaning in physunits.SOLITON_QUANTITIES
)
#: Physical columns of the content's solitons (``[units]`` and the content).
PHYS_CONTENT_SOLITON_COLUMNS: tuple[Column, ...] = tuple(
    Column(name, _F, f"[units] {meaning}")
    for name, _, _, meaning in physunits.CONTENT_SOLITON_QUANTITIES
)


@dataclass(frozen=True)
class Layout:
    """What decides a store's columns: the parameters and their kinds, and two sweep options.

    Attributes
    ----------
    parameters
        Swept parameter name -> ``"float"``, ``"int"`` or ``"text"``, in file order.
    analysis
        The initial data are solitons, so the collision analysis fills its columns.
    content
        The soliton content's columns: the initial data are not solitons, or
        ``run.predict_content`` is on.
    units
        The ``[units]`` system's name (:data:`kdvsweep.units.SYSTEMS`): the physical columns, with
        their units in the Parquet field metadata; ``None`` without ``[units]``.
    """

    parameters: Mapping[str, str]
    analysis: bool
    content: bool
    units: str | None = None

    def runs(self) -> tuple[Column, ...]:
        """The columns of the runs table, in order."""
        params = {name: PARAMETER_TYPES[kind] for name, kind in self.parameters.items()}
        out = [RUN_ID]
        out += [Column(name, kind, "swept parameter") for name, kind in params.items()]
        for col in RUN_COLUMNS:
            if col.name not in params:
                out.append(col)
        if self.analysis:
            out += ANALYSIS_COLUMNS
        if self.content:
            out += CONTENT_COLUMNS
        if self.units is not None:
            own = {f"phys_{p.key}" for p in physunits.system_class(self.units).PARAMETERS}
            out += PHYS_RUN_COLUMNS
            out += [c for c in PHYS_PARAMETER_COLUMNS if c.name in own]
        return tuple(out)

    def solitons(self) -> tuple[Column, ...]:
        """The columns of the solitons table, in order."""
        out = (*SOLITON_COLUMNS, *CONTENT_SOLITON_COLUMNS) if self.content else SOLITON_COLUMNS
        if self.units is not None:
            out += PHYS_SOLITON_COLUMNS
            if self.content:
                out += PHYS_CONTENT_SOLITON_COLUMNS
        return out

    def schema(self, table: str) -> pa.Schema:
        """The Arrow schema of ``"runs"`` or ``"solitons"``; a physical column's field carries
        its ``unit`` (and, for water-wave systems, the hazard ``caution``) as metadata."""
        cols = self.runs() if table == "runs" else self.solitons()
        return pa.schema([pa.field(c.name, c.type, metadata=self._unit(c.name)) for c in cols])

    def _unit(self, name: str) -> dict[str, str] | None:
        if self.units is None or not name.startswith("phys_"):
            return None
        meta = {"unit": physunits.column_unit(self.units, name)}
        if physunits.system_class(self.units).WATER:
            meta["caution"] = physunits.CAUTION
        return meta

    def to_json(self) -> dict[str, object]:
        """The layout as JSON data (kept in the store's manifest; ``units`` only when set)."""
        out: dict[str, object] = {
            "parameters": dict(self.parameters),
            "analysis": self.analysis,
            "content": self.content,
        }
        if self.units is not None:
            out["units"] = self.units
        return out

    @classmethod
    def from_json(cls, data: Mapping[str, object]) -> Layout:
        """The inverse of :meth:`to_json`."""
        params = data.get("parameters", {})
        units = data.get("units")
        return cls(
            parameters=dict(params) if isinstance(params, Mapping) else {},
            analysis=bool(data.get("analysis", False)),
            content=bool(data.get("content", False)),
            units=units if isinstance(units, str) and units in physunits.SYSTEMS else None,
        )


def has_content(predict_content: bool, soliton_data: bool) -> bool:
    """Whether a sweep's tables have the content columns (:attr:`Layout.content`): its data are
    not solitons, or it asks for the predicted content."""
    return predict_content or not soliton_data


def all_columns() -> tuple[Column, ...]:
    """Every declared column of the runs table (each name once), and the physical columns of
    either table, for documentation."""
    seen: dict[str, Column] = {}
    for col in (
        RUN_ID,
        *RUN_COLUMNS,
        *ANALYSIS_COLUMNS,
        *CONTENT_COLUMNS,
        *PHYS_RUN_COLUMNS,
        *PHYS_PARAMETER_COLUMNS,
        *PHYS_SOLITON_COLUMNS,
        *PHYS_CONTENT_SOLITON_COLUMNS,
    ):
        seen.setdefault(col.name, col)
    return tuple(seen.values())


def reserved_names() -> frozenset[str]:
    """Names a swept parameter may not take: every column of either table except
    :data:`MODEL_COLUMNS` (a parameter of such a name takes the column)."""
    names: Iterable[str] = (
        c.name for c in (*all_columns(), *SOLITON_COLUMNS, *CONTENT_SOLITON_COLUMNS)
    )
    return frozenset(names) - frozenset(MODEL_COLUMNS)


__all__ = [
    "ANALYSIS_COLUMNS",
    "CONTENT_COLUMNS",
    "CONTENT_SOLITON_COLUMNS",
    "FAILURE_KINDS",
    "KAPPA_IST",
    "MODEL_COLUMNS",
    "PARAMETER_TYPES",
    "PHYS_CONTENT_SOLITON_COLUMNS",
    "PHYS_PARAMETER_COLUMNS",
    "PHYS_RUN_COLUMNS",
    "PHYS_SOLITON_COLUMNS",
    "RUN_COLUMNS",
    "RUN_ID",
    "SOLITON_COLUMNS",
    "TIMING_COLUMNS",
    "Column",
    "Layout",
    "all_columns",
    "has_content",
    "reserved_names",
]
