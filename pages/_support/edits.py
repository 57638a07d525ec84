"""Editable set-up tables (technology costs, well permits), their checks, and the files with the edits.

The planner edits two tables on the set-up page; :func:`check_edits` names every bad cell by table, row and
column with the reader's own ranges, :func:`apply_edits` gives the edited scenario and
:func:`scenario_files_with_edits` writes the edits back into the scenario files, so a saved run can be reproduced.
"""

from __future__ import annotations

import csv
import dataclasses
import hashlib
import io
import math
import tomllib
from collections.abc import Mapping

import numpy as np
import pandas as pd

from engine.scenario.catalogue import TECHNOLOGY_COLUMNS
from engine.scenario.cells import MAX_WELL_FLOW_M3_PER_H
from engine.scenario.files import SCENARIO_FILE, TECHNOLOGIES_FILE, WELLS_FILE
from engine.scenario.inputs import default_cost_case
from engine.scenario.kinds import BOILER_KINDS, EFFICIENCY_KINDS, HEAT_PUMP_KINDS
from engine.scenario.well_table import WELL_COLUMNS
from engine.scenario.inputs import Scenario
from engine.scenario.problems import InputError, Problem
from pages._support.city_edits import (
    CityEdits, PriceEdits, city_edit_problems, city_edits_changed, editable_district_table, empty_new_wells,
    write_city_edits,
)
from pages._support.inputs import InputSet, scenario_from_files

TECHNOLOGY_TABLE = "technology table"

WELL_TABLE = "well table"

TECHNOLOGY_EDIT_COLUMNS = (
    "investment_eur_per_kw",
    "fixed_om_pct_per_a",
    "variable_om_eur_per_mwh",
    "lifetime_a",
    "efficiency_or_grade",
)
"""Columns of :func:`editable_technology_table` a planner may change."""

TECHNOLOGY_TABLE_COLUMNS = ("technology_id", "name", "kind") + TECHNOLOGY_EDIT_COLUMNS

WELL_EDIT_COLUMNS = ("permit_flow_m3_per_h", "permit_annual_volume_m3", "design_spread_k", "groundwater_temp_c")
"""Columns of :func:`editable_well_table` a planner may change."""

WELL_TABLE_COLUMNS = ("well_id", "district_id") + WELL_EDIT_COLUMNS

MAX_BOILER_EFFICIENCY = 1.2
MAX_EER = 50.0


def initial_setup(
    inputs: InputSet, settings: Mapping | None = None, cost_case: str | None = None
) -> dict:
    """The set-up page's starting choices for an input set (the ``hm_setup`` dict).

    ``settings`` and ``cost_case`` (a saved run's) take precedence over the scenario's own settings, so that
    re-opening a run puts back the choices it was solved with.
    """
    scenario = inputs.scenario
    base = dataclasses.asdict(scenario.settings) if scenario is not None else {}
    chosen = {**base, **dict(settings or {})}
    cases = list(scenario.cost_cases) if scenario is not None else []
    if cost_case not in cases:
        cost_case = default_cost_case(cases) if cases else ""
    days = int(chosen.get("typical_days", 12) or 0)
    return {
        "digest": inputs.digest,
        "cost_case": cost_case,
        "objective": chosen.get("objective", "cost") if chosen.get("objective") in ("cost", "co2") else "cost",
        "co2_cap_t_per_a": float(chosen.get("co2_cap_t_per_a", 0.0) or 0.0),
        "full_year": days == 0,
        "typical_days": days if days > 0 else 12,
        "technology_table": editable_technology_table(scenario) if scenario is not None else None,
        "well_table": editable_well_table(scenario) if scenario is not None else None,
        "district_table": editable_district_table(scenario) if scenario is not None else None,
        "new_wells": empty_new_wells(),
        "prices": PriceEdits(),
    }


def _grade_column(kind: str) -> str | None:
    if kind in HEAT_PUMP_KINDS:
        return "cop_quality_grade"
    if kind in EFFICIENCY_KINDS:
        return "efficiency"
    return None

