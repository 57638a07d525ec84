"""A planner's own files in the scenario folder: GIS layers in any CRS, x/y tables, an EPW file, the building stock.

The scenario reader calls these functions at a few points; each takes plain inputs and returns plain outputs
with :class:`~engine.scenario.problems.Problem` records, so the reader's own checks (ids, ranges, geometry,
points inside districts) run unchanged on what they return:

* :func:`scenario_crs`: the CRS declared once in scenario.toml as ``[gis] crs = "EPSG:NNNN"``;
* :func:`district_features`: districts from ``districts.gpkg``, ``districts.zip`` (Shapefile) or a
  ``districts.geojson`` in another CRS, as WGS 84 GeoJSON features; None when the plain WGS 84 GeoJSON path
  of the reader applies;
* :func:`point_layer_cells`: wells or buildings given as a point (or footprint) layer, as text cells with
  ``lon`` and ``lat`` columns, as if read from the CSV;
* :func:`project_xy_cells`: CSV columns ``x``, ``y`` (and ``reinjection_x``, ``reinjection_y``) in the
  declared CRS turned into ``lon``, ``lat`` (and ``reinjection_lon``, ``reinjection_lat``);
* :func:`weather_temperature`: ``outdoor_temp_c`` from ``weather.epw`` when hourly.csv omits it;
* :func:`typology_demand_for`: annual heat demand of buildings given by use, construction period and area;
* :func:`read_point_table`: the table of wells or buildings from whichever of these it comes.
"""

from __future__ import annotations

import dataclasses
import json
import tomllib
from pathlib import Path

import numpy as np
import pandas as pd

from engine.physics import typology
from engine.scenario import epw, gis
from engine.scenario.cells import REQUIRED, Column, check_header, parse_table
from engine.scenario.problems import Problem
from engine.scenario.tables import Report, Table, read_csv

SCENARIO_FILE = "scenario.toml"
GIS_SECTION = "gis"
XY_PAIRS = (("x", "y", "lon", "lat"), ("reinjection_x", "reinjection_y", "reinjection_lon", "reinjection_lat"))
BUILDING_STOCK_COLUMNS = (
    "use", "construction_year", "construction_period", "heated_area_m2", "footprint_area_m2", "storeys",
)
"""buildings.csv columns that let the typology table give a building's demand."""


# ============================================================================= the declared CRS
def scenario_crs(folder: Path) -> tuple[str | None, list[Problem]]:
    """``[gis] crs`` of scenario.toml (None when absent); an unknown CRS is a problem on ``gis.crs``.

    A scenario.toml that does not parse gives (None, []): the settings reader reports that.
    """
    try:
        data = tomllib.loads((Path(folder) / SCENARIO_FILE).read_text(encoding="utf-8"))
    except (OSError, UnicodeDecodeError, RecursionError, tomllib.TOMLDecodeError):  # the reader reports these
        return None, []
    section = data.get(GIS_SECTION)
    if not isinstance(section, dict) or "crs" not in section:
        return None, []
    _, why = gis.parse_crs(section["crs"])
    if why:
        return None, [Problem(SCENARIO_FILE, None, "gis.crs", why)]
    return section["crs"].strip(), []


# ============================================================================= districts
def _geojson_is_plain(path: Path) -> bool:
    """A districts.geojson the reader's own path reads: no crs member, or one naming WGS 84."""
    has, member = gis.geojson_crs_member(path)
    if not has:
        return True
    text = json.dumps(member).lower()
    return "crs84" in text or "4326" in text


def district_features(
    folder: Path, crs: str | None, stem: str = "districts"
) -> tuple[list[dict] | None, str | None, list[Problem], list[str]]:
    """District polygons from a GIS layer, reprojected to WGS 84.

    Returns
    -------
    (features, file, problems, notes)
        ``features`` is None when the folder holds a plain WGS 84 ``districts.geojson`` without a projected
        CRS (the reader parses it itself), or when the layer was refused (then ``problems`` says why).
        ``file`` is the name of the layer file used.
    """
    found = gis.find_layer(folder, stem)
    if len(found) > 1:
        names = ", ".join(p.name for p in found)
        return None, found[0].name, [Problem(
            found[0].name, None, None, f"the folder holds districts in {len(found)} files ({names}); keep one",
        )], []
    if not found:
        return None, None, [], []
    path = found[0]
    if path.suffix.lower() == ".geojson" and _geojson_is_plain(path) and crs is None:
        return None, path.name, [], []
    layer, problems = gis.read_layer(path, kind="polygon", fallback_crs=crs)
    if layer is None:
        return None, path.name, problems, []
    if layer.source_is_wgs84 and path.suffix.lower() == ".geojson":
        return None, path.name, [], []  # plain WGS 84 after all: the reader's own path keeps its detailed checks
    notes = [f"{path.name}: read in {layer.crs}, reprojected to WGS 84"] + layer.notes
    return layer.features(), path.name, [], notes


