"""Column rules of the scenario reader: what a column holds and how its cells are read and checked.

A :class:`Column` says what one column (or GeoJSON property, or TOML key) holds: its type, whether it must be
in the header, its default for a blank cell and its range. :func:`parse_table` turns a :class:`Table` of text
cells into typed columns and reports every bad cell; :func:`check_header`, :func:`check_unique` and
:func:`check_references` check the header, identifiers and references between files. The unit-slip
thresholds shared by several files are here too.
"""

from __future__ import annotations

import difflib
import re
from dataclasses import dataclass
from pathlib import Path
from typing import Any, Callable

import numpy as np
import pandas as pd

from engine.scenario.tables import CELL_REPORT_LIMIT, Report, Table, close_names, printable, read_csv


# Unit-slip thresholds: values above these are not plausible in the stated unit and usually mean the file was
# written in the next smaller unit (kWh instead of MWh, W instead of kW, l/h instead of m³/h).
MAX_DISTRICT_DEMAND_MWH_PER_A = 10e6  # 10 TWh/a
MAX_HEAT_DENSITY_MWH_PER_KM2 = 2e6  # 20 000 MWh per hectare
MAX_BUILDING_DEMAND_MWH_PER_A = 2e5  # 200 GWh/a for one building
MAX_WELL_FLOW_M3_PER_H = 5000.0

# Ceilings on money: far above anything a market or a catalogue shows, so that only unit slips and typing errors
# hit them, and the LP never sees coefficients that large (common practice; the day-ahead power markets of
# Europe cap prices at a few thousand EUR/MWh, from memory).
MAX_PRICE_EUR_PER_MWH = 100_000.0
MAX_FUEL_PRICE_EUR_PER_MWH = 10_000.0
MAX_CO2_PRICE_EUR_PER_T = 10_000.0
MAX_INVESTMENT_EUR_PER_KW = 100_000.0
MAX_PRICE_FACTOR = 1000.0



# ============================================================================= cell checks
REQUIRED = object()
"""Default marker: a blank cell is an error."""
KEEP = object()
"""Default marker: a blank cell stays blank (NaN or "") and a later rule fills it."""


@dataclass(frozen=True)
class Column:
    """What one column (or GeoJSON property, or TOML key) holds."""

    name: str
    kind: str = "number"  # number, integer, text, bool
    in_header: bool = True
    default: Any = REQUIRED
    low: float | None = None
    high: float | None = None
    low_open: bool = False
    high_open: bool = False
    allow_inf: bool = False

    def range_text(self) -> str:
        parts = []
        if self.low is not None:
            parts.append(f"{'>' if self.low_open else '>='} {self.low:g}")
        if self.high is not None:
            parts.append(f"{'<' if self.high_open else '<='} {self.high:g}")
        return " and ".join(parts)

    def need_text(self) -> str:
        what = {"integer": "a whole number", "bool": "true or false", "text": "a text"}.get(self.kind, "a number")
        return f"{what} {self.range_text()}".strip()

    def in_range(self, values: np.ndarray) -> np.ndarray:
        ok = np.ones(values.shape, dtype=bool)
        with np.errstate(invalid="ignore"):
            if self.low is not None:
                ok &= values > self.low if self.low_open else values >= self.low
            if self.high is not None:
                ok &= values < self.high if self.high_open else values <= self.high
        return ok


def report_rows(
    report: Report,
    table: Table,
    column: str,
    mask: np.ndarray,
    message: Callable[[int], str],
    severity: str = "error",
) -> None:
    """Report the first few flagged cells of a column and sum up the rest in one line."""
    positions = np.flatnonzero(mask)
    if table.skipped:
        positions = np.array([i for i in positions if int(i) not in table.skipped], dtype=int)
    for index in positions[:CELL_REPORT_LIMIT]:
        row, prefix = table.place(int(index))
        report(table.file, row, column, prefix + message(int(index)), severity)
    if len(positions) > CELL_REPORT_LIMIT:
        report(
            table.file,
            None,
            column,
            f"... and {len(positions) - CELL_REPORT_LIMIT} more {table.item_word} with the same kind of problem",
            severity,
        )


