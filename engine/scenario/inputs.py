"""Typed inputs of a heatmosaic run.

A :class:`Scenario` is what :func:`engine.scenario.load_scenario` makes of a scenario folder once every file has
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

from engine.scenario.defaults import DEFAULT_CO2_KG_PER_MWH, HOT_WATER_TEMP_C as DEFAULT_HOT_WATER_TEMP_C, section_defaults
from engine.scenario.kinds import FUELS

_RUN = section_defaults("run")
_AQUIFER = section_defaults("aquifer")

DEFAULT_COST_CASE = "reference"
"""Name of the cost case a scenario without ``cost_cases.toml`` has (prices as in ``scenario.toml``)."""


def default_cost_case(case_names) -> str:
    """The cost case a run takes when none is named: :data:`DEFAULT_COST_CASE` when the scenario has it,
    otherwise the first case listed (the file's order).

    Parameters
    ----------
    case_names : iterable of str
        The scenario's cost case names (a ``Scenario.cost_cases`` dict will do).

    Raises
    ------
    ValueError
        If there is no cost case at all.
    """
    names = list(case_names)
    if not names:
        raise ValueError("the scenario defines no cost case")
    return DEFAULT_COST_CASE if DEFAULT_COST_CASE in names else names[0]


def hot_water_temp_c(districts: pd.DataFrame) -> np.ndarray:
    """Hot-water temperature of every district [°C] (column ``hot_water_temp_c``, blank or absent: 60 °C)."""
    if "hot_water_temp_c" not in districts.columns:
        return np.full(len(districts), DEFAULT_HOT_WATER_TEMP_C)
    values = pd.to_numeric(districts["hot_water_temp_c"], errors="coerce").to_numpy(float)
    return np.where(np.isnan(values), DEFAULT_HOT_WATER_TEMP_C, values)


@dataclass
class Settings:
    """Run settings (``scenario.toml`` section ``[run]``); defaults from :mod:`engine.scenario.defaults`.

    ``co2_cap_t_per_a`` and ``network_plant_limit_kw`` are None for no limit.
    """

    name: str = _RUN["name"]
    target_year: int = _RUN["target_year"]
    objective: str = _RUN["objective"]
    discount_rate: float = _RUN["discount_rate"]
    typical_days: int = _RUN["typical_days"]
    value_of_unserved_heat_eur_per_mwh: float = _RUN["value_of_unserved_heat_eur_per_mwh"]
    allow_unserved_heat: bool = _RUN["allow_unserved_heat"]
    stores_between_days: bool = _RUN["stores_between_days"]
    """Typical days: stores carry heat from one calendar day to the next (docs/model.md section 4, constraint 8b;
    a seasonal store needs it); false keeps each store cyclic within its typical day. No effect on the full year."""
    co2_cap_t_per_a: float | None = _RUN["co2_cap_t_per_a"]
    network_plant_limit_kw: float | None = _RUN["network_plant_limit_kw"]
    heating_base_temp_c: float = _RUN["heating_base_temp_c"]
    cooling_base_temp_c: float = _RUN["cooling_base_temp_c"]
    reinjection_min_temp_c: float = _RUN["reinjection_min_temp_c"]
    reinjection_max_temp_c: float = _RUN["reinjection_max_temp_c"]
    co2_within_cost_pct: float = _RUN["co2_within_cost_pct"]
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

    flow_direction_deg: float = _AQUIFER["flow_direction_deg"]
    darcy_velocity_m_per_d: float = _AQUIFER["darcy_velocity_m_per_d"]
    effective_porosity: float = _AQUIFER["effective_porosity"]
    saturated_thickness_m: float = _AQUIFER["saturated_thickness_m"]
    longitudinal_dispersivity_m: float = _AQUIFER["longitudinal_dispersivity_m"]
    transverse_dispersivity_m: float = _AQUIFER["transverse_dispersivity_m"]
    aquifer_heat_capacity_mj_per_m3_k: float = _AQUIFER["aquifer_heat_capacity_mj_per_m3_k"]
    water_heat_capacity_mj_per_m3_k: float = _AQUIFER["water_heat_capacity_mj_per_m3_k"]
    reinjection_offset_m: float = _AQUIFER["reinjection_offset_m"]


@dataclass
class CostCase:
    """A named set of overrides (``cost_cases.toml``)."""

    name: str = DEFAULT_COST_CASE
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
        hot_water_share, network_available (bool), network_connection_limit_kw (inf = no limit), geometry
        (GeoJSON geometry dict, WGS 84). Building demands are already added in.
    ``technologies``
        the columns of technologies.csv; ``fixed_om_pct_per_a`` and ``store_loss_pct_per_h`` in percent as
        in the file; blanks filled with the defaults of :mod:`engine.scenario.defaults` (grade 0.5, source approach 5 K,
        sink approach 3 K ...); ``efficiency`` is 1 and ``store_hours`` 0 for the kinds that do not use them.
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

    ``pathway`` holds the milestone years of ``[pathway]`` and ``pathway.csv`` when the folder has them; a plain
    single-year solve never reads it.
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
    warnings: list = field(default_factory=list)
    """Problems of warning severity found when the folder was read (:class:`engine.scenario.problems.Problem`):
    options the files state that cannot take effect. They do not enter :func:`input_hash`."""
    pathway: Any = None
    """Milestone years and trajectories (:class:`engine.scenario.pathway_inputs.PathwayInputs`), or None."""
    notes: tuple[str, ...] = ()
    """What the reader took from elsewhere or assumed (a layer's CRS, the EPW station); not in the input hash."""

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


def _numeric_csv(frame: pd.DataFrame) -> str | None:
    """``frame.to_csv(index=False, float_format="%.10g")`` for a frame of plain float and integer columns with
    plain names, written without pandas' formatting machinery (the hourly table: 8760 rows), or None for any
    other frame.
    The text is the same character for character (checked against pandas in the tests), so the digest is too."""
    names = list(frame.columns)
    if len(names) < 2 or len(set(names)) < len(names) or any(not isinstance(n, str) or any(c in n for c in ',"\r\n') or n == "" for n in names):
        return None
    columns = []
    for name in names:
        values = frame[name].to_numpy()
        if values.dtype.kind == "f" and values.dtype.itemsize == 8:
            columns.append(["" if v != v else "%.10g" % v for v in values.tolist()])  # NaN written as nothing
        elif values.dtype.kind in "iu":
            columns.append([str(v) for v in values.tolist()])
        else:
            return None
    if len(frame) == 0:
        return None
    return ",".join(names) + "\n" + "\n".join(map(",".join, zip(*columns))) + "\n"


def _frame_digest(frame: pd.DataFrame | None) -> str:
    if frame is None:
        return "none"
    text = _numeric_csv(frame)
    if text is None:
        text = frame.to_csv(index=False, float_format="%.10g")
    return hashlib.sha256(text.encode()).hexdigest()


MODEL_REVISION = 2
"""Revision of what the engine makes of the inputs (the formulation of docs/model.md, the typical days): raise it
with every change that moves a run's numbers for the same files, so that :func:`input_hash` changes and a run
saved before is no longer handed back as if solved now (it stays in the library, to open and compare).
1 (implied before the revision was hashed); 2: the groundwater temperature of typical days takes each cluster's
distribution (docs/model.md section 8), and stores may carry heat from day to day (``stores_between_days``)."""


def input_hash(scenario: Scenario, cost_case: str, settings: Settings | None = None) -> str:
    """SHA-256 fingerprint of all that decides a run's numbers.

    Covers every table, the settings (objective, cap, resolution ...), prices, aquifer and the chosen cost case,
    and :data:`MODEL_REVISION`, but not the folder the scenario was read from.
    """
    settings = settings or scenario.settings
    case = scenario.cost_cases.get(cost_case)
    parts: dict[str, Any] = {
        "model_revision": MODEL_REVISION,
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
