"""Read a scenario folder into a validated :class:`engine.scenario.inputs.Scenario`.

The folder layout is documented in ``docs/input_format.md``. :func:`load_scenario` reads every file, checks
it, and either returns a :class:`~engine.scenario.inputs.Scenario` or raises one :class:`~engine.scenario.problems.InputError`
that lists every problem found in every file (it never stops at the first one). :func:`validate_scenario`
returns the same list without raising, and :func:`validate_command` is the ``python -m engine validate DIR``
command.

Each check is a small function for one family of rules: reading a file (size, encoding, syntax), the header of a
table (missing and unknown columns), the cells of a column (type, blanks, range), identifiers (duplicates,
references between files), physics plausibility (ranges by technology kind, unit slips: kWh for MWh, W for kW,
l/h for m³/h, EUR/kWh for EUR/MWh, kelvin for °C, percent for shares) and geography (polygon validity, points
inside districts, swapped longitude and latitude). Every message says what is wrong and, where it can, how to fix
it.

Defaults for blank cells (``docs/input_format.md`` lists the documented ones; the rest are chosen here so that
every table the model sees is free of blanks):

* districts: name = district_id, cooling 0 MWh/a, hot-water share 0.15, network_available false,
  connection limit 0 kW.
* technologies: name = technology_id, efficiency 1 (a blank EER of a chiller or groundwater cooling is an error),
  quality grade 0.5, source approach 5 K, sink approach 3 K, fixed O&M 0 %/a, variable O&M 0 EUR/MWh, store loss
  0 %/h, store efficiency 1, store hours 0 for kinds other than heat_store (a blank for a heat_store is an error).
  ``fixed_om_pct_per_a`` and ``store_loss_pct_per_h`` stay in percent, as in the file.
* district_technologies: existing 0 kW, potential unlimited (inf); a row for every district and technology.
* wells: district = the district containing the extraction well, reinjection well ``reinjection_offset_m``
  down-gradient (along the aquifer's ``flow_direction_deg``, local equirectangular approximation), no annual
  volume limit (inf), amplitude 0 K, coldest day 1 (only when the amplitude is 0; otherwise it is required).
* buildings: cooling 0 MWh/a; each building's demands are added to the district containing it.

Validation here screens files for planning; it does not certify data for a well permit or an investment.
"""

from __future__ import annotations

import csv
import dataclasses
import difflib
import io
import json
import math
import re
import tomllib
from contextlib import contextmanager
from dataclasses import dataclass
from pathlib import Path
from typing import Any, Callable, Iterator

import numpy as np
import pandas as pd

from engine.scenario import geometry
from engine.scenario.inputs import (
    CARRIERS,
    COOLING_KINDS,
    DEFAULT_CO2_KG_PER_MWH,
    FUELS,
    HEAT_KINDS,
    TECHNOLOGY_KINDS,
    Aquifer,
    CostCase,
    Prices,
    Scenario,
    Settings,
)
from engine.scenario.problems import InputError, Problem
from engine.scenario.pathway_inputs import PATHWAY_FILE, PATHWAY_SECTIONS, RETIREMENT_COLUMN, read_pathway_inputs
# pathway.csv is read (and its problems reported) by engine.scenario.pathway_inputs

REPO_ROOT = Path(__file__).resolve().parents[2]
DEMO_DIR = REPO_ROOT / "demo_data"
"""The demo scenario shipped with the project; the word ``demo`` stands for it on the command line."""

MAX_FILE_BYTES = 200 * 1024 * 1024
"""Largest input file read [bytes]; a bigger file is refused with a message rather than exhausting memory."""

SCENARIO_FILE = "scenario.toml"
DISTRICTS_FILE = "districts.geojson"
TECHNOLOGIES_FILE = "technologies.csv"
HOURLY_FILE = "hourly.csv"
WELLS_FILE = "wells.csv"
DISTRICT_TECHNOLOGIES_FILE = "district_technologies.csv"
BUILDINGS_FILE = "buildings.csv"
HEAT_DEMAND_HOURLY_FILE = "heat_demand_hourly.csv"
GROUNDWATER_TEMP_HOURLY_FILE = "groundwater_temp_hourly.csv"
COST_CASES_FILE = "cost_cases.toml"

REQUIRED_FILES = (SCENARIO_FILE, DISTRICTS_FILE, TECHNOLOGIES_FILE, HOURLY_FILE)
OPTIONAL_FILES = (
    WELLS_FILE,
    DISTRICT_TECHNOLOGIES_FILE,
    BUILDINGS_FILE,
    HEAT_DEMAND_HOURLY_FILE,
    GROUNDWATER_TEMP_HOURLY_FILE,
    COST_CASES_FILE,
)
HOURS_PER_YEAR = (8760, 8784)

KIND_CARRIERS = {
    "fuel_boiler": ("gas", "oil", "biomass"),
    "electric_boiler": ("electricity",),
    "air_heat_pump": ("electricity",),
    "groundwater_heat_pump": ("electricity",),
    "network_connection": ("network",),
    "heat_store": ("none",),
    "chiller": ("electricity",),
    "groundwater_cooling": ("electricity",),
}
"""Carriers each technology kind may draw on."""

BOILER_KINDS = ("fuel_boiler", "electric_boiler")
EER_KINDS = ("chiller", "groundwater_cooling")

DISTRICT_ID_PATTERN = re.compile(r"^[A-Za-z0-9_-]+$")

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

CELL_REPORT_LIMIT = 5
"""Bad cells listed per column and kind of problem before the rest are summed up in one line."""


# ============================================================================= problem collection
class _Report:
    """Collects problems; ``guard`` turns an unexpected exception into a problem on the file being read."""

    def __init__(self) -> None:
        self.problems: list[Problem] = []

    def __call__(self, file: str, row: int | None, column: str | None, message: str) -> None:
        self.problems.append(Problem(file, None if row is None else int(row), column, message))

    @contextmanager
    def guard(self, file: str) -> Iterator[None]:
        try:
            yield
        except InputError as error:
            self.problems.extend(error.problems)
        except Exception as error:  # never a traceback for a planner: report it on the file being read
            self(
                file,
                None,
                None,
                f"could not be read ({type(error).__name__}: {error}); check it against docs/input_format.md",
            )


# ============================================================================= reading files
def _close_names(name: str, names: list[str]) -> list[str]:
    lowered = {n.lower(): n for n in names}
    if name.lower() in lowered:
        return [lowered[name.lower()]]
    return difflib.get_close_matches(name, names, n=2, cutoff=0.75)


_FILE_CONTENTS = {
    SCENARIO_FILE: "the [run] and [prices] sections",
    DISTRICTS_FILE: "a GeoJSON FeatureCollection with one polygon feature per district",
    COST_CASES_FILE: "at least one [cases.<name>] table",
}
"""What a required file or a TOML file must hold, for the message about an empty one (CSV: a header row)."""
_CSV_ROWS = {
    TECHNOLOGIES_FILE: "technology",
    HOURLY_FILE: "hour of the year",
    WELLS_FILE: "well doublet",
    BUILDINGS_FILE: "building",
    DISTRICT_TECHNOLOGIES_FILE: "district and technology",
    HEAT_DEMAND_HOURLY_FILE: "hour of the year",
    GROUNDWATER_TEMP_HOURLY_FILE: "hour of the year",
}

_ARCHIVE_SIGNATURES = {
    b"PK\x03\x04": "a zip archive (a spreadsheet workbook such as .xlsx or .ods, or a zipped layer)",
    b"\xd0\xcf\x11\xe0": "an old-style spreadsheet workbook (.xls)",
}


def _empty_message(name: str, required: bool) -> str:
    if not required and name != COST_CASES_FILE:
        return "is empty"
    if name.endswith(".csv"):
        entry = _CSV_ROWS.get(name, "entry")
        return f"is empty; it must hold a header row with the column names and one row per {entry}"
    contents = _FILE_CONTENTS.get(name, "its data")
    return f"is empty; it must hold {contents} (see docs/input_format.md)" + (
        "" if required else ", or delete the file"
    )


def _undecodable_cell(name: str, data: bytes, start: int) -> tuple[int, str | None]:
    """Line (a spreadsheet row for CSV) and, for a CSV file, the column header of the byte at ``start``."""
    line = data[:start].count(b"\n") + 1
    if not name.lower().endswith(".csv") or line == 1:
        return line, None
    lines = data.decode("utf-8", errors="replace").split("\n")
    try:
        header = [cell.strip() for cell in next(csv.reader([lines[0].rstrip("\r")]))]
        record = next(csv.reader([lines[line - 1].rstrip("\r")]), [])
    except csv.Error:  # a quote left open: only the line is known
        return line, None
    for position, cell in enumerate(record):
        if "\ufffd" in cell:
            return line, (header[position] or None) if position < len(header) else None
    return line, None


def _size_text(size: int) -> str:
    for unit, scale in (("GB", 1024**3), ("MB", 1024**2), ("kB", 1024)):
        if size >= scale:
            return f"{size / scale:.3g} {unit}"
    return f"{size} bytes"


