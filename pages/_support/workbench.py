"""Plain helpers behind the dashboard pages: input sets, editable tables, the solve cache and the library.

The Streamlit pages (``app.py`` and ``pages/``) only read widgets, keep state and lay out figures; everything
they compute comes from here or from the engine modules this file calls. Nothing here imports streamlit, so
every helper is tested without a browser.

Session state of the dashboard
------------------------------
The pages keep their state under these keys of ``st.session_state`` (plain Python values, no widgets):

``hm_input``
    The input set the set-up page works on: an :class:`InputSet` (label, scenario files as bytes, the
    validated :class:`~engine.scenario.inputs.Scenario` or None, the problems table, the bundle manifest).
``hm_setup``
    The set-up choices, kept while the planner visits other pages: ``cost_case``, ``objective``,
    ``co2_cap_t_per_a``, ``full_year``, ``typical_days``, ``technology_table``, ``well_table``
    (the edited tables as DataFrames) and ``technology_base``, ``well_base`` (the data the table editors were
    started from; it stays fixed while an editor lives, so the browser keeps the edits).
``hm_solved``
    The session's solve cache, ``{request key: SolvedRun}`` (see :func:`request_key` and
    :func:`solve_with_cache`), so that going back to a cost case already solved is instant.
``hm_current``
    The request key of the newest solve: the "current run", shown on the results page until it is saved.
``hm_scenarios``
    ``{files digest: Scenario}``: scenarios already read from a saved run's files (for maps and colours).
``hm_loaded``
    ``{run id: RunResult}``: saved runs already read from the library in this session.
``hm_flash``
    A short message (saved, renamed, deleted ...) shown once on the next page run.
``hm_shell``, ``hm_goto``
    True once ``app.py`` has set up the navigation in this session; the page to go to when a page was opened by
    its address before that (Streamlit then runs the page file on its own, without the navigation).

Widget keys start with the page's short name (``setup_``, ``results_``, ``compare_``, ``share_``).

Everything shown is screening-level: :data:`CAUTION` goes on every page.
"""

from __future__ import annotations

import csv
import dataclasses
import hashlib
import io
import math
import re
import shutil
import tempfile
from collections.abc import Callable, Mapping, MutableMapping
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np
import pandas as pd

from engine.scenario import reader as scenario_io
from engine.storage.bundle import CAUTION, BundleError, export_bundle, read_bundle
from engine.scenario.inputs import Scenario, input_hash
from engine.scenario.problems import InputError, Problem, problems_frame
from engine.model.results import RunResult
from engine.model.solve import run_settings, solve_scenario
from engine.model.solvers import DIRECT, resolve_solver
from engine.storage.store import ScenarioStore, StoreError, check_scenario_files, read_scenario_files

CAUTION_LINE = (
    "Screening results for early planning only. Well permits, aquifer temperatures and investments must be "
    "checked against local codes, with the water authority and by licensed engineers."
)
"""The one-line caution every page shows (the long form is :data:`engine.storage.bundle.CAUTION`)."""

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

HEAT_PUMP_KINDS = ("air_heat_pump", "groundwater_heat_pump")
EFFICIENCY_KINDS = ("fuel_boiler", "electric_boiler", "chiller", "groundwater_cooling")
"""Kinds whose ``efficiency`` column is edited as "efficiency or grade" (boilers: efficiency, coolers: EER)."""

MAX_BOILER_EFFICIENCY = 1.2
MAX_EER = 50.0

SOLVE_CACHE_SIZE = 12
"""Solved runs kept per session; the oldest goes first (a demo run holds a few MB of tables)."""


