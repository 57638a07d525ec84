"""A planner's own city edited on the set-up page: districts, new well doublets, energy prices.

Three editors beside the technology costs and well permits of :mod:`pages._support.edits`:

* :func:`editable_district_table` (heat demand, hot-water share, temperatures, network), checked by
  :func:`district_problems` with the reader's own column rules and messages
  (:data:`engine.scenario.districts.DISTRICT_PROPERTIES`, the network rule of the reader);
* candidate well doublets, one row each, made from a click on the map by :func:`well_row_from_click` and checked
  by :func:`new_well_problems` with the rules of ``wells.csv`` (:data:`engine.scenario.well_table.WELL_COLUMNS`);
* energy prices scaled by a factor or replaced by an uploaded CSV (:func:`price_table`, :func:`read_price_upload`,
  :func:`price_problems`).

:func:`write_city_edits` writes all three into the scenario files (``districts.geojson``, ``wells.csv``,
``scenario.toml`` and ``hourly.csv``); :func:`pages._support.edits.scenario_files_with_edits` calls it, so the
files a run is solved, saved and downloaded with carry the edits, and reading them back gives exactly the values
edited. No Streamlit here.
"""

from __future__ import annotations

import csv
import dataclasses
import hashlib
import io
import json
import math
import re
import tempfile
from collections.abc import Mapping
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np
import pandas as pd

from engine.scenario import geometry
from engine.scenario.cells import Column, check_references, check_unique, parse_table
from engine.scenario.defaults import cell_default
from engine.scenario.districts import (
    DISTRICT_PROPERTIES,
    _check_district_network,
    _check_district_units,
    check_points,
)
from engine.scenario.files import DISTRICTS_FILE, HOURLY_FILE, SCENARIO_FILE, WELLS_FILE
from engine.scenario.hourly import HOURLY_COLUMNS, _check_hours
from engine.scenario.inputs import Scenario
from engine.scenario.problems import Problem
from engine.scenario.tables import Report, Table, read_csv, toml_key_lines
from engine.scenario.well_table import WELL_COLUMNS, _check_well_values

DISTRICT_TABLE = "district table"
NEW_WELL_TABLE = "new well table"
PRICE_TABLE = "price table"

DISTRICT_EDIT_COLUMNS = (
    "heat_demand_mwh_per_a",
    "hot_water_share",
    "supply_temp_c",
    "hot_water_temp_c",
    "network_available",
    "network_connection_limit_kw",
)
"""Columns of :func:`editable_district_table` a planner may change (the property names of districts.geojson)."""

DISTRICT_TABLE_COLUMNS = ("district_id", "name") + DISTRICT_EDIT_COLUMNS

NEW_WELL_COLUMNS = (
    "well_id",
    "district_id",
    "lon",
    "lat",
    "permit_flow_m3_per_h",
    "permit_annual_volume_m3",
    "design_spread_k",
    "groundwater_temp_c",
    "groundwater_temp_amplitude_k",
)
"""Columns of a candidate doublet (the column names of wells.csv); the reinjection well is left blank, so the
reader puts it ``reinjection_offset_m`` down-gradient."""

NEW_WELL_PREFIX = "new-"


def _text(value) -> str:
    """A cell as the reader's stripped text: blank for None/NaN, ``repr`` of floats, true/false for booleans."""
    if value is None or value is pd.NA:
        return ""
    if isinstance(value, (bool, np.bool_)):
        return "true" if value else "false"
    if isinstance(value, (float, np.floating)):
        if math.isnan(value):
            return ""
        if math.isinf(value):
            return "inf" if value > 0 else "-inf"
        return repr(float(value))
    if isinstance(value, (int, np.integer)):
        return str(int(value))
    return str(value).strip()


