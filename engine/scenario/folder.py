"""A scenario folder as a whole: :func:`load_scenario`, :func:`validate_scenario` and the ``validate`` command.

The folder layout is documented in ``docs/input_format.md``. :func:`load_scenario` reads every file, checks
it, and either returns a :class:`~engine.scenario.inputs.Scenario` or raises one
:class:`~engine.scenario.problems.InputError` that lists every problem found in every file (it never stops at
the first one). :func:`validate_scenario` returns the same list without raising, and :func:`validate_command` is
the ``python -m engine validate DIR`` command.

Each file has its own module (:mod:`~engine.scenario.settings`, :mod:`~engine.scenario.districts`,
:mod:`~engine.scenario.catalogue`, :mod:`~engine.scenario.well_table`, :mod:`~engine.scenario.hourly`) built on the
reading primitives of :mod:`~engine.scenario.tables` and the column rules of :mod:`~engine.scenario.cells`.
Each check is a small function for one family of rules: reading a file (size, encoding, syntax), the header of a
table (missing and unknown columns), the cells of a column (type, blanks, range), identifiers (duplicates,
references between files), physics plausibility (ranges by technology kind, unit slips: kWh for MWh, W for kW,
l/h for m³/h, EUR/kWh for EUR/MWh, kelvin for °C, percent for shares) and geography (polygon validity, points
inside districts, swapped longitude and latitude). Every message says what is wrong and, where it can, how to fix
it. Defaults for blank cells are listed in :mod:`engine.scenario.defaults` and in ``docs/input_format.md``.

Validation here screens files for planning; it does not certify data for a well permit or an investment.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pandas as pd

from engine.scenario.catalogue import full_district_technologies, load_district_technologies, load_technologies
from engine.scenario.cells import Column, report_rows
from engine.scenario.districts import DISTRICT_COLUMNS, Districts, add_buildings, load_buildings, load_districts
from engine.scenario.files import (
    COST_CASES_FILE,
    DISTRICT_TECHNOLOGIES_FILE,
    DISTRICTS_FILE,
    GROUNDWATER_TEMP_HOURLY_FILE,
    HEAT_DEMAND_HOURLY_FILE,
    HOURLY_FILE,
    OPTIONAL_FILES,
    REQUIRED_FILES,
    SCENARIO_FILE,
    TECHNOLOGIES_FILE,
    WELLS_FILE,
    BUILDINGS_FILE,
)
from engine.scenario.hourly import HOURS_PER_YEAR, check_series_units, load_hourly, load_id_series
from engine.scenario.inputs import Scenario
from engine.scenario.kinds import COOLING_KINDS, HEAT_KINDS
from engine.scenario.problems import InputError, Problem
from engine.scenario.settings import load_cost_cases, load_settings
from engine.scenario.tables import Report, Table, close_names
from engine.scenario.well_table import load_wells, place_reinjection
from engine.units import HOURS_PER_COMMON_YEAR, KWH_PER_MWH

REPO_ROOT = Path(__file__).resolve().parents[2]
DEMO_DIR = REPO_ROOT / "demo_data"
"""The demo scenario shipped with the project; the word ``demo`` stands for it on the command line."""

# ============================================================================= unit slips across files
CAPACITY_SLIP_RATIO = 250.0
"""A connection limit or existing capacity above this many times the district's mean demand is taken for W
written as kW. A heating peak rarely exceeds about five times the annual mean demand (common practice), so the
ratio leaves a wide margin for generous limits while a factor of 1000 still stands out."""
CAPACITY_SLIP_FLOOR_KW = 1000.0
"""Capacities below this are never flagged, however small the district's demand. [kW]"""


def _mean_demand_kw(
    districts: Districts, buildings: pd.DataFrame | None, heat_series: pd.DataFrame | None
) -> tuple[np.ndarray, np.ndarray]:
    """Mean heat and cooling demand of each district over the year [kW], buildings and measured series included."""
    heat = districts.frame["heat_demand_mwh_per_a"].to_numpy(dtype=float).copy()
    cooling = districts.frame["cooling_demand_mwh_per_a"].to_numpy(dtype=float).copy()
    if buildings is not None and "district_index" in buildings:
        for column, total in (("heat_demand_mwh_per_a", heat), ("cooling_demand_mwh_per_a", cooling)):
            inside = buildings[buildings["district_index"] >= 0]
            sums = inside.groupby("district_index")[column].sum()
            np.add.at(total, sums.index.to_numpy(dtype=int), np.nan_to_num(sums.to_numpy(dtype=float)))
    heat_kw = heat * KWH_PER_MWH / HOURS_PER_COMMON_YEAR
    if heat_series is not None:
        for i, district_id in enumerate(districts.ids):
            if district_id in heat_series.columns:
                heat_kw[i] = float(np.nanmean(heat_series[district_id].to_numpy(dtype=float)))
    return heat_kw, cooling * KWH_PER_MWH / HOURS_PER_COMMON_YEAR


