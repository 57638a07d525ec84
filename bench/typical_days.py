"""Typical days on the demo city: fidelity against the full hourly year, and our clustering against ``tsam``.

    python bench/typical_days.py                  # default resolution against the full year
    python bench/typical_days.py --tsam           # also the same typical-day count chosen by tsam's clustering
    python bench/typical_days.py --single-factor  # also the demand rescaled by one factor (the former method)
    python bench/typical_days.py --sweep 8,12,16,24   # error and solve time per number of typical days
    python bench/typical_days.py --former         # also the former days and prices (medoid hours' own prices)
    python bench/typical_days.py --districts      # also where the heat by technology differs, per district
    python bench/typical_days.py --groundwater-mean --sweep 16,24   # also the groundwater at its cluster's mean
    python bench/typical_days.py --linked-stores --sweep 16,24,48,96   # also stores linked from day to day
    python bench/typical_days.py --firmness 0,0.01,0.05,0.17   # also the typical days' near-optimal ranges
    python bench/typical_days.py --sensitivity electric_boiler:efficiency=0.98   # the full year, one input changed

The full year takes minutes; it is solved once and kept in the temporary folder, keyed by the input hash. All
clusterings get the same inputs (the daily features the engine clusters, the extreme days taken out and kept
alone, the demand given the year's duration curve by the engine); only the choice of the representative days
differs. Figures are printed, never asserted: they hold for the demo's inputs. tsam is a benchmark-only
dependency (``pip install tsam``).
"""

from __future__ import annotations

import argparse
import math
import os
import sys
import time
from pathlib import Path

import numpy as np

ROOT = Path(__file__).resolve().parents[1]
if str(ROOT) not in sys.path:
    sys.path.insert(0, str(ROOT))

from engine.model import prepare as prepare_mod  # noqa: E402
from engine.model.solve import run_settings, solve_scenario  # noqa: E402
from engine.physics.timeseries import daily_features, grid_from_medoids, k_medoids  # noqa: E402
from engine.scenario import load_scenario, resolve_scenario_path  # noqa: E402


def _relative_pct(value: float, reference: float) -> float:
    return 100.0 * (value - reference) / abs(reference) if abs(reference) > 1e-9 else math.nan


STORE_TECHNOLOGIES = ("heat_store",)
"""Technologies whose annual 'heat' is the net of charging and discharging (their losses), not a supply."""


def compare(result, reference, floor_mwh: float = 100.0) -> dict:
    """Cost error and the largest error of a supply technology's annual heat (above ``floor_mwh``; stores, whose
    annual figure is their net losses, are listed but not counted as the worst) [%],
    with that technology's error in MWh/a and as a share of the city's heat [%], and its share of the heat; the
    misplaced heat (heat supplied by another technology than in the full year) as a share of the city's heat."""
    heat = result.heat_by_technology_mwh_per_a()
    ref_heat = reference.heat_by_technology_mwh_per_a()
    total = reference.heat_demand_mwh_per_a
    errors = {t: _relative_pct(heat.get(t, 0.0), v) for t, v in ref_heat.items() if abs(v) >= floor_mwh}
    supplies = [t for t in errors if t not in STORE_TECHNOLOGIES]
    worst = max(supplies, key=lambda t: abs(errors[t])) if supplies else ""
    absolute = heat.get(worst, 0.0) - ref_heat.get(worst, 0.0) if worst else 0.0
    # heat supplied by another technology than in the full year: half the absolute differences (stores left out)
    misplaced = 0.5 * sum(abs(heat.get(t, 0.0) - ref_heat.get(t, 0.0)) for t in set(heat) | set(ref_heat)
                          if t not in STORE_TECHNOLOGIES)
    return {
        "misplaced_heat_pct": 100.0 * misplaced / total if total > 0 else math.nan,
        "cost_error_pct": _relative_pct(result.total_cost_eur_per_a, reference.total_cost_eur_per_a),
        "co2_error_pct": _relative_pct(result.co2_t_per_a, reference.co2_t_per_a),
        "heat_error_max_pct": abs(errors[worst]) if worst else 0.0,
        "heat_error_worst_technology": worst,
        "heat_error_worst_mwh_per_a": absolute,
        "heat_error_worst_pct_of_heat": 100.0 * absolute / total if total > 0 else math.nan,
        "heat_share_worst_pct": 100.0 * ref_heat.get(worst, 0.0) / total if worst and total > 0 else math.nan,
        "heat_errors_pct": errors,
    }