def editable_technology_table(scenario: Scenario) -> pd.DataFrame:
    """The technology costs a planner may edit, one row per technology.

    Columns: technology_id, name, kind, investment_eur_per_kw [€/kW; €/kWh for stores], fixed_om_pct_per_a
    [% of investment per year], variable_om_eur_per_mwh [€/MWh], lifetime_a [a], efficiency_or_grade [-]
    (boilers: thermal efficiency; chillers and groundwater cooling: EER; heat pumps: share of the Carnot COP
    reached; NaN for kinds that have neither).
    """
    tech = scenario.technologies
    grade = []
    for row in tech.itertuples(index=False):
        column = _grade_column(row.kind)
        grade.append(float(getattr(row, column)) if column else np.nan)
    return pd.DataFrame(
        {
            "technology_id": tech["technology_id"].astype(str).to_numpy(),
            "name": tech["name"].astype(str).to_numpy(),
            "kind": tech["kind"].astype(str).to_numpy(),
            "investment_eur_per_kw": tech["investment_eur_per_kw"].to_numpy(float),
            "fixed_om_pct_per_a": tech["fixed_om_pct_per_a"].to_numpy(float),
            "variable_om_eur_per_mwh": tech["variable_om_eur_per_mwh"].to_numpy(float),
            "lifetime_a": tech["lifetime_a"].to_numpy(float),
            "efficiency_or_grade": np.asarray(grade, dtype=float),
        }
    )

def editable_well_table(scenario: Scenario) -> pd.DataFrame:
    """The well permits and design values a planner may edit, one row per doublet.

    Columns: well_id, district_id, permit_flow_m3_per_h [m³/h], permit_annual_volume_m3 [m³/a; NaN = no annual
    limit], design_spread_k [K], groundwater_temp_c [°C].
    """
    wells = scenario.wells
    volume = wells["permit_annual_volume_m3"].to_numpy(float).copy() if len(wells) else np.zeros(0)
    volume[~np.isfinite(volume)] = np.nan
    return pd.DataFrame(
        {
            "well_id": wells["well_id"].astype(str).to_numpy() if len(wells) else np.array([], dtype=object),
            "district_id": wells["district_id"].astype(str).to_numpy() if len(wells) else np.array([], dtype=object),
            "permit_flow_m3_per_h": wells["permit_flow_m3_per_h"].to_numpy(float) if len(wells) else np.zeros(0),
            "permit_annual_volume_m3": volume,
            "design_spread_k": wells["design_spread_k"].to_numpy(float) if len(wells) else np.zeros(0),
            "groundwater_temp_c": wells["groundwater_temp_c"].to_numpy(float) if len(wells) else np.zeros(0),
        }
    )

def _spec(specs, name):
    return next(spec for spec in specs if spec.name == name)

def _number(value) -> tuple[float | None, str | None]:
    """A cell as a float, or (None, why not). Blank cells give (nan, None)."""
    if value is None or value is pd.NA or (isinstance(value, str) and not value.strip()):
        return math.nan, None
    if isinstance(value, (bool, np.bool_)):
        return None, f"must be a number, got {value!r}"
    try:
        number = float(str(value).strip()) if isinstance(value, str) else float(value)
    except (TypeError, ValueError):
        hint = " (use '.' as the decimal mark)" if isinstance(value, str) and "," in value else ""
        return None, f"must be a number, got {value!r}{hint}"
    return number, None

def _check_column(table, table_name, id_column, column, spec, problems, blank_ok=False, low_open=None, high=None):
    """Check one editable column against the reader's range for it; returns the parsed values."""
    values = np.full(len(table), np.nan)
    low = spec.low
    low_open = spec.low_open if low_open is None else low_open
    high = spec.high if high is None else high
    for position, (item, raw) in enumerate(zip(table[id_column], table[column])):
        row = position + 1
        number, why = _number(raw)
        if why is not None:
            problems.append(Problem(table_name, row, column, f"{item}: {why}"))
            continue
        if math.isnan(number):
            if not blank_ok:
                problems.append(Problem(table_name, row, column, f"{item}: is blank; enter a number"))
            continue
        if math.isinf(number) and not (blank_ok and number > 0):
            problems.append(Problem(table_name, row, column, f"{item}: must be a finite number, got {raw!r}"))
            continue
        bad_low = low is not None and (number <= low if low_open else number < low)
        bad_high = high is not None and number > high
        if bad_low or bad_high:
            parts = []
            if low is not None:
                parts.append(f"{'>' if low_open else '>='} {low:g}")
            if high is not None:
                parts.append(f"<= {high:g}")
            if bad_low and low == 0 and not low_open:
                why = f"must not be negative, got {number:g}"
            else:
                why = f"must be {' and '.join(parts)}, got {number:g}"
            problems.append(Problem(table_name, row, column, f"{item}: {why}"))
            continue
        values[position] = number
    return values