_DECIMAL_COMMA = re.compile(r"^[+-]?\d+,\d+$")
_NUMBER_WITH_UNIT = re.compile(r"^[+-]?(\d+[.,]?\d*|\.\d+)([eE][+-]?\d+)?\s*[^\d\s.,+-].*$")
TIMESTAMP_PATTERN = re.compile(r"^\d{4}-\d{2}-\d{2}([T ]\d{1,2}(:\d{2})*)?")
_NOT_A_NUMBER = {"nan", "na", "n/a", "null", "none", "-", "--", "?"}


def cell_hint(text: str) -> str:
    """Why a cell that should hold a number does not, in the planner's terms (empty when nothing fits)."""
    if _DECIMAL_COMMA.match(text):
        return " (use '.' as the decimal mark)"
    if text.strip().lower() in _NOT_A_NUMBER:
        return " (a placeholder for a missing value: enter the value, or leave the cell blank where a default exists)"
    if TIMESTAMP_PATTERN.match(text):
        return " (a date or time stamp where a number belongs)"
    if _NUMBER_WITH_UNIT.match(text):
        return " (write the number without the unit; the unit is in the column name)"
    return ""


def range_hint(spec: Column, value: float) -> str:
    """A likely cause of an out-of-range value: kelvin in a °C column, a percentage in a share."""
    if spec.name.endswith("_temp_c") and 200 <= value <= 400:
        return " (looks like kelvin: subtract 273.15 to get °C)"
    if spec.low == 0 and spec.high == 1 and 1 < value <= 100:
        return f" (a share between 0 and 1, e.g. 0.4 for 40 %: if {value:g} is a percentage, write {value / 100:g})"
    if spec.low == 0 and spec.high == 1 and value < 0:
        return " (a share between 0 and 1: 0.4 means 40 %)"
    if spec.high is not None and spec.high > 0 and value > 100 * spec.high:
        return " (far above any plausible value: check the unit in the name)"
    return ""


_TRUE = {"true", "yes", "1", "y"}
_FALSE = {"false", "no", "0", "n"}


def _numbers(text: np.ndarray, blank: np.ndarray) -> np.ndarray:
    """Cells as floats; blank and unreadable cells are NaN.

    The common case, a column of plain ASCII numbers, goes through Python's float parser in one numpy call;
    anything else through :func:`pandas.to_numeric`, which (unlike ``float``) refuses digit separators ('1_000')
    and digits of other scripts, so the fast path is only taken when neither can occur.
    """
    filled = np.where(blank, "nan", text)
    joined = "".join(filled.tolist())
    if joined.isascii() and "_" not in joined:
        try:
            return np.array(filled, dtype=float)
        except (TypeError, ValueError):
            pass
    cells = pd.Series(text, dtype=object).where(~blank, None)
    return pd.to_numeric(cells, errors="coerce").to_numpy(dtype=float, na_value=np.nan).copy()


def _parse_number_column(report: Report, table: Table, spec: Column, raw: pd.Series) -> np.ndarray:
    text = raw.to_numpy(dtype=object)
    blank = (raw == "").to_numpy(dtype=bool)
    values = _numbers(text, blank)
    need = spec.need_text()

    def not_a_number(i: int) -> str:
        return f"must be {need}, got '{printable(text[i])}'{cell_hint(text[i])}"

    report_rows(report, table, spec.name, ~blank & np.isnan(values), not_a_number)
    if not spec.allow_inf:
        infinite = np.isinf(values)
        report_rows(
            report,
            table,
            spec.name,
            infinite,
            lambda i: f"must be a finite number{' ' + spec.range_text() if spec.range_text() else ''}, got "
            f"'{printable(text[i])}' (enter the actual value; a huge one usually means a wrong unit)",
        )
        values[infinite] = np.nan
    finite = np.isfinite(values)
    if spec.kind == "integer":
        fractional = finite & (values != np.round(values))
        report_rows(
            report, table, spec.name, fractional, lambda i: f"must be a whole number, got '{printable(text[i])}'"
        )
    outside = ~np.isnan(values) & ~spec.in_range(values)
    report_rows(
        report,
        table,
        spec.name,
        outside,
        lambda i: f"must be {spec.range_text()}, got {printable(text[i])}{range_hint(spec, values[i])}",
    )
    values[outside] = np.nan
    _fill_blanks(report, table, spec, blank, values, need)
    return values


def _fill_blanks(report: Report, table: Table, spec: Column, blank: np.ndarray, values: np.ndarray, need: str):
    if spec.default is REQUIRED:
        report_rows(report, table, spec.name, blank, lambda i: f"{table.blank_text}; {need} is required here")
    elif spec.default is not KEEP:
        values[blank] = spec.default