def district_differences(result, reference, floor_mwh: float = 20.0):
    """Per district and technology: capacity and annual heat of the full year and of ``result``, and their
    differences, for the rows whose heat differs by more than ``floor_mwh`` [kW, MWh/a]."""
    def table(run):
        return run.tables["supply"].groupby(["district_id", "technology_id"])[["capacity_kw", "heat_mwh_per_a"]].sum()

    year, typical = table(reference), table(result)
    both = year.merge(typical, how="outer", left_index=True, right_index=True, suffixes=("", "_typical")).fillna(0.0)
    both["heat_difference_mwh_per_a"] = both["heat_mwh_per_a_typical"] - both["heat_mwh_per_a"]
    both["capacity_difference_kw"] = both["capacity_kw_typical"] - both["capacity_kw"]
    return both[both["heat_difference_mwh_per_a"].abs() > floor_mwh].sort_values("heat_difference_mwh_per_a")


def _features(scenario, settings):
    heat, cool = prepare_mod.demand_year_kw(scenario, settings)
    columns = prepare_mod.CLUSTER_SERIES(scenario, heat, cool)
    extremes = sorted(set(prepare_mod.extreme_days(scenario, heat, cool).values()))
    return daily_features(np.column_stack(columns)), extremes


def tsam_grid(scenario, settings, method: str = "hierarchical"):
    """The time grid with the representative days chosen by tsam (medoid representation), extremes as ours."""
    import pandas as pd
    import tsam

    features, extremes = _features(scenario, settings)
    n_days = features.shape[0]
    rest = np.setdiff1d(np.arange(n_days), extremes)
    # tsam wants the hourly series; rebuild them from the days that are clustered
    n_series = features.shape[1] // 24
    hourly = features[rest].reshape(rest.size, n_series, 24).transpose(0, 2, 1).reshape(-1, n_series)
    frame = pd.DataFrame(hourly, columns=[f"s{k}" for k in range(n_series)],
                         index=pd.date_range("2030-01-01", periods=len(hourly), freq="h"))
    result = tsam.aggregate(frame, n_clusters=settings.typical_days, period_duration=24,
                            cluster=tsam.ClusterConfig(method=method, representation="medoid"),
                            preserve_column_means=False)
    clustering = result.clustering
    medoids = np.asarray(clustering.cluster_centers, dtype=int)
    labels = np.asarray(clustering.cluster_assignments, dtype=int)
    return grid_from_medoids(rest[medoids], rest, labels, extremes, n_days)


def own_grid_seconds(scenario, settings) -> float:
    features, extremes = _features(scenario, settings)
    rest = np.setdiff1d(np.arange(features.shape[0]), extremes)
    part = features[rest]
    spread = part.std(axis=0)
    scaled = (part - part.mean(axis=0)) / np.where(spread > 0, spread, 1.0)
    started = time.perf_counter()
    k_medoids(scaled, settings.typical_days, seed=0)
    return time.perf_counter() - started


def solve_with_grid(scenario, settings, grid):
    original = prepare_mod.build_time_grid
    prepare_mod.build_time_grid = lambda *args, **kwargs: grid
    try:
        return solve_scenario(scenario, settings=settings)
    finally:
        prepare_mod.build_time_grid = original