def _table(name: str, frame: pd.DataFrame, columns, ids: list[str], word: str) -> Table:
    """The edited rows as the reader's text table; first row = 1, each message starts with the item's id."""
    cells = pd.DataFrame({c: [_text(v) for v in frame[c]] for c in columns if c in frame.columns}, dtype=str)
    return Table(name, cells.reset_index(drop=True), list(range(1, len(frame) + 1)),
                 [f"{word} '{i}': " if i else "" for i in ids])


# ============================================================================= districts
def editable_district_table(scenario: Scenario) -> pd.DataFrame:
    """Per district the values a planner may edit.

    Columns: district_id, name, heat_demand_mwh_per_a [MWh/a] (buildings.csv included, as the model uses it),
    hot_water_share [-], supply_temp_c [°C], hot_water_temp_c [°C], network_available [bool],
    network_connection_limit_kw [kW; NaN = no limit].
    """
    d = scenario.districts
    limit = d["network_connection_limit_kw"].to_numpy(float).copy()
    limit[~np.isfinite(limit)] = np.nan
    return pd.DataFrame(
        {
            "district_id": d["district_id"].astype(str).to_numpy(),
            "name": d["name"].astype(str).to_numpy(),
            "heat_demand_mwh_per_a": d["heat_demand_mwh_per_a"].to_numpy(float),
            "hot_water_share": d["hot_water_share"].to_numpy(float),
            "supply_temp_c": d["supply_temp_c"].to_numpy(float),
            "hot_water_temp_c": d["hot_water_temp_c"].to_numpy(float),
            "network_available": d["network_available"].to_numpy(bool),
            "network_connection_limit_kw": limit,
        }
    )


def _district_specs() -> tuple[Column, ...]:
    return tuple(spec for spec in DISTRICT_PROPERTIES if spec.name in DISTRICT_EDIT_COLUMNS)


def _parse_districts(scenario: Scenario, table: pd.DataFrame) -> tuple[pd.DataFrame | None, list[Problem]]:
    """The edited district values parsed by the reader's rules, and every problem (warnings included)."""
    if not isinstance(table, pd.DataFrame):
        return None, [Problem(DISTRICT_TABLE, None, None, f"must be a table, not {type(table).__name__}")]
    missing = [c for c in DISTRICT_TABLE_COLUMNS if c not in table.columns]
    if missing:
        return None, [Problem(DISTRICT_TABLE, None, c, "column is missing") for c in missing]
    ids = [str(v) for v in scenario.districts["district_id"]]
    if [str(v) for v in table["district_id"]] != ids:
        return None, [Problem(DISTRICT_TABLE, None, "district_id",
                              "rows were added, removed or reordered; edit values only")]
    report = Report()
    text = _table(DISTRICT_TABLE, table, DISTRICT_EDIT_COLUMNS, ids, "district")
    text.blank_text = "is blank"
    frame = parse_table(report, text, _district_specs())
    _check_district_network(report, text, frame)
    geometries = list(scenario.districts["geometry"])
    shapes = [geometry.to_shape(g) for g in geometries]
    _check_district_units(report, text, frame.assign(cooling_demand_mwh_per_a=0.0), geometries, shapes)
    return frame, report.problems


def district_demand_for_map(scenario: Scenario, table) -> np.ndarray | None:
    """The edited heat demand per district [MWh/a] where every cell of it parses, else None (the files')."""
    frame, problems = _parse_districts(scenario, table)
    if frame is None or any(p.is_error and p.column == "heat_demand_mwh_per_a" for p in problems):
        return None
    return frame["heat_demand_mwh_per_a"].to_numpy(float)


def _stated_demand(files: Mapping[str, bytes]) -> dict[str, float]:
    """heat_demand_mwh_per_a as districts.geojson states it, by district id (buildings not added)."""
    data = json.loads(files[DISTRICTS_FILE].decode("utf-8-sig"))
    out = {}
    for feature in data.get("features", []):
        props = feature.get("properties") or {}
        out[str(props.get("district_id", "")).strip()] = float(props.get("heat_demand_mwh_per_a") or 0.0)
    return out


