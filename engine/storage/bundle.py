"""Shareable bundles: one zip file holding a run's scenario files and results.

A planner sends a bundle to a colleague, who opens it in the dashboard and sees the same run, and can re-run it
from the scenario files inside. Layout::

    manifest.json            format, release, input hash, cost case, objective, settings, run summary,
                             checksums of every file and the dtypes of every result table
    inputs/<scenario file>   the files of the scenario folder (docs/input_format.md)
    results/<table>.csv      one CSV per result table
    results/summary.json     RunResult.summary()

Bundles arrive from outside (e-mail, upload), so :func:`read_bundle` treats them as hostile: it refuses, with a
plain message and before writing anything, entries with absolute paths, drive letters, backslashes or ``..``;
symbolic links and other non-regular entries; encrypted entries; more than :attr:`ZipLimits.max_entries`
entries; an entry or a total larger than the limits; an entry compressed more than
:attr:`ZipLimits.max_ratio` times (a "zip bomb"); archives inside the archive; and any name that is not a
scenario file, a result table or the manifest. Sizes are read from the zip directory and enforced again while
streaming, so a header that lies does not help. Text must be UTF-8 and the manifest valid JSON; the binary scenario
inputs of a planner's own city (GeoPackage, zipped Shapefile, the EPW file:
:data:`engine.scenario.files.BINARY_FILES`) are carried as bytes, checked against their checksums like the rest. Files are written
only below the destination folder (checked after resolving every path), first into a hidden staging folder that
is removed when anything is refused. Nothing is ever unpickled or executed.

The results are screening-level: the manifest carries :data:`engine.cautions.RESULTS`.
"""

from __future__ import annotations

import csv
import hashlib
import json
import math
import os
import re
import shutil
import tempfile
from collections.abc import Callable, Mapping
from dataclasses import dataclass, field
from datetime import datetime, timezone
from pathlib import Path

import numpy as np
import pandas as pd

from engine import __version__, cautions
from engine.jsonsafe import json_value
from engine.model.results import RunResult
from engine.outputs.csvfile import csv_text, restore_text
from engine.scenario.files import ARCHIVE_FILES, BINARY_FILES, SCENARIO_FILES, missing_files
from engine.storage.schema import Checker, MAX_COLUMNS, MAX_ROWS, check_number_map, check_run_settings, loads
from engine.storage.safezip import DEFAULT_LIMITS, MIB, CheckedZip, ZipLimits, ZipRefused, write_checked_zip
from engine.storage.store import StoreError, check_scenario_files

BUNDLE_FORMAT = "heatmosaic-bundle"
BUNDLE_FORMAT_VERSION = 1

TABLE_NAME_PATTERN = r"[a-z][a-z0-9_]{0,62}"
"""Result table names a bundle may carry (lower-case letters, digits and ``_``)."""



class BundleError(ZipRefused):
    """A bundle could not be written or was refused; the message says why in plain words."""


# ====================================================================================== tables as CSV
_INT_NAMES = {"int8", "int16", "int32", "int64", "uint8", "uint16", "uint32", "uint64"}
_FLOAT_NAMES = {"float16", "float32", "float64"}
_MASKED_NAMES = {"Int8", "Int16", "Int32", "Int64", "UInt8", "UInt16", "UInt32", "UInt64", "Float32", "Float64",
                 "boolean"}


def _missing(value) -> bool:
    return value is None or value is pd.NA or value is pd.NaT or (isinstance(value, float) and math.isnan(value))


