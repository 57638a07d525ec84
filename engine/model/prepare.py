"""From a validated scenario to the arrays the district LP multiplies.

:func:`prepare_run` applies the cost case, builds the time grid (full year or typical days), derives hourly heat
and cooling demand, heat pump COPs, groundwater temperatures and the usable temperature spreads of each well, and
returns one :class:`PreparedRun` whose arrays are all indexed by model step. Nothing here knows about the LP.
"""

from __future__ import annotations

import dataclasses
import hashlib
from dataclasses import dataclass

import numpy as np
import pandas as pd

from engine.physics import demand as demand_mod
from engine.physics import economics
from engine.physics import heatpump
from engine.physics import water
from engine.physics import wells as wells_mod
from engine.scenario.inputs import EffectivePrices, Scenario, Settings, apply_cost_case, hot_water_temp_c
from engine.physics.carrier_curves import keep_cost_duration_curve, keep_period_distribution
from engine.physics.timeseries import TimeGrid, daily_features, full_year_grid, keep_duration_curve, typical_day_grid
from engine.units import SECONDS_PER_HOUR


@dataclass
class PreparedRun:
    scenario: Scenario
    settings: Settings
    cost_case: str
    prices: EffectivePrices
    grid: TimeGrid
    district_ids: list
    heat_demand_kw: np.ndarray  # (districts, steps)
    cooling_demand_kw: np.ndarray  # (districts, steps)
    heat_demand_year_kw: np.ndarray  # (districts, hours)
    cooling_demand_year_kw: np.ndarray
    air_cop: dict  # technology_id -> (districts, steps)
    well_ids: list
    well_district: np.ndarray  # index into district_ids per well
    groundwater_temp_c: np.ndarray  # (wells, steps)
    well_cop: dict  # technology_id -> (wells, steps)
    well_flow_per_kw_heating: np.ndarray  # kg/s of pumped water per kW extracted, inf where no spread is left
    well_flow_per_kw_cooling: np.ndarray  # kg/s per kW rejected
    well_permit_flow_kg_s: np.ndarray
    well_annual_volume_m3: np.ndarray  # inf where no annual limit
    well_density_kg_per_m3: np.ndarray  # (wells, steps)
    spread_heating_k: np.ndarray  # usable spread when heating (wells, steps)
    spread_cooling_k: np.ndarray
    electricity_eur_per_mwh: np.ndarray  # (steps,)
    network_eur_per_mwh: np.ndarray
    grid_co2_kg_per_mwh: np.ndarray
    network_co2_kg_per_mwh: np.ndarray
    annuity: dict  # technology_id -> annuity factor [1/a]
    hot_water_demand_kw: np.ndarray | None = None  # (districts, steps), part of heat_demand_kw
    hot_water_temp_c: np.ndarray | None = None  # (districts,)
    air_cop_hot_water: dict = dataclasses.field(default_factory=dict)  # COP at the hot-water temperature
    well_cop_hot_water: dict = dataclasses.field(default_factory=dict)
    aggregation: dict = dataclasses.field(default_factory=dict)  # what the typical days change (summary)
    cop_bounds: dict = dataclasses.field(default_factory=dict)  # hours at the COP clips (summary)
    fixed_new: dict | None = None
    """A plan whose new capacities the LPs take as given (:func:`engine.model.formulation.fixed_new_bounds`):
    ``(district_id, technology_id, well_id)`` -> new kW (kWh for stores); None to choose them."""
    plan_start: "PreparedRun | None" = None
    """A full-year run's twin on typical days, whose plan starts the full-year LPs with a store
    (:func:`engine.model.solve.plan_start`); None where there is none."""

    @property
    def n_steps(self) -> int:
        return self.grid.n_steps

    def technology(self, technology_id: str) -> pd.Series:
        techs = self.scenario.technologies
        return techs.loc[techs["technology_id"] == technology_id].iloc[0]