def district_problems(scenario: Scenario, table: pd.DataFrame, files: Mapping[str, bytes] | None = None
                      ) -> list[Problem]:
    """Every problem of the edited district table, each naming "district table", the row (first row = 1), the
    column and the district, in the words of the districts.geojson reader (a network with a limit of 0 kW is
    the reader's warning). With ``files``: also a demand below what buildings.csv adds to the district, and an
    edited demand that a measured series in heat_demand_hourly.csv overrides (a warning)."""
    frame, problems = _parse_districts(scenario, table)
    if frame is None or files is None:
        return problems
    problems += _demand_problems(scenario, frame, files)
    return problems


def _demand_problems(scenario: Scenario, frame: pd.DataFrame, files: Mapping[str, bytes]) -> list[Problem]:
    problems = []
    if DISTRICTS_FILE not in files:
        return problems
    stated = _stated_demand(files)
    measured = scenario.heat_demand_hourly_kw
    old = scenario.districts["heat_demand_mwh_per_a"].to_numpy(float)
    new = frame["heat_demand_mwh_per_a"].to_numpy(float)
    for i, district_id in enumerate(scenario.districts["district_id"].astype(str)):
        if not math.isfinite(new[i]) or new[i] == old[i]:
            continue
        buildings = old[i] - stated.get(district_id, old[i])
        if new[i] < buildings - 1e-9:
            problems.append(Problem(
                DISTRICT_TABLE, i + 1, "heat_demand_mwh_per_a",
                f"district '{district_id}': {new[i]:g} MWh/a is below the {buildings:g} MWh/a its buildings in "
                "buildings.csv add; enter at least that, or lower the buildings' demand in buildings.csv"))
        if measured is not None and district_id in measured.columns:
            problems.append(Problem(
                DISTRICT_TABLE, i + 1, "heat_demand_mwh_per_a",
                f"district '{district_id}': its hourly demand comes from heat_demand_hourly.csv, which the model "
                "uses instead of the annual figure; edit that file to change the demand", "warning"))
    return problems


def _write_districts(files: dict, scenario: Scenario, table: pd.DataFrame) -> None:
    frame, problems = _parse_districts(scenario, table)
    if frame is None or DISTRICTS_FILE not in files:
        return
    before = editable_district_table(scenario)
    stated = _stated_demand(files)
    changes: dict[str, dict] = {}
    for i, district_id in enumerate(before["district_id"]):
        for column in DISTRICT_EDIT_COLUMNS:
            old, new = before[column].iloc[i], frame[column].iloc[i]
            if column == "network_available":
                if bool(old) != bool(new):
                    changes.setdefault(district_id, {})[column] = bool(new)
                continue
            old, new = float(old), float(new)
            if column == "network_connection_limit_kw" and math.isinf(new):
                new = math.nan
            if (math.isnan(old) and math.isnan(new)) or old == new:
                continue
            if column == "heat_demand_mwh_per_a":
                buildings = float(before[column].iloc[i]) - stated.get(district_id, float(before[column].iloc[i]))
                new = new - buildings
            changes.setdefault(district_id, {})[column] = None if math.isnan(new) else float(new)
    if not changes:
        return
    data = json.loads(files[DISTRICTS_FILE].decode("utf-8-sig"))
    for feature in data["features"]:
        props = feature.get("properties") or {}
        for column, value in changes.get(str(props.get("district_id", "")).strip(), {}).items():
            if value is None:
                props.pop(column, None)  # a blank limit: no limit
            else:
                props[column] = value
    head = {k: v for k, v in data.items() if k != "features"}
    lines = ",\n".join("    " + json.dumps(f, ensure_ascii=False) for f in data["features"])
    start = json.dumps(head, ensure_ascii=False)[:-1] + (", " if head else "")
    files[DISTRICTS_FILE] = (start + '"features": [\n' + lines + "\n]}\n").encode("utf-8")


