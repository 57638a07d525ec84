"""Tests of the scenario store (engine.storage.store).

Equality of tables is judged by the reference implementation ``pandas.testing.assert_frame_equal`` (exact, with
dtypes, index and column types); the database's health by SQLite's own ``PRAGMA integrity_check`` and
``PRAGMA foreign_key_check`` (https://sqlite.org/pragma.html); concurrency and crash behaviour against what the
SQLite documentation promises for WAL mode and transactions (https://sqlite.org/wal.html,
https://sqlite.org/atomiccommit.html). Special float values follow IEEE 754 (NaN != NaN, signed zero and
infinities). The default folder follows the XDG Base Directory Specification 0.8 (freedesktop.org).

The run results are small synthetic ones built here (never the real model), with every dtype a table may hold.
"""

from __future__ import annotations

import json
import math
import multiprocessing
import os
import signal
import sqlite3
import subprocess
import sys
import textwrap
import threading
import zipfile
from pathlib import Path

import numpy as np
import pandas as pd
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st
from hypothesis.extra import pandas as hpd
from pandas.testing import assert_frame_equal

from engine.model.results import RunResult
from engine.scenario.files import SCENARIO_FILES
from engine.storage.store import (
    APPLICATION_ID,
    LIST_COLUMNS,
    SCHEMA_VERSION,
    ScenarioStore,
    StoreError,
    default_store_path,
    read_scenario_files,
)
from engine.storage.library import export_library, import_library
from engine.storage.tablecodec import decode_table, encode_table

REPO = Path(__file__).resolve().parents[1]

COST_PARTS = ("investment", "fixed_om", "variable_om", "energy", "co2", "unserved")


# ====================================================================================== synthetic results
def synthetic_result(seed: int = 0, n_steps: int = 24) -> RunResult:
    """A small run result with realistic table shapes and every dtype a table may carry."""
    rng = np.random.default_rng(seed)
    districts = pd.DataFrame(
        {
            "district_id": ["north", "south"],
            "name": ["North quarter", "Süd – Altstadt"],
            "heat_demand_mwh_per_a": rng.uniform(1e3, 5e3, 2),
            "cooling_demand_mwh_per_a": [0.0, 120.5],
            "unserved_heat_mwh_per_a": [0.0, 1e-9],
            "unserved_cooling_mwh_per_a": [0.0, 0.0],
            **{f"{part}_eur_per_a": rng.uniform(0, 1e5, 2) for part in COST_PARTS},
            "co2_t_per_a": rng.uniform(0, 500, 2),
            "levelised_cost_eur_per_mwh": [88.1, np.nan],
            "co2_kg_per_mwh": [12.0, 55.5],
            "main_supply": ["gw_hp", "gas_boiler"],
        }
    )
    districts["total_cost_eur_per_a"] = districts[[f"{p}_eur_per_a" for p in COST_PARTS]].sum(axis=1)
    supply = pd.DataFrame(
        {
            "district_id": ["north", "north", "south"],
            "technology_id": ["gw_hp", "gas_boiler", "gas_boiler"],
            "well_id": ["W1", "", ""],
            "kind": ["groundwater_heat_pump", "fuel_boiler", "fuel_boiler"],
            "existing_kw": [0.0, 500.0, 800.0],
            "new_kw": [350.25, 0.0, 0.0],
            "heat_mwh_per_a": rng.uniform(0, 3e3, 3),
            "cooling_mwh_per_a": [40.0, 0.0, 0.0],
            "share_of_demand": [0.7, 0.3, 1.0],
        }
    )
    wells = pd.DataFrame(
        {
            "well_id": ["W1"],
            "district_id": ["north"],
            "annual_volume_m3": [1.25e5],
            "min_reinjection_temp_c": [6.5],
            "flow_limit_binds": [True],
            "volume_limit_binds": [False],
        }
    )
    steps = np.arange(n_steps, dtype=np.int64)
    dispatch = pd.DataFrame(
        {
            "step": np.repeat(steps, 2),
            "district_id": np.tile(["north", "south"], n_steps),
            "technology_id": np.tile(["gw_hp", "gas_boiler"], n_steps),
            "heat_kw": rng.normal(200, 50, 2 * n_steps),
            "cooling_kw": np.zeros(2 * n_steps),
        }
    )
    well_steps = pd.DataFrame(
        {
            "step": steps,
            "well_id": "W1",
            "reinjection_temp_c": np.where(steps % 5 == 0, np.nan, rng.uniform(5, 9, n_steps)),
        }
    )
    edge = pd.DataFrame(
        {
            "flag": np.array([True, False, True, False, True]),
            "count": np.array([0, -1, 2**62, 7, 3], dtype=np.int64),
            "small": np.array([1, 2, 3, 4, 250], dtype=np.uint8),
            "int32": np.array([-5, 0, 5, 2**31 - 1, -(2**31)], dtype=np.int32),
            "value": np.array([np.nan, np.inf, -np.inf, -0.0, 1 / 3]),
            "value32": np.array([0.1, np.nan, np.inf, -1.5, 3.4e38], dtype=np.float32),
            "tiny": np.array([5e-324, 1e-300, 1e300, -1e-310, 2.0**-1074]),
            "label": pd.array(["a", None, "", "NaN", "Zürich, \"quoted\"\nnew line"], dtype="str"),
            "mixed": np.array(["x", None, 3, 2.5, {"k": [1, 2]}], dtype=object),
            "maybe_int": pd.array([1, None, 3, -4, 5], dtype="Int64"),
            "maybe_bool": pd.array([True, None, False, True, None], dtype="boolean"),
            "maybe_float": pd.array([1.5, None, -2.0, 0.0, 7.25], dtype="Float64"),
            "category": pd.Categorical(["hp", "boiler", None, "hp", "store"], categories=["store", "hp", "boiler"]),
            "when": pd.date_range("2040-01-01", periods=5, freq="h"),
        }
    )
    return RunResult(
        status="optimal",
        message="Optimal solution found",
        objective="cost",
        cost_case="high_co2",
        input_hash=f"{seed:064x}",
        scenario_name="Example city",
        settings={"typical_days": 12, "discount_rate": 0.05, "co2_cap_t_per_a": math.inf, "label": "reference",
                  "min_share": -0.0, "floor_temp_c": -math.inf},
        timings_s={"build": 0.25, "solve": 1.5, "extract": math.nan},
        model_size={"variables": 1234, "constraints": 987},
        tables={
            "districts": districts,
            "supply": supply,
            "wells": wells,
            "dispatch": dispatch,
            "well_steps": well_steps,
            "edge": edge,
            "empty": pd.DataFrame(),
            "empty_typed": pd.DataFrame(
                {"step": pd.Series([], dtype="int64"), "x_kw": pd.Series([], dtype="float64"),
                 "id": pd.Series([], dtype="str")}
            ),
        },
        extras={"cautions": ["screening-level"], "interference": [{"pair": ["W1", "W2"], "delta_k": 0.4}]},
    )