# ============================================================================= wells and buildings
def _cell(value) -> str:
    if value is None:
        return ""
    if isinstance(value, bool):
        return "true" if value else "false"
    if isinstance(value, float):
        return "" if np.isnan(value) else repr(value)
    return str(value).strip()


def point_layer_cells(
    folder: Path, stem: str, crs: str | None
) -> tuple[pd.DataFrame | None, list[int], str | None, list[Problem]]:
    """Wells or buildings from ``{stem}.geojson``/``.gpkg``/``.zip`` as text cells with ``lon``/``lat`` columns.

    Footprints (polygons) are placed at a point inside them, and their geodesic area becomes
    ``footprint_area_m2`` where the layer has no such field.

    Returns
    -------
    (cells, rows, file, problems)
        ``cells`` None when there is no layer (or it was refused); ``rows`` are the feature numbers.
    """
    found = gis.find_layer(folder, stem)
    if not found:
        return None, [], None, []
    csv_file = Path(folder) / f"{stem}.csv"
    if len(found) > 1 or csv_file.exists():
        names = ", ".join(p.name for p in found + ([csv_file] if csv_file.exists() else []))
        return None, [], found[0].name, [Problem(found[0].name, None, None, f"{stem} are given twice ({names}); keep one")]
    path = found[0]
    kind = "point" if stem == "wells" else "point_or_polygon"
    layer, problems = gis.read_layer(path, kind=kind, fallback_crs=crs)
    if layer is None:
        return None, [], path.name, problems
    lon, lat = layer.lon_lat()
    columns = {name: [_cell(p.get(name)) for p in layer.properties] for name in layer.fields}
    columns["lon"] = [repr(float(v)) for v in lon]
    columns["lat"] = [repr(float(v)) for v in lat]
    if stem == "buildings" and "footprint_area_m2" not in columns and "Point" not in layer.geometry_types:
        columns["footprint_area_m2"] = [repr(float(v)) for v in layer.areas_m2()]
    return pd.DataFrame(columns, dtype=str), layer.rows, path.name, []


def project_xy_cells(cells: pd.DataFrame, file: str, rows: list[int], crs: str | None) -> tuple[pd.DataFrame, list[Problem]]:
    """Replace ``x``/``y`` columns (in the declared CRS) by ``lon``/``lat`` text columns in WGS 84.

    Cells are the reader's stripped text; a blank pair stays blank, a half-blank or non-numeric pair is a
    problem on its row. Without ``x`` and ``y`` columns the cells come back unchanged.
    """
    problems: list[Problem] = []
    pairs = [p for p in XY_PAIRS if p[0] in cells.columns or p[1] in cells.columns]
    if not pairs:
        return cells, problems
    if crs is None:
        return cells, [Problem(
            file, 1, pairs[0][0],
            "gives x and y but scenario.toml declares no coordinate system: add [gis] crs = \"EPSG:NNNN\" (the CRS "
            "of the x and y columns), or give lon and lat in WGS 84",
        )]
    parsed, _ = gis.parse_crs(crs)
    out = cells.copy()
    for x_name, y_name, lon_name, lat_name in pairs:
        if x_name not in cells.columns or y_name not in cells.columns:
            missing = y_name if x_name in cells.columns else x_name
            problems.append(Problem(file, 1, missing, f"column is missing: give both {x_name} and {y_name}"))
            continue
        if lon_name in cells.columns or lat_name in cells.columns:
            problems.append(Problem(file, 1, x_name, f"give either {x_name}/{y_name} or {lon_name}/{lat_name}, not both"))
            continue
        xs = pd.to_numeric(cells[x_name], errors="coerce").to_numpy(dtype=float)
        ys = pd.to_numeric(cells[y_name], errors="coerce").to_numpy(dtype=float)
        blank = (cells[x_name] == "").to_numpy() & (cells[y_name] == "").to_numpy()
        bad = ~blank & ~(np.isfinite(xs) & np.isfinite(ys))
        for i in np.flatnonzero(bad)[:5]:
            problems.append(Problem(
                file, rows[i], x_name,
                f"'{cells[x_name].iloc[i]}', '{cells[y_name].iloc[i]}' is not a pair of numbers in {crs}",
            ))
        ok = ~blank & ~bad
        lon = np.full(len(xs), np.nan)
        lat = np.full(len(xs), np.nan)
        if ok.any():
            lon[ok], lat[ok] = gis.to_wgs84(xs[ok], ys[ok], parsed)
        out[lon_name] = ["" if not np.isfinite(v) else repr(float(v)) for v in lon]
        out[lat_name] = ["" if not np.isfinite(v) else repr(float(v)) for v in lat]
        out = out.drop(columns=[x_name, y_name])
    return out, problems


