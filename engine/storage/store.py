"""The scenario store: saved runs in one SQLite file.

A planner compares many runs (cost cases, objectives, parameter sweeps) across days, so every run can be kept
together with the scenario files it was computed from. :class:`ScenarioStore` writes runs to one SQLite file in the
user's data folder (or wherever ``path`` / ``$HEATMOSAIC_STORE`` points).

Design points
-------------
* One file, WAL journal and a busy timeout, so that two dashboard sessions saving at the same moment both succeed
  (the second one waits for the first one's transaction instead of failing).
* Every change runs inside one ``BEGIN IMMEDIATE ... COMMIT`` transaction: a save interrupted part-way (a killed
  process, a power cut) leaves the file as it was before that save, with all earlier runs intact.
* Values reach SQL only as bound parameters.
* No pickle anywhere. Tables are stored as JSON that records every column's dtype and reads back equal
  (:mod:`engine.storage.tablecodec`).
* The schema carries a version (``PRAGMA user_version``) and an application id (``PRAGMA application_id``), so a
  file that belongs to another program is refused instead of altered, and a file from an older release is
  migrated in place (see :data:`MIGRATIONS`).

Schema (version 2)
------------------
``runs``
    run_id, name, note, created_utc, scenario_name, cost_case, objective, status, message, input_hash,
    total_cost_eur_per_a, co2_t_per_a, settings_json, timings_json, model_size_json, extras_json, tags, sweep_id.
``run_tables``
    run_id (deleted with its run), position, name, payload (the JSON of :func:`encode_table`).
``run_inputs``
    run_id (deleted with its run), filename (one of :data:`SCENARIO_FILES`), content (the file's bytes; GIS
    layers and the weather file of a planner's own city among them).

Version 1 lacked ``runs.tags`` and ``runs.sweep_id``. A whole store travels as a library zip
(:mod:`engine.storage.library`).
"""

from __future__ import annotations

import json
import math
import os
import sqlite3
import sys
import threading
from collections.abc import Callable, Iterable, Mapping
from contextlib import contextmanager
from datetime import datetime, timezone
from pathlib import Path

import numpy as np
import pandas as pd

from engine.jsonsafe import json_value
from engine.model.results import RunResult
from engine.scenario.files import BINARY_FILES, SCENARIO_FILES
from engine.storage.errors import StoreDamaged, StoreError
from engine.storage.tablecodec import decode_table, encode_table

SCHEMA_VERSION = 2
"""Schema version written by this release."""

APPLICATION_ID = 0x484D5354
"""``PRAGMA application_id`` of a heatmosaic store (the ASCII letters "HMST")."""

ENV_STORE_PATH = "HEATMOSAIC_STORE"

STORE_FILE_NAME = "scenarios.sqlite"

LIST_COLUMNS = (
    "run_id",
    "name",
    "cost_case",
    "objective",
    "total_cost_eur_per_a",
    "co2_t_per_a",
    "created_utc",
    "note",
    "status",
    "input_hash",
    "tags",
    "sweep_id",
)
"""Columns of :meth:`ScenarioStore.list_runs`."""


# ====================================================================================== where the store lives
def default_store_path() -> Path:
    """The store file used when none is given.

    ``$HEATMOSAIC_STORE`` (a file path) when set; otherwise ``heatmosaic/scenarios.sqlite`` in the platform's
    per-user data folder: ``$XDG_DATA_HOME`` or ``~/.local/share`` on Linux and other Unix systems,
    ``~/Library/Application Support`` on macOS, ``%APPDATA%`` on Windows.
    """
    override = os.environ.get(ENV_STORE_PATH, "").strip()
    if override:
        return Path(override).expanduser()
    if sys.platform.startswith("win"):
        base = os.environ.get("APPDATA") or str(Path.home() / "AppData" / "Roaming")
    elif sys.platform == "darwin":
        base = str(Path.home() / "Library" / "Application Support")
    else:
        base = os.environ.get("XDG_DATA_HOME", "").strip() or str(Path.home() / ".local" / "share")
    return Path(base).expanduser() / "heatmosaic" / STORE_FILE_NAME