# ============================================================================= candidate wells
def empty_new_wells() -> pd.DataFrame:
    """A table of candidate doublets with no row (the columns of :data:`NEW_WELL_COLUMNS`)."""
    frame = pd.DataFrame({c: pd.Series(dtype=float) for c in NEW_WELL_COLUMNS})
    return frame.astype({"well_id": object, "district_id": object})


def _next_well_id(taken) -> str:
    taken = {str(t) for t in taken}
    number = 1
    while f"{NEW_WELL_PREFIX}{number}" in taken:
        number += 1
    return f"{NEW_WELL_PREFIX}{number}"


def well_row_from_click(scenario: Scenario, lon: float, lat: float, taken_ids=()) -> tuple[dict | None, str]:
    """A candidate doublet at a clicked point (WGS 84 lon/lat), or None and the sentence why not.

    The district is the first whose polygon contains the point (shapely point-in-polygon, as the reader binds a
    well with a blank district_id: :func:`engine.scenario.geometry.containing_index`). Columns with a documented
    default (:mod:`engine.scenario.defaults`: no annual volume limit, no seasonal amplitude) get it; the permit
    flow, design spread and groundwater temperature have none and stay blank for the planner to fill.
    """
    shapes = [geometry.to_shape(g) for g in scenario.districts["geometry"]]
    found = int(geometry.containing_index(shapes, np.array([float(lon)]), np.array([float(lat)]))[0])
    if found < 0:
        return None, (f"The point ({lon:.5f}, {lat:.5f}) lies outside every district: a doublet must serve a "
                      "district, so click inside one.")
    district = scenario.districts.iloc[found]
    taken = list(scenario.wells["well_id"].astype(str)) + [str(t) for t in taken_ids]
    volume = cell_default(WELLS_FILE, "permit_annual_volume_m3")
    row = {
        "well_id": _next_well_id(taken),
        "district_id": str(district["district_id"]),
        "lon": round(float(lon), 6),
        "lat": round(float(lat), 6),
        "permit_flow_m3_per_h": math.nan,
        "permit_annual_volume_m3": math.nan if math.isinf(volume) else float(volume),
        "design_spread_k": math.nan,
        "groundwater_temp_c": math.nan,
        "groundwater_temp_amplitude_k": float(cell_default(WELLS_FILE, "groundwater_temp_amplitude_k")),
    }
    return row, (f"Doublet {row['well_id']} proposed in district {district['name']}: fill in its permit flow, "
                 "design spread and groundwater temperature.")


def add_well_row(table: pd.DataFrame | None, row: dict) -> pd.DataFrame:
    """``table`` with ``row`` appended (an empty table when ``table`` is None)."""
    base = empty_new_wells() if table is None or not isinstance(table, pd.DataFrame) else table
    return pd.concat([base, pd.DataFrame([row])], ignore_index=True)[list(NEW_WELL_COLUMNS)]


def _well_specs() -> tuple[Column, ...]:
    return tuple(spec for spec in WELL_COLUMNS if spec.name in NEW_WELL_COLUMNS
                 or spec.name in ("reinjection_lon", "reinjection_lat", "coldest_day_of_year"))