# ============================================================================= weather
def weather_temperature(folder: Path, n_rows: int | None) -> tuple[np.ndarray | None, str | None, list[Problem]]:
    """Dry bulb of ``weather.epw`` [°C] in file order, the station's description, and problems.

    ``n_rows`` is hourly.csv's row count (None when unknown); the EPW file must have as many rows.
    """
    path = Path(folder) / epw.EPW_FILE
    if not path.is_file():
        return None, None, []
    weather, problems = epw.read_epw(path)
    if weather is None:
        return None, None, problems
    if n_rows is not None and weather.n_hours != n_rows:
        return None, None, [Problem(
            epw.EPW_FILE, None, None,
            f"has {weather.n_hours} hours but hourly.csv has {n_rows} rows: they must cover the same year, hour by hour",
        )]
    return weather.dry_bulb_c, weather.location.describe(), []


# ============================================================================= building stock
def typology_demand_for(
    folder: Path, buildings: pd.DataFrame, file: str, rows: list[int]
) -> tuple[np.ndarray | None, list[Problem]]:
    """Annual heat demand [MWh/a] of each building: metered where ``heat_demand_mwh_per_a`` is given, else from
    the typology table (the folder's ``building_typology.csv``, or the shipped one).

    Returns None and no problems when the table has no building-stock columns (nothing to do).
    """
    if not any(c in buildings.columns for c in BUILDING_STOCK_COLUMNS):
        return None, []
    own = Path(folder) / typology.TYPOLOGY_FILE
    table, problems = typology.read_typology(own if own.is_file() else None)
    if table is None:
        return None, problems
    demand = typology.building_demand(buildings, table)
    unknown = np.flatnonzero((demand["demand_source"] == "unknown").to_numpy())
    for i in unknown[:5]:
        problems.append(Problem(
            file, rows[i], "heat_demand_mwh_per_a",
            "is blank and the building has no typology match: give the demand, or use, construction_year (or "
            "construction_period) and heated_area_m2 (or footprint_area_m2 and storeys) matching a row of "
            f"{typology.TYPOLOGY_FILE}",
        ))
    if len(unknown) > 5:
        problems.append(Problem(file, None, "heat_demand_mwh_per_a", f"{len(unknown) - 5} more building(s) without demand"))
    return demand["heat_demand_mwh_per_a"].to_numpy(dtype=float), problems


# ============================================================================= the reader's entry for point tables
def point_files_exist(folder: Path, stem: str) -> bool:
    """Whether the folder gives ``stem`` (wells, buildings) as a CSV or as a layer."""
    return (Path(folder) / f"{stem}.csv").exists() or bool(gis.find_layer(folder, stem))


def read_point_table(
    folder: Path, stem: str, specs, report: Report, crs: str | None
) -> tuple[Table, pd.DataFrame] | None:
    """Wells or buildings from ``{stem}.csv`` or a point layer, with x/y columns in the declared CRS turned into
    lon/lat, then checked like any table (header, cells). ``specs`` is a tuple of columns or a callable taking
    the header and returning one."""
    cells, rows, file, problems = point_layer_cells(folder, stem, crs)
    report.problems.extend(problems)
    if problems:
        return None
    if cells is not None:
        table = Table(file, cells, rows, item_word="features")
        report.notes.append(f"{file}: reprojected to WGS 84")
    else:
        table = read_csv(folder, f"{stem}.csv", report, required=False)
        if table is None:
            return None
    table.cells, problems = project_xy_cells(table.cells, table.file, table.rows, crs)
    report.problems.extend(problems)
    if problems:
        return None
    if callable(specs):
        specs = specs(list(table.cells.columns))
    check_header(report, table, specs)
    return table, parse_table(report, table, specs)


def building_columns(columns: tuple[Column, ...]):
    """A callable for :func:`read_point_table`: ``heat_demand_mwh_per_a`` is a required column unless the
    building-stock columns can give the demand (then a blank cell asks the typology table)."""
    def choose(header: list[str]) -> tuple[Column, ...]:
        if any(name in header for name in BUILDING_STOCK_COLUMNS):
            return columns
        return tuple(
            dataclasses.replace(spec, in_header=True, default=REQUIRED) if spec.name == "heat_demand_mwh_per_a" else spec for spec in columns
        )

    return choose