def _table_to_csv(frame: pd.DataFrame, table: str) -> tuple[bytes, dict]:
    """CSV bytes of a table and the description that lets :func:`_table_from_csv` rebuild its dtypes."""
    if not isinstance(frame, pd.DataFrame):
        raise BundleError(f"table '{table}' is a {type(frame).__name__}, not a DataFrame")
    labels = list(frame.columns)
    if any(not isinstance(label, str) or not label for label in labels):
        raise BundleError(f"table '{table}': every column needs a text name")
    if len(set(labels)) != len(labels):
        raise BundleError(f"table '{table}' has two columns of the same name")
    columns = []
    out = {}
    for position, label in enumerate(labels):
        series = frame.iloc[:, position].reset_index(drop=True)
        dtype = series.dtype
        spec: dict = {"name": label}
        if isinstance(dtype, np.dtype) and dtype.kind == "b":
            spec["dtype"] = "bool"
        elif isinstance(dtype, np.dtype) and dtype.name in _INT_NAMES | _FLOAT_NAMES:
            spec["dtype"] = dtype.name
        elif str(dtype) in _MASKED_NAMES:
            spec["dtype"] = str(dtype)
        elif isinstance(dtype, pd.StringDtype):
            spec.update(dtype="string", storage=dtype.storage, na="nan" if isinstance(dtype.na_value, float) else "NA")
        elif isinstance(dtype, np.dtype) and dtype.kind == "O" and all(
            isinstance(v, str) or _missing(v) for v in series.tolist()
        ):
            spec["dtype"] = "object"
        else:
            # Anything else travels as text and comes back as text; the manifest keeps the original dtype.
            spec.update(dtype="text", original=str(dtype))
            series = pd.Series(
                [None if _missing(v) else str(v) for v in series.astype(object).tolist()], dtype=object
            )
        if spec["dtype"] in ("string", "object", "text"):
            missing = np.flatnonzero(series.isna().to_numpy()).tolist()
            spec["missing"] = missing
        columns.append(spec)
        out[label] = series
    # Formula-leading text is defused (engine.outputs.csvfile) so the CSV is safe to open in a spreadsheet;
    # _table_from_csv undoes it, so the round trip stays exact.
    text = csv_text(
        pd.DataFrame(out, index=pd.RangeIndex(len(frame)), columns=labels),
        index=False, lineterminator="\n", quoting=csv.QUOTE_NONNUMERIC,  # quoted text keeps a bare "\r" in its cell
    )
    data = text.encode("utf-8")
    return data, {"rows": int(len(frame)), "columns": columns, "sha256": hashlib.sha256(data).hexdigest()}


def _bad_cell(table: str, values: np.ndarray, parse: Callable, column: str, what: str):
    for row, value in enumerate(values):
        try:
            parse(value)
        except (ValueError, TypeError, OverflowError, KeyError):
            return BundleError(f"results/{table}.csv, row {row + 2}, column '{column}': {value!r} is not {what}")
    return BundleError(f"results/{table}.csv, column '{column}': values are not {what}")


def _parse_column(values: np.ndarray, spec: dict, table: str):
    """One column of raw CSV text (object array of str) as the dtype ``spec`` describes."""
    dtype = spec["dtype"]
    column = spec["name"]
    missing = spec.get("missing", [])
    if dtype == "bool":
        truth = {"True": True, "False": False}
        try:
            return np.array([truth[v] for v in values], dtype=bool)
        except KeyError:
            raise _bad_cell(table, values, truth.__getitem__, column, "True or False") from None
    if dtype in _FLOAT_NAMES:
        filled = np.where(values == "", "nan", values)
        try:
            return filled.astype(np.float64).astype(dtype)
        except (ValueError, TypeError):
            raise _bad_cell(table, filled, float, column, "a number") from None
    if dtype in _INT_NAMES:
        try:
            return values.astype(dtype)
        except (ValueError, TypeError, OverflowError):
            raise _bad_cell(table, values, int, column, "a whole number") from None
    if dtype in _MASKED_NAMES:
        if dtype == "boolean":
            parse = {"True": True, "False": False}.__getitem__
        elif dtype.startswith("Float"):
            parse = float
        else:
            parse = int
        try:
            items = [None if v == "" else parse(v) for v in values]
        except (ValueError, KeyError, OverflowError):
            raise _bad_cell(table, values[values != ""], parse, column, f"a value of type {dtype}") from None
        return pd.array(items, dtype=dtype)
    if dtype in ("string", "object", "text"):
        items = np.array([restore_text(v) for v in values], dtype=object)
        if len(missing) and (min(missing) < 0 or max(missing) >= len(items)):
            raise BundleError(f"manifest.json: the missing cells of table '{table}', column '{column}' are out of range")
        items[np.asarray(missing, dtype=np.int64)] = None
        if dtype == "object":
            return items
        na_value = np.nan if spec.get("na", "nan") == "nan" else pd.NA
        try:
            string_dtype = pd.StringDtype(storage=spec.get("storage"), na_value=na_value)
        except (ImportError, ValueError, TypeError):
            string_dtype = pd.StringDtype(na_value=na_value)
        return pd.array(items, dtype=string_dtype)
    raise BundleError(f"manifest.json: table '{table}', column '{column}' has an unknown dtype {dtype!r}")


