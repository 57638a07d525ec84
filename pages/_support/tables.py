"""Result tables for reading: the planner's headers and units, rounded; the height a table needs on a page."""

from __future__ import annotations

import numpy as np
import pandas as pd

from engine.model.results import RunResult
from engine.outputs.firmness import firmness_table
from engine.outputs.formats import format_number, python_format
from engine.outputs.labels import blank, column_label, cost_case_label, status_label, words


def technology_names(technologies: pd.DataFrame | None) -> dict[str, str]:
    """technology id -> display name (plus the words for unserved heat and no supply)."""
    names = {"unserved": "Unserved heat", "none": "No heat supply", "": "–"}
    if technologies is not None:
        names.update(zip(technologies["technology_id"].astype(str), technologies["name"].astype(str)))
    return names

def district_results_table(result: RunResult, technologies: pd.DataFrame | None = None) -> pd.DataFrame:
    """One row per district with planner's headers and units, the key totals first (total cost, levelised cost,
    CO2, heat demand), then the cost parts."""
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
    key_first = ["district", "main supply", "total cost [€/a]", "levelised cost [€/MWh]", "CO2 [t/a]",
                 "heat demand [MWh/a]"]
    return _rounded(out[key_first + [c for c in out.columns if c not in key_first]])

def supply_results_table(
    result: RunResult, technologies: pd.DataFrame | None = None, all_rows: bool = False
) -> pd.DataFrame:
    """Capacity and annual output per district and technology (and well), in the planner's words.

    Rows with neither capacity nor output are left out unless ``all_rows``. Heat stores (known from the catalogue)
    show their storage capacity in the kWh columns, blank in the kW ones, and their net output (discharge minus
    charge, a small negative number: the store's loss).
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
    kinds = {} if technologies is None else dict(zip(technologies["technology_id"].astype(str),
                                                      technologies["kind"].astype(str)))
    store = np.array([kinds.get(str(t)) == "heat_store" for t in table["technology_id"]], dtype=bool)

    def power(column: str) -> np.ndarray:
        return np.where(store, np.nan, table[column].to_numpy(float))

    def energy(column: str) -> np.ndarray:
        return np.where(store, table[column].to_numpy(float), np.nan)

    out = pd.DataFrame({
        "district": [district_names.get(str(d), str(d)) for d in table["district_id"]],
        "technology": [names.get(str(t), str(t)) for t in table["technology_id"]],
        "well": [blank(w) if str(w) not in ("", "nan", "None") else "–" for w in table["well_id"]],
        "capacity [kW]": power("capacity_kw"),
        "existing [kW]": power("existing_kw"),
        "new [kW]": power("new_kw"),
        "store capacity [kWh]": energy("capacity_kw"),
        "store new [kWh]": energy("new_kw"),
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


def sweep_display_table(table: pd.DataFrame, scenario=None) -> pd.DataFrame:
    """A sweep's table for reading: headers in words with units, technology names, numbers in one format."""
    names = technology_names(scenario.technologies if scenario is not None else None)
    out = table.drop(columns=[c for c in ("message", "run") if c in table.columns]).copy()
    headers = {}
    for column in out.columns:
        if column.startswith("heat_") and column.endswith("_mwh_per_a"):
            tech = column[5:-10]
            headers[column] = f"Heat {names.get(tech, words(tech))} [MWh/a]"
        else:
            headers[column] = column_label(column)
    if "status" in out:
        out["status"] = [status_label(v) for v in out["status"]]
    if "cost_case" in out:
        out["cost_case"] = [cost_case_label(v) for v in out["cost_case"]]
    if "name" in out:
        out["name"] = [cost_case_label(v) if ":" not in str(v) else words(v) for v in out["name"]]
    out = out.rename(columns=headers)
    return pd.DataFrame({c: [format_number(v, c) if not isinstance(v, str) else blank(v) for v in out[c]]
                         for c in out.columns})


def main_supply_display_table(main: pd.DataFrame, scenario=None) -> pd.DataFrame:
    """Main supply per district (columns) and run (rows) with district and technology names, "–" for none."""
    names = technology_names(scenario.technologies if scenario is not None else None)
    districts = {}
    if scenario is not None:
        districts = dict(zip(scenario.districts["district_id"].astype(str), scenario.districts["name"].astype(str)))
    out = pd.DataFrame({districts.get(str(c), words(c)): [blank(names.get(str(v), v)) for v in main[c]]
                        for c in main.columns})
    out.insert(0, "Price future", [cost_case_label(n) if ":" not in str(n) else words(n) for n in main.index])
    return out


def styled(frame: pd.DataFrame, headers: dict | None = None):
    """``frame`` with readable headers (``headers`` or :func:`engine.outputs.labels.column_label`) and every
    number in the format of its unit (:mod:`engine.outputs.formats`), blanks as "–"; a pandas Styler, so the
    dashboard still sorts by the numbers."""
    renamed = frame.rename(columns={c: (headers or {}).get(c, column_label(c) if "_" in str(c) else c)
                                    for c in frame.columns})
    renamed = blanks_as_text(renamed)
    formats = {c: python_format(c) for c in renamed.columns if renamed[c].dtype.kind == "f"}
    return renamed.style.format(formats, na_rep="–")


def blanks_as_text(frame: pd.DataFrame) -> pd.DataFrame:
    """Number columns with a blank cell as text in the format of their unit, blanks as "–".

    Streamlit's grid prints a blank number as "None" whatever a Styler says; a column of text does not.
    """
    out = frame.copy()
    for column in out.columns:
        if out[column].dtype.kind == "f" and out[column].isna().any():
            out[column] = [format_number(v, column) for v in out[column]]
    return out


def year_check_table(check, technologies: pd.DataFrame | None = None) -> pd.DataFrame:
    """The plan's heat per technology on typical days and over the full year, for reading
    (:class:`engine.studies.year_check.YearCheck`); technologies that make no heat either way are left out."""
    table = check.technologies
    if table is None or table.empty:
        return pd.DataFrame()
    names = technology_names(technologies)
    shown = table[(table["planned_heat_mwh_per_a"].abs() + table["year_heat_mwh_per_a"].abs()) > 0.5]
    store = shown["kind"] == "heat_store"
    return pd.DataFrame({
        "technology": [names.get(str(t), str(t)) for t in shown["technology_id"]],
        "capacity [kW]": shown["capacity_kw"].where(~store).to_numpy(float),
        "heat on typical days [MWh/a]": shown["planned_heat_mwh_per_a"].to_numpy(float),
        "heat over the full year [MWh/a]": shown["year_heat_mwh_per_a"].to_numpy(float),
        "difference [MWh/a]": shown["difference_mwh_per_a"].to_numpy(float),
        "difference [%]": shown["difference_pct"].to_numpy(float),
    })


def firmness_display_table(ranges, result: RunResult, technologies: pd.DataFrame | None = None) -> pd.DataFrame:
    """:func:`engine.outputs.firmness.firmness_table` with the technologies' display names."""
    return firmness_table(ranges, result, technology_names(technologies))
