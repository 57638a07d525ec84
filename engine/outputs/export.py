"""Result tables of one or several runs as a spreadsheet (xlsx) or a zip of CSV files.

Each table kind (districts, supply, wells, dispatch, ...) becomes one sheet or one CSV holding every run, with the
run's name in a first column ``run``. A sheet ``runs`` lists each run's status, message, cost case, objective,
input hash and settings, and ``kpi`` the key figures of :func:`engine.outputs.figures.kpi_table`.

Spreadsheet cells are written as typed values: numbers as numbers, text always as text (a name that starts with
``=`` is not turned into a formula), NaN as an empty cell and infinities as the text ``inf``. A table longer than
a sheet allows (1 048 576 rows) continues on sheets ``<table> 2``, ``<table> 3`` ... The CSV files keep numbers
exactly as the result holds them; a text cell that a spreadsheet program would read as a formula (one starting with
``=``, ``+``, ``-``, ``@``, a tab or a carriage return) gets a leading apostrophe, as the OWASP "CSV Injection"
page advises. Every CSV the tool writes follows that rule (:mod:`engine.outputs.csvfile`).
"""

from __future__ import annotations

import io
import json
import re
import zipfile
from collections.abc import Mapping

import pandas as pd

from engine.outputs.formats import engine_column_decimals, excel_format, unit_of

from engine.model.results import RunResult
from engine.outputs.xlsx_writer import workbook_bytes
from engine.outputs.csvfile import csv_bytes

TABLE_ORDER = ("districts", "supply", "wells", "dispatch", "demand", "well_steps", "steps", "day_map")
MAX_SHEET_NAME = 31
MAX_SHEET_ROWS = 1_048_576
_SHEET_FORBIDDEN = re.compile(r"[\[\]:*?/\\]")


def _check(results) -> Mapping[str, RunResult]:
    if not isinstance(results, Mapping):
        raise ValueError("results: expected a dict of run name -> RunResult")
    return results


def run_overview(results: Mapping[str, RunResult]) -> pd.DataFrame:
    """One row per run: run, status, message, scenario, cost case, objective, input hash, settings (JSON)."""
    rows = []
    for run, r in _check(results).items():
        rows.append({"run": str(run), "status": r.status, "message": r.message, "scenario": r.scenario_name,
                     "cost case": r.cost_case, "objective": r.objective, "input hash": r.input_hash,
                     "settings": json.dumps(r.settings, sort_keys=True, default=str)})
    return pd.DataFrame(rows, columns=["run", "status", "message", "scenario", "cost case", "objective",
                                       "input hash", "settings"])


def combined_tables(results: Mapping[str, RunResult]) -> dict[str, pd.DataFrame]:
    """Every table kind of the runs, concatenated, with a first column ``run``.

    Known kinds come first in the order of :data:`TABLE_ORDER`, then any other kind a result holds.
    """
    names = list(TABLE_ORDER)
    for r in _check(results).values():
        names += [n for n in r.tables if n not in names]
    out = {}
    for name in names:
        frames = []
        for run, r in results.items():
            table = r.tables.get(name)
            if table is None:
                continue
            frame = table.reset_index(drop=True).copy()
            if "run" in frame.columns:
                frame = frame.rename(columns={"run": "run_in_table"})
            frame.insert(0, "run", str(run))
            frames.append(frame)
        if frames:
            out[name] = pd.concat(frames, ignore_index=True)
    return out


def _sheet_name(name: str, used: set[str]) -> str:
    base = _SHEET_FORBIDDEN.sub("_", str(name)).strip("'") or "table"
    base = base[:MAX_SHEET_NAME]
    candidate, k = base, 2
    while candidate.lower() in used:
        suffix = f" {k}"
        candidate = base[: MAX_SHEET_NAME - len(suffix)] + suffix
        k += 1
    used.add(candidate.lower())
    return candidate


def _cell_text(value) -> str:
    """Text of a cell value that is not a number, boolean or text (a dict or list as JSON, anything else as str)."""
    if isinstance(value, (dict, list, tuple)):
        return json.dumps(value, default=str)
    return str(value)


STYLED_ROWS = 20_000
"""Sheets up to this many rows get a number format per column; the hourly sheets keep plain numbers."""


def _number_style(column, values: pd.Series) -> str | None:
    """The spreadsheet number format of a float column: from the unit of its header or of its engine name
    (:mod:`engine.outputs.formats`)."""
    if values.dtype.kind != "f" or len(values) > STYLED_ROWS:
        return None
    if unit_of(column) is not None:
        return excel_format(column)
    places = engine_column_decimals(str(column))
    if places is None:
        return None
    return "#,##0" + ("." + "0" * places if places else "")


def _sheets(name: str, frame: pd.DataFrame, used: set[str]) -> list[tuple[str, pd.DataFrame]]:
    """``frame`` as one or more (sheet title, rows) pieces, a sheet's row limit apart (one row for the header)."""
    limit = MAX_SHEET_ROWS - 1
    pieces = []
    for k, start in enumerate(range(0, max(len(frame), 1), limit)):
        title = _sheet_name(name if k == 0 else f"{name} {k + 1}", used)
        pieces.append((title, frame.iloc[start:start + limit]))
    return pieces


def tables_xlsx(results: Mapping[str, RunResult]) -> bytes:
    """The runs' tables as an xlsx workbook: sheets ``runs``, ``kpi``, then one per table kind.

    Written by :mod:`engine.outputs.xlsx_writer` a column at a time (the demo's workbook in a fraction of a
    second, where writing it cell by cell took several)."""
    from engine.outputs.figures import kpi_table

    used: set[str] = set()
    sheets = _sheets("runs", run_overview(results), used) + _sheets("kpi", kpi_table(results), used)
    for name, frame in combined_tables(results).items():
        sheets += _sheets(name, frame, used)
    return workbook_bytes(sheets, to_text=_cell_text, number_format=_number_style)


def _file_name(name: str, used: set[str]) -> str:
    base = re.sub(r"[^A-Za-z0-9_.-]+", "_", str(name)).strip("._") or "table"
    candidate, k = base, 2
    while candidate.lower() in used:
        candidate = f"{base}_{k}"
        k += 1
    used.add(candidate.lower())
    return candidate + ".csv"


def tables_csv_zip(results: Mapping[str, RunResult]) -> bytes:
    """The runs' tables as a zip of UTF-8 CSV files: runs.csv, kpi.csv and one file per table kind.

    Text that would start a spreadsheet formula is prefixed with an apostrophe (:func:`engine.outputs.csvfile.defuse_frame`).
    """
    from engine.outputs.figures import kpi_table

    buffer = io.BytesIO()
    used: set[str] = set()
    with zipfile.ZipFile(buffer, "w", compression=zipfile.ZIP_DEFLATED) as archive:
        tables = {"runs": run_overview(results), "kpi": kpi_table(results), **combined_tables(results)}
        for name, frame in tables.items():
            archive.writestr(_file_name(name, used), csv_bytes(frame, index=False))
    return buffer.getvalue()
