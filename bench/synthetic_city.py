"""Synthetic cities of any number of districts, for benchmarks and tests.

:func:`synthetic_city` builds an :class:`engine.scenario.inputs.Scenario` in code from a seed: districts on a grid of
square polygons, a small technology catalogue (gas boiler, air and groundwater heat pumps, network connection,
electric boiler, heat store, chiller), doublets in about a third of the districts, room for a heat store in about
a third, existing gas boilers in the older ones, and an
hourly year of weather and prices built from smooth seasonal and daily waves plus seeded noise. Every figure is
invented; the city exists only to give the model realistic block sizes and a non-trivial supply mix.

:func:`write_scenario_folder` writes such a city as a scenario folder (``docs/input_format.md``) so that the
command line can read it; that needs a whole year of 8760 or 8784 hours.

Run ``python bench/synthetic_city.py 20 /tmp/city20`` to write a 20-district city.
"""

from __future__ import annotations

import json
import math
import sys
from pathlib import Path

import numpy as np
import pandas as pd

if __package__ in (None, ""):
    sys.path.insert(0, str(Path(__file__).resolve().parents[1]))

from engine.scenario.inputs import Aquifer, CostCase, Prices, Scenario, Settings  # noqa: E402

_TECHNOLOGY_ROWS = [
    # id, kind, carrier, efficiency, grade, source approach, sink approach, invest, fixed O&M %, var O&M, life,
    # store loss %/h, store efficiency, store hours
    ("gas_boiler", "Gas boiler", "fuel_boiler", "gas", 0.92, 0.5, 5.0, 3.0, 150.0, 1.5, 2.0, 20, 0.0, 1.0, 0.0),
    ("air_hp", "Air-source heat pump", "air_heat_pump", "electricity", 1.0, 0.42, 6.0, 3.0, 900.0, 2.5, 1.5, 18,
     0.0, 1.0, 0.0),
    ("gw_hp", "Groundwater heat pump", "groundwater_heat_pump", "electricity", 1.0, 0.5, 4.0, 3.0, 1100.0, 2.0,
     1.5, 25, 0.0, 1.0, 0.0),
    ("network", "Heat network substation", "network_connection", "network", 1.0, 0.5, 5.0, 3.0, 100.0, 2.0, 0.5,
     30, 0.0, 1.0, 0.0),
    ("electric_boiler", "Electric boiler", "electric_boiler", "electricity", 0.99, 0.5, 5.0, 3.0, 70.0, 1.5, 0.5,
     20, 0.0, 1.0, 0.0),
    ("heat_store", "Hot-water store", "heat_store", "none", 1.0, 0.5, 5.0, 3.0, 30.0, 1.0, 0.0, 30, 0.25, 0.94,
     6.0),
    ("chiller", "Compression chiller", "chiller", "electricity", 3.3, 0.5, 5.0, 3.0, 330.0, 2.5, 1.0, 20, 0.0,
     1.0, 0.0),
]
_TECHNOLOGY_COLUMNS = [
    "technology_id", "name", "kind", "carrier", "efficiency", "cop_quality_grade", "source_approach_k",
    "sink_approach_k", "investment_eur_per_kw", "fixed_om_pct_per_a", "variable_om_eur_per_mwh", "lifetime_a",
    "store_loss_pct_per_h", "store_efficiency", "store_hours",
]
_WELL_COLUMNS = [
    "well_id", "district_id", "lon", "lat", "reinjection_lon", "reinjection_lat", "permit_flow_m3_per_h",
    "permit_annual_volume_m3", "design_spread_k", "groundwater_temp_c", "groundwater_temp_amplitude_k",
    "coldest_day_of_year",
]
_ORIGIN_LON, _ORIGIN_LAT, _CELL_DEG = 8.40, 49.00, 0.008


def _square(lon0: float, lat0: float, size: float) -> dict:
    ring = [[lon0, lat0], [lon0 + size, lat0], [lon0 + size, lat0 + size], [lon0, lat0 + size], [lon0, lat0]]
    return {"type": "Polygon", "coordinates": [[[round(x, 6), round(y, 6)] for x, y in ring]]}