def _parse_bool_column(report: Report, table: Table, spec: Column, raw: pd.Series) -> np.ndarray:
    text = [cell.lower() for cell in raw.to_numpy(dtype=object)]
    blank = np.array([cell == "" for cell in text], dtype=bool)
    values = np.array([cell in _TRUE for cell in text], dtype=object)
    unknown = np.array([cell not in _TRUE and cell not in _FALSE and cell != "" for cell in text], dtype=bool)
    report_rows(report, table, spec.name, unknown, lambda i: f"must be true or false, got '{raw.iloc[i]}'")
    _fill_blanks(report, table, spec, blank, values, spec.need_text())
    return values.astype(bool)


MAX_ID_CHARS = 64
"""Longest id (district_id, technology_id, well_id, building_id ...): ids name columns, files and LP rows."""

MAX_TEXT_CHARS = 200
"""Longest other text cell (names, kinds, carriers); documented in docs/input_format.md."""


def text_length_limit(column: str) -> int:
    """The most characters a text cell (or a TOML text) of ``column`` may hold."""
    return MAX_ID_CHARS if column.endswith("_id") else MAX_TEXT_CHARS


def _parse_text_column(report: Report, table: Table, spec: Column, raw: pd.Series) -> np.ndarray:
    values = raw.to_numpy(dtype=object).copy()
    blank = np.array([cell == "" for cell in values], dtype=bool)
    limit = text_length_limit(spec.name)
    long = np.array([len(cell) > limit for cell in values], dtype=bool)
    report_rows(report, table, spec.name, long,
                lambda i: f"is {len(values[i]):,} characters long; at most {limit} are allowed "
                          f"('{printable(values[i])}')")
    if spec.name.endswith("_id"):
        foreign = np.array([not cell.isascii() for cell in values], dtype=bool) & ~long
        report_rows(report, table, spec.name, foreign,
                    lambda i: f"'{printable(values[i])}' holds the non-ASCII character "
                              f"'{next(c for c in values[i] if not c.isascii())}'; ids may hold only ASCII "
                              "letters, digits, '_' and '-' (A-Z, a-z, 0-9)")
    _fill_blanks(report, table, spec, blank, values, "a value")
    return values


def parse_table(report: Report, table: Table, specs: tuple[Column, ...]) -> pd.DataFrame:
    """Typed columns of ``table`` in the order of ``specs``; every bad cell is reported."""
    parsed: dict[str, Any] = {}
    count = len(table)
    for spec in specs:
        present = spec.name in table.cells.columns
        if not present and spec.in_header:
            # Already reported as a missing column; fill so that later checks can run.
            parsed[spec.name] = np.full(count, np.nan) if spec.kind in ("number", "integer") else [""] * count
            continue
        raw = table.cells[spec.name] if present else pd.Series([""] * count, dtype=str)
        parser = {"bool": _parse_bool_column, "text": _parse_text_column}.get(spec.kind, _parse_number_column)
        parsed[spec.name] = parser(report, table, spec, raw)
    frame = pd.DataFrame(parsed, index=range(count))
    for spec in specs:
        if spec.kind == "text":
            frame[spec.name] = frame[spec.name].astype(str)
    return frame


_TIME_COLUMN_NAMES = {"timestamp", "time", "datetime", "date", "date_time", "time_stamp", "utc", "time_utc"}


def _first_cell(table: Table, column: str) -> str:
    cells = table.cells[column]
    filled = cells[cells != ""]
    return str(filled.iloc[0]) if len(filled) else ""


def timestamp_column(report: Report, table: Table) -> str | None:
    """A column of time stamps standing where ``hour`` belongs; reported once, with the fix."""
    if "hour" in table.cells.columns:
        return None
    for column in table.cells.columns:
        first = _first_cell(table, column)
        if column.lower() in _TIME_COLUMN_NAMES or TIMESTAMP_PATTERN.match(first):
            example = f" such as '{printable(first)}'" if first else ""
            report(
                table.file,
                table.header_row,
                column,
                f"holds time stamps{example} where the column 'hour' belongs; replace it by a column hour counting "
                "hour 0, 1, 2, ... n-1 from the first hour of the year (no dates, no time zones)",
            )
            return column
    return None


