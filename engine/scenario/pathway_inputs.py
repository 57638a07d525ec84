"""The pathway inputs of a scenario folder: ``[pathway]`` in scenario.toml, ``pathway.csv`` and retirement years.

A pathway is a list of milestone years. Each milestone year stands for the years until the next one; costs are
discounted to the base year. ``pathway.csv`` gives trajectories per year, city-wide (blank ``district_id``) or per
district; every value left blank keeps the scenario's own figure. ``district_technologies.csv`` may carry a
``retirement_year`` column: existing plant of that row is gone from that year on.

:func:`read_pathway_inputs` never raises for bad content: it returns the typed :class:`PathwayInputs` (or None
when the folder defines no pathway) together with every :class:`~engine.scenario.problems.Problem` found, each
naming file, row, column and what is wrong. The folder layout is documented in ``docs/input_format.md``.
"""

from __future__ import annotations

import math
import tomllib
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np
import pandas as pd

from engine.scenario.files import PATHWAY_FILE
from engine.scenario.problems import InputError, Problem

SCENARIO_FILE = "scenario.toml"
DISTRICT_TECHNOLOGIES_FILE = "district_technologies.csv"
RETIREMENT_COLUMN = "retirement_year"

CITY_COLUMNS = (
    "heat_demand_factor",
    "gas_price_factor",
    "oil_price_factor",
    "biomass_price_factor",
    "gas_eur_per_mwh",
    "oil_eur_per_mwh",
    "biomass_eur_per_mwh",
    "electricity_price_factor",
    "network_price_factor",
    "fuel_co2_factor",
    "grid_co2_factor",
    "network_co2_factor",
    "co2_eur_per_t",
    "co2_cap_t_per_a",
)
"""Trajectory columns of a city-wide row (blank district_id)."""

DISTRICT_COLUMNS = ("heat_demand_factor", "network_from_year", "network_connection_limit_kw")
"""Trajectory columns a district row may fill."""

ALL_COLUMNS = ("year", "district_id") + CITY_COLUMNS + ("network_from_year", "network_connection_limit_kw")
UPPER = {"co2_eur_per_t": 10_000.0, "gas_eur_per_mwh": 10_000.0, "oil_eur_per_mwh": 10_000.0,
         "biomass_eur_per_mwh": 10_000.0}
MAX_FACTOR = 100.0
YEAR_RANGE = (1900, 2200)

PATHWAY_KEYS = ("years", "base_year", "last_period_a")
PATHWAY_SECTIONS = ("pathway", "designation")
"""scenario.toml tables read here and in :mod:`engine.studies.designation`, not by the scenario reader."""


@dataclass
class PathwayInputs:
    """Milestone years and their trajectories.

    ``city`` has one row per milestone year (index ``year``) and the columns of :data:`CITY_COLUMNS`, NaN where
    the scenario's own value applies. ``district`` has one row per (year, district_id) given in the file with
    ``heat_demand_factor`` (NaN = the city-wide factor). ``network_from_year`` maps district ids to the first year
    the network reaches them and ``network_connection_limit_kw`` to the connection limit from then on; ``retirement_year`` maps (district_id, technology_id) to the first year without that
    row's existing plant.
    """

    years: list[int]
    base_year: int
    last_period_a: int
    city: pd.DataFrame
    district: pd.DataFrame
    network_from_year: dict = field(default_factory=dict)
    retirement_year: dict = field(default_factory=dict)
    network_connection_limit_kw: dict = field(default_factory=dict)

    def period_years(self) -> list[int]:
        """Number of calendar years each milestone year stands for."""
        ends = self.years[1:] + [self.years[-1] + self.last_period_a]
        return [b - a for a, b in zip(self.years, ends)]

    def with_years(self, years: list[int]) -> "PathwayInputs":
        """The same trajectories for other milestone years (rows for dropped years are left out)."""
        city = self.city.reindex(years)
        district = self.district[self.district["year"].isin(years)].reset_index(drop=True)
        base = min(self.base_year, years[0])
        return PathwayInputs(list(years), base, self.last_period_a, city, district, dict(self.network_from_year),
                             dict(self.retirement_year), dict(self.network_connection_limit_kw))