def synthetic_hourly(n_hours: int = 8760, seed: int = 0) -> pd.DataFrame:
    """An invented year (or part of one) of hourly weather, prices and CO2 factors.

    Parameters
    ----------
    n_hours : int
        Number of hours, a positive multiple of 24. The seasonal wave always spans the series, so a two-week
        series still has a cold and a mild end. [h]
    seed : int
        Seed of the noise.

    Returns
    -------
    pandas.DataFrame
        The columns of ``hourly.csv``.
    """
    if n_hours <= 0 or n_hours % 24:
        raise ValueError(f"n_hours must be a positive multiple of 24, got {n_hours}")
    rng = np.random.default_rng(seed)
    hour = np.arange(n_hours)
    season = np.cos(2 * np.pi * (hour - 0.05 * n_hours) / n_hours)  # 1 in mid-winter, -1 in summer
    daily = np.sin(2 * np.pi * ((hour % 24) - 9) / 24)  # warmest mid-afternoon
    # day-to-day weather: an AR(1) walk on daily means, smooth within the day
    n_days = n_hours // 24
    walk = np.zeros(n_days)
    shocks = rng.normal(0.0, 1.6, n_days)
    for d in range(1, n_days):
        walk[d] = 0.8 * walk[d - 1] + shocks[d]
    outdoor = 9.5 - 10.5 * season + 3.5 * daily + np.repeat(walk, 24) + rng.normal(0, 0.4, n_hours)
    morning_evening = np.exp(-0.5 * (((hour % 24) - 8) / 2.0) ** 2) + np.exp(-0.5 * (((hour % 24) - 19) / 2.5) ** 2)
    solar_dip = np.exp(-0.5 * (((hour % 24) - 13) / 2.5) ** 2) * (1 - season) / 2
    electricity = 85.0 + 18.0 * season + 30.0 * morning_evening - 35.0 * solar_dip + rng.normal(0, 6.0, n_hours)
    electricity = np.maximum(electricity, 5.0)
    grid_co2 = 260.0 + 70.0 * season + 60.0 * morning_evening - 110.0 * solar_dip + rng.normal(0, 15.0, n_hours)
    grid_co2 = np.maximum(grid_co2, 30.0)
    network_price = 68.0 + 12.0 * season + rng.normal(0, 1.0, n_hours)
    network_co2 = 140.0 + 30.0 * season
    return pd.DataFrame(
        {
            "hour": hour,
            "outdoor_temp_c": np.round(outdoor, 2),
            "electricity_price_eur_per_mwh": np.round(electricity, 2),
            "grid_co2_kg_per_mwh": np.round(grid_co2, 1),
            "network_price_eur_per_mwh": np.round(network_price, 2),
            "network_co2_kg_per_mwh": np.round(network_co2, 1),
        }
    )


