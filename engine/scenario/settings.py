"""``scenario.toml`` (run settings, prices, CO2 factors, aquifer) and ``cost_cases.toml``."""

from __future__ import annotations

import difflib
import math
from pathlib import Path
from typing import Any

import numpy as np

from engine.scenario.cells import (
    MAX_TEXT_CHARS,
    MAX_CO2_PRICE_EUR_PER_T,
    MAX_FUEL_PRICE_EUR_PER_MWH,
    MAX_PRICE_EUR_PER_MWH,
    MAX_PRICE_FACTOR,
    REQUIRED,
    Column,
    cell_hint,
    range_hint,
)
from engine.scenario.files import COST_CASES_FILE, SCENARIO_FILE
from engine.scenario.defaults import limit_from_entry, section_defaults
from engine.scenario.inputs import DEFAULT_COST_CASE, Aquifer, CostCase, Prices, Settings
from engine.scenario.kinds import FUELS
from engine.scenario.pathway_inputs import PATHWAY_SECTIONS
from engine.scenario.tables import Report, close_names, read_toml, toml_key_lines, toml_line

# ============================================================================= scenario.toml
_RUN = section_defaults("run")
_CO2_FACTORS = section_defaults("co2_factors")
_AQUIFER = section_defaults("aquifer")
RUN_KEYS = (
    Column("name", "text", default=_RUN["name"]),
    Column("target_year", "integer", default=_RUN["target_year"], low=2000, high=2200),
    Column("objective", "text", default=_RUN["objective"]),
    Column("discount_rate", default=_RUN["discount_rate"], low=-0.05, high=0.3),
    Column("typical_days", "integer", default=_RUN["typical_days"], low=0, high=366),
    Column(
        "value_of_unserved_heat_eur_per_mwh",
        default=_RUN["value_of_unserved_heat_eur_per_mwh"],
        low=0,
        high=MAX_PRICE_EUR_PER_MWH * 10,
    ),
    Column("allow_unserved_heat", "bool", default=_RUN["allow_unserved_heat"]),
    Column("stores_between_days", "bool", default=_RUN["stores_between_days"]),
    Column("co2_cap_t_per_a", default=_RUN["co2_cap_t_per_a"], low=0),
    Column("network_plant_limit_kw", default=_RUN["network_plant_limit_kw"], low=0),
    Column("heating_base_temp_c", default=_RUN["heating_base_temp_c"], low=-10, high=30),
    Column("cooling_base_temp_c", default=_RUN["cooling_base_temp_c"], low=0, high=40),
    Column("reinjection_min_temp_c", default=_RUN["reinjection_min_temp_c"], low=0, high=40),
    Column("reinjection_max_temp_c", default=_RUN["reinjection_max_temp_c"], low=0, high=40),
    Column("co2_within_cost_pct", default=_RUN["co2_within_cost_pct"], low=0, high=1000),
)
PRICE_KEYS = (
    Column("gas_eur_per_mwh", low=0, high=MAX_FUEL_PRICE_EUR_PER_MWH),
    Column("oil_eur_per_mwh", low=0, high=MAX_FUEL_PRICE_EUR_PER_MWH),
    Column("biomass_eur_per_mwh", low=0, high=MAX_FUEL_PRICE_EUR_PER_MWH),
    Column("co2_eur_per_t", low=0, high=MAX_CO2_PRICE_EUR_PER_T),
)
CO2_FACTOR_KEYS = tuple(
    Column(f"{fuel}_kg_per_mwh", default=_CO2_FACTORS[f"{fuel}_kg_per_mwh"], low=0, high=2000) for fuel in FUELS
)
AQUIFER_KEYS = (
    Column("flow_direction_deg", default=_AQUIFER["flow_direction_deg"], low=0, high=360),
    Column("darcy_velocity_m_per_d", default=_AQUIFER["darcy_velocity_m_per_d"], low=0, high=100),
    Column("effective_porosity", default=_AQUIFER["effective_porosity"], low=0, high=1, low_open=True),
    Column("saturated_thickness_m", default=_AQUIFER["saturated_thickness_m"], low=0, high=1000, low_open=True),
    Column("longitudinal_dispersivity_m", default=_AQUIFER["longitudinal_dispersivity_m"], low=0, high=10_000),
    Column("transverse_dispersivity_m", default=_AQUIFER["transverse_dispersivity_m"], low=0, high=10_000),
    Column(
        "aquifer_heat_capacity_mj_per_m3_k",
        default=_AQUIFER["aquifer_heat_capacity_mj_per_m3_k"],
        low=0,
        high=10,
        low_open=True,
    ),
    Column(
        "water_heat_capacity_mj_per_m3_k",
        default=_AQUIFER["water_heat_capacity_mj_per_m3_k"],
        low=0,
        high=10,
        low_open=True,
    ),
    Column("reinjection_offset_m", default=_AQUIFER["reinjection_offset_m"], low=0, high=10_000, low_open=True),
)
GIS_KEYS = (Column("crs", "text", default=""),)
"""``[gis] crs``: the CRS of x/y columns and of layers without one (checked by engine.scenario.city_inputs)."""
SCENARIO_SECTIONS = {
    "run": RUN_KEYS, "prices": PRICE_KEYS, "co2_factors": CO2_FACTOR_KEYS, "aquifer": AQUIFER_KEYS, "gis": GIS_KEYS,
}
REQUIRED_SECTIONS = ("run", "prices")
OBJECTIVES = ("cost", "co2")