# ============================================================================================== input sets
@dataclass
class InputSet:
    """One set of scenario files and what reading them gave.

    Attributes
    ----------
    label : str
        Where the files came from, in the planner's words ("Demo city", "bundle city.zip", "saved run ...").
    files : dict of str to bytes
        The scenario folder's files.
    scenario : Scenario or None
        The validated scenario; None when the files have problems.
    problems : DataFrame
        file, row, column, message (empty when the files are fine).
    manifest : dict
        The bundle manifest when the files came from a bundle, else empty.
    """

    label: str
    files: dict
    scenario: Scenario | None
    problems: pd.DataFrame
    manifest: dict = field(default_factory=dict)

    @property
    def digest(self) -> str:
        return files_digest(self.files)

    @property
    def ok(self) -> bool:
        return self.scenario is not None


def files_digest(files: Mapping[str, bytes]) -> str:
    """SHA-256 over the file names and contents (a cheap key for a set of scenario files)."""
    digest = hashlib.sha256()
    for name in sorted(files):
        digest.update(name.encode())
        digest.update(b"\0")
        digest.update(hashlib.sha256(files[name]).digest())
    return digest.hexdigest()


def scenario_from_files(files: Mapping[str, bytes]) -> tuple[Scenario | None, list[Problem]]:
    """Read scenario files (name -> bytes) through :func:`engine.scenario.reader.load_scenario`.

    Returns the scenario and an empty list, or None and every problem found. Never raises for bad input.
    """
    try:
        files = check_scenario_files(files, "the scenario files")
    except StoreError as exc:
        return None, [Problem("scenario files", None, None, str(exc))]
    with tempfile.TemporaryDirectory(prefix="heatmosaic-inputs-") as folder:
        for name, content in files.items():
            (Path(folder) / name).write_bytes(content)
        try:
            return scenario_io.load_scenario(folder), []
        except InputError as error:
            return None, list(error.problems)


def input_set_from_files(files: Mapping[str, bytes], label: str, manifest: dict | None = None) -> InputSet:
    """An :class:`InputSet` from scenario files held in memory."""
    files = dict(files)
    scenario, problems = scenario_from_files(files)
    return InputSet(label, files, scenario, problems_frame(problems), dict(manifest or {}))


def demo_input_set() -> InputSet:
    """The demo city shipped with heatmosaic (``demo_data/``)."""
    files = read_scenario_files(scenario_io.DEMO_DIR)
    return input_set_from_files(files, "Demo city")


def input_set_from_bundle(data: bytes, workdir: str | Path, label: str = "uploaded bundle") -> InputSet:
    """Check and read an uploaded bundle (zip); problems come back in the table, never as an exception."""
    workdir = Path(workdir)
    workdir.mkdir(parents=True, exist_ok=True)
    dest = Path(tempfile.mkdtemp(prefix="bundle-", dir=workdir))
    try:
        contents = read_bundle(bytes(data), dest)
        files = read_scenario_files(contents.input_folder)
    except BundleError as exc:
        return InputSet(label, {}, None, problems_frame([Problem(label, None, None, str(exc))]), {})
    except Exception as exc:  # a damaged upload must read as a message, not a traceback
        message = f"could not be read as a bundle ({type(exc).__name__}: {exc})"
        return InputSet(label, {}, None, problems_frame([Problem(label, None, None, message)]), {})
    finally:
        shutil.rmtree(dest, ignore_errors=True)  # the files are in memory now
    missing = [name for name in scenario_io.REQUIRED_FILES if name not in files]
    if missing:
        problems = [
            Problem(name, None, None, "is missing from the bundle's inputs/ folder; the bundle cannot be re-solved")
            for name in missing
        ]
        return InputSet(label, files, None, problems_frame(problems), contents.manifest)
    return input_set_from_files(files, label, contents.manifest)


def load_uploaded_bundle(data: bytes, workdir: str | Path) -> tuple[Scenario | None, pd.DataFrame, dict]:
    """An uploaded bundle's scenario (or None), its problems as a table (file, row, column, message) and manifest."""
    loaded = input_set_from_bundle(data, workdir)
    return loaded.scenario, loaded.problems, loaded.manifest


