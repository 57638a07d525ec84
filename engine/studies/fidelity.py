"""How faithful typical days are: the same scenario solved at a few resolutions against the full hourly year.

Typical days (k-medoids on daily profiles, :mod:`engine.physics.timeseries`) shrink the model by an order of magnitude;
:func:`typical_day_fidelity` measures what that costs in accuracy for one set of inputs: total cost, CO2 and the
capacity of each technology at 4, 8, 12 and 24 typical days, each with its relative error against the full year.

The full year is expensive, so the table is kept in a small JSON cache next to the scenario store, keyed on the
inputs' hash (:func:`cached_fidelity`); the results page then states the error of the resolution a run used without
solving the year again. The errors hold for the inputs they were measured on; other inputs, other errors.
"""

from __future__ import annotations

import dataclasses
import json
import math
import os
import tempfile
import time
from datetime import datetime, timezone
from pathlib import Path

import pandas as pd

from engine.scenario.inputs import Scenario, default_cost_case, input_hash
from engine.model.results import RunResult
from engine.model.solve import run_settings, solve_scenario
from engine.model.solvers import DIRECT
from engine.progress import Cancel, FidelityCancelled, Progress, no_progress
from engine.storage.store import default_store_path

DEFAULT_DAY_COUNTS = (4, 8, 12, 24)
CACHE_FILE_NAME = "typical_day_fidelity.json"
CACHE_VERSION = 1
CAPACITY_FLOOR_KW = 1.0
"""Capacities below this in the full-year run get no relative error (it would divide by almost nothing). [kW]"""


def capacity_by_technology_kw(result: RunResult) -> dict:
    """Installed capacity (existing + new) per technology over the whole city [kW; kWh for stores]."""
    supply = result.tables["supply"]
    grouped = supply.groupby("technology_id", sort=True)["capacity_kw"].sum()
    return {str(k): float(v) for k, v in grouped.items()}


def _relative(value: float, reference: float) -> float:
    if not (math.isfinite(value) and math.isfinite(reference)) or abs(reference) < 1e-12:
        return math.nan
    return (value - reference) / abs(reference)


def fidelity_table(results: dict[int, RunResult]) -> pd.DataFrame:
    """The fidelity table from runs keyed by their number of typical days (0 = the full year, required).

    Columns: typical_days, model_steps, status, total_cost_eur_per_a, co2_t_per_a, total_cost_error_pct,
    co2_error_pct, capacity_deviation_pct, capacity_error_max_pct, solve_s, then capacity_<technology>_kw and
    capacity_error_<technology>_pct. Errors are signed, ``100 * (value - full year) / full year``;
    ``capacity_deviation_pct`` is ``100 * sum |capacity - full year| / sum full-year capacity`` over the
    technologies sized in kW (stores, sized in kWh, left out): the share of the capacity mix that differs; ``capacity_error_max_pct`` the largest
    per-technology error in magnitude among those with at least :data:`CAPACITY_FLOOR_KW` in the full year.
    The full-year row comes last with zero errors.
    """
    if 0 not in results:
        raise ValueError("results must hold the full-year run under key 0")
    reference = results[0]
    if not reference.solved:
        raise ValueError(f"the full-year run did not solve: {reference.message}")
    ref_cap = capacity_by_technology_kw(reference)
    techs = sorted(set(ref_cap).union(*(capacity_by_technology_kw(r) for r in results.values() if r.solved)))
    supply = reference.tables["supply"]
    stores = set(supply.loc[supply["kind"] == "heat_store", "technology_id"].astype(str))
    power_techs = [t for t in techs if t not in stores]  # stores are sized in kWh, not kW
    rows = []
    for days in sorted(results, key=lambda d: (d == 0, d)):
        result = results[days]
        row = {
            "typical_days": int(days),
            "model_steps": int(len(result.tables["steps"])) if "steps" in result.tables else 0,
            "status": result.status,
        }
        if result.solved:
            cap = capacity_by_technology_kw(result)
            row["total_cost_eur_per_a"] = result.total_cost_eur_per_a
            row["co2_t_per_a"] = result.co2_t_per_a
            row["total_cost_error_pct"] = 100 * _relative(result.total_cost_eur_per_a, reference.total_cost_eur_per_a)
            row["co2_error_pct"] = 100 * _relative(result.co2_t_per_a, reference.co2_t_per_a)
            deviation = sum(abs(cap.get(t, 0.0) - ref_cap.get(t, 0.0)) for t in power_techs)
            total_ref = sum(ref_cap.get(t, 0.0) for t in power_techs)
            row["capacity_deviation_pct"] = 100 * deviation / total_ref if total_ref > 0 else math.nan
            errors = []
            for t in techs:
                row[f"capacity_{t}_kw"] = cap.get(t, 0.0)
                ref = ref_cap.get(t, 0.0)
                err = 100 * _relative(cap.get(t, 0.0), ref) if ref >= CAPACITY_FLOOR_KW else math.nan
                row[f"capacity_error_{t}_pct"] = err
                if math.isfinite(err):
                    errors.append(abs(err))
            row["capacity_error_max_pct"] = max(errors) if errors else math.nan
        row["solve_s"] = float(result.timings_s.get("total", math.nan))
        rows.append(row)
    table = pd.DataFrame(rows)
    lead = ["typical_days", "model_steps", "status", "total_cost_eur_per_a", "co2_t_per_a", "total_cost_error_pct",
            "co2_error_pct", "capacity_deviation_pct", "capacity_error_max_pct", "solve_s"]
    rest = [f"capacity_{t}_kw" for t in techs] + [f"capacity_error_{t}_pct" for t in techs]
    return table.reindex(columns=lead + rest)


