"""Hostile numbers and types in imported JSON, and zip sizes that lie.

Every field of a library's library.json and run.json, a bundle's manifest.json (table descriptions included) and
a table payload is checked before use; a refusal is the module's own error (StoreError, BundleError), never an
OverflowError or TypeError. Python's json reads ``1e400`` as infinity (a documented behaviour of the json module:
"Infinity" and overflowing literals become float('inf')). Zip layout: PKWARE APPNOTE.TXT sections 4.3.12-4.3.16.
"""

from __future__ import annotations

import io
import json
import struct
import zipfile
from pathlib import Path

import numpy as np
import pandas as pd
import pytest

from engine.model.results import RunResult
from engine.storage.bundle import BundleError, export_bundle, read_bundle
from engine.storage.errors import StoreError
from engine.storage.library import export_library, import_library
from engine.storage.safezip import CheckedZip, ZipRefused
from engine.storage.store import ScenarioStore
from engine.storage.tablecodec import decode_table, encode_table


def small_result() -> RunResult:
    table = pd.DataFrame({"step": np.arange(5), "heat_kw": np.linspace(0, 1, 5), "district_id": list("abcde")})
    return RunResult(status="optimal", message="ok", settings={"typical_days": 4, "objective": "cost"},
                     tables={"dispatch": table})


def _rewrite_zip(source: Path, target: Path, change) -> Path:
    with zipfile.ZipFile(source) as archive:
        entries = {name: archive.read(name) for name in archive.namelist()}
    change(entries)
    with zipfile.ZipFile(target, "w") as archive:
        for name, data in entries.items():
            archive.writestr(name, data)
    return target


def _edit_json(entries: dict, name: str, edit) -> None:
    doc = json.loads(entries[name])
    edit(doc)
    entries[name] = json.dumps(doc).encode()


def _raw(entries: dict, name: str, old: str, new: str) -> None:
    text = entries[name].decode()
    assert old in text
    entries[name] = text.replace(old, new, 1).encode()


# ====================================================================================== library
@pytest.fixture
def library(tmp_path) -> Path:
    with ScenarioStore(tmp_path / "a.sqlite") as store:
        store.save_run(small_result(), "first")
        return export_library(store, tmp_path / "lib.zip")


RUN = "runs/00001/run.json"
TABLE = "runs/00001/tables/dispatch.json"


@pytest.mark.parametrize("change", [
    lambda e: _raw(e, "library.json", '"format_version": 1', '"format_version": 1e400'),
    lambda e: _raw(e, "library.json", '"format_version": 1', '"format_version": "1"'),
    lambda e: _edit_json(e, "library.json", lambda d: d.update(runs={"folder": "runs/00001"})),
    lambda e: _edit_json(e, RUN, lambda d: d["settings"].update(typical_days=[1, 2])),
    lambda e: _edit_json(e, RUN, lambda d: d["settings"].update(typical_days="12")),
    lambda e: _raw(e, RUN, '"typical_days": 4', '"typical_days": 1e400'),
    lambda e: _edit_json(e, RUN, lambda d: d.update(settings=[1, 2])),
    lambda e: _edit_json(e, RUN, lambda d: d.update(name=["a"])),
    lambda e: _edit_json(e, RUN, lambda d: d.update(name="x" * 100_000)),
    lambda e: _edit_json(e, RUN, lambda d: d.update(sweep_id=10**400)),
    lambda e: _edit_json(e, RUN, lambda d: d.update(tables="dispatch")),
    lambda e: _edit_json(e, TABLE, lambda d: d.update(n_rows=10**12)),
    lambda e: _edit_json(e, TABLE, lambda d: d.update(n_rows="5")),
    lambda e: _raw(e, TABLE, '"n_rows":5', '"n_rows":1e400'),
    lambda e: _edit_json(e, TABLE, lambda d: d.update(n_rows=10**12, data=[], columns={"kind": "range", "start": 0,
                                                      "stop": 0, "step": 1, "name": ["none"]},
                                                      index={"kind": "range", "start": 0, "stop": 10**12, "step": 1,
                                                             "name": ["none"]})),
])
def test_hostile_library_is_refused_with_store_error(library, tmp_path, change):
    hostile = _rewrite_zip(library, tmp_path / "hostile.zip", change)
    with ScenarioStore(tmp_path / "b.sqlite") as store:
        with pytest.raises(StoreError):
            import_library(store, hostile)
        assert store.list_runs().empty


