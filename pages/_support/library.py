"""The library of saved runs on the pages: its table, pickers, the baseline to compare against, downloads."""

from __future__ import annotations

import io
import tempfile
import zipfile
from collections.abc import Mapping
from pathlib import Path

import pandas as pd

from engine.model.results import RunResult
from engine.outputs.labels import cost_case_label, objective_label, status_label
from engine.storage.bundle import export_bundle
from engine.storage.library import export_library, import_library
from engine.storage.store import ScenarioStore, StoreError


def library_table(store: ScenarioStore) -> pd.DataFrame:
    """The saved runs for display, newest first: run_id, name, cost case, objective, total cost [M€/a],
    CO2 [t/a], created (UTC), note, status."""
    runs = store.list_runs()
    table = pd.DataFrame(
        {
            "run_id": runs["run_id"].to_numpy(),
            "name": runs["name"].to_numpy(),
            "cost case": [cost_case_label(c) for c in runs["cost_case"]],
            "objective": [objective_label(o) for o in runs["objective"]],
            "total cost [M€/a]": runs["total_cost_eur_per_a"].to_numpy(float) / 1e6,
            "CO2 [t/a]": runs["co2_t_per_a"].to_numpy(float).round(0),
            "created (UTC)": [str(c)[:16].replace("T", " ") for c in runs["created_utc"]],
            "note": runs["note"].to_numpy(),
            "status": [status_label(v) for v in runs["status"]],
        }
    )
    return table

def run_choices(store: ScenarioStore) -> dict[int, str]:
    """run id -> a label for pickers ("name · cost case · #id"), newest first."""
    runs = store.list_runs()
    return {
        int(row.run_id): f"{row.name} · {cost_case_label(row.cost_case)} · #{int(row.run_id)}"
        for row in runs.itertuples(index=False)
    }

def unique_run_names(labels: Mapping[int, str]) -> dict[int, str]:
    """run id -> a display name unique among ``labels`` (a repeated name gets its id appended)."""
    counts: dict[str, int] = {}
    for name in labels.values():
        counts[name] = counts.get(name, 0) + 1
    return {run_id: (name if counts[name] == 1 else f"{name} (#{run_id})") for run_id, name in labels.items()}

def default_baseline(results: Mapping[int, RunResult]) -> int:
    """The run to compare against: the first saved least-cost run (objective cost, no CO2 cap), else the first
    saved run (run ids grow with saving)."""
    ids = sorted(results)
    for run_id in ids:
        result = results[run_id]
        if result.objective == "cost" and not float(result.settings.get("co2_cap_t_per_a", 0) or 0):
            return run_id
    return ids[0]

def bundle_bytes(result: RunResult, inputs: Mapping[str, bytes]) -> bytes:
    """A bundle zip (:func:`engine.storage.bundle.export_bundle`) as bytes, for a download button."""
    with tempfile.TemporaryDirectory(prefix="heatmosaic-bundle-") as folder:
        path = export_bundle(result, dict(inputs), Path(folder) / "run.zip")
        return path.read_bytes()

def library_bytes(store: ScenarioStore) -> bytes:
    """The whole library (:func:`engine.storage.library.export_library`) as zip bytes."""
    with tempfile.TemporaryDirectory(prefix="heatmosaic-library-") as folder:
        return export_library(store, Path(folder) / "library.zip").read_bytes()

def zip_purpose(data: bytes) -> str:
    """What an uploaded file is, from its zip directory only: "bundle" (one run: manifest.json and inputs/),
    "zip" (some other zip, a library perhaps) or "not a zip"."""
    try:
        with zipfile.ZipFile(io.BytesIO(bytes(data))) as archive:
            names = archive.namelist()
    except (zipfile.BadZipFile, OSError, ValueError):
        return "not a zip"
    if "manifest.json" in names and any(n.startswith("inputs/") for n in names):
        return "bundle"
    return "zip"


def import_library_bytes(store: ScenarioStore, data: bytes) -> tuple[list[int], str | None]:
    """Add the runs of an uploaded library zip; returns the new run ids and an error message (or None)."""
    with tempfile.TemporaryDirectory(prefix="heatmosaic-library-") as folder:
        path = Path(folder) / "upload.zip"
        path.write_bytes(bytes(data))
        try:
            return import_library(store, path), None
        except StoreError as exc:
            return [], str(exc)

def safe_file_name(name: str, suffix: str) -> str:
    """A download file name made of the run name (letters, digits, '-' and '_' only)."""
    stem = "".join(c if c.isalnum() or c in "-_" else "_" for c in str(name)).strip("_") or "heatmosaic"
    return f"{stem[:60]}{suffix}"


def firmness_for_report(computed: dict, picked, names: dict, results: dict) -> dict:
    """The near-optimal ranges computed on the Run results page (``hm_firmness``, keyed by (saved run id, input
    hash, slack)) that belong to the runs chosen for a report: report name -> ranges."""
    found = {}
    for (run, digest, _slack), ranges in computed.items():
        for run_id in picked:
            name = names.get(run_id)
            if run == run_id and name in results and results[name].input_hash == digest:
                found[name] = ranges
    return found