MAX_TOML_TEXT_CHARS = {"name": 200, "description": 1000}
"""Longest scenario name and cost-case description (other texts: :data:`engine.scenario.cells.MAX_TEXT_CHARS`)."""


def toml_value_problem(value: Any, spec: Column) -> str | None:
    """Why a TOML value does not fit ``spec``, or None."""
    if spec.kind == "text":
        if not isinstance(value, str):
            return f"must be a text in quotes, got {value!r}"
        limit = MAX_TOML_TEXT_CHARS.get(spec.name, MAX_TEXT_CHARS)
        if len(value) > limit:
            return f"is {len(value):,} characters long; at most {limit} are allowed"
        return None
    if spec.kind == "bool":
        return None if isinstance(value, bool) else f"must be true or false, got {value!r}"
    if isinstance(value, bool) or not isinstance(value, (int, float)):
        hint = ""
        if isinstance(value, str):
            try:
                float(value)
                hint = " (a number in quotes is text: remove the quotes)"
            except ValueError:
                hint = cell_hint(value)
        return f"must be {spec.need_text()}, got {value!r}{hint}"
    if not math.isfinite(value) and not spec.allow_inf:
        return (
            f"must be a finite number{' ' + spec.range_text() if spec.range_text() else ''}, got {value!r} "
            "(enter the actual value)"
        )
    if spec.kind == "integer" and value != int(value):
        return f"must be a whole number, got {value!r}"
    if not spec.in_range(np.array([float(value)]))[0]:
        return f"must be {spec.range_text()}, got {value!r}{range_hint(spec, float(value))}"
    return None


def toml_section(
    report: Report,
    file: str,
    lines: dict,
    path: tuple[str, ...],
    section: Any,
    specs: tuple[Column, ...],
    extra_known: tuple[str, ...] = (),
) -> dict[str, Any]:
    """Checked values of one TOML table (defaults for absent keys); unknown keys are reported."""
    dotted = ".".join(path)
    values: dict[str, Any] = {}
    if not isinstance(section, dict):
        report(file, toml_line(lines, path), dotted, "must be a table ([section] with key = value lines)")
        section = {}
    known = {spec.name: spec for spec in specs}
    for key in section:
        if key not in known:
            close = difflib.get_close_matches(key, list(known), n=1, cutoff=0.6)
            hint = f"did you mean '{close[0]}'? " if close else ""
            report(
                file,
                toml_line(lines, path + (key,)),
                f"{dotted}.{key}",
                f"unknown key; {hint}known keys in [{dotted}]: {', '.join(list(known) + list(extra_known))}",
            )
    for spec in specs:
        if spec.name not in section:
            if spec.default is REQUIRED:
                report(file, toml_line(lines, path), f"{dotted}.{spec.name}", "is missing; a value is required")
            else:
                values[spec.name] = spec.default
            continue
        value = section[spec.name]
        message = toml_value_problem(value, spec)
        if message:
            report(file, toml_line(lines, path + (spec.name,)), f"{dotted}.{spec.name}", message)
            continue
        values[spec.name] = int(value) if spec.kind == "integer" else (float(value) if spec.kind == "number" else value)
    return values


def _check_run_settings(report: Report, file: str, lines: dict, run: dict) -> None:
    if "objective" in run and run["objective"] not in OBJECTIVES:
        report(
            file,
            toml_line(lines, ("run", "objective")),
            "run.objective",
            f"must be one of {', '.join(repr(o) for o in OBJECTIVES)}, got {run['objective']!r}",
        )
    low, high = run.get("reinjection_min_temp_c"), run.get("reinjection_max_temp_c")
    if low is not None and high is not None and low >= high:
        report(
            file,
            toml_line(lines, ("run", "reinjection_max_temp_c")),
            "run.reinjection_max_temp_c",
            f"must be above reinjection_min_temp_c ({low:g} °C), got {high:g}",
        )


def _check_price_units(report: Report, file: str, lines: dict, prices: dict) -> None:
    for fuel in FUELS:
        key = f"{fuel}_eur_per_mwh"
        value = prices.get(key)
        if value is not None and 0 < value < 1:
            report(
                file,
                toml_line(lines, ("prices", key)),
                f"prices.{key}",
                f"{value:g} EUR/MWh is implausibly low; looks like EUR/kWh instead of EUR/MWh",
            )