def test_codec_refuses_claimed_rows_without_data():
    payload = json.loads(encode_table(pd.DataFrame(index=pd.RangeIndex(0))))
    payload.update(n_rows=10**12, index={"kind": "range", "start": 0, "stop": 10**12, "step": 1, "name": ["none"]})
    with pytest.raises(StoreError):
        decode_table(json.dumps(payload))


# ====================================================================================== bundle
@pytest.fixture
def bundle(tmp_path) -> Path:
    return export_bundle(small_result(), {}, tmp_path / "b.zip")


@pytest.mark.parametrize("change", [
    lambda e: _raw(e, "manifest.json", '"rows": 5', '"rows": 1e400'),
    lambda e: _raw(e, "manifest.json", '"rows": 5', '"rows": 1000000000000'),
    lambda e: _raw(e, "manifest.json", '"rows": 5', '"rows": "5"'),
    lambda e: _edit_json(e, "manifest.json", lambda d: d["settings"].update(typical_days=[4])),
    lambda e: _edit_json(e, "manifest.json", lambda d: d.update(settings=["cost"])),
    lambda e: _edit_json(e, "manifest.json", lambda d: d["settings"].update(objective={"a": 1})),
    lambda e: _edit_json(e, "manifest.json", lambda d: d.update(status=12)),
    lambda e: _edit_json(e, "manifest.json", lambda d: d.update(scenario_name="n" * 1_000_000)),
    lambda e: _edit_json(e, "manifest.json", lambda d: d["tables"]["dispatch"]["columns"][2].update(missing=[10**30])),
    lambda e: _edit_json(e, "manifest.json", lambda d: d["tables"]["dispatch"].update(columns="step")),
    lambda e: _raw(e, "manifest.json", '"format_version": 1', '"format_version": 1e400'),
    lambda e: _edit_json(e, "manifest.json", lambda d: d["summary"].update(total_cost_eur_per_a="cheap")),
])
def test_hostile_bundle_manifest_is_refused_with_bundle_error(bundle, tmp_path, change):
    hostile = _rewrite_zip(bundle, tmp_path / "hostile.zip", change)
    with pytest.raises(BundleError):
        read_bundle(hostile, tmp_path / "opened")
    assert not any((tmp_path / "opened").iterdir())


def test_edited_summary_is_refused(bundle, tmp_path):
    """Every file of a bundle is checked against the manifest, results/summary.json too."""
    def edit(entries):
        _edit_json(entries, "results/summary.json", lambda d: d.update(status="optimal", message="edited"))

    hostile = _rewrite_zip(bundle, tmp_path / "edited.zip", edit)
    with pytest.raises(BundleError, match="summary.json"):
        read_bundle(hostile, tmp_path / "opened")
    contents = read_bundle(bundle, tmp_path / "good")
    assert contents.summary["status"] == "optimal"


# ====================================================================================== sizes that lie
def _lying_zip(n: int) -> bytes:
    """A zip of ``n`` empty entries whose end record(s) claim one entry."""
    buffer = io.BytesIO()
    with zipfile.ZipFile(buffer, "w") as archive:
        for k in range(n):
            archive.writestr(f"inputs/x{k}", b"")
    data = bytearray(buffer.getvalue())
    end = data.rfind(b"PK\x05\x06")
    data[end + 8 : end + 12] = struct.pack("<HH", 1, 1)  # APPNOTE 4.3.16: entries on this disk, entries in total
    zip64 = data.rfind(b"PK\x06\x06")
    if zip64 >= 0:
        data[zip64 + 24 : zip64 + 40] = struct.pack("<QQ", 1, 1)  # APPNOTE 4.3.14
    return bytes(data)


@pytest.mark.parametrize("n", [300, 70_000])
def test_entry_count_comes_from_the_directory(n):
    data = _lying_zip(n)
    with pytest.raises(ZipRefused, match="entries"):
        CheckedZip(data, lambda name: True)