def _parse_new_wells(scenario: Scenario, table) -> tuple[pd.DataFrame | None, list[Problem]]:
    if table is None or (isinstance(table, pd.DataFrame) and table.empty):
        return None, []
    if not isinstance(table, pd.DataFrame):
        return None, [Problem(NEW_WELL_TABLE, None, None, f"must be a table, not {type(table).__name__}")]
    missing = [c for c in NEW_WELL_COLUMNS if c not in table.columns]
    if missing:
        return None, [Problem(NEW_WELL_TABLE, None, c, "column is missing") for c in missing]
    ids = [_text(v) for v in table["well_id"]]
    report = Report()
    text = _table(NEW_WELL_TABLE, table, NEW_WELL_COLUMNS, ids, "well")
    frame = parse_table(report, text, _well_specs())
    existing = list(scenario.wells["well_id"].astype(str))
    check_unique(report, text, ids, "well_id", "well_id '{}'")
    for i, well_id in enumerate(ids):
        if well_id in existing:
            report(NEW_WELL_TABLE, i + 1, "well_id",
                   f"well '{well_id}': the well table already has a doublet '{well_id}'; choose another id")
    usable = check_points(report, text, frame, "lon", "lat")
    _check_well_values(report, text, frame)
    check_references(report, text, frame, "district_id", list(scenario.districts["district_id"].astype(str)),
                     "district")
    blank = np.array([v == "" for v in frame["district_id"]]) & usable
    for i in np.flatnonzero(blank):
        report(NEW_WELL_TABLE, i + 1, "district_id", f"well '{ids[i]}': is blank; name the district it serves")
    return frame, report.problems


def new_well_problems(scenario: Scenario, table, files: Mapping[str, bytes] | None = None) -> list[Problem]:
    """Every problem of the candidate doublets, naming "new well table", the row (first row = 1), the column and
    the well, by the rules of wells.csv; with ``files``: a folder whose wells come from a GIS layer cannot take
    new rows."""
    frame, problems = _parse_new_wells(scenario, table)
    if frame is not None and files is not None and WELLS_FILE not in files and any(
            str(name).startswith("wells.") for name in files):
        problems.append(Problem(NEW_WELL_TABLE, None, None,
                                "the wells of these inputs come from a GIS layer; add the new doublets to that "
                                "layer in your GIS instead"))
    return problems


def _write_new_wells(files: dict, scenario: Scenario, table, crs: str | None) -> None:
    frame, problems = _parse_new_wells(scenario, table)
    if frame is None or any(p.is_error for p in problems):
        return
    if WELLS_FILE in files:
        rows = list(csv.reader(io.StringIO(files[WELLS_FILE].decode("utf-8-sig"))))
        header = [h.strip() for h in rows[0]]
    else:
        rows, header = [], list(NEW_WELL_COLUMNS)
        rows.append(header)
    xy = "x" in header and "lon" not in header
    lons, lats = frame["lon"].to_numpy(float), frame["lat"].to_numpy(float)
    if xy:  # the file gives positions in the CRS of [gis] crs: write the new ones the same way
        import pyproj  # only a wells.csv in projected x/y needs the transformation

        from engine.scenario import gis  # the reader's CRS parsing, for the same CRS the reader will use
        parsed, _ = gis.parse_crs(crs)
        xs, ys = pyproj.Transformer.from_crs(gis.WGS84, parsed, always_xy=True).transform(lons, lats)
    for column in NEW_WELL_COLUMNS:
        name = {"lon": "x", "lat": "y"}.get(column, column) if xy else column
        if name not in header:
            header.append(name)
            for row in rows[1:]:
                row.append("")
    rows[0] = header
    for i in range(len(frame)):
        values = {c: _text(frame[c].iloc[i]) for c in NEW_WELL_COLUMNS}
        if math.isinf(float(frame["permit_annual_volume_m3"].iloc[i])):
            values["permit_annual_volume_m3"] = ""
        if xy:
            values["x"], values["y"] = repr(float(xs[i])), repr(float(ys[i]))
        rows.append([values.get(name, "") for name in header])
    out = io.StringIO()
    csv.writer(out, lineterminator="\n").writerows(rows)
    files[WELLS_FILE] = out.getvalue().encode("utf-8")


# ============================================================================= prices
@dataclass(frozen=True)
class PriceSeries:
    """One energy price the scenario holds: a constant of ``[prices]`` or a column of hourly.csv."""

    key: str
    label: str
    file: str
    column: str

    @property
    def hourly(self) -> bool:
        return self.file == HOURLY_FILE


