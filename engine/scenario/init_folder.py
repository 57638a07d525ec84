"""Start a scenario folder for a planner's own city from GIS layers, a weather file and a template.

:func:`init_scenario_folder` is ``python -m engine init NEW_DIR --districts LAYER ...``
(:mod:`engine.cli.init` parses the arguments). It writes a complete folder in the layout of
``docs/input_format.md``:

* ``districts.geojson`` in WGS 84 from the districts layer (any format and CRS :mod:`engine.scenario.gis`
  reads), with ids, names and demand from the fields the user names;
* ``buildings.csv`` from a buildings layer (points or footprints), with the annual demand of each building:
  metered where the layer gives ``heat_demand_mwh_per_a``, else from the typology table
  (:mod:`engine.physics.typology`);
* ``hourly.csv``: the template's hourly prices and CO2 factors; with an EPW file, the file is copied as
  ``weather.epw`` and hourly.csv leaves out ``outdoor_temp_c``, so the reader takes the dry bulb from it;
* ``scenario.toml``, ``technologies.csv`` and ``cost_cases.toml`` copied from the template.

Every default it takes is listed in :attr:`InitResult.assumptions` and printed, so the planner sees what to
replace. The folder is then checked with :func:`engine.scenario.folder.validate_scenario`. The template's
prices, costs and technologies are those of the invented demo city unless another template folder is named:
they are placeholders to replace before any decision is drawn from the results.
"""

from __future__ import annotations

import json
import re
import shutil
import tempfile
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np
import pandas as pd

from engine.physics import typology
from engine.scenario import epw, geometry, gis
from engine.scenario.problems import Problem
from engine.scenario.folder import resolve_scenario_path, validate_scenario

DEFAULT_SUPPLY_TEMP_C = 70.0
"""Space-heating supply temperature given to districts without one [°C]; common practice for an existing stock of
radiator-heated buildings (from memory), to be replaced by the planner's own figure."""

COPIED_FILES = ("technologies.csv", "cost_cases.toml")
DISTRICT_FIELDS = (
    "cooling_demand_mwh_per_a",
    "supply_temp_c",
    "hot_water_share",
    "network_available",
    "network_connection_limit_kw",
)
"""District properties carried over from the layer when a field of that exact name exists."""

BUILDING_FIELDS = ("use", "construction_year", "construction_period", "heated_area_m2", "footprint_area_m2", "storeys")
FEB_28_FIRST_HOUR = 58 * 24
"""Index of the first hour of 28 February in a year starting on 1 January."""


@dataclass
class InitResult:
    """What :func:`init_scenario_folder` did: the folder, what it assumed, and what is still wrong."""

    folder: Path
    assumptions: list[str] = field(default_factory=list)
    problems: list[Problem] = field(default_factory=list)
    written: bool = False


def _text(value) -> str:
    return gis.id_text(value)


def _number(value) -> float:
    if value is None or value == "":
        return float("nan")
    try:
        return float(value)
    except (TypeError, ValueError):
        return float("nan")


def _pick_field(layer: gis.Layer, given: str | None, candidates: tuple[str, ...]) -> str | None:
    if given:
        return given
    for name in candidates:
        if name in layer.fields:
            return name
    return None


def _missing_field(layer: gis.Layer, name: str, option: str) -> Problem:
    return Problem(
        layer.file, None, name,
        f"the layer has no field '{name}' (its fields: {', '.join(layer.fields) or 'none'}); name another with {option}",
    )


