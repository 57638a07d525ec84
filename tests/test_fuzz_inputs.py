"""Property-based damage to the tiny city: the reader answers with problems or a scenario that solves.

Hypothesis takes the files of ``tests/fixtures/tiny_city`` and damages them at random (cells replaced by random
text, numbers, NaN, infinities, huge or negative values; rows and columns deleted, duplicated or shuffled; files
cut at a random byte or with random bytes inserted; GeoJSON properties and coordinates and TOML values replaced).
Whatever the damage, exactly one of two things may happen (project rule: bad input gives a clear message, never a
traceback):

* :func:`engine.scenario.load_scenario` raises :class:`engine.scenario.problems.InputError` whose problems each name a file of
  the folder, a row inside that file (or none) and a non-empty message, and none of which is an exception caught
  by the reader's last-resort guard (those read "could not be read (SomeError: ...)");
* or it returns a scenario, and :func:`engine.model.solve.solve_scenario` with two typical days returns a
  :class:`engine.model.results.RunResult` with a known status and a message, never an exception.

The runs are derandomised, so CI sees the same examples every time. The two optional year-long series files are
left out of the copy to keep each example fast (the corpus in ``tests/broken_inputs`` covers them).
"""

from __future__ import annotations

import csv
import hashlib
import io as text_io
import json
import re
import tempfile
from pathlib import Path

import pandas as pd
import pytest

from hypothesis import HealthCheck, event, given, settings
from hypothesis import strategies as st
from hypothesis.errors import InvalidArgument

from engine.scenario import folder as io
from engine.scenario.problems import InputError
from engine.model.results import RunResult
from engine.model.solve import solve_scenario

pytestmark = pytest.mark.slow  # browser, fuzz or multi-process: left out of the quick loop

TINY = Path(__file__).resolve().parent / "fixtures" / "tiny_city"
LEFT_OUT = ("heat_demand_hourly.csv", "groundwater_temp_hourly.csv")
BASE = {path.name: path.read_bytes() for path in sorted(TINY.iterdir()) if path.name not in LEFT_OUT}
CSV_FILES = sorted(name for name in BASE if name.endswith(".csv"))
SMALL_CSV_FILES = [name for name in CSV_FILES if name != io.HOURLY_FILE]
TOML_FILES = sorted(name for name in BASE if name.endswith(".toml"))

KNOWN_STATUSES = {"optimal", "infeasible", "unbounded", "time_limit", "interrupted", "error"}
"""Statuses a RunResult may carry (engine/lp.py maps every HiGHS model status onto these)."""

FUZZ = settings(
    max_examples=40,
    deadline=None,
    derandomize=True,
    database=None,
    suppress_health_check=[HealthCheck.too_slow, HealthCheck.data_too_large, HealthCheck.filter_too_much],
)

_SOLVED: dict[str, str] = {}
"""Status by input hash: damage that leaves the scenario as it was (shuffled columns, a note cell) is solved once."""


# ============================================================================= checking one damaged folder
class Files(dict):
    """Scenario files (name -> bytes) whose repr names only the files that differ from the tiny city, so that a
    failing example prints in a few lines rather than as a year of hourly rows."""

    def __repr__(self) -> str:
        changed = {name: data for name, data in self.items() if BASE.get(name) != data}
        shown = {name: (data if len(data) <= 600 else data[:600] + b"...") for name, data in changed.items()}
        return f"Files(changed={shown!r})"


def _rows_in(data: bytes) -> int:
    return max(len(data.splitlines()), data.count(b"\n") + 1)


def _scenario_key(scenario) -> str:
    """A quick fingerprint of a scenario's tables and settings (row hashes of pandas), to solve each once."""
    digest = hashlib.sha256()
    for name in ("technologies", "district_technologies", "wells", "hourly"):
        digest.update(pd.util.hash_pandas_object(getattr(scenario, name), index=False).to_numpy().tobytes())
    # Key order matters here, as in engine.scenario.inputs.input_hash: the reader must hand over geometries in one form.
    districts = scenario.districts.assign(geometry=scenario.districts["geometry"].map(json.dumps))
    digest.update(pd.util.hash_pandas_object(districts, index=False).to_numpy().tobytes())
    for part in (scenario.settings, scenario.prices, scenario.aquifer, scenario.cost_cases):
        digest.update(repr(part).encode())
    return digest.hexdigest()


def _event(text: str) -> None:
    try:
        event(text)
    except InvalidArgument:  # outside a Hypothesis test there are no statistics to keep
        pass