INPUTS = {
    "scenario.toml": b'[run]\nname = "Example city"\n',
    "districts.geojson": b'{"type": "FeatureCollection", "features": []}\n',
    "technologies.csv": "technology_id,name\ngw_hp,Wärmepumpe\n".encode(),
    "hourly.csv": b"hour,outdoor_temp_c\n0,-3.5\n1,-4.0\n",
}


def assert_same_result(actual: RunResult, expected: RunResult) -> None:
    """Tables equal under assert_frame_equal (exact); metadata equal (NaN/inf compared as IEEE 754 values)."""
    assert list(actual.tables) == list(expected.tables)
    for name, frame in expected.tables.items():
        assert_frame_equal(actual.tables[name], frame, check_exact=True, check_column_type=True,
                           check_index_type=True, check_categorical=True, check_freq=False)
    for field in ("status", "message", "objective", "cost_case", "input_hash", "scenario_name"):
        assert getattr(actual, field) == getattr(expected, field), field
    for field in ("settings", "timings_s", "model_size", "extras"):
        assert_same_value(getattr(actual, field), getattr(expected, field), field)


def assert_same_value(actual, expected, where: str) -> None:
    """Equal JSON-like values, numbers compared as IEEE 754 values: NaN matches only NaN, +-inf and the sign of
    zero must agree, and a number keeps its kind (int or float)."""
    if isinstance(expected, dict):
        assert isinstance(actual, dict) and list(actual) == list(expected), where
        for key in expected:
            assert_same_value(actual[key], expected[key], f"{where}.{key}")
    elif isinstance(expected, (list, tuple)):
        assert isinstance(actual, list) and len(actual) == len(expected), where
        for k, (a, e) in enumerate(zip(actual, expected)):
            assert_same_value(a, e, f"{where}[{k}]")
    elif isinstance(expected, float):
        assert type(actual) is float, (where, actual)
        assert (math.isnan(actual) and math.isnan(expected)) or (
            actual == expected and math.copysign(1.0, actual) == math.copysign(1.0, expected)), (where, actual)
    else:
        assert type(actual) is type(expected) and actual == expected, (where, actual, expected)


