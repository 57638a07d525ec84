"""Read a solved district LP back into the tidy tables of :class:`engine.model.results.RunResult`."""

from __future__ import annotations

import numpy as np
import pandas as pd

from engine.physics.economics import levelised_cost_eur_per_mwh
from engine.model.lp import LpSolution
from engine.model.formulation import DistrictModel
from engine.scenario.kinds import COOLING_KINDS
from engine.units import KG_PER_T, KWH_PER_MWH, SECONDS_PER_HOUR

UNSERVED_TOLERANCE_MWH = 0.5
"""Unserved heat above this in a year [MWh/a] marks a district (map class ``unserved``) and a run
(status ``optimal_with_unserved``); below it, it is solver noise."""

FLOW_BINDS_SHARE = 0.999
"""A well limit counts as binding when the flow reaches this share of the permit in some step."""


def _annual_mwh(power_kw: np.ndarray, weight_h: np.ndarray) -> np.ndarray:
    return (power_kw * weight_h[None, :]).sum(axis=1) / KWH_PER_MWH


def extract_tables(model: DistrictModel, solution: LpSolution) -> dict[str, pd.DataFrame]:
    prepared = model.prepared
    x = solution.x
    units, stores, cols = model.units, model.stores, model.cols
    w = prepared.grid.weight_h
    n_t = prepared.n_steps
    scenario = prepared.scenario
    dtab = scenario.districts.set_index("district_id")
    ids = prepared.district_ids
    co2_price = prepared.prices.co2_eur_per_t
    money = model.money

    out = np.maximum(x[cols["out"]], 0.0)
    new = np.maximum(x[cols["new"]], 0.0)
    heat_out = np.where(units.serves_cooling[:, None], 0.0, out)
    cool_out = np.where(units.serves_cooling[:, None], out, 0.0)
    elec = out * units.electricity
    fuel = out * units.fuel
    co2_t = (model.emissions[cols["out"]] * out).sum(axis=1)
    var_om_rate = scenario.technologies.set_index("technology_id").loc[units.technology_id, "variable_om_eur_per_mwh"]
    var_om = _annual_mwh(out, w) * var_om_rate.to_numpy(float)
    total_out_cost = (money[cols["out"]] * out).sum(axis=1)
    lifted = cols.get("hot_water_units", np.zeros(0, int))
    hot_water = np.zeros_like(out)
    if len(lifted):
        # hot water from heat pumps: the extra electricity (and its cost and CO2) of the higher sink temperature
        hw = np.maximum(x[cols["hot_water"]], 0.0)
        hot_water[lifted] = hw
        elec[lifted] += hw * (units.electricity_hot_water[lifted] - units.electricity[lifted])
        co2_t[lifted] += (model.emissions[cols["hot_water"]] * hw).sum(axis=1)
        total_out_cost[lifted] += (money[cols["hot_water"]] * hw).sum(axis=1)
    co2_eur = co2_price * co2_t
    energy_eur = total_out_cost - var_om - co2_eur
    n_u = len(units.technology_id)
    fom_existing = model.constant_fixed_om[:n_u]
    gross = np.array([prepared.prices.gross_investment_eur_per_kw[t] for t in units.technology_id])
    fom_share = scenario.technologies.set_index("technology_id").loc[units.technology_id, "fixed_om_pct_per_a"]
    fom_new = fom_share.to_numpy(float) / 100.0 * gross * new
    investment = money[cols["new"]] * new - fom_new

    well_ids = np.array(prepared.well_ids + [""], dtype=object)
    supply = pd.DataFrame(
        {
            "district_id": [ids[i] for i in units.district],
            "technology_id": units.technology_id,
            "kind": units.kind,
            "well_id": well_ids[units.well],
            "existing_kw": units.existing_kw,
            "new_kw": new,
            "capacity_kw": units.existing_kw + new,
            "heat_mwh_per_a": _annual_mwh(heat_out, w),
            "cooling_mwh_per_a": _annual_mwh(cool_out, w),
            "electricity_mwh_per_a": _annual_mwh(elec, w),
            "fuel_mwh_per_a": _annual_mwh(fuel, w),
            "co2_t_per_a": co2_t,
            "investment_eur_per_a": investment,
            "fixed_om_eur_per_a": fom_existing + fom_new,
            "variable_om_eur_per_a": var_om,
            "energy_eur_per_a": energy_eur,
            "co2_eur_per_a": co2_eur,
            "unserved_eur_per_a": 0.0,
        }
    )
    dispatch_parts = [
        pd.DataFrame(
            {
                "step": np.tile(np.arange(n_t), n_u),
                "district_id": np.repeat(supply["district_id"].to_numpy(), n_t),
                "technology_id": np.repeat(np.array(units.technology_id, dtype=object), n_t),
                "well_id": np.repeat(supply["well_id"].to_numpy(), n_t),
                "heat_kw": heat_out.ravel(),
                "cooling_kw": cool_out.ravel(),
                "electricity_kw": elec.ravel(),
                "fuel_kw": fuel.ravel(),
            }
        )
    ]

    n_s = len(stores.technology_id)
    if n_s:
        charge = np.maximum(x[cols["charge"]], 0.0)
        discharge = np.maximum(x[cols["discharge"]], 0.0)
        s_new = np.maximum(x[cols["store_new"]], 0.0)
        s_gross = np.array([prepared.prices.gross_investment_eur_per_kw[t] for t in stores.technology_id])
        s_fom_share = scenario.technologies.set_index("technology_id").loc[stores.technology_id, "fixed_om_pct_per_a"]
        s_fom_new = s_fom_share.to_numpy(float) / 100.0 * s_gross * s_new
        s_var = (money[cols["discharge"]] * discharge).sum(axis=1)
        store_rows = pd.DataFrame(
            {
                "district_id": [ids[i] for i in stores.district],
                "technology_id": stores.technology_id,
                "kind": "heat_store",
                "well_id": "",
                "existing_kw": stores.existing_kwh,
                "new_kw": s_new,
                "capacity_kw": stores.existing_kwh + s_new,
                "heat_mwh_per_a": _annual_mwh(discharge - charge, w),
                "cooling_mwh_per_a": 0.0,
                "electricity_mwh_per_a": 0.0,
                "fuel_mwh_per_a": 0.0,
                "co2_t_per_a": 0.0,
                "investment_eur_per_a": money[cols["store_new"]] * s_new - s_fom_new,
                "fixed_om_eur_per_a": model.constant_fixed_om[n_u:] + s_fom_new,
                "variable_om_eur_per_a": s_var,
                "energy_eur_per_a": 0.0,
                "co2_eur_per_a": 0.0,
                "unserved_eur_per_a": 0.0,
            }
        )
        supply = pd.concat([supply, store_rows], ignore_index=True)
        dispatch_parts.append(
            pd.DataFrame(
                {
                    "step": np.tile(np.arange(n_t), n_s),
                    "district_id": np.repeat(store_rows["district_id"].to_numpy(), n_t),
                    "technology_id": np.repeat(np.array(stores.technology_id, dtype=object), n_t),
                    "well_id": "",
                    "heat_kw": (discharge - charge).ravel(),
                    "cooling_kw": 0.0,
                    "electricity_kw": 0.0,
                    "fuel_kw": 0.0,
                }
            )
        )
    dispatch = pd.concat(dispatch_parts, ignore_index=True)

    # ---------------------------------------------------------------- demand, unserved and marginal cost
    d_idx = model.districts
    heat_dem = prepared.heat_demand_kw[d_idx]
    cool_dem = prepared.cooling_demand_kw[d_idx]
    uns_h = np.maximum(x[cols["unserved_heat"]], 0.0)
    uns_c = np.zeros_like(cool_dem)
    if len(cols["cooled"]):
        uns_c[cols["cooled"]] = np.maximum(x[cols["unserved_cooling"]], 0.0)
    if solution.row_dual is not None:
        dual = solution.row_dual[model.rows["heat_balance"]]
        marginal = dual / (w[None, :] / KWH_PER_MWH)
    else:
        marginal = np.full_like(heat_dem, np.nan)
    n_d = len(d_idx)
    demand = pd.DataFrame(
        {
            "step": np.tile(np.arange(n_t), n_d),
            "district_id": np.repeat(np.array([ids[i] for i in d_idx], dtype=object), n_t),
            "heat_demand_kw": heat_dem.ravel(),
            "cooling_demand_kw": cool_dem.ravel(),
            "unserved_heat_kw": uns_h.ravel(),
            "unserved_cooling_kw": uns_c.ravel(),
            "marginal_cost_eur_per_mwh": marginal.ravel(),
        }
    )

    # ---------------------------------------------------------------- districts
    voll = prepared.settings.value_of_unserved_heat_eur_per_mwh
    unserved_heat_mwh = _annual_mwh(uns_h, w)
    unserved_cool_mwh = _annual_mwh(uns_c, w)
    parts = ["investment_eur_per_a", "fixed_om_eur_per_a", "variable_om_eur_per_a", "energy_eur_per_a",
             "co2_eur_per_a"]
    agg = supply.groupby("district_id", sort=False)[parts + ["co2_t_per_a"]].sum()
    cooling_rows = supply["kind"].isin(COOLING_KINDS)
    cooling_cost = supply[cooling_rows].groupby("district_id", sort=False)[parts].sum().sum(axis=1)
    heat_supply = supply[supply["kind"] != "heat_store"]
    main = (
        heat_supply[heat_supply["heat_mwh_per_a"] > 0]
        .groupby(["district_id", "technology_id"])["heat_mwh_per_a"].sum()
        .reset_index()
        .sort_values(["district_id", "heat_mwh_per_a"], ascending=[True, False])
        .drop_duplicates("district_id")
        .set_index("district_id")["technology_id"]
    )
    largest_heat = heat_supply.groupby("district_id")["heat_mwh_per_a"].max()
    rows = []
    for k, i in enumerate(d_idx):
        did = ids[i]
        a = agg.loc[did] if did in agg.index else pd.Series(0.0, index=agg.columns)
        heat_mwh = float((heat_dem[k] * w).sum() / KWH_PER_MWH)
        cool_mwh = float((cool_dem[k] * w).sum() / KWH_PER_MWH)
        uns_eur = voll * (unserved_heat_mwh[k] + unserved_cool_mwh[k])
        total = float(a.sum() - a["co2_t_per_a"] + uns_eur)
        served = heat_mwh + cool_mwh
        cool_eur = float(cooling_cost.get(did, 0.0))
        # levelised cost of heat: the cost of the heat supply (no unserved-heat penalty, no cooling) per MWh served
        heat_eur = total - float(uns_eur) - cool_eur
        heat_served = max(heat_mwh - float(unserved_heat_mwh[k]), 0.0)
        cool_served = max(cool_mwh - float(unserved_cool_mwh[k]), 0.0)
        # unserved heat is the main "supply" where it exceeds the tolerance and the largest technology's heat
        unserved_main = unserved_heat_mwh[k] > UNSERVED_TOLERANCE_MWH and unserved_heat_mwh[k] >= float(
            largest_heat.get(did, 0.0))
        rows.append(
            {
                "district_id": did,
                "name": str(dtab.loc[did, "name"]),
                "heat_demand_mwh_per_a": heat_mwh,
                "cooling_demand_mwh_per_a": cool_mwh,
                "unserved_heat_mwh_per_a": float(unserved_heat_mwh[k]),
                "unserved_cooling_mwh_per_a": float(unserved_cool_mwh[k]),
                "investment_eur_per_a": float(a["investment_eur_per_a"]),
                "fixed_om_eur_per_a": float(a["fixed_om_eur_per_a"]),
                "variable_om_eur_per_a": float(a["variable_om_eur_per_a"]),
                "energy_eur_per_a": float(a["energy_eur_per_a"]),
                "co2_eur_per_a": float(a["co2_eur_per_a"]),
                "unserved_eur_per_a": float(uns_eur),
                "total_cost_eur_per_a": total,
                "co2_t_per_a": float(a["co2_t_per_a"]),
                "cooling_cost_eur_per_a": cool_eur,
                "levelised_cost_eur_per_mwh": float(levelised_cost_eur_per_mwh(heat_eur, heat_served)),
                "levelised_cost_of_cooling_eur_per_mwh": float(levelised_cost_eur_per_mwh(cool_eur, cool_served)),
                "co2_kg_per_mwh": KG_PER_T * float(a["co2_t_per_a"]) / served if served > 0 else float("nan"),
                "main_supply": "unserved" if unserved_main else str(
                    main.get(did, "unserved" if unserved_heat_mwh[k] > 0 else "none")),
            }
        )
    districts = pd.DataFrame(rows)
    demand_by_district = districts.set_index("district_id")
    need = (demand_by_district["heat_demand_mwh_per_a"] + demand_by_district["cooling_demand_mwh_per_a"])
    served_mwh = supply["heat_mwh_per_a"] + supply["cooling_mwh_per_a"]
    supply["share_of_demand"] = (served_mwh / supply["district_id"].map(need).replace(0.0, np.nan)).fillna(0.0)

    tables = {
        "districts": districts,
        "supply": supply,
        "dispatch": dispatch,
        "demand": demand,
        "wells": well_table(model, out, units.existing_kw + new, hot_water),
        "well_steps": well_steps_table(model, out, hot_water),
    }
    grid = prepared.grid
    tables["steps"] = pd.DataFrame(
        {
            "step": np.arange(n_t),
            "period": grid.period,
            "hour_of_day": grid.hour_of_day,
            "weight_h": grid.weight_h,
            "year_hour": grid.year_hour,
        }
    )
    tables["day_map"] = pd.DataFrame({"day": np.arange(len(grid.day_period)), "period": grid.day_period})
    return tables