def _toml_line(text: str, key: str) -> int | None:
    in_section = False
    for number, line in enumerate(text.splitlines(), start=1):
        stripped = line.strip()
        if stripped.startswith("["):
            in_section = stripped.split("#")[0].strip() == "[pathway]"
            if in_section and key == "":
                return number
            continue
        if in_section and stripped.split("=")[0].strip() == key:
            return number
    return None


def check_years(years, base_year: int | None, file: str, row, column: str) -> list[Problem]:
    """Milestone years must be whole, strictly increasing and not before the base year."""
    problems = []
    if not isinstance(years, (list, tuple)) or not years:
        return [Problem(file, row, column, "must be a non-empty list of years, e.g. [2030, 2035, 2040]")]
    for value in years:
        if isinstance(value, bool) or not isinstance(value, (int, np.integer)):
            problems.append(Problem(file, row, column, f"{value!r} is not a whole year"))
        elif not YEAR_RANGE[0] <= value <= YEAR_RANGE[1]:
            problems.append(Problem(file, row, column, f"year {value} is outside {YEAR_RANGE[0]}..{YEAR_RANGE[1]}"))
    if problems:
        return problems
    for before, after in zip(years[:-1], years[1:]):
        if after <= before:
            problems.append(Problem(file, row, column, f"year {after} comes after {before}: the years must be in "
                                                       "increasing order, each once"))
    if base_year is not None:
        for value in years:
            if value < base_year:
                problems.append(Problem(file, row, column, f"year {value} is before the base year {base_year}"))
    return problems


def _read_table(folder: Path, problems: list[Problem]) -> dict | None:
    path = folder / SCENARIO_FILE
    try:
        text = path.read_text(encoding="utf-8")
        data = tomllib.loads(text)
    except (OSError, UnicodeDecodeError, RecursionError, tomllib.TOMLDecodeError):  # the reader reports these
        return None  # the scenario reader reports an unreadable scenario.toml
    section = data.get("pathway")
    if section is None:
        return None
    if not isinstance(section, dict):
        problems.append(Problem(SCENARIO_FILE, _toml_line(text, ""), "pathway", "must be a table [pathway]"))
        return None
    for key in section:
        if key not in PATHWAY_KEYS:
            problems.append(Problem(SCENARIO_FILE, _toml_line(text, key), f"pathway.{key}",
                                    f"unknown key; known keys in [pathway]: {', '.join(PATHWAY_KEYS)}"))
    out = {"years": section.get("years"), "text": text}
    for key in ("base_year", "last_period_a"):
        value = section.get(key)
        if value is not None and (isinstance(value, bool) or not isinstance(value, int)):
            problems.append(Problem(SCENARIO_FILE, _toml_line(text, key), f"pathway.{key}",
                                    f"must be a whole number, got {value!r}"))
            value = None
        out[key] = value
    if out["last_period_a"] is not None and out["last_period_a"] < 1:
        problems.append(Problem(SCENARIO_FILE, _toml_line(text, "last_period_a"), "pathway.last_period_a",
                                f"must be at least 1 year, got {out['last_period_a']}"))
        out["last_period_a"] = None
    if "years" not in section:
        problems.append(Problem(SCENARIO_FILE, _toml_line(text, ""), "pathway.years", "is missing; list the "
                                "milestone years, e.g. years = [2030, 2035, 2040]"))
    return out


def _number(cell: str, file: str, row: int, column: str, problems: list[Problem], low=0.0, high=math.inf,
            whole=False) -> float:
    if cell == "":
        return math.nan
    try:
        value = float(cell)
    except ValueError:
        problems.append(Problem(file, row, column, f"'{cell[:40]}' is not a number"))
        return math.nan
    if not math.isfinite(value) or value < low or value > high:
        problems.append(Problem(file, row, column, f"{value:g} is outside {low:g}..{high:g}"))
        return math.nan
    if whole and value != int(value):
        problems.append(Problem(file, row, column, f"{value:g} is not a whole year"))
        return math.nan
    return value


def _read_csv(folder: Path, name: str, problems: list[Problem], quiet: bool = False) -> pd.DataFrame | None:
    """The file as text cells; ``quiet`` leaves an unreadable file to the scenario reader to report."""
    path = folder / name
    if not path.exists():
        return None
    try:
        frame = pd.read_csv(path, dtype=str, keep_default_na=False, skipinitialspace=True)
    except (OSError, UnicodeDecodeError, pd.errors.ParserError, pd.errors.EmptyDataError) as error:
        if quiet:
            return None
        problems.append(Problem(name, None, None, f"could not be read as CSV ({type(error).__name__})"))
        return None
    frame.columns = [str(c).strip() for c in frame.columns]
    return frame.apply(lambda col: col.str.strip())


