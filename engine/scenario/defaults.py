"""Values the reader puts in place of a blank cell or an absent key: the one table of defaults.

The reader (:mod:`engine.scenario.settings`, :mod:`~engine.scenario.districts`, :mod:`~engine.scenario.catalogue`,
:mod:`~engine.scenario.well_table`), the typed settings (:class:`engine.scenario.inputs.Settings`,
:class:`~engine.scenario.inputs.Aquifer`) and the default arguments of the physics functions
(:func:`engine.physics.heatpump.heat_pump_cop`) take their values from here, and the table "Defaults" of
``docs/input_format.md`` states the same values (``tests/test_defaults.py`` compares the two).

One rule for limits: a blank cell or an absent key of a limit field means *no limit*, written ``None`` in
:data:`DEFAULTS` and in the code (a table column holds ``inf`` for it, as ``potential_kw`` always did). A number,
0 included, is the limit; the only exceptions are the two city-wide keys of ``[run]`` (``co2_cap_t_per_a``,
``network_plant_limit_kw``), where 0 also means no limit as the format always stated (see :func:`limit_from_entry`).
A blank where no default is listed is an error (a boiler's efficiency, a chiller's EER, a store's hours ...).
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Any

NO_LIMIT = None
"""How the defaults table and the code write "no limit"."""

# IPCC 2006 Guidelines for National Greenhouse Gas Inventories, vol. 2, ch. 2, table 2.2 (default CO2 emission
# factors for stationary combustion): natural gas 56 100 kg/TJ, gas/diesel oil 74 100 kg/TJ; 1 MWh = 3.6e-3 TJ.
# Biomass counts as 0 in the energy sector's total (the same guidelines report it as a memo item).
DEFAULT_CO2_KG_PER_MWH = {"gas": round(56_100 * 3.6e-3, 6), "oil": round(74_100 * 3.6e-3, 6), "biomass": 0.0}
"""Default CO2 factors of the fuels on lower heating value [kg/MWh]: 201.96, 266.76 and 0."""

HEAT_PUMP_QUALITY_GRADE = 0.5
"""Share of the Carnot COP a heat pump reaches when ``cop_quality_grade`` is blank [-]. Current machines reach
about 0.4 to 0.55 (textbook range, from memory); 0.5 sits in the upper half for the water-to-water machines that
groundwater plants use, and an air-source catalogue row should state its own (lower) grade."""
SOURCE_APPROACH_K = 5.0
"""Evaporating temperature below the heat source when ``source_approach_k`` is blank [K] (common practice: the
evaporator, with brine or air on the source side, needs the larger temperature difference)."""
SINK_APPROACH_K = 3.0
"""Condensing temperature above the supply temperature when ``sink_approach_k`` is blank [K] (common practice:
a water-cooled condenser runs 2 to 5 K above the water it heats)."""
HOT_WATER_SHARE = 0.15
"""Share of a district's annual heat demand that is domestic hot water when ``hot_water_share`` is blank [-]
(common practice for a mixed housing stock, from memory: 10 to 20 %)."""
HOT_WATER_TEMP_C = 60.0
"""Temperature hot water is made at when ``hot_water_temp_c`` is blank [°C]: about 60 °C at the store against
legionella (common practice; local hygiene rules decide)."""


@dataclass(frozen=True)
class Default:
    """The value of one field when its cell is blank or its key absent."""

    file: str
    field: str
    """Column (CSV), property (GeoJSON) or dotted key (TOML, ``run.discount_rate``)."""
    value: Any
    """A number, true/false, a text, or :data:`NO_LIMIT`."""
    source: str
    """Where the value comes from."""


_SCENARIO = "scenario.toml"
_DISTRICTS = "districts.geojson"
_TECHNOLOGIES = "technologies.csv"
_CAPACITIES = "district_technologies.csv"
_WELLS = "wells.csv"
_BUILDINGS = "buildings.csv"
_CHOICE = "a neutral starting value; state your own"
_NONE_GIVEN = "nothing stated, nothing added"

DEFAULTS = (
    Default(_SCENARIO, "run.name", "Unnamed city", _CHOICE),
    Default(_SCENARIO, "run.target_year", 2040, _CHOICE),
    Default(_SCENARIO, "run.objective", "cost", _CHOICE),
    Default(
        _SCENARIO,
        "run.discount_rate",
        0.05,
        "a real rate often used in public investment appraisal (common practice)",
    ),
    Default(_SCENARIO, "run.typical_days", 12, "a usual screening resolution (common practice)"),
    Default(
        _SCENARIO,
        "run.value_of_unserved_heat_eur_per_mwh",
        5000.0,
        "far above any supply cost, so heat is left unserved only where nothing can supply it",
    ),
    Default(_SCENARIO, "run.allow_unserved_heat", True, "a run always gives an answer that shows the gap"),
    Default(
        _SCENARIO,
        "run.stores_between_days",
        False,
        "typical days: each store returns to its level within every day, so each typical day serves itself "
        "(docs/model.md section 8 compares the stores linked from day to day)",
    ),
    Default(_SCENARIO, "run.co2_cap_t_per_a", NO_LIMIT, "limit rule"),
    Default(_SCENARIO, "run.network_plant_limit_kw", NO_LIMIT, "limit rule"),
    Default(
        _SCENARIO,
        "run.heating_base_temp_c",
        15.0,
        "heating-degree base temperature for insulated stock (common practice)",
    ),
    Default(_SCENARIO, "run.cooling_base_temp_c", 20.0, "cooling-degree base temperature (common practice)"),
    Default(
        _SCENARIO,
        "run.reinjection_min_temp_c",
        4.5,
        "a frequent permit condition against freezing of the aquifer (common practice; defer to the water authority)",
    ),
    Default(
        _SCENARIO,
        "run.reinjection_max_temp_c",
        20.0,
        "a frequent permit condition on warm reinjection (common practice; defer to the water authority)",
    ),
    Default(_SCENARIO, "run.co2_within_cost_pct", 0.0, "no cost bound: the CO2 objective at any cost"),
    Default(
        _SCENARIO,
        "co2_factors.gas_kg_per_mwh",
        DEFAULT_CO2_KG_PER_MWH["gas"],
        "IPCC 2006 Guidelines, vol. 2, table 2.2: 56 100 kg/TJ",
    ),
    Default(
        _SCENARIO,
        "co2_factors.oil_kg_per_mwh",
        DEFAULT_CO2_KG_PER_MWH["oil"],
        "IPCC 2006 Guidelines, vol. 2, table 2.2: 74 100 kg/TJ",
    ),
    Default(
        _SCENARIO,
        "co2_factors.biomass_kg_per_mwh",
        DEFAULT_CO2_KG_PER_MWH["biomass"],
        "IPCC 2006 Guidelines: biomass CO2 is a memo item",
    ),
    Default(_SCENARIO, "aquifer.flow_direction_deg", 90.0, _CHOICE),
    Default(_SCENARIO, "aquifer.darcy_velocity_m_per_d", 0.5, "a sandy-gravel aquifer (common practice, from memory)"),
    Default(_SCENARIO, "aquifer.effective_porosity", 0.2, "sand and gravel (common practice, from memory)"),
    Default(_SCENARIO, "aquifer.saturated_thickness_m", 15.0, _CHOICE),
    Default(_SCENARIO, "aquifer.longitudinal_dispersivity_m", 5.0, "about a tenth of a 50 m scale (common practice)"),
    Default(_SCENARIO, "aquifer.transverse_dispersivity_m", 0.5, "a tenth of the longitudinal one (common practice)"),
    Default(
        _SCENARIO,
        "aquifer.aquifer_heat_capacity_mj_per_m3_k",
        2.8,
        "saturated sand and gravel (common practice, from memory)",
    ),
    Default(_SCENARIO, "aquifer.water_heat_capacity_mj_per_m3_k", 4.18, "water at about 10 °C (IAPWS-95, rounded)"),
    Default(_SCENARIO, "aquifer.reinjection_offset_m", 100.0, _CHOICE),
    Default(_DISTRICTS, "cooling_demand_mwh_per_a", 0.0, _NONE_GIVEN),
    Default(_DISTRICTS, "hot_water_share", HOT_WATER_SHARE, "mixed housing stock (common practice, from memory)"),
    Default(_DISTRICTS, "hot_water_temp_c", HOT_WATER_TEMP_C, "against legionella (common practice; local hygiene rules)"),
    Default(_DISTRICTS, "network_available", False, _NONE_GIVEN),
    Default(_DISTRICTS, "network_connection_limit_kw", NO_LIMIT, "limit rule"),
    Default(_TECHNOLOGIES, "cop_quality_grade", HEAT_PUMP_QUALITY_GRADE, "textbook range 0.4 to 0.55 (from memory)"),
    Default(_TECHNOLOGIES, "source_approach_k", SOURCE_APPROACH_K, "common practice"),
    Default(_TECHNOLOGIES, "sink_approach_k", SINK_APPROACH_K, "common practice"),
    Default(_TECHNOLOGIES, "fixed_om_pct_per_a", 0.0, _NONE_GIVEN),
    Default(_TECHNOLOGIES, "variable_om_eur_per_mwh", 0.0, _NONE_GIVEN),
    Default(_TECHNOLOGIES, "store_loss_pct_per_h", 0.0, _NONE_GIVEN),
    Default(_TECHNOLOGIES, "store_efficiency", 1.0, _NONE_GIVEN),
    Default(_CAPACITIES, "existing_kw", 0.0, _NONE_GIVEN),
    Default(_CAPACITIES, "potential_kw", NO_LIMIT, "limit rule"),
    Default(_WELLS, "permit_annual_volume_m3", NO_LIMIT, "limit rule"),
    Default(_WELLS, "groundwater_temp_amplitude_k", 0.0, "a constant groundwater temperature"),
    Default(_WELLS, "coldest_day_of_year", 1, "only with an amplitude of 0, where it has no effect"),
    Default(_BUILDINGS, "cooling_demand_mwh_per_a", 0.0, _NONE_GIVEN),
)
"""Every documented default, in the order of ``docs/input_format.md``."""

_BY_PLACE = {(entry.file, entry.field): entry for entry in DEFAULTS}


def default(file: str, field: str) -> Any:
    """The default of ``field`` in ``file`` (``None`` = no limit).

    Raises
    ------
    KeyError
        If the field has no documented default (a blank there is an error).
    """
    return _BY_PLACE[(file, field)].value


def section_defaults(section: str) -> dict[str, Any]:
    """Defaults of one ``scenario.toml`` section by key (``run``, ``co2_factors``, ``aquifer``)."""
    prefix = section + "."
    return {e.field[len(prefix):]: e.value for e in DEFAULTS if e.file == _SCENARIO and e.field.startswith(prefix)}


def limit_from_entry(value: float | None) -> float | None:
    """A city-wide limit as entered in ``[run]``, in the dashboard or on the command line, where 0 (or nothing)
    has always meant no limit: ``None`` for no limit, otherwise the limit as a float."""
    if value is None:
        return None
    number = float(value)
    return number if number > 0 else None


def cell_default(file: str, field: str) -> Any:
    """The default as a table holds it: :func:`default`, with ``inf`` for no limit (a float column has no None)."""
    value = default(file, field)
    return math.inf if value is NO_LIMIT else value
