"""``wells.csv``: groundwater well doublets, bound to the district containing the extraction well."""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pandas as pd

import engine.scenario.geometry as geometry
from engine.scenario.cells import (
    KEEP,
    MAX_WELL_FLOW_M3_PER_H,
    Column,
    blank_cells,
    check_references,
    check_unique,
    read_checked_table,
    report_rows,
)
from engine.scenario.districts import Districts, check_points, outside_note, swapped_hints
from engine.scenario.defaults import cell_default, default
from engine.scenario.files import WELLS_FILE
from engine.scenario.inputs import Aquifer
from engine.scenario.tables import Report, Table


def _well_default(field: str):
    """The default of a blank cell of ``field`` in wells.csv (engine.scenario.defaults)."""
    return cell_default(WELLS_FILE, field)


# ----------------------------------------------------------------------------- wells.csv
WELL_COLUMNS = (
    Column("well_id", "text"),
    Column("district_id", "text", in_header=False, default=KEEP),
    Column("lon"),
    Column("lat"),
    Column("reinjection_lon", in_header=False, default=KEEP),
    Column("reinjection_lat", in_header=False, default=KEEP),
    Column("permit_flow_m3_per_h", low=0),
    Column(
        "permit_annual_volume_m3",
        in_header=False,
        default=_well_default("permit_annual_volume_m3"),
        low=0,
        allow_inf=True,
    ),
    Column("design_spread_k", low=0, high=30, low_open=True),
    Column("groundwater_temp_c", low=0, high=40),
    Column(
        "groundwater_temp_amplitude_k",
        in_header=False,
        default=_well_default("groundwater_temp_amplitude_k"),
        low=0,
        high=20,
    ),
    Column("coldest_day_of_year", "integer", in_header=False, default=KEEP, low=1, high=366),
)


def _check_well_values(report: Report, table: Table, frame: pd.DataFrame) -> None:
    """Pairs of reinjection coordinates, seasonal fields, unit slips of the permit."""
    rlon = frame["reinjection_lon"].to_numpy(dtype=float)
    rlat = frame["reinjection_lat"].to_numpy(dtype=float)
    half = np.isnan(rlon) != np.isnan(rlat)
    report_rows(
        report,
        table,
        "reinjection_lon",
        half,
        lambda i: "give both reinjection_lon and reinjection_lat, or leave both blank",
    )
    both = ~np.isnan(rlon) & ~np.isnan(rlat)
    messages = [geometry.coordinate_problem(x, y) if ok else None for x, y, ok in zip(rlon, rlat, both)]
    report_rows(report, table, "reinjection_lon", np.array([m is not None for m in messages]), lambda i: messages[i])
    amplitude = frame["groundwater_temp_amplitude_k"].to_numpy(dtype=float)
    day = frame["coldest_day_of_year"].to_numpy(dtype=float)
    day_blank = blank_cells(table, "coldest_day_of_year")
    report_rows(
        report,
        table,
        "coldest_day_of_year",
        (amplitude > 0) & day_blank,
        lambda i: "is blank; with a seasonal amplitude > 0 the coldest day (1-366) is required",
    )
    frame["coldest_day_of_year"] = np.where(np.isnan(day), float(default(WELLS_FILE, "coldest_day_of_year")), day)
    flow = frame["permit_flow_m3_per_h"].to_numpy(dtype=float)
    with np.errstate(invalid="ignore"):
        huge = flow > MAX_WELL_FLOW_M3_PER_H
    report_rows(
        report,
        table,
        "permit_flow_m3_per_h",
        huge,
        lambda i: f"{flow[i]:g} m³/h is far above any single well; looks like litres per hour instead of m³/h",
    )


def _bind_wells(
    report: Report, table: Table, frame: pd.DataFrame, usable: np.ndarray, districts: Districts | None
) -> None:
    """Fill blank district_id with the district containing the extraction well; check named districts."""
    if districts is None:
        return
    check_references(report, table, frame, "district_id", districts.ids, "district")
    blank = (frame["district_id"] == "").to_numpy() & usable
    found = geometry.containing_index(
        districts.shapes, frame["lon"].to_numpy(dtype=float), frame["lat"].to_numpy(dtype=float)
    )
    outside = blank & (found < 0)
    note = outside_note(districts)
    lons, lats = frame["lon"].to_numpy(dtype=float), frame["lat"].to_numpy(dtype=float)
    swapped = swapped_hints(districts, lons, lats, outside)
    report_rows(
        report,
        table,
        "district_id",
        outside,
        lambda i: f"the extraction well at ({lons[i]:g}, {lats[i]:g}) lies outside every district"
        + (swapped[i] or f": name its district in column district_id or correct its position{note}"),
    )
    ids = districts.ids
    frame["district_id"] = [
        ids[found[i]] if blank[i] and found[i] >= 0 else value for i, value in enumerate(frame["district_id"])
    ]


def place_reinjection(frame: pd.DataFrame, aquifer: Aquifer) -> None:
    """Blank reinjection positions go ``reinjection_offset_m`` down-gradient of the extraction well."""
    blank = frame["reinjection_lon"].isna() & frame["reinjection_lat"].isna()
    if not blank.any():
        return
    lon, lat = geometry.offset_lon_lat(
        frame.loc[blank, "lon"].to_numpy(dtype=float),
        frame.loc[blank, "lat"].to_numpy(dtype=float),
        aquifer.reinjection_offset_m,
        aquifer.flow_direction_deg,
    )
    frame.loc[blank, "reinjection_lon"] = lon
    frame.loc[blank, "reinjection_lat"] = lat


def _empty_wells() -> pd.DataFrame:
    frame = pd.DataFrame({spec.name: pd.Series(dtype=float) for spec in WELL_COLUMNS})
    return frame.astype({"well_id": str, "district_id": str, "coldest_day_of_year": "int64"})


def load_wells(folder: Path, report: Report, districts: Districts | None) -> pd.DataFrame | None:
    loaded = read_checked_table(folder, WELLS_FILE, WELL_COLUMNS, report, required=False)
    if loaded is None:
        return None if (folder / WELLS_FILE).exists() else _empty_wells()
    table, frame = loaded
    check_unique(report, table, list(frame["well_id"]), "well_id", "well_id '{}'")
    usable = check_points(report, table, frame, "lon", "lat")
    _check_well_values(report, table, frame)
    _bind_wells(report, table, frame, usable, districts)
    return frame