def _trajectories(folder: Path, years: list[int], district_ids, problems: list[Problem], other_years_ok=False):
    city = pd.DataFrame(np.nan, index=pd.Index(years, name="year"), columns=list(CITY_COLUMNS))
    district_rows, network_from, connection_limit = [], {}, {}
    frame = _read_csv(folder, PATHWAY_FILE, problems)
    if frame is None:
        return city, pd.DataFrame(columns=["year", "district_id", "heat_demand_factor"]), network_from, {}
    for column in frame.columns:
        if column not in ALL_COLUMNS and not column.lower().startswith("note"):
            problems.append(Problem(PATHWAY_FILE, 1, column, "unknown column; known columns: " + ", ".join(ALL_COLUMNS)))
    if "year" not in frame.columns:
        problems.append(Problem(PATHWAY_FILE, 1, "year", "required column is missing"))
        return city, pd.DataFrame(columns=["year", "district_id", "heat_demand_factor"]), network_from, {}
    known = set(district_ids) if district_ids is not None else None
    seen = {}
    for k, record in enumerate(frame.to_dict(orient="records")):
        row = k + 2
        year = _number(record["year"], PATHWAY_FILE, row, "year", problems, *YEAR_RANGE, whole=True)
        if math.isnan(year):
            if record["year"] == "":
                problems.append(Problem(PATHWAY_FILE, row, "year", "is blank; every row needs its year"))
            continue
        year = int(year)
        if year not in years:
            if other_years_ok:
                continue
            problems.append(Problem(PATHWAY_FILE, row, "year", f"year {year} is not a milestone year of the pathway "
                                    f"({', '.join(str(y) for y in years)}); add it to [pathway] years or drop the row"))
            continue
        did = record.get("district_id", "")
        if did and known is not None and did not in known:
            problems.append(Problem(PATHWAY_FILE, row, "district_id", f"unknown district '{did[:40]}'"))
            continue
        if (year, did) in seen:
            problems.append(Problem(PATHWAY_FILE, row, "district_id", f"a second row for year {year} and "
                                    + (f"district '{did}'" if did else "the whole city") + f" (first at row {seen[(year, did)]})"))
            continue
        seen[(year, did)] = row
        allowed = DISTRICT_COLUMNS if did else CITY_COLUMNS
        values = {}
        for column in frame.columns:
            if column in ("year", "district_id") or column not in ALL_COLUMNS or record[column] == "":
                continue
            if column not in allowed:
                where = "a district row" if did else "a city-wide row (blank district_id)"
                problems.append(Problem(PATHWAY_FILE, row, column, f"cannot be given in {where}"))
                continue
            if column == "network_from_year":
                values[column] = _number(record[column], PATHWAY_FILE, row, column, problems, *YEAR_RANGE, whole=True)
            elif column in ("co2_cap_t_per_a", "network_connection_limit_kw"):
                values[column] = _number(record[column], PATHWAY_FILE, row, column, problems, 0.0, 1e12)
            else:
                values[column] = _number(record[column], PATHWAY_FILE, row, column, problems, 0.0,
                                         UPPER.get(column, MAX_FACTOR))
        if did:
            district_rows.append({"year": year, "district_id": did,
                                  "heat_demand_factor": values.get("heat_demand_factor", math.nan)})
            if not math.isnan(values.get("network_from_year", math.nan)):
                earlier = network_from.get(did)
                network_from[did] = int(values["network_from_year"]) if earlier is None else min(
                    earlier, int(values["network_from_year"]))
            if not math.isnan(values.get("network_connection_limit_kw", math.nan)):
                connection_limit[did] = values["network_connection_limit_kw"]
        else:
            for column, value in values.items():
                city.loc[year, column] = value
    for fuel in ("gas", "oil", "biomass"):
        both = city[f"{fuel}_price_factor"].notna() & city[f"{fuel}_eur_per_mwh"].notna()
        for year in city.index[both]:
            problems.append(Problem(PATHWAY_FILE, seen.get((int(year), "")), f"{fuel}_eur_per_mwh",
                                    f"year {year} gives both {fuel}_price_factor and {fuel}_eur_per_mwh; keep one"))
    district = pd.DataFrame(district_rows, columns=["year", "district_id", "heat_demand_factor"])
    return city, district, network_from, connection_limit