@pytest.fixture
def store_path(tmp_path) -> Path:
    return tmp_path / "runs.sqlite"


# ====================================================================================== save and load
def test_every_table_and_field_survives_close_and_reopen(store_path):
    """Save, close, open a new connection, load: identical tables and metadata.

    Reference: pandas.testing.assert_frame_equal with check_exact=True (dtypes, index and column types
    included); IEEE 754 for NaN/inf and the sign of zero.
    """
    original = synthetic_result(1)
    with ScenarioStore(store_path) as store:
        run_id = store.save_run(original, "base case", note="first try", inputs=INPUTS)
    with ScenarioStore(store_path) as store:
        loaded = store.load_run(run_id)
        assert store.load_inputs(run_id) == INPUTS
    assert_same_result(loaded, original)
    value = loaded.tables["edge"]["value"].to_numpy()
    assert math.isnan(value[0]) and value[1] == math.inf and value[2] == -math.inf
    assert math.copysign(1.0, value[3]) == -1.0
    labels = loaded.tables["edge"]["label"]
    assert pd.isna(labels.iloc[1]) and labels.iloc[2] == "" and labels.iloc[3] == "NaN"
    assert loaded.total_cost_eur_per_a == original.total_cost_eur_per_a


def test_codec_keeps_index_and_column_labels():
    """Row indexes (named, text, multi-level) and non-text column labels come back (assert_frame_equal)."""
    frames = [
        pd.DataFrame({"v": [1.0, 2.0]}, index=pd.Index(["p", "q"], name="district_id")),
        pd.DataFrame({"v": [1, 2]}, index=pd.MultiIndex.from_arrays([["a", "b"], [1, 2]], names=["x", "y"])),
        pd.DataFrame([[1, 2]], columns=[10, 20]),
        pd.DataFrame(columns=["a", "b"]),
        pd.DataFrame({"t": pd.date_range("2040-03-30", periods=3, freq="h", tz="Europe/Berlin")}),
    ]
    for frame in frames:
        assert_frame_equal(decode_table(encode_table(frame)), frame, check_exact=True, check_column_type=True,
                           check_index_type=True)