def _check_frame(table, name, columns, id_column, expected_ids) -> list[Problem]:
    if not isinstance(table, pd.DataFrame):
        return [Problem(name, None, None, f"must be a table, not {type(table).__name__}")]
    missing = [c for c in columns if c not in table.columns]
    if missing:
        return [Problem(name, None, c, "column is missing") for c in missing]
    ids = [str(v) for v in table[id_column]]
    if ids != list(expected_ids):
        return [Problem(name, None, id_column, "rows were added, removed or reordered; edit values only")]
    return []

def check_edits(scenario: Scenario, technology_table: pd.DataFrame, well_table: pd.DataFrame | None) -> list[Problem]:
    """Every problem with the edited tables, each naming the table, its row (first row = 1) and column.

    The ranges are the ones the scenario reader applies to ``technologies.csv`` and ``wells.csv``; a blank
    annual volume means "no annual limit".
    """
    problems, _ = _parse_edits(scenario, technology_table, well_table)
    return problems

def _parse_edits(scenario, technology_table, well_table):
    problems: list[Problem] = []
    parsed: dict[str, np.ndarray] = {}
    tech_ids = [str(t) for t in scenario.technologies["technology_id"]]
    frame_problems = _check_frame(
        technology_table, TECHNOLOGY_TABLE, TECHNOLOGY_TABLE_COLUMNS, "technology_id", tech_ids
    )
    problems += frame_problems
    specs = TECHNOLOGY_COLUMNS
    if not frame_problems:
        for column in ("investment_eur_per_kw", "fixed_om_pct_per_a", "variable_om_eur_per_mwh", "lifetime_a"):
            parsed[column] = _check_column(
                technology_table, TECHNOLOGY_TABLE, "technology_id", column, _spec(specs, column), problems
            )
        kinds = [str(k) for k in scenario.technologies["kind"]]
        grade = np.full(len(kinds), np.nan)
        for position, kind in enumerate(kinds):
            column = _grade_column(kind)
            if column is None:
                number, why = _number(technology_table["efficiency_or_grade"].iloc[position])
                if why is not None or not math.isnan(number):
                    tech_id = tech_ids[position]
                    problems.append(Problem(
                        TECHNOLOGY_TABLE, position + 1, "efficiency_or_grade",
                        f"{tech_id}: a {kind} has no efficiency or COP grade; leave the cell blank",
                    ))
                continue
            if column == "cop_quality_grade":
                spec, high = _spec(specs, "cop_quality_grade"), None
            else:
                spec = _spec(specs, "efficiency")
                high = MAX_BOILER_EFFICIENCY if kind in BOILER_KINDS else MAX_EER
            one_row = technology_table.iloc[[position]]
            before = len(problems)
            value = _check_column(one_row, TECHNOLOGY_TABLE, "technology_id", "efficiency_or_grade", spec, problems,
                                  high=high)
            for k in range(before, len(problems)):  # the one-row check counted this row as row 1
                problems[k] = dataclasses.replace(problems[k], row=position + 1)
            grade[position] = value[0]
        parsed["efficiency_or_grade"] = grade
    well_ids = [str(w) for w in scenario.wells["well_id"]]
    if well_table is None:
        well_table = editable_well_table(scenario)
    frame_problems = _check_frame(well_table, WELL_TABLE, WELL_TABLE_COLUMNS, "well_id", well_ids)
    problems += frame_problems
    if not frame_problems:
        specs = WELL_COLUMNS
        for column in WELL_EDIT_COLUMNS:
            spec = _spec(specs, column)
            values = _check_column(
                well_table, WELL_TABLE, "well_id", column, spec, problems,
                blank_ok=column == "permit_annual_volume_m3",
                high=MAX_WELL_FLOW_M3_PER_H if column == "permit_flow_m3_per_h" else None,
            )
            if column == "permit_annual_volume_m3":
                values = np.where(np.isnan(values), np.inf, values)
            parsed["well:" + column] = values
    return problems, parsed