def _table_from_csv(path: Path, spec: dict, table: str) -> pd.DataFrame:
    """Rebuild a table written by :func:`_table_to_csv`."""
    try:
        rows = int(spec["rows"])
        columns = spec["columns"]
        names = [c["name"] for c in columns]
        if rows < 0 or not all(isinstance(n, str) and isinstance(c.get("dtype"), str) for n, c in zip(names, columns)):
            raise TypeError
    except (KeyError, TypeError, ValueError, AttributeError):
        raise BundleError(f"manifest.json: the description of table '{table}' is malformed") from None
    if not columns:
        return pd.DataFrame(index=pd.RangeIndex(rows))
    # Numbers are parsed by the CSV reader itself (exact with float_precision="round_trip"); everything else is
    # read as raw text and converted by _parse_column. A cell that fails goes to the slow path, which names it.
    if len(set(names)) != len(names):
        raise BundleError(f"manifest.json: table '{table}' lists a column twice")
    fast_dtypes = {}
    na_values = {}
    for column in columns:
        if column["dtype"] in _FLOAT_NAMES:
            fast_dtypes[column["name"]] = "float64"
            na_values[column["name"]] = [""]
        elif column["dtype"] in _INT_NAMES:
            fast_dtypes[column["name"]] = column["dtype"]
        else:
            fast_dtypes[column["name"]] = object
    options = dict(header=0, keep_default_na=False, skip_blank_lines=False, encoding="utf-8")
    try:
        raw = pd.read_csv(path, dtype=fast_dtypes, na_values=na_values, float_precision="round_trip", **options)
        fast = True
    except (ValueError, TypeError, OverflowError, pd.errors.ParserError, pd.errors.EmptyDataError):
        fast = False
    if not fast:
        try:
            raw = pd.read_csv(path, dtype=object, na_filter=False, **options)
        except (ValueError, pd.errors.ParserError, pd.errors.EmptyDataError) as exc:
            raise BundleError(f"results/{table}.csv cannot be read as CSV: {exc}") from None
    if [restore_text(str(v)) for v in raw.columns] != names:
        raise BundleError(f"results/{table}.csv: the header row does not match manifest.json")
    if len(raw) != rows:
        raise BundleError(f"results/{table}.csv has {len(raw)} data rows, manifest.json says {rows}")
    data = {}
    for position, spec_column in enumerate(columns):
        series = raw.iloc[:, position]
        if fast and spec_column["dtype"] in _FLOAT_NAMES:
            array = series.to_numpy(dtype=np.float64).astype(spec_column["dtype"])
        elif fast and spec_column["dtype"] in _INT_NAMES:
            array = series.to_numpy()
        else:
            array = _parse_column(series.to_numpy(dtype=object), spec_column, table)
        data[position] = pd.Series(array, dtype=array.dtype, copy=False)
    frame = pd.DataFrame(data, index=pd.RangeIndex(rows))
    frame.columns = pd.Index(names, dtype="str")
    return frame