def read_scenario_files(folder: str | Path) -> dict[str, bytes]:
    """The scenario files of ``folder`` as bytes, keyed by file name.

    Only names in :data:`SCENARIO_FILES` are read; anything else in the folder is ignored.

    Raises
    ------
    StoreError
        If ``folder`` is not a folder.
    """
    folder = Path(folder)
    if not folder.is_dir():
        raise StoreError(f"scenario folder '{folder}' does not exist or is not a folder")
    files = {}
    for name in SCENARIO_FILES:
        candidate = folder / name
        if candidate.is_file():
            files[name] = candidate.read_bytes()
    return files


def check_scenario_files(files: Mapping[str, bytes], where: str = "inputs") -> dict[str, bytes]:
    """Validate a mapping of scenario file name -> bytes; returns a plain dict.

    Raises
    ------
    StoreError
        If a name is not one of :data:`SCENARIO_FILES`, a content is not bytes, or a text file is not UTF-8
        (GeoPackages, zipped Shapefiles and the EPW file, :data:`~engine.scenario.files.BINARY_FILES`, may hold
        any bytes).
    """
    if not isinstance(files, Mapping):
        raise StoreError(f"{where} must map file names to bytes, not {type(files).__name__}")
    out = {}
    for name, content in files.items():
        if name not in SCENARIO_FILES:
            allowed = ", ".join(SCENARIO_FILES)
            raise StoreError(f"{where}: '{name}' is not a scenario file name (allowed: {allowed})")
        if isinstance(content, (bytearray, memoryview)):
            content = bytes(content)
        if not isinstance(content, bytes):
            raise StoreError(f"{where}: the content of '{name}' must be bytes, not {type(content).__name__}")
        try:
            if name not in BINARY_FILES:
                content.decode("utf-8")
        except UnicodeDecodeError as exc:
            raise StoreError(
                f"{where}: '{name}' is not UTF-8 text (byte {exc.start}); scenario files are UTF-8"
            ) from None
        out[name] = content
    return out


# ====================================================================================== run metadata
def _dump_meta(value, field_name: str) -> str:
    """Metadata dicts as JSON text; NaN and inf kept (written as Python's json writes them)."""
    if not isinstance(value, dict):
        raise StoreError(f"the run's {field_name} must be a dict, not {type(value).__name__}")
    try:
        return json.dumps(json_value(value, keep_non_finite=True, where=f"the {field_name}"), allow_nan=True)
    except (TypeError, ValueError) as exc:
        raise StoreError(f"the run's {field_name} holds a value the store cannot keep: {exc}") from None


def _load_meta(text: str | None, field_name: str, run_id) -> dict:
    if not text:
        return {}
    try:
        value = json.loads(text)
    except ValueError as exc:
        raise StoreError(f"run {run_id}: {field_name} cannot be read back ({exc})") from None
    return value if isinstance(value, dict) else {}


def _figure(result: RunResult, name: str) -> float | None:
    """A city figure of ``result`` for the runs list, or None when the tables do not give it."""
    try:
        value = float(getattr(result, name))
    except (KeyError, AttributeError, TypeError, ValueError):
        return None
    return value if math.isfinite(value) else None


def _normalise_tags(tags) -> str:
    if tags is None:
        return ""
    if isinstance(tags, str):
        return tags.strip()
    if isinstance(tags, Iterable):
        parts = []
        for tag in tags:
            if not isinstance(tag, str):
                raise StoreError(f"tags must be text, not {type(tag).__name__}")
            if tag.strip():
                parts.append(tag.strip())
        return ", ".join(parts)
    raise StoreError(f"tags must be text, not {type(tags).__name__}")


def _normalise_sweep_id(sweep_id) -> str | None:
    if sweep_id is None:
        return None
    if isinstance(sweep_id, (bool, np.bool_)) or not isinstance(sweep_id, (str, int, np.integer)):
        raise StoreError(f"sweep_id must be text or a whole number, not {type(sweep_id).__name__}")
    return str(sweep_id)


def _now_utc() -> str:
    return datetime.now(timezone.utc).isoformat(timespec="seconds")