def input_set_from_run(store: ScenarioStore, run_id: int) -> InputSet:
    """The scenario files a saved run was solved with, read again."""
    info = store.run_info(run_id)
    files = store.load_inputs(run_id)
    label = f"saved run “{info['name']}”"
    if not files:
        problem = Problem(label, None, None, "was saved without its scenario files; it cannot be re-opened")
        return InputSet(label, {}, None, problems_frame([problem]), {})
    return input_set_from_files(files, label)


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
        cost_case = "reference" if "reference" in cases else (cases[0] if cases else "")
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
    }


def problems_for_display(problems: pd.DataFrame) -> pd.DataFrame:
    """A problems table (file, row, column, message) with blank cells where a problem names no row or column."""
    out = problems.copy()
    out["row"] = ["" if pd.isna(r) else str(int(r)) for r in out["row"]]
    out["column"] = ["" if c is None or (isinstance(c, float) and math.isnan(c)) else str(c) for c in out["column"]]
    return out


def cost_case_descriptions(scenario: Scenario) -> dict[str, str]:
    """Cost case name -> description, in the order of the file."""
    return {name: case.description for name, case in scenario.cost_cases.items()}


# ============================================================================================== editable tables
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
    specs = scenario_io.TECHNOLOGY_COLUMNS
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
                high = MAX_BOILER_EFFICIENCY if kind in ("fuel_boiler", "electric_boiler") else MAX_EER
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
        specs = scenario_io.WELL_COLUMNS
        for column in WELL_EDIT_COLUMNS:
            spec = _spec(specs, column)
            values = _check_column(
                well_table, WELL_TABLE, "well_id", column, spec, problems,
                blank_ok=column == "permit_annual_volume_m3",
                high=scenario_io.MAX_WELL_FLOW_M3_PER_H if column == "permit_flow_m3_per_h" else None,
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


# ============================================================================================== files with edits
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
) -> dict[str, bytes]:
    """The scenario files with the edits written back into ``technologies.csv`` and ``wells.csv``.

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
        content = files[scenario_io.TECHNOLOGIES_FILE]
        for cells in changes.values():
            for column in cells:
                content = _ensure_column(content, column)
        files[scenario_io.TECHNOLOGIES_FILE] = _rewrite_csv(content, "technology_id", changes)
    if len(scenario.wells) and scenario_io.WELLS_FILE in files:
        before = scenario.wells
        changes = {}
        for position, well_id in enumerate(before["well_id"]):
            for column in WELL_EDIT_COLUMNS:
                old, new = float(before[column].iloc[position]), float(parsed["well:" + column][position])
                if not _same(old, new):
                    changes.setdefault(str(well_id), {})[column] = _number_text(new)
        if changes:
            content = files[scenario_io.WELLS_FILE]
            for cells in changes.values():
                for column in cells:
                    content = _ensure_column(content, column)
            files[scenario_io.WELLS_FILE] = _rewrite_csv(content, "well_id", changes)
    return files


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


# ============================================================================================== solving
@dataclass
class SolvedRun:
    """A run solved in this session, with the exact files it was solved from."""

    result: RunResult
    files: dict
    label: str
    input_hash: str
    saved_run_id: int | None = None
    """The library's run id once the planner saved this run."""


def request_key(
    base_digest: str,
    technology_table: pd.DataFrame | None,
    well_table: pd.DataFrame | None,
    cost_case: str,
    objective: str,
    co2_cap_t_per_a: float,
    typical_days: int,
) -> str:
    """A cheap key of everything a set-up page request holds (files, edits and run choices).

    Two requests with the same key have the same input hash; the key avoids re-reading the scenario on every
    page run only to find out that nothing changed.
    """
    parts = [
        base_digest, table_digest(technology_table), table_digest(well_table), str(cost_case), str(objective),
        f"{float(co2_cap_t_per_a or 0.0):.12g}", str(int(typical_days)),
    ]
    return hashlib.sha256("|".join(parts).encode()).hexdigest()