def apply_edits(
    scenario: Scenario, technology_table: pd.DataFrame, well_table: pd.DataFrame | None = None
) -> tuple[Scenario | None, list[Problem]]:
    """The scenario with the edited technology costs and well permits.

    Parameters
    ----------
    scenario : Scenario
        The scenario the tables were made from (:func:`editable_technology_table`, :func:`editable_well_table`).
    technology_table, well_table : DataFrame
        The tables as the planner left them; ``well_table`` None keeps the wells.

    Returns
    -------
    (Scenario or None, list of Problem)
        A new scenario and no problems, or None and every problem (negative, blank, non-numeric or out-of-range
        cells), each naming "technology table" or "well table", the row (first row = 1) and the column.
        Never raises for bad cells.
    """
    problems, parsed = _parse_edits(scenario, technology_table, well_table)
    if problems:
        return None, problems
    edited = scenario.copy()
    tech = edited.technologies
    for column in ("investment_eur_per_kw", "fixed_om_pct_per_a", "variable_om_eur_per_mwh", "lifetime_a"):
        tech[column] = parsed[column]
    for position, kind in enumerate(tech["kind"]):
        column = _grade_column(str(kind))
        if column is not None:
            tech.loc[tech.index[position], column] = parsed["efficiency_or_grade"][position]
    for column in WELL_EDIT_COLUMNS:
        if len(edited.wells):
            edited.wells[column] = parsed["well:" + column]
    return edited, []


def _number_text(value: float) -> str:
    if not math.isfinite(value):
        return ""
    return repr(float(value))

def _rewrite_csv(content: bytes, id_column: str, changes: dict[str, dict[str, str]]) -> bytes:
    """``content`` with the cells in ``changes`` (id -> column -> text) replaced; other cells keep their text."""
    text = content.decode("utf-8-sig")
    rows = list(csv.reader(io.StringIO(text)))
    header = [h.strip() for h in rows[0]]
    key = header.index(id_column)
    for row in rows[1:]:
        if len(row) <= key:
            continue
        cells = changes.get(row[key].strip())
        if not cells:
            continue
        for column, value in cells.items():
            position = header.index(column)
            while len(row) <= position:
                row.append("")
            row[position] = value
    out = io.StringIO()
    csv.writer(out, lineterminator="\n").writerows(rows)
    return out.getvalue().encode("utf-8")

def _ensure_column(content: bytes, column: str) -> bytes:
    """``content`` with an empty ``column`` appended when its header lacks it."""
    text = content.decode("utf-8-sig")
    rows = list(csv.reader(io.StringIO(text)))
    if column in [h.strip() for h in rows[0]]:
        return content
    width = len(rows[0])
    rows[0].append(column)
    for row in rows[1:]:
        row.extend([""] * (width - len(row)) + [""])
    out = io.StringIO()
    csv.writer(out, lineterminator="\n").writerows(rows)
    return out.getvalue().encode("utf-8")

def _same(a: float, b: float) -> bool:
    return (math.isnan(a) and math.isnan(b)) or (math.isinf(a) and math.isinf(b) and a == b) or a == b

def scenario_files_with_edits(
    files: Mapping[str, bytes],
    technology_table: pd.DataFrame,
    well_table: pd.DataFrame | None = None,
    scenario: Scenario | None = None,
    city: CityEdits | None = None,
) -> dict[str, bytes]:
    """The scenario files with the edits written back into ``technologies.csv`` and ``wells.csv``, and with
    ``city`` (districts, candidate doublets, prices: :mod:`pages._support.city_edits`) into
    ``districts.geojson``, ``wells.csv``, ``scenario.toml`` and ``hourly.csv``.

    Only cells whose value changed are rewritten (with the shortest text that reads back as the same float),
    so reading the returned files gives a scenario with the same :func:`engine.scenario.inputs.input_hash` as
    :func:`apply_edits`, and a run saved with these files can be reproduced from them.

    ``scenario`` is the scenario read from ``files`` (read here when not given).

    Raises
    ------
    InputError
        With the problems of the files or of the edits (:func:`check_edits` lists them beforehand).
    """
    files = dict(files)
    if scenario is None:
        scenario, load_problems = scenario_from_files(files)
        if scenario is None:
            raise InputError(load_problems)
    problems, parsed = _parse_edits(scenario, technology_table, well_table)
    problems += [p for p in city_edit_problems(scenario, city, files) if p.is_error]
    if problems:
        raise InputError(problems)
    before = editable_technology_table(scenario)
    changes: dict[str, dict[str, str]] = {}
    for position, tech_id in enumerate(before["technology_id"]):
        for column in TECHNOLOGY_EDIT_COLUMNS:
            old, new = float(before.at[position, column]), float(parsed[column][position])
            if _same(old, new):
                continue
            target = column if column != "efficiency_or_grade" else _grade_column(str(before.at[position, "kind"]))
            changes.setdefault(tech_id, {})[target] = _number_text(new)
    if changes:
        content = files[TECHNOLOGIES_FILE]
        for cells in changes.values():
            for column in cells:
                content = _ensure_column(content, column)
        files[TECHNOLOGIES_FILE] = _rewrite_csv(content, "technology_id", changes)
    if len(scenario.wells) and WELLS_FILE in files:
        before = scenario.wells
        changes = {}
        for position, well_id in enumerate(before["well_id"]):
            for column in WELL_EDIT_COLUMNS:
                old, new = float(before[column].iloc[position]), float(parsed["well:" + column][position])
                if not _same(old, new):
                    changes.setdefault(str(well_id), {})[column] = _number_text(new)
        if changes:
            content = files[WELLS_FILE]
            for cells in changes.values():
                for column in cells:
                    content = _ensure_column(content, column)
            files[WELLS_FILE] = _rewrite_csv(content, "well_id", changes)
    return write_city_edits(files, scenario, city, _declared_crs(files))