def _check(files: dict[str, bytes]) -> str:
    """Write ``files`` to a fresh folder and require a clean InputError or a solved RunResult."""
    with tempfile.TemporaryDirectory(prefix="heatmosaic-fuzz-") as tmp:
        folder = Path(tmp) / "city"
        folder.mkdir()
        for name, data in files.items():
            (folder / name).write_bytes(data)
        try:
            scenario = io.load_scenario(folder)
        except InputError as error:
            assert error.problems
            for problem in error.problems:
                assert isinstance(problem.file, str) and problem.file, problem
                assert problem.file in files or problem.file == str(folder), problem
                assert isinstance(problem.message, str) and problem.message.strip(), problem
                assert "could not be read (" not in problem.message, problem  # an exception escaped a check
                if problem.row is not None:
                    assert isinstance(problem.row, int) and problem.row >= 1, problem
                    if not problem.file.endswith(".geojson"):
                        assert problem.row <= _rows_in(files[problem.file]), problem
            _event("input error")
            return "input error"
    key = _scenario_key(scenario)
    if key not in _SOLVED:
        result = solve_scenario(scenario, typical_days=2)
        assert isinstance(result, RunResult)
        assert result.status in KNOWN_STATUSES, result.status
        assert result.message
        _SOLVED[key] = result.status
    _event(f"loaded, solve status {_SOLVED[key]}")
    return _SOLVED[key]


# ============================================================================= random values
SPECIAL_CELLS = (
    "", " ", "nan", "NaN", "inf", "-inf", "Infinity", "1e999", "-1e999", "1e-999", "0", "-0", "1,5", "1.5.3",
    "null", "None", "N/A", "true", "false", "12 kW", "2023-01-01T00:00:00+01:00", "\u00a0", "\ufeff5", "５",
    "1_000", "0x10", "'5", '"', "=1+1", "-", "9" * 400,
)
"""Cells that real files hold where a number belongs (placeholders, locale marks, spreadsheet leftovers)."""


def _scaled(value: str, factor: float) -> str:
    try:
        return repr(float(value) * factor)
    except ValueError:
        return value


def _flip_sign(value: str) -> str:
    return value[1:] if value.startswith("-") else "-" + value


def junk(original: str) -> st.SearchStrategy[str]:
    """A random replacement for a cell that held ``original``."""
    return st.one_of(
        st.sampled_from(SPECIAL_CELLS),
        st.text(max_size=12),
        st.floats(allow_nan=True, allow_infinity=True).map(repr),
        st.integers(min_value=-(10**30), max_value=10**30).map(str),
        st.sampled_from((1e-3, 1e3, 1e6, -1.0)).map(lambda factor: _scaled(original, factor)),
        st.just(_flip_sign(original)),
    )


def _records(data: bytes) -> list[list[str]]:
    return list(csv.reader(text_io.StringIO(data.decode("utf-8"), newline="")))


def _csv_bytes(records: list[list[str]]) -> bytes:
    buffer = text_io.StringIO()
    csv.writer(buffer, lineterminator="\n").writerows(records)
    return buffer.getvalue().encode("utf-8")


# ============================================================================= damage
@st.composite
def damaged_cells(draw) -> dict[str, bytes]:
    """One to four cells of one CSV file replaced by random values (signs flipped, scaled, junk, blanks)."""
    name = draw(st.sampled_from(CSV_FILES + SMALL_CSV_FILES))  # the small tables twice as often
    records = _records(BASE[name])
    for _ in range(draw(st.integers(1, 4))):
        row = draw(st.integers(1, len(records) - 1)) if name != io.HOURLY_FILE else draw(st.integers(1, 30))
        column = draw(st.integers(0, len(records[0]) - 1))
        records[row][column] = draw(junk(records[row][column]))
    return Files({**BASE, name: _csv_bytes(records)})


@st.composite
def damaged_layout(draw) -> dict[str, bytes]:
    """Rows deleted, duplicated or swapped and columns deleted, duplicated or shuffled in one CSV file."""
    name = draw(st.sampled_from(CSV_FILES + SMALL_CSV_FILES))
    records = _records(BASE[name])
    for _ in range(draw(st.integers(1, 3))):
        operation = draw(st.sampled_from(("delete row", "duplicate row", "swap rows", "delete column",
                                          "duplicate column", "shuffle columns", "blank row")))
        width = len(records[0])
        if len(records) < 2 or width < 2:
            break
        row = draw(st.integers(1, len(records) - 1))
        other = draw(st.integers(1, len(records) - 1))
        column = draw(st.integers(0, width - 1))
        if operation == "delete row":
            del records[row]
        elif operation == "duplicate row":
            records.insert(other, list(records[row]))
        elif operation == "swap rows":
            records[row], records[other] = records[other], records[row]
        elif operation == "delete column":
            records = [r[:column] + r[column + 1 :] for r in records]
        elif operation == "duplicate column":
            records = [r + r[column : column + 1] for r in records]
        elif operation == "shuffle columns":
            order = draw(st.permutations(range(width)))
            records = [[r[i] if i < len(r) else "" for i in order] for r in records]
        else:
            records.insert(row, [""] * width)
    return Files({**BASE, name: _csv_bytes(records)})