def solve_options(objective: str, co2_cap_t_per_a: float, full_year: bool, typical_days: int) -> dict:
    """Keyword arguments of :func:`engine.model.solve.solve_scenario` for the set-up choices."""
    return {
        "objective": objective,
        "co2_cap_t_per_a": float(co2_cap_t_per_a or 0.0),
        "typical_days": 0 if full_year else int(typical_days),
    }


def remember(cache: MutableMapping, key: str, value, limit: int = SOLVE_CACHE_SIZE) -> None:
    """Put ``value`` under ``key``, dropping the oldest entries beyond ``limit``."""
    if key in cache:
        del cache[key]
    cache[key] = value
    while len(cache) > limit:
        del cache[next(iter(cache))]


def solve_with_cache(
    cache: MutableMapping,
    key: str,
    scenario: Scenario,
    files: Mapping[str, bytes],
    label: str,
    cost_case: str,
    objective: str,
    co2_cap_t_per_a: float,
    typical_days: int,
    progress: Callable[[float, str], None] | None = None,
    cancel: Callable[[], bool] | None = None,
    solver: str = DIRECT,
) -> tuple[SolvedRun, bool]:
    """Solve (or find in ``cache``) one request; returns the run and whether it came from the cache.

    ``solver`` as in :func:`engine.model.solve.solve_scenario`; a run found by its input hash is reused only when
    it was solved by the same solver (the point of choosing another solver is to see its answer).

    The cache is looked up by ``key`` first and then by the input hash, so that two requests that differ only in
    ways the model ignores share one solve. Districts are solved one after the other in this process
    (``workers=1``): in a dashboard server a process pool would fork a threaded process, and for a city of the
    demo's size it is no faster.
    """
    if key in cache:
        remember(cache, key, cache[key])
        return cache[key], True
    settings = run_settings(scenario, objective, co2_cap_t_per_a, typical_days)
    hash_ = input_hash(scenario, cost_case, settings)
    solver = resolve_solver(solver)
    for solved in list(cache.values()):
        if (solved.input_hash == hash_ and solved.result.solved
                and solved.result.model_size.get("solver", DIRECT) == solver):
            run = dataclasses.replace(solved, label=label)
            remember(cache, key, run)
            return run, True
    try:
        result = solve_scenario(
            scenario, cost_case=cost_case, settings=settings, progress=progress, cancel=cancel, workers=1,
            solver=solver,
        )
    except Exception as exc:  # a planner sees a message, never a traceback; a failed solve is not cached
        result = RunResult(
            status="error", message=f"The run could not be solved ({type(exc).__name__}: {exc}).",
            objective=settings.objective, cost_case=cost_case, input_hash=hash_, scenario_name=settings.name,
            settings=dataclasses.asdict(settings),
        )
        return SolvedRun(result=result, files=dict(files), label=label, input_hash=hash_), False
    run = SolvedRun(result=result, files=dict(files), label=label, input_hash=result.input_hash)
    if result.solved:
        remember(cache, key, run)
    return run, False


def choices_of_run(result: RunResult) -> dict:
    """The set-up choices a run was solved with: cost_case, objective, co2_cap_t_per_a, typical_days (0 = year)."""
    settings = result.settings or {}
    return {
        "cost_case": result.cost_case,
        "objective": result.objective if result.objective in ("cost", "co2") else "cost",
        "co2_cap_t_per_a": float(settings.get("co2_cap_t_per_a", 0.0) or 0.0),
        "typical_days": int(settings.get("typical_days", 0) or 0),
    }