# ============================================================================= districts
def _district_features(
    layer: gis.Layer, id_field: str | None, name_field: str | None, demand_field: str | None,
    has_buildings: bool, notes: list[str], problems: list[Problem],
) -> list[dict]:
    id_field = _pick_field(layer, id_field, ("district_id", "id"))
    if id_field is None:
        ids = [f"d{row:03d}" for row in layer.rows]
        notes.append("districts: the layer has no id field; ids d001, d002, ... in feature order (--id-field F)")
    else:
        found = gis.check_id_field(layer, id_field, "district")
        if found:
            problems.extend(found)
            return []
        raw = [_text(p[id_field]) for p in layer.properties]
        ids = [re.sub(r"[^A-Za-z0-9_-]+", "_", value).strip("_") or f"d{row:03d}" for value, row in zip(raw, layer.rows)]
        changed = sum(a != b for a, b in zip(raw, ids))
        if changed:
            notes.append(f"districts: {changed} id(s) of field '{id_field}' rewritten to letters, digits, '_' and '-'")
        repeated = {i for i in ids if ids.count(i) > 1}
        for row, value in zip(layer.rows, ids):
            if value in repeated:
                problems.append(Problem(layer.file, row, id_field, f"id '{value}' is not unique once rewritten; rename it"))
    if name_field is not None and name_field not in layer.fields:
        problems.append(_missing_field(layer, name_field, "--name-field"))
        name_field = None
    name_field = _pick_field(layer, name_field, ("name",))
    demand_field = _pick_field(layer, demand_field, ("heat_demand_mwh_per_a",))
    if demand_field is not None and demand_field not in layer.fields:
        problems.append(_missing_field(layer, demand_field, "--demand-field"))
        return []
    if demand_field is None:
        if has_buildings:
            notes.append("districts: no demand field; district demand is the sum of its buildings")
        else:
            problems.append(Problem(
                layer.file, None, None,
                "gives no heat demand: name the field holding annual heat demand [MWh/a] with --demand-field, or give "
                "a buildings layer with --buildings",
            ))
            return []
    features = []
    defaults_used: dict[str, int] = {}
    for row, props, geo, district_id in zip(layer.rows, layer.properties, layer.geometries, ids):
        demand = 0.0
        if demand_field is not None:
            demand = _number(props.get(demand_field))
            if not np.isfinite(demand) or demand < 0:
                if has_buildings and props.get(demand_field) in (None, ""):
                    demand = 0.0
                else:
                    problems.append(Problem(
                        layer.file, row, demand_field,
                        f"'{props.get(demand_field)}' is not an annual heat demand >= 0 [MWh/a]",
                    ))
                    continue
        out = {
            "district_id": district_id,
            "name": _text(props.get(name_field)) if name_field else district_id,
            "heat_demand_mwh_per_a": demand,
        }
        for key in DISTRICT_FIELDS:
            if key in layer.fields and props.get(key) not in (None, ""):
                out[key] = props[key]
        if "supply_temp_c" not in out:
            out["supply_temp_c"] = DEFAULT_SUPPLY_TEMP_C
            defaults_used["supply_temp_c"] = defaults_used.get("supply_temp_c", 0) + 1
        features.append({"type": "Feature", "properties": out, "geometry": geo})
    if defaults_used.get("supply_temp_c"):
        notes.append(
            f"districts: supply_temp_c = {DEFAULT_SUPPLY_TEMP_C:g} °C for {defaults_used['supply_temp_c']} district(s) "
            "without one (common practice for radiator-heated existing buildings; replace with your own)"
        )
    notes.append(
        "districts: hot_water_share 0.15, no cooling demand and no heat network access unless the layer has the fields "
        "hot_water_share, cooling_demand_mwh_per_a, network_available, network_connection_limit_kw"
    )
    return features