PRICE_SERIES = (
    PriceSeries("electricity", "Electricity", HOURLY_FILE, "electricity_price_eur_per_mwh"),
    PriceSeries("network", "Network heat", HOURLY_FILE, "network_price_eur_per_mwh"),
    PriceSeries("gas", "Gas", SCENARIO_FILE, "gas_eur_per_mwh"),
    PriceSeries("oil", "Oil", SCENARIO_FILE, "oil_eur_per_mwh"),
    PriceSeries("biomass", "Biomass", SCENARIO_FILE, "biomass_eur_per_mwh"),
)
"""The energy prices of a scenario: electricity and network heat per hour in hourly.csv, the fuels as constants
in ``[prices]`` of scenario.toml (docs/input_format.md). A cost case's factors apply on top of them."""

_SERIES = {s.key: s for s in PRICE_SERIES}


@dataclass
class PriceEdits:
    """Factors by series key (1 = unchanged) and uploaded hourly series replacing a column of hourly.csv."""

    factors: dict = field(default_factory=dict)
    uploads: dict = field(default_factory=dict)
    """series key -> (file name, numpy array of the year's prices [€/MWh])."""

    def changed(self) -> bool:
        return bool(self.uploads) or any(float(f) != 1.0 for f in self.factors.values() if _finite(f))


def _finite(value) -> bool:
    try:
        return math.isfinite(float(value))
    except (TypeError, ValueError):
        return False


def _base_price(scenario: Scenario, series: PriceSeries) -> np.ndarray:
    if series.hourly:
        return scenario.hourly[series.column].to_numpy(float)
    return np.array([float(getattr(scenario.prices, series.column))])


def price_table(scenario: Scenario, edits: PriceEdits | None = None) -> pd.DataFrame:
    """One row per price: series, label, where it is kept, mean price of the files [€/MWh], factor [-], source
    (the uploaded file's name, or the file that holds it) and the mean after the edit [€/MWh]."""
    edits = edits or PriceEdits()
    rows = []
    for s in PRICE_SERIES:
        base = _base_price(scenario, s)
        upload = edits.uploads.get(s.key)
        values = upload[1] if upload else base
        factor = edits.factors.get(s.key, 1.0)
        factor = float(factor) if _finite(factor) else math.nan
        rows.append({
            "series": s.key, "price": s.label,
            "kept in": f"{s.file}, {'column' if s.hourly else '[prices]'} {s.column}",
            "mean_eur_per_mwh": float(np.mean(base)),
            "factor": factor,
            "source": upload[0] if upload else s.file,
            "new_mean_eur_per_mwh": float(np.mean(values)) * factor,
        })
    return pd.DataFrame(rows)


def _price_spec(column: str) -> Column:
    return next(spec for spec in HOURLY_COLUMNS if spec.name == column)


def read_price_upload(data: bytes, name: str, series_key: str, n_hours: int) -> tuple[np.ndarray | None, list[Problem]]:
    """An uploaded CSV replacing one hourly price: ``hour`` and the series' column of hourly.csv (say
    ``electricity_price_eur_per_mwh``), one row per hour of the scenario's year.

    Read and checked like hourly.csv (the same reader, the same range and hour rules), each problem naming the
    uploaded file, its row (header = row 1) and column. Returns the prices [€/MWh] or None and the problems.
    """
    series = _SERIES.get(series_key)
    if series is None or not series.hourly:
        return None, [Problem(name, None, None, "only the hourly prices (electricity, network heat) take a file")]
    report = Report()
    with tempfile.TemporaryDirectory(prefix="heatmosaic-price-") as folder:
        file = "upload.csv"
        (Path(folder) / file).write_bytes(bytes(data))
        table = read_csv(Path(folder), file, report, required=True)
    problems = [dataclasses.replace(p, file=name) if p.file == file else p for p in report.problems]
    if table is None:
        return None, problems
    table.file = name
    report = Report()
    for column in ("hour", series.column):
        if column not in table.cells.columns:
            others = ", ".join(c for c in table.cells.columns) or "none"
            report(name, 1, column, f"column is missing (the file has: {others}); the file needs the columns hour "
                                    f"and {series.column}")
    if report.problems:
        return None, problems + report.problems
    frame = parse_table(report, table, (Column("hour", "integer"), _price_spec(series.column)))
    _check_hours(report, table, frame["hour"].to_numpy(float), n_hours)
    problems += report.problems
    if any(p.is_error for p in problems):
        return None, problems
    return frame[series.column].to_numpy(float), problems