def resolve_saved_run(
    cache: MutableMapping,
    scenario: Scenario,
    files: Mapping[str, bytes],
    result: RunResult,
    label: str,
    progress: Callable[[float, str], None] | None = None,
    cancel: Callable[[], bool] | None = None,
) -> tuple[SolvedRun, bool]:
    """Solve a saved run again from its own files and choices (a reproducibility check)."""
    choices = choices_of_run(result)
    key = request_key(files_digest(files), None, None, choices["cost_case"], choices["objective"],
                      choices["co2_cap_t_per_a"], choices["typical_days"])
    return solve_with_cache(cache, key, scenario, files, label, progress=progress, cancel=cancel, **choices)


def load_saved_run(store: ScenarioStore, cache: MutableMapping, run_id: int) -> RunResult:
    """A saved run, read from the library once per session (``cache``: run id -> RunResult)."""
    run_id = int(run_id)
    if run_id not in cache:
        remember(cache, run_id, store.load_run(run_id), limit=8)
    return cache[run_id]


_MARKDOWN_ACTIVE = re.compile(r"[\\`*_{}\[\]()<>#+\-.!|~$:&=\"']")


def markdown_literal(text) -> str:
    """``text`` for Streamlit's Markdown (``st.markdown``, ``st.caption``, alerts, widget labels), shown as typed.

    Every character Markdown or Streamlit's extensions could act on (links, images, emphasis, HTML, LaTeX ``$``,
    ``:icon:`` and ``:color[...]`` directives, list and heading markers) becomes a numeric character reference,
    which Markdown prints as that character and never reads as syntax. Names, notes and descriptions come from
    the planner's files, so a ``![x](http://...)`` in a run name must not fetch an image.
    """
    return _MARKDOWN_ACTIVE.sub(lambda m: f"&#{ord(m.group())};", str(text))


def resolution_note(scenario, result: RunResult) -> str:
    """What the time resolution of ``result`` costs in accuracy, from the cached typical-day fidelity table.

    The table is measured once per input set (Trade-offs and sweeps page, or ``python -m engine.studies.fidelity``);
    until then the note says where to measure it.
    """
    from engine.studies.fidelity import fidelity_note, lookup_fidelity

    days = int(result.settings.get("typical_days", 0) or 0)
    if scenario is None:
        return ""
    if days == 0:
        return fidelity_note(pd.DataFrame(), 0)
    try:
        table = lookup_fidelity(scenario, result.cost_case, result.objective)
    except Exception:  # a damaged cache file only costs the note
        table = None
    note = fidelity_note(table, days) if table is not None else ""
    return note or (
        f"Solved with {days} typical days. Their error against the full year has not been measured for these "
        "inputs yet: the Trade-offs and sweeps page measures it once (fidelity tab)."
    )


def describe_choices(result: RunResult) -> str:
    """One line (Markdown) with a run's cost case, objective, CO2 cap and time resolution."""
    choice = choices_of_run(result)
    objective = "lowest CO2" if choice["objective"] == "co2" else "lowest cost"
    cap = choice["co2_cap_t_per_a"]
    days = choice["typical_days"]
    return (
        f"Cost case **{markdown_literal(choice['cost_case'])}** · objective **{objective}** · CO2 cap "
        f"{f'{cap:,.0f} t/a' if cap else 'none'} · {f'{days} typical days' if days else 'full year'}"
    )


def suggested_run_name(result: RunResult) -> str:
    """A default name for saving: cost case, objective and resolution."""
    days = int(result.settings.get("typical_days", 0) or 0)
    cap = float(result.settings.get("co2_cap_t_per_a", 0) or 0)
    parts = [result.cost_case, "lowest CO2" if result.objective == "co2" else "lowest cost"]
    if cap > 0:
        parts.append(f"cap {cap:,.0f} t/a")
    parts.append(f"{days} typical days" if days else "full year")
    return ", ".join(parts)