def check_capacity_units(
    report: Report,
    districts: Districts | None,
    buildings: pd.DataFrame | None,
    heat_series: pd.DataFrame | None,
    technologies: tuple[Table, pd.DataFrame] | None,
    overrides: tuple[Table, pd.DataFrame] | None,
) -> None:
    """Connection limits and existing capacities a thousand times the district's demand: W written as kW."""
    if districts is None or not len(districts.frame):
        return
    heat_kw, cooling_kw = _mean_demand_kw(districts, buildings, heat_series)

    def implausible(capacity: np.ndarray, mean: np.ndarray) -> np.ndarray:
        with np.errstate(invalid="ignore"):
            finite = np.isfinite(capacity)  # inf: no limit
            return finite & (mean > 0) & (capacity > CAPACITY_SLIP_FLOOR_KW) & (capacity > CAPACITY_SLIP_RATIO * mean)

    limit = districts.frame["network_connection_limit_kw"].to_numpy(dtype=float)
    report_rows(
        report,
        districts.table,
        "network_connection_limit_kw",
        implausible(limit, heat_kw),
        lambda i: f"{limit[i]:.6g} kW is {limit[i] / heat_kw[i]:,.0f} times the district's mean heat demand "
        f"({heat_kw[i]:,.0f} kW); looks like W instead of kW: divide it by 1000",
    )
    if overrides is None or technologies is None:
        return
    table, frame = overrides
    kinds = dict(zip(technologies[1]["technology_id"], technologies[1]["kind"]))
    position = {district_id: i for i, district_id in enumerate(districts.ids)}
    index = np.array([position.get(d, -1) for d in frame["district_id"]], dtype=int)
    kind = np.array([kinds.get(t, "") for t in frame["technology_id"]], dtype=object)
    mean = np.where(
        index >= 0,
        np.where(np.isin(kind, COOLING_KINDS), cooling_kw[index], heat_kw[index]),
        np.nan,
    )
    mean = np.where(np.isin(kind, HEAT_KINDS + COOLING_KINDS), mean, np.nan)  # stores hold kWh: not compared
    existing = frame["existing_kw"].to_numpy(dtype=float)
    report_rows(
        report,
        table,
        "existing_kw",
        implausible(existing, mean),
        lambda i: f"{existing[i]:.6g} kW is {existing[i] / mean[i]:,.0f} times the mean demand of district "
        f"'{frame['district_id'].iloc[i]}' ({mean[i]:,.0f} kW); looks like W instead of kW: divide it by 1000",
    )


# ============================================================================= the folder
def resolve_scenario_path(arg: str | Path) -> Path:
    """The folder a user names: the word ``demo`` means :data:`DEMO_DIR`, anything else is a path."""
    if isinstance(arg, str) and arg.strip().lower() == "demo":
        return DEMO_DIR
    return Path(arg).expanduser()


def _check_folder(folder: Path, report: Report) -> bool:
    if not folder.exists():
        report(str(folder), None, None, "scenario folder does not exist")
        return False
    if not folder.is_dir():
        report(str(folder), None, None, "is not a folder; a scenario is a folder of files (docs/input_format.md)")
        return False
    known = REQUIRED_FILES + OPTIONAL_FILES
    for path in sorted(folder.iterdir()):
        if path.name in known or path.suffix.lower() not in (".csv", ".toml", ".geojson", ".json"):
            continue
        close = [c for c in close_names(path.name, list(known)) if not (folder / c).exists()]
        if close:
            report(path.name, None, None, f"is not a scenario file and is ignored; did you mean '{close[0]}'?")
    return True