MAX_PRICE_FACTOR = 100.0
"""Largest factor accepted on a price [-]: beyond it the entry is likely a price typed in the factor column."""


def price_problems(scenario: Scenario, edits: PriceEdits | None) -> list[Problem]:
    """Factors that are blank, not numbers, negative or above :data:`MAX_PRICE_FACTOR`, and scaled prices outside
    the range the reader accepts, each naming "price table", the row (first row = 1) and the series."""
    problems: list[Problem] = []
    if edits is None:
        return problems
    for row, s in enumerate(PRICE_SERIES, start=1):
        factor = edits.factors.get(s.key, 1.0)
        if not _finite(factor):
            problems.append(Problem(PRICE_TABLE, row, "factor", f"{s.key}: must be a number, got {factor!r}"))
            continue
        factor = float(factor)
        if factor < 0 or factor > MAX_PRICE_FACTOR:
            problems.append(Problem(PRICE_TABLE, row, "factor",
                                    f"{s.key}: must be >= 0 and <= {MAX_PRICE_FACTOR:g}, got {factor:g}"))
            continue
        if s.hourly:
            upload = edits.uploads.get(s.key)
            values = (upload[1] if upload else _base_price(scenario, s)) * factor
            spec = _price_spec(s.column)
            if (spec.low is not None and values.min() < spec.low) or (spec.high is not None and values.max() > spec.high):
                problems.append(Problem(PRICE_TABLE, row, "factor",
                                        f"{s.key}: scaled prices reach {values.min():g} to {values.max():g} €/MWh, "
                                        f"outside {spec.low:g} to {spec.high:g} that {HOURLY_FILE} accepts"))
    return problems


def _write_prices(files: dict, scenario: Scenario, edits: PriceEdits | None) -> None:
    if edits is None or not edits.changed() or price_problems(scenario, edits):
        return
    hourly_changes: dict[str, np.ndarray] = {}
    toml_changes: dict[str, float] = {}
    for s in PRICE_SERIES:
        factor = float(edits.factors.get(s.key, 1.0))
        upload = edits.uploads.get(s.key)
        if factor == 1.0 and not upload:
            continue
        values = (upload[1] if upload else _base_price(scenario, s)) * factor
        if s.hourly:
            hourly_changes[s.column] = values
        else:
            toml_changes[s.column] = float(values[0])
    if hourly_changes:
        rows = list(csv.reader(io.StringIO(files[HOURLY_FILE].decode("utf-8-sig"))))
        header = [h.strip() for h in rows[0]]
        for column, values in hourly_changes.items():
            k = header.index(column)
            for row, value in zip(rows[1:], values):
                row[k] = repr(float(value))
        out = io.StringIO()
        csv.writer(out, lineterminator="\n").writerows(rows)
        files[HOURLY_FILE] = out.getvalue().encode("utf-8")
    if toml_changes:
        text = files[SCENARIO_FILE].decode("utf-8-sig")
        lines = text.splitlines(keepends=True)
        where = toml_key_lines(text)
        for key, value in toml_changes.items():
            number = where[("prices", key)] - 1
            lines[number] = re.sub(r"=\s*[^#\r\n]*?(\s*(#.*)?)(\r?\n)?$",
                                   lambda m: f"= {value!r}{m.group(1) or ''}{m.group(3) or ''}", lines[number], count=1)
        files[SCENARIO_FILE] = "".join(lines).encode("utf-8")


