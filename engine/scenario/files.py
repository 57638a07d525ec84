"""The files of a scenario folder: their names and which of them a folder must hold (``docs/input_format.md``).

The reader, the scenario store and the bundles all take the list from here; nothing else is read or written.
"""

from __future__ import annotations

SCENARIO_FILE = "scenario.toml"
DISTRICTS_FILE = "districts.geojson"
TECHNOLOGIES_FILE = "technologies.csv"
HOURLY_FILE = "hourly.csv"
WELLS_FILE = "wells.csv"
DISTRICT_TECHNOLOGIES_FILE = "district_technologies.csv"
BUILDINGS_FILE = "buildings.csv"
HEAT_DEMAND_HOURLY_FILE = "heat_demand_hourly.csv"
GROUNDWATER_TEMP_HOURLY_FILE = "groundwater_temp_hourly.csv"
COST_CASES_FILE = "cost_cases.toml"
PATHWAY_FILE = "pathway.csv"

LAYER_SUFFIXES = (".geojson", ".gpkg", ".zip")
"""The forms a GIS layer may take: GeoJSON, GeoPackage, zipped ESRI Shapefile (:mod:`engine.scenario.gis`)."""
DISTRICT_LAYER_FILES = tuple(f"districts{suffix}" for suffix in LAYER_SUFFIXES)
"""The districts layer in any of its accepted forms; a folder holds exactly one of them."""

REQUIRED_FILES = (SCENARIO_FILE, TECHNOLOGIES_FILE, HOURLY_FILE)
"""Files every scenario folder holds, besides one districts layer (:data:`DISTRICT_LAYER_FILES`;
:func:`missing_files` checks both)."""

OPTIONAL_FILES = (
    WELLS_FILE,
    DISTRICT_TECHNOLOGIES_FILE,
    BUILDINGS_FILE,
    HEAT_DEMAND_HOURLY_FILE,
    GROUNDWATER_TEMP_HOURLY_FILE,
    COST_CASES_FILE,
    PATHWAY_FILE,
)
"""Files a scenario folder may hold in addition."""

WEATHER_FILE = "weather.epw"
TYPOLOGY_FILE = "building_typology.csv"
OWN_CITY_FILES = (
    WEATHER_FILE,
    TYPOLOGY_FILE,
    *(f"{stem}{suffix}" for stem in ("districts", "wells", "buildings") for suffix in LAYER_SUFFIXES),
)
"""Further files the reader takes from a planner's own folder (engine.scenario.city_inputs): the weather file,
the typology table and GIS layers (the districts layer in any form among them)."""

SCENARIO_FILES = tuple(dict.fromkeys(REQUIRED_FILES + DISTRICT_LAYER_FILES + OPTIONAL_FILES + OWN_CITY_FILES))
"""Every file name a scenario folder may hold, required ones first. The reader, the scenario store, bundles and
libraries carry all of them, binary ones included (:data:`BINARY_FILES`)."""

BINARY_FILES = tuple(name for name in SCENARIO_FILES if name.endswith((".gpkg", ".zip"))) + (WEATHER_FILE,)
"""Scenario files whose content need not be UTF-8 text: GeoPackages (SQLite), zipped Shapefiles, and the EPW
weather file (stations' names are often written in a legacy code page; :mod:`engine.scenario.epw` decodes it)."""

ARCHIVE_FILES = tuple(name for name in SCENARIO_FILES if name.endswith(".zip"))
"""Scenario files that are themselves zip archives (zipped Shapefiles)."""


def missing_files(names) -> list[str]:
    """The required files ``names`` lacks: each of :data:`REQUIRED_FILES` not there, and
    ``districts.geojson`` when no districts layer is there in any of its forms."""
    names = set(names)
    missing = [name for name in REQUIRED_FILES if name not in names]
    if not names & set(DISTRICT_LAYER_FILES):
        missing.insert(1 if SCENARIO_FILE in missing else 0, DISTRICTS_FILE)
    return missing