def load_settings(folder: Path, report: Report) -> tuple[Settings, Prices, Aquifer] | None:
    parsed = read_toml(folder, SCENARIO_FILE, report, required=True)
    if parsed is None:
        return None
    data, text = parsed
    lines = toml_key_lines(text)
    before = len(report.errors)
    for key in data:
        if key not in SCENARIO_SECTIONS and key not in PATHWAY_SECTIONS:  # those: engine.scenario.pathway_inputs
            report(
                SCENARIO_FILE,
                toml_line(lines, (key,)),
                key,
                f"unknown section or key; known sections: {', '.join('[' + s + ']' for s in SCENARIO_SECTIONS)}",
            )
    for section in REQUIRED_SECTIONS:
        if section not in data:
            report(SCENARIO_FILE, None, section, f"section [{section}] is missing")
    values = {
        name: toml_section(report, SCENARIO_FILE, lines, (name,), data.get(name, {}), specs)
        for name, specs in SCENARIO_SECTIONS.items()
        if name in data or name not in REQUIRED_SECTIONS
    }
    _check_run_settings(report, SCENARIO_FILE, lines, values.get("run", {}))
    _check_price_units(report, SCENARIO_FILE, lines, values.get("prices", {}))
    if len(report.errors) > before:
        return None
    factors = values["co2_factors"]
    prices = Prices(**values["prices"], co2_kg_per_mwh={fuel: factors[f"{fuel}_kg_per_mwh"] for fuel in FUELS})
    run = values["run"]
    # The city-wide limits: absent or 0 in the file means no limit, None in the code (engine.scenario.defaults).
    for key in ("co2_cap_t_per_a", "network_plant_limit_kw"):
        run[key] = limit_from_entry(run[key])
    return Settings(**run), prices, Aquifer(**values["aquifer"])


# ============================================================================= cost_cases.toml
CASE_KEYS = (
    Column("description", "text", default="Prices as given in the scenario"),
    Column("co2_eur_per_t", default=None, low=0, high=MAX_CO2_PRICE_EUR_PER_T),
    Column("gas_price_factor", default=1.0, low=0, high=MAX_PRICE_FACTOR),
    Column("oil_price_factor", default=1.0, low=0, high=MAX_PRICE_FACTOR),
    Column("biomass_price_factor", default=1.0, low=0, high=MAX_PRICE_FACTOR),
    Column("electricity_price_factor", default=1.0, low=0, high=MAX_PRICE_FACTOR),
    Column("network_price_factor", default=1.0, low=0, high=MAX_PRICE_FACTOR),
)
CASE_TABLES = {
    "subsidy_share": Column("subsidy_share", low=0, high=1),
    "investment_factor": Column("investment_factor", low=0, high=MAX_PRICE_FACTOR),
}


def _case_overrides(
    report: Report, lines: dict, path: tuple[str, ...], table: Any, spec: Column, technology_ids: set | None
) -> dict[str, float]:
    """Per-technology overrides of one case (subsidy shares or investment factors)."""
    dotted = ".".join(path)
    if not isinstance(table, dict):
        report(COST_CASES_FILE, toml_line(lines, path), dotted, "must be a table of technology_id = number")
        return {}
    values = {}
    for technology, value in table.items():
        key_path = path + (technology,)
        line = toml_line(lines, key_path)
        if technology_ids is not None and technology not in technology_ids:
            known = ", ".join(sorted(technology_ids)) or "(none)"
            close = close_names(technology, sorted(technology_ids))
            hint = f"did you mean '{close[0]}'? " if close else ""
            report(
                COST_CASES_FILE, line, ".".join(key_path), f"unknown technology '{technology}'; {hint}known: {known}"
            )
            continue
        message = toml_value_problem(value, spec)
        if message:
            report(COST_CASES_FILE, line, ".".join(key_path), message)
            continue
        values[technology] = float(value)
    return values


def load_cost_cases(folder: Path, report: Report, technology_ids: set | None) -> dict[str, CostCase] | None:
    if not (folder / COST_CASES_FILE).exists():
        return {DEFAULT_COST_CASE: CostCase(name=DEFAULT_COST_CASE)}
    parsed = read_toml(folder, COST_CASES_FILE, report, required=False)
    if parsed is None:
        return None
    data, text = parsed
    lines = toml_key_lines(text)
    before = len(report.errors)
    for key in data:
        if key != "cases":
            report(COST_CASES_FILE, toml_line(lines, (key,)), key, "unknown key; cases go in [cases.<name>] tables")
    cases_table = data.get("cases", {})
    if not isinstance(cases_table, dict) or not cases_table:
        report(COST_CASES_FILE, None, "cases", "defines no cost case; add a [cases.reference] table or delete the file")
        return None
    cases: dict[str, CostCase] = {}
    for name, body in cases_table.items():
        path = ("cases", name)
        if not isinstance(body, dict):
            report(COST_CASES_FILE, toml_line(lines, path), f"cases.{name}", "must be a table [cases.<name>]")
            continue
        plain = {key: value for key, value in body.items() if key not in CASE_TABLES}
        values = toml_section(report, COST_CASES_FILE, lines, path, plain, CASE_KEYS, tuple(CASE_TABLES))
        overrides = {
            key: _case_overrides(report, lines, path + (key,), body[key], spec, technology_ids)
            for key, spec in CASE_TABLES.items()
            if key in body
        }
        cases[name] = CostCase(name=name, **values, **overrides)
    return cases if len(report.errors) == before else None
