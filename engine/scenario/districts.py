"""``districts.geojson`` (district polygons and their properties) and ``buildings.csv`` (points added to the
district containing them), with the checks of points against the districts shared with ``wells.csv``."""

from __future__ import annotations

import difflib
import json
import re
from dataclasses import dataclass
from pathlib import Path
from typing import Any

import numpy as np
import pandas as pd
import shapely

import engine.scenario.city_inputs as city_inputs
import engine.scenario.geometry as geometry
from engine.scenario.cells import (
    MAX_ID_CHARS,
    KEEP,
    MAX_BUILDING_DEMAND_MWH_PER_A,
    MAX_DISTRICT_DEMAND_MWH_PER_A,
    MAX_HEAT_DENSITY_MWH_PER_KM2,
    Column,
    check_unique,
    parse_table,
    report_rows,
)
from engine.scenario.defaults import cell_default
from engine.scenario.files import BUILDINGS_FILE, DISTRICT_LAYER_FILES, DISTRICTS_FILE
from engine.scenario.tables import Report, Table, close_names, printable, read_text


def _district_default(field: str):
    """The default of a blank cell of ``field`` in districts.geojson (engine.scenario.defaults)."""
    return cell_default(DISTRICTS_FILE, field)


def _building_default(field: str):
    """The default of a blank cell of ``field`` in buildings.csv (engine.scenario.defaults)."""
    return cell_default(BUILDINGS_FILE, field)


DISTRICT_ID_PATTERN = re.compile(r"^[A-Za-z0-9_-]+$")

OVERLAP_TOLERANCE = 0.01
"""Share of the smaller district's area two district polygons may overlap by (slivers from digitising)."""

# ============================================================================= districts.geojson
DISTRICT_PROPERTIES = (
    Column("district_id", "text", in_header=False),
    Column("name", "text", in_header=False, default=KEEP),
    Column("heat_demand_mwh_per_a", in_header=False, low=0),
    Column("cooling_demand_mwh_per_a", in_header=False, default=_district_default("cooling_demand_mwh_per_a"), low=0),
    Column("supply_temp_c", in_header=False, low=25, high=130),
    Column("hot_water_share", in_header=False, default=_district_default("hot_water_share"), low=0, high=1),
    Column("hot_water_temp_c", in_header=False, default=_district_default("hot_water_temp_c"), low=30, high=95),
    Column("network_available", "bool", in_header=False, default=_district_default("network_available")),
    Column(
        "network_connection_limit_kw",
        in_header=False,
        default=_district_default("network_connection_limit_kw"),
        low=0,
        allow_inf=True,
    ),
    # street (trench) length a network would follow [m]: optional, only for the linear heat density screening
    Column("street_length_m", in_header=False, default=KEEP, low=0, low_open=True),
)
DISTRICT_COLUMNS = tuple(spec.name for spec in DISTRICT_PROPERTIES) + ("geometry",)
_WGS84_NAMES = ("crs84", "4326")


@dataclass
class Districts:
    table: Table
    frame: pd.DataFrame
    geometries: list[Any]
    shapes: list[Any]

    @property
    def ids(self) -> list[str]:
        return list(self.frame["district_id"])

    @property
    def unusable(self) -> int:
        return sum(shape is None for shape in self.shapes)


class _JsonObject(dict):
    """A JSON object that remembers the keys it held more than once (plain json keeps the last silently)."""

    repeated: tuple = ()

    @classmethod
    def from_pairs(cls, pairs: list) -> "_JsonObject":
        obj = cls(pairs)
        if len(obj) < len(pairs):
            seen: set = set()
            obj.repeated = tuple(dict.fromkeys(k for k, _ in pairs if k in seen or seen.add(k)))
        return obj


def _property_text(value: Any) -> str:
    if value is None:
        return ""
    if isinstance(value, bool):
        return "true" if value else "false"
    if isinstance(value, float):
        return repr(value)
    return str(value).strip()