# ====================================================================================== export and read
def _json_safe(value, where: str):
    """Plain JSON values (:func:`engine.jsonsafe.json_value`); NaN and inf become null."""
    try:
        return json_value(value, where=where)
    except TypeError as exc:
        raise BundleError(f"{exc}; a bundle cannot carry it") from None


def _figure(result: RunResult, name: str):
    try:
        value = float(getattr(result, name))
    except (KeyError, AttributeError, TypeError, ValueError):
        return None
    return value if math.isfinite(value) else None


def export_bundle(result: RunResult, inputs: Mapping[str, bytes] | None, path: str | Path) -> Path:
    """Write ``result`` and the scenario files it came from to the bundle ``path``; returns the path.

    Parameters
    ----------
    result : RunResult
    inputs : dict of str to bytes
        The scenario folder's files (see :func:`engine.storage.store.read_scenario_files`).
    path : str or Path
        The zip file to write (its folder is created; an existing file is replaced).

    Raises
    ------
    BundleError
        If an input file name is not a scenario file, a table or file exceeds the limits a reader accepts, or a
        value cannot be carried.
    """
    if not isinstance(result, RunResult):
        raise BundleError(f"only a RunResult can be bundled, not {type(result).__name__}")
    try:
        files = check_scenario_files(inputs or {}, "inputs")
    except StoreError as exc:
        raise BundleError(str(exc)) from None
    limits = DEFAULT_LIMITS
    entries: list[tuple[str, bytes]] = []
    for filename, content in files.items():
        entries.append((f"inputs/{filename}", content))
    table_specs = {}
    for table, frame in result.tables.items():
        if not isinstance(table, str) or not re.fullmatch(TABLE_NAME_PATTERN, table):
            raise BundleError(f"table name {table!r} cannot go into a bundle (use lower-case letters, digits, '_')")
        data, spec = _table_to_csv(frame, table)
        table_specs[table] = spec
        entries.append((f"results/{table}.csv", data))
    try:
        summary = result.summary()
    except (KeyError, AttributeError, TypeError, ValueError) as exc:
        raise BundleError(f"the result cannot be summarised for the bundle: {exc!r}") from None
    summary_bytes = json.dumps(_json_safe(summary, "the summary"), indent=2, allow_nan=False).encode()
    entries.append(("results/summary.json", summary_bytes))
    manifest = {
        "format": BUNDLE_FORMAT,
        "format_version": BUNDLE_FORMAT_VERSION,
        "created_utc": datetime.now(timezone.utc).isoformat(timespec="seconds"),
        "heatmosaic_version": __version__,
        "scenario_name": str(result.scenario_name or ""),
        "input_hash": str(result.input_hash or ""),
        "cost_case": str(result.cost_case or ""),
        "objective": str(result.objective or ""),
        "status": str(result.status or ""),
        "message": str(result.message or ""),
        "settings": _json_safe(result.settings, "the settings"),
        "timings_s": _json_safe(result.timings_s, "the timings"),
        "model_size": _json_safe(result.model_size, "the model size"),
        "extras": _json_safe(result.extras, "the extras"),
        "summary": {
            name: _figure(result, name)
            for name in ("total_cost_eur_per_a", "co2_t_per_a", "heat_demand_mwh_per_a", "unserved_heat_mwh_per_a")
        },
        "inputs": {
            filename: {"bytes": len(content), "sha256": hashlib.sha256(content).hexdigest()}
            for filename, content in files.items()
        },
        "results_summary": {"bytes": len(summary_bytes), "sha256": hashlib.sha256(summary_bytes).hexdigest()},
        "missing_required_inputs": missing_files(files),
        "tables": table_specs,
        "caution": cautions.RESULTS,
    }
    entries.insert(0, ("manifest.json", json.dumps(manifest, indent=2, allow_nan=False).encode()))
    total = 0
    for name, data in entries:
        total += len(data)
        if len(data) > limits.max_entry_bytes:
            raise BundleError(
                f"{name} would be {len(data) / MIB:.0f} MiB, more than the {limits.max_entry_bytes / MIB:.0f} MiB "
                "a bundle may hold per file (use typical days to make the result smaller)")
    if total > limits.max_total_bytes:
        raise BundleError(
            f"the bundle would be {total / MIB:.0f} MiB unpacked, more than the {limits.max_total_bytes / MIB:.0f} "
            "MiB allowed")
    return write_checked_zip(path, entries, limits)


