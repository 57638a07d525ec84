"""Typed inputs of a heatmosaic run.

A :class:`Scenario` is what :func:`engine.scenario.reader.load_scenario` makes of a scenario folder once every file has
passed validation (the folder layout is documented in ``docs/input_format.md``). Tables are pandas DataFrames
whose column names carry their units; the loader guarantees the columns, dtypes and value ranges listed here,
so that the physics and the model never re-check them.

:func:`apply_cost_case` turns a scenario and a cost case into the prices the model sees, and
:func:`input_hash` fingerprints everything that changes a result, so that two runs with the same hash give the
same numbers.
"""

from __future__ import annotations

import copy
import dataclasses
import hashlib
import json
from dataclasses import dataclass, field
from typing import Any

import numpy as np
import pandas as pd

TECHNOLOGY_KINDS = (
    "fuel_boiler",
    "electric_boiler",
    "air_heat_pump",
    "groundwater_heat_pump",
    "network_connection",
    "heat_store",
    "chiller",
    "groundwater_cooling",
)
"""Kinds of technology the model knows. Heat is supplied by all but ``chiller`` and ``groundwater_cooling``."""

HEAT_KINDS = ("fuel_boiler", "electric_boiler", "air_heat_pump", "groundwater_heat_pump", "network_connection")
COOLING_KINDS = ("chiller", "groundwater_cooling")
WELL_KINDS = ("groundwater_heat_pump", "groundwater_cooling")
CARRIERS = ("gas", "oil", "biomass", "electricity", "network", "none")
FUELS = ("gas", "oil", "biomass")

# IPCC 2006 Guidelines for National Greenhouse Gas Inventories, vol. 2, ch. 2, table 2.2 (default CO2 emission
# factors for stationary combustion): natural gas 56 100 kg/TJ, gas/diesel oil 74 100 kg/TJ. 1 MWh = 3.6e-3 TJ.
DEFAULT_CO2_KG_PER_MWH = {"gas": 56_100 * 3.6e-3, "oil": 74_100 * 3.6e-3, "biomass": 0.0}


DEFAULT_HOT_WATER_TEMP_C = 60.0
"""Hot-water temperature of a district when districts.csv gives none [°C]: about 60 °C at the store against
legionella (common practice; local hygiene rules decide)."""


def hot_water_temp_c(districts: pd.DataFrame) -> np.ndarray:
    """Hot-water temperature of every district [°C] (column ``hot_water_temp_c``, blank or absent: 60 °C)."""
    if "hot_water_temp_c" not in districts.columns:
        return np.full(len(districts), DEFAULT_HOT_WATER_TEMP_C)
    values = pd.to_numeric(districts["hot_water_temp_c"], errors="coerce").to_numpy(float)
    return np.where(np.isnan(values), DEFAULT_HOT_WATER_TEMP_C, values)


@dataclass
class Settings:
    """Run settings (``scenario.toml`` section ``[run]``)."""

    name: str = "Unnamed city"
    target_year: int = 2040
    objective: str = "cost"
    discount_rate: float = 0.05
    typical_days: int = 12
    value_of_unserved_heat_eur_per_mwh: float = 5000.0
    allow_unserved_heat: bool = True
    co2_cap_t_per_a: float = 0.0
    network_plant_limit_kw: float = 0.0
    heating_base_temp_c: float = 15.0
    cooling_base_temp_c: float = 20.0
    reinjection_min_temp_c: float = 4.5
    reinjection_max_temp_c: float = 20.0
    co2_within_cost_pct: float = 0.0
    """With the CO2 objective: the least CO2 at a cost at most this many percent above the least cost (0: no
    cost bound, the lowest CO2 at any cost)."""


@dataclass
class Prices:
    """Fuel and CO2 prices (``[prices]``) and fuel CO2 factors (``[co2_factors]``)."""

    gas_eur_per_mwh: float = 60.0
    oil_eur_per_mwh: float = 75.0
    biomass_eur_per_mwh: float = 45.0
    co2_eur_per_t: float = 100.0
    co2_kg_per_mwh: dict = field(default_factory=lambda: dict(DEFAULT_CO2_KG_PER_MWH))

    def fuel_price_eur_per_mwh(self, fuel: str) -> float:
        return float(getattr(self, f"{fuel}_eur_per_mwh"))


@dataclass
class Aquifer:
    """Aquifer description for the interference screening (``[aquifer]``)."""

    flow_direction_deg: float = 90.0
    darcy_velocity_m_per_d: float = 0.5
    effective_porosity: float = 0.2
    saturated_thickness_m: float = 15.0
    longitudinal_dispersivity_m: float = 5.0
    transverse_dispersivity_m: float = 0.5
    aquifer_heat_capacity_mj_per_m3_k: float = 2.8
    water_heat_capacity_mj_per_m3_k: float = 4.18
    reinjection_offset_m: float = 100.0


@dataclass
class CostCase:
    """A named set of overrides (``cost_cases.toml``)."""

    name: str = "reference"
    description: str = "Prices as given in the scenario"
    co2_eur_per_t: float | None = None
    gas_price_factor: float = 1.0
    oil_price_factor: float = 1.0
    biomass_price_factor: float = 1.0
    electricity_price_factor: float = 1.0
    network_price_factor: float = 1.0
    subsidy_share: dict = field(default_factory=dict)
    investment_factor: dict = field(default_factory=dict)