def _feature_collection(report: Report, data: Any) -> list | None:
    """The features of a FeatureCollection, or None after reporting why there are none."""
    if not isinstance(data, dict) or data.get("type") != "FeatureCollection":
        got = data.get("type") if isinstance(data, dict) else type(data).__name__
        report(DISTRICTS_FILE, None, None, f"must be a GeoJSON FeatureCollection, got {got!r}")
        return None
    crs = data.get("crs")
    if crs is not None:
        name = json.dumps(crs).lower()
        if not any(token in name for token in _WGS84_NAMES):
            report(
                DISTRICTS_FILE,
                None,
                "crs",
                f"declares the coordinate system {_crs_name(crs)!r}; "
                "GeoJSON must be WGS 84 longitude/latitude (EPSG:4326): reproject the layer when exporting",
            )
    features = data.get("features")
    if not isinstance(features, list) or not features:
        report(DISTRICTS_FILE, None, "features", "holds no features; each district needs one polygon feature")
        return None
    return features


def _crs_name(crs: Any) -> str:
    if isinstance(crs, dict) and isinstance(crs.get("properties"), dict):
        return str(crs["properties"].get("name", crs))
    return str(crs)


def _district_table(report: Report, features: list, file: str = DISTRICTS_FILE) -> tuple[Table, list[Any]]:
    """Properties of the usable features as a text table, with their geometries (``file``: the layer's name)."""
    known = [spec.name for spec in DISTRICT_PROPERTIES]
    columns: dict[str, list[str]] = {name: [] for name in known}
    rows: list[int] = []
    labels: list[str] = []
    geometries: list[Any] = []
    unknown_seen: dict[str, list[int]] = {}
    for number, feature in enumerate(features, start=1):
        if not isinstance(feature, dict) or feature.get("type") != "Feature":
            report(file, number, None, "is not a GeoJSON Feature")
            continue
        properties = feature.get("properties")
        if not isinstance(properties, dict) or not properties:
            report(
                file,
                number,
                None,
                "has no properties; each district needs district_id, heat_demand_mwh_per_a and supply_temp_c",
            )
            continue
        for key in getattr(properties, "repeated", ()):
            report(
                file,
                number,
                key,
                "appears more than once in this feature's properties (the last value would silently win); keep one",
            )
        for key in properties:
            if key not in known and not str(key).lower().startswith("note"):
                unknown_seen.setdefault(key, []).append(number)
        for name in known:
            columns[name].append(_property_text(properties.get(name)))
        district_id = columns["district_id"][-1]
        rows.append(number)
        labels.append(f"district '{district_id}': " if district_id else "")
        geometries.append(feature.get("geometry"))
    for key, numbers in unknown_seen.items():
        close = difflib.get_close_matches(key, known, n=1, cutoff=0.6)
        hint = f"did you mean '{close[0]}'? " if close else ""
        report(
            file,
            numbers[0],
            key,
            f"unknown property (in {len(numbers)} feature(s)); {hint}known properties: {', '.join(known)} "
            "(extra properties are allowed only when their name starts with 'note')",
        )
    table = Table(
        file,
        pd.DataFrame(columns, dtype=str),
        rows,
        labels,
        blank_text="is missing or null",
        item_word="features",
    )
    return table, geometries


def _check_district_geometries(report: Report, table: Table, geometries: list[Any]) -> list[Any]:
    """Shapes of the usable polygons (None for the others, which are reported)."""
    shapes = []
    for index, shape in enumerate(geometries):
        problems = geometry.geometry_problems(shape)
        row, prefix = table.place(index)
        for message in problems:
            report(table.file, row, "geometry", prefix + message)
        shapes.append(None if problems else geometry.to_shape(shape))
    return shapes