def full_year(scenario):
    """The full-year run, kept in a pickle under the temporary folder keyed by the input hash (it takes long)."""
    import pickle
    import tempfile

    from engine.scenario.inputs import input_hash

    settings = run_settings(scenario, typical_days=0)
    cache = Path(tempfile.gettempdir()) / f"heatmosaic-full-year-{input_hash(scenario, 'reference', settings)[:16]}.pkl"
    if cache.exists():
        with cache.open("rb") as handle:
            return pickle.load(handle)
    started = time.perf_counter()
    reference = solve_scenario(scenario, settings=settings)
    seconds = time.perf_counter() - started
    with cache.open("wb") as handle:
        pickle.dump((reference, seconds), handle)
    return reference, seconds


def solve_single_factor(scenario, settings):
    """The run with the demand of the clustered days rescaled by one factor per district (the former method,
    :func:`engine.physics.timeseries.rescale_to_annual`) in place of the year's duration curve."""
    from engine.physics.timeseries import rescale_to_annual

    original = prepare_mod.DEMAND_REPRESENTATION
    prepare_mod.DEMAND_REPRESENTATION = rescale_to_annual
    try:
        return solve_scenario(scenario, settings=settings)
    finally:
        prepare_mod.DEMAND_REPRESENTATION = original


def former_series(scenario, heat, cool):
    """The series the days were clustered on before: outdoor temperature, city heat, electricity and network
    prices, grid CO2 factor (no network CO2 factor) and city cooling."""
    hourly = scenario.hourly
    columns = [hourly["outdoor_temp_c"].to_numpy(float), heat.sum(axis=0),
               hourly["electricity_price_eur_per_mwh"].to_numpy(float),
               hourly["network_price_eur_per_mwh"].to_numpy(float), hourly["grid_co2_kg_per_mwh"].to_numpy(float)]
    if cool.sum() > 0:
        columns.append(cool.sum(axis=0))
    return columns


def solve_former(scenario, settings):
    """The run with the former choice of days (:func:`former_series`) and the medoid hours' own prices, CO2
    factors (``prepare.PRICE_REPRESENTATION = None``) and groundwater temperatures."""
    names = ("CLUSTER_SERIES", "PRICE_REPRESENTATION", "GROUNDWATER_REPRESENTATION")
    original = [getattr(prepare_mod, name) for name in names]
    former = (former_series, None, lambda year, grid: year[:, grid.year_hour])
    for name, value in zip(names, former):
        setattr(prepare_mod, name, value)
    prepare_mod.clear_grid_memo()
    try:
        return solve_scenario(scenario, settings=settings)
    finally:
        for name, value in zip(names, original):
            setattr(prepare_mod, name, value)
        prepare_mod.clear_grid_memo()


def solve_linked_stores(scenario, settings):
    """The run with the stores carrying heat from day to day (``stores_between_days = true``) and its full-year
    check's unserved heat [MWh/a] (what the plan leaves unserved over the hourly year)."""
    import dataclasses

    from engine.studies.year_check import check_over_year

    result = solve_scenario(scenario, settings=dataclasses.replace(settings, stores_between_days=True))
    return result, check_over_year(scenario, result).unserved_heat_mwh_per_a


def solve_groundwater_mean(scenario, settings):
    """The run with the groundwater temperature of each typical day at its cluster's mean at the same hour
    (:func:`engine.physics.carrier_curves.period_mean`, the representation before the cluster's distribution)."""
    from engine.physics.carrier_curves import period_mean

    original = prepare_mod.GROUNDWATER_REPRESENTATION
    prepare_mod.GROUNDWATER_REPRESENTATION = period_mean
    prepare_mod.clear_grid_memo()
    try:
        return solve_scenario(scenario, settings=settings)
    finally:
        prepare_mod.GROUNDWATER_REPRESENTATION = original
        prepare_mod.clear_grid_memo()


