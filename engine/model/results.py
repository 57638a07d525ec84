"""One result object per run.

:class:`RunResult` follows the manner of ``scipy.optimize.OptimizeResult``: a caller checks ``result.status``
and reads ``result.message``; it never parses solver logs. All numbers live in tidy pandas tables whose column
names carry their units; everything else (the summary, the hourly year, the CSV export) is derived from them, so a
result saved to the store and loaded again is the same result.

Tables (``result.tables[name]``):

``districts``
    one row per district: district_id, name, heat_demand_mwh_per_a, cooling_demand_mwh_per_a,
    unserved_heat_mwh_per_a, unserved_cooling_mwh_per_a, investment_eur_per_a, fixed_om_eur_per_a,
    variable_om_eur_per_a, energy_eur_per_a, co2_eur_per_a, unserved_eur_per_a, total_cost_eur_per_a,
    co2_t_per_a, cooling_cost_eur_per_a, levelised_cost_eur_per_mwh (cost of the heat supply per MWh of heat
    served: without the unserved-heat penalty and the cooling units), levelised_cost_of_cooling_eur_per_mwh,
    co2_kg_per_mwh, main_supply ("unserved" where more heat is unserved than the largest technology supplies).
``supply``
    one row per district, technology and well (well_id is "" for technologies not on a well): kind, existing_kw,
    new_kw, capacity_kw (kWh for stores), heat_mwh_per_a, cooling_mwh_per_a, electricity_mwh_per_a,
    fuel_mwh_per_a, co2_t_per_a, share_of_demand, and the cost parts as in ``districts``.
``wells``
    one row per doublet: well_id, district_id, heat_mwh_per_a, cooling_mwh_per_a, extracted_mwh_per_a,
    rejected_mwh_per_a, heat_pump_kw, peak_flow_share, annual_volume_m3, min_reinjection_temp_c,
    max_reinjection_temp_c, flow_limit_binds, volume_limit_binds, annual_volume_share, and from the permit
    screening (:func:`engine.studies.permits.add_well_status`) status ("ok", "at_limit" or "breach") and
    source_temp_shift_k (the shift of the groundwater temperature by neighbours' plumes; 0 without the
    interference check).
``dispatch``
    one row per model step, district and technology (and well): step, district_id, technology_id, well_id,
    heat_kw (stores: discharge minus charge), cooling_kw, electricity_kw, fuel_kw.
``demand``
    one row per model step and district: step, district_id, heat_demand_kw, cooling_demand_kw,
    unserved_heat_kw, unserved_cooling_kw, marginal_cost_eur_per_mwh.
``well_steps``
    one row per model step and well: step, well_id, groundwater_temp_c, extracted_kw, rejected_kw, flow_share,
    reinjection_temp_c (NaN when the well is idle).
``plumes`` (only after the interference check)
    one row per reinjection well and isotherm: well_id, level_k, sign, coordinates_json (a lon/lat ring).
``steps``
    one row per model step: step, period, hour_of_day, weight_h, year_hour.
``day_map``
    one row per calendar day: day, period (the typical day standing for it).
"""

from __future__ import annotations

import json
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np
import pandas as pd

from engine.jsonsafe import json_value
from engine.outputs.csvfile import csv_bytes
from engine.outputs.outfolder import publish_files

COST_PARTS = ("investment", "fixed_om", "variable_om", "energy", "co2", "unserved")
"""Parts of the annual cost; each district table has a column ``<part>_eur_per_a``."""

STATUS_SOLVED = "optimal"
STATUS_WITH_UNSERVED = "optimal_with_unserved"
"""The LP reached its optimum but leaves heat unserved above the tolerance
(:data:`engine.model.extract.UNSERVED_TOLERANCE_MWH`): tables are complete, the plan does not supply the city."""
SOLVED_STATUSES = (STATUS_SOLVED, STATUS_WITH_UNSERVED)

RUN_TABLE_NAMES = ("districts", "supply", "wells", "dispatch", "demand", "well_steps", "plumes", "steps", "day_map")
"""The tables a run may hold (the module docstring)."""

RUN_OUTPUT_FILES = ("summary.json",) + tuple(f"{name}.csv" for name in RUN_TABLE_NAMES)
"""Files :meth:`RunResult.write` may write; one a run did not write is removed from the output folder."""