def _check_district_ids(report: Report, table: Table, frame: pd.DataFrame) -> None:
    # non-ASCII ids are reported by the text rule of engine.scenario.cells already
    bad = np.array([bool(v) and v.isascii() and len(v) <= MAX_ID_CHARS and not DISTRICT_ID_PATTERN.match(v)
                    for v in frame["district_id"]], dtype=bool)
    report_rows(
        report,
        table,
        "district_id",
        bad,
        lambda i: f"'{printable(frame['district_id'].iloc[i])}' may hold only letters, digits, '_' and '-' (ASCII: "
        f"A-Z, a-z, 0-9){_first_bad_character(frame['district_id'].iloc[i])}",
    )
    check_unique(report, table, list(frame["district_id"]), "district_id", "district_id '{}'")


def _first_bad_character(value: str) -> str:
    for character in value:
        if not re.fullmatch(r"[A-Za-z0-9_-]", character):
            kind = "a non-ASCII letter" if character.isalpha() else "not allowed"
            return f"; '{character}' is {kind} (write e.g. 'ue' for 'ü')" if character.isalpha() else \
                f"; '{printable(character)}' is {kind}"
    return ""


def _check_district_overlaps(report: Report, table: Table, frame: pd.DataFrame, geometries: list,
                             shapes: list) -> None:
    """Two district polygons that overlap by more than :data:`OVERLAP_TOLERANCE` of the smaller one, with the
    overlap's area (a building in the overlap would count for one district only)."""
    usable = [k for k, shape in enumerate(shapes) if shape is not None and shape.area > 0]
    if len(usable) < 2:
        return
    tree = shapely.STRtree([shapes[k] for k in usable])
    pairs = tree.query([shapes[k] for k in usable], predicate="intersects")
    ids = frame["district_id"].tolist()
    for a, b in zip(*pairs):
        if a >= b:
            continue
        first, second = usable[a], usable[b]
        overlap = shapes[first].intersection(shapes[second]).area
        smaller = min(shapes[first].area, shapes[second].area)
        if overlap <= OVERLAP_TOLERANCE * smaller:
            continue
        km2 = overlap / shapes[second].area * geometry.area_km2(geometries[second])
        row, prefix = table.place(second)
        report(
            table.file,
            row,
            None,
            f"{prefix or f'district {printable(ids[second])!r}: '}overlaps district '{printable(ids[first])}' by "
            f"{km2:.3g} km² ({overlap / smaller:.0%} of the smaller one); district polygons must not overlap by "
            f"more than {OVERLAP_TOLERANCE:.0%} (heat demand and buildings in the overlap would count for one of "
            "them only): correct the boundaries",
        )


def _check_district_network(report: Report, table: Table, frame: pd.DataFrame) -> None:
    """A connection limit without a network is an error; a network with a limit of 0 kW cannot be used (warning).
    A blank limit means no limit (engine.scenario.defaults)."""
    limit = frame["network_connection_limit_kw"].to_numpy(dtype=float)
    available = frame["network_available"].to_numpy(dtype=bool)
    with np.errstate(invalid="ignore"):
        stated = np.isfinite(limit) & (limit > 0)
        unusable = available & (limit == 0)
    conflict = stated & ~available
    report_rows(
        report,
        table,
        "network_connection_limit_kw",
        unusable,
        lambda i: "is 0 kW while network_available is true, so the district cannot draw from the network; "
        "state the limit, leave it blank for no limit, or set network_available to false",
        "warning",
    )
    report_rows(
        report,
        table,
        "network_connection_limit_kw",
        conflict,
        lambda i: f"is {limit[i]:g} kW but network_available is false; set network_available to true or the limit to 0",
    )