def demand_year_kw(scenario: Scenario, settings: Settings) -> tuple[np.ndarray, np.ndarray]:
    """Hourly heat and cooling demand of every district over the whole year [kW]."""
    outdoor = scenario.hourly["outdoor_temp_c"].to_numpy(float)
    districts = scenario.districts
    heat = np.zeros((len(districts), len(outdoor)))
    cool = np.zeros_like(heat)
    measured = scenario.heat_demand_hourly_kw
    for i, row in enumerate(districts.itertuples(index=False)):
        if measured is not None and row.district_id in measured.columns:
            heat[i] = measured[row.district_id].to_numpy(float)
        else:
            heat[i] = demand_mod.heat_demand_profile_kw(
                row.heat_demand_mwh_per_a, outdoor, row.hot_water_share, settings.heating_base_temp_c
            )
        if row.cooling_demand_mwh_per_a > 0:
            cool[i] = demand_mod.cooling_demand_profile_kw(
                row.cooling_demand_mwh_per_a, outdoor, settings.cooling_base_temp_c
            )
    return heat, cool


def flow_per_kw_kg_s(spread_k: np.ndarray, groundwater_temp_c: np.ndarray) -> np.ndarray:
    """Pumped water needed per kW exchanged at the usable spread [kg/s per kW]; inf where no spread is left.

    The inverse of :func:`engine.physics.wells.well_thermal_power_kw` at 1 kg/s (P = m_dot c_p dT, c_p from
    IAPWS-95 at the groundwater temperature, clipped to 0.5..99 °C where the property fit holds).
    """
    spread = np.asarray(spread_k, dtype=float)
    if spread.size == 0:
        return np.zeros_like(spread)
    usable = spread > 1e-9
    kw_per_kg_s = wells_mod.well_thermal_power_kw(1.0, np.where(usable, spread, 1.0), np.clip(groundwater_temp_c, 0.5, 99.0))
    return np.where(usable, 1.0 / kw_per_kg_s, np.inf)


def hot_water_year_kw(scenario: Scenario, heat_year_kw: np.ndarray) -> np.ndarray:
    """Hourly hot-water part of every district's heat demand [kW], shape (districts, hours).

    From the annual figure, the part :func:`engine.physics.demand.heat_demand_profile_kw` puts in; for a measured
    hourly series, ``hot_water_share`` of its sum spread with the daily hot-water shape, never above the hour's
    measured demand.
    """
    districts = scenario.districts
    n = heat_year_kw.shape[1]
    out = np.zeros_like(heat_year_kw)
    measured = scenario.heat_demand_hourly_kw
    for i, row in enumerate(districts.itertuples(index=False)):
        if measured is not None and row.district_id in measured.columns:
            total = float(heat_year_kw[i].sum()) / 1000.0
            out[i] = np.minimum(demand_mod.hot_water_profile_kw(total, n, row.hot_water_share), heat_year_kw[i])
        else:
            out[i] = demand_mod.hot_water_profile_kw(row.heat_demand_mwh_per_a, n, row.hot_water_share)
    return out


def groundwater_year_c(scenario: Scenario) -> np.ndarray:
    """Hourly groundwater temperature at every well's extraction [°C], shape (wells, hours)."""
    wells = scenario.wells
    n = scenario.n_hours
    out = np.zeros((len(wells), n))
    measured = scenario.groundwater_temp_hourly_c
    for i, row in enumerate(wells.itertuples(index=False)):
        if measured is not None and row.well_id in measured.columns:
            out[i] = measured[row.well_id].to_numpy(float)
        else:
            out[i] = wells_mod.groundwater_temp_series_c(
                row.groundwater_temp_c, row.groundwater_temp_amplitude_k, row.coldest_day_of_year, n
            )
    if "source_temp_shift_k" in wells.columns:
        out = out + wells["source_temp_shift_k"].to_numpy(float)[:, None]
    return out


