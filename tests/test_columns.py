"""The column schema: the README's column lists, the analysis' outputs and the runner's rows."""

from __future__ import annotations

import re
from pathlib import Path

import numpy as np
import pyarrow as pa
import pytest
from conftest import pair_sweep, periodic_soliton

import kdvsweep as kv
from kdvsweep import columns
from kdvsweep.analysis.table import TABLE_COLUMNS, analyse_run
from kdvsweep.sweep.runner import base_row, execute

README = Path(__file__).resolve().parent.parent / "README.md"
TYPES = {
    "double": "float64",
    "int64": "int64",
    "string": "string",
    "bool": "bool",
    "list<item: double>": "list[float64]",
}


def _table(cols: tuple[columns.Column, ...]) -> str:
    lines = ["| column | type | meaning |", "|---|---|---|"]
    lines += [
        f"| `{c.name}` | {TYPES[str(c.type)]} | {c.meaning.replace('|', chr(92) + '|')} |"
        for c in cols
    ]
    return "\n".join(lines)


def readme_tables() -> dict[str, str]:
    """The column tables the README must show, rendered from the schema."""
    return {
        "runs": _table((columns.RUN_ID, *columns.RUN_COLUMNS)),
        "analysis": _table(columns.ANALYSIS_COLUMNS),
        "content": _table(columns.CONTENT_COLUMNS),
        "solitons": _table(columns.SOLITON_COLUMNS),
        "content_solitons": _table(columns.CONTENT_SOLITON_COLUMNS),
    }


@pytest.mark.parametrize("name", ["runs", "analysis", "content", "solitons", "content_solitons"])
def test_readme_lists_every_column_with_its_type_and_meaning(name: str) -> None:
    text = README.read_text(encoding="utf-8")
    assert readme_tables()[name] in text, f"README: the {name} column table differs from the schema"


def test_readme_names_no_column_the_schema_does_not_have() -> None:
    text = README.read_text(encoding="utf-8")
    section = text[text.index("### The tables") :]
    section = section[: section.index("\n## ")]
    listed = set(re.findall(r"^\| `([a-z_0-9]+)` \|", section, flags=re.MULTILINE))
    declared = {c.name for c in columns.all_columns()}
    declared |= {c.name for c in (*columns.SOLITON_COLUMNS, *columns.CONTENT_SOLITON_COLUMNS)}
    assert listed == declared


def test_every_analysis_output_is_declared() -> None:
    # A real analysis of a KdV pair: the exact one-solitons far apart (no collision: the
    # analysis reports "too_short"), and the names it may fill in any case.
    grid = kv.Grid(256, 80.0)
    times = np.linspace(0.0, 1.0, 11)
    frames = np.array(
        [
            periodic_soliton(grid, t, 1.0, -20.0) + periodic_soliton(grid, t, 0.5, 20.0)
            for t in times
        ]
    )
    found = analyse_run(frames, times, grid, kv.Equation.kdv(), [1.0, 0.5])
    runs = {c.name for c in columns.ANALYSIS_COLUMNS}
    solitons = {c.name for c in columns.SOLITON_COLUMNS}
    assert set(found.summary) <= runs
    assert set(TABLE_COLUMNS) <= solitons
    assert set(found.table.columns) <= solitons


def test_rows_of_a_real_run_fit_the_layout(tmp_path: Path) -> None:
    sweep = pair_sweep(tmp_path, "rows", [0.5], frame_every=0.5)
    (spec,) = sweep.runs
    result = execute(spec)
    assert result.ok, result.run_row["reason"]
    runs = [c.name for c in sweep.layout.runs()]
    assert set(result.run_row) <= set(runs)
    assert set(base_row(spec)) <= set(runs)
    solitons = [c.name for c in sweep.layout.solitons()]
    for row in result.soliton_rows:
        assert set(row) <= set(solitons)
    # the input centres travel with the measured rows
    assert isinstance(spec.initial, kv.initial.Solitons)
    assert [r["x0"] for r in result.soliton_rows] == list(spec.initial.x0)
    # the whole model, for ok and failed runs alike
    eq = kv.Equation.from_columns(result.run_row)
    assert eq.coefficients == spec.model.equation.coefficients
    assert result.run_row["dealias"] == spec.model.equation.dealias_fraction


def test_reserved_names_keep_the_model_columns_sweepable() -> None:
    reserved = columns.reserved_names()
    assert not reserved & set(columns.MODEL_COLUMNS)
    assert {"status", "eq_a", "dealias", "regime", "kappa", "kappa_ist", "ist_count"} <= reserved
    layout = columns.Layout({"equation": "text", "dt": "float", "k2": "float"}, True, False)
    names = [c.name for c in layout.runs()]
    assert len(names) == len(set(names))
    assert layout.schema("runs").field("equation").type == columns.PARAMETER_TYPES["text"]


def test_profile_layout_has_the_content_columns_and_their_types() -> None:
    # Profile data always have the content; solitons only with run.predict_content.
    assert columns.has_content(predict_content=False, soliton_data=False)
    assert not columns.has_content(predict_content=False, soliton_data=True)
    layout = columns.Layout({"h": "float"}, analysis=False, content=True)
    runs, sol = layout.schema("runs"), layout.schema("solitons")
    assert runs.field("ist_kappas").type == pa.list_(pa.float64())
    assert runs.field("all_found").type == pa.bool_()
    assert sol.field("found").type == pa.bool_()
    assert sol.field("kind").type == pa.string()
    assert "analysis_status" not in runs.names
    # every content column is declared once, and named as no parameter may be
    names = [c.name for c in layout.runs()] + [c.name for c in layout.solitons()]
    assert len(set(layout.schema("runs").names)) == len(layout.schema("runs").names)
    assert {"ist_status", "kind", "found", "note", "amplitude_ist"} <= columns.reserved_names()
    assert set(names) - {"h"} <= columns.reserved_names() | set(columns.MODEL_COLUMNS)
