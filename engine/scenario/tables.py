"""Reading primitives of the scenario reader: the problem report and the text, CSV and TOML files.

:class:`Report` collects :class:`~engine.scenario.problems.Problem` records; :func:`read_text` reads one file
with its size and encoding checks, :func:`read_csv` makes a :class:`Table` of stripped cells from it and
:func:`read_toml` parses a TOML file (with :func:`toml_key_lines` for the line numbers of keys). The column
rules that act on a table are in :mod:`engine.scenario.cells`.
"""

from __future__ import annotations

import csv
import difflib
import io
import re
import tomllib
from contextlib import contextmanager
from dataclasses import dataclass
from pathlib import Path
from typing import Iterator

import pandas as pd

from engine.scenario.files import (
    COST_CASES_FILE,
    DISTRICT_TECHNOLOGIES_FILE,
    DISTRICTS_FILE,
    GROUNDWATER_TEMP_HOURLY_FILE,
    HEAT_DEMAND_HOURLY_FILE,
    HOURLY_FILE,
    SCENARIO_FILE,
    TECHNOLOGIES_FILE,
    WELLS_FILE,
    BUILDINGS_FILE,
)
from engine.scenario.problems import InputError, Problem

MAX_FILE_BYTES = 200 * 1024 * 1024
"""Largest input file read [bytes]; a bigger file is refused with a message rather than exhausting memory."""

HOURLY_ROW_LIMIT = 4 * 8784
"""Most data rows of an hourly file read in full (a quarter-hourly leap year, so that the reader can say what a
half- or quarter-hourly file is); a longer file is refused from its line count, before parsing."""

MAX_CSV_ROWS = 2_000_000
"""Most data rows of any other CSV file (a city's buildings fit well within it)."""

MAX_CSV_COLUMNS = 10_000
"""Most columns of a CSV file (an hourly file has one per district or well)."""

MAX_CSV_CELLS = 20_000_000
"""Most cells (rows times columns) of a CSV file; parsing keeps every cell as text, so this bounds memory."""

CELL_REPORT_LIMIT = 5
"""Bad cells listed per column and kind of problem before the rest are summed up in one line."""


# ============================================================================= problem collection
class Report:
    """Collects problems; ``guard`` turns an unexpected exception into a problem on the file being read."""

    def __init__(self) -> None:
        self.problems: list[Problem] = []
        self.notes: list[str] = []
        """What the reader took from elsewhere (a layer's CRS, weather.epw's station), shown with the scenario."""

    def __call__(self, file: str, row: int | None, column: str | None, message: str, severity: str = "error") -> None:
        self.problems.append(Problem(file, None if row is None else int(row), column, message, severity))

    @property
    def errors(self) -> list[Problem]:
        """The problems that stop a load (warnings left out)."""
        return [problem for problem in self.problems if problem.is_error]

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
def close_names(name: str, names: list[str]) -> list[str]:
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


def csv_shape_problem(name: str, data: bytes) -> str | None:
    """Why a CSV file is too long or too wide to parse, judged from its bytes alone, or None.

    Lines are counted by their newlines and columns by the separators of the first non-blank line, without
    decoding or splitting the file, so an oversized file is refused at the cost of one pass over its bytes.
    """
    lines = data.count(b"\n") + (0 if data.endswith(b"\n") else 1)
    start = re.match(rb"\s*", data).end()
    end = data.find(b"\n", start)
    header = data[start : end if end >= 0 else len(data)]
    columns = header.count(b",") + 1
    head_line = data[:start].count(b"\n")
    rows = max(lines - head_line - 1, 0) - data.count(b"\n\n")  # blank lines do not count as rows
    hourly = name in (HOURLY_FILE, HEAT_DEMAND_HOURLY_FILE, GROUNDWATER_TEMP_HOURLY_FILE)
    limit = HOURLY_ROW_LIMIT if hourly else MAX_CSV_ROWS
    if rows > limit:
        if hourly:
            return (f"has {rows} hourly rows; a year needs 8760 rows (8784 in a leap year), one per hour: keep one "
                    "year of hourly values (the file was not read further)")
        return f"has {rows:,} rows, more than the {limit:,} rows allowed for one file; aggregate the data first"
    if columns > MAX_CSV_COLUMNS:
        return f"has {columns:,} columns, more than the {MAX_CSV_COLUMNS:,} allowed"
    if rows * columns > MAX_CSV_CELLS:
        return (f"has {rows:,} rows of {columns:,} columns, more than the {MAX_CSV_CELLS:,} cells allowed for one "
                "file; aggregate the data first")
    return None