def typical_day_fidelity(
    scenario: Scenario,
    cost_case: str | None = None,
    day_counts=DEFAULT_DAY_COUNTS,
    objective: str | None = None,
    workers: int | None = None,
    progress: Progress | None = None,
    cancel: Cancel | None = None,
    solver: str = DIRECT,
) -> pd.DataFrame:
    """Solve ``scenario`` at each number of typical days and over the full year; compare (see :func:`fidelity_table`).

    Parameters
    ----------
    scenario : Scenario
        The city (its CO2 cap and network plant limit apply to every run).
    cost_case : str, optional
        Cost case (default ``reference``).
    day_counts : sequence of int
        Numbers of typical days to test, each >= 1 and below the number of days of the year.
    objective : {"cost", "co2"}, optional
        Objective (None keeps the scenario's).
    workers : int, optional
        Worker processes for the district solves.
    progress : callable, optional
        ``progress(share, text)`` after each run.
    cancel : callable, optional
        Checked before each run and passed to the solver; when it returns True the measurement stops.
    solver : str
        Solver of every run (:mod:`engine.model.solvers`; HiGHS directly by default).

    Raises
    ------
    ValueError
        If a day count is not a whole number in range.
    RuntimeError
        If the full-year run fails (there is nothing to compare with), or ``cancel`` stopped the measurement.
    """
    n_days = scenario.n_hours // 24
    counts = []
    for d in day_counts:
        if int(d) != d or not 1 <= d < n_days:
            raise ValueError(f"day_counts: {d!r} is not a whole number from 1 to {n_days - 1}")
        counts.append(int(d))
    report = progress or no_progress
    case = cost_case or default_cost_case(scenario.cost_cases)
    results = {}
    runs = sorted(set(counts)) + [0]
    for k, days in enumerate(runs):
        label = "the full year" if days == 0 else f"{days} typical days"
        report(k / len(runs), f"Solving at {label}")
        if cancel is not None and cancel():
            raise FidelityCancelled("the fidelity measurement was cancelled")
        settings = run_settings(scenario, objective, None, days)
        results[days] = solve_scenario(scenario, case, settings=settings, workers=workers, cancel=cancel,
                                       solver=solver)
        if cancel is not None and cancel():
            raise FidelityCancelled("the fidelity measurement was cancelled")
        if days == 0 and not results[0].solved:
            raise RuntimeError(f"the full-year run failed, so there is nothing to compare with: {results[0].message}")
    report(1.0, "Fidelity measured")
    return fidelity_table(results)


# ============================================================================================ cache
def default_cache_path() -> Path:
    """The cache file beside the scenario store (``typical_day_fidelity.json``)."""
    return default_store_path().parent / CACHE_FILE_NAME


def fidelity_key(scenario: Scenario, cost_case: str | None = None, objective: str | None = None) -> str:
    """Hash of the inputs the fidelity depends on: everything but the time resolution."""
    case = cost_case or default_cost_case(scenario.cost_cases)
    settings = run_settings(scenario, objective, None, 0)
    return input_hash(scenario, case, dataclasses.replace(settings, typical_days=0))


def _read_cache(path: Path) -> dict:
    try:
        data = json.loads(path.read_text())
    except (OSError, ValueError):
        return {}
    if not isinstance(data, dict) or data.get("version") != CACHE_VERSION or not isinstance(data.get("entries"), dict):
        return {}
    return data["entries"]


