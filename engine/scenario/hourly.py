"""``hourly.csv`` (weather and prices per hour) and the per-district and per-well hourly series
(``heat_demand_hourly.csv``, ``groundwater_temp_hourly.csv``)."""

from __future__ import annotations

import dataclasses
import difflib
import math
from pathlib import Path

import numpy as np
import pandas as pd

import engine.scenario.geometry as geometry
from engine.scenario.cells import (
    MAX_DISTRICT_DEMAND_MWH_PER_A,
    MAX_HEAT_DENSITY_MWH_PER_KM2,
    MAX_PRICE_EUR_PER_MWH,
    Column,
    check_timestamp_hours,
    parse_table,
    read_checked_table,
    timestamp_column,
)
from engine.scenario.districts import Districts
from engine.scenario.files import HOURLY_FILE
from engine.scenario.tables import Report, Table, read_csv
from engine.units import KWH_PER_MWH

HOURS_PER_YEAR = (8760, 8784)
"""Rows of a year of hourly data: a common year and a leap year."""

# ============================================================================= hourly files
HOURLY_COLUMNS = (
    Column("hour", "integer"),
    Column("outdoor_temp_c", low=-60, high=60),
    Column("electricity_price_eur_per_mwh", low=-MAX_PRICE_EUR_PER_MWH, high=MAX_PRICE_EUR_PER_MWH),
    Column("grid_co2_kg_per_mwh", low=0, high=2000),
    Column("network_price_eur_per_mwh", low=0, high=MAX_PRICE_EUR_PER_MWH),
    Column("network_co2_kg_per_mwh", low=0, high=2000),
)


def _row_count_hint(count: int, hours: np.ndarray) -> str:
    """What an hourly file with the wrong number of rows most likely is, and what to do."""
    if count == 0:
        return "; the file holds only its header: add one row per hour"
    for per_hour, minutes in ((2, 30), (4, 15), (6, 10), (12, 5)):
        if count in (per_hour * 8760, per_hour * 8784):
            return f"; this looks like {minutes}-minute data: average it to hourly values"
    if count in (365, 366):
        return "; this looks like daily data: the format needs one row per hour"
    in_order = bool(np.array_equal(hours, np.arange(count)))
    if count < 8760 and in_order:
        missing = 8760 - count
        return f"; the last {missing} hour(s) of the year are missing (the file ends at hour {count - 1}): add them"
    if 8760 < count < 8784 and in_order:
        return f"; delete the {count - 8760} row(s) after hour 8759 (or complete a leap year to 8784 rows)"
    if count > 8784 and in_order:
        return f"; delete the {count - 8784} row(s) after hour 8783 (one year only)"
    return "; one row per hour, no gaps or repeats"


def _check_hours(report: Report, table: Table, hours: np.ndarray, expected_rows: int | None) -> None:
    """Row count of one year (or of hourly.csv) and an ``hour`` column 0, 1, 2, ... without gaps."""
    count = len(hours)
    if count not in HOURS_PER_YEAR:
        report(
            table.file,
            None,
            None,
            f"has {count} hourly rows; a year needs 8760 rows (8784 in a leap year){_row_count_hint(count, hours)}",
        )
    elif expected_rows is not None and count != expected_rows:
        message = (
            f"has {count} hourly rows but {HOURLY_FILE} has {expected_rows}: they must match (the same year, "
            "hour by hour)"
        )
        report(table.file, None, None, message)
    expected = np.arange(count)
    with np.errstate(invalid="ignore"):
        wrong = np.flatnonzero(np.isfinite(hours) & (hours != expected))
    if len(wrong):
        index = int(wrong[0])
        got = int(hours[index])
        if index == 0 and got == 1 and np.array_equal(hours, expected + 1):
            what = "hour 0 is missing: hours start at 0, not 1; subtract 1 from every hour"
        elif got > index:
            what = f"hour {index} is missing; add its row"
        else:
            what = "an hour repeats or goes back; delete the repeated row or sort the rows by hour"
        report(
            table.file,
            table.rows[index],
            "hour",
            f"must run 0, 1, 2, ... without gaps: expected {index} here, got {got} ({what}; first gap)",
        )


