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

REQUIRED_FILES = (SCENARIO_FILE, DISTRICTS_FILE, TECHNOLOGIES_FILE, HOURLY_FILE)
"""Files every scenario folder holds."""

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

SCENARIO_FILES = REQUIRED_FILES + OPTIONAL_FILES
"""Every file name a scenario folder may hold, required ones first."""

WEATHER_FILE = "weather.epw"
TYPOLOGY_FILE = "building_typology.csv"
LAYER_SUFFIXES = (".geojson", ".gpkg", ".zip")
OWN_CITY_FILES = (
    WEATHER_FILE,
    TYPOLOGY_FILE,
    *(f"{stem}{suffix}" for stem in ("districts", "wells", "buildings") for suffix in LAYER_SUFFIXES),
)
"""Further files the reader takes from a planner's own folder (engine.scenario.city_inputs): the weather file,
the typology table and GIS layers. Not yet part of :data:`SCENARIO_FILES`, so the store and bundles do not carry
them (GeoPackage and zipped Shapefiles are binary; the store keeps UTF-8 text)."""