def read_text(folder: Path, name: str, report: Report, required: bool, check_bytes=None) -> str | None:
    """The file's text (UTF-8, a BOM allowed), or None after reporting why it cannot be used.

    ``check_bytes(data) -> str | None`` may refuse the file from its raw bytes before it is decoded.
    """
    path = folder / name
    if not path.exists():
        if required:
            others = sorted(p.name for p in folder.iterdir()) if folder.is_dir() else []
            close = close_names(name, others)
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
    if re.fullmatch(rb"\s*", data):  # blank (without copying the bytes, as data.strip() would)
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
    if check_bytes is not None:
        problem = check_bytes(data)
        if problem:
            report(name, None, None, problem)
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
class Table:
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


def _lines(text: str):
    """The lines of ``text`` with their endings, one at a time (an ``io.StringIO`` would hold a copy of the text
    at four bytes per character). Text with bare carriage returns as line ends goes through ``io.StringIO``."""
    if "\r" in text and text.count("\r") != text.count("\r\n"):
        yield from io.StringIO(text, newline="")
        return
    start, end = 0, len(text)
    while start < end:
        stop = text.find("\n", start)
        stop = end if stop < 0 else stop + 1
        yield text[start:stop]
        start = stop


def read_csv(folder: Path, name: str, report: Report, required: bool) -> Table | None:
    """Parse a CSV file into a :class:`Table`; reports layout problems (separator, ragged rows, header)."""
    text = read_text(folder, name, report, required, check_bytes=lambda data: csv_shape_problem(name, data))
    if text is None:
        return None
    has_quotes = '"' in text
    reader = csv.reader(_lines(text))
    del text  # the line generator holds it while the records are built; freed with the reader
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
            f"holds one cell ('{printable(header[0])}') but row {filled[1] + 1} holds {len(records[filled[1]])}: "
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
    del reader
    if has_quotes:
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
    return Table(name, frame.reset_index(drop=True), rows, skipped=frozenset(shifted), header_row=header_row)


def _check_open_quotes(report: Report, name: str, header: list[str], rows: list[int], kept: list[list[str]]) -> None:
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


def read_toml(folder: Path, name: str, report: Report, required: bool) -> tuple[dict, str] | None:
    """Parse a TOML file; returns the data and its text (for line numbers of keys)."""
    text = read_text(folder, name, report, required)
    if text is None:
        return None
    try:
        return tomllib.loads(text), text
    except RecursionError:
        line = _deepest_line(text)
        report(name, line, None, "is nested too deeply (arrays or inline tables inside one another, more levels "
               "than any scenario needs); write the values as plain key = value lines (see docs/input_format.md)")
        return None
    except tomllib.TOMLDecodeError as error:
        match = _TOML_LINE.search(str(error))
        line = int(match.group(1)) if match else None
        message = _TOML_LINE.sub("", str(error)).strip()
        report(name, line, None, f"TOML syntax error: {message}; {_toml_hint(message)}")
        return None


def _deepest_line(text: str, depth_limit: int = 100) -> int | None:
    """The line where brackets and braces first nest ``depth_limit`` levels deep (quotes not followed)."""
    depth, line = 0, 1
    for character in text:
        if character == "\n":
            line += 1
        elif character in "[{":
            depth += 1
            if depth >= depth_limit:
                return line
        elif character in "]}":
            depth -= 1
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


def toml_key_lines(text: str) -> dict[tuple[str, ...], int]:
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


def toml_line(lines: dict[tuple[str, ...], int], path: tuple[str, ...]) -> int | None:
    for length in range(len(path), 0, -1):
        if path[:length] in lines:
            return lines[path[:length]]
    # A table known only through its sub-tables ([cases.reference] for "cases"): its first line.
    below = [line for key, line in lines.items() if key[: len(path)] == path]
    return min(below) if below else None


def printable(cell: str, limit: int = 40) -> str:
    """A cell as it can be shown in a one-line message: control characters escaped, long text cut."""
    shown = "".join(ch if ch.isprintable() else repr(ch)[1:-1] for ch in cell)
    return shown if len(shown) <= limit else shown[: limit - 3] + "..."

