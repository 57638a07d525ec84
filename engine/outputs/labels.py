"""The words a person reads for the engine's codes: technology kinds, objectives, cost cases, trade-off points,
solver statuses, sweep columns and aquifer parameters.

One home for every label, used by the dashboard pages, the HTML summary and the spreadsheet, so that a code
never reaches a reader and one thing has one name everywhere. Ids stay where they are the thing asked for
(a well doublet's id on its permit, a run number).
"""

from __future__ import annotations

import math
import re

KIND_LABELS = {
    "fuel_boiler": "Fuel boiler",
    "electric_boiler": "Electric boiler",
    "air_heat_pump": "Air-source heat pump",
    "groundwater_heat_pump": "Groundwater heat pump",
    "network_connection": "Heat network connection",
    "heat_store": "Heat store",
    "chiller": "Chiller",
    "groundwater_cooling": "Groundwater cooling",
}
"""Technology kind (``engine.scenario.kinds.TECHNOLOGY_KINDS``) -> its name for a reader."""

OBJECTIVE_LABELS = {"cost": "lowest cost", "co2": "lowest CO2"}
"""Objective code of a run -> its words."""

STATUS_LABELS = {
    "optimal": "solved",
    "infeasible": "no feasible plan",
    "unbounded": "unbounded",
    "time_limit": "stopped at the time limit",
    "error": "failed",
    "cancelled": "stopped",
}
"""Solver status of a run -> its words (an unknown status is shown with its underscores as spaces)."""

TRADEOFF_POINT_LABELS = {
    "cost_optimal": "least cost",
    "co2_price": "CO2 price step",
    "co2_bounded": "CO2 limit",
    "co2_optimal": "least CO2 (extreme end)",
}
"""Kind of a trade-off point (``engine.studies.tradeoff``) -> its words."""

AQUIFER_LABELS = {
    "flow_direction_deg": "Groundwater flow direction [° from north]",
    "darcy_velocity_m_per_d": "Darcy velocity [m/d]",
    "effective_porosity": "Effective porosity [-]",
    "saturated_thickness_m": "Saturated thickness [m]",
    "longitudinal_dispersivity_m": "Longitudinal dispersivity [m]",
    "transverse_dispersivity_m": "Transverse dispersivity [m]",
    "aquifer_heat_capacity_mj_per_m3_k": "Aquifer heat capacity [MJ/(m³·K)]",
    "water_heat_capacity_mj_per_m3_k": "Water heat capacity [MJ/(m³·K)]",
    "reinjection_offset_m": "Distance extraction to reinjection well [m]",
}
"""Aquifer parameter (``engine.scenario.inputs.Aquifer``) -> its name with unit."""

SWEEP_COLUMN_LABELS = {
    "run": "Run",
    "name": "Price future",
    "cost_case": "Cost case",
    "status": "Status",
    "total_cost_eur_per_a": "Total cost [€/a]",
    "co2_t_per_a": "CO2 [t/a]",
    "unserved_heat_mwh_per_a": "Unserved heat [MWh/a]",
    "heat_demand_mwh_per_a": "Heat demand [MWh/a]",
    "levelised_cost_eur_per_mwh": "Levelised cost [€/MWh]",
    "solve_s": "Solve time [s]",
    "seconds": "Solve time [s]",
}
"""Column of a sweep table (``engine.studies.sweep``) -> its header; price columns are named by
:func:`column_label`."""

_UNITS = (
    ("_eur_per_mwh", "€/MWh"), ("_eur_per_kwh", "€/kWh"), ("_eur_per_kw", "€/kW"), ("_eur_per_t", "€/t"),
    ("_eur_per_a", "€/a"), ("_mwh_per_a", "MWh/a"), ("_kg_per_mwh", "kg/MWh"), ("_t_per_a", "t/a"),
    ("_m3_per_h", "m³/h"), ("_m3", "m³"), ("_kwh", "kWh"), ("_kw", "kW"), ("_pct", "%"), ("_c", "°C"),
    ("_k", "K"), ("_factor", "×"), ("_share", "-"), ("_s", "s"), ("_a", "a"),
)
_SNAKE = re.compile(r"[a-z0-9]+(?:_[a-z0-9]+)*")
_WORDS = {"co2": "CO2", "om": "O&M", "cop": "COP", "eer": "EER", "hp": "heat pump"}


def words(code) -> str:
    """A code with underscores (``high_co2``) as words (``High CO2``); acronyms kept upper case."""
    parts = [p for p in re.split(r"[_\s]+", str(code).strip()) if p]
    if not parts:
        return ""
    out = [_WORDS.get(p.lower(), p) for p in parts]
    out[0] = out[0][:1].upper() + out[0][1:]
    return " ".join(out)


def column_label(column: str) -> str:
    """A header for a column named in the engine's style (``gas_price_factor``, ``co2_eur_per_t``)."""
    if column in SWEEP_COLUMN_LABELS:
        return SWEEP_COLUMN_LABELS[column]
    if column.startswith("heat_") and column.endswith("_mwh_per_a"):
        return f"Heat {words(column[5:-10])} [MWh/a]"
    for suffix, unit in _UNITS:
        if column.endswith(suffix):
            return f"{words(column[: -len(suffix)])} [{unit}]"
    return words(column)


def kind_label(kind) -> str:
    return KIND_LABELS.get(str(kind), words(kind))


def objective_label(objective) -> str:
    return OBJECTIVE_LABELS.get(str(objective), words(objective))


def status_label(status) -> str:
    return STATUS_LABELS.get(str(status), str(status).replace("_", " "))


def tradeoff_point_label(kind) -> str:
    return TRADEOFF_POINT_LABELS.get(str(kind), words(kind))


def cost_case_label(case, description: str | None = None) -> str:
    """A cost case's id as words (``high_co2`` -> ``High CO2``); the description only when it is short.

    Only an id in snake case is turned into words; any other name is the planner's own and is kept as typed.
    """
    if description and len(description) <= 40:
        return str(description)
    return words(case) if _SNAKE.fullmatch(str(case)) else str(case)


def blank(value) -> str:
    """A cell with nothing in it ("–") instead of "None", "nan" or "<NA>"; anything else as text."""
    if value is None:
        return "–"
    try:
        if value is not value or (isinstance(value, float) and math.isnan(value)):
            return "–"
    except TypeError:
        pass
    text = str(value)
    return "–" if text in ("None", "nan", "NaN", "<NA>", "") else text