@settings(max_examples=60, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(
    hpd.data_frames(
        columns=[
            hpd.column("flag", dtype=bool),
            hpd.column("count", dtype=np.int64),
            hpd.column("value", elements=st.floats(allow_nan=True, allow_infinity=True), dtype=float),
            hpd.column("text", elements=st.one_of(st.none(), st.text()), dtype=object),
        ],
        index=hpd.range_indexes(max_size=20),
    )
)
def test_codec_round_trip_on_generated_frames(frame):
    """Property: decode(encode(frame)) equals frame for frames generated by hypothesis.extra.pandas.

    Reference: hypothesis (generator) and pandas.testing.assert_frame_equal (judge).
    """
    assert_frame_equal(decode_table(encode_table(frame)), frame, check_exact=True)


def test_codec_refuses_values_it_cannot_keep():
    """Complex numbers and arbitrary objects give a StoreError naming the column, not a silent loss."""
    with pytest.raises(StoreError, match="column 'z'"):
        encode_table(pd.DataFrame({"z": [1 + 2j]}))
    with pytest.raises(StoreError, match="column 'o'"):
        encode_table(pd.DataFrame({"o": np.array([object()], dtype=object)}))


def test_list_runs_has_documented_columns_newest_first(store_path):
    """list_runs gives one row per run with the documented columns and city totals (common practice)."""
    with ScenarioStore(store_path) as store:
        assert list(store.list_runs().columns) == list(LIST_COLUMNS)
        assert store.list_runs().empty
        results = [synthetic_result(seed) for seed in range(3)]
        ids = [store.save_run(r, f"run {k}", tags=["sweep", "co2"], sweep_id=7 if k else None)
               for k, r in enumerate(results)]
        runs = store.list_runs()
    assert list(runs.columns) == list(LIST_COLUMNS)
    assert runs["run_id"].tolist() == ids[::-1]
    first = runs.set_index("run_id").loc[ids[0]]
    assert first["name"] == "run 0"
    assert first["total_cost_eur_per_a"] == pytest.approx(results[0].tables["districts"]["total_cost_eur_per_a"].sum())
    assert first["co2_t_per_a"] == pytest.approx(results[0].tables["districts"]["co2_t_per_a"].sum())
    assert first["tags"] == "sweep, co2"
    assert pd.isna(first["sweep_id"])
    assert runs.set_index("run_id").loc[ids[1], "sweep_id"] == "7"
    assert runs["run_id"].dtype == np.int64 and runs["total_cost_eur_per_a"].dtype == np.float64


def test_rename_note_and_tags(store_path):
    """rename_run, set_note and set_tags change only the chosen run (common practice)."""
    with ScenarioStore(store_path) as store:
        a = store.save_run(synthetic_result(0), "a")
        b = store.save_run(synthetic_result(1), "b", note="keep")
        store.rename_run(a, "renamed")
        store.set_note(a, "new note")
        store.set_tags(a, "final")
        rows = store.list_runs().set_index("run_id")
    assert rows.loc[a, "name"] == "renamed" and rows.loc[a, "note"] == "new note" and rows.loc[a, "tags"] == "final"
    assert rows.loc[b, "name"] == "b" and rows.loc[b, "note"] == "keep" and rows.loc[b, "tags"] == ""


def test_delete_removes_only_the_chosen_run(store_path):
    """Deleting one run removes its tables and inputs (ON DELETE CASCADE) and nothing of the others.

    Reference: SQLite foreign keys, https://sqlite.org/foreignkeys.html (cascade); integrity by
    PRAGMA foreign_key_check.
    """
    results = {k: synthetic_result(k) for k in range(3)}
    with ScenarioStore(store_path) as store:
        ids = {k: store.save_run(r, f"run {k}", inputs=INPUTS) for k, r in results.items()}
        store.delete_run(ids[1])
        assert sorted(store.list_runs()["run_id"]) == sorted([ids[0], ids[2]])
        for k in (0, 2):
            assert_same_result(store.load_run(ids[k]), results[k])
            assert store.load_inputs(ids[k]) == INPUTS
        with pytest.raises(StoreError, match="no run"):
            store.load_run(ids[1])
    conn = sqlite3.connect(store_path)
    assert conn.execute("SELECT count(*) FROM run_tables WHERE run_id = ?", (ids[1],)).fetchone()[0] == 0
    assert conn.execute("SELECT count(*) FROM run_inputs WHERE run_id = ?", (ids[1],)).fetchone()[0] == 0
    assert conn.execute("PRAGMA foreign_key_check").fetchall() == []
    conn.close()


def test_unknown_run_ids_give_store_errors(store_path):
    """Every call with an unknown run id raises StoreError with a plain message (common practice)."""
    with ScenarioStore(store_path) as store:
        store.save_run(synthetic_result(0), "only")
        for call in (store.load_run, store.load_inputs, store.delete_run, store.run_info,
                     lambda i: store.rename_run(i, "x"), lambda i: store.set_note(i, "x"),
                     lambda i: store.set_tags(i, "x"), lambda i: store.materialise_inputs(i, store_path.parent)):
            with pytest.raises(StoreError, match="no run 999"):
                call(999)
        with pytest.raises(StoreError, match="whole number"):
            store.load_run("1; DROP TABLE runs")
    with pytest.raises(StoreError, match="closed"):
        store.list_runs()


def test_names_reach_sql_only_as_bound_parameters(store_path):
    """A name that is also SQL is stored verbatim and does nothing (OWASP, SQL injection prevention)."""
    hostile = "x'); DROP TABLE runs; --"
    with ScenarioStore(store_path) as store:
        run_id = store.save_run(synthetic_result(0), hostile, note="'; DELETE FROM runs; --")
        store.rename_run(run_id, hostile + "2")
        rows = store.list_runs()
    assert rows["name"].tolist() == [hostile + "2"]
    assert rows["note"].tolist() == ["'; DELETE FROM runs; --"]


def test_find_by_hash_returns_newest_match(store_path):
    """find_by_hash gives the newest run with that input hash, or None (common practice)."""
    with ScenarioStore(store_path) as store:
        first = store.save_run(synthetic_result(5), "first")
        second = store.save_run(synthetic_result(5), "second")
        store.save_run(synthetic_result(6), "other")
        assert store.find_by_hash(f"{5:064x}") == second != first
        assert store.find_by_hash("f" * 64) is None
        assert store.find_by_hash("") is None


def test_pragmas_of_a_new_store(store_path):
    """A new store is in WAL mode, waits for busy locks, has foreign keys on, the schema version and app id.

    Reference: https://sqlite.org/pragma.html (journal_mode, foreign_keys, user_version, application_id).
    """
    with ScenarioStore(store_path) as store:
        conn = store._connection()
        assert conn.execute("PRAGMA journal_mode").fetchone()[0] == "wal"
        assert conn.execute("PRAGMA foreign_keys").fetchone()[0] == 1
        assert conn.execute("PRAGMA busy_timeout").fetchone()[0] == 60_000  # [ms], the default timeout_s=60
    conn = sqlite3.connect(store_path)
    assert conn.execute("PRAGMA user_version").fetchone()[0] == SCHEMA_VERSION == 2
    assert conn.execute("PRAGMA application_id").fetchone()[0] == APPLICATION_ID == int.from_bytes(b"HMST", "big")
    conn.close()


# ====================================================================================== inputs
def test_inputs_are_whitelisted_and_materialised(tmp_path, store_path):
    """Only scenario file names are read or written; a folder that already holds a scenario is refused.

    Reference: docs/input_format.md (the list of scenario files).
    """
    folder = tmp_path / "city"
    folder.mkdir()
    for name, content in INPUTS.items():
        (folder / name).write_bytes(content)
    (folder / "notes.txt").write_text("not a scenario file")
    (folder / "wells.csv").mkdir()  # a folder with a scenario name is not a file
    files = read_scenario_files(folder)
    assert files == INPUTS
    with ScenarioStore(store_path) as store:
        run_id = store.save_run(synthetic_result(0), "with inputs", inputs=files)
        out = store.materialise_inputs(run_id, tmp_path / "restored")
        assert sorted(p.name for p in out.iterdir()) == sorted(INPUTS)
        assert read_scenario_files(out) == INPUTS
        with pytest.raises(StoreError, match="already holds scenario files"):
            store.materialise_inputs(run_id, out)
        with pytest.raises(StoreError, match="not a scenario file name"):
            store.save_run(synthetic_result(0), "bad", inputs={"../evil.csv": b"x"})
        with pytest.raises(StoreError, match="not UTF-8"):
            store.save_run(synthetic_result(0), "bad", inputs={"hourly.csv": "hour\n0,é\n".encode("latin-1")})
        assert len(store.list_runs()) == 1
    with pytest.raises(StoreError, match="does not exist"):
        read_scenario_files(tmp_path / "missing")
    assert set(SCENARIO_FILES) >= set(INPUTS)


# ====================================================================================== where the file lives
def test_default_path_follows_environment(monkeypatch, tmp_path):
    """$HEATMOSAIC_STORE wins; otherwise $XDG_DATA_HOME, else ~/.local/share (XDG Base Directory Spec 0.8)."""
    monkeypatch.setattr(sys, "platform", "linux")
    monkeypatch.setenv("XDG_DATA_HOME", str(tmp_path / "xdg"))
    monkeypatch.setenv("HEATMOSAIC_STORE", str(tmp_path / "custom" / "my.sqlite"))
    assert default_store_path() == tmp_path / "custom" / "my.sqlite"  # wins over XDG_DATA_HOME, set as well
    monkeypatch.delenv("HEATMOSAIC_STORE")
    monkeypatch.setenv("XDG_DATA_HOME", str(tmp_path / "xdg"))
    assert default_store_path() == tmp_path / "xdg" / "heatmosaic" / "scenarios.sqlite"
    monkeypatch.delenv("XDG_DATA_HOME")
    monkeypatch.setenv("HOME", str(tmp_path / "home"))
    assert default_store_path() == tmp_path / "home" / ".local" / "share" / "heatmosaic" / "scenarios.sqlite"
    store = ScenarioStore()
    assert store.path.is_file() and store.path.parent.name == "heatmosaic"
    store.close()


# ====================================================================================== foreign files
def test_a_file_that_is_not_a_store_is_refused_and_left_unchanged(tmp_path):
    """A text file and another program's SQLite file give StoreError and keep their bytes.

    Reference: SQLite file format, https://sqlite.org/fileformat.html (header string, application id).
    """
    text = tmp_path / "notes.sqlite"
    text.write_text("this is not a database\n" * 50)
    before = text.read_bytes()
    with pytest.raises(StoreError, match="not an SQLite database"):
        ScenarioStore(text)
    assert text.read_bytes() == before

    other = tmp_path / "other.sqlite"
    conn = sqlite3.connect(other)
    conn.execute("CREATE TABLE customers (id INTEGER)")
    conn.commit()
    conn.close()
    before = other.read_bytes()
    with pytest.raises(StoreError, match="another program"):
        ScenarioStore(other)
    assert other.read_bytes() == before


def test_a_store_from_a_newer_release_is_refused(store_path):
    """A schema version above this release's is refused rather than guessed at (common practice)."""
    ScenarioStore(store_path).close()
    conn = sqlite3.connect(store_path)
    conn.execute("PRAGMA user_version = 99")
    conn.commit()
    conn.close()
    with pytest.raises(StoreError, match="newer heatmosaic"):
        ScenarioStore(store_path)


# ====================================================================================== migration
V1_SCHEMA = """
PRAGMA application_id = 1213027156;
CREATE TABLE runs (
    run_id INTEGER PRIMARY KEY AUTOINCREMENT, name TEXT NOT NULL, note TEXT NOT NULL DEFAULT '',
    created_utc TEXT NOT NULL, scenario_name TEXT NOT NULL DEFAULT '', cost_case TEXT NOT NULL DEFAULT '',
    objective TEXT NOT NULL DEFAULT '', status TEXT NOT NULL DEFAULT '', message TEXT NOT NULL DEFAULT '',
    input_hash TEXT NOT NULL DEFAULT '', total_cost_eur_per_a REAL, co2_t_per_a REAL,
    settings_json TEXT NOT NULL DEFAULT '{}', timings_json TEXT NOT NULL DEFAULT '{}',
    model_size_json TEXT NOT NULL DEFAULT '{}', extras_json TEXT NOT NULL DEFAULT '{}');
CREATE TABLE run_tables (
    run_id INTEGER NOT NULL REFERENCES runs(run_id) ON DELETE CASCADE, position INTEGER NOT NULL,
    name TEXT NOT NULL, payload TEXT NOT NULL, PRIMARY KEY (run_id, name));
CREATE TABLE run_inputs (
    run_id INTEGER NOT NULL REFERENCES runs(run_id) ON DELETE CASCADE, filename TEXT NOT NULL,
    content BLOB NOT NULL, PRIMARY KEY (run_id, filename));
CREATE INDEX runs_by_input_hash ON runs(input_hash);
PRAGMA user_version = 1;
"""


def test_a_version_1_file_is_migrated_in_place(store_path):
    """A v1 store written by hand (without tags and sweep_id) opens, is migrated to v2 and keeps its run.

    Reference: SQLite ALTER TABLE ADD COLUMN, https://sqlite.org/lang_altertable.html.
    """
    original = synthetic_result(3)
    conn = sqlite3.connect(store_path)
    conn.executescript(V1_SCHEMA)
    conn.execute(
        "INSERT INTO runs (run_id, name, note, created_utc, scenario_name, cost_case, objective, status, message,"
        " input_hash, total_cost_eur_per_a, co2_t_per_a, settings_json, timings_json, model_size_json,"
        " extras_json) VALUES (41, 'old run', 'from v1', '2025-01-02T03:04:05+00:00', ?, ?, ?, ?, ?, ?, ?, ?,"
        " ?, ?, ?, ?)",
        (original.scenario_name, original.cost_case, original.objective, original.status, original.message,
         original.input_hash, original.total_cost_eur_per_a, original.co2_t_per_a, json.dumps(original.settings),
         json.dumps(original.timings_s), json.dumps(original.model_size), json.dumps(original.extras)),
    )
    for position, (name, frame) in enumerate(original.tables.items()):
        conn.execute("INSERT INTO run_tables VALUES (41, ?, ?, ?)", (position, name, encode_table(frame)))
    conn.execute("INSERT INTO run_inputs VALUES (41, 'scenario.toml', ?)", (INPUTS["scenario.toml"],))
    conn.commit()
    conn.close()

    with ScenarioStore(store_path) as store:
        assert store.migrated_from == 1
        assert_same_result(store.load_run(41), original)
        assert store.load_inputs(41) == {"scenario.toml": INPUTS["scenario.toml"]}
        row = store.list_runs().iloc[0]
        assert row["run_id"] == 41 and row["note"] == "from v1" and row["tags"] == "" and pd.isna(row["sweep_id"])
        new_id = store.save_run(synthetic_result(4), "after migration", tags="t", sweep_id="s1")
        assert new_id == 42
    conn = sqlite3.connect(store_path)
    assert conn.execute("PRAGMA user_version").fetchone()[0] == 2
    columns = [r[1] for r in conn.execute("PRAGMA table_info(runs)")]
    assert columns[-2:] == ["tags", "sweep_id"]
    assert conn.execute("PRAGMA integrity_check").fetchone()[0] == "ok"
    conn.close()
    with ScenarioStore(store_path) as store:
        assert store.migrated_from == 2


# ====================================================================================== concurrency
def _save_many(path: str, worker: int, count: int, start) -> None:
    """Process or thread body: wait for the start signal, then save ``count`` runs."""
    start.wait(60)
    with ScenarioStore(path) as store:
        for k in range(count):
            store.save_run(synthetic_result(100 * worker + k, n_steps=48), f"worker {worker} run {k}",
                           inputs=INPUTS, sweep_id=worker)


def test_two_threads_saving_at_once_both_succeed(store_path):
    """Two sessions (two connections in two threads) saving together: all 20 runs arrive.

    Reference: https://sqlite.org/wal.html (one writer at a time; others wait for the busy timeout).
    """
    ScenarioStore(store_path).close()
    start = threading.Barrier(2)
    errors = []

    def body(worker):
        try:
            _save_many(str(store_path), worker, 10, start)
        except Exception as exc:  # collected and asserted below
            errors.append(exc)

    threads = [threading.Thread(target=body, args=(w,)) for w in (1, 2)]
    for t in threads:
        t.start()
    for t in threads:
        t.join(120)
    assert errors == []
    with ScenarioStore(store_path) as store:
        runs = store.list_runs()
        assert len(runs) == 20
        assert sorted(runs["sweep_id"].value_counts().tolist()) == [10, 10]


@pytest.mark.slow
def test_two_processes_saving_at_once_both_succeed(store_path):
    """Two processes × 10 saves into the same file at the same time: all 20 present, database sound.

    Reference: https://sqlite.org/wal.html and https://sqlite.org/pragma.html#pragma_integrity_check.
    """
    ScenarioStore(store_path).close()
    context = multiprocessing.get_context("spawn")
    start = context.Event()
    workers = [context.Process(target=_save_many, args=(str(store_path), w, 10, start)) for w in (1, 2)]
    for p in workers:
        p.start()
    start.set()
    for p in workers:
        p.join(180)
    assert [p.exitcode for p in workers] == [0, 0]
    with ScenarioStore(store_path) as store:
        runs = store.list_runs()
        assert len(runs) == 20
        assert sorted(runs["sweep_id"].value_counts().tolist()) == [10, 10]
        reference = synthetic_result(100 * 2 + 9, n_steps=48)
        last = runs.loc[runs["name"] == "worker 2 run 9", "run_id"].iloc[0]
        assert_same_result(store.load_run(int(last)), reference)
    conn = sqlite3.connect(store_path)
    assert conn.execute("PRAGMA integrity_check").fetchone()[0] == "ok"
    conn.close()


KILLED_SAVE = textwrap.dedent(
    """
    import sys, time
    import pandas as pd
    from engine.model.results import RunResult
    from engine.storage.store import ScenarioStore

    store = ScenarioStore(sys.argv[1])

    def hook(stage):
        if stage.startswith("table:"):
            print("inside the transaction", flush=True)
            time.sleep(120)

    store._fault_hook = hook
    result = RunResult(status="optimal", message="", tables={"t": pd.DataFrame({"x": [1.0, 2.0]})})
    store.save_run(result, "never committed", inputs={"scenario.toml": b"x"})
    print("saved", flush=True)
    """
)


def test_a_save_killed_part_way_leaves_earlier_runs_intact(store_path):
    """SIGKILL in the middle of a save: earlier runs intact, no half run, integrity_check passes.

    Reference: https://sqlite.org/atomiccommit.html (a transaction interrupted by a crash is rolled back);
    https://sqlite.org/pragma.html#pragma_integrity_check.
    """
    earlier = {k: synthetic_result(k) for k in range(2)}
    with ScenarioStore(store_path) as store:
        ids = {k: store.save_run(r, f"earlier {k}", inputs=INPUTS) for k, r in earlier.items()}
    env = dict(os.environ, PYTHONPATH=os.pathsep.join([str(REPO), os.environ.get("PYTHONPATH", "")]))
    child = subprocess.Popen([sys.executable, "-c", KILLED_SAVE, str(store_path)], stdout=subprocess.PIPE,
                             stderr=subprocess.PIPE, env=env)
    try:
        line = child.stdout.readline().decode()
        assert line.strip() == "inside the transaction", child.stderr.read().decode()
        # While the writer holds its transaction, another session still reads the committed state (WAL).
        with ScenarioStore(store_path) as reader:
            assert sorted(reader.list_runs()["run_id"]) == sorted(ids.values())
        child.send_signal(signal.SIGKILL)
        assert child.wait(30) == -signal.SIGKILL
    finally:
        if child.poll() is None:
            child.kill()
            child.wait(30)
        child.stdout.close()
        child.stderr.close()
    with ScenarioStore(store_path) as store:
        runs = store.list_runs()
        assert sorted(runs["run_id"]) == sorted(ids.values())
        assert "never committed" not in runs["name"].tolist()
        for k, r in earlier.items():
            assert_same_result(store.load_run(ids[k]), r)
        conn = store._connection()
        assert conn.execute("PRAGMA integrity_check").fetchone()[0] == "ok"
        assert conn.execute("PRAGMA foreign_key_check").fetchall() == []
        assert conn.execute("SELECT count(*) FROM run_tables WHERE run_id NOT IN (SELECT run_id FROM runs)"
                            ).fetchone()[0] == 0
        new_id = store.save_run(synthetic_result(9), "after the crash")
        assert_same_result(store.load_run(new_id), synthetic_result(9))


def test_a_failing_save_rolls_back(store_path):
    """An error raised inside the save transaction leaves no trace of the run (atomic commit)."""
    with ScenarioStore(store_path) as store:
        keep = store.save_run(synthetic_result(0), "keep")

        def explode(stage):
            if stage.startswith("input:"):
                raise RuntimeError("disk unplugged")

        store._fault_hook = explode
        with pytest.raises(RuntimeError):
            store.save_run(synthetic_result(1), "lost", inputs=INPUTS)
        store._fault_hook = None
        assert store.list_runs()["run_id"].tolist() == [keep]
        conn = store._connection()
        assert conn.execute("SELECT count(*) FROM run_tables").fetchone()[0] == len(synthetic_result(0).tables)
        assert conn.execute("SELECT count(*) FROM run_inputs").fetchone()[0] == 0


# ====================================================================================== library
def test_library_export_and_import_round_trip(tmp_path, store_path):
    """Export every run to a zip (JSON and CSV, no pickle) and import it into a new store: same runs.

    Reference: pandas.testing.assert_frame_equal; ZIP format per PKWARE APPNOTE.TXT (read by zipfile).
    """
    results = {k: synthetic_result(k) for k in range(3)}
    with ScenarioStore(store_path) as store:
        ids = [store.save_run(results[k], f"run {k}", note=f"note {k}", inputs=INPUTS if k != 1 else None,
                              tags="lib", sweep_id="s" if k else None) for k in results]
        store.delete_run(ids[0])
        library = export_library(store, tmp_path / "out" / "library.zip")
        exported = store.list_runs()
    with zipfile.ZipFile(library) as archive:
        names = archive.namelist()
        assert "library.json" in names
        assert not any(n.endswith((".pkl", ".pickle")) for n in names)
        csv_names = [n for n in names if n.endswith("/tables/districts.csv")]
        assert len(csv_names) == 2
        csv_back = pd.read_csv(archive.open(csv_names[0]))
        assert list(csv_back.columns) == list(results[1].tables["districts"].columns)

    other = tmp_path / "other.sqlite"
    with ScenarioStore(other) as target:
        existing = target.save_run(synthetic_result(8), "already there")
        new_ids = import_library(target, library)
        assert len(new_ids) == 2 and existing not in new_ids
        imported = target.list_runs().set_index("name")
        for k in (1, 2):
            run_id = int(imported.loc[f"run {k}", "run_id"])
            assert_same_result(target.load_run(run_id), results[k])
            assert target.load_inputs(run_id) == (INPUTS if k != 1 else {})
            original_row = exported.set_index("name").loc[f"run {k}"]
            for column in ("note", "created_utc", "tags", "input_hash", "cost_case"):
                assert imported.loc[f"run {k}", column] == original_row[column]


def test_import_refuses_a_tampered_library(tmp_path, store_path):
    """A library zip with a path that climbs out ('..') is refused with StoreError; nothing is imported."""
    with ScenarioStore(store_path) as store:
        store.save_run(synthetic_result(0), "a")
        library = export_library(store, tmp_path / "library.zip")
    with zipfile.ZipFile(library, "a") as archive:
        archive.writestr("runs/00001/../../evil.json", "{}")
    with ScenarioStore(tmp_path / "target.sqlite") as target:
        with pytest.raises(StoreError, match=r"\.\."):
            import_library(target, library)
        assert target.list_runs().empty
    not_a_library = tmp_path / "plain.zip"
    with zipfile.ZipFile(not_a_library, "w") as archive:
        archive.writestr("library.json", '{"format": "something else"}')
    with ScenarioStore(tmp_path / "target.sqlite") as target:
        with pytest.raises(StoreError, match="not a heatmosaic library"):
            import_library(target, not_a_library)