# ============================================================================= buildings
def _buildings_table(
    layer: gis.Layer, districts: list[dict], table: pd.DataFrame, notes: list[str], problems: list[Problem]
) -> pd.DataFrame | None:
    id_field = _pick_field(layer, None, ("building_id", "id"))
    if id_field is None:
        ids = [f"b{row:05d}" for row in layer.rows]
        notes.append("buildings: the layer has no building_id field; ids b00001, ... in feature order")
    else:
        found = gis.check_id_field(layer, id_field, "building")
        if found:
            problems.extend(found)
            return None
        ids = [_text(p[id_field]) for p in layer.properties]
    lon, lat = layer.lon_lat()
    frame = pd.DataFrame({"building_id": ids, "lon": lon, "lat": lat})
    for name in BUILDING_FIELDS + ("heat_demand_mwh_per_a", "cooling_demand_mwh_per_a"):
        if name in layer.fields:
            values = [p.get(name) for p in layer.properties]
            if name in ("use", "construction_period"):
                frame[name] = [_text(v) for v in values]
            else:
                frame[name] = [_number(v) for v in values]
    if "footprint_area_m2" not in frame.columns and "Point" not in layer.geometry_types:
        frame["footprint_area_m2"] = layer.areas_m2()
        notes.append("buildings: footprint area from the polygons (geodesic area on the WGS 84 ellipsoid)")
    demand = typology.building_demand(frame, table)
    unknown = demand["demand_source"] == "unknown"
    for i in np.flatnonzero(unknown.to_numpy())[:10]:
        problems.append(Problem(
            layer.file, layer.rows[i], "heat_demand_mwh_per_a",
            f"building '{ids[i]}' has no metered demand and no typology match: give heat_demand_mwh_per_a, or use, "
            "construction_year (or construction_period) and heated_area_m2 (or footprint and storeys)",
        ))
    if unknown.sum() > 10:
        problems.append(Problem(layer.file, None, None, f"{int(unknown.sum()) - 10} more building(s) without demand"))
    counts = demand["demand_source"].value_counts()
    notes.append(
        f"buildings: {int(counts.get('metered', 0))} with metered demand, {int(counts.get('typology', 0))} from the "
        f"typology table (heated area = footprint x storeys x {typology.HEATED_AREA_RATIO:g} where not given; the "
        "table's values are from memory / common practice, see its note_source column)"
    )
    shapes = [geometry.to_shape(f["geometry"]) for f in districts]
    inside = geometry.containing_index(shapes, lon, lat) >= 0
    if (~inside).any():
        notes.append(f"buildings: {int((~inside).sum())} building(s) outside every district left out")
    out = pd.DataFrame(
        {
            "building_id": frame["building_id"],
            "lon": np.round(lon, 7),
            "lat": np.round(lat, 7),
            "heat_demand_mwh_per_a": np.round(demand["heat_demand_mwh_per_a"].to_numpy(dtype=float), 3),
            "cooling_demand_mwh_per_a": frame.get("cooling_demand_mwh_per_a", pd.Series(0.0, index=frame.index)).fillna(0.0),
            "note_demand_source": demand["demand_source"],
            "note_heated_area_m2": np.round(demand["heated_area_m2"].to_numpy(dtype=float), 1),
        }
    )
    for name in ("use", "construction_year", "construction_period"):
        if name in frame.columns:
            out[f"note_{name}"] = frame[name]
    return out[inside & ~unknown.to_numpy()]


# ============================================================================= hourly
def _fit_rows(hourly: pd.DataFrame, n: int, notes: list[str]) -> pd.DataFrame:
    """The template's hourly table at ``n`` rows: 28 February repeated for a leap year, 29 February dropped."""
    if len(hourly) == n:
        return hourly.reset_index(drop=True)
    day = slice(FEB_28_FIRST_HOUR, FEB_28_FIRST_HOUR + 24)
    if len(hourly) == 8760 and n == 8784:
        parts = [hourly.iloc[: day.stop], hourly.iloc[day], hourly.iloc[day.stop:]]
        notes.append("hourly.csv: leap-year weather; the template's prices of 28 February are repeated for 29 February")
    else:
        parts = [hourly.iloc[: day.stop], hourly.iloc[day.stop + 24:]]
        notes.append("hourly.csv: the template's 29 February is dropped to match the weather file's 8760 hours")
    out = pd.concat(parts, ignore_index=True)
    out["hour"] = np.arange(len(out))
    return out


def _hourly(template: Path, weather: epw.Weather | None, notes: list[str]) -> pd.DataFrame:
    hourly = pd.read_csv(template / "hourly.csv")
    if weather is None:
        notes.append(
            "hourly.csv: outdoor temperature copied from the template (an invented city's weather): give --weather "
            "FILE.epw for your own"
        )
        return hourly
    hourly = _fit_rows(hourly, weather.n_hours, notes).drop(columns=["outdoor_temp_c"])
    notes.append(f"outdoor temperature: weather.epw, {weather.location.describe()} (hourly.csv has no outdoor_temp_c)")
    if weather.filled_hours:
        notes.append(f"weather: {weather.filled_hours} missing hour(s) (code 99.9) filled by linear interpolation")
    return hourly


# ============================================================================= the folder
def _scenario_toml(template: Path, name: str) -> str:
    text = (template / "scenario.toml").read_text(encoding="utf-8")
    lines = [line for line in text.splitlines() if not (line.startswith("#") and "invented" in line.lower())]
    body = "\n".join(lines)
    body = re.sub(r'(?m)^name\s*=.*$', f"name = {json.dumps(name)}", body, count=1)
    head = (
        f"# Written by python -m engine init from the template {template.name}; settings, prices, CO2 factors and the\n"
        "# aquifer are the template's: replace them with your city's before drawing conclusions.\n"
    )
    return head + body.lstrip("\n") + "\n"