def _well_exchange(model: DistrictModel, out: np.ndarray, hot_water: np.ndarray | None = None):
    """Extracted and rejected heat [kW] per well of the model and step."""
    prepared, units = model.prepared, model.units
    n_w = len(prepared.well_ids)
    extracted = np.zeros((n_w, prepared.n_steps))
    rejected = np.zeros_like(extracted)
    heat = np.zeros_like(extracted)
    cool = np.zeros_like(extracted)
    for u in np.flatnonzero(units.well >= 0):
        j = units.well[u]
        exchange = out[u] * units.aquifer_exchange[u]
        if hot_water is not None and units.aquifer_exchange_hot_water is not None:
            exchange = exchange + hot_water[u] * (units.aquifer_exchange_hot_water[u] - units.aquifer_exchange[u])
        if units.serves_cooling[u]:
            rejected[j] += exchange
            cool[j] += out[u]
        else:
            extracted[j] += exchange
            heat[j] += out[u]
    return extracted, rejected, heat, cool


def _wells_in_model(model: DistrictModel) -> np.ndarray:
    prepared = model.prepared
    return np.flatnonzero(np.isin(prepared.well_district, model.districts))


def well_steps_table(model: DistrictModel, out: np.ndarray, hot_water: np.ndarray | None = None) -> pd.DataFrame:
    prepared = model.prepared
    js = _wells_in_model(model)
    n_t = prepared.n_steps
    extracted, rejected, _, _ = _well_exchange(model, out, hot_water)
    flow_h = np.where(np.isfinite(prepared.well_flow_per_kw_heating), prepared.well_flow_per_kw_heating, 0.0)
    flow_c = np.where(np.isfinite(prepared.well_flow_per_kw_cooling), prepared.well_flow_per_kw_cooling, 0.0)
    flow = extracted * flow_h + rejected * flow_c  # kg/s
    permit = prepared.well_permit_flow_kg_s[:, None]
    share = np.divide(flow, permit, out=np.zeros_like(flow), where=permit > 0)
    gw = prepared.groundwater_temp_c
    # the heat pump runs at the largest spread the window allows; with both services the mixed return is reported
    mixed = np.divide(
        -extracted * flow_h * prepared.spread_heating_k + rejected * flow_c * prepared.spread_cooling_k,
        flow, out=np.zeros_like(flow), where=flow > 1e-9,
    )
    reinjection = np.where(flow > 1e-9, gw + mixed, np.nan)
    ids = np.array(prepared.well_ids, dtype=object)
    return pd.DataFrame(
        {
            "step": np.tile(np.arange(n_t), len(js)),
            "well_id": np.repeat(ids[js], n_t),
            "groundwater_temp_c": gw[js].ravel(),
            "extracted_kw": extracted[js].ravel(),
            "rejected_kw": rejected[js].ravel(),
            "flow_kg_s": flow[js].ravel(),
            "flow_share": share[js].ravel(),
            "reinjection_temp_c": reinjection[js].ravel(),
        }
    )