@dataclass
class RunResult:
    status: str
    message: str
    objective: str = "cost"
    cost_case: str = "reference"
    input_hash: str = ""
    scenario_name: str = ""
    settings: dict = field(default_factory=dict)
    timings_s: dict = field(default_factory=dict)
    model_size: dict = field(default_factory=dict)
    tables: dict = field(default_factory=dict)
    extras: dict = field(default_factory=dict)

    @property
    def solved(self) -> bool:
        return self.status in SOLVED_STATUSES

    # ------------------------------------------------------------------ city figures
    def _district_sum(self, column: str) -> float:
        table = self.tables.get("districts")
        if table is None or table.empty:
            return float("nan")
        return float(table[column].sum())

    @property
    def total_cost_eur_per_a(self) -> float:
        return self._district_sum("total_cost_eur_per_a")

    @property
    def co2_t_per_a(self) -> float:
        return self._district_sum("co2_t_per_a")

    @property
    def heat_demand_mwh_per_a(self) -> float:
        return self._district_sum("heat_demand_mwh_per_a")

    @property
    def unserved_heat_mwh_per_a(self) -> float:
        return self._district_sum("unserved_heat_mwh_per_a")

    def cost_breakdown_eur_per_a(self) -> dict:
        return {part: self._district_sum(f"{part}_eur_per_a") for part in COST_PARTS}

    def heat_by_technology_mwh_per_a(self, district_id: str | None = None, quantity: str = "heat") -> dict:
        """Annual heat (or, with ``quantity="cooling"``, cooling) by technology [MWh/a]."""
        supply = self.tables.get("supply")
        if supply is None or supply.empty:
            return {}
        if district_id is not None:
            supply = supply[supply["district_id"] == district_id]
        column = f"{quantity}_mwh_per_a"
        if quantity == "cooling":
            supply = supply[supply[column] > 0]
        grouped = supply.groupby("technology_id", sort=True)[column].sum()
        return {k: float(v) for k, v in grouped.items()}

    # ------------------------------------------------------------------ hourly year
    def hourly(self, district_id: str | None = None, quantity: str = "heat_kw") -> pd.DataFrame:
        """Dispatch rebuilt to every hour of the year, one column per technology [kW].

        With typical days each calendar day takes the dispatch of the typical day standing for it. Adds the
        columns ``demand_kw`` and ``unserved_kw`` (heat or cooling, as ``quantity`` says).
        """
        dispatch = self.tables["dispatch"]
        demand = self.tables["demand"]
        if district_id is not None:
            dispatch = dispatch[dispatch["district_id"] == district_id]
            demand = demand[demand["district_id"] == district_id]
        by_step = dispatch.pivot_table(index="step", columns="technology_id", values=quantity, aggfunc="sum")
        prefix = "cooling" if quantity.startswith("cooling") else "heat"
        dem = demand.groupby("step")[[f"{prefix}_demand_kw", f"unserved_{prefix}_kw"]].sum()
        by_step = by_step.reindex(dem.index).fillna(0.0)
        by_step["demand_kw"] = dem[f"{prefix}_demand_kw"]
        by_step["unserved_kw"] = dem[f"unserved_{prefix}_kw"]
        order = self.year_step_index()
        full = by_step.reindex(order).reset_index(drop=True)
        full.index.name = "hour"
        full.columns.name = None
        return full

    def year_step_index(self) -> np.ndarray:
        """For every hour of the year, the model step that stands for it."""
        steps = self.tables["steps"]
        day_map = self.tables["day_map"]
        if len(steps) == len(day_map) * 24 and (steps["weight_h"] == 1).all():
            return steps["step"].to_numpy()
        first_step = steps.groupby("period")["step"].min()
        starts = first_step.reindex(day_map["period"]).to_numpy()
        return (starts[:, None] + np.arange(24)[None, :]).ravel()

    # ------------------------------------------------------------------ export
    def summary(self) -> dict:
        """The figures of ``summary.json`` (the command-line contract)."""
        out = {
            "status": self.status,
            "message": self.message,
            "objective": self.objective,
            "cost_case": self.cost_case,
            "scenario_name": self.scenario_name,
            "input_hash": self.input_hash,
            "timings_s": self.timings_s,
            "model_size": self.model_size,
            "settings": self.settings,
        }
        if "districts" not in self.tables:
            return json_value(out, where="the run summary")
        out.update(
            total_cost_eur_per_a=self.total_cost_eur_per_a,
            co2_t_per_a=self.co2_t_per_a,
            heat_demand_mwh_per_a=self.heat_demand_mwh_per_a,
            unserved_heat_mwh_per_a=self.unserved_heat_mwh_per_a,
            heat_by_technology_mwh_per_a=self.heat_by_technology_mwh_per_a(),
            cooling_demand_mwh_per_a=self._district_sum("cooling_demand_mwh_per_a"),
            cooling_by_technology_mwh_per_a=self.heat_by_technology_mwh_per_a(quantity="cooling"),
            cost_breakdown_eur_per_a=self.cost_breakdown_eur_per_a(),
        )
        districts = []
        for row in self.tables["districts"].itertuples(index=False):
            districts.append(
                {
                    "district_id": row.district_id,
                    "name": row.name,
                    "main_supply": row.main_supply,
                    "total_cost_eur_per_a": float(row.total_cost_eur_per_a),
                    "co2_t_per_a": float(row.co2_t_per_a),
                    "levelised_cost_eur_per_mwh": float(row.levelised_cost_eur_per_mwh),
                    # beside the levelised cost of heat, which leaves them out
                    "unserved_eur_per_a": float(row.unserved_eur_per_a),
                    "cooling_cost_eur_per_a": float(getattr(row, "cooling_cost_eur_per_a", 0.0)),
                    "levelised_cost_of_cooling_eur_per_mwh": float(
                        getattr(row, "levelised_cost_of_cooling_eur_per_mwh", float("nan"))),
                    "unserved_heat_mwh_per_a": float(row.unserved_heat_mwh_per_a),
                    "heat_by_technology_mwh_per_a": self.heat_by_technology_mwh_per_a(row.district_id),
                }
            )
        out["districts"] = districts
        wells = self.tables.get("wells", pd.DataFrame())
        out["wells"] = wells.to_dict(orient="records")
        for key, value in self.extras.items():
            out[key] = value
        return json_value(out, where="the run summary")

    def write(self, out_dir: str | Path) -> Path:
        """Write summary.json and one CSV per table into ``out_dir``; returns the folder.

        The files are written into a fresh folder beside ``out_dir`` and moved in together
        (:func:`engine.outputs.outfolder.publish_files`), so tables an earlier run left in ``out_dir`` never stay
        beside this run's summary (a failed run leaves summary.json alone). summary.json is strict JSON (no NaN:
        missing figures are null). The CSV files defuse spreadsheet formulas (:mod:`engine.outputs.csvfile`).
        """
        files = {"summary.json": json.dumps(self.summary(), indent=2, allow_nan=False).encode("utf-8")}
        for name, table in self.tables.items():
            files[f"{name}.csv"] = csv_bytes(table, index=False)
        return publish_files(out_dir, files, owned=RUN_OUTPUT_FILES)