def _retirements(folder: Path, base_year: int | None, problems: list[Problem]) -> dict:
    frame = _read_csv(folder, DISTRICT_TECHNOLOGIES_FILE, problems, quiet=True)
    if frame is None or RETIREMENT_COLUMN not in frame.columns:
        return {}
    out = {}
    for k, record in enumerate(frame.to_dict(orient="records")):
        row = k + 2
        cell = record[RETIREMENT_COLUMN]
        if cell == "":
            continue
        year = _number(cell, DISTRICT_TECHNOLOGIES_FILE, row, RETIREMENT_COLUMN, problems, *YEAR_RANGE, whole=True)
        if math.isnan(year):
            continue
        if base_year is not None and year < base_year:
            problems.append(Problem(DISTRICT_TECHNOLOGIES_FILE, row, RETIREMENT_COLUMN,
                                    f"retirement year {int(year)} is before the base year {base_year} of the pathway; "
                                    "plant retired before the base year is not existing plant (set existing_kw to 0)"))
            continue
        out[(record.get("district_id", ""), record.get("technology_id", ""))] = int(year)
    return out


def read_pathway_inputs(folder: str | Path, district_ids=None, years_override=None,
                        ) -> tuple[PathwayInputs | None, list[Problem]]:
    """The pathway of a scenario folder and every problem with it.

    Parameters
    ----------
    folder : str or Path
        The scenario folder.
    district_ids : list of str, optional
        Known district ids (checked against ``pathway.csv``); None skips the check.
    years_override : list of int, optional
        Milestone years given on the command line; they replace ``[pathway] years`` (problems then name the file
        ``--years``) and trajectory rows for other years are left out. The base year stays that of ``[pathway]``
        (its ``base_year``, else its first year) unless an override year comes earlier. With an override a folder
        without ``[pathway]`` still has a pathway.

    Returns
    -------
    (PathwayInputs or None, list of Problem)
        None when the folder has no pathway (or it has problems).
    """
    folder = Path(folder)
    problems: list[Problem] = []
    table = _read_table(folder, problems)
    if table is None and years_override is None:
        if (folder / PATHWAY_FILE).exists():
            problems.append(Problem(PATHWAY_FILE, None, None, "is given but scenario.toml has no [pathway] table with "
                                                              "the milestone years"))
        _retirements(folder, None, problems)
        return None, problems
    table = table or {"years": None, "base_year": None, "last_period_a": None, "text": ""}
    base_year = table["base_year"]
    if years_override is not None and base_year is None:
        own = table["years"]
        own_first = own[0] if isinstance(own, list) and own and isinstance(own[0], int) else None
        first = years_override[0] if years_override and isinstance(years_override[0], int) else None
        if first is not None:
            base_year = min(first, own_first) if own_first is not None else first
    if years_override is not None:
        years, file, row, column = years_override, "--years", None, None
    else:
        years, file, row, column = table["years"], SCENARIO_FILE, _toml_line(table["text"], "years"), "pathway.years"
    if years is None:
        return None, problems
    year_problems = check_years(years, base_year, file, row, column)
    problems += year_problems
    if year_problems:
        _retirements(folder, base_year, problems)
        return None, problems
    years = [int(y) for y in years]
    base = int(base_year) if base_year is not None else years[0]
    last = table["last_period_a"] or (years[-1] - years[-2] if len(years) > 1 else 1)
    city, district, network_from, connection_limit = _trajectories(folder, years, district_ids, problems,
                                                                   other_years_ok=years_override is not None)
    retirement = _retirements(folder, base, problems)
    if problems:
        return None, problems
    return PathwayInputs(years, base, int(last), city, district, network_from, retirement, connection_limit), []


def load_pathway(folder: str | Path, district_ids=None, years_override=None) -> PathwayInputs | None:
    """Like :func:`read_pathway_inputs`, raising :class:`InputError` listing every problem."""
    pathway, problems = read_pathway_inputs(folder, district_ids, years_override)
    if problems:
        raise InputError(problems)
    return pathway