def _read_text(folder: Path, name: str, report: _Report, required: bool) -> str | None:
    """The file's text (UTF-8, a BOM allowed), or None after reporting why it cannot be used."""
    path = folder / name
    if not path.exists():
        if required:
            others = sorted(p.name for p in folder.iterdir()) if folder.is_dir() else []
            close = _close_names(name, others)
            hint = f" (found {', '.join(repr(c) for c in close)}: rename it to '{name}')" if close else ""
            report(name, None, None, f"required file is missing{hint}")
        return None
    if not path.is_file():
        report(name, None, None, "is not a file")
        return None
    size = path.stat().st_size
    if size > MAX_FILE_BYTES:
        report(
            name,
            None,
            None,
            f"is {_size_text(size)}, larger than the {_size_text(MAX_FILE_BYTES)} limit for one input file; "
            "aggregate the data (e.g. buildings to blocks) before loading",
        )
        return None
    data = path.read_bytes()
    if not data.strip():
        report(name, None, None, _empty_message(name, required))
        return None
    geojson = name.lower().endswith((".geojson", ".json"))
    for signature, what in _ARCHIVE_SIGNATURES.items():
        if data.startswith(signature):
            fix = "export the layer as GeoJSON" if geojson else "open it and save it as 'CSV UTF-8' (comma separated)"
            if name.lower().endswith(".toml"):
                fix = "write it as plain text (see docs/input_format.md)"
            report(name, None, None, f"is not a text file but {what}; {fix}")
            return None
    utf16 = data[:2] in (b"\xff\xfe", b"\xfe\xff") or (len(data) > 3 and data[1::2].count(0) > len(data) // 4)
    utf16_hint = " (it looks like UTF-16)" if utf16 else ""
    try:
        text = data.decode("utf-8-sig")
    except UnicodeDecodeError as error:
        line, column = _undecodable_cell(name, data, error.start)
        # The cell's column goes into the message: the problem concerns the whole file, which must be saved again.
        where = f"in column '{column}' of this row" if column else "on this line"
        if geojson:  # a GeoJSON row is a feature number, so the line goes into the message
            where, line = f"on line {line}", None
        report(
            name,
            line,
            None,
            f"is not UTF-8 text{utf16_hint}: byte 0x{data[error.start]:02x} {where} cannot be decoded; "
            "save the file as UTF-8" + (" (in a spreadsheet: 'CSV UTF-8')" if name.lower().endswith(".csv") else ""),
        )
        return None
    if "\x00" in text:
        line = text[: text.index("\x00")].count("\n") + 1
        where = "on this line"
        if geojson:
            where, line = f"on line {line}", None
        report(
            name,
            line,
            None,
            f"holds a NUL byte (0x00) {where}, which text files never do{utf16_hint}: the file is binary or in "
            "another encoding; save it as UTF-8 text",
        )
        return None
    if not text.strip():
        report(name, None, None, _empty_message(name, required))
        return None
    return text


# ----------------------------------------------------------------------------- CSV tables
@dataclass
class _Table:
    """Cells of one table as stripped text, with the place of each record for messages."""

    file: str
    cells: pd.DataFrame
    rows: list[int]
    labels: list[str] | None = None
    blank_text: str = "is blank"
    item_word: str = "rows"
    header_row: int = 1
    skipped: frozenset = frozenset()
    """Records whose cells are not checked one by one: rows with the wrong number of cells, reported already,
    whose cells sit under the wrong headers."""

    def place(self, index: int) -> tuple[int, str]:
        prefix = self.labels[index] if self.labels else ""
        return self.rows[index], prefix

    def __len__(self) -> int:
        return len(self.rows)


def _read_csv(folder: Path, name: str, report: _Report, required: bool) -> _Table | None:
    """Parse a CSV file into a :class:`_Table`; reports layout problems (separator, ragged rows, header)."""
    text = _read_text(folder, name, report, required)
    if text is None:
        return None
    reader = csv.reader(io.StringIO(text, newline=""))
    records: list[list[str]] = []
    last_line = 0  # line where the last complete record ended
    try:
        for record in reader:
            records.append(record)
            last_line = reader.line_num
    except csv.Error as error:
        hint = "save it again as 'CSV UTF-8' (comma separated)"
        if "field larger" in str(error):
            hint = "a quote (\") opened on this row is probably not closed and swallows the rest of the file: " \
                   "close it, or " + hint
        report(name, last_line + 1, None, f"is not a readable CSV file ({error}); {hint}")
        return None
    filled = [i for i, record in enumerate(records) if "".join(record).strip()]
    if not filled:
        report(name, None, None, "holds only empty cells; it needs a header row with the column names")
        return None
    first = filled[0]  # blank lines above the header are skipped, as below it; rows keep their numbers
    header_row = first + 1
    header = [cell.strip() for cell in records[first]]
    if len(header) == 1 and (";" in header[0] or "\t" in header[0]):
        separator = "';'" if ";" in header[0] else "tabs"
        report(
            name, header_row, None, f"uses {separator} to separate columns; the format needs commas (and '.' decimals)"
        )
        return None
    if len(header) == 1 and len(filled) > 1 and len(records[filled[1]]) > 1:
        report(
            name,
            header_row,
            None,
            f"holds one cell ('{_printable(header[0])}') but row {filled[1] + 1} holds {len(records[filled[1]])}: "
            "the first row must be the header with the column names; delete any title rows above it",
        )
        return None
    width = len(header)
    rows: list[int] = []
    kept: list[list[str]] = []
    ragged = 0
    shifted: list[int] = []
    for index, record in enumerate(records[first + 1 :], start=first + 2):
        if len(record) == width and record[0]:
            rows.append(index)  # the common case, kept cheap for year-long hourly files
            kept.append(record)
            continue
        if not "".join(record).strip():
            continue  # blank lines (often trailing) are skipped but keep the row count right
        if len(record) != width:
            ragged += 1
            if ragged <= CELL_REPORT_LIMIT:
                if width > 1 and len(record) > width:
                    hint = "; a ',' used as decimal mark splits a number into two cells: use '.' (or quote the cell)"
                elif len(record) > width:
                    hint = "; the header row lacks column names"
                else:
                    hint = "; add the missing cells (an empty cell between two commas where the value is blank)"
                report(name, index, None, f"has {len(record)} cells but the header has {width} columns{hint}")
            record = (record + [""] * width)[:width]
            shifted.append(len(kept))
        rows.append(index)
        kept.append(record)
    if ragged > CELL_REPORT_LIMIT:
        report(name, None, None, f"... and {ragged - CELL_REPORT_LIMIT} more rows with the wrong number of cells")
    if '"' in text:
        _check_open_quotes(report, name, header, rows, kept)
    columns: dict[str, pd.Series] = {}
    for position, values in enumerate(zip(*kept) if kept else [()] * width):
        column = header[position]
        # Plain Python strings (object dtype): stripping and comparing them is several times faster than through
        # the string dtype, which matters for year-long hourly files.
        cells = pd.Series([value.strip() for value in values], dtype=object)
        if column == "":
            if (cells != "").any():
                report(
                    name,
                    header_row,
                    None,
                    f"column {position + 1} holds values but has no header; give it a header (a name starting with "
                    "'note' for remarks) or delete its values",
                )
            continue
        if column in columns:
            report(name, header_row, column, "appears twice in the header; delete or rename one of the two columns")
            continue
        columns[column] = cells
    frame = pd.DataFrame(columns) if columns else pd.DataFrame(index=range(len(kept)))
    return _Table(name, frame.reset_index(drop=True), rows, skipped=frozenset(shifted), header_row=header_row)


def _check_open_quotes(report: _Report, name: str, header: list[str], rows: list[int], kept: list[list[str]]) -> None:
    """A cell that runs over several lines holding what look like further rows: a quote was left open, and the
    rows after it would silently vanish into one cell."""
    width = len(header)
    for row, record in zip(rows, kept):
        for position, cell in enumerate(record):
            if "\n" not in cell and "\r" not in cell:
                continue
            swallowed = [line for line in cell.splitlines()[1:] if width > 1 and line.count(",") >= width - 1]
            if swallowed:
                column = header[position] if position < len(header) else None
                report(
                    name,
                    row,
                    column or None,
                    f"a quote (\") opened in this cell is not closed: the cell runs over {len(cell.splitlines())} "
                    f"lines and swallows {len(swallowed)} line(s) that look like rows; close or remove the quote",
                )
                return  # the rest of the file is inside this cell


# ----------------------------------------------------------------------------- TOML
_TOML_LINE = re.compile(r"\(at line (\d+), column (\d+)\)")


def _read_toml(folder: Path, name: str, report: _Report, required: bool) -> tuple[dict, str] | None:
    """Parse a TOML file; returns the data and its text (for line numbers of keys)."""
    text = _read_text(folder, name, report, required)
    if text is None:
        return None
    try:
        return tomllib.loads(text), text
    except tomllib.TOMLDecodeError as error:
        match = _TOML_LINE.search(str(error))
        line = int(match.group(1)) if match else None
        message = _TOML_LINE.sub("", str(error)).strip()
        report(name, line, None, f"TOML syntax error: {message}; {_toml_hint(message)}")
        return None


_TOML_HINTS = (
    ("invalid value", "text values need quotes (objective = \"cost\"), numbers use '.' as decimal mark"),
    ("cannot overwrite", "a key or [section] appears twice: keep one of them"),
    ("cannot declare", "a key or [section] appears twice: keep one of them"),
    ("expected '='", "each line is key = value"),
    ("unterminated", "a text value lacks its closing quote"),
    ("unclosed", "a bracket or quote is not closed"),
)


def _toml_hint(message: str) -> str:
    lowered = message.lower()
    for key, hint in _TOML_HINTS:
        if key in lowered:
            return f"{hint} (compare with the example in docs/input_format.md)"
    return "compare the line with the example in docs/input_format.md"


def _toml_key_lines(text: str) -> dict[tuple[str, ...], int]:
    """Line of each table header and key, by dotted path (a light scan, good enough for messages)."""
    lines: dict[tuple[str, ...], int] = {}
    current: tuple[str, ...] = ()

    def split(path: str) -> tuple[str, ...]:
        return tuple(part.strip().strip("\"'") for part in path.split("."))

    for number, raw in enumerate(text.splitlines(), start=1):
        line = raw.strip()
        if not line or line.startswith("#"):
            continue
        header = re.match(r"^\[\[?([^\]]+)\]\]?", line)
        if header:
            current = split(header.group(1))
            lines.setdefault(current, number)
            continue
        key = re.match(r"^([A-Za-z0-9_\-\.\"' ]+?)\s*=", line)
        if key:
            lines.setdefault(current + split(key.group(1)), number)
    return lines


def _toml_line(lines: dict[tuple[str, ...], int], path: tuple[str, ...]) -> int | None:
    for length in range(len(path), 0, -1):
        if path[:length] in lines:
            return lines[path[:length]]
    # A table known only through its sub-tables ([cases.reference] for "cases"): its first line.
    below = [line for key, line in lines.items() if key[: len(path)] == path]
    return min(below) if below else None


# ============================================================================= cell checks
REQUIRED = object()
"""Default marker: a blank cell is an error."""
KEEP = object()
"""Default marker: a blank cell stays blank (NaN or "") and a later rule fills it."""


@dataclass(frozen=True)
class _Col:
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


def _report_rows(
    report: _Report, table: _Table, column: str, mask: np.ndarray, message: Callable[[int], str]
) -> None:
    """Report the first few flagged cells of a column and sum up the rest in one line."""
    positions = np.flatnonzero(mask)
    if table.skipped:
        positions = np.array([i for i in positions if int(i) not in table.skipped], dtype=int)
    for index in positions[:CELL_REPORT_LIMIT]:
        row, prefix = table.place(int(index))
        report(table.file, row, column, prefix + message(int(index)))
    if len(positions) > CELL_REPORT_LIMIT:
        report(
            table.file,
            None,
            column,
            f"... and {len(positions) - CELL_REPORT_LIMIT} more {table.item_word} with the same kind of problem",
        )


_DECIMAL_COMMA = re.compile(r"^[+-]?\d+,\d+$")
_NUMBER_WITH_UNIT = re.compile(r"^[+-]?(\d+[.,]?\d*|\.\d+)([eE][+-]?\d+)?\s*[^\d\s.,+-].*$")
_TIMESTAMP = re.compile(r"^\d{4}-\d{2}-\d{2}([T ]\d{1,2}(:\d{2})*)?")
_NOT_A_NUMBER = {"nan", "na", "n/a", "null", "none", "-", "--", "?"}


def _cell_hint(text: str) -> str:
    """Why a cell that should hold a number does not, in the planner's terms (empty when nothing fits)."""
    if _DECIMAL_COMMA.match(text):
        return " (use '.' as the decimal mark)"
    if text.strip().lower() in _NOT_A_NUMBER:
        return " (a placeholder for a missing value: enter the value, or leave the cell blank where a default exists)"
    if _TIMESTAMP.match(text):
        return " (a date or time stamp where a number belongs)"
    if _NUMBER_WITH_UNIT.match(text):
        return " (write the number without the unit; the unit is in the column name)"
    return ""


def _range_hint(spec: _Col, value: float) -> str:
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


def _printable(cell: str, limit: int = 40) -> str:
    """A cell as it can be shown in a one-line message: control characters escaped, long text cut."""
    shown = "".join(ch if ch.isprintable() else repr(ch)[1:-1] for ch in cell)
    return shown if len(shown) <= limit else shown[: limit - 3] + "..."
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


def _parse_number_column(report: _Report, table: _Table, spec: _Col, raw: pd.Series) -> np.ndarray:
    text = raw.to_numpy(dtype=object)
    blank = (raw == "").to_numpy(dtype=bool)
    values = _numbers(text, blank)
    need = spec.need_text()

    def not_a_number(i: int) -> str:
        return f"must be {need}, got '{_printable(text[i])}'{_cell_hint(text[i])}"

    _report_rows(report, table, spec.name, ~blank & np.isnan(values), not_a_number)
    if not spec.allow_inf:
        infinite = np.isinf(values)
        _report_rows(
            report,
            table,
            spec.name,
            infinite,
            lambda i: f"must be a finite number{' ' + spec.range_text() if spec.range_text() else ''}, got "
            f"'{_printable(text[i])}' (enter the actual value; a huge one usually means a wrong unit)",
        )
        values[infinite] = np.nan
    finite = np.isfinite(values)
    if spec.kind == "integer":
        fractional = finite & (values != np.round(values))
        _report_rows(
            report, table, spec.name, fractional, lambda i: f"must be a whole number, got '{_printable(text[i])}'"
        )
    outside = ~np.isnan(values) & ~spec.in_range(values)
    _report_rows(
        report,
        table,
        spec.name,
        outside,
        lambda i: f"must be {spec.range_text()}, got {_printable(text[i])}{_range_hint(spec, values[i])}",
    )
    values[outside] = np.nan
    _fill_blanks(report, table, spec, blank, values, need)
    return values


def _fill_blanks(report: _Report, table: _Table, spec: _Col, blank: np.ndarray, values: np.ndarray, need: str):
    if spec.default is REQUIRED:
        _report_rows(report, table, spec.name, blank, lambda i: f"{table.blank_text}; {need} is required here")
    elif spec.default is not KEEP:
        values[blank] = spec.default


def _parse_bool_column(report: _Report, table: _Table, spec: _Col, raw: pd.Series) -> np.ndarray:
    text = [cell.lower() for cell in raw.to_numpy(dtype=object)]
    blank = np.array([cell == "" for cell in text], dtype=bool)
    values = np.array([cell in _TRUE for cell in text], dtype=object)
    unknown = np.array([cell not in _TRUE and cell not in _FALSE and cell != "" for cell in text], dtype=bool)
    _report_rows(report, table, spec.name, unknown, lambda i: f"must be true or false, got '{raw.iloc[i]}'")
    _fill_blanks(report, table, spec, blank, values, spec.need_text())
    return values.astype(bool)


def _parse_text_column(report: _Report, table: _Table, spec: _Col, raw: pd.Series) -> np.ndarray:
    values = raw.to_numpy(dtype=object).copy()
    blank = np.array([cell == "" for cell in values], dtype=bool)
    _fill_blanks(report, table, spec, blank, values, "a value")
    return values


def _parse_table(report: _Report, table: _Table, specs: tuple[_Col, ...]) -> pd.DataFrame:
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


def _first_cell(table: _Table, column: str) -> str:
    cells = table.cells[column]
    filled = cells[cells != ""]
    return str(filled.iloc[0]) if len(filled) else ""


def _timestamp_column(report: _Report, table: _Table) -> str | None:
    """A column of time stamps standing where ``hour`` belongs; reported once, with the fix."""
    if "hour" in table.cells.columns:
        return None
    for column in table.cells.columns:
        first = _first_cell(table, column)
        if column.lower() in _TIME_COLUMN_NAMES or _TIMESTAMP.match(first):
            example = f" such as '{_printable(first)}'" if first else ""
            report(
                table.file,
                table.header_row,
                column,
                f"holds time stamps{example} where the column 'hour' belongs; replace it by a column hour counting "
                "hour 0, 1, 2, ... n-1 from the first hour of the year (no dates, no time zones)",
            )
            return column
    return None


def _check_timestamp_hours(report: _Report, table: _Table) -> None:
    """Time stamps written into the ``hour`` column: one message, then the cells stand in as 0..n-1 so that
    the other columns are still checked."""
    if "hour" not in table.cells.columns or not _TIMESTAMP.match(_first_cell(table, "hour")):
        return  # a stray time stamp further down is reported as a bad number, with a hint
    cells = table.cells["hour"]
    stamps = cells.str.match(_TIMESTAMP.pattern).to_numpy(dtype=bool)
    if not stamps.any():
        return
    index = int(np.flatnonzero(stamps)[0])
    report(
        table.file,
        table.rows[index],
        "hour",
        f"holds time stamps such as '{_printable(cells.iloc[index])}'; number the hours 0 to n-1 instead "
        "(0 = the first hour of the year; no dates, no time zones)",
    )
    table.cells["hour"] = [str(i) for i in range(len(cells))]


def _check_header(report: _Report, table: _Table, specs: tuple[_Col, ...]) -> None:
    """Missing required columns, and unknown ones (only columns starting with 'note' may be added)."""
    known = [spec.name for spec in specs]
    present = list(table.cells.columns)
    stamps = _timestamp_column(report, table) if "hour" in known else None
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


def _read_checked_table(
    folder: Path, name: str, specs: tuple[_Col, ...], report: _Report, required: bool
) -> tuple[_Table, pd.DataFrame] | None:
    table = _read_csv(folder, name, report, required)
    if table is None:
        return None
    _check_timestamp_hours(report, table)
    _check_header(report, table, specs)
    return table, _parse_table(report, table, specs)


def _blank_cells(table: _Table, column: str) -> np.ndarray:
    """Mask of blank cells of ``column`` (all blank when the optional column is absent)."""
    if column not in table.cells.columns:
        return np.ones(len(table), dtype=bool)
    return (table.cells[column] == "").to_numpy(dtype=bool)


def _check_unique(report: _Report, table: _Table, values, column: str, what: str | None = None) -> None:
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


# ============================================================================= scenario.toml
RUN_KEYS = (
    _Col("name", "text", default="Unnamed city"),
    _Col("target_year", "integer", default=2040, low=2000, high=2200),
    _Col("objective", "text", default="cost"),
    _Col("discount_rate", default=0.05, low=-0.05, high=0.3),
    _Col("typical_days", "integer", default=12, low=0, high=366),
    _Col("value_of_unserved_heat_eur_per_mwh", default=5000.0, low=0, high=MAX_PRICE_EUR_PER_MWH * 10),
    _Col("allow_unserved_heat", "bool", default=True),
    _Col("co2_cap_t_per_a", default=0.0, low=0),
    _Col("network_plant_limit_kw", default=0.0, low=0),
    _Col("heating_base_temp_c", default=15.0, low=-10, high=30),
    _Col("cooling_base_temp_c", default=20.0, low=0, high=40),
    _Col("reinjection_min_temp_c", default=4.5, low=0, high=40),
    _Col("reinjection_max_temp_c", default=20.0, low=0, high=40),
)
PRICE_KEYS = (
    _Col("gas_eur_per_mwh", low=0, high=MAX_FUEL_PRICE_EUR_PER_MWH),
    _Col("oil_eur_per_mwh", low=0, high=MAX_FUEL_PRICE_EUR_PER_MWH),
    _Col("biomass_eur_per_mwh", low=0, high=MAX_FUEL_PRICE_EUR_PER_MWH),
    _Col("co2_eur_per_t", low=0, high=MAX_CO2_PRICE_EUR_PER_T),
)
CO2_FACTOR_KEYS = tuple(
    _Col(f"{fuel}_kg_per_mwh", default=DEFAULT_CO2_KG_PER_MWH[fuel], low=0, high=2000) for fuel in FUELS
)
AQUIFER_KEYS = (
    _Col("flow_direction_deg", default=90.0, low=0, high=360),
    _Col("darcy_velocity_m_per_d", default=0.5, low=0, high=100),
    _Col("effective_porosity", default=0.2, low=0, high=1, low_open=True),
    _Col("saturated_thickness_m", default=15.0, low=0, high=1000, low_open=True),
    _Col("longitudinal_dispersivity_m", default=5.0, low=0, high=10_000),
    _Col("transverse_dispersivity_m", default=0.5, low=0, high=10_000),
    _Col("aquifer_heat_capacity_mj_per_m3_k", default=2.8, low=0, high=10, low_open=True),
    _Col("water_heat_capacity_mj_per_m3_k", default=4.18, low=0, high=10, low_open=True),
    _Col("reinjection_offset_m", default=100.0, low=0, high=10_000, low_open=True),
)
SCENARIO_SECTIONS = {"run": RUN_KEYS, "prices": PRICE_KEYS, "co2_factors": CO2_FACTOR_KEYS, "aquifer": AQUIFER_KEYS}
REQUIRED_SECTIONS = ("run", "prices")
OBJECTIVES = ("cost", "co2")


def _toml_value_problem(value: Any, spec: _Col) -> str | None:
    """Why a TOML value does not fit ``spec``, or None."""
    if spec.kind == "text":
        return None if isinstance(value, str) else f"must be a text in quotes, got {value!r}"
    if spec.kind == "bool":
        return None if isinstance(value, bool) else f"must be true or false, got {value!r}"
    if isinstance(value, bool) or not isinstance(value, (int, float)):
        hint = ""
        if isinstance(value, str):
            try:
                float(value)
                hint = " (a number in quotes is text: remove the quotes)"
            except ValueError:
                hint = _cell_hint(value)
        return f"must be {spec.need_text()}, got {value!r}{hint}"
    if not math.isfinite(value) and not spec.allow_inf:
        return (
            f"must be a finite number{' ' + spec.range_text() if spec.range_text() else ''}, got {value!r} "
            "(enter the actual value)"
        )
    if spec.kind == "integer" and value != int(value):
        return f"must be a whole number, got {value!r}"
    if not spec.in_range(np.array([float(value)]))[0]:
        return f"must be {spec.range_text()}, got {value!r}{_range_hint(spec, float(value))}"
    return None


def _toml_section(
    report: _Report,
    file: str,
    lines: dict,
    path: tuple[str, ...],
    section: Any,
    specs: tuple[_Col, ...],
    extra_known: tuple[str, ...] = (),
) -> dict[str, Any]:
    """Checked values of one TOML table (defaults for absent keys); unknown keys are reported."""
    dotted = ".".join(path)
    values: dict[str, Any] = {}
    if not isinstance(section, dict):
        report(file, _toml_line(lines, path), dotted, "must be a table ([section] with key = value lines)")
        section = {}
    known = {spec.name: spec for spec in specs}
    for key in section:
        if key not in known:
            close = difflib.get_close_matches(key, list(known), n=1, cutoff=0.6)
            hint = f"did you mean '{close[0]}'? " if close else ""
            report(
                file,
                _toml_line(lines, path + (key,)),
                f"{dotted}.{key}",
                f"unknown key; {hint}known keys in [{dotted}]: {', '.join(list(known) + list(extra_known))}",
            )
    for spec in specs:
        if spec.name not in section:
            if spec.default is REQUIRED:
                report(file, _toml_line(lines, path), f"{dotted}.{spec.name}", "is missing; a value is required")
            else:
                values[spec.name] = spec.default
            continue
        value = section[spec.name]
        message = _toml_value_problem(value, spec)
        if message:
            report(file, _toml_line(lines, path + (spec.name,)), f"{dotted}.{spec.name}", message)
            continue
        values[spec.name] = int(value) if spec.kind == "integer" else (float(value) if spec.kind == "number" else value)
    return values


def _check_run_settings(report: _Report, file: str, lines: dict, run: dict) -> None:
    if "objective" in run and run["objective"] not in OBJECTIVES:
        report(
            file,
            _toml_line(lines, ("run", "objective")),
            "run.objective",
            f"must be one of {', '.join(repr(o) for o in OBJECTIVES)}, got {run['objective']!r}",
        )
    low, high = run.get("reinjection_min_temp_c"), run.get("reinjection_max_temp_c")
    if low is not None and high is not None and low >= high:
        report(
            file,
            _toml_line(lines, ("run", "reinjection_max_temp_c")),
            "run.reinjection_max_temp_c",
            f"must be above reinjection_min_temp_c ({low:g} °C), got {high:g}",
        )


def _check_price_units(report: _Report, file: str, lines: dict, prices: dict) -> None:
    for fuel in FUELS:
        key = f"{fuel}_eur_per_mwh"
        value = prices.get(key)
        if value is not None and 0 < value < 1:
            report(
                file,
                _toml_line(lines, ("prices", key)),
                f"prices.{key}",
                f"{value:g} EUR/MWh is implausibly low; looks like EUR/kWh instead of EUR/MWh",
            )


def _load_settings(folder: Path, report: _Report) -> tuple[Settings, Prices, Aquifer] | None:
    parsed = _read_toml(folder, SCENARIO_FILE, report, required=True)
    if parsed is None:
        return None
    data, text = parsed
    lines = _toml_key_lines(text)
    before = len(report.problems)
    for key in data:
        if key not in SCENARIO_SECTIONS and key not in PATHWAY_SECTIONS:
            report(
                SCENARIO_FILE,
                _toml_line(lines, (key,)),
                key,
                f"unknown section or key; known sections: {', '.join('[' + s + ']' for s in SCENARIO_SECTIONS)}",
            )
    for section in REQUIRED_SECTIONS:
        if section not in data:
            report(SCENARIO_FILE, None, section, f"section [{section}] is missing")
    values = {
        name: _toml_section(report, SCENARIO_FILE, lines, (name,), data.get(name, {}), specs)
        for name, specs in SCENARIO_SECTIONS.items()
        if name in data or name not in REQUIRED_SECTIONS
    }
    _check_run_settings(report, SCENARIO_FILE, lines, values.get("run", {}))
    _check_price_units(report, SCENARIO_FILE, lines, values.get("prices", {}))
    if len(report.problems) > before:
        return None
    factors = values["co2_factors"]
    prices = Prices(**values["prices"], co2_kg_per_mwh={fuel: factors[f"{fuel}_kg_per_mwh"] for fuel in FUELS})
    return Settings(**values["run"]), prices, Aquifer(**values["aquifer"])


# ============================================================================= cost_cases.toml
CASE_KEYS = (
    _Col("description", "text", default="Prices as given in the scenario"),
    _Col("co2_eur_per_t", default=None, low=0, high=MAX_CO2_PRICE_EUR_PER_T),
    _Col("gas_price_factor", default=1.0, low=0, high=MAX_PRICE_FACTOR),
    _Col("oil_price_factor", default=1.0, low=0, high=MAX_PRICE_FACTOR),
    _Col("biomass_price_factor", default=1.0, low=0, high=MAX_PRICE_FACTOR),
    _Col("electricity_price_factor", default=1.0, low=0, high=MAX_PRICE_FACTOR),
    _Col("network_price_factor", default=1.0, low=0, high=MAX_PRICE_FACTOR),
)
CASE_TABLES = {
    "subsidy_share": _Col("subsidy_share", low=0, high=1),
    "investment_factor": _Col("investment_factor", low=0, high=MAX_PRICE_FACTOR),
}


def _case_overrides(
    report: _Report, lines: dict, path: tuple[str, ...], table: Any, spec: _Col, technology_ids: set | None
) -> dict[str, float]:
    """Per-technology overrides of one case (subsidy shares or investment factors)."""
    dotted = ".".join(path)
    if not isinstance(table, dict):
        report(COST_CASES_FILE, _toml_line(lines, path), dotted, "must be a table of technology_id = number")
        return {}
    values = {}
    for technology, value in table.items():
        key_path = path + (technology,)
        line = _toml_line(lines, key_path)
        if technology_ids is not None and technology not in technology_ids:
            known = ", ".join(sorted(technology_ids)) or "(none)"
            close = _close_names(technology, sorted(technology_ids))
            hint = f"did you mean '{close[0]}'? " if close else ""
            report(
                COST_CASES_FILE, line, ".".join(key_path), f"unknown technology '{technology}'; {hint}known: {known}"
            )
            continue
        message = _toml_value_problem(value, spec)
        if message:
            report(COST_CASES_FILE, line, ".".join(key_path), message)
            continue
        values[technology] = float(value)
    return values


def _load_cost_cases(folder: Path, report: _Report, technology_ids: set | None) -> dict[str, CostCase] | None:
    if not (folder / COST_CASES_FILE).exists():
        return {"reference": CostCase()}
    parsed = _read_toml(folder, COST_CASES_FILE, report, required=False)
    if parsed is None:
        return None
    data, text = parsed
    lines = _toml_key_lines(text)
    before = len(report.problems)
    for key in data:
        if key != "cases":
            report(COST_CASES_FILE, _toml_line(lines, (key,)), key, "unknown key; cases go in [cases.<name>] tables")
    cases_table = data.get("cases", {})
    if not isinstance(cases_table, dict) or not cases_table:
        report(COST_CASES_FILE, None, "cases", "defines no cost case; add a [cases.reference] table or delete the file")
        return None
    cases: dict[str, CostCase] = {}
    for name, body in cases_table.items():
        path = ("cases", name)
        if not isinstance(body, dict):
            report(COST_CASES_FILE, _toml_line(lines, path), f"cases.{name}", "must be a table [cases.<name>]")
            continue
        plain = {key: value for key, value in body.items() if key not in CASE_TABLES}
        values = _toml_section(report, COST_CASES_FILE, lines, path, plain, CASE_KEYS, tuple(CASE_TABLES))
        overrides = {
            key: _case_overrides(report, lines, path + (key,), body[key], spec, technology_ids)
            for key, spec in CASE_TABLES.items()
            if key in body
        }
        cases[name] = CostCase(name=name, **values, **overrides)
    return cases if len(report.problems) == before else None


# ============================================================================= districts.geojson
DISTRICT_PROPERTIES = (
    _Col("district_id", "text", in_header=False),
    _Col("name", "text", in_header=False, default=KEEP),
    _Col("heat_demand_mwh_per_a", in_header=False, low=0),
    _Col("cooling_demand_mwh_per_a", in_header=False, default=0.0, low=0),
    _Col("supply_temp_c", in_header=False, low=25, high=130),
    _Col("hot_water_share", in_header=False, default=0.15, low=0, high=1),
    _Col("network_available", "bool", in_header=False, default=False),
    _Col("network_connection_limit_kw", in_header=False, default=0.0, low=0),
)
DISTRICT_COLUMNS = tuple(spec.name for spec in DISTRICT_PROPERTIES) + ("geometry",)
_WGS84_NAMES = ("crs84", "4326")


@dataclass
class _Districts:
    table: _Table
    frame: pd.DataFrame
    geometries: list[Any]
    shapes: list[Any]

    @property
    def ids(self) -> list[str]:
        return list(self.frame["district_id"])

    @property
    def unusable(self) -> int:
        return sum(shape is None for shape in self.shapes)


class _JsonObject(dict):
    """A JSON object that remembers the keys it held more than once (plain json keeps the last silently)."""

    repeated: tuple = ()

    @classmethod
    def from_pairs(cls, pairs: list) -> "_JsonObject":
        obj = cls(pairs)
        if len(obj) < len(pairs):
            seen: set = set()
            obj.repeated = tuple(dict.fromkeys(k for k, _ in pairs if k in seen or seen.add(k)))
        return obj


def _property_text(value: Any) -> str:
    if value is None:
        return ""
    if isinstance(value, bool):
        return "true" if value else "false"
    if isinstance(value, float):
        return repr(value)
    return str(value).strip()


def _feature_collection(report: _Report, data: Any) -> list | None:
    """The features of a FeatureCollection, or None after reporting why there are none."""
    if not isinstance(data, dict) or data.get("type") != "FeatureCollection":
        got = data.get("type") if isinstance(data, dict) else type(data).__name__
        report(DISTRICTS_FILE, None, None, f"must be a GeoJSON FeatureCollection, got {got!r}")
        return None
    crs = data.get("crs")
    if crs is not None:
        name = json.dumps(crs).lower()
        if not any(token in name for token in _WGS84_NAMES):
            report(
                DISTRICTS_FILE,
                None,
                "crs",
                f"declares the coordinate system {_crs_name(crs)!r}; "
                "GeoJSON must be WGS 84 longitude/latitude (EPSG:4326): reproject the layer when exporting",
            )
    features = data.get("features")
    if not isinstance(features, list) or not features:
        report(DISTRICTS_FILE, None, "features", "holds no features; each district needs one polygon feature")
        return None
    return features


def _crs_name(crs: Any) -> str:
    if isinstance(crs, dict) and isinstance(crs.get("properties"), dict):
        return str(crs["properties"].get("name", crs))
    return str(crs)


def _district_table(report: _Report, features: list) -> tuple[_Table, list[Any]]:
    """Properties of the usable features as a text table, with their geometries."""
    known = [spec.name for spec in DISTRICT_PROPERTIES]
    columns: dict[str, list[str]] = {name: [] for name in known}
    rows: list[int] = []
    labels: list[str] = []
    geometries: list[Any] = []
    unknown_seen: dict[str, list[int]] = {}
    for number, feature in enumerate(features, start=1):
        if not isinstance(feature, dict) or feature.get("type") != "Feature":
            report(DISTRICTS_FILE, number, None, "is not a GeoJSON Feature")
            continue
        properties = feature.get("properties")
        if not isinstance(properties, dict) or not properties:
            report(
                DISTRICTS_FILE,
                number,
                None,
                "has no properties; each district needs district_id, heat_demand_mwh_per_a and supply_temp_c",
            )
            continue
        for key in getattr(properties, "repeated", ()):
            report(
                DISTRICTS_FILE,
                number,
                key,
                "appears more than once in this feature's properties (the last value would silently win); keep one",
            )
        for key in properties:
            if key not in known and not str(key).lower().startswith("note"):
                unknown_seen.setdefault(key, []).append(number)
        for name in known:
            columns[name].append(_property_text(properties.get(name)))
        district_id = columns["district_id"][-1]
        rows.append(number)
        labels.append(f"district '{district_id}': " if district_id else "")
        geometries.append(feature.get("geometry"))
    for key, numbers in unknown_seen.items():
        close = difflib.get_close_matches(key, known, n=1, cutoff=0.6)
        hint = f"did you mean '{close[0]}'? " if close else ""
        report(
            DISTRICTS_FILE,
            numbers[0],
            key,
            f"unknown property (in {len(numbers)} feature(s)); {hint}known properties: {', '.join(known)} "
            "(extra properties are allowed only when their name starts with 'note')",
        )
    table = _Table(
        DISTRICTS_FILE,
        pd.DataFrame(columns, dtype=str),
        rows,
        labels,
        blank_text="is missing or null",
        item_word="features",
    )
    return table, geometries


def _check_district_geometries(report: _Report, table: _Table, geometries: list[Any]) -> list[Any]:
    """Shapes of the usable polygons (None for the others, which are reported)."""
    shapes = []
    for index, shape in enumerate(geometries):
        problems = geometry.geometry_problems(shape)
        row, prefix = table.place(index)
        for message in problems:
            report(DISTRICTS_FILE, row, "geometry", prefix + message)
        shapes.append(None if problems else geometry.to_shape(shape))
    return shapes


def _check_district_ids(report: _Report, table: _Table, frame: pd.DataFrame) -> None:
    bad = np.array([bool(v) and not DISTRICT_ID_PATTERN.match(v) for v in frame["district_id"]], dtype=bool)
    _report_rows(
        report,
        table,
        "district_id",
        bad,
        lambda i: f"'{frame['district_id'].iloc[i]}' may hold only letters, digits, '_' and '-'",
    )
    _check_unique(report, table, list(frame["district_id"]), "district_id", "district_id '{}'")


def _check_district_network(report: _Report, table: _Table, frame: pd.DataFrame) -> None:
    limit = frame["network_connection_limit_kw"].to_numpy(dtype=float)
    conflict = (limit > 0) & ~frame["network_available"].to_numpy(dtype=bool)
    _report_rows(
        report,
        table,
        "network_connection_limit_kw",
        conflict,
        lambda i: f"is {limit[i]:g} kW but network_available is false; set network_available to true or the limit to 0",
    )


def _check_district_units(report: _Report, table: _Table, frame: pd.DataFrame, geometries: list, shapes: list) -> None:
    """Demands that look like kWh written in an MWh column: too large in total or per km² of the polygon."""
    areas = np.array(
        [geometry.area_km2(g) if shape is not None else np.nan for g, shape in zip(geometries, shapes)], dtype=float
    )
    for column in ("heat_demand_mwh_per_a", "cooling_demand_mwh_per_a"):
        demand = frame[column].to_numpy(dtype=float)
        huge = demand > MAX_DISTRICT_DEMAND_MWH_PER_A
        _report_rows(
            report,
            table,
            column,
            huge,
            lambda i: f"{demand[i]:.6g} MWh/a is more than 10 TWh/a for one district; looks like kWh instead of MWh",
        )
        with np.errstate(invalid="ignore", divide="ignore"):
            density = np.where(areas > 0, demand / areas, np.nan)
        dense = ~huge & (density > MAX_HEAT_DENSITY_MWH_PER_KM2)
        _report_rows(
            report,
            table,
            column,
            dense,
            lambda i: f"{demand[i]:.6g} MWh/a on {areas[i]:.3g} km² is {density[i]:.3g} MWh per km², far above any "
            f"city (limit {MAX_HEAT_DENSITY_MWH_PER_KM2:.0e}); looks like kWh instead of MWh",
        )


def _load_districts(folder: Path, report: _Report) -> _Districts | None:
    text = _read_text(folder, DISTRICTS_FILE, report, required=True)
    if text is None:
        return None
    try:
        data = json.loads(text, object_pairs_hook=_JsonObject.from_pairs)
    except (json.JSONDecodeError, RecursionError) as error:
        if isinstance(error, RecursionError):
            detail = "its objects are nested too deeply"
        else:
            detail = f"{error.msg} at line {error.lineno}, column {error.colno}"
        start = text.lstrip()[:200].lower()
        if start.startswith("<"):
            fix = "it looks like XML (KML or GML): export the layer as GeoJSON"
        elif start.startswith(("shape", "\"wkt", "polygon", "multipolygon")):
            fix = "it looks like a table or WKT text: export the layer as GeoJSON"
        else:
            fix = "the file may be cut short or edited by hand; export the layer as GeoJSON again"
        report(DISTRICTS_FILE, None, None, f"is not valid JSON ({detail}); {fix}")
        return None
    features = _feature_collection(report, data)
    if features is None:
        return None
    table, geometries = _district_table(report, features)
    frame = _parse_table(report, table, DISTRICT_PROPERTIES)
    frame["name"] = [name or district_id for name, district_id in zip(frame["name"], frame["district_id"])]
    shapes = _check_district_geometries(report, table, geometries)
    _check_district_ids(report, table, frame)
    _check_district_network(report, table, frame)
    _check_district_units(report, table, frame, geometries, shapes)
    # Usable geometries keep only their type and coordinates, in that order, so that the same polygon written
    # with its keys in another order (or with a bbox) gives the same scenario and the same input hash.
    geometries = [
        {"type": g["type"], "coordinates": g["coordinates"]} if shape is not None else g
        for g, shape in zip(geometries, shapes)
    ]
    frame["geometry"] = geometries
    return _Districts(table, frame, geometries, shapes)


# ============================================================================= technologies.csv
TECHNOLOGY_COLUMNS = (
    _Col("technology_id", "text"),
    _Col("name", "text", in_header=False, default=KEEP),
    _Col("kind", "text"),
    _Col("carrier", "text"),
    _Col("efficiency", in_header=False, default=KEEP, low=0, low_open=True),
    _Col("cop_quality_grade", in_header=False, default=0.5, low=0, high=1, low_open=True),
    _Col("source_approach_k", in_header=False, default=5.0, low=0, high=30),
    _Col("sink_approach_k", in_header=False, default=3.0, low=0, high=30),
    _Col("investment_eur_per_kw", low=0, high=MAX_INVESTMENT_EUR_PER_KW),
    _Col("fixed_om_pct_per_a", default=0.0, low=0, high=100),
    _Col("variable_om_eur_per_mwh", default=0.0, low=0, high=MAX_FUEL_PRICE_EUR_PER_MWH),
    _Col("lifetime_a", low=0, high=100, low_open=True),
    _Col("store_loss_pct_per_h", in_header=False, default=0.0, low=0, high=100),
    _Col("store_efficiency", in_header=False, default=1.0, low=0, high=1, low_open=True),
    _Col("store_hours", in_header=False, default=KEEP, low=0, high=8784, low_open=True),
)


def _check_kind_and_carrier(report: _Report, table: _Table, frame: pd.DataFrame) -> None:
    kinds = frame["kind"].to_numpy(dtype=object)
    carriers = frame["carrier"].to_numpy(dtype=object)
    bad_kind = np.array([k != "" and k not in TECHNOLOGY_KINDS for k in kinds], dtype=bool)
    _report_rows(
        report, table, "kind", bad_kind, lambda i: f"unknown kind '{kinds[i]}'; allowed: {', '.join(TECHNOLOGY_KINDS)}"
    )
    bad_carrier = np.array([c != "" and c not in CARRIERS for c in carriers], dtype=bool)
    _report_rows(
        report,
        table,
        "carrier",
        bad_carrier,
        lambda i: f"unknown carrier '{carriers[i]}'; allowed: {', '.join(CARRIERS)}",
    )
    mismatch = np.array(
        [k in KIND_CARRIERS and c in CARRIERS and c not in KIND_CARRIERS[k] for k, c in zip(kinds, carriers)],
        dtype=bool,
    )
    _report_rows(
        report,
        table,
        "carrier",
        mismatch,
        lambda i: f"a {kinds[i]} cannot run on '{carriers[i]}'; it needs {' or '.join(KIND_CARRIERS[kinds[i]])}",
    )


def _check_technology_parameters(report: _Report, table: _Table, frame: pd.DataFrame) -> None:
    """Ranges that depend on the kind: boiler efficiency, EER, store size."""
    kinds = frame["kind"].to_numpy(dtype=object)
    efficiency = frame["efficiency"].to_numpy(dtype=float)
    boiler = np.isin(kinds, BOILER_KINDS)
    with np.errstate(invalid="ignore"):
        bad_boiler = boiler & (efficiency > 1.2)
        eer = np.isin(kinds, EER_KINDS)
        bad_eer = eer & (efficiency > 50)
    _report_rows(
        report,
        table,
        "efficiency",
        bad_boiler,
        lambda i: f"thermal efficiency of a {kinds[i]} must be > 0 and <= 1.2, got {efficiency[i]:g}",
    )
    _report_rows(
        report,
        table,
        "efficiency",
        bad_eer,
        lambda i: f"EER of a {kinds[i]} must be > 0 and <= 50, got {efficiency[i]:g}",
    )
    _report_rows(
        report,
        table,
        "efficiency",
        eer & _blank_cells(table, "efficiency"),
        lambda i: f"is blank; the EER (> 0 and <= 50) of a {kinds[i]} is required",
    )
    store = kinds == "heat_store"
    hours = frame["store_hours"].to_numpy(dtype=float)
    hours_blank = _blank_cells(table, "store_hours")
    _report_rows(
        report,
        table,
        "store_hours",
        store & hours_blank,
        lambda i: "is blank; a heat_store needs its hours to charge at full power (> 0)",
    )
    _check_technology_minimums(report, table, frame, boiler, eer, store)
    frame["efficiency"] = np.where(np.isnan(efficiency) & ~eer, 1.0, efficiency)
    frame["store_hours"] = np.where(np.isnan(hours) & ~store, 0.0, hours)


TECHNOLOGY_MINIMUMS = (
    # column, which rows, smallest plausible value, what the column means (for the message)
    ("lifetime_a", "all", 1.0, "a lifetime in years (a): 20 means twenty years"),
    ("efficiency", "boiler", 0.3, "a thermal efficiency as a share (0.95, not 95 %); boilers reach 0.8 to 1.1"),
    ("efficiency", "eer", 0.5, "an EER (cooling out per electricity in); chillers reach 2 to 6"),
    ("store_efficiency", "store", 0.1, "a round-trip efficiency as a share; hot-water stores reach 0.5 to 0.98"),
    ("store_hours", "store", 0.1, "hours to charge the full store at full power; tanks take 2 to 24 h"),
)
"""Values allowed by the ranges of :data:`TECHNOLOGY_COLUMNS` but too small for any plant (typing errors or unit
slips); a divisor this small would also put coefficients near 1e300 into the LP. Typical values: common
practice."""


def _check_technology_minimums(
    report: _Report, table: _Table, frame: pd.DataFrame, boiler: np.ndarray, eer: np.ndarray, store: np.ndarray
) -> None:
    rows = {"all": np.ones(len(frame), dtype=bool), "boiler": boiler, "eer": eer, "store": store}
    for column, which, smallest, meaning in TECHNOLOGY_MINIMUMS:
        values = frame[column].to_numpy(dtype=float)
        with np.errstate(invalid="ignore"):
            small = rows[which] & (values > 0) & (values < smallest)
        _report_rows(
            report,
            table,
            column,
            small,
            lambda i: f"{values[i]:g} is implausibly small (below {smallest:g}); the column holds {meaning}",
        )


def _load_technologies(folder: Path, report: _Report) -> tuple[_Table, pd.DataFrame] | None:
    loaded = _read_checked_table(folder, TECHNOLOGIES_FILE, TECHNOLOGY_COLUMNS, report, required=True)
    if loaded is None:
        return None
    table, frame = loaded
    if len(table) == 0:
        report(TECHNOLOGIES_FILE, None, None, "lists no technology; add one row per technology below the header")
    frame["name"] = [name or tid for name, tid in zip(frame["name"], frame["technology_id"])]
    _check_unique(report, table, list(frame["technology_id"]), "technology_id", "technology_id '{}'")
    _check_kind_and_carrier(report, table, frame)
    _check_technology_parameters(report, table, frame)
    return table, frame


# ============================================================================= district_technologies.csv
DISTRICT_TECHNOLOGY_COLUMNS = (
    _Col("district_id", "text"),
    _Col("technology_id", "text"),
    _Col("existing_kw", in_header=False, default=0.0, low=0),
    _Col("potential_kw", in_header=False, default=math.inf, low=0, allow_inf=True),
    _Col(RETIREMENT_COLUMN, "text", in_header=False, default=""),  # checked in engine.scenario.pathway_inputs
)


def _check_references(
    report: _Report, table: _Table, frame: pd.DataFrame, column: str, known: list[str] | None, what: str
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
        close = _close_names(str(values[i]), list(known))
        hint = f"did you mean '{close[0]}'? " if close else ""
        return f"unknown {what} '{_printable(str(values[i]))}'; {hint}known: {shown}"

    _report_rows(report, table, column, bad, message)
    return bad


def _load_district_technologies(
    folder: Path, report: _Report, district_ids: list[str] | None, technology_ids: list[str] | None
) -> tuple[_Table, pd.DataFrame] | None:
    loaded = _read_checked_table(folder, DISTRICT_TECHNOLOGIES_FILE, DISTRICT_TECHNOLOGY_COLUMNS, report, False)
    if loaded is None:
        return None
    table, frame = loaded
    _check_references(report, table, frame, "district_id", district_ids, "district")
    _check_references(report, table, frame, "technology_id", technology_ids, "technology")
    pairs = list(zip(frame["district_id"], frame["technology_id"]))
    _check_unique(report, table, pairs, "technology_id", "row for district '{}' and technology '{}'")
    existing = frame["existing_kw"].to_numpy(dtype=float)
    potential = frame["potential_kw"].to_numpy(dtype=float)
    with np.errstate(invalid="ignore"):
        above = existing > potential
    _report_rows(
        report,
        table,
        "existing_kw",
        above,
        lambda i: f"existing capacity {existing[i]:g} is above the potential {potential[i]:g}; raise potential_kw "
        "to at least the existing capacity or lower existing_kw",
    )
    return table, frame


def _full_district_technologies(
    district_ids: list[str], technology_ids: list[str], overrides: pd.DataFrame | None
) -> pd.DataFrame:
    """One row per district and technology, defaults where the file has no row."""
    index = pd.MultiIndex.from_product([district_ids, technology_ids], names=["district_id", "technology_id"])
    full = pd.DataFrame({"existing_kw": 0.0, "potential_kw": math.inf}, index=index)
    if overrides is not None and len(overrides):
        given = overrides.set_index(["district_id", "technology_id"])[["existing_kw", "potential_kw"]]
        full.loc[given.index, ["existing_kw", "potential_kw"]] = given.to_numpy(dtype=float)
    return full.reset_index().astype({"district_id": str, "technology_id": str})


# ============================================================================= points: wells and buildings
def _check_points(report: _Report, table: _Table, frame: pd.DataFrame, lon: str, lat: str) -> np.ndarray:
    """Positions that are not plausible WGS 84 lon/lat; returns the mask of usable positions."""
    lons = frame[lon].to_numpy(dtype=float)
    lats = frame[lat].to_numpy(dtype=float)
    usable = np.isfinite(lons) & np.isfinite(lats)
    messages = [geometry.coordinate_problem(x, y) if ok else None for x, y, ok in zip(lons, lats, usable)]
    bad = np.array([m is not None for m in messages], dtype=bool)
    with np.errstate(invalid="ignore"):
        # A latitude beyond +-90 (swapped axes) belongs to the lat column; projected metres to the pair, under lon.
        lat_only = (np.abs(lats) > 90) & (np.abs(lats) <= geometry.PROJECTED_THRESHOLD) & (np.abs(lons) <= 180)
    _report_rows(report, table, lon, bad & ~lat_only, lambda i: messages[i])
    _report_rows(report, table, lat, bad & lat_only, lambda i: messages[i])
    return usable & ~bad


def _outside_note(districts: _Districts) -> str:
    if districts.unusable:
        return f" ({districts.unusable} district polygon(s) could not be used; fix districts.geojson first)"
    return ""


def _swapped_hints(districts: _Districts, lons: np.ndarray, lats: np.ndarray, outside: np.ndarray) -> list[str]:
    """For points outside every district: a hint when the point, read the other way round, lies in one."""
    hints = [""] * len(lons)
    if not outside.any():
        return hints
    with np.errstate(invalid="ignore"):
        plausible = outside & (np.abs(lons) <= 90)
    swapped = np.full(len(lons), -1)
    if plausible.any():
        swapped[plausible] = geometry.containing_index(districts.shapes, lats[plausible], lons[plausible])
    for i in np.flatnonzero(swapped >= 0):
        hints[i] = (
            f"; longitude and latitude look swapped: read as ({lats[i]:g}, {lons[i]:g}) the point lies in district "
            f"'{districts.ids[swapped[i]]}' (the order is lon, then lat)"
        )
    return hints


# ----------------------------------------------------------------------------- wells.csv
WELL_COLUMNS = (
    _Col("well_id", "text"),
    _Col("district_id", "text", in_header=False, default=KEEP),
    _Col("lon"),
    _Col("lat"),
    _Col("reinjection_lon", in_header=False, default=KEEP),
    _Col("reinjection_lat", in_header=False, default=KEEP),
    _Col("permit_flow_m3_per_h", low=0),
    _Col("permit_annual_volume_m3", in_header=False, default=math.inf, low=0, allow_inf=True),
    _Col("design_spread_k", low=0, high=30, low_open=True),
    _Col("groundwater_temp_c", low=0, high=40),
    _Col("groundwater_temp_amplitude_k", in_header=False, default=0.0, low=0, high=20),
    _Col("coldest_day_of_year", "integer", in_header=False, default=KEEP, low=1, high=366),
)


def _check_well_values(report: _Report, table: _Table, frame: pd.DataFrame) -> None:
    """Pairs of reinjection coordinates, seasonal fields, unit slips of the permit."""
    rlon = frame["reinjection_lon"].to_numpy(dtype=float)
    rlat = frame["reinjection_lat"].to_numpy(dtype=float)
    half = np.isnan(rlon) != np.isnan(rlat)
    _report_rows(
        report,
        table,
        "reinjection_lon",
        half,
        lambda i: "give both reinjection_lon and reinjection_lat, or leave both blank",
    )
    both = ~np.isnan(rlon) & ~np.isnan(rlat)
    messages = [geometry.coordinate_problem(x, y) if ok else None for x, y, ok in zip(rlon, rlat, both)]
    _report_rows(report, table, "reinjection_lon", np.array([m is not None for m in messages]), lambda i: messages[i])
    amplitude = frame["groundwater_temp_amplitude_k"].to_numpy(dtype=float)
    day = frame["coldest_day_of_year"].to_numpy(dtype=float)
    day_blank = _blank_cells(table, "coldest_day_of_year")
    _report_rows(
        report,
        table,
        "coldest_day_of_year",
        (amplitude > 0) & day_blank,
        lambda i: "is blank; with a seasonal amplitude > 0 the coldest day (1-366) is required",
    )
    frame["coldest_day_of_year"] = np.where(np.isnan(day), 1.0, day)
    flow = frame["permit_flow_m3_per_h"].to_numpy(dtype=float)
    with np.errstate(invalid="ignore"):
        huge = flow > MAX_WELL_FLOW_M3_PER_H
    _report_rows(
        report,
        table,
        "permit_flow_m3_per_h",
        huge,
        lambda i: f"{flow[i]:g} m³/h is far above any single well; looks like litres per hour instead of m³/h",
    )


def _bind_wells(
    report: _Report, table: _Table, frame: pd.DataFrame, usable: np.ndarray, districts: _Districts | None
) -> None:
    """Fill blank district_id with the district containing the extraction well; check named districts."""
    if districts is None:
        return
    _check_references(report, table, frame, "district_id", districts.ids, "district")
    blank = (frame["district_id"] == "").to_numpy() & usable
    found = geometry.containing_index(
        districts.shapes, frame["lon"].to_numpy(dtype=float), frame["lat"].to_numpy(dtype=float)
    )
    outside = blank & (found < 0)
    note = _outside_note(districts)
    lons, lats = frame["lon"].to_numpy(dtype=float), frame["lat"].to_numpy(dtype=float)
    swapped = _swapped_hints(districts, lons, lats, outside)
    _report_rows(
        report,
        table,
        "district_id",
        outside,
        lambda i: f"the extraction well at ({lons[i]:g}, {lats[i]:g}) lies outside every district"
        + (swapped[i] or f": name its district in column district_id or correct its position{note}"),
    )
    ids = districts.ids
    frame["district_id"] = [
        ids[found[i]] if blank[i] and found[i] >= 0 else value for i, value in enumerate(frame["district_id"])
    ]


def _place_reinjection(frame: pd.DataFrame, aquifer: Aquifer) -> None:
    """Blank reinjection positions go ``reinjection_offset_m`` down-gradient of the extraction well."""
    blank = frame["reinjection_lon"].isna() & frame["reinjection_lat"].isna()
    if not blank.any():
        return
    lon, lat = geometry.offset_lon_lat(
        frame.loc[blank, "lon"].to_numpy(dtype=float),
        frame.loc[blank, "lat"].to_numpy(dtype=float),
        aquifer.reinjection_offset_m,
        aquifer.flow_direction_deg,
    )
    frame.loc[blank, "reinjection_lon"] = lon
    frame.loc[blank, "reinjection_lat"] = lat


def _empty_wells() -> pd.DataFrame:
    frame = pd.DataFrame({spec.name: pd.Series(dtype=float) for spec in WELL_COLUMNS})
    return frame.astype({"well_id": str, "district_id": str, "coldest_day_of_year": "int64"})


def _load_wells(folder: Path, report: _Report, districts: _Districts | None) -> pd.DataFrame | None:
    loaded = _read_checked_table(folder, WELLS_FILE, WELL_COLUMNS, report, required=False)
    if loaded is None:
        return None if (folder / WELLS_FILE).exists() else _empty_wells()
    table, frame = loaded
    _check_unique(report, table, list(frame["well_id"]), "well_id", "well_id '{}'")
    usable = _check_points(report, table, frame, "lon", "lat")
    _check_well_values(report, table, frame)
    _bind_wells(report, table, frame, usable, districts)
    return frame


# ----------------------------------------------------------------------------- buildings.csv
BUILDING_COLUMNS = (
    _Col("building_id", "text"),
    _Col("lon"),
    _Col("lat"),
    _Col("heat_demand_mwh_per_a", low=0),
    _Col("cooling_demand_mwh_per_a", in_header=False, default=0.0, low=0),
)


def _check_building_units(report: _Report, table: _Table, frame: pd.DataFrame) -> None:
    for column in ("heat_demand_mwh_per_a", "cooling_demand_mwh_per_a"):
        demand = frame[column].to_numpy(dtype=float)
        with np.errstate(invalid="ignore"):
            huge = demand > MAX_BUILDING_DEMAND_MWH_PER_A
        _report_rows(
            report,
            table,
            column,
            huge,
            lambda i: f"{demand[i]:.6g} MWh/a is more than 200 GWh/a for one building; looks like kWh instead of MWh",
        )


def _load_buildings(folder: Path, report: _Report, districts: _Districts | None) -> pd.DataFrame | None:
    """Buildings with the index of the district containing them (column ``district_index``)."""
    loaded = _read_checked_table(folder, BUILDINGS_FILE, BUILDING_COLUMNS, report, required=False)
    if loaded is None:
        return None
    table, frame = loaded
    _check_unique(report, table, list(frame["building_id"]), "building_id", "building_id '{}'")
    usable = _check_points(report, table, frame, "lon", "lat")
    _check_building_units(report, table, frame)
    if districts is None:
        return None
    found = geometry.containing_index(
        districts.shapes, frame["lon"].to_numpy(dtype=float), frame["lat"].to_numpy(dtype=float)
    )
    note = _outside_note(districts)
    lons, lats = frame["lon"].to_numpy(dtype=float), frame["lat"].to_numpy(dtype=float)
    outside = usable & (found < 0)
    swapped = _swapped_hints(districts, lons, lats, outside)
    _report_rows(
        report,
        table,
        None,
        outside,
        lambda i: f"building '{_printable(frame['building_id'].iloc[i])}' at ({lons[i]:g}, {lats[i]:g}) lies outside "
        "every district" + (swapped[i] or f"; move it or extend a district polygon{note}"),
    )
    frame["district_index"] = found
    return frame


def _add_buildings(districts: pd.DataFrame, buildings: pd.DataFrame | None) -> None:
    if buildings is None or buildings.empty:
        return
    inside = buildings[buildings["district_index"] >= 0]
    for column in ("heat_demand_mwh_per_a", "cooling_demand_mwh_per_a"):
        sums = inside.groupby("district_index")[column].sum()
        added = np.zeros(len(districts))
        added[sums.index.to_numpy(dtype=int)] = sums.to_numpy(dtype=float)
        districts[column] = districts[column].to_numpy(dtype=float) + added


# ============================================================================= hourly files
HOURLY_COLUMNS = (
    _Col("hour", "integer"),
    _Col("outdoor_temp_c", low=-60, high=60),
    _Col("electricity_price_eur_per_mwh", low=-MAX_PRICE_EUR_PER_MWH, high=MAX_PRICE_EUR_PER_MWH),
    _Col("grid_co2_kg_per_mwh", low=0, high=2000),
    _Col("network_price_eur_per_mwh", low=0, high=MAX_PRICE_EUR_PER_MWH),
    _Col("network_co2_kg_per_mwh", low=0, high=2000),
)


def _row_count_hint(count: int, hours: np.ndarray) -> str:
    """What an hourly file with the wrong number of rows most likely is, and what to do."""
    if count == 0:
        return "; the file holds only its header: add one row per hour"
    for per_hour, minutes in ((2, 30), (4, 15), (6, 10), (12, 5)):
        if count in (per_hour * 8760, per_hour * 8784):
            return f"; this looks like {minutes}-minute data: average it to hourly values"
    if count in (365, 366):
        return "; this looks like daily data: the format needs one row per hour"
    in_order = bool(np.array_equal(hours, np.arange(count)))
    if count < 8760 and in_order:
        missing = 8760 - count
        return f"; the last {missing} hour(s) of the year are missing (the file ends at hour {count - 1}): add them"
    if 8760 < count < 8784 and in_order:
        return f"; delete the {count - 8760} row(s) after hour 8759 (or complete a leap year to 8784 rows)"
    if count > 8784 and in_order:
        return f"; delete the {count - 8784} row(s) after hour 8783 (one year only)"
    return "; one row per hour, no gaps or repeats"


def _check_hours(report: _Report, table: _Table, hours: np.ndarray, expected_rows: int | None) -> None:
    """Row count of one year (or of hourly.csv) and an ``hour`` column 0, 1, 2, ... without gaps."""
    count = len(hours)
    if count not in HOURS_PER_YEAR:
        report(
            table.file,
            None,
            None,
            f"has {count} hourly rows; a year needs 8760 rows (8784 in a leap year){_row_count_hint(count, hours)}",
        )
    elif expected_rows is not None and count != expected_rows:
        message = (
            f"has {count} hourly rows but {HOURLY_FILE} has {expected_rows}: they must match (the same year, "
            "hour by hour)"
        )
        report(table.file, None, None, message)
    expected = np.arange(count)
    with np.errstate(invalid="ignore"):
        wrong = np.flatnonzero(np.isfinite(hours) & (hours != expected))
    if len(wrong):
        index = int(wrong[0])
        got = int(hours[index])
        if index == 0 and got == 1 and np.array_equal(hours, expected + 1):
            what = "hour 0 is missing: hours start at 0, not 1; subtract 1 from every hour"
        elif got > index:
            what = f"hour {index} is missing; add its row"
        else:
            what = "an hour repeats or goes back; delete the repeated row or sort the rows by hour"
        report(
            table.file,
            table.rows[index],
            "hour",
            f"must run 0, 1, 2, ... without gaps: expected {index} here, got {got} ({what}; first gap)",
        )


def _load_hourly(folder: Path, report: _Report) -> pd.DataFrame | None:
    loaded = _read_checked_table(folder, HOURLY_FILE, HOURLY_COLUMNS, report, required=True)
    if loaded is None:
        return None
    table, frame = loaded
    if "hour" in table.cells.columns:
        _check_hours(report, table, frame["hour"].to_numpy(dtype=float), None)
    _check_hourly_price_units(report, table, frame)
    return frame


def _check_hourly_price_units(report: _Report, table: _Table, frame: pd.DataFrame) -> None:
    """Prices in EUR/kWh written into an EUR/MWh column: a typical value below 1 EUR/MWh."""
    for column in ("electricity_price_eur_per_mwh", "network_price_eur_per_mwh"):
        if column not in table.cells.columns:
            continue
        values = np.abs(frame[column].to_numpy(dtype=float))
        values = values[np.isfinite(values)]
        if not len(values):
            continue
        median = float(np.median(values))
        if 0 < median < 1 and float(values.max()) < 10:
            report(
                table.file,
                None,
                column,
                f"the median price is {median:.3g} EUR/MWh, below 1 EUR/MWh; looks like EUR/kWh instead of EUR/MWh: "
                "multiply the values by 1000",
            )


def _load_id_series(
    folder: Path,
    name: str,
    report: _Report,
    known_ids: list[str] | None,
    what: str,
    value: _Col,
    expected_rows: int | None,
) -> pd.DataFrame | None:
    """``hour`` plus one column per district or well id, as a frame of the id columns."""
    table = _read_csv(folder, name, report, required=False)
    if table is None:
        return None
    _check_timestamp_hours(report, table)
    stamps = _timestamp_column(report, table)
    columns = [c for c in table.cells.columns if c not in ("hour", stamps) and not c.lower().startswith("note")]
    if "hour" not in table.cells.columns:
        if stamps is None:
            report(name, None, "hour", "required column is missing; add it as the first column, counting 0 to n-1")
    else:
        hours = _parse_table(report, table, (_Col("hour", "integer"),))["hour"].to_numpy(dtype=float)
        _check_hours(report, table, hours, expected_rows)
    if known_ids is not None:
        for column in columns:
            if column not in known_ids:
                close = difflib.get_close_matches(column, known_ids, n=1, cutoff=0.6)
                hint = f"did you mean '{close[0]}'? " if close else ""
                report(
                    name,
                    table.header_row,
                    column,
                    f"is not a known {what} id; {hint}each column after hour must be a {what} id",
                )
    if not columns:
        report(name, None, None, f"has no {what} columns after hour")
    specs = tuple(dataclasses.replace(value, name=column) for column in columns)
    return _parse_table(report, table, specs)


def _check_series_units(
    report: _Report, name: str, frame: pd.DataFrame | None, districts: "_Districts | None"
) -> None:
    """Hourly heat demand in W instead of kW shows as an absurd annual sum, in total or per km² of the district."""
    if frame is None:
        return
    areas = {}
    if districts is not None:
        for district_id, shape, geometry_dict in zip(districts.ids, districts.shapes, districts.geometries):
            if shape is not None:
                areas[district_id] = geometry.area_km2(geometry_dict)
    for column in frame.columns:
        annual_mwh = float(np.nansum(frame[column].to_numpy(dtype=float))) / 1000.0
        area = areas.get(column, math.nan)
        density = annual_mwh / area if area > 0 else math.nan
        if annual_mwh > MAX_DISTRICT_DEMAND_MWH_PER_A:
            why = "more than 10 TWh/a for one district"
        elif density > MAX_HEAT_DENSITY_MWH_PER_KM2:
            why = (
                f"{density:.3g} MWh per km² of district '{column}', far above any city (limit "
                f"{MAX_HEAT_DENSITY_MWH_PER_KM2:.0e})"
            )
        else:
            continue
        report(
            name,
            None,
            column,
            f"sums to {annual_mwh:.3g} MWh/a, {why}; looks like W instead of kW: divide the values by 1000",
        )


# ============================================================================= unit slips across files
CAPACITY_SLIP_RATIO = 250.0
"""A connection limit or existing capacity above this many times the district's mean demand is taken for W
written as kW. A heating peak rarely exceeds about five times the annual mean demand (common practice), so the
ratio leaves a wide margin for generous limits while a factor of 1000 still stands out."""
CAPACITY_SLIP_FLOOR_KW = 1000.0
"""Capacities below this are never flagged, however small the district's demand. [kW]"""


def _mean_demand_kw(
    districts: _Districts, buildings: pd.DataFrame | None, heat_series: pd.DataFrame | None
) -> tuple[np.ndarray, np.ndarray]:
    """Mean heat and cooling demand of each district over the year [kW], buildings and measured series included."""
    heat = districts.frame["heat_demand_mwh_per_a"].to_numpy(dtype=float).copy()
    cooling = districts.frame["cooling_demand_mwh_per_a"].to_numpy(dtype=float).copy()
    if buildings is not None and "district_index" in buildings:
        for column, total in (("heat_demand_mwh_per_a", heat), ("cooling_demand_mwh_per_a", cooling)):
            inside = buildings[buildings["district_index"] >= 0]
            sums = inside.groupby("district_index")[column].sum()
            np.add.at(total, sums.index.to_numpy(dtype=int), np.nan_to_num(sums.to_numpy(dtype=float)))
    heat_kw = heat * 1000.0 / 8760.0
    if heat_series is not None:
        for i, district_id in enumerate(districts.ids):
            if district_id in heat_series.columns:
                heat_kw[i] = float(np.nanmean(heat_series[district_id].to_numpy(dtype=float)))
    return heat_kw, cooling * 1000.0 / 8760.0


def _check_capacity_units(
    report: _Report,
    districts: _Districts | None,
    buildings: pd.DataFrame | None,
    heat_series: pd.DataFrame | None,
    technologies: tuple[_Table, pd.DataFrame] | None,
    overrides: tuple[_Table, pd.DataFrame] | None,
) -> None:
    """Connection limits and existing capacities a thousand times the district's demand: W written as kW."""
    if districts is None or not len(districts.frame):
        return
    heat_kw, cooling_kw = _mean_demand_kw(districts, buildings, heat_series)

    def implausible(capacity: np.ndarray, mean: np.ndarray) -> np.ndarray:
        with np.errstate(invalid="ignore"):
            return (mean > 0) & (capacity > CAPACITY_SLIP_FLOOR_KW) & (capacity > CAPACITY_SLIP_RATIO * mean)

    limit = districts.frame["network_connection_limit_kw"].to_numpy(dtype=float)
    _report_rows(
        report,
        districts.table,
        "network_connection_limit_kw",
        implausible(limit, heat_kw),
        lambda i: f"{limit[i]:.6g} kW is {limit[i] / heat_kw[i]:,.0f} times the district's mean heat demand "
        f"({heat_kw[i]:,.0f} kW); looks like W instead of kW: divide it by 1000",
    )
    if overrides is None or technologies is None:
        return
    table, frame = overrides
    kinds = dict(zip(technologies[1]["technology_id"], technologies[1]["kind"]))
    position = {district_id: i for i, district_id in enumerate(districts.ids)}
    index = np.array([position.get(d, -1) for d in frame["district_id"]], dtype=int)
    kind = np.array([kinds.get(t, "") for t in frame["technology_id"]], dtype=object)
    mean = np.where(
        index >= 0,
        np.where(np.isin(kind, COOLING_KINDS), cooling_kw[index], heat_kw[index]),
        np.nan,
    )
    mean = np.where(np.isin(kind, HEAT_KINDS + COOLING_KINDS), mean, np.nan)  # stores hold kWh: not compared
    existing = frame["existing_kw"].to_numpy(dtype=float)
    _report_rows(
        report,
        table,
        "existing_kw",
        implausible(existing, mean),
        lambda i: f"{existing[i]:.6g} kW is {existing[i] / mean[i]:,.0f} times the mean demand of district "
        f"'{frame['district_id'].iloc[i]}' ({mean[i]:,.0f} kW); looks like W instead of kW: divide it by 1000",
    )


# ============================================================================= the folder
def resolve_scenario_path(arg: str | Path) -> Path:
    """The folder a user names: the word ``demo`` means :data:`DEMO_DIR`, anything else is a path."""
    if isinstance(arg, str) and arg.strip().lower() == "demo":
        return DEMO_DIR
    return Path(arg).expanduser()


def _check_folder(folder: Path, report: _Report) -> bool:
    if not folder.exists():
        report(str(folder), None, None, "scenario folder does not exist")
        return False
    if not folder.is_dir():
        report(str(folder), None, None, "is not a folder; a scenario is a folder of files (docs/input_format.md)")
        return False
    known = REQUIRED_FILES + OPTIONAL_FILES
    for path in sorted(folder.iterdir()):
        if path.name in known or path.suffix.lower() not in (".csv", ".toml", ".geojson", ".json"):
            continue
        close = [c for c in _close_names(path.name, list(known)) if not (folder / c).exists()]
        if close:
            report(path.name, None, None, f"is not a scenario file and is ignored; did you mean '{close[0]}'?")
    return True


def _read_folder(folder: Path) -> tuple[Scenario | None, list[Problem]]:
    """Read and check everything; the scenario is None whenever a problem was found."""
    report = _Report()
    if not _check_folder(folder, report):
        return None, report.problems
    settings = districts = technologies = hourly = None
    with report.guard(SCENARIO_FILE):
        settings = _load_settings(folder, report)
    with report.guard(DISTRICTS_FILE):
        districts = _load_districts(folder, report)
    with report.guard(TECHNOLOGIES_FILE):
        technologies = _load_technologies(folder, report)
    with report.guard(HOURLY_FILE):
        hourly = _load_hourly(folder, report)
    district_ids = districts.ids if districts is not None else None
    technology_ids = list(technologies[1]["technology_id"]) if technologies is not None else None
    n_hours = len(hourly) if hourly is not None and len(hourly) in HOURS_PER_YEAR else None

    wells = overrides = buildings = heat_series = temp_series = cost_cases = None
    with report.guard(WELLS_FILE):
        wells = _load_wells(folder, report, districts)
    with report.guard(DISTRICT_TECHNOLOGIES_FILE):
        overrides = _load_district_technologies(folder, report, district_ids, technology_ids)
    with report.guard(BUILDINGS_FILE):
        buildings = _load_buildings(folder, report, districts)
    with report.guard(HEAT_DEMAND_HOURLY_FILE):
        heat_series = _load_id_series(
            folder, HEAT_DEMAND_HOURLY_FILE, report, district_ids, "district", _Col("", low=0), n_hours
        )
        _check_series_units(report, HEAT_DEMAND_HOURLY_FILE, heat_series, districts)
    with report.guard(GROUNDWATER_TEMP_HOURLY_FILE):
        well_ids = list(wells["well_id"]) if wells is not None else None
        temp_series = _load_id_series(
            folder, GROUNDWATER_TEMP_HOURLY_FILE, report, well_ids, "well", _Col("", low=0, high=40), n_hours
        )
    with report.guard(COST_CASES_FILE):
        cost_cases = _load_cost_cases(folder, report, set(technology_ids) if technology_ids is not None else None)
    with report.guard(str(folder)):
        _check_capacity_units(report, districts, buildings, heat_series, technologies, overrides)
    pathway = None
    with report.guard(PATHWAY_FILE):
        pathway, pathway_problems = read_pathway_inputs(folder, district_ids)
        report.problems.extend(pathway_problems)

    if report.problems:
        return None, report.problems
    with report.guard(str(folder)):
        scenario = _assemble(
            folder, settings, districts, technologies[1], hourly, wells, overrides[1] if overrides else None,
            buildings, heat_series, temp_series, cost_cases,
        )
        scenario.pathway = pathway
        return scenario, []
    return None, report.problems


def _assemble(
    folder, settings, districts, technologies, hourly, wells, overrides, buildings, heat_series, temp_series, cost_cases
) -> Scenario:
    run, prices, aquifer = settings
    frame = districts.frame.copy()
    _add_buildings(frame, buildings)
    frame = frame[list(DISTRICT_COLUMNS)].astype({"district_id": str, "name": str, "network_available": bool})
    _place_reinjection(wells, aquifer)
    wells = wells.astype({"well_id": str, "district_id": str, "coldest_day_of_year": "int64"})
    hourly = hourly.astype({"hour": "int64"})
    district_ids = list(frame["district_id"])
    technology_ids = list(technologies["technology_id"])
    return Scenario(
        settings=run,
        prices=prices,
        aquifer=aquifer,
        districts=frame.reset_index(drop=True),
        technologies=technologies.reset_index(drop=True),
        district_technologies=_full_district_technologies(district_ids, technology_ids, overrides),
        wells=wells.reset_index(drop=True),
        hourly=hourly.reset_index(drop=True),
        cost_cases=cost_cases,
        heat_demand_hourly_kw=heat_series,
        groundwater_temp_hourly_c=temp_series,
        source=str(folder.resolve()),
    )


def _unexpected(folder: Path, error: Exception) -> Problem:
    return Problem(str(folder), None, None, f"could not be read ({type(error).__name__}: {error})")


def load_scenario(path: str | Path) -> Scenario:
    """Read and validate a scenario folder.

    Parameters
    ----------
    path : str or pathlib.Path
        The scenario folder, or the word ``demo`` for the shipped demo scenario.

    Returns
    -------
    engine.scenario.inputs.Scenario

    Raises
    ------
    engine.scenario.problems.InputError
        Listing every problem found in every file.
    """
    scenario, problems = _read_folder(resolve_scenario_path(path))
    if problems or scenario is None:
        raise InputError(problems or [Problem(str(path), None, None, "could not be read")])
    return scenario


def validate_scenario(path: str | Path) -> list[Problem]:
    """Every problem of a scenario folder; an empty list when it loads."""
    folder = resolve_scenario_path(path)
    try:
        return _read_folder(folder)[1]
    except Exception as error:  # a last resort: the per-file guards catch almost everything
        return [_unexpected(folder, error)]


def validate_command(path: str | Path) -> int:
    """``python -m engine validate DIR``: print OK and a summary (exit code 0) or every problem (exit code 2)."""
    folder = resolve_scenario_path(path)
    try:
        scenario, problems = _read_folder(folder)
    except Exception as error:
        scenario, problems = None, [_unexpected(folder, error)]
    if scenario is not None and not problems:
        print(
            f"OK: {len(scenario.districts)} districts, {len(scenario.wells)} wells, "
            f"{len(scenario.technologies)} technologies, {scenario.n_hours} hours"
        )
        return 0
    for problem in problems:
        print(problem)
    print(f"{len(problems)} problem(s) found in {folder}")
    return 2
