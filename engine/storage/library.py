"""A whole library of saved runs as one zip file, out of a store and into another.

Layout: ``library.json`` (format, release, list of runs); per run ``runs/<n>/run.json`` (metadata),
``runs/<n>/tables/<table>.json`` (typed, read back by :func:`import_library`), ``runs/<n>/tables/<table>.csv``
(for spreadsheets: formula-leading text defused by :mod:`engine.outputs.csvfile`; never read back) and ``runs/<n>/inputs/<file>``. No pickle. A library arrives from outside, so it is read
through :class:`engine.storage.safezip.CheckedZip` under :data:`LIBRARY_LIMITS`.
"""

from __future__ import annotations

import json
import re
import sqlite3
from datetime import datetime, timezone
from pathlib import Path

from engine import __version__
from engine.model.results import RunResult
from engine.outputs.csvfile import csv_bytes
from engine.storage.errors import StoreError
from engine.storage.schema import MAX_TEXT_CHARS, Checker, check_number_map, check_run_settings, loads
from engine.storage.safezip import MIB, CheckedZip, ZipLimits, ZipRefused, write_checked_zip
from engine.scenario.files import ARCHIVE_FILES, BINARY_FILES, SCENARIO_FILES
from engine.storage.store import RUN_COLUMNS, SCHEMA_VERSION, ScenarioStore
from engine.storage.tablecodec import decode_table

LIBRARY_FORMAT = "heatmosaic-library"
LIBRARY_FORMAT_VERSION = 1

LIBRARY_LIMITS = ZipLimits(max_entries=100_000, max_entry_bytes=512 * MIB, max_total_bytes=4096 * MIB)
"""Limits of :func:`import_library` (a library holds many runs)."""

_TABLE_NAME = re.compile(r"[a-z][a-z0-9_]{0,62}")

_LIBRARY_ENTRY = re.compile(
    r"library\.json|runs/\d{1,6}/run\.json|runs/\d{1,6}/tables/[a-z][a-z0-9_]{0,62}\.(?:json|csv)"
    r"|runs/\d{1,6}/inputs/(?:" + "|".join(re.escape(n) for n in SCENARIO_FILES) + ")"
)


def export_library(store: ScenarioStore, path: str | Path, include_csv: bool = True) -> Path:
    """Write every run of ``store`` to one zip file (JSON, CSV and the scenario files); returns its path.

    ``include_csv`` adds a CSV copy of every table for spreadsheets.
    """
    with store.snapshot() as conn:
        return write_checked_zip(path, _library_entries(conn, include_csv), LIBRARY_LIMITS)


def _library_entries(conn: sqlite3.Connection, include_csv: bool):
    """The (name, bytes) entries of a library zip, one run at a time."""
    rows = conn.execute(f"SELECT {RUN_COLUMNS} FROM runs ORDER BY run_id").fetchall()
    listing = []
    for number, row in enumerate(rows, start=1):
        folder = f"runs/{number:05d}"
        meta = dict(zip(RUN_COLUMNS.split(", "), row))
        run_id = meta["run_id"]
        table_rows = conn.execute(
            "SELECT name, payload FROM run_tables WHERE run_id = ? ORDER BY position", (run_id,)
        ).fetchall()
        input_rows = conn.execute(
            "SELECT filename, content FROM run_inputs WHERE run_id = ? ORDER BY filename", (run_id,)
        ).fetchall()
        for table_name, _ in table_rows:
            if not _TABLE_NAME.fullmatch(table_name):
                raise StoreError(
                    f"run {run_id}: table name '{table_name}' cannot be exported (use lower-case letters, "
                    "digits and '_')"
                )
        run_doc = {key: meta[key] for key in (
            "name", "note", "created_utc", "scenario_name", "cost_case", "objective", "status", "message",
            "input_hash", "tags", "sweep_id")}
        run_doc.update(
            original_run_id=run_id,
            settings=json.loads(meta["settings_json"] or "{}"),
            timings_s=json.loads(meta["timings_json"] or "{}"),
            model_size=json.loads(meta["model_size_json"] or "{}"),
            extras=json.loads(meta["extras_json"] or "{}"),
            tables=[table_name for table_name, _ in table_rows],
            inputs=[filename for filename, _ in input_rows],
        )
        yield f"{folder}/run.json", json.dumps(run_doc, indent=1).encode()
        for table_name, payload in table_rows:
            yield f"{folder}/tables/{table_name}.json", payload.encode()
            if include_csv:
                frame = decode_table(payload, f"run {run_id}, table '{table_name}'")
                yield f"{folder}/tables/{table_name}.csv", csv_bytes(frame, index=False)
        for filename, content in input_rows:
            yield f"{folder}/inputs/{filename}", bytes(content)
        listing.append({"folder": folder, "original_run_id": run_id, "name": meta["name"]})
    library_doc = {
        "format": LIBRARY_FORMAT,
        "format_version": LIBRARY_FORMAT_VERSION,
        "created_utc": datetime.now(timezone.utc).isoformat(timespec="seconds"),
        "heatmosaic_version": __version__,
        "schema_version": SCHEMA_VERSION,
        "runs": listing,
    }
    yield "library.json", json.dumps(library_doc, indent=1).encode()


