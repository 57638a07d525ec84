"""A damaged store file: found on opening (SQLite's ``PRAGMA quick_check``), kept byte for byte, refused for reading
and writing with a message that says what to do, and never taken for an empty store or a missing run.

The damage is made as it happens on disks: bytes of table pages overwritten after the 100-byte database header
(the SQLite file format, https://www.sqlite.org/fileformat2.html, section 1.3), and a file cut short.
"""

from __future__ import annotations

import hashlib
import sys
import sqlite3
from pathlib import Path

import pytest
from streamlit.testing.v1 import AppTest

from engine.storage.errors import StoreDamaged, StoreError
from engine.storage.library import export_library
from engine.storage.store import ScenarioStore
import numpy as np
import pandas as pd

from engine.model.results import RunResult

ROOT = Path(__file__).resolve().parents[1]
PAGE_SIZE = 4096  # SQLite's default page size


def synthetic_result(seed: int = 0, n_rows: int = 24) -> RunResult:
    """A run with one table of ``n_rows`` random rows (enough to fill several store pages)."""
    rng = np.random.default_rng(seed)
    table = pd.DataFrame({"step": np.arange(n_rows), "heat_kw": rng.random(n_rows),
                          "district_id": [f"d{k % 7}" for k in range(n_rows)]})
    return RunResult(status="optimal", message="ok", tables={"dispatch": table})


def _store_with_runs(path: Path, n: int = 3) -> None:
    with ScenarioStore(path) as store:
        for k in range(n):
            store.save_run(synthetic_result(k, 200), f"run {k}")
    conn = sqlite3.connect(path)
    conn.execute("PRAGMA wal_checkpoint(TRUNCATE)")  # every page in the main file
    conn.close()


def _overwrite_pages(path: Path) -> None:
    data = bytearray(path.read_bytes())
    assert data[:16] == b"SQLite format 3\x00"
    for offset in range(2 * PAGE_SIZE + 100, min(len(data), 6 * PAGE_SIZE)):
        data[offset] = 0xA5
    path.write_bytes(bytes(data))


def _truncate(path: Path) -> None:
    data = path.read_bytes()
    path.write_bytes(data[: len(data) // 2])


def _digest(path: Path) -> str:
    return hashlib.sha256(path.read_bytes()).hexdigest()


@pytest.fixture(params=["pages", "truncated"])
def damaged(request, tmp_path) -> Path:
    path = tmp_path / "scenarios.sqlite"
    _store_with_runs(path)
    (_overwrite_pages if request.param == "pages" else _truncate)(path)
    return path


def test_damage_is_found_on_opening_and_kept(damaged):
    before = _digest(damaged)
    store = ScenarioStore(damaged)
    assert store.damage is not None
    assert "damaged" in store.damage and "copy" in store.damage and str(damaged) in store.damage
    store.close()
    assert _digest(damaged) == before


def test_every_operation_refuses_a_damaged_store(damaged, tmp_path):
    before = _digest(damaged)
    with ScenarioStore(damaged) as store:
        operations = {
            "list": store.list_runs,
            "load": lambda: store.load_run(1),
            "info": lambda: store.run_info(1),
            "inputs": lambda: store.load_inputs(1),
            "save": lambda: store.save_run(synthetic_result(), "new"),
            "rename": lambda: store.rename_run(1, "other"),
            "delete": lambda: store.delete_run(1),
            "export": lambda: export_library(store, tmp_path / "lib.zip"),
        }
        for what, operation in operations.items():
            with pytest.raises(StoreDamaged) as caught:
                operation()
            text = str(caught.value)
            assert "damaged" in text, what
            assert "there is no run" not in text, what
    assert _digest(damaged) == before
    assert not (tmp_path / "lib.zip").exists()


def test_intact_store_opens_without_damage(tmp_path):
    path = tmp_path / "s.sqlite"
    _store_with_runs(path, 1)
    with ScenarioStore(path) as store:
        assert store.damage is None
        assert len(store.list_runs()) == 1


@pytest.mark.parametrize("page", ["app.py", "pages/2_Run_results.py", "pages/3_Compare_runs.py",
                                  "pages/4_Share.py", "pages/5_Groundwater.py"])
def test_pages_say_the_store_is_damaged(damaged, monkeypatch, page):
    monkeypatch.setenv("HEATMOSAIC_STORE", str(damaged))
    # AppTest runs the page as __main__; put the real one back afterwards (spawned processes of later tests
    # re-import __main__)
    monkeypatch.setitem(sys.modules, "__main__", sys.modules["__main__"])
    at = AppTest.from_file(str(ROOT / page), default_timeout=60).run()
    assert not at.exception, at.exception
    errors = " ".join(str(e.value) for e in at.error)
    assert "damaged" in errors