def init_scenario_folder(
    new_dir: str | Path,
    districts: str | Path,
    id_field: str | None = None,
    name_field: str | None = None,
    demand_field: str | None = None,
    crs: str | None = None,
    weather: str | Path | None = None,
    buildings: str | Path | None = None,
    template: str | Path = "demo",
    name: str | None = None,
) -> InitResult:
    """Write a scenario folder for a new city; see the module docstring.

    Parameters
    ----------
    new_dir : path
        Folder to create; it must not exist or be empty.
    districts : path
        Districts layer (GeoJSON, GeoPackage or zipped Shapefile; polygons).
    id_field, name_field, demand_field : str, optional
        Fields of the districts layer holding the id, the display name and the annual heat demand [MWh/a].
        Defaults: ``district_id`` or ``id``; ``name``; ``heat_demand_mwh_per_a``.
    crs : str, optional
        CRS of layers that declare none (``EPSG:25832``); a declared CRS always wins.
    weather : path, optional
        EPW file for the outdoor temperature.
    buildings : path, optional
        Buildings layer (points or footprints).
    template : path or "demo"
        Scenario folder whose settings, technologies, prices and cost cases are copied.
    name : str, optional
        Name of the run (defaults to the folder name).

    Returns
    -------
    InitResult
        ``written`` is False (and nothing is left on disk) when the inputs could not be read; otherwise the
        folder exists and ``problems`` lists what the scenario reader still finds in it.
    """
    target = Path(new_dir).expanduser()
    result = InitResult(target)
    notes, problems = result.assumptions, result.problems
    if target.exists() and (not target.is_dir() or any(target.iterdir())):
        problems.append(Problem(str(target), None, None, "exists and is not empty; name a new folder"))
        return result
    template_dir = resolve_scenario_path(template)
    for needed in ("scenario.toml", "technologies.csv", "hourly.csv"):
        if not (template_dir / needed).is_file():
            problems.append(Problem(str(template_dir), None, None, f"is not a template scenario folder: {needed} is missing"))
    if crs is not None:
        _, why = gis.parse_crs(crs)
        if why:
            problems.append(Problem("--crs", None, None, why))
    if problems:
        return result

    layer, found = gis.read_layer(districts, kind="polygon", fallback_crs=crs)
    problems.extend(found)
    building_layer = None
    if buildings is not None:
        building_layer, found = gis.read_layer(buildings, kind="point_or_polygon", fallback_crs=crs)
        problems.extend(found)
    weather_data = None
    if weather is not None:
        weather_data, found = epw.read_epw(weather)
        problems.extend(found)
    table, found = typology.read_typology()
    problems.extend(found)
    if problems:
        return result
    for item in (layer, building_layer):
        if item is not None:
            notes.append(f"{item.file}: read in {item.crs}, reprojected to WGS 84")
            notes.extend(item.notes)
    features = _district_features(
        layer, id_field, name_field, demand_field, building_layer is not None, notes, problems
    )
    building_rows = None
    if building_layer is not None and features:
        building_rows = _buildings_table(building_layer, features, table, notes, problems)
    if problems:
        return result
    hourly = _hourly(template_dir, weather_data, notes)

    target.parent.mkdir(parents=True, exist_ok=True)
    staging = Path(tempfile.mkdtemp(prefix=f".{target.name}-", dir=target.parent))
    try:
        (staging / "scenario.toml").write_text(_scenario_toml(template_dir, name or target.name), encoding="utf-8")
        for copied in COPIED_FILES:
            if (template_dir / copied).is_file():
                shutil.copyfile(template_dir / copied, staging / copied)
        collection = {"type": "FeatureCollection", "features": features}
        (staging / "districts.geojson").write_text(json.dumps(collection, indent=1), encoding="utf-8")
        hourly.to_csv(staging / "hourly.csv", index=False)
        if weather is not None:
            shutil.copyfile(weather, staging / epw.EPW_FILE)
        if building_rows is not None:
            building_rows.to_csv(staging / "buildings.csv", index=False)
        if target.exists():
            target.rmdir()
        staging.rename(target)
    except BaseException:
        shutil.rmtree(staging, ignore_errors=True)
        raise
    result.written = True
    notes.append(
        f"technologies.csv, cost_cases.toml, prices and settings: copied from the template '{template_dir.name}'; "
        "no wells (add wells.csv), no existing plant (add district_technologies.csv)"
    )
    problems.extend(validate_scenario(target))
    return result