@dataclass
class BundleContents:
    """What :func:`read_bundle` found.

    Attributes
    ----------
    manifest : dict
        ``manifest.json``.
    input_folder : Path
        The scenario folder unpacked from ``inputs/`` (empty when the bundle carried no inputs).
    tables : dict of str to DataFrame
        The result tables, with the dtypes they had when exported.
    summary : dict
        ``results/summary.json`` (empty when absent).
    """

    manifest: dict
    input_folder: Path
    tables: dict
    summary: dict = field(default_factory=dict)

    def to_result(self) -> RunResult:
        """The run as a :class:`RunResult` (NaN in settings and extras came through as None)."""
        m = self.manifest

        def mapping(key):
            value = m.get(key)
            return value if isinstance(value, dict) else {}

        return RunResult(
            status=str(m.get("status", "")),
            message=str(m.get("message", "")),
            objective=str(m.get("objective", "")),
            cost_case=str(m.get("cost_case", "")),
            input_hash=str(m.get("input_hash", "")),
            scenario_name=str(m.get("scenario_name", "")),
            settings=mapping("settings"),
            timings_s=mapping("timings_s"),
            model_size=mapping("model_size"),
            tables=dict(self.tables),
            extras=mapping("extras"),
        )


_BUNDLE_ENTRY = re.compile(
    r"manifest\.json|results/summary\.json|results/" + TABLE_NAME_PATTERN + r"\.csv"
    r"|inputs/(?:" + "|".join(re.escape(n) for n in SCENARIO_FILES) + ")"
)


def _load_json(path: Path, name: str) -> dict:
    value = loads(path.read_bytes(), f"bundle refused: {name}", BundleError)
    if not isinstance(value, dict):
        raise BundleError(f"bundle refused: {name} must hold a JSON object")
    return value


def read_bundle(path_or_bytes, dest_folder: str | Path, *, limits: ZipLimits = DEFAULT_LIMITS) -> BundleContents:
    """Check and unpack a bundle into ``dest_folder``.

    Creates ``dest_folder/manifest.json``, ``dest_folder/inputs/`` (a scenario folder) and
    ``dest_folder/results/``. Everything is checked before anything is moved into place; when the bundle is
    refused ``dest_folder`` holds nothing new.

    Parameters
    ----------
    path_or_bytes : str, Path, bytes or binary file object
        The bundle (a path, its bytes, or an uploaded file).
    dest_folder : str or Path
        Where to unpack; created if missing; must not already hold a bundle.
    limits : ZipLimits
        Safety limits (defaults: :data:`DEFAULT_LIMITS`).

    Raises
    ------
    BundleError
        With a plain message, when the bundle is refused.
    """
    dest = Path(dest_folder)
    try:
        dest.mkdir(parents=True, exist_ok=True)
    except OSError as exc:
        raise BundleError(f"cannot create the folder '{dest}': {exc}") from None
    root = dest.resolve()
    taken = [n for n in ("manifest.json", "inputs", "results") if os.path.lexists(root / n)]
    if taken:
        raise BundleError(f"the folder '{dest}' already holds {', '.join(taken)}; unpack into an empty folder")
    try:
        with CheckedZip(path_or_bytes, _BUNDLE_ENTRY.fullmatch, limits, "bundle", {"inputs/", "results/"},
                        binary=lambda name: name.startswith("inputs/") and name[7:] in BINARY_FILES,
                        archives=lambda name: name.startswith("inputs/") and name[7:] in ARCHIVE_FILES) as checked:
            if "manifest.json" not in checked.names:
                raise BundleError("bundle refused: it has no manifest.json, so it is not a heatmosaic bundle")
            staging = Path(tempfile.mkdtemp(prefix=".incoming-", dir=root))
            try:
                for name in checked.names:
                    checked.extract(name, staging)
                manifest = _load_json(staging / "manifest.json", "manifest.json")
                contents = _check_staged(manifest, staging, root)
                (staging / "inputs").mkdir(exist_ok=True)
                (staging / "results").mkdir(exist_ok=True)
                for name in ("manifest.json", "inputs", "results"):
                    os.replace(staging / name, root / name)
            finally:
                shutil.rmtree(staging, ignore_errors=True)
    except ZipRefused as exc:
        if isinstance(exc, BundleError):
            raise
        raise BundleError(str(exc)) from None
    contents.input_folder = root / "inputs"
    return contents