def timed_solve(scenario, settings, repeats: int = 3):
    """The run and its median wall time over ``repeats`` solves, the grid memo cleared before each [s]."""
    seconds = []
    for _ in range(repeats):
        prepare_mod.clear_grid_memo()
        started = time.perf_counter()
        result = solve_scenario(scenario, settings=settings)
        seconds.append(time.perf_counter() - started)
    return result, sorted(seconds)[len(seconds) // 2]


def demo_fidelity(with_tsam: bool = False, typical_days: int | None = None, single_factor: bool = False,
                  sweep=(), districts: bool = False, former: bool = False, groundwater_mean: bool = False,
                  linked_stores: bool = False, firmness_slacks=()) -> dict:
    """The demo at its default resolution (or ``typical_days``) against the full year; optionally tsam's days,
    the former single-factor rescaling, and other numbers of typical days (``sweep``)."""
    scenario = load_scenario(resolve_scenario_path("demo"))
    settings = run_settings(scenario, typical_days=typical_days)
    reference, year_s = full_year(scenario)
    if not reference.solved:
        raise RuntimeError(f"full-year demo did not solve: {reference.message}")
    ours, solve_s = timed_solve(scenario, settings)
    out = {"typical_days": settings.typical_days, "full_year_s": year_s,
           "own": {**compare(ours, reference), "solve_s": solve_s,
                   "cluster_s": own_grid_seconds(scenario, settings)}}
    from engine.studies.year_check import check_over_year

    started = time.perf_counter()
    check = check_over_year(scenario, ours)
    out["checked"] = {**compare(check.year, reference), "solve_s": time.perf_counter() - started,
                      "unserved_heat_mwh_per_a": check.unserved_heat_mwh_per_a,
                      "against_estimate_pct": check.cost_difference_pct}
    if firmness_slacks:
        out["firmness"] = [
            {"slack_pct": row["slack_pct"], "inside": int(row["table"]["holds_full_year"].sum()),
             "technologies": len(row["table"]), "incomplete": row["incomplete"], "seconds": row["seconds"]}
            for row in firmness(scenario, settings, reference, firmness_slacks)]
    if districts:
        out["districts"] = district_differences(ours, reference)
    if single_factor:
        started = time.perf_counter()
        result = solve_single_factor(scenario, settings)
        out["own_single_factor"] = {**compare(result, reference), "solve_s": time.perf_counter() - started,
                                    "cluster_s": out["own"]["cluster_s"]}
    if former:
        started = time.perf_counter()
        result = solve_former(scenario, settings)
        out["own_former"] = {**compare(result, reference), "solve_s": time.perf_counter() - started,
                             "cluster_s": out["own"]["cluster_s"]}
        for days in sweep:
            other = run_settings(scenario, typical_days=days)
            started = time.perf_counter()
            result = solve_former(scenario, other)
            out[f"own_former_{days}_days"] = {**compare(result, reference), "solve_s": time.perf_counter() - started,
                                              "cluster_s": math.nan}
    if groundwater_mean:
        for days in [settings.typical_days, *sweep]:
            other = run_settings(scenario, typical_days=days)
            started = time.perf_counter()
            result = solve_groundwater_mean(scenario, other)
            out[f"own_groundwater_mean_{days}_days"] = {**compare(result, reference), "cluster_s": math.nan,
                                                        "solve_s": time.perf_counter() - started}
    if linked_stores:
        for days in [settings.typical_days, *sweep]:
            other = run_settings(scenario, typical_days=days)
            started = time.perf_counter()
            result, unserved = solve_linked_stores(scenario, other)
            out[f"own_linked_stores_{days}_days"] = {**compare(result, reference), "cluster_s": math.nan,
                                                     "solve_s": time.perf_counter() - started,
                                                     "checked_unserved_heat_mwh_per_a": unserved}
    for days in sweep:
        other = run_settings(scenario, typical_days=days)
        result, seconds = timed_solve(scenario, other)
        out[f"own_{days}_days"] = {**compare(result, reference), "solve_s": seconds,
                                   "cluster_s": own_grid_seconds(scenario, other)}
    if with_tsam:
        for method in ("hierarchical", "kmedoids"):
            try:
                started = time.perf_counter()
                grid = tsam_grid(scenario, settings, method)
                cluster_s = time.perf_counter() - started
            except Exception as error:  # tsam's MILP k-medoids needs a solver it may not find
                out[f"tsam_{method}"] = {"error": f"{type(error).__name__}: {error}"[:200]}
                continue
            started = time.perf_counter()
            result = solve_with_grid(scenario, settings, grid)
            out[f"tsam_{method}"] = {**compare(result, reference), "cluster_s": cluster_s,
                                     "solve_s": time.perf_counter() - started}
    return out


def firmness(scenario, settings, reference, slacks) -> list:
    """Per cost slack [%]: the typical days' near-optimal range of each technology's city heat
    (:func:`engine.studies.alternatives.near_optimal_ranges` on the default typical days) beside the full year's
    heat, and whether the range holds it: how far the typical days' technology split can be read."""
    from engine.studies.alternatives import near_optimal_ranges

    year = reference.heat_by_technology_mwh_per_a()
    out = []
    for slack in slacks:
        started = time.perf_counter()
        ranges = near_optimal_ranges(scenario, slack_pct=slack, settings=settings)
        table = ranges.technology_heat()
        table["full_year_mwh_per_a"] = table["technology_id"].map(lambda t: year.get(t, 0.0))
        table["holds_full_year"] = ((table["full_year_mwh_per_a"] >= table["minimum_mwh_per_a"] - 0.5)
                                    & (table["full_year_mwh_per_a"] <= table["maximum_mwh_per_a"] + 0.5))
        out.append({"slack_pct": slack, "seconds": time.perf_counter() - started, "table": table,
                    "incomplete": int((ranges.ranges["status"] != "optimal").sum())})
    return out


def sensitivity(scenario, reference, changes) -> list:
    """The full year again with one technology input changed per entry (``"technology_id:column=value"``): how
    much the reference itself moves, per technology's heat [%] and in total cost [%], for a small change of input
    (each full year solved once and kept like :func:`full_year`)."""
    import copy

    base = reference.heat_by_technology_mwh_per_a()
    out = []
    for change in changes:
        target, value = change.split("=", 1)
        tech, column = target.split(":", 1)
        changed = copy.deepcopy(scenario)
        rows = changed.technologies["technology_id"] == tech
        if not rows.any() or column not in changed.technologies.columns:
            raise SystemExit(f"--sensitivity {change}: no technology {tech!r} or column {column!r}")
        before = changed.technologies.loc[rows, column].iloc[0]
        changed.technologies.loc[rows, column] = float(value)
        year, seconds = full_year(changed)
        heat = year.heat_by_technology_mwh_per_a()
        out.append({"change": f"{tech} {column} {before} -> {value}", "seconds": seconds,
                    "cost_pct": _relative_pct(year.total_cost_eur_per_a, reference.total_cost_eur_per_a),
                    "heat_pct": {t: _relative_pct(heat.get(t, 0.0), v) for t, v in base.items() if abs(v) >= 100.0
                                 and t not in STORE_TECHNOLOGIES}})
    return out


def _unserved(row: dict):
    """Unserved heat of a plan held over the full year [MWh/a], where the row has it."""
    return row.get("checked_unserved_heat_mwh_per_a", row.get("unserved_heat_mwh_per_a"))


def main(argv=None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--tsam", action="store_true")
    parser.add_argument("--typical-days", type=int, default=None)
    parser.add_argument("--single-factor", action="store_true", help="also the former single-factor rescaling")
    parser.add_argument("--sweep", default="", help="numbers of typical days to compare, e.g. 8,12,16,24")
    parser.add_argument("--districts", action="store_true", help="also the heat by technology per district")
    parser.add_argument("--former", action="store_true", help="also the former days and prices")
    parser.add_argument("--groundwater-mean", action="store_true",
                        help="also the groundwater temperature at its cluster's mean (the representation before)")
    parser.add_argument("--linked-stores", action="store_true",
                        help="also the stores linked from day to day, and what their plan leaves unserved")
    parser.add_argument("--firmness", default="",
                        help="cost slacks [%%] at which to give the typical days' near-optimal ranges, e.g. 0,0.05")
    parser.add_argument("--sensitivity", default="",
                        help="full-year runs with one input changed, e.g. electric_boiler:efficiency=0.98 (comma-"
                             "separated; minutes each)")
    args = parser.parse_args(argv)
    sweep = [int(d) for d in args.sweep.split(",") if d.strip()]
    load = os.getloadavg()[0]
    figures = demo_fidelity(args.tsam, args.typical_days, args.single_factor, sweep, args.districts, args.former,
                            args.groundwater_mean, args.linked_stores)
    print(f"demo, {figures['typical_days']} typical days + extreme days; full year solved in "
          f"{figures['full_year_s']:.1f} s")
    for name, row in figures.items():
        if not isinstance(row, dict):
            continue
        if "error" in row:
            print(f"  {name}: {row['error']}")
            continue
        print(f"  {name}: cost {row['cost_error_pct']:+.3f} %, CO2 {row['co2_error_pct']:+.3f} %, misplaced heat "
              f"{row['misplaced_heat_pct']:.2f} % of the city's heat, worst heat "
              f"{row['heat_error_max_pct']:.3f} % ({row['heat_error_worst_technology']}: "
              f"{row['heat_error_worst_mwh_per_a']:+,.0f} MWh/a, {row['heat_error_worst_pct_of_heat']:+.3f} % of the "
              f"city's heat, its share {row['heat_share_worst_pct']:.2f} %), clustering {row.get('cluster_s', math.nan):.3f} s, "
              f"solve {row.get('solve_s', math.nan):.2f} s; "
              + (f"unserved heat over the full year {_unserved(row):.1f} MWh/a; " if _unserved(row) is not None else "")
              + "heat errors " + ", ".join(
                  f"{t} {e:+.2f} %" for t, e in sorted(row["heat_errors_pct"].items())))
    if args.districts:
        print("per district (capacity kW, heat MWh/a; full year, typical days, difference):")
        print(figures["districts"].round(0).to_string())
    slacks = [float(x) for x in args.firmness.split(",") if x.strip()]
    if slacks:
        scenario = load_scenario(resolve_scenario_path("demo"))
        reference, _ = full_year(scenario)
        for row in firmness(scenario, run_settings(scenario, typical_days=args.typical_days), reference, slacks):
            table = row["table"]
            print(f"near-optimal ranges of the typical days within +{row['slack_pct']:g} % of the least cost "
                  f"({row['seconds']:.1f} s, {row['incomplete']} rows incomplete): the full year's heat inside for "
                  f"{int(table['holds_full_year'].sum())} of {len(table)} technologies")
            for _, r in table.iterrows():
                print(f"    {r['technology_id']}: typical days {r['heat_mwh_per_a']:,.0f} MWh/a, range "
                      f"{r['minimum_mwh_per_a']:,.0f} to {r['maximum_mwh_per_a']:,.0f} ({r['below_pct']:+.1f} % / "
                      f"{r['above_pct']:+.1f} %), full year {r['full_year_mwh_per_a']:,.0f}"
                      f"{'' if r['holds_full_year'] else ' (outside)'}")
    changes = [c.strip() for c in args.sensitivity.split(",") if c.strip()]
    if changes:
        scenario = load_scenario(resolve_scenario_path("demo"))
        reference, _ = full_year(scenario)
        for row in sensitivity(scenario, reference, changes):
            print(f"full year with {row['change']} ({row['seconds']:.0f} s) against the full year: cost "
                  f"{row['cost_pct']:+.3f} %; heat " + ", ".join(
                      f"{t} {e:+.2f} %" for t, e in sorted(row["heat_pct"].items())))
    print(f"1-min load average {load:.1f} before / {os.getloadavg()[0]:.1f} after, {os.cpu_count()} cores")
    print(f"fidelity_cost_error_pct={figures['own']['cost_error_pct']:.3f}")
    return 0


if __name__ == "__main__":
    sys.exit(main())