def synthetic_city(
    n_districts: int,
    n_hours: int = 8760,
    typical_days: int = 12,
    seed: int = 0,
    name: str | None = None,
) -> Scenario:
    """A seeded invented city of ``n_districts`` districts.

    Parameters
    ----------
    n_districts : int
        Number of districts, >= 1.
    n_hours : int
        Length of the hourly series, a multiple of 24 (8760 for a year; shorter series make small test models).
        Annual demands and specific investments are scaled by ``n_hours / 8760`` so that hourly loads and the
        balance of capacity and energy costs stay those of a real city. [h]
    typical_days : int
        The scenario's default time resolution (0 = every hour).
    seed : int
        Seed of every random choice.

    Returns
    -------
    engine.scenario.inputs.Scenario
        With the cost cases ``reference``, ``high_co2``, ``cheap_network`` and ``heat_pump_subsidy``.
    """
    if int(n_districts) < 1:
        raise ValueError(f"n_districts must be >= 1, got {n_districts}")
    n_districts = int(n_districts)
    rng = np.random.default_rng(seed + 7919 * n_districts)
    hourly = synthetic_hourly(n_hours, seed)
    year_share = n_hours / 8760.0
    side = math.ceil(math.sqrt(n_districts))
    districts, dist_tech, wells = [], [], []
    for k in range(n_districts):
        did = f"d{k:03d}"
        col, row = k % side, k // side
        lon0 = _ORIGIN_LON + col * _CELL_DEG
        lat0 = _ORIGIN_LAT + row * _CELL_DEG * 0.65
        heat_mwh = float(np.round(rng.lognormal(np.log(18_000.0), 0.6), -1))
        supply_temp = float(rng.choice([45.0, 55.0, 65.0, 75.0], p=[0.2, 0.3, 0.3, 0.2]))
        network = bool(rng.random() < 0.45)
        cooling = float(np.round(heat_mwh * rng.uniform(0.05, 0.15), -1)) if rng.random() < 0.2 else 0.0
        peak_kw = heat_mwh * 1000.0 / 2200.0  # about 2200 full-load hours
        districts.append(
            {
                "district_id": did,
                "name": f"District {k + 1}",
                "heat_demand_mwh_per_a": heat_mwh * year_share,
                "cooling_demand_mwh_per_a": cooling * year_share,
                "supply_temp_c": supply_temp,
                "hot_water_share": float(np.round(rng.uniform(0.1, 0.2), 3)),
                "network_available": network,
                "network_connection_limit_kw": float(np.round(peak_kw * rng.uniform(0.3, 0.8), -1)) if network else 0.0,
                "geometry": _square(lon0, lat0, _CELL_DEG * 0.95),
            }
        )
        old = supply_temp >= 65.0
        potential = {
            "gas_boiler": math.inf,
            "air_hp": float(np.round(peak_kw * rng.uniform(0.2, 0.6), -1)),
            "gw_hp": math.inf,
            "network": math.inf,
            "electric_boiler": math.inf,
            # about one district in three has room for a store
            "heat_store": float(np.round(peak_kw * rng.uniform(1.0, 4.0), -1)) if rng.random() < 0.35 else 0.0,
            "chiller": math.inf,
        }
        existing = {t: 0.0 for t in potential}
        if old:
            existing["gas_boiler"] = float(np.round(peak_kw * rng.uniform(0.5, 0.9), -1))
        if rng.random() < 0.35:
            n_wells = int(rng.integers(1, 3))
            for w in range(n_wells):
                lon = lon0 + _CELL_DEG * (0.25 + 0.4 * w)
                lat = lat0 + _CELL_DEG * 0.3
                wells.append(
                    {
                        "well_id": f"{did}-w{w + 1}",
                        "district_id": did,
                        "lon": round(lon, 6),
                        "lat": round(lat, 6),
                        "reinjection_lon": round(lon + 0.0014, 6),
                        "reinjection_lat": round(lat, 6),
                        "permit_flow_m3_per_h": float(rng.choice([40.0, 60.0, 90.0])),
                        "permit_annual_volume_m3": math.inf,
                        "design_spread_k": 5.0,
                        "groundwater_temp_c": float(np.round(rng.uniform(10.0, 12.5), 1)),
                        "groundwater_temp_amplitude_k": 0.6,
                        "coldest_day_of_year": 75,
                    }
                )
        else:
            potential["gw_hp"] = 0.0
        for tech, limit in potential.items():
            dist_tech.append(
                {"district_id": did, "technology_id": tech, "existing_kw": existing[tech], "potential_kw": limit}
            )
    technologies = pd.DataFrame(_TECHNOLOGY_ROWS, columns=_TECHNOLOGY_COLUMNS)
    technologies["lifetime_a"] = technologies["lifetime_a"].astype(float)
    # annual costs of capacity shrink with a shortened year so that capacity and energy keep their real balance
    technologies["investment_eur_per_kw"] = technologies["investment_eur_per_kw"] * year_share
    cost_cases = {
        "reference": CostCase(),
        "high_co2": CostCase(
            name="high_co2", description="CO2 at 250 EUR/t, gas 20 % dearer", co2_eur_per_t=250.0,
            gas_price_factor=1.2,
        ),
        "cheap_network": CostCase(
            name="cheap_network", description="Network heat 25 % cheaper", network_price_factor=0.75
        ),
        "heat_pump_subsidy": CostCase(
            name="heat_pump_subsidy", description="35 % subsidy on heat pumps, electricity 10 % cheaper",
            electricity_price_factor=0.9, subsidy_share={"air_hp": 0.35, "gw_hp": 0.35},
        ),
    }
    wells_frame = pd.DataFrame(wells, columns=_WELL_COLUMNS)
    wells_frame["coldest_day_of_year"] = wells_frame["coldest_day_of_year"].astype("int64")
    return Scenario(
        settings=Settings(name=name or f"Synthetic city of {n_districts} districts", typical_days=int(typical_days)),
        prices=Prices(gas_eur_per_mwh=58.0, co2_eur_per_t=110.0),
        aquifer=Aquifer(),
        districts=pd.DataFrame(districts),
        technologies=technologies,
        district_technologies=pd.DataFrame(dist_tech),
        wells=wells_frame,
        hourly=hourly,
        cost_cases=cost_cases,
        source=f"synthetic:{n_districts}:{n_hours}:{seed}",
    )


def _toml_value(value) -> str:
    if isinstance(value, bool):
        return "true" if value else "false"
    if isinstance(value, (int, float, np.floating, np.integer)):
        return repr(float(value)) if isinstance(value, (float, np.floating)) else str(int(value))
    return json.dumps(str(value))