def check_timestamp_hours(report: Report, table: Table) -> None:
    """Time stamps written into the ``hour`` column: one message, then the cells stand in as 0..n-1 so that
    the other columns are still checked."""
    if "hour" not in table.cells.columns or not TIMESTAMP_PATTERN.match(_first_cell(table, "hour")):
        return  # a stray time stamp further down is reported as a bad number, with a hint
    cells = table.cells["hour"]
    stamps = cells.str.match(TIMESTAMP_PATTERN.pattern).to_numpy(dtype=bool)
    if not stamps.any():
        return
    index = int(np.flatnonzero(stamps)[0])
    report(
        table.file,
        table.rows[index],
        "hour",
        f"holds time stamps such as '{printable(cells.iloc[index])}'; number the hours 0 to n-1 instead "
        "(0 = the first hour of the year; no dates, no time zones)",
    )
    table.cells["hour"] = [str(i) for i in range(len(cells))]


def check_header(report: Report, table: Table, specs: tuple[Column, ...]) -> None:
    """Missing required columns, and unknown ones (only columns starting with 'note' may be added)."""
    known = [spec.name for spec in specs]
    present = list(table.cells.columns)
    stamps = timestamp_column(report, table) if "hour" in known else None
    for spec in specs:
        if spec.in_header and spec.name not in present:
            if spec.name == "hour" and stamps is not None:
                continue
            unknown = [c for c in present if c not in known and not c.lower().startswith("note")]
            close = [c for c in unknown if c.lower() == spec.name] or difflib.get_close_matches(
                spec.name, unknown, n=1, cutoff=0.7
            )
            if close:
                hint = f"; is '{close[0]}' meant to be it? Rename it (and convert its values if the unit differs)"
            else:
                hint = "; add it to the header row (docs/input_format.md lists the columns of each file)"
            report(table.file, None, spec.name, f"required column is missing{hint}")
    for column in present:
        if column in known or column.lower().startswith("note") or column == stamps:
            continue
        close = [k for k in known if k == column.lower()] or difflib.get_close_matches(column, known, n=1, cutoff=0.6)
        hint = f"did you mean '{close[0]}'? " if close else ""
        report(
            table.file,
            table.header_row,
            column,
            f"unknown column; {hint}known columns: {', '.join(known)} "
            "(extra columns are allowed only when their name starts with 'note')",
        )


def read_checked_table(
    folder: Path, name: str, specs: tuple[Column, ...], report: Report, required: bool
) -> tuple[Table, pd.DataFrame] | None:
    table = read_csv(folder, name, report, required)
    if table is None:
        return None
    check_timestamp_hours(report, table)
    check_header(report, table, specs)
    return table, parse_table(report, table, specs)


def blank_cells(table: Table, column: str) -> np.ndarray:
    """Mask of blank cells of ``column`` (all blank when the optional column is absent)."""
    if column not in table.cells.columns:
        return np.ones(len(table), dtype=bool)
    return (table.cells[column] == "").to_numpy(dtype=bool)


def check_unique(report: Report, table: Table, values, column: str, what: str | None = None) -> None:
    """Each non-blank value of ``values`` may appear once; repeats are reported with the first row."""
    first: dict[Any, int] = {}
    word = "feature" if table.item_word == "features" else "row"
    for index, value in enumerate(values):
        if value == "" or value is None:
            continue
        if value in first:
            row, prefix = table.place(index)
            if what is None:
                shown = value
            else:
                shown = what.format(*value) if isinstance(value, tuple) else what.format(value)
            report(table.file, row, column, f"{prefix}duplicate {shown!s} (first at {word} {first[value]})")
        else:
            first[value] = table.rows[index]


def check_references(
    report: Report, table: Table, frame: pd.DataFrame, column: str, known: list[str] | None, what: str
) -> np.ndarray:
    """Cells naming an id that is not defined elsewhere; returns the mask of bad rows."""
    values = frame[column].to_numpy(dtype=object)
    if known is None:
        return np.zeros(len(values), dtype=bool)
    known_set = set(known)
    bad = np.array([v != "" and v not in known_set for v in values], dtype=bool)
    known = list(dict.fromkeys(known))
    shown = ", ".join(known[:20]) + (", ..." if len(known) > 20 else "") if known else "(none)"

    def message(i: int) -> str:
        close = close_names(str(values[i]), list(known))
        hint = f"did you mean '{close[0]}'? " if close else ""
        return f"unknown {what} '{printable(str(values[i]))}'; {hint}known: {shown}"

    report_rows(report, table, column, bad, message)
    return bad