_TABLE_DTYPES = ("bool", "object", "string", "text") + tuple(sorted(_INT_NAMES | _FLOAT_NAMES | _MASKED_NAMES))
_MANIFEST_TEXT = {"created_utc": 64, "heatmosaic_version": 64, "scenario_name": 200, "input_hash": 128,
                  "cost_case": 200, "objective": 16, "status": 64, "message": 10_000, "caution": 10_000}


def check_manifest(manifest: dict) -> None:
    """Every field of manifest.json against its schema (types, ranges, sizes); BundleError names the field."""
    check = Checker("bundle refused: manifest.json", BundleError)
    for key, limit in _MANIFEST_TEXT.items():
        check.text(manifest.get(key), key, max_chars=limit)
    check_run_settings(manifest.get("settings"), "bundle refused: manifest.json", BundleError)
    for key in ("timings_s", "model_size", "extras"):
        check_number_map(manifest.get(key), key, check)
    summary = check.mapping(manifest.get("summary"), "summary")
    for key, value in summary.items():
        check.number(value, f"summary.{key}", optional=True)
    inputs = check.mapping(manifest.get("inputs"), "inputs")
    for name, entry in inputs.items():
        entry = check.mapping(entry, f"inputs.{name}", optional=False)
        check.integer(entry.get("bytes"), f"inputs.{name}.bytes", 0, 2**40)
        check.sha256(entry.get("sha256"), f"inputs.{name}.sha256")
    if manifest.get("results_summary") is not None:
        entry = check.mapping(manifest.get("results_summary"), "results_summary")
        check.integer(entry.get("bytes"), "results_summary.bytes", 0, 2**40)
        check.sha256(entry.get("sha256"), "results_summary.sha256")
    check.listing(manifest.get("missing_required_inputs"), "missing_required_inputs", 100)
    tables = check.mapping(manifest.get("tables"), "tables")
    if len(tables) > 1000:
        check.fail("tables", f"lists {len(tables):,} tables; at most 1,000 are allowed")
    for table, spec in tables.items():
        where = f"tables.{table}"
        spec = check.mapping(spec, where, optional=False)
        rows = check.integer(spec.get("rows"), f"{where}.rows", 0, MAX_ROWS)
        check.sha256(spec.get("sha256"), f"{where}.sha256")
        columns = check.listing(spec.get("columns"), f"{where}.columns", MAX_COLUMNS, optional=False)
        for k, column in enumerate(columns):
            field = f"{where}.columns[{k}]"
            column = check.mapping(column, field, optional=False)
            check.text(column.get("name"), f"{field}.name", max_chars=256, optional=False)
            dtype = check.choice(column.get("dtype"), f"{field}.dtype", _TABLE_DTYPES)
            if dtype in ("string", "object", "text"):
                missing = check.listing(column.get("missing", []), f"{field}.missing", rows)
                for m in missing:
                    check.integer(m, f"{field}.missing", 0, max(rows - 1, 0))
            if dtype == "string":
                check.choice(column.get("storage"), f"{field}.storage", ("python", "pyarrow", None))
                check.choice(column.get("na", "nan"), f"{field}.na", ("nan", "NA"))
            if dtype == "text":
                check.text(column.get("original"), f"{field}.original", max_chars=200)