def well_table(model: DistrictModel, out: np.ndarray, capacity_kw: np.ndarray,
               hot_water: np.ndarray | None = None) -> pd.DataFrame:
    prepared, units = model.prepared, model.units
    js = _wells_in_model(model)
    w = prepared.grid.weight_h
    extracted, rejected, heat, cool = _well_exchange(model, out, hot_water)
    steps = well_steps_table(model, out, hot_water)
    rows = []
    ids = prepared.district_ids
    for j in js:
        wid = prepared.well_ids[j]
        s = steps[steps["well_id"] == wid]
        hp_units = [u for u in np.flatnonzero(units.well == j) if not units.serves_cooling[u]]
        rho = prepared.well_density_kg_per_m3[j]
        volume = float((s["flow_kg_s"].to_numpy() * SECONDS_PER_HOUR / rho * w).sum())
        limit = prepared.well_annual_volume_m3[j]
        peak = float(s["flow_share"].max()) if len(s) else 0.0
        rows.append(
            {
                "well_id": wid,
                "district_id": ids[prepared.well_district[j]],
                "heat_mwh_per_a": float((heat[j] * w).sum() / KWH_PER_MWH),
                "cooling_mwh_per_a": float((cool[j] * w).sum() / KWH_PER_MWH),
                "extracted_mwh_per_a": float((extracted[j] * w).sum() / KWH_PER_MWH),
                "rejected_mwh_per_a": float((rejected[j] * w).sum() / KWH_PER_MWH),
                "heat_pump_kw": float(sum(capacity_kw[u] for u in hp_units)),
                "peak_flow_share": peak,
                "annual_volume_m3": volume,
                "annual_volume_share": volume / limit if np.isfinite(limit) and limit > 0 else float("nan"),
                "min_reinjection_temp_c": float(s["reinjection_temp_c"].min()) if s["reinjection_temp_c"].notna().any() else float("nan"),
                "max_reinjection_temp_c": float(s["reinjection_temp_c"].max()) if s["reinjection_temp_c"].notna().any() else float("nan"),
                "flow_limit_binds": bool(peak >= FLOW_BINDS_SHARE),
                "volume_limit_binds": bool(np.isfinite(limit) and volume >= FLOW_BINDS_SHARE * limit),
            }
        )
    return pd.DataFrame(
        rows,
        columns=[
            "well_id", "district_id", "heat_mwh_per_a", "cooling_mwh_per_a", "extracted_mwh_per_a",
            "rejected_mwh_per_a", "heat_pump_kw", "peak_flow_share", "annual_volume_m3", "annual_volume_share",
            "min_reinjection_temp_c", "max_reinjection_temp_c", "flow_limit_binds", "volume_limit_binds",
        ],
    )