def extreme_days(scenario: Scenario, heat_year_kw: np.ndarray, cool_year_kw: np.ndarray) -> dict:
    """The days kept on their own beside the typical days: the day of the city's peak heating hour, of its peak
    cooling hour (if it has cooling) and the coldest day (lowest daily mean outdoor temperature)."""
    outdoor = scenario.hourly["outdoor_temp_c"].to_numpy(float)
    days = {"peak_heating_day": int(np.argmax(heat_year_kw.sum(axis=0)) // 24),
            "coldest_day": int(np.argmin(outdoor.reshape(-1, 24).mean(axis=1)))}
    city_cool = cool_year_kw.sum(axis=0)
    if city_cool.max(initial=0.0) > 0:
        days["peak_cooling_day"] = int(np.argmax(city_cool) // 24)
    return days


def clustering_series(scenario: Scenario, heat_year_kw: np.ndarray, cool_year_kw: np.ndarray) -> list:
    """The hourly series whose daily profiles the typical days are clustered on: outdoor temperature, the city's
    heat demand, what a MWh of grid electricity and of network heat costs (price plus the scenario's CO2 price
    times the carrier's CO2 factor: what decides between a heat pump, the network and a boiler in each hour) and,
    if there is cooling, the city's cooling demand."""
    hourly = scenario.hourly
    co2_eur_per_kg = float(scenario.prices.co2_eur_per_t) / 1000.0
    city_cool = cool_year_kw.sum(axis=0)
    columns = [
        hourly["outdoor_temp_c"].to_numpy(float),
        heat_year_kw.sum(axis=0),
        hourly["electricity_price_eur_per_mwh"].to_numpy(float)
        + co2_eur_per_kg * hourly["grid_co2_kg_per_mwh"].to_numpy(float),
        hourly["network_price_eur_per_mwh"].to_numpy(float)
        + co2_eur_per_kg * hourly["network_co2_kg_per_mwh"].to_numpy(float),
    ]
    if city_cool.max(initial=0.0) > 0:
        columns.append(city_cool)
    return columns


CLUSTER_SERIES = clustering_series
"""The series :func:`build_time_grid` clusters on (a benchmark may swap it to compare choices)."""


def build_time_grid(scenario: Scenario, settings: Settings, heat_year_kw: np.ndarray,
                    cool_year_kw: np.ndarray | None = None) -> TimeGrid:
    """Full year when ``settings.typical_days`` is 0, else k-medoids typical days plus the extreme days
    (:func:`extreme_days`, weight one day each)."""
    n_hours = scenario.n_hours
    n_days = n_hours // 24
    if settings.typical_days <= 0 or settings.typical_days >= n_days:
        return full_year_grid(n_hours)
    if cool_year_kw is None:
        cool_year_kw = np.zeros_like(heat_year_kw)
    columns = CLUSTER_SERIES(scenario, heat_year_kw, cool_year_kw)
    features = daily_features(np.column_stack(columns))
    extremes = tuple(sorted(set(extreme_days(scenario, heat_year_kw, cool_year_kw).values())))
    # the grid depends on these alone: a cost case, an objective or a study's re-solve finds it again
    key = (hashlib.sha256(np.ascontiguousarray(features).tobytes()).hexdigest(), int(settings.typical_days), extremes)
    if key not in _GRID_MEMO:
        while len(_GRID_MEMO) >= 8:
            del _GRID_MEMO[next(iter(_GRID_MEMO))]
        _GRID_MEMO[key] = typical_day_grid(features, settings.typical_days, None, extreme_days=list(extremes))
    return _GRID_MEMO[key]


_GRID_MEMO: dict = {}
"""Typical-day grids of this process by (features digest, typical days, extreme days); the oldest of 8 goes
first. :func:`clear_grid_memo` empties it (the benchmark does, to time a first solve)."""


def clear_grid_memo() -> None:
    _GRID_MEMO.clear()


def aggregation_report(grid: TimeGrid, heat_year: np.ndarray, cool_year: np.ndarray, heat_steps: np.ndarray,
                       cool_steps: np.ndarray, heat_error_pct: np.ndarray, cool_error_pct: np.ndarray,
                       extremes: dict) -> dict:
    """What the typical days change, for the run's summary: sums before rescaling, peaks, the profile error."""
    if grid.is_full_year:
        return {"typical_days": 0}
    w = grid.weight_h
    city_heat_year = heat_year.sum(axis=0)
    city_heat_rebuilt = grid.rebuild(heat_steps.sum(axis=0))
    rms = float(np.sqrt(np.mean((city_heat_rebuilt - city_heat_year) ** 2)))
    mean = float(city_heat_year.mean()) if city_heat_year.size else 0.0

    def worst(errors):
        finite = errors[np.isfinite(errors)]
        return float(finite[np.argmax(np.abs(finite))]) if finite.size else 0.0

    return {
        "typical_days": int((~grid.extreme_period).sum()) if grid.extreme_period is not None else grid.n_periods,
        "extreme_days": extremes,
        "periods": int(grid.n_periods),
        "heat_sum_error_before_rescaling_pct_worst_district": worst(heat_error_pct),
        "cooling_sum_error_before_rescaling_pct_worst_district": worst(cool_error_pct),
        "heat_sum_error_after_rescaling_pct": float(
            100 * ((heat_steps @ w).sum() - heat_year.sum()) / heat_year.sum()) if heat_year.sum() > 0 else 0.0,
        "cooling_sum_error_after_rescaling_pct": float(
            100 * ((cool_steps @ w).sum() - cool_year.sum()) / cool_year.sum()) if cool_year.sum() > 0 else 0.0,
        "peak_heat_kept_pct": float(100 * heat_steps.sum(axis=0).max() / city_heat_year.max())
        if city_heat_year.max() > 0 else 100.0,
        "city_heat_profile_rms_error_pct_of_mean": 100 * rms / mean if mean > 0 else 0.0,
        "city_heat_duration_curve_error_pct_of_sum": duration_curve_error_pct(city_heat_year, heat_steps.sum(axis=0), w),
    }


def duration_curve_error_pct(year_kw: np.ndarray, steps_kw: np.ndarray, weight_h: np.ndarray) -> float:
    """Largest error of the energy in the top h hours of the year, over every h, as a share of the year's sum [%].

    The year's duration curve against the steps' (each step holding its value for its weight in hours, sorted
    highest first): the heat a technology that runs only in the peak hours sees. 0 for a perfect representation.
    """
    year = np.sort(np.asarray(year_kw, dtype=float))[::-1]
    total = float(year.sum())
    if total <= 0:
        return 0.0
    order = np.argsort(-np.asarray(steps_kw, dtype=float), kind="stable")
    edges = np.r_[0.0, np.cumsum(weight_h[order])]
    energy = np.r_[0.0, np.cumsum(steps_kw[order] * weight_h[order])]
    hours = np.arange(1, year.size + 1, dtype=float)
    return float(100 * np.abs(np.interp(hours, edges, energy) - np.cumsum(year)).max() / total)


COP_MIN = 1.0
"""Lower clip of every heat pump COP the model uses (no worse than direct electric heating) [-]."""
COP_MAX = 8.0
"""Upper clip: a tiny lift (mild weather, warm source) gives no unbounded COP [-]."""


def cop_bound_report(cops: dict, weight_h: np.ndarray, label: str) -> dict:
    """Per technology: hours (step weights summed over the districts or wells) at the COP clips, and the
    districts or wells that reach a clip at least once. ``cops``: technology_id -> (units, steps)."""
    out = {}
    for tech, values in cops.items():
        values = np.asarray(values, dtype=float)
        if values.size == 0:
            continue
        low = np.isclose(values, COP_MIN, rtol=0, atol=1e-12)
        high = np.isclose(values, COP_MAX, rtol=0, atol=1e-12)
        out[tech] = {
            f"{label}_hours_at_cop_min": float((low * weight_h[None, :]).sum()),
            f"{label}_hours_at_cop_max": float((high * weight_h[None, :]).sum()),
            f"{label}s_at_a_bound": int((low | high).any(axis=1).sum()),
            "cop_min": COP_MIN,
            "cop_max": COP_MAX,
        }
    return out


DEMAND_REPRESENTATION = keep_duration_curve
"""How the demand of the typical days is made to stand for the year (docs/model.md section 8)."""

PRICE_REPRESENTATION = "period"
"""How prices and CO2 factors of the typical days stand for the year: ``"period"`` (default) ranks the steps of
each typical day by the carrier's cost and gives them its cluster's hours ranked the same way
(:func:`engine.physics.carrier_curves.keep_cost_duration_curve`), ``"year"`` does so over all clustered hours, None
takes the medoid hours' own values (the former method, for the comparison in bench/typical_days.py)."""


GROUNDWATER_REPRESENTATION = keep_period_distribution
"""How the groundwater temperature of the typical days stands for the year: each typical day's steps take the
distribution of the hours its cluster stands for (:func:`engine.physics.carrier_curves.keep_period_distribution`);
:func:`engine.physics.carrier_curves.period_mean` takes the cluster's mean at the same hour (the representation
before), ``lambda year, grid: year[:, grid.year_hour]`` the medoid hours' own values (the one before that)."""


def carrier_at_steps(grid: TimeGrid, price, co2_kg_per_mwh, co2_eur_per_t: float):
    """A carrier's price [EUR/MWh] and CO2 factor [kg/MWh] at the model steps (:data:`PRICE_REPRESENTATION`)."""
    price = np.asarray(price, dtype=float)
    co2 = np.asarray(co2_kg_per_mwh, dtype=float)
    if PRICE_REPRESENTATION is None or grid.is_full_year:
        return price[grid.year_hour], co2[grid.year_hour]
    cost = price + float(co2_eur_per_t) * co2 / 1000.0
    both = keep_cost_duration_curve(cost, np.vstack([price, co2]), grid, PRICE_REPRESENTATION)
    return both[0], both[1]


def cop_bound_note(cop_bounds: dict, used_technologies=None) -> str:
    """One sentence naming the heat pumps whose COP the model held at a clip (:data:`COP_MIN`, :data:`COP_MAX`),
    with the hours (summed over districts or wells); empty when no clip binds. ``cop_bounds`` as in
    :attr:`PreparedRun.cop_bounds`; ``used_technologies`` (optional) limits the sentence to those technologies."""
    parts = []
    for service, label in (("space_heating", "space heating"), ("hot_water", "hot water")):
        for tech, figures in sorted(cop_bounds.get(service, {}).items()):
            if used_technologies is not None and tech not in used_technologies:
                continue
            for clip, value in (("min", COP_MIN), ("max", COP_MAX)):
                hours = sum(v for k, v in figures.items() if k.endswith(f"_hours_at_cop_{clip}"))
                if hours > 0:
                    parts.append(f"{tech} ({label}) {hours:,.0f} h at {value:g}")
    if not parts:
        return ""
    return (f"Heat pump COP held at its bounds [{COP_MIN:g}, {COP_MAX:g}] (docs/model.md section 2): "
            + "; ".join(parts) + " (district- or well-hours).")


def prepare_run(scenario: Scenario, cost_case: str, settings: Settings | None = None) -> PreparedRun:
    settings = settings or scenario.settings
    prices = apply_cost_case(scenario, cost_case)
    heat_year, cool_year = demand_year_kw(scenario, settings)
    grid = build_time_grid(scenario, settings, heat_year, cool_year)
    steps = grid.year_hour
    # demand at the steps: each district's duration curve (hence its annual sum) is the year's
    heat_steps, heat_error = DEMAND_REPRESENTATION(heat_year, grid)
    cool_steps, cool_error = DEMAND_REPRESENTATION(cool_year, grid)
    hot_water_year = hot_water_year_kw(scenario, heat_year)
    hot_water_steps = np.minimum(DEMAND_REPRESENTATION(hot_water_year, grid)[0], heat_steps)
    aggregation = aggregation_report(grid, heat_year, cool_year, heat_steps, cool_steps, heat_error, cool_error,
                                     {} if grid.is_full_year else extreme_days(scenario, heat_year, cool_year))
    districts = scenario.districts
    techs = scenario.technologies
    outdoor = scenario.hourly["outdoor_temp_c"].to_numpy(float)[steps]
    supply = districts["supply_temp_c"].to_numpy(float)

    hot_water_c = hot_water_temp_c(districts)
    # hot water is made at its own temperature, at least the space-heating supply temperature
    hot_water_sink = np.maximum(hot_water_c, supply)
    air_cop, air_cop_hw = {}, {}
    for row in techs[techs["kind"] == "air_heat_pump"].itertuples(index=False):
        air_cop[row.technology_id] = heatpump.heat_pump_cop(
            supply[:, None], outdoor[None, :], row.cop_quality_grade, row.sink_approach_k, row.source_approach_k,
            COP_MIN, COP_MAX,
        )
        air_cop_hw[row.technology_id] = heatpump.heat_pump_cop(
            hot_water_sink[:, None], outdoor[None, :], row.cop_quality_grade, row.sink_approach_k,
            row.source_approach_k, COP_MIN, COP_MAX,
        )

    wells = scenario.wells
    district_index = {d: i for i, d in enumerate(districts["district_id"])}
    well_district = np.array([district_index[d] for d in wells["district_id"]], dtype=int)
    # groundwater temperature of a typical day: its cluster's distribution (the aquifer lags the weather by weeks)
    gw = GROUNDWATER_REPRESENTATION(groundwater_year_c(scenario), grid) if len(wells) else np.zeros((0, len(steps)))
    well_cop, well_cop_hw = {}, {}
    for row in techs[techs["kind"] == "groundwater_heat_pump"].itertuples(index=False):
        well_cop[row.technology_id] = heatpump.heat_pump_cop(
            supply[well_district][:, None], gw, row.cop_quality_grade, row.sink_approach_k, row.source_approach_k,
            COP_MIN, COP_MAX,
        )
        well_cop_hw[row.technology_id] = heatpump.heat_pump_cop(
            hot_water_sink[well_district][:, None], gw, row.cop_quality_grade, row.sink_approach_k,
            row.source_approach_k, COP_MIN, COP_MAX,
        )
    design = wells["design_spread_k"].to_numpy(float)[:, None] if len(wells) else np.zeros((0, 1))
    spread_h = wells_mod.usable_spread_heating_k(gw, design, settings.reinjection_min_temp_c)
    spread_c = wells_mod.usable_spread_cooling_k(gw, design, settings.reinjection_max_temp_c)
    rho = water.water_density_kg_per_m3(np.clip(gw, 0.5, 99.0)) if len(wells) else np.zeros_like(gw)
    flow_h = flow_per_kw_kg_s(spread_h, gw)
    flow_c = flow_per_kw_kg_s(spread_c, gw)
    if len(wells):
        rho_mean = water.water_density_kg_per_m3(np.clip(wells["groundwater_temp_c"].to_numpy(float), 0.5, 99))
        permit_kg_s = wells["permit_flow_m3_per_h"].to_numpy(float) * rho_mean / SECONDS_PER_HOUR
        volume = wells["permit_annual_volume_m3"].to_numpy(float)
        volume = np.where(np.isnan(volume), np.inf, volume)
    else:
        permit_kg_s = np.zeros(0)
        volume = np.zeros(0)

    annuity = {
        row.technology_id: float(economics.annuity_factor(settings.discount_rate, row.lifetime_a))
        for row in techs.itertuples(index=False)
    }
    hourly = scenario.hourly
    # prices and CO2 factors at the steps: each typical day keeps its cluster's duration curve of what a MWh of
    # electricity and of network heat costs (sums exact)
    electricity_price, grid_co2 = carrier_at_steps(grid, prices.electricity_eur_per_mwh,
                                                   hourly["grid_co2_kg_per_mwh"].to_numpy(float), prices.co2_eur_per_t)
    network_price, network_co2 = carrier_at_steps(grid, prices.network_eur_per_mwh,
                                                  hourly["network_co2_kg_per_mwh"].to_numpy(float), prices.co2_eur_per_t)
    return PreparedRun(
        scenario=scenario,
        settings=settings,
        cost_case=cost_case,
        prices=prices,
        grid=grid,
        district_ids=list(districts["district_id"]),
        heat_demand_kw=heat_steps,
        cooling_demand_kw=cool_steps,
        hot_water_demand_kw=hot_water_steps,
        hot_water_temp_c=hot_water_c,
        air_cop_hot_water=air_cop_hw,
        well_cop_hot_water=well_cop_hw,
        heat_demand_year_kw=heat_year,
        cooling_demand_year_kw=cool_year,
        air_cop=air_cop,
        well_ids=list(wells["well_id"]),
        well_district=well_district,
        groundwater_temp_c=gw,
        well_cop=well_cop,
        well_flow_per_kw_heating=flow_h,
        well_flow_per_kw_cooling=flow_c,
        well_permit_flow_kg_s=permit_kg_s,
        well_annual_volume_m3=volume,
        well_density_kg_per_m3=rho,
        spread_heating_k=spread_h,
        spread_cooling_k=spread_c,
        electricity_eur_per_mwh=electricity_price,
        network_eur_per_mwh=network_price,
        grid_co2_kg_per_mwh=grid_co2,
        network_co2_kg_per_mwh=network_co2,
        annuity=annuity,
        aggregation=aggregation,
        cop_bounds={
            "space_heating": {**cop_bound_report(air_cop, grid.weight_h, "district"),
                              **cop_bound_report(well_cop, grid.weight_h, "well")},
            "hot_water": {**cop_bound_report(air_cop_hw, grid.weight_h, "district"),
                          **cop_bound_report(well_cop_hw, grid.weight_h, "well")},
        },
    )


def with_settings(settings: Settings, **changes) -> Settings:
    return dataclasses.replace(settings, **changes)


__all__ = ["PreparedRun", "prepare_run", "with_settings"]