def _check_district_units(report: Report, table: Table, frame: pd.DataFrame, geometries: list, shapes: list) -> None:
    """Demands that look like kWh written in an MWh column: too large in total or per km² of the polygon."""
    areas = np.array(
        [geometry.area_km2(g) if shape is not None else np.nan for g, shape in zip(geometries, shapes)], dtype=float
    )
    for column in ("heat_demand_mwh_per_a", "cooling_demand_mwh_per_a"):
        demand = frame[column].to_numpy(dtype=float)
        huge = demand > MAX_DISTRICT_DEMAND_MWH_PER_A
        report_rows(
            report,
            table,
            column,
            huge,
            lambda i: f"{demand[i]:.6g} MWh/a is more than 10 TWh/a for one district; looks like kWh instead of MWh",
        )
        with np.errstate(invalid="ignore", divide="ignore"):
            density = np.where(areas > 0, demand / areas, np.nan)
        dense = ~huge & (density > MAX_HEAT_DENSITY_MWH_PER_KM2)
        report_rows(
            report,
            table,
            column,
            dense,
            lambda i: f"{demand[i]:.6g} MWh/a on {areas[i]:.3g} km² is {density[i]:.3g} MWh per km², far above any "
            f"city (limit {MAX_HEAT_DENSITY_MWH_PER_KM2:.0e}); looks like kWh instead of MWh",
        )


def load_districts(folder: Path, report: Report, crs: str | None = None) -> Districts | None:
    """Districts from districts.geojson (WGS 84), or from a layer in another format or CRS
    (:func:`engine.scenario.city_inputs.district_features`); ``crs`` is ``[gis] crs`` of scenario.toml."""
    features, file, problems, notes = city_inputs.district_features(folder, crs)
    report.problems.extend(problems)
    report.notes.extend(notes)
    if problems:
        return None
    if features is not None:
        return _district_frame(report, features, file)
    if not (folder / DISTRICTS_FILE).exists() and file is None:
        others = sorted(p.name for p in folder.iterdir()) if folder.is_dir() else []
        close = close_names(DISTRICTS_FILE, others) or close_names("districts.gpkg", others)
        hint = f"; found {', '.join(repr(c) for c in close)}: rename it" if close else ""
        report(DISTRICTS_FILE, None, None, "required file is missing: give the districts as one layer, "
               f"{', '.join(DISTRICT_LAYER_FILES)} (docs/input_format.md){hint}")
        return None
    text = read_text(folder, DISTRICTS_FILE, report, required=True)
    if text is None:
        return None
    try:
        data = json.loads(text, object_pairs_hook=_JsonObject.from_pairs)
    except (json.JSONDecodeError, RecursionError) as error:
        if isinstance(error, RecursionError):
            detail = "its objects are nested too deeply"
        else:
            detail = f"{error.msg} at line {error.lineno}, column {error.colno}"
        start = text.lstrip()[:200].lower()
        if start.startswith("<"):
            fix = "it looks like XML (KML or GML): export the layer as GeoJSON"
        elif start.startswith(("shape", "\"wkt", "polygon", "multipolygon")):
            fix = "it looks like a table or WKT text: export the layer as GeoJSON"
        else:
            fix = "the file may be cut short or edited by hand; export the layer as GeoJSON again"
        report(DISTRICTS_FILE, None, None, f"is not valid JSON ({detail}); {fix}")
        return None
    features = _feature_collection(report, data)
    if features is None:
        return None
    return _district_frame(report, features, DISTRICTS_FILE)


def _district_frame(report: Report, features: list, file: str) -> Districts:
    """The checked districts of a list of GeoJSON features in WGS 84."""
    table, geometries = _district_table(report, features, file)
    frame = parse_table(report, table, DISTRICT_PROPERTIES)
    frame["name"] = [name or district_id for name, district_id in zip(frame["name"], frame["district_id"])]
    shapes = _check_district_geometries(report, table, geometries)
    _check_district_ids(report, table, frame)
    _check_district_network(report, table, frame)
    _check_district_units(report, table, frame, geometries, shapes)
    _check_district_overlaps(report, table, frame, geometries, shapes)
    # Usable geometries keep only their type and coordinates, in that order, so that the same polygon written
    # with its keys in another order (or with a bbox) gives the same scenario and the same input hash.
    geometries = [
        {"type": g["type"], "coordinates": g["coordinates"]} if shape is not None else g
        for g, shape in zip(geometries, shapes)
    ]
    frame["geometry"] = geometries
    return Districts(table, frame, geometries, shapes)