def load_hourly(folder: Path, report: Report) -> pd.DataFrame | None:
    loaded = read_checked_table(folder, HOURLY_FILE, HOURLY_COLUMNS, report, required=True)
    if loaded is None:
        return None
    table, frame = loaded
    if "hour" in table.cells.columns:
        _check_hours(report, table, frame["hour"].to_numpy(dtype=float), None)
    _check_hourly_price_units(report, table, frame)
    return frame


def _check_hourly_price_units(report: Report, table: Table, frame: pd.DataFrame) -> None:
    """Prices in EUR/kWh written into an EUR/MWh column: a typical value below 1 EUR/MWh."""
    for column in ("electricity_price_eur_per_mwh", "network_price_eur_per_mwh"):
        if column not in table.cells.columns:
            continue
        values = np.abs(frame[column].to_numpy(dtype=float))
        values = values[np.isfinite(values)]
        if not len(values):
            continue
        median = float(np.median(values))
        if 0 < median < 1 and float(values.max()) < 10:
            report(
                table.file,
                None,
                column,
                f"the median price is {median:.3g} EUR/MWh, below 1 EUR/MWh; looks like EUR/kWh instead of EUR/MWh: "
                "multiply the values by 1000",
            )


def load_id_series(
    folder: Path,
    name: str,
    report: Report,
    known_ids: list[str] | None,
    what: str,
    value: Column,
    expected_rows: int | None,
) -> pd.DataFrame | None:
    """``hour`` plus one column per district or well id, as a frame of the id columns."""
    table = read_csv(folder, name, report, required=False)
    if table is None:
        return None
    check_timestamp_hours(report, table)
    stamps = timestamp_column(report, table)
    columns = [c for c in table.cells.columns if c not in ("hour", stamps) and not c.lower().startswith("note")]
    if "hour" not in table.cells.columns:
        if stamps is None:
            report(name, None, "hour", "required column is missing; add it as the first column, counting 0 to n-1")
    else:
        hours = parse_table(report, table, (Column("hour", "integer"),))["hour"].to_numpy(dtype=float)
        _check_hours(report, table, hours, expected_rows)
    if known_ids is not None:
        for column in columns:
            if column not in known_ids:
                close = difflib.get_close_matches(column, known_ids, n=1, cutoff=0.6)
                hint = f"did you mean '{close[0]}'? " if close else ""
                report(
                    name,
                    table.header_row,
                    column,
                    f"is not a known {what} id; {hint}each column after hour must be a {what} id",
                )
    if not columns:
        report(name, None, None, f"has no {what} columns after hour")
    specs = tuple(dataclasses.replace(value, name=column) for column in columns)
    return parse_table(report, table, specs)


def check_series_units(
    report: Report, name: str, frame: pd.DataFrame | None, districts: "Districts | None"
) -> None:
    """Hourly heat demand in W instead of kW shows as an absurd annual sum, in total or per km² of the district."""
    if frame is None:
        return
    areas = {}
    if districts is not None:
        for district_id, shape, geometry_dict in zip(districts.ids, districts.shapes, districts.geometries):
            if shape is not None:
                areas[district_id] = geometry.area_km2(geometry_dict)
    for column in frame.columns:
        annual_mwh = float(np.nansum(frame[column].to_numpy(dtype=float))) / KWH_PER_MWH
        area = areas.get(column, math.nan)
        density = annual_mwh / area if area > 0 else math.nan
        if annual_mwh > MAX_DISTRICT_DEMAND_MWH_PER_A:
            why = "more than 10 TWh/a for one district"
        elif density > MAX_HEAT_DENSITY_MWH_PER_KM2:
            why = (
                f"{density:.3g} MWh per km² of district '{column}', far above any city (limit "
                f"{MAX_HEAT_DENSITY_MWH_PER_KM2:.0e})"
            )
        else:
            continue
        report(
            name,
            None,
            column,
            f"sums to {annual_mwh:.3g} MWh/a, {why}; looks like W instead of kW: divide the values by 1000",
        )