# ====================================================================================== schema
_SCHEMA_V1 = (
    "PRAGMA application_id = 1213027156",
    """CREATE TABLE runs (
        run_id INTEGER PRIMARY KEY AUTOINCREMENT,
        name TEXT NOT NULL,
        note TEXT NOT NULL DEFAULT '',
        created_utc TEXT NOT NULL,
        scenario_name TEXT NOT NULL DEFAULT '',
        cost_case TEXT NOT NULL DEFAULT '',
        objective TEXT NOT NULL DEFAULT '',
        status TEXT NOT NULL DEFAULT '',
        message TEXT NOT NULL DEFAULT '',
        input_hash TEXT NOT NULL DEFAULT '',
        total_cost_eur_per_a REAL,
        co2_t_per_a REAL,
        settings_json TEXT NOT NULL DEFAULT '{}',
        timings_json TEXT NOT NULL DEFAULT '{}',
        model_size_json TEXT NOT NULL DEFAULT '{}',
        extras_json TEXT NOT NULL DEFAULT '{}'
    )""",
    """CREATE TABLE run_tables (
        run_id INTEGER NOT NULL REFERENCES runs(run_id) ON DELETE CASCADE,
        position INTEGER NOT NULL,
        name TEXT NOT NULL,
        payload TEXT NOT NULL,
        PRIMARY KEY (run_id, name)
    )""",
    """CREATE TABLE run_inputs (
        run_id INTEGER NOT NULL REFERENCES runs(run_id) ON DELETE CASCADE,
        filename TEXT NOT NULL,
        content BLOB NOT NULL,
        PRIMARY KEY (run_id, filename)
    )""",
    "CREATE INDEX runs_by_input_hash ON runs(input_hash)",
    "PRAGMA user_version = 1",
)
"""Version 1 of the schema. A new store is made as version 1 and then migrated, so that a new file and a
migrated old file are built by the same statements."""

def _migrate_1_to_2(conn: sqlite3.Connection) -> None:
    """Version 2 adds free-text tags and the id of the parameter sweep a run belongs to."""
    conn.execute("ALTER TABLE runs ADD COLUMN tags TEXT NOT NULL DEFAULT ''")
    conn.execute("ALTER TABLE runs ADD COLUMN sweep_id TEXT")
    conn.execute("CREATE INDEX runs_by_sweep ON runs(sweep_id)")
    conn.execute("PRAGMA user_version = 2")


MIGRATIONS: dict[int, Callable[[sqlite3.Connection], None]] = {1: _migrate_1_to_2}
"""Schema migrations: ``MIGRATIONS[v]`` turns version ``v`` into version ``v + 1`` (inside a transaction)."""


def migrate(conn: sqlite3.Connection) -> int:
    """Bring the schema of an open store to :data:`SCHEMA_VERSION`; returns the version found.

    Must be called inside a write transaction; creates the schema when the database is empty.
    """
    found = conn.execute("PRAGMA user_version").fetchone()[0]
    version = found
    if version == 0:
        for statement in _SCHEMA_V1:
            conn.execute(statement)
        version = 1
    while version < SCHEMA_VERSION:
        MIGRATIONS[version](conn)
        version += 1
    return found


# ====================================================================================== damage
_SQLITE_MAGIC = b"SQLite format 3\x00"

_CHECKED: dict[tuple, bool] = {}
"""Files found intact by ``PRAGMA quick_check`` in this process, keyed by path, size and modification time of
the file and its write-ahead log (a dashboard opens the store on every rerun; an unchanged file is not read
again)."""


def damaged_store_message(path: Path, detail: str) -> str:
    """The sentence a planner reads about a damaged store: what happened, that the file is kept, what to do."""
    copy = path.with_name(path.name + ".damaged-copy")
    detail = " ".join(detail.split())[:300]
    return (
        f"the scenario store '{path}' is damaged (SQLite reports: {detail}). It was left exactly as "
        f"it is and nothing is read from or written into it. Keep a copy of it (for example as '{copy}'), then "
        f"move the damaged file away or set ${ENV_STORE_PATH} to a new file to start an empty store; the sqlite3 "
        "program's '.recover' command may rescue runs from the copy"
    )


