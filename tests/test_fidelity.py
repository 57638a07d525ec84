"""Typical-day fidelity: the table against the full year, its cache and the note for the results page.

Cities: seeded synthetic cities of 3 districts over a two-week series (336 hours).
"""

from __future__ import annotations

import dataclasses

import numpy as np
import pandas as pd
import pytest

import engine.studies.fidelity as fidelity
from bench.synthetic_city import synthetic_city
from engine.studies.fidelity import (
    cached_fidelity, fidelity_key, fidelity_note, lookup_fidelity, recommend_typical_days, typical_day_fidelity,
)

DAYS = (2, 5)


@pytest.fixture(scope="module")
def city():
    return synthetic_city(3, n_hours=336, typical_days=5, seed=21)


@pytest.fixture(scope="module")
def table(city):
    return typical_day_fidelity(city, day_counts=DAYS)


def periodic(city):
    """The same city in a series where every day repeats the third day and groundwater is constant."""
    hourly = city.hourly.copy()
    day = hourly.iloc[48:72].drop(columns="hour").to_numpy()
    values = np.tile(day, (len(hourly) // 24, 1))
    hourly.loc[:, hourly.columns[1:]] = values
    wells = city.wells.assign(groundwater_temp_amplitude_k=0.0)
    return dataclasses.replace(city, hourly=hourly, wells=wells)


def test_table_structure(table, city):
    """One row per tested count plus the full year last (typical_days 0), with the documented columns."""
    from engine.model.prepare import demand_year_kw, extreme_days

    heat, cool = demand_year_kw(city, city.settings)
    extra = len(set(extreme_days(city, heat, cool).values()))
    assert list(table["typical_days"]) == [2, 5, 0]
    # typical days plus the extreme days kept alone (here peak-heating = coldest day, and the peak-cooling day):
    # 24 h for each typical day and each distinct extreme day
    assert list(table["model_steps"]) == [24 * (2 + extra), 24 * (5 + extra), 336]
    for column in ("total_cost_eur_per_a", "co2_t_per_a", "total_cost_error_pct", "co2_error_pct",
                   "capacity_deviation_pct", "capacity_error_max_pct", "solve_s"):
        assert column in table.columns
    assert any(c.startswith("capacity_") and c.endswith("_kw") for c in table.columns)
    full = table.iloc[-1]
    assert full["total_cost_error_pct"] == 0.0 and full["co2_error_pct"] == 0.0
    assert full["capacity_deviation_pct"] == 0.0


def test_errors_are_relative_to_the_full_year(table):
    """Definition of the signed relative error, 100 (x - x_year) / x_year, recomputed from the table."""
    full = table.iloc[-1]
    for row in table.iloc[:-1].itertuples():
        assert row.total_cost_error_pct == pytest.approx(
            100 * (row.total_cost_eur_per_a - full["total_cost_eur_per_a"]) / full["total_cost_eur_per_a"])
        assert row.co2_error_pct == pytest.approx(100 * (row.co2_t_per_a - full["co2_t_per_a"]) / full["co2_t_per_a"])


def test_identical_days_are_represented_exactly(city):
    """A year whose days are all alike is reproduced exactly by any number of typical days: every day equals
    its medoid and the weights add up to the year (exact by construction of the aggregation; see Kotzur et al.
    2018, Renewable Energy 117, 474-487, on time series aggregation, from memory)."""
    same = periodic(city)
    result = typical_day_fidelity(same, day_counts=(1, 3))
    errors = result.iloc[:-1][["total_cost_error_pct", "co2_error_pct"]].to_numpy()
    np.testing.assert_allclose(errors, 0.0, atol=1e-4)
    assert (result.iloc[:-1]["capacity_deviation_pct"] < 1e-3).all()


def test_cache_measures_once_per_input_set(city, table, tmp_path, monkeypatch):
    """The cache returns the stored table without solving; changing an input changes the key and the lookup
    misses (common practice for content-addressed caches)."""
    path = tmp_path / "fidelity.json"
    monkeypatch.setattr(fidelity, "typical_day_fidelity", lambda *args, **kwargs: table)
    first = cached_fidelity(city, day_counts=DAYS, cache_path=path)
    assert first.attrs["measured_utc"]

    def fail(*args, **kwargs):
        raise AssertionError("the cached table should have been used")

    monkeypatch.setattr(fidelity, "typical_day_fidelity", fail)
    again = cached_fidelity(city, day_counts=DAYS, cache_path=path)
    pd.testing.assert_frame_equal(again.reset_index(drop=True), table.reset_index(drop=True), check_dtype=False)
    dearer = dataclasses.replace(city, prices=dataclasses.replace(city.prices, gas_eur_per_mwh=70.0))
    assert fidelity_key(dearer) != fidelity_key(city)
    assert lookup_fidelity(dearer, day_counts=DAYS, cache_path=path) is None
    assert fidelity_key(dataclasses.replace(city, settings=dataclasses.replace(city.settings, typical_days=9))) == \
        fidelity_key(city)


def test_note_and_recommendation(table):
    """The page's sentence quotes the measured errors; the recommendation is the fewest days within tolerance."""
    row = table[table["typical_days"] == 5].iloc[0]
    note = fidelity_note(table, 5)
    assert f"{row['total_cost_error_pct']:+.1f} %" in note
    assert fidelity_note(table, 7) == ""
    assert "full hourly year" in fidelity_note(table, 0)
    loose = recommend_typical_days(table, cost_tolerance_pct=1e9, capacity_tolerance_pct=1e9)
    assert loose == 2
    assert recommend_typical_days(table, cost_tolerance_pct=-1.0) == 0


def test_bad_day_counts(city):
    """Common practice: a ValueError naming the argument."""
    with pytest.raises(ValueError, match="day_counts"):
        typical_day_fidelity(city, day_counts=(14,))
    with pytest.raises(ValueError, match="day_counts"):
        typical_day_fidelity(city, day_counts=(2.5,))