@dataclass
class Scenario:
    """Everything one city needs, validated.

    Tables (index is a plain RangeIndex unless stated):

    ``districts``
        district_id (str, unique), name, heat_demand_mwh_per_a, cooling_demand_mwh_per_a, supply_temp_c,
        hot_water_share, network_available (bool), network_connection_limit_kw, geometry (GeoJSON geometry
        dict, WGS 84). Building demands are already added in.
    ``technologies``
        the columns of technologies.csv; ``fixed_om_pct_per_a`` and ``store_loss_pct_per_h`` in percent as
        in the file; blanks filled with the defaults (efficiency 1, grade 0.5, approaches 5 K / 3 K ...).
    ``district_technologies``
        district_id, technology_id, existing_kw, potential_kw (inf = unlimited); one row for every district and
        every technology (defaults filled in).
    ``wells``
        the columns of wells.csv with district_id and the reinjection position filled in.
    ``hourly``
        the columns of hourly.csv, ``hour`` 0..n-1, n = 8760 or 8784.
    ``heat_demand_hourly_kw``
        optional DataFrame, one column per district id, n rows, or None.
    ``groundwater_temp_hourly_c``
        optional DataFrame, one column per well id, n rows, or None.
    """

    settings: Settings
    prices: Prices
    aquifer: Aquifer
    districts: pd.DataFrame
    technologies: pd.DataFrame
    district_technologies: pd.DataFrame
    wells: pd.DataFrame
    hourly: pd.DataFrame
    cost_cases: dict[str, CostCase]
    heat_demand_hourly_kw: pd.DataFrame | None = None
    groundwater_temp_hourly_c: pd.DataFrame | None = None
    source: str = ""

    @property
    def n_hours(self) -> int:
        return len(self.hourly)

    def copy(self) -> "Scenario":
        return copy.deepcopy(self)


@dataclass
class EffectivePrices:
    """Prices after a cost case: what the model multiplies quantities by."""

    cost_case: str
    fuel_eur_per_mwh: dict
    co2_eur_per_t: float
    electricity_eur_per_mwh: np.ndarray
    network_eur_per_mwh: np.ndarray
    investment_eur_per_kw: dict
    """Net of subsidies, per technology id."""
    gross_investment_eur_per_kw: dict
    """Before subsidies (fixed O&M is a share of this), per technology id."""


def apply_cost_case(scenario: Scenario, cost_case: str) -> EffectivePrices:
    """Prices and investments under ``cost_case``.

    Raises
    ------
    KeyError
        If the scenario has no such cost case.
    """
    if cost_case not in scenario.cost_cases:
        known = ", ".join(sorted(scenario.cost_cases))
        raise KeyError(f"unknown cost case '{cost_case}' (known: {known})")
    case = scenario.cost_cases[cost_case]
    prices = scenario.prices
    fuel = {
        f: prices.fuel_price_eur_per_mwh(f) * float(getattr(case, f"{f}_price_factor")) for f in FUELS
    }
    gross = {}
    net = {}
    for row in scenario.technologies.itertuples(index=False):
        factor = float(case.investment_factor.get(row.technology_id, 1.0))
        subsidy = float(case.subsidy_share.get(row.technology_id, 0.0))
        gross[row.technology_id] = float(row.investment_eur_per_kw) * factor
        net[row.technology_id] = gross[row.technology_id] * (1.0 - subsidy)
    hourly = scenario.hourly
    return EffectivePrices(
        cost_case=cost_case,
        fuel_eur_per_mwh=fuel,
        co2_eur_per_t=float(prices.co2_eur_per_t if case.co2_eur_per_t is None else case.co2_eur_per_t),
        electricity_eur_per_mwh=hourly["electricity_price_eur_per_mwh"].to_numpy(float)
        * case.electricity_price_factor,
        network_eur_per_mwh=hourly["network_price_eur_per_mwh"].to_numpy(float) * case.network_price_factor,
        investment_eur_per_kw=net,
        gross_investment_eur_per_kw=gross,
    )


def _frame_digest(frame: pd.DataFrame | None) -> str:
    if frame is None:
        return "none"
    text = frame.to_csv(index=False, float_format="%.10g")
    return hashlib.sha256(text.encode()).hexdigest()


def input_hash(scenario: Scenario, cost_case: str, settings: Settings | None = None) -> str:
    """SHA-256 fingerprint of all that decides a run's numbers.

    Covers every table, the settings (objective, cap, resolution ...), prices, aquifer and the chosen cost case,
    but not the folder the scenario was read from.
    """
    settings = settings or scenario.settings
    case = scenario.cost_cases.get(cost_case)
    parts: dict[str, Any] = {
        "settings": dataclasses.asdict(settings),
        "prices": dataclasses.asdict(scenario.prices),
        "aquifer": dataclasses.asdict(scenario.aquifer),
        "cost_case": dataclasses.asdict(case) if case is not None else cost_case,
    }
    for name in ("technologies", "district_technologies", "wells", "hourly"):
        parts[name] = _frame_digest(getattr(scenario, name))
    parts["districts"] = _frame_digest(
        scenario.districts.assign(geometry=scenario.districts["geometry"].map(json.dumps))
    )
    parts["heat_demand_hourly_kw"] = _frame_digest(scenario.heat_demand_hourly_kw)
    parts["groundwater_temp_hourly_c"] = _frame_digest(scenario.groundwater_temp_hourly_c)
    text = json.dumps(parts, sort_keys=True, default=str)
    return hashlib.sha256(text.encode()).hexdigest()