def _check_staged(manifest: dict, staging: Path, root: Path) -> BundleContents:
    """Validate the unpacked files against the manifest and read the tables."""
    if manifest.get("format") != BUNDLE_FORMAT:
        raise BundleError("bundle refused: manifest.json does not describe a heatmosaic bundle")
    version = manifest.get("format_version")
    if not isinstance(version, int) or isinstance(version, bool):
        raise BundleError("bundle refused: manifest.json has no format_version")
    if version > BUNDLE_FORMAT_VERSION:
        raise BundleError(
            f"bundle refused: it has format version {version}, written by a newer heatmosaic release "
            f"(this one reads up to {BUNDLE_FORMAT_VERSION})")
    check_manifest(manifest)
    listed_inputs = manifest.get("inputs", {})
    listed_tables = manifest.get("tables", {})
    if not isinstance(listed_inputs, dict) or not isinstance(listed_tables, dict):
        raise BundleError("bundle refused: manifest.json 'inputs' and 'tables' must be objects")
    inputs_dir = staging / "inputs"
    present_inputs = {p.name for p in inputs_dir.iterdir()} if inputs_dir.is_dir() else set()
    for filename in sorted(present_inputs | set(listed_inputs)):
        if filename not in present_inputs:
            raise BundleError(f"bundle refused: manifest.json lists inputs/{filename}, which is missing")
        if filename not in listed_inputs:
            raise BundleError(f"bundle refused: inputs/{filename} is not described in manifest.json")
        expected = listed_inputs[filename].get("sha256") if isinstance(listed_inputs[filename], dict) else None
        actual = hashlib.sha256((inputs_dir / filename).read_bytes()).hexdigest()
        if actual != expected:
            raise BundleError(
                f"bundle refused: inputs/{filename} does not match its checksum in manifest.json "
                "(the bundle was altered or damaged)")
    results_dir = staging / "results"
    present_tables = (
        {p.name[:-4] for p in results_dir.iterdir() if p.name.endswith(".csv")} if results_dir.is_dir() else set()
    )
    tables = {}
    for table in list(listed_tables) + sorted(present_tables - set(listed_tables)):
        if table not in present_tables:
            raise BundleError(f"bundle refused: manifest.json lists results/{table}.csv, which is missing")
        spec = listed_tables.get(table)
        if not isinstance(spec, dict):
            raise BundleError(f"bundle refused: results/{table}.csv is not described in manifest.json")
        csv_path = results_dir / f"{table}.csv"
        if hashlib.sha256(csv_path.read_bytes()).hexdigest() != spec.get("sha256"):
            raise BundleError(
                f"bundle refused: results/{table}.csv does not match its checksum in manifest.json "
                "(the bundle was altered or damaged)")
        tables[table] = _table_from_csv(csv_path, spec, table)
    summary_path = results_dir / "summary.json"
    summary = {}
    if summary_path.exists():
        listed = manifest.get("results_summary")
        if not isinstance(listed, dict):
            raise BundleError("bundle refused: results/summary.json is not described in manifest.json")
        if hashlib.sha256(summary_path.read_bytes()).hexdigest() != listed.get("sha256"):
            raise BundleError(
                "bundle refused: results/summary.json does not match its checksum in manifest.json "
                "(the bundle was altered or damaged)")
        summary = _load_json(summary_path, "results/summary.json")
    elif manifest.get("results_summary") is not None:
        raise BundleError("bundle refused: manifest.json lists results/summary.json, which is missing")
    return BundleContents(manifest=manifest, input_folder=root / "inputs", tables=tables, summary=summary)