@st.composite
def damaged_bytes(draw) -> dict[str, bytes]:
    """A file cut at a random byte, or random bytes inserted or written over part of it."""
    name = draw(st.sampled_from(sorted(BASE)))
    data = BASE[name]
    limit = min(len(data), 3000)  # the head of the year-long file is where the structure is
    offset = draw(st.integers(0, limit))
    operation = draw(st.sampled_from(("truncate", "insert", "overwrite")))
    noise = draw(st.one_of(st.binary(min_size=1, max_size=8),
                           st.sampled_from((b"\x00", b"\xff\xfe", b"\xef\xbb\xbf", b"\r", b"\n\n", b",", b'"',
                                            b";", b"\xc3", b"{", b"]", b"=")),
                           st.text(min_size=1, max_size=6).map(lambda t: t.encode("utf-8"))))
    if operation == "truncate":
        data = data[:offset]
    elif operation == "insert":
        data = data[:offset] + noise + data[offset:]
    else:
        data = data[:offset] + noise + data[offset + len(noise) :]
    return Files({**BASE, name: data})


JSON_JUNK = st.recursive(
    st.one_of(
        st.none(),
        st.booleans(),
        st.integers(min_value=-(10**20), max_value=10**20),
        st.floats(allow_nan=True, allow_infinity=True),
        st.text(max_size=10),
    ),
    lambda inner: st.lists(inner, max_size=3) | st.dictionaries(st.text(max_size=5), inner, max_size=3),
    max_leaves=6,
)
"""Any JSON value, NaN and Infinity included (Python's json writes and reads them)."""


@st.composite
def damaged_geojson(draw) -> dict[str, bytes]:
    """District properties or geometry parts replaced by random JSON values, or coordinates moved."""
    data = json.loads(BASE[io.DISTRICTS_FILE])
    for _ in range(draw(st.integers(1, 3))):
        feature = draw(st.sampled_from(data["features"]))
        target = draw(st.sampled_from(("property", "delete property", "coordinate", "geometry", "feature")))
        try:
            if target == "property":
                key = draw(st.sampled_from(sorted(map(str, feature["properties"])) + ["unknown_key"]))
                feature["properties"][key] = draw(JSON_JUNK)
            elif target == "delete property" and isinstance(feature["properties"], dict) and feature["properties"]:
                feature["properties"].pop(draw(st.sampled_from(sorted(feature["properties"]))))
            elif target == "coordinate":
                ring = feature["geometry"]["coordinates"][0]
                position = ring[draw(st.integers(0, len(ring) - 1))]
                position[draw(st.integers(0, 1))] = draw(st.one_of(st.floats(-1e7, 1e7), JSON_JUNK))
            elif target == "geometry":
                feature["geometry"][draw(st.sampled_from(("type", "coordinates")))] = draw(JSON_JUNK)
            else:
                feature[draw(st.sampled_from(("type", "geometry", "properties")))] = draw(JSON_JUNK)
        except (KeyError, IndexError, TypeError, AttributeError, ValueError):
            continue  # an earlier damage already replaced the part this one would change
    return Files({**BASE, io.DISTRICTS_FILE: json.dumps(data).encode("utf-8")})


_TOML_VALUE = re.compile(r"^(\s*[A-Za-z0-9_]+\s*=\s*)(.+)$")
TOML_JUNK = st.one_of(
    st.sampled_from(("nan", "inf", "-inf", "1e999", "-1", "0", "true", '"text"', '"5"', "[]", "{}", "2040-01-01",
                     "1_000", "0x10", "+inf", "''", "1e308", "[1, 2]", "{ a = 1 }")),
    st.floats(allow_nan=False, allow_infinity=False).map(repr),
    st.integers(min_value=-(10**20), max_value=10**20).map(str),
    st.text(max_size=8),
)


@st.composite
def damaged_toml(draw) -> dict[str, bytes]:
    """Values of scenario.toml or cost_cases.toml replaced by random TOML text, or lines deleted or doubled."""
    name = draw(st.sampled_from(TOML_FILES))
    lines = BASE[name].decode("utf-8").splitlines()
    for _ in range(draw(st.integers(1, 3))):
        number = draw(st.integers(0, len(lines) - 1))
        operation = draw(st.sampled_from(("value", "value", "delete line", "double line")))
        match = _TOML_VALUE.match(lines[number])
        if operation == "value" and match:
            lines[number] = match.group(1) + draw(TOML_JUNK)
        elif operation == "delete line":
            del lines[number]
        elif operation == "double line":
            lines.insert(number, lines[number])
        if not lines:
            break
    return Files({**BASE, name: ("\n".join(lines) + "\n").encode("utf-8")})