def is_damage(exc: sqlite3.DatabaseError) -> bool:
    """Whether an SQLite error means a damaged file (not a busy or read-only one, not a constraint)."""
    text = str(exc).lower()
    if "malformed" in text or "not a database" in text or "corrupt" in text or "disk i/o" in text:
        return True
    return type(exc) is sqlite3.DatabaseError


def _has_sqlite_header(path: Path) -> bool:
    try:
        with open(path, "rb") as handle:
            return handle.read(len(_SQLITE_MAGIC)) == _SQLITE_MAGIC
    except OSError:
        return False


def _file_key(path: Path) -> tuple:
    parts = [str(path.resolve())]
    for candidate in (path, path.with_name(path.name + "-wal")):
        try:
            info = candidate.stat()
            parts += [info.st_size, info.st_mtime_ns]
        except OSError:
            parts += [None, None]
    return tuple(parts)


def _integrity_problem(conn: sqlite3.Connection, path: Path) -> str | None:
    """What ``PRAGMA quick_check`` finds wrong with the file, or None when it is intact."""
    key = _file_key(path)
    if _CHECKED.get(key):
        return None
    try:
        rows = conn.execute("PRAGMA quick_check(5)").fetchall()
    except sqlite3.DatabaseError as exc:
        if is_damage(exc):
            return str(exc)
        raise StoreError(f"the store '{path}' is busy ({exc}); try again") from None
    findings = [str(row[0]) for row in rows]
    if findings != ["ok"]:
        return "; ".join(findings) or "the integrity check gave no answer"
    if len(_CHECKED) > 64:
        _CHECKED.clear()
    _CHECKED[key] = True
    return None


# ====================================================================================== the store
RUN_COLUMNS = (
    "run_id, name, note, created_utc, scenario_name, cost_case, objective, status, message, input_hash, "
    "total_cost_eur_per_a, co2_t_per_a, settings_json, timings_json, model_size_json, extras_json, tags, sweep_id"
)