def run_kpis(result: RunResult) -> dict[str, float]:
    """City figures for the dashboard's metric tiles."""
    from engine.outputs.figures import city_levelised_cost_eur_per_mwh

    return {
        "total_cost_eur_per_a": result.total_cost_eur_per_a,
        "co2_t_per_a": result.co2_t_per_a,
        "heat_demand_mwh_per_a": result.heat_demand_mwh_per_a,
        "unserved_heat_mwh_per_a": result.unserved_heat_mwh_per_a,
        "levelised_cost_eur_per_mwh": city_levelised_cost_eur_per_mwh(result),
    }


# ============================================================================================== tables for reading
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


def svg_map_height(svg_html: str, default: int = 600) -> int:
    """The pixel height of the first ``<svg>`` of an inline map (for the frame that shows it)."""
    import re

    found = re.search(r"<svg[^>]*\bheight=['\"]([0-9.]+)", svg_html)
    return int(math.ceil(float(found.group(1)))) if found else default


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


# ============================================================================================== the library
LIBRARY_HEADERS = {
    "name": "name",
    "cost_case": "cost case",
    "objective": "objective",
    "total_cost_eur_per_a": "total cost [M€/a]",
    "co2_t_per_a": "CO2 [t/a]",
    "created_utc": "created (UTC)",
    "note": "note",
}


def library_table(store: ScenarioStore) -> pd.DataFrame:
    """The saved runs for display, newest first: run_id, name, cost case, objective, total cost [M€/a],
    CO2 [t/a], created (UTC), note, status."""
    runs = store.list_runs()
    table = pd.DataFrame(
        {
            "run_id": runs["run_id"].to_numpy(),
            "name": runs["name"].to_numpy(),
            "cost case": runs["cost_case"].to_numpy(),
            "objective": ["lowest CO2" if o == "co2" else "lowest cost" for o in runs["objective"]],
            "total cost [M€/a]": runs["total_cost_eur_per_a"].to_numpy(float) / 1e6,
            "CO2 [t/a]": runs["co2_t_per_a"].to_numpy(float).round(0),
            "created (UTC)": [str(c)[:16].replace("T", " ") for c in runs["created_utc"]],
            "note": runs["note"].to_numpy(),
            "status": runs["status"].to_numpy(),
        }
    )
    return table


def run_choices(store: ScenarioStore) -> dict[int, str]:
    """run id -> a label for pickers ("name · cost case · #id"), newest first."""
    runs = store.list_runs()
    return {
        int(row.run_id): f"{row.name} · {row.cost_case} · #{int(row.run_id)}"
        for row in runs.itertuples(index=False)
    }


def unique_run_names(labels: Mapping[int, str]) -> dict[int, str]:
    """run id -> a display name unique among ``labels`` (a repeated name gets its id appended)."""
    counts: dict[str, int] = {}
    for name in labels.values():
        counts[name] = counts.get(name, 0) + 1
    return {run_id: (name if counts[name] == 1 else f"{name} (#{run_id})") for run_id, name in labels.items()}


def default_baseline(results: Mapping[int, RunResult]) -> int:
    """The run to compare against: the oldest run of the reference cost case, else the oldest run."""
    ids = sorted(results)
    for run_id in ids:
        if results[run_id].cost_case == "reference":
            return run_id
    return ids[0]


def scenario_for_files(cache: MutableMapping, files: Mapping[str, bytes]) -> Scenario | None:
    """The scenario of ``files``, read once per session (``cache``: digest -> Scenario)."""
    if not files:
        return None
    digest = files_digest(files)
    if digest not in cache:
        scenario, _ = scenario_from_files(files)
        remember(cache, digest, scenario, limit=6)
    return cache[digest]


# ============================================================================================== sharing
def bundle_bytes(result: RunResult, inputs: Mapping[str, bytes]) -> bytes:
    """A bundle zip (:func:`engine.storage.bundle.export_bundle`) as bytes, for a download button."""
    with tempfile.TemporaryDirectory(prefix="heatmosaic-bundle-") as folder:
        path = export_bundle(result, dict(inputs), Path(folder) / "run.zip")
        return path.read_bytes()