def _read_folder(folder: Path) -> tuple[Scenario | None, list[Problem]]:
    """Read and check everything; the scenario is None whenever an error was found. The problems returned with a
    scenario are warnings; it carries them too (``Scenario.warnings``)."""
    report = Report()
    if not _check_folder(folder, report):
        return None, report.problems
    settings = districts = technologies = hourly = None
    with report.guard(SCENARIO_FILE):
        settings = load_settings(folder, report)
    with report.guard(DISTRICTS_FILE):
        districts = load_districts(folder, report)
    with report.guard(TECHNOLOGIES_FILE):
        technologies = load_technologies(folder, report)
    with report.guard(HOURLY_FILE):
        hourly = load_hourly(folder, report)
    district_ids = districts.ids if districts is not None else None
    technology_ids = list(technologies[1]["technology_id"]) if technologies is not None else None
    n_hours = len(hourly) if hourly is not None and len(hourly) in HOURS_PER_YEAR else None

    wells = overrides = buildings = heat_series = temp_series = cost_cases = None
    with report.guard(WELLS_FILE):
        wells = load_wells(folder, report, districts)
    with report.guard(DISTRICT_TECHNOLOGIES_FILE):
        overrides = load_district_technologies(folder, report, district_ids, technology_ids)
    with report.guard(BUILDINGS_FILE):
        buildings = load_buildings(folder, report, districts)
    with report.guard(HEAT_DEMAND_HOURLY_FILE):
        heat_series = load_id_series(
            folder, HEAT_DEMAND_HOURLY_FILE, report, district_ids, "district", Column("", low=0), n_hours
        )
        check_series_units(report, HEAT_DEMAND_HOURLY_FILE, heat_series, districts)
    with report.guard(GROUNDWATER_TEMP_HOURLY_FILE):
        well_ids = list(wells["well_id"]) if wells is not None else None
        temp_series = load_id_series(
            folder, GROUNDWATER_TEMP_HOURLY_FILE, report, well_ids, "well", Column("", low=0, high=40), n_hours
        )
    with report.guard(COST_CASES_FILE):
        cost_cases = load_cost_cases(folder, report, set(technology_ids) if technology_ids is not None else None)
    with report.guard(str(folder)):
        check_capacity_units(report, districts, buildings, heat_series, technologies, overrides)

    if report.errors:
        return None, report.problems
    with report.guard(str(folder)):
        scenario = _assemble(
            folder, settings, districts, technologies[1], hourly, wells, overrides[1] if overrides else None,
            buildings, heat_series, temp_series, cost_cases,
        )
        scenario.warnings = list(report.problems)
        return scenario, list(report.problems)
    return None, report.problems


def _assemble(
    folder, settings, districts, technologies, hourly, wells, overrides, buildings, heat_series, temp_series, cost_cases
) -> Scenario:
    run, prices, aquifer = settings
    frame = districts.frame.copy()
    add_buildings(frame, buildings)
    frame = frame[list(DISTRICT_COLUMNS)].astype({"district_id": str, "name": str, "network_available": bool})
    place_reinjection(wells, aquifer)
    wells = wells.astype({"well_id": str, "district_id": str, "coldest_day_of_year": "int64"})
    hourly = hourly.astype({"hour": "int64"})
    district_ids = list(frame["district_id"])
    technology_ids = list(technologies["technology_id"])
    return Scenario(
        settings=run,
        prices=prices,
        aquifer=aquifer,
        districts=frame.reset_index(drop=True),
        technologies=technologies.reset_index(drop=True),
        district_technologies=full_district_technologies(district_ids, technology_ids, overrides),
        wells=wells.reset_index(drop=True),
        hourly=hourly.reset_index(drop=True),
        cost_cases=cost_cases,
        heat_demand_hourly_kw=heat_series,
        groundwater_temp_hourly_c=temp_series,
        source=str(folder.resolve()),
    )


def _unexpected(folder: Path, error: Exception) -> Problem:
    return Problem(str(folder), None, None, f"could not be read ({type(error).__name__}: {error})")


def load_scenario(path: str | Path) -> Scenario:
    """Read and validate a scenario folder.

    Parameters
    ----------
    path : str or pathlib.Path
        The scenario folder, or the word ``demo`` for the shipped demo scenario.

    Returns
    -------
    engine.scenario.inputs.Scenario

    Raises
    ------
    engine.scenario.problems.InputError
        Listing every problem found in every file. Warnings alone do not raise; the scenario carries them
        (``Scenario.warnings``).
    """
    scenario, problems = _read_folder(resolve_scenario_path(path))
    if scenario is None:
        raise InputError(problems or [Problem(str(path), None, None, "could not be read")])
    return scenario


def validate_scenario(path: str | Path) -> list[Problem]:
    """Every problem of a scenario folder, errors and warnings; an empty list when it loads without a warning."""
    folder = resolve_scenario_path(path)
    try:
        return _read_folder(folder)[1]
    except Exception as error:  # a last resort: the per-file guards catch almost everything
        return [_unexpected(folder, error)]


def validate_command(path: str | Path) -> int:
    """``python -m engine validate DIR``: print any warnings, then OK and a summary (exit code 0), or every problem
    (exit code 2)."""
    folder = resolve_scenario_path(path)
    try:
        scenario, problems = _read_folder(folder)
    except Exception as error:
        scenario, problems = None, [_unexpected(folder, error)]
    if scenario is not None:
        for problem in problems:
            print(problem)
        print(
            f"OK: {len(scenario.districts)} districts, {len(scenario.wells)} wells, "
            f"{len(scenario.technologies)} technologies, {scenario.n_hours} hours"
        )
        return 0
    for problem in problems:
        print(problem)
    print(f"{len(problems)} problem(s) found in {folder}")
    return 2