class ScenarioStore:
    """Saved runs in one SQLite file.

    Parameters
    ----------
    path : str or Path, optional
        The store file; created (with its folders) when missing. Default: :func:`default_store_path`.
    timeout_s : float
        How long a save waits for another session's save to finish before giving up. [s]

    Raises
    ------
    StoreError
        If the file is not a heatmosaic store (not SQLite, or another program's SQLite file) or was written by
        a newer release.

    Notes on damage: opening runs SQLite's ``PRAGMA quick_check``. A damaged file (intact header, damaged pages,
    or cut short) opens, but :attr:`damage` holds a plain message and every read or write raises
    :class:`StoreDamaged` with it; the file is never written to (not even its journal mode).

    Notes
    -----
    One object may be shared by the threads of one process (calls are serialised by a lock); several processes
    may open the same file at once. Use it as a context manager or call :meth:`close`.
    """

    def __init__(self, path: str | Path | None = None, *, timeout_s: float = 60.0):
        self.path = Path(path).expanduser() if path is not None else default_store_path()
        self._lock = threading.RLock()
        # Called inside the save transaction after each row is written; lets tests kill a save part-way.
        self._fault_hook: Callable[[str], None] | None = None
        try:
            self.path.parent.mkdir(parents=True, exist_ok=True)
        except OSError as exc:
            raise StoreError(f"cannot create the folder of the store '{self.path}': {exc}") from None
        if self.path.is_dir():
            raise StoreError(f"the store path '{self.path}' is a folder, not a file")
        try:
            self._conn = sqlite3.connect(
                str(self.path), timeout=float(timeout_s), isolation_level=None, check_same_thread=False
            )
        except sqlite3.Error as exc:
            raise StoreError(f"cannot open the store '{self.path}': {exc}") from None
        try:
            self._prepare()
        except BaseException:
            self._conn.close()
            self._conn = None
            raise

    # ------------------------------------------------------------------ opening
    def _prepare(self) -> None:
        conn = self._conn
        self.damage = None
        try:
            application_id = conn.execute("PRAGMA application_id").fetchone()[0]
            version = conn.execute("PRAGMA user_version").fetchone()[0]
            n_objects = conn.execute("SELECT count(*) FROM sqlite_master").fetchone()[0]
        except sqlite3.DatabaseError as exc:
            if _has_sqlite_header(self.path):
                self._mark_damaged(str(exc))
                self.journal_mode, self.migrated_from = None, None
                return
            raise StoreError(
                f"'{self.path}' is not a heatmosaic scenario store (it is not an SQLite database: {exc})"
            ) from None
        empty = application_id == 0 and version == 0 and n_objects == 0
        if not empty and application_id != APPLICATION_ID:
            raise StoreError(
                f"'{self.path}' is an SQLite database of another program, not a heatmosaic scenario store; "
                "it was left unchanged"
            )
        if version > SCHEMA_VERSION:
            raise StoreError(
                f"the store '{self.path}' has schema version {version}, written by a newer heatmosaic release "
                f"(this one knows up to {SCHEMA_VERSION}); update heatmosaic to open it"
            )
        # Integrity before anything that writes (the journal mode is written into the header): a damaged file is
        # kept exactly as it is.
        problem = _integrity_problem(conn, self.path)
        if problem:
            self._mark_damaged(problem)
            self.journal_mode, self.migrated_from = None, version
            return
        try:
            self.journal_mode = conn.execute("PRAGMA journal_mode = WAL").fetchone()[0]
            conn.execute("PRAGMA foreign_keys = ON")
        except sqlite3.Error as exc:
            raise StoreError(f"cannot prepare the store '{self.path}': {exc}") from None
        # The schema version found on opening (0 for a new file). Opening a current store takes no write lock,
        # so a session can open the store while another one is saving.
        self.migrated_from = version
        if version < SCHEMA_VERSION:
            with self._write() as write:
                self.migrated_from = migrate(write)

    # ------------------------------------------------------------------ damage
    def _mark_damaged(self, detail: str) -> None:
        self.damage = damaged_store_message(self.path, detail)

    def _damaged_error(self, exc: BaseException | None = None) -> StoreError:
        if self.damage is None:
            self._mark_damaged(str(exc) if exc is not None else "integrity check failed")
        _CHECKED.pop(_file_key(self.path), None)
        return StoreDamaged(self.damage)

    def _refuse_if_damaged(self) -> None:
        if self.damage is not None:
            raise StoreDamaged(self.damage)

    # ------------------------------------------------------------------ plumbing
    def _connection(self) -> sqlite3.Connection:
        if self._conn is None:
            raise StoreError("the store is closed")
        return self._conn

    @contextmanager
    def _write(self):
        """One write transaction; rolled back on any error; refused on a damaged store."""
        with self._lock:
            self._refuse_if_damaged()
            conn = self._connection()
            try:
                conn.execute("BEGIN IMMEDIATE")
            except sqlite3.DatabaseError as exc:
                if is_damage(exc):
                    raise self._damaged_error(exc) from None
                raise StoreError(f"the store '{self.path}' is busy or read-only ({exc}); try again") from None
            try:
                yield conn
                conn.execute("COMMIT")
            except BaseException as exc:
                if conn.in_transaction:
                    try:
                        conn.execute("ROLLBACK")
                    except sqlite3.DatabaseError:
                        pass
                if isinstance(exc, sqlite3.DatabaseError) and is_damage(exc):
                    raise self._damaged_error(exc) from None
                raise

    @contextmanager
    def _read(self):
        """A read transaction: one consistent view of the file. A damaged store is refused (a damaged file may
        lose runs from a listing without an error, and absence must never stand in for damage)."""
        with self._lock:
            self._refuse_if_damaged()
            conn = self._connection()
            try:
                conn.execute("BEGIN")
                try:
                    yield conn
                finally:
                    if conn.in_transaction:
                        conn.execute("COMMIT")
            except sqlite3.DatabaseError as exc:
                if is_damage(exc):
                    raise self._damaged_error(exc) from None
                raise StoreError(f"the store '{self.path}' could not be read: {exc}") from None

    def _hook(self, stage: str) -> None:
        if self._fault_hook is not None:
            self._fault_hook(stage)

    def _require_run(self, conn: sqlite3.Connection, run_id) -> int:
        run_id = self._run_id(run_id)
        if conn.execute("SELECT 1 FROM runs WHERE run_id = ?", (run_id,)).fetchone() is None:
            raise StoreError(f"there is no run {run_id} in the store '{self.path}'")
        return run_id

    @staticmethod
    def _run_id(run_id) -> int:
        if isinstance(run_id, (bool, np.bool_)) or not isinstance(run_id, (int, np.integer)):
            raise StoreError(f"a run id is a whole number, not {run_id!r}")
        return int(run_id)

    def close(self) -> None:
        """Close the file. Further calls raise :class:`StoreError`."""
        with self._lock:
            if self._conn is not None:
                self._conn.close()
                self._conn = None

    def __enter__(self) -> "ScenarioStore":
        return self

    def __exit__(self, *exc_info) -> None:
        self.close()

    def __repr__(self) -> str:
        return f"ScenarioStore('{self.path}')"

    # ------------------------------------------------------------------ saving
    def save_run(
        self,
        result: RunResult,
        name: str,
        note: str = "",
        inputs: Mapping[str, bytes] | None = None,
        tags: str | Iterable[str] = "",
        sweep_id: str | int | None = None,
    ) -> int:
        """Save ``result`` with the scenario files it was computed from; returns the new run id.

        Parameters
        ----------
        result : RunResult
            The run.
        name : str
            Display name (need not be unique).
        note : str
            Free text.
        inputs : dict of str to bytes, optional
            The scenario folder's files (see :func:`read_scenario_files`), so the run can be reproduced.
        tags : str or list of str
            Free-text tags; a list is stored comma separated.
        sweep_id : str or int, optional
            The parameter sweep the run belongs to (stored as text).

        Raises
        ------
        StoreError
            If the result cannot be stored (a table or metadata value the store cannot keep, an unknown input
            file name) or the store stays busy longer than the timeout. Nothing is saved then.
        """
        record, tables, files = self.prepare_run(result, name, note, inputs, tags, sweep_id)
        try:
            with self._write() as conn:
                return self._insert_run(conn, record, tables, files)
        except sqlite3.Error as exc:
            if isinstance(exc, sqlite3.DatabaseError) and is_damage(exc):
                raise self._damaged_error(exc) from None
            raise StoreError(f"the run could not be saved to '{self.path}': {exc}") from None

    def prepare_run(self, result, name, note, inputs, tags, sweep_id, created_utc=None):
        """Everything a save writes, encoded before the transaction so the lock is held briefly.

        Returns the parts that :meth:`add_prepared` writes; :meth:`save_run` is the two steps in one.
        """
        if not isinstance(result, RunResult):
            raise StoreError(f"only a RunResult can be saved, not {type(result).__name__}")
        if not isinstance(name, str) or not name.strip():
            raise StoreError("a run needs a name (non-empty text)")
        if not isinstance(note, str):
            raise StoreError(f"a note is text, not {type(note).__name__}")
        if not isinstance(result.tables, dict):
            raise StoreError("result.tables must be a dict of table name -> DataFrame")
        tables = []
        for table_name, frame in result.tables.items():
            if not isinstance(table_name, str) or not table_name:
                raise StoreError(f"table names must be non-empty text, not {table_name!r}")
            tables.append((table_name, encode_table(frame, f"table '{table_name}'")))
        files = check_scenario_files(inputs or {}, "inputs")
        record = (
            name.strip(),
            note,
            created_utc or _now_utc(),
            str(result.scenario_name or ""),
            str(result.cost_case or ""),
            str(result.objective or ""),
            str(result.status or ""),
            str(result.message or ""),
            str(result.input_hash or ""),
            _figure(result, "total_cost_eur_per_a"),
            _figure(result, "co2_t_per_a"),
            _dump_meta(result.settings, "settings"),
            _dump_meta(result.timings_s, "timings_s"),
            _dump_meta(result.model_size, "model_size"),
            _dump_meta(result.extras, "extras"),
            _normalise_tags(tags),
            _normalise_sweep_id(sweep_id),
        )
        return record, tables, files

    def _insert_run(self, conn, record, tables, files) -> int:
        cursor = conn.execute(
            "INSERT INTO runs (name, note, created_utc, scenario_name, cost_case, objective, status, message, "
            "input_hash, total_cost_eur_per_a, co2_t_per_a, settings_json, timings_json, model_size_json, "
            "extras_json, tags, sweep_id) VALUES (?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?)",
            record,
        )
        run_id = int(cursor.lastrowid)
        self._hook("run")
        for position, (table_name, payload) in enumerate(tables):
            conn.execute(
                "INSERT INTO run_tables (run_id, position, name, payload) VALUES (?, ?, ?, ?)",
                (run_id, position, table_name, payload),
            )
            self._hook(f"table:{table_name}")
        for filename, content in files.items():
            conn.execute(
                "INSERT INTO run_inputs (run_id, filename, content) VALUES (?, ?, ?)",
                (run_id, filename, sqlite3.Binary(content)),
            )
            self._hook(f"input:{filename}")
        return run_id

    def add_prepared(self, prepared: list) -> list[int]:
        """Write runs made by :meth:`prepare_run` in one transaction (all or none); returns their new ids."""
        try:
            with self._write() as conn:
                return [self._insert_run(conn, *parts) for parts in prepared]
        except sqlite3.Error as exc:
            if isinstance(exc, sqlite3.DatabaseError) and is_damage(exc):
                raise self._damaged_error(exc) from None
            raise StoreError(f"the runs could not be added to '{self.path}': {exc}") from None

    @contextmanager
    def snapshot(self):
        """A read transaction for readers outside this class (the library export): one consistent view."""
        with self._read() as conn:
            yield conn

    # ------------------------------------------------------------------ reading
    def list_runs(self) -> pd.DataFrame:
        """All runs, newest first, with the columns of :data:`LIST_COLUMNS`."""
        with self._read() as conn:
            rows = conn.execute(f"SELECT {', '.join(LIST_COLUMNS)} FROM runs ORDER BY run_id DESC").fetchall()
        frame = pd.DataFrame.from_records(rows, columns=list(LIST_COLUMNS))
        text = {c: "str" for c in LIST_COLUMNS if c not in ("run_id", "total_cost_eur_per_a", "co2_t_per_a")}
        return frame.astype({"run_id": "int64", "total_cost_eur_per_a": "float64", "co2_t_per_a": "float64", **text})

    def load_run(self, run_id: int) -> RunResult:
        """The saved run as a :class:`RunResult`, its tables equal to those saved.

        Raises
        ------
        StoreError
            If there is no such run.
        """
        run_id = self._run_id(run_id)
        with self._read() as conn:
            row = conn.execute(f"SELECT {RUN_COLUMNS} FROM runs WHERE run_id = ?", (run_id,)).fetchone()
            if row is None:
                raise StoreError(f"there is no run {run_id} in the store '{self.path}'")
            table_rows = conn.execute(
                "SELECT name, payload FROM run_tables WHERE run_id = ? ORDER BY position", (run_id,)
            ).fetchall()
        (_, _, _, _, scenario_name, cost_case, objective, status, message, input_hash, _, _, settings_json,
         timings_json, model_size_json, extras_json, _, _) = row
        tables = {
            table_name: decode_table(payload, f"run {run_id}, table '{table_name}'")
            for table_name, payload in table_rows
        }
        return RunResult(
            status=status,
            message=message,
            objective=objective,
            cost_case=cost_case,
            input_hash=input_hash,
            scenario_name=scenario_name,
            settings=_load_meta(settings_json, "settings", run_id),
            timings_s=_load_meta(timings_json, "timings_s", run_id),
            model_size=_load_meta(model_size_json, "model_size", run_id),
            tables=tables,
            extras=_load_meta(extras_json, "extras", run_id),
        )

    def run_info(self, run_id: int) -> dict:
        """The list-row of one run (the keys of :data:`LIST_COLUMNS`) as a dict."""
        run_id = self._run_id(run_id)
        with self._read() as conn:
            row = conn.execute(
                f"SELECT {', '.join(LIST_COLUMNS)} FROM runs WHERE run_id = ?", (run_id,)
            ).fetchone()
        if row is None:
            raise StoreError(f"there is no run {run_id} in the store '{self.path}'")
        return dict(zip(LIST_COLUMNS, row))

    def load_inputs(self, run_id: int) -> dict[str, bytes]:
        """The scenario files saved with a run (empty when none were saved)."""
        with self._read() as conn:
            run_id = self._require_run(conn, run_id)
            rows = conn.execute(
                "SELECT filename, content FROM run_inputs WHERE run_id = ? ORDER BY filename", (run_id,)
            ).fetchall()
        return {filename: bytes(content) for filename, content in rows}

    def materialise_inputs(self, run_id: int, folder: str | Path) -> Path:
        """Write the scenario files of a run into ``folder`` (created if missing); returns the folder.

        Raises
        ------
        StoreError
            If the run saved no scenario files, or ``folder`` already holds scenario files (a mix of two
            scenarios would be neither).
        """
        files = self.load_inputs(run_id)
        if not files:
            raise StoreError(f"run {run_id} was saved without its scenario files")
        folder = Path(folder)
        try:
            folder.mkdir(parents=True, exist_ok=True)
        except OSError as exc:
            raise StoreError(f"cannot create the folder '{folder}': {exc}") from None
        clashes = [name for name in SCENARIO_FILES if os.path.lexists(folder / name)]
        if clashes:
            raise StoreError(
                f"the folder '{folder}' already holds scenario files ({', '.join(clashes)}); choose an empty folder"
            )
        root = folder.resolve()
        for filename, content in files.items():
            if filename not in SCENARIO_FILES:
                raise StoreError(f"run {run_id} holds a file with a name that is not allowed: {filename!r}")
            target = root / filename
            if target.resolve().parent != root:
                raise StoreError(f"refusing to write '{filename}' outside '{root}'")
            descriptor = os.open(target, os.O_WRONLY | os.O_CREAT | os.O_EXCL | getattr(os, "O_NOFOLLOW", 0), 0o644)
            with os.fdopen(descriptor, "wb") as handle:
                handle.write(content)
        return folder

    def find_by_hash(self, input_hash: str) -> int | None:
        """The newest run with this input hash, or None (also for an empty hash)."""
        if not isinstance(input_hash, str) or not input_hash:
            return None
        with self._read() as conn:
            row = conn.execute(
                "SELECT run_id FROM runs WHERE input_hash = ? ORDER BY run_id DESC LIMIT 1", (input_hash,)
            ).fetchone()
        return None if row is None else int(row[0])

    # ------------------------------------------------------------------ editing
    def _update(self, run_id, column_sql: str, value) -> None:
        run_id = self._run_id(run_id)
        with self._write() as conn:
            self._require_run(conn, run_id)
            conn.execute(column_sql, (value, run_id))

    def rename_run(self, run_id: int, name: str) -> None:
        """Give a run a new display name."""
        if not isinstance(name, str) or not name.strip():
            raise StoreError("a run needs a name (non-empty text)")
        self._update(run_id, "UPDATE runs SET name = ? WHERE run_id = ?", name.strip())

    def set_note(self, run_id: int, note: str) -> None:
        """Replace a run's note."""
        if not isinstance(note, str):
            raise StoreError(f"a note is text, not {type(note).__name__}")
        self._update(run_id, "UPDATE runs SET note = ? WHERE run_id = ?", note)

    def set_tags(self, run_id: int, tags: str | Iterable[str]) -> None:
        """Replace a run's tags."""
        self._update(run_id, "UPDATE runs SET tags = ? WHERE run_id = ?", _normalise_tags(tags))

    def delete_run(self, run_id: int) -> None:
        """Delete one run with its tables and scenario files; other runs are untouched."""
        run_id = self._run_id(run_id)
        with self._write() as conn:
            self._require_run(conn, run_id)
            conn.execute("DELETE FROM runs WHERE run_id = ?", (run_id,))