def _declared_crs(files: Mapping[str, bytes]) -> str | None:
    """``[gis] crs`` of scenario.toml (the CRS of x/y columns), or None."""
    try:
        data = tomllib.loads(files[SCENARIO_FILE].decode("utf-8-sig"))
    except (KeyError, UnicodeDecodeError, tomllib.TOMLDecodeError):
        return None
    crs = data.get("gis", {}).get("crs") if isinstance(data.get("gis"), dict) else None
    return crs if isinstance(crs, str) else None


def files_for_setup(files: Mapping[str, bytes], setup: Mapping, scenario: Scenario) -> dict[str, bytes]:
    """The scenario files with every edit kept in the set-up page's ``hm_setup`` dict: the ones a run is solved
    with, saved with and downloaded with (raises :class:`InputError` like :func:`scenario_files_with_edits`)."""
    technology_table = setup.get("technology_table")
    if technology_table is None:
        technology_table = editable_technology_table(scenario)
    return scenario_files_with_edits(files, technology_table, setup.get("well_table"), scenario,
                                     CityEdits.from_setup(setup))


def edited_scenario(
    files: Mapping[str, bytes], scenario: Scenario, technology_table: pd.DataFrame,
    well_table: pd.DataFrame | None = None, city: CityEdits | None = None,
) -> tuple[Scenario | None, dict[str, bytes] | None, list[Problem]]:
    """The scenario to solve and the files to save with it, or None, None and every problem.

    Technology and permit edits alone go through :func:`apply_edits`; once the districts, new doublets or prices
    are edited the edited files are read back through the scenario reader, so the run solves exactly what the
    saved files hold.
    """
    try:
        written = scenario_files_with_edits(files, technology_table, well_table, scenario, city)
    except InputError as error:
        return None, None, list(error.problems)
    if not city_edits_changed(scenario, city):
        edited, problems = apply_edits(scenario, technology_table, well_table)
        return edited, written, problems
    edited, problems = scenario_from_files(written)
    return edited, (written if edited is not None else None), problems

def edited_cells(
    scenario: Scenario, technology_table: pd.DataFrame, well_table: pd.DataFrame | None = None
) -> pd.DataFrame:
    """The cells that differ from the input files: table, item, column, from, to (only cells that parse)."""
    rows = []
    pairs = [(TECHNOLOGY_TABLE, "technology_id", editable_technology_table(scenario), technology_table,
              TECHNOLOGY_EDIT_COLUMNS)]
    if well_table is not None:
        pairs.append((WELL_TABLE, "well_id", editable_well_table(scenario), well_table, WELL_EDIT_COLUMNS))
    for name, id_column, before, after, columns in pairs:
        if not isinstance(after, pd.DataFrame) or len(after) != len(before):
            continue
        for position in range(len(before)):
            for column in columns:
                if column not in after.columns:
                    continue
                old = float(before[column].iloc[position])
                new, why = _number(after[column].iloc[position])
                if why is None and not _same(old, new):
                    rows.append([name, str(before[id_column].iloc[position]), column, old, new])
    return pd.DataFrame(rows, columns=["table", "item", "column", "from", "to"])

def table_digest(frame: pd.DataFrame | None) -> str:
    """SHA-256 of a table's values (for the request key of an edited set-up)."""
    if frame is None:
        return "none"
    return hashlib.sha256(frame.to_csv(index=False, float_format="%.12g").encode()).hexdigest()