def _binary_input(name: str) -> bool:
    """A run's input that may hold any bytes (a GeoPackage, a zipped Shapefile, the EPW file)."""
    return "/inputs/" in name and name.rsplit("/", 1)[-1] in BINARY_FILES


def _archive_input(name: str) -> bool:
    return "/inputs/" in name and name.rsplit("/", 1)[-1] in ARCHIVE_FILES


def import_library(store: ScenarioStore, path: str | Path) -> list[int]:
    """Add every run of a library zip (from :func:`export_library`) as new runs; returns their ids.

    All or nothing: the whole library is checked first and written in one transaction. Names, notes,
    tags and creation times are kept; run ids are new.

    Raises
    ------
    StoreError
        If the file is not a heatmosaic library, is damaged or breaks the safety limits of a zip file
        (see :data:`LIBRARY_LIMITS`).
    """

    def allowed(name: str) -> bool:
        return bool(_LIBRARY_ENTRY.fullmatch(name))

    try:
        with CheckedZip(path, allowed, LIBRARY_LIMITS, what="library", binary=_binary_input,
                        archives=_archive_input) as checked:
            library_doc = _parse_json(checked.read("library.json"), "library.json")
            if library_doc.get("format") != LIBRARY_FORMAT:
                raise StoreError(f"'{path}' is not a heatmosaic library (library.json has another format)")
            check = Checker("library.json", StoreError)
            version = library_doc.get("format_version")
            if isinstance(version, bool) or not isinstance(version, int) or version < 1:
                check.fail("format_version", "must be a whole number from 1")
            if version > LIBRARY_FORMAT_VERSION:
                raise StoreError(f"'{path}' was written by a newer heatmosaic release (format {version!r})")
            listing = check.listing(library_doc.get("runs"), "runs", LIBRARY_LIMITS.max_entries, optional=False)
            prepared = []
            for item in listing:
                folder = item.get("folder") if isinstance(item, dict) else None
                if not isinstance(folder, str) or not re.fullmatch(r"runs/\d{1,6}", folder):
                    raise StoreError(f"library.json: run entry {item!r} has no valid folder")
                prepared.append(_read_library_run(store, checked, folder))
    except ZipRefused as exc:
        raise StoreError(str(exc)) from None
    return store.add_prepared(prepared)


def _read_library_run(store: ScenarioStore, checked: CheckedZip, folder: str):
    """One run of the library, checked and encoded for :meth:`ScenarioStore.add_prepared`."""
    doc = _parse_json(checked.read(f"{folder}/run.json"), f"{folder}/run.json")
    check = Checker(f"{folder}/run.json", StoreError)
    table_names = check.listing(doc.get("tables", []), "tables", 1000)
    input_names = check.listing(doc.get("inputs", []), "inputs", len(SCENARIO_FILES))
    sweep_id = doc.get("sweep_id")
    if sweep_id is not None and not isinstance(sweep_id, str):
        check.integer(sweep_id, "sweep_id", -(2**63), 2**63 - 1)
    check.text(sweep_id if isinstance(sweep_id, str) else None, "sweep_id", max_chars=200)
    tables = {}
    for table_name in table_names:
        if not isinstance(table_name, str) or not _TABLE_NAME.fullmatch(table_name):
            raise StoreError(f"{folder}/run.json: table name {table_name!r} is not allowed")
        entry = f"{folder}/tables/{table_name}.json"
        tables[table_name] = decode_table(checked.read(entry).decode("utf-8"), entry)
    inputs = {}
    for filename in input_names:
        if filename not in SCENARIO_FILES:
            raise StoreError(f"{folder}/run.json: input file {filename!r} is not a scenario file")
        inputs[filename] = checked.read(f"{folder}/inputs/{filename}")

    def text(key):
        return check.text(doc.get(key, ""), key, max_chars=TEXT_LIMITS.get(key, MAX_TEXT_CHARS))

    def mapping(key):
        if key == "settings":
            return check_run_settings(doc.get(key, {}), f"{folder}/run.json", StoreError)
        return check_number_map(doc.get(key, {}), key, check)

    result = RunResult(
        status=text("status"),
        message=text("message"),
        objective=text("objective"),
        cost_case=text("cost_case"),
        input_hash=text("input_hash"),
        scenario_name=text("scenario_name"),
        settings=mapping("settings"),
        timings_s=mapping("timings_s"),
        model_size=mapping("model_size"),
        tables=tables,
        extras=mapping("extras"),
    )
    name = text("name") or f"imported {folder}"
    return store.prepare_run(
        result, name, text("note"), inputs, text("tags"), sweep_id,
        created_utc=text("created_utc") or None,
    )


TEXT_LIMITS = {"name": 200, "created_utc": 64, "cost_case": 200, "objective": 16, "status": 64, "input_hash": 128,
               "tags": 2000, "scenario_name": 200}
"""Longest text of each field of an imported run.json (others: :data:`MAX_TEXT_CHARS`)."""


def _parse_json(data: bytes, where: str) -> dict:
    value = loads(data, where, StoreError)
    if not isinstance(value, dict):
        raise StoreError(f"{where} must hold a JSON object")
    return value
