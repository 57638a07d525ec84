"""Result tables for reading: the planner's headers and units, rounded; the height a table needs on a page."""

from __future__ import annotations

import numpy as np
import pandas as pd

from engine.model.results import RunResult


def technology_names(technologies: pd.DataFrame | None) -> dict[str, str]:
    """technology id -> display name (plus the words for unserved heat and no supply)."""
    names = {"unserved": "Unserved heat", "none": "No heat supply", "": "–"}
    if technologies is not None:
        names.update(zip(technologies["technology_id"].astype(str), technologies["name"].astype(str)))
    return names

def district_results_table(result: RunResult, technologies: pd.DataFrame | None = None) -> pd.DataFrame:
    """One row per district with planner's headers and units: supply, demand, cost parts, CO2, levelised cost."""
    table = result.tables.get("districts")
    if table is None:
        return pd.DataFrame()
    names = technology_names(technologies)
    out = pd.DataFrame({
        "district": table["name"].astype(str).to_numpy(),
        "main supply": [names.get(str(t), str(t)) for t in table["main_supply"]],
        "heat demand [MWh/a]": table["heat_demand_mwh_per_a"].to_numpy(float),
        "cooling demand [MWh/a]": table["cooling_demand_mwh_per_a"].to_numpy(float),
        "unserved heat [MWh/a]": table["unserved_heat_mwh_per_a"].to_numpy(float),
        "total cost [€/a]": table["total_cost_eur_per_a"].to_numpy(float),
        "investment annuity [€/a]": table["investment_eur_per_a"].to_numpy(float),
        "fixed O&M [€/a]": table["fixed_om_eur_per_a"].to_numpy(float),
        "variable O&M [€/a]": table["variable_om_eur_per_a"].to_numpy(float),
        "energy [€/a]": table["energy_eur_per_a"].to_numpy(float),
        "CO2 cost [€/a]": table["co2_eur_per_a"].to_numpy(float),
        "CO2 [t/a]": table["co2_t_per_a"].to_numpy(float),
        "levelised cost [€/MWh]": table["levelised_cost_eur_per_mwh"].to_numpy(float),
        "CO2 per MWh [kg/MWh]": table["co2_kg_per_mwh"].to_numpy(float),
    })
    return _rounded(out)

def supply_results_table(
    result: RunResult, technologies: pd.DataFrame | None = None, all_rows: bool = False
) -> pd.DataFrame:
    """Capacity and annual output per district and technology (and well), in the planner's words.

    Rows with neither capacity nor output are left out unless ``all_rows``. Heat stores show their storage
    capacity in kWh and their net output (discharge minus charge, a small negative number: the store's loss).
    """
    table = result.tables.get("supply")
    if table is None:
        return pd.DataFrame()
    if not all_rows:
        keep = (table["capacity_kw"].abs() > 1e-6) | (table["heat_mwh_per_a"].abs() > 1e-6) | (
            table["cooling_mwh_per_a"].abs() > 1e-6)
        table = table[keep.to_numpy()]
    names = technology_names(technologies)
    districts = result.tables["districts"]
    district_names = dict(zip(districts["district_id"].astype(str), districts["name"].astype(str)))
    out = pd.DataFrame({
        "district": [district_names.get(str(d), str(d)) for d in table["district_id"]],
        "technology": [names.get(str(t), str(t)) for t in table["technology_id"]],
        "well": table["well_id"].astype(str).to_numpy(),
        "existing [kW]": table["existing_kw"].to_numpy(float),
        "new [kW]": table["new_kw"].to_numpy(float),
        "capacity [kW]": table["capacity_kw"].to_numpy(float),
        "heat [MWh/a]": table["heat_mwh_per_a"].to_numpy(float),
        "cooling [MWh/a]": table["cooling_mwh_per_a"].to_numpy(float),
        "share of demand [%]": 100.0 * table["share_of_demand"].to_numpy(float),
        "electricity [MWh/a]": table["electricity_mwh_per_a"].to_numpy(float),
        "fuel [MWh/a]": table["fuel_mwh_per_a"].to_numpy(float),
        "CO2 [t/a]": table["co2_t_per_a"].to_numpy(float),
    })
    return _rounded(out)

def well_results_table(result: RunResult) -> pd.DataFrame:
    """One row per well doublet: output, use of the permit, reinjection temperatures, whether a limit binds."""
    table = result.tables.get("wells")
    if table is None or table.empty:
        return pd.DataFrame()
    districts = result.tables["districts"]
    district_names = dict(zip(districts["district_id"].astype(str), districts["name"].astype(str)))
    volume_share = table["annual_volume_share"] if "annual_volume_share" in table else np.nan
    out = pd.DataFrame({
        "well doublet": table["well_id"].astype(str).to_numpy(),
        "district": [district_names.get(str(d), str(d)) for d in table["district_id"]],
        "heat [MWh/a]": table["heat_mwh_per_a"].to_numpy(float),
        "cooling [MWh/a]": table["cooling_mwh_per_a"].to_numpy(float),
        "heat pump [kW]": table["heat_pump_kw"].to_numpy(float),
        "peak flow [% of permit]": 100.0 * table["peak_flow_share"].to_numpy(float),
        "annual volume [m³/a]": table["annual_volume_m3"].to_numpy(float),
        "annual volume [% of permit]": 100.0 * np.asarray(volume_share, dtype=float),
        "lowest reinjection [°C]": table["min_reinjection_temp_c"].to_numpy(float),
        "highest reinjection [°C]": table["max_reinjection_temp_c"].to_numpy(float),
        "permitted flow binds": table["flow_limit_binds"].astype(bool).to_numpy(),
        "annual volume binds": table["volume_limit_binds"].astype(bool).to_numpy(),
    })
    return _rounded(out)

def _rounded(frame: pd.DataFrame) -> pd.DataFrame:
    """Whole numbers for amounts; one decimal for temperatures, shares and costs per MWh."""
    out = frame.copy()
    for column in out.columns:
        if out[column].dtype.kind != "f":
            continue
        fine = any(word in column for word in ("°C", "%", "/MWh]"))
        out[column] = out[column].round(1 if fine else 0)
    return out


def table_height(frame: pd.DataFrame, max_rows: int = 25) -> int:
    """Pixel height that shows ``frame`` without an inner scroll bar, up to ``max_rows`` rows."""
    return 38 + 35 * min(len(frame), max_rows)