def _write_cache(path: Path, entries: dict) -> None:
    path.parent.mkdir(parents=True, exist_ok=True)
    # write to a temporary file and rename it, so a reader never sees half a file
    fd, tmp = tempfile.mkstemp(dir=path.parent, prefix=".fidelity-", suffix=".json")
    with os.fdopen(fd, "w") as handle:
        json.dump({"version": CACHE_VERSION, "entries": entries}, handle, indent=1, allow_nan=True)
    os.replace(tmp, path)


def lookup_fidelity(scenario: Scenario, cost_case: str | None = None, objective: str | None = None,
                    day_counts=DEFAULT_DAY_COUNTS, cache_path: str | Path | None = None) -> pd.DataFrame | None:
    """The cached fidelity table of these inputs, or None when it was never measured."""
    path = Path(cache_path) if cache_path is not None else default_cache_path()
    entry = _read_cache(path).get(fidelity_key(scenario, cost_case, objective))
    if entry is None or sorted(entry.get("day_counts", [])) != sorted(int(d) for d in day_counts):
        return None
    table = pd.DataFrame(entry["table"])
    table.attrs["measured_utc"] = entry.get("measured_utc", "")
    return table


def cached_fidelity(
    scenario: Scenario,
    cost_case: str | None = None,
    objective: str | None = None,
    day_counts=DEFAULT_DAY_COUNTS,
    cache_path: str | Path | None = None,
    workers: int | None = None,
    progress: Progress | None = None,
    refresh: bool = False,
    cancel: Cancel | None = None,
    solver: str = DIRECT,
) -> pd.DataFrame:
    """The fidelity table of these inputs: from the cache, or measured once and stored there.

    ``refresh=True`` measures again and replaces the cached entry.

    The cache key is :func:`fidelity_key` (the input hash with the resolution left out), so editing any input,
    cost case or setting measures again. ``table.attrs["measured_utc"]`` says when it was measured.
    """
    path = Path(cache_path) if cache_path is not None else default_cache_path()
    found = None if refresh else lookup_fidelity(scenario, cost_case, objective, day_counts, path)
    if found is not None:
        return found
    started = time.perf_counter()
    table = typical_day_fidelity(scenario, cost_case, day_counts, objective, workers, progress, cancel, solver)
    measured = datetime.now(timezone.utc).strftime("%Y-%m-%dT%H:%M:%SZ")
    entries = _read_cache(path)
    entries[fidelity_key(scenario, cost_case, objective)] = {
        "measured_utc": measured,
        "scenario_name": scenario.settings.name,
        "day_counts": sorted(int(d) for d in day_counts),
        "seconds": round(time.perf_counter() - started, 2),
        "table": json.loads(table.to_json(orient="records")),
    }
    _write_cache(path, entries)
    table.attrs["measured_utc"] = measured
    return table


def fidelity_note(table: pd.DataFrame, typical_days: int) -> str:
    """One sentence on the error of a resolution, for the results page (empty when it was not measured)."""
    if typical_days == 0:
        return "Solved over the full hourly year: no typical-day approximation."
    rows = table[table["typical_days"] == int(typical_days)]
    if rows.empty or rows.iloc[0]["status"] != "optimal":
        return ""
    row = rows.iloc[0]
    when = table.attrs.get("measured_utc", "")
    return (
        f"With {int(typical_days)} typical days the total cost differs from the full-year solution by "
        f"{row['total_cost_error_pct']:+.1f} % and the CO2 by {row['co2_error_pct']:+.1f} %; "
        f"{row['capacity_deviation_pct']:.1f} % of the installed capacity is placed differently"
        + (f" (measured on these inputs, {when})." if when else " (measured on these inputs).")
    )


def recommend_typical_days(table: pd.DataFrame, cost_tolerance_pct: float = 1.0,
                           capacity_tolerance_pct: float = 10.0) -> int:
    """Fewest typical days whose cost error is within ``cost_tolerance_pct`` and capacity deviation within
    ``capacity_tolerance_pct`` (0, the full year, when none is)."""
    candidates = table[(table["typical_days"] > 0) & (table["status"] == "optimal")].sort_values("typical_days")
    for row in candidates.itertuples(index=False):
        if abs(row.total_cost_error_pct) <= cost_tolerance_pct and row.capacity_deviation_pct <= capacity_tolerance_pct:
            return int(row.typical_days)
    return 0