def write_scenario_folder(scenario: Scenario, folder: str | Path) -> Path:
    """Write ``scenario`` as a scenario folder that :func:`engine.scenario.load_scenario` reads back.

    Raises
    ------
    ValueError
        If the hourly series is not a whole year (8760 or 8784 hours), which the folder format requires.
    """
    if scenario.n_hours not in (8760, 8784):
        raise ValueError(f"scenario: a scenario folder needs 8760 or 8784 hours, this one has {scenario.n_hours}")
    out = Path(folder)
    out.mkdir(parents=True, exist_ok=True)
    s = scenario.settings
    lines = ["[run]"]
    for key in ("name", "target_year", "objective", "discount_rate", "typical_days",
                "value_of_unserved_heat_eur_per_mwh", "co2_cap_t_per_a", "network_plant_limit_kw",
                "heating_base_temp_c", "cooling_base_temp_c", "reinjection_min_temp_c", "reinjection_max_temp_c"):
        if getattr(s, key) is not None:  # None: no limit, written by leaving the key out
            lines.append(f"{key} = {_toml_value(getattr(s, key))}")
    p = scenario.prices
    lines += ["", "[prices]"] + [
        f"{key} = {_toml_value(getattr(p, key))}"
        for key in ("gas_eur_per_mwh", "oil_eur_per_mwh", "biomass_eur_per_mwh", "co2_eur_per_t")
    ]
    lines += ["", "[co2_factors]"] + [f"{f}_kg_per_mwh = {float(v)!r}" for f, v in p.co2_kg_per_mwh.items()]
    a = scenario.aquifer
    lines += ["", "[aquifer]"] + [f"{k} = {_toml_value(v)}" for k, v in a.__dict__.items()]
    (out / "scenario.toml").write_text("\n".join(lines) + "\n")

    features = []
    for row in scenario.districts.to_dict(orient="records"):
        geometry = row.pop("geometry")
        features.append({"type": "Feature", "properties": row, "geometry": geometry})
    (out / "districts.geojson").write_text(json.dumps({"type": "FeatureCollection", "features": features}))
    techs = scenario.technologies.astype(object)
    kind = scenario.technologies["kind"]
    # the file leaves blank what a kind does not use (the reader fills its defaults)
    pumps = kind.isin(["air_heat_pump", "groundwater_heat_pump"])
    techs.loc[~pumps, ["cop_quality_grade", "source_approach_k", "sink_approach_k"]] = ""
    techs.loc[kind != "heat_store", ["store_loss_pct_per_h", "store_efficiency", "store_hours"]] = ""
    techs.loc[pumps | kind.isin(["network_connection", "heat_store"]), "efficiency"] = ""
    techs.to_csv(out / "technologies.csv", index=False)
    scenario.hourly.to_csv(out / "hourly.csv", index=False)
    dt = scenario.district_technologies.copy()
    dt["potential_kw"] = dt["potential_kw"].map(lambda v: "" if not np.isfinite(v) else v)
    dt.to_csv(out / "district_technologies.csv", index=False)
    if len(scenario.wells):
        wells = scenario.wells.copy()
        wells["permit_annual_volume_m3"] = wells["permit_annual_volume_m3"].map(
            lambda v: "" if not np.isfinite(v) else v
        )
        wells.to_csv(out / "wells.csv", index=False)
    case_lines = []
    for name, case in scenario.cost_cases.items():
        case_lines += ["", f"[cases.{name}]", f"description = {json.dumps(case.description)}"]
        if case.co2_eur_per_t is not None:
            case_lines.append(f"co2_eur_per_t = {float(case.co2_eur_per_t)!r}")
        for key in ("gas_price_factor", "oil_price_factor", "biomass_price_factor", "electricity_price_factor",
                    "network_price_factor"):
            if getattr(case, key) != 1.0:
                case_lines.append(f"{key} = {float(getattr(case, key))!r}")
        for table in ("subsidy_share", "investment_factor"):
            values = getattr(case, table)
            if values:
                case_lines += ["", f"[cases.{name}.{table}]"] + [f"{k} = {float(v)!r}" for k, v in values.items()]
    (out / "cost_cases.toml").write_text("# Cost cases of an invented synthetic city.\n" + "\n".join(case_lines) + "\n")
    return out


if __name__ == "__main__":
    if len(sys.argv) != 3:
        print("usage: python bench/synthetic_city.py N_DISTRICTS FOLDER", file=sys.stderr)
        sys.exit(2)
    path = write_scenario_folder(synthetic_city(int(sys.argv[1])), sys.argv[2])
    print(f"written to {path}")
