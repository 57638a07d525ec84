"""Small scenarios built in code, for tests that need full control over every number."""

from __future__ import annotations

import numpy as np
import pandas as pd

from engine.scenario.inputs import Aquifer, CostCase, Prices, Scenario, Settings

TECH_COLUMNS = dict(
    name="",
    efficiency=1.0,
    cop_quality_grade=0.5,
    source_approach_k=5.0,
    sink_approach_k=3.0,
    investment_eur_per_kw=0.0,
    fixed_om_pct_per_a=0.0,
    variable_om_eur_per_mwh=0.0,
    lifetime_a=20.0,
    store_loss_pct_per_h=0.0,
    store_efficiency=1.0,
    store_hours=0.0,
)


def square(lon0: float, lat0: float, size: float = 0.01) -> dict:
    ring = [[lon0, lat0], [lon0 + size, lat0], [lon0 + size, lat0 + size], [lon0, lat0 + size], [lon0, lat0]]
    return {"type": "Polygon", "coordinates": [ring]}


def technologies(*rows: dict) -> pd.DataFrame:
    full = []
    for row in rows:
        r = dict(TECH_COLUMNS)
        r.update(row)
        r["name"] = r["name"] or r["technology_id"]
        full.append(r)
    return pd.DataFrame(full)


def district(district_id: str, k: int = 0, **values) -> dict:
    row = dict(
        district_id=district_id,
        name=district_id,
        heat_demand_mwh_per_a=0.0,
        cooling_demand_mwh_per_a=0.0,
        supply_temp_c=55.0,
        hot_water_share=0.15,
        network_available=False,
        network_connection_limit_kw=0.0,
        geometry=square(10.0 + 0.02 * k, 50.0),
    )
    row.update(values)
    return row


def well(well_id: str, district_id: str, **values) -> dict:
    row = dict(
        well_id=well_id,
        district_id=district_id,
        lon=10.005,
        lat=50.005,
        reinjection_lon=10.006,
        reinjection_lat=50.005,
        permit_flow_m3_per_h=50.0,
        permit_annual_volume_m3=np.inf,
        design_spread_k=4.0,
        groundwater_temp_c=11.0,
        groundwater_temp_amplitude_k=0.0,
        coldest_day_of_year=1,
    )
    row.update(values)
    return row


def hourly(n: int = 8760, outdoor_temp_c=5.0, electricity=100.0, grid_co2=200.0, network=80.0, network_co2=100.0):
    def series(v):
        return np.broadcast_to(np.asarray(v, float), (n,)).copy()

    return pd.DataFrame(
        {
            "hour": np.arange(n),
            "outdoor_temp_c": series(outdoor_temp_c),
            "electricity_price_eur_per_mwh": series(electricity),
            "grid_co2_kg_per_mwh": series(grid_co2),
            "network_price_eur_per_mwh": series(network),
            "network_co2_kg_per_mwh": series(network_co2),
        }
    )


def scenario(
    districts: list[dict],
    techs: pd.DataFrame,
    hourly_table: pd.DataFrame,
    wells: list[dict] | None = None,
    existing: dict | None = None,
    potential: dict | None = None,
    heat_demand_hourly_kw: pd.DataFrame | None = None,
    settings: Settings | None = None,
    prices: Prices | None = None,
    cost_cases: dict | None = None,
) -> Scenario:
    existing = existing or {}
    potential = potential or {}
    dframe = pd.DataFrame(districts)
    dt = [
        {
            "district_id": d,
            "technology_id": t,
            "existing_kw": float(existing.get((d, t), 0.0)),
            "potential_kw": float(potential.get((d, t), np.inf)),
        }
        for d in dframe["district_id"]
        for t in techs["technology_id"]
    ]
    wells_frame = pd.DataFrame(wells or [], columns=list(well("x", "x").keys()))
    return Scenario(
        settings=settings or Settings(typical_days=0),
        prices=prices or Prices(),
        aquifer=Aquifer(),
        districts=dframe,
        technologies=techs,
        district_technologies=pd.DataFrame(dt),
        wells=wells_frame,
        hourly=hourly_table,
        cost_cases=cost_cases or {"reference": CostCase()},
        heat_demand_hourly_kw=heat_demand_hourly_kw,
    )