# ============================================================================= all three
@dataclass
class CityEdits:
    """The district table, the candidate doublets and the price edits of one set-up (None: not edited)."""

    district_table: pd.DataFrame | None = None
    new_wells: pd.DataFrame | None = None
    prices: PriceEdits | None = None

    @classmethod
    def from_setup(cls, setup: Mapping) -> "CityEdits":
        """The edits kept in the set-up page's ``hm_setup`` dict."""
        return cls(setup.get("district_table"), setup.get("new_wells"), setup.get("prices"))

    def digest_text(self) -> str:
        """A text that changes whenever an edit does (for the request key)."""
        parts = []
        for frame in (self.district_table, self.new_wells):
            parts.append("none" if frame is None else frame.to_csv(index=False, float_format="%.12g"))
        if self.prices is not None:
            parts.append(repr(sorted((k, str(v)) for k, v in self.prices.factors.items())))
            parts.append(repr(sorted((k, n, hashlib.sha256(np.asarray(v, dtype=float).tobytes()).hexdigest())
                                     for k, (n, v) in self.prices.uploads.items())))
        return "|".join(parts)


def city_edit_problems(scenario: Scenario, edits: CityEdits | None, files: Mapping[str, bytes] | None = None
                       ) -> list[Problem]:
    """Every problem of the three editors (warnings included)."""
    if edits is None:
        return []
    problems: list[Problem] = []
    if edits.district_table is not None:
        problems += district_problems(scenario, edits.district_table, files)
    problems += new_well_problems(scenario, edits.new_wells, files)
    problems += price_problems(scenario, edits.prices)
    return problems


def city_edits_changed(scenario: Scenario, edits: CityEdits | None) -> bool:
    """Whether any of the three editors differs from the input files."""
    if edits is None:
        return False
    if edits.new_wells is not None and len(edits.new_wells):
        return True
    if edits.prices is not None and edits.prices.changed():
        return True
    if edits.district_table is not None:
        before = editable_district_table(scenario)
        after = edits.district_table
        if list(after.columns) != list(before.columns) or len(after) != len(before):
            return True
        return not before.astype(str).equals(after[list(before.columns)].astype(str).reset_index(drop=True))
    return False


def write_city_edits(files: dict, scenario: Scenario, edits: CityEdits | None, crs: str | None = None) -> dict:
    """``files`` with the district, new-well and price edits written in (only files whose values change)."""
    if edits is None:
        return files
    if edits.district_table is not None:
        _write_districts(files, scenario, edits.district_table)
    _write_new_wells(files, scenario, edits.new_wells, crs)
    _write_prices(files, scenario, edits.prices)
    return files


def changed_districts(scenario: Scenario, table: pd.DataFrame) -> pd.DataFrame:
    """The district cells that differ from the input files: district, column, from, to (cells that parse)."""
    frame, _ = _parse_districts(scenario, table)
    if frame is None:
        return pd.DataFrame(columns=["table", "item", "column", "from", "to"])
    before = editable_district_table(scenario)
    rows = []
    for i, district_id in enumerate(before["district_id"]):
        for column in DISTRICT_EDIT_COLUMNS:
            old, new = before[column].iloc[i], frame[column].iloc[i]
            if column == "network_connection_limit_kw":
                new = math.nan if math.isinf(float(new)) else float(new)
                same = (math.isnan(old) and math.isnan(new)) or old == new
            else:
                same = old == new or (isinstance(old, float) and math.isnan(old) and math.isnan(float(new)))
            if not same:
                rows.append([DISTRICT_TABLE, district_id, column, old, new])
    return pd.DataFrame(rows, columns=["table", "item", "column", "from", "to"])