# ============================================================================= points: wells and buildings
def check_points(report: Report, table: Table, frame: pd.DataFrame, lon: str, lat: str) -> np.ndarray:
    """Positions that are not plausible WGS 84 lon/lat; returns the mask of usable positions."""
    lons = frame[lon].to_numpy(dtype=float)
    lats = frame[lat].to_numpy(dtype=float)
    usable = np.isfinite(lons) & np.isfinite(lats)
    messages = [geometry.coordinate_problem(x, y) if ok else None for x, y, ok in zip(lons, lats, usable)]
    bad = np.array([m is not None for m in messages], dtype=bool)
    with np.errstate(invalid="ignore"):
        # A latitude beyond +-90 (swapped axes) belongs to the lat column; projected metres to the pair, under lon.
        lat_only = (np.abs(lats) > 90) & (np.abs(lats) <= geometry.PROJECTED_THRESHOLD) & (np.abs(lons) <= 180)
    report_rows(report, table, lon, bad & ~lat_only, lambda i: messages[i])
    report_rows(report, table, lat, bad & lat_only, lambda i: messages[i])
    return usable & ~bad


def outside_note(districts: Districts) -> str:
    if districts.unusable:
        return f" ({districts.unusable} district polygon(s) could not be used; fix districts.geojson first)"
    return ""


def swapped_hints(districts: Districts, lons: np.ndarray, lats: np.ndarray, outside: np.ndarray) -> list[str]:
    """For points outside every district: a hint when the point, read the other way round, lies in one."""
    hints = [""] * len(lons)
    if not outside.any():
        return hints
    with np.errstate(invalid="ignore"):
        plausible = outside & (np.abs(lons) <= 90)
    swapped = np.full(len(lons), -1)
    if plausible.any():
        swapped[plausible] = geometry.containing_index(districts.shapes, lats[plausible], lons[plausible])
    for i in np.flatnonzero(swapped >= 0):
        hints[i] = (
            f"; longitude and latitude look swapped: read as ({lats[i]:g}, {lons[i]:g}) the point lies in district "
            f"'{districts.ids[swapped[i]]}' (the order is lon, then lat)"
        )
    return hints


# ----------------------------------------------------------------------------- buildings.csv
BUILDING_COLUMNS = (
    Column("building_id", "text"),
    Column("lon"),
    Column("lat"),
    Column("heat_demand_mwh_per_a", in_header=False, default=KEEP, low=0),
    Column("cooling_demand_mwh_per_a", in_header=False, default=_building_default("cooling_demand_mwh_per_a"), low=0),
    Column("use", "text", in_header=False, default=KEEP),
    Column("construction_year", in_header=False, default=KEEP, low=1000, high=2200),
    Column("construction_period", "text", in_header=False, default=KEEP),
    Column("heated_area_m2", in_header=False, default=KEEP, low=0),
    Column("footprint_area_m2", in_header=False, default=KEEP, low=0),
    Column("storeys", in_header=False, default=KEEP, low=0, high=200),
)
"""Metered demand, or the building stock (use, period, area) from which the typology table gives it; a blank
heat demand is an error unless the stock columns are there (engine.scenario.city_inputs.building_columns)."""


def _building_demand(folder: Path, report: Report, table: Table, frame: pd.DataFrame) -> None:
    """Blank heat demand from the typology table where the building-stock columns describe the building."""
    if not any(name in table.cells.columns for name in city_inputs.BUILDING_STOCK_COLUMNS):
        return
    demand, problems = city_inputs.typology_demand_for(folder, frame, table.file, table.rows)
    report.problems.extend(problems)
    if demand is not None:
        frame["heat_demand_mwh_per_a"] = demand