def library_bytes(store: ScenarioStore) -> bytes:
    """The whole library (:meth:`ScenarioStore.export_library`) as zip bytes."""
    with tempfile.TemporaryDirectory(prefix="heatmosaic-library-") as folder:
        return store.export_library(Path(folder) / "library.zip").read_bytes()


def import_library_bytes(store: ScenarioStore, data: bytes) -> tuple[list[int], str | None]:
    """Add the runs of an uploaded library zip; returns the new run ids and an error message (or None)."""
    with tempfile.TemporaryDirectory(prefix="heatmosaic-library-") as folder:
        path = Path(folder) / "upload.zip"
        path.write_bytes(bytes(data))
        try:
            return store.import_library(path), None
        except StoreError as exc:
            return [], str(exc)


def safe_file_name(name: str, suffix: str) -> str:
    """A download file name made of the run name (letters, digits, '-' and '_' only)."""
    stem = "".join(c if c.isalnum() or c in "-_" else "_" for c in str(name)).strip("_") or "heatmosaic"
    return f"{stem[:60]}{suffix}"


__all__ = [
    "CAUTION",
    "CAUTION_LINE",
    "InputSet",
    "SolvedRun",
    "apply_edits",
    "bundle_bytes",
    "choices_of_run",
    "load_saved_run",
    "markdown_literal",
    "resolve_saved_run",
    "check_edits",
    "cost_case_descriptions",
    "district_results_table",
    "supply_results_table",
    "svg_map_height",
    "table_height",
    "technology_names",
    "well_results_table",
    "default_baseline",
    "describe_choices",
    "demo_input_set",
    "editable_technology_table",
    "editable_well_table",
    "edited_cells",
    "initial_setup",
    "files_digest",
    "import_library_bytes",
    "input_set_from_bundle",
    "input_set_from_files",
    "input_set_from_run",
    "library_bytes",
    "library_table",
    "load_uploaded_bundle",
    "problems_for_display",
    "remember",
    "request_key",
    "run_choices",
    "run_kpis",
    "safe_file_name",
    "scenario_for_files",
    "scenario_files_with_edits",
    "scenario_from_files",
    "solve_options",
    "solve_with_cache",
    "suggested_run_name",
    "unique_run_names",
]


# ------------------------------------------------------------------------------------------ cancellable jobs
class JobCancelled(RuntimeError):
    """A long job (solve, trade-off curve, sweep, check) was stopped by the planner."""


def run_cancellable(
    job: Callable[[Callable[[float, str], None], Callable[[], bool]], object],
    show: Callable[[float, str], None],
    poll_s: float = 0.2,
    stop_wait_s: float = 60.0,
):
    """Run ``job(progress, cancel)`` in a worker thread while this thread shows its progress every ``poll_s``.

    ``show(share, text)`` is called from this thread only. If this thread is interrupted while it waits (any
    exception raised by ``show``, such as the dashboard's rerun when the planner presses Cancel, or a
    KeyboardInterrupt), the job's ``cancel()`` starts returning True, the worker is given up to ``stop_wait_s``
    to stop (a HiGHS solve stops at its next interrupt callback), and the exception goes on. An exception raised
    by the job is raised here. Returns the job's value.
    """
    import threading

    stop = threading.Event()
    latest = [0.0, "Starting"]
    box: dict = {}

    def progress(share: float, text: str) -> None:
        latest[0], latest[1] = float(share), str(text)

    def target() -> None:
        try:
            box["value"] = job(progress, stop.is_set)
        except BaseException as error:  # handed to the waiting thread
            box["error"] = error

    worker = threading.Thread(target=target, name="heatmosaic-job", daemon=True)
    worker.start()
    try:
        while worker.is_alive():
            worker.join(poll_s)
            show(latest[0], latest[1])
    finally:
        if worker.is_alive():
            stop.set()
            worker.join(stop_wait_s)
    if "error" in box:
        raise box["error"]
    return box.get("value")