@st.composite
def neutral_edits(draw) -> dict[str, bytes]:
    """Edits that must not change what the files mean: columns in another order, cells padded with spaces or
    quoted, blank lines, an extra note column, Windows line ends, a byte-order mark, JSON re-indented with its
    keys sorted, TOML comments."""
    files = Files(BASE)
    for name in draw(st.lists(st.sampled_from(CSV_FILES), min_size=1, max_size=3, unique=True)):
        records = _records(files[name])
        if draw(st.booleans()):
            order = draw(st.permutations(range(len(records[0]))))
            records = [[r[i] for i in order] for r in records]
        if draw(st.booleans()):
            note = draw(st.text(st.characters(blacklist_categories=("Cs", "Cc")), max_size=10))
            records = [records[0] + ["note_added"]] + [r + [note] for r in records[1:]]
        if draw(st.booleans()):
            records = [[f"  {cell} " for cell in r] for r in records]
        buffer = text_io.StringIO()
        quoting = csv.QUOTE_ALL if draw(st.booleans()) else csv.QUOTE_MINIMAL
        csv.writer(buffer, lineterminator="\n", quoting=quoting).writerows(records)
        lines = buffer.getvalue().split("\n")
        for _ in range(draw(st.integers(0, 3))):
            lines.insert(draw(st.integers(0, min(len(lines), 12))), "")
        files[name] = "\n".join(lines).encode("utf-8")
    if draw(st.booleans()):
        data = json.loads(files[io.DISTRICTS_FILE])
        files[io.DISTRICTS_FILE] = json.dumps(data, indent=draw(st.sampled_from((None, 0, 4))), sort_keys=True).encode()
    if draw(st.booleans()):
        name = draw(st.sampled_from(TOML_FILES))
        lines = files[name].decode("utf-8").splitlines()
        comment = draw(st.text(st.characters(blacklist_categories=("Cs", "Cc")), max_size=10))
        lines.insert(draw(st.integers(0, len(lines))), "# " + comment)
        files[name] = ("\n".join(lines) + "\n").encode("utf-8")
    for name in draw(st.lists(st.sampled_from(sorted(files)), max_size=3, unique=True)):
        files[name] = files[name].replace(b"\r\n", b"\n").replace(b"\n", b"\r\n")
    for name in draw(st.lists(st.sampled_from(sorted(files)), max_size=3, unique=True)):
        files[name] = b"\xef\xbb\xbf" + files[name]
    return files


def _loaded_key(files: dict[str, bytes]) -> str:
    with tempfile.TemporaryDirectory(prefix="heatmosaic-fuzz-") as tmp:
        folder = Path(tmp) / "city"
        folder.mkdir()
        for name, data in files.items():
            (folder / name).write_bytes(data)
        return _scenario_key(io.load_scenario(folder))


# ============================================================================= the properties
BASE_KEY = _loaded_key(BASE)


def test_undamaged_copy_solves():
    """The copy the damage starts from loads and solves: otherwise every example would end as an input error and
    the properties below would test nothing."""
    assert _check(dict(BASE)) == "optimal"


@FUZZ
@given(damaged_cells())
def test_random_cells(files):
    """Random cell values (text, NaN, infinities, huge, negative, scaled by 1000) give problems or a run."""
    _check(files)


@FUZZ
@given(damaged_layout())
def test_random_rows_and_columns(files):
    """Deleted, duplicated, swapped or blank rows and deleted, duplicated or shuffled columns give problems or a
    run."""
    _check(files)


@FUZZ
@given(damaged_bytes())
def test_random_bytes(files):
    """A file cut short, or with random bytes inserted or written over it, gives problems or a run."""
    _check(files)


@FUZZ
@given(st.one_of(damaged_geojson(), damaged_toml()))
def test_random_geojson_and_toml_values(files):
    """Random JSON values in district properties and geometries, and random TOML values or lines, give problems
    or a run."""
    _check(files)


@settings(FUZZ, max_examples=30)
@given(neutral_edits())
def test_neutral_edits_keep_the_scenario(files):
    """Layout that carries no meaning (column order, padding, quoting, blank lines, note columns, CR LF, a BOM,
    JSON indentation and key order, TOML comments) gives exactly the scenario of the unedited files: nothing is
    lost or changed silently (docs/input_format.md; RFC 4180 for CSV quoting; RFC 8259 for JSON)."""
    assert _loaded_key(files) == BASE_KEY