def _check_building_units(report: Report, table: Table, frame: pd.DataFrame) -> None:
    for column in ("heat_demand_mwh_per_a", "cooling_demand_mwh_per_a"):
        demand = frame[column].to_numpy(dtype=float)
        with np.errstate(invalid="ignore"):
            huge = demand > MAX_BUILDING_DEMAND_MWH_PER_A
        report_rows(
            report,
            table,
            column,
            huge,
            lambda i: f"{demand[i]:.6g} MWh/a is more than 200 GWh/a for one building; looks like kWh instead of MWh",
        )


def load_buildings(
    folder: Path, report: Report, districts: Districts | None, crs: str | None = None
) -> pd.DataFrame | None:
    """Buildings (buildings.csv or a layer) with the index of the district containing them (``district_index``)."""
    loaded = city_inputs.read_point_table(
        folder, "buildings", city_inputs.building_columns(BUILDING_COLUMNS), report, crs
    )
    if loaded is None:
        return None
    table, frame = loaded
    _building_demand(folder, report, table, frame)
    check_unique(report, table, list(frame["building_id"]), "building_id", "building_id '{}'")
    usable = check_points(report, table, frame, "lon", "lat")
    _check_building_units(report, table, frame)
    if districts is None:
        return None
    found = geometry.containing_index(
        districts.shapes, frame["lon"].to_numpy(dtype=float), frame["lat"].to_numpy(dtype=float)
    )
    note = outside_note(districts)
    lons, lats = frame["lon"].to_numpy(dtype=float), frame["lat"].to_numpy(dtype=float)
    outside = usable & (found < 0)
    swapped = swapped_hints(districts, lons, lats, outside)
    report_rows(
        report,
        table,
        None,
        outside,
        lambda i: f"building '{printable(frame['building_id'].iloc[i])}' at ({lons[i]:g}, {lats[i]:g}) lies outside "
        "every district" + (swapped[i] or f"; move it or extend a district polygon{note}"),
    )
    _check_buildings_in_overlaps(report, table, frame, districts, found, usable)
    frame["district_index"] = found
    return frame


def _check_buildings_in_overlaps(report, table, frame, districts: Districts, found: np.ndarray,
                                 usable: np.ndarray) -> None:
    """A building inside two districts' polygons counts for the first one only: say so."""
    lons, lats = frame["lon"].to_numpy(dtype=float), frame["lat"].to_numpy(dtype=float)
    ok = usable & (found >= 0)
    second = np.full(len(frame), -1, dtype=int)
    for index, shape in enumerate(districts.shapes):
        if shape is None:
            continue
        todo = ok & (second < 0) & (found != index)
        if not todo.any():
            continue
        inside = np.zeros(len(frame), dtype=bool)
        inside[todo] = shapely.contains_xy(shape, lons[todo], lats[todo])  # interiors: a shared edge is no overlap
        second[inside & (found != index)] = index
    ids = districts.ids
    report_rows(
        report,
        table,
        None,
        second >= 0,
        lambda i: f"building '{printable(frame['building_id'].iloc[i])}' lies in the overlap of districts "
        f"'{printable(ids[found[i]])}' and '{printable(ids[second[i]])}'; it counts for "
        f"'{printable(ids[found[i]])}' only: correct the district boundaries",
    )


def add_buildings(districts: pd.DataFrame, buildings: pd.DataFrame | None) -> None:
    if buildings is None or buildings.empty:
        return
    inside = buildings[buildings["district_index"] >= 0]
    for column in ("heat_demand_mwh_per_a", "cooling_demand_mwh_per_a"):
        sums = inside.groupby("district_index")[column].sum()
        added = np.zeros(len(districts))
        added[sums.index.to_numpy(dtype=int)] = sums.to_numpy(dtype=float)
        districts[column] = districts[column].to_numpy(dtype=float) + added
