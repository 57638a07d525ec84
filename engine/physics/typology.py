"""Annual heat demand of buildings from a typology table, and screening indicators of network suitability.

Planners seldom have metered demand for every building; they have its use, its construction period and its
floor area. A building typology gives specific demand per heated floor area by use and period:

    space heat [MWh/a] = q_space [kWh/(m² a)] * A_heated [m²] / 1000
    hot water  [MWh/a] = q_water [kWh/(m² a)] * A_heated [m²] / 1000

with ``A_heated`` given, or estimated as ``footprint area * storeys * HEATED_AREA_RATIO``. Metered demand
(``heat_demand_mwh_per_a`` of the building) replaces the estimate where it is given.

The table shipped in ``engine/assets/typology/building_typology.csv`` is editable (a scenario folder may hold
its own ``building_typology.csv``). Its values are NOT taken from a published table: the residential space-heat
values are rounded from memory to the order of magnitude of the German residential building typology (IWU 2015)
and the non-residential ones are common practice from memory; the residential hot-water value 12.5 kWh/(m² a)
is the standard value of DIN V 4701-10 for dwellings (from memory). Replace them with the national or local
typology before planning with them; each row's ``note_source`` says where its value comes from.

Screening indicators (common practice for judging whether a heat network could suit an area):

* heat density [MWh/(ha a)]: annual heat demand over the land area of the district;
* linear heat density [MWh/(m a)]: annual heat demand over the length of street (or trench) a network would
  need.

The class limits :data:`HEAT_DENSITY_CLASSES` and :data:`LINEAR_DENSITY_CLASSES` are quoted from memory (see
their notes); they are screening thresholds, not a design criterion, and a network decision needs a
feasibility study by a qualified engineer.

References
----------
T. Loga, B. Stein, N. Diefenbach, R. Born (2015). Deutsche Wohngebäudetypologie. Institut Wohnen und Umwelt
(IWU), Darmstadt (order of magnitude of the residential values only, from memory).
DIN V 4701-10 (2003). Energetische Bewertung heiz- und raumlufttechnischer Anlagen, Teil 10 (hot water
12.5 kWh/(m² a) for dwellings, from memory).
BMWK / BMWSB (2024). Leitfaden Wärmeplanung (heat-density classes, from memory).
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from pathlib import Path

import numpy as np
import pandas as pd

from engine.scenario.problems import Problem

TYPOLOGY_FILE = "building_typology.csv"
DEFAULT_TYPOLOGY = Path(__file__).resolve().parents[1] / "assets" / "typology" / TYPOLOGY_FILE
TYPOLOGY_COLUMNS = ("use", "period", "built_from", "built_to", "space_heat_kwh_per_m2_a", "hot_water_kwh_per_m2_a")

HEATED_AREA_RATIO = 0.8
"""Heated (net) floor area per gross floor area (footprint x storeys) [-]; common practice, from memory."""

MAX_SPECIFIC_DEMAND_KWH_PER_M2_A = 1000.0
"""Largest specific demand accepted in a typology table [kWh/(m² a)]; above it the value is likely in Wh or a total."""


@dataclass(frozen=True)
class DensityClass:
    """One class of a screening indicator: values from ``low`` (inclusive) to ``high`` (exclusive)."""

    low: float
    high: float
    label: str


HEAT_DENSITY_CLASSES = (
    DensityClass(0.0, 70.0, "below 70: individual supply is usually cheaper"),
    DensityClass(70.0, 175.0, "70-175: a network may suit new development"),
    DensityClass(175.0, 415.0, "175-415: a network suits existing buildings"),
    DensityClass(415.0, math.inf, "415 and above: very high network potential"),
)
"""Heat density classes [MWh/(ha a)], from memory of the classes printed in the German guide "Leitfaden
Wärmeplanung" (BMWK/BMWSB 2024); verify against the guide or the local heat plan before relying on them."""

HEAT_DENSITY_SOURCE = (
    "Classes from memory of the German guide Leitfaden Wärmeplanung (BMWK/BMWSB 2024); screening thresholds, "
    "not a design criterion: verify them against the guide or the local heat plan."
)
"""The source line a map or table of :data:`HEAT_DENSITY_CLASSES` carries."""

LINEAR_DENSITY_CLASSES = (
    DensityClass(0.0, 0.5, "below 0.5: a network is rarely economic"),
    DensityClass(0.5, 1.5, "0.5-1.5: a network is possible (0.5 is the minimum of the German KfW network subsidy)"),
    DensityClass(1.5, math.inf, "1.5 and above: well suited for a network"),
)
"""Linear heat density classes [MWh/(m a)]: 0.5 from memory of the minimum the German KfW programme for heat
networks required, 1.5 common practice; both screening thresholds only."""


# ============================================================================= the table
def _number(text: str) -> float:
    return float(str(text).strip())


def read_typology(path: str | Path | None = None, file: str | None = None) -> tuple[pd.DataFrame | None, list[Problem]]:
    """Read a typology table; every problem names the file, the row (header = 1) and the column.

    Columns: ``use`` (text), ``period`` (a label such as ``1949-1978``), ``built_from`` and ``built_to``
    (construction years, inclusive; blank means open), ``space_heat_kwh_per_m2_a`` and
    ``hot_water_kwh_per_m2_a`` [kWh/(m² a)]; extra columns starting with ``note`` are kept.
    """
    path = Path(path) if path is not None else DEFAULT_TYPOLOGY
    file = file or path.name
    problems: list[Problem] = []
    try:
        cells = pd.read_csv(path, dtype=str, keep_default_na=False, skipinitialspace=True)
    except (OSError, ValueError, UnicodeDecodeError) as error:
        return None, [Problem(file, None, None, f"cannot be read as CSV ({error}); save it as UTF-8 CSV")]
    cells.columns = [str(c).strip() for c in cells.columns]
    for column in TYPOLOGY_COLUMNS:
        if column not in cells.columns:
            problems.append(Problem(file, 1, column, f"column is missing; the table needs {', '.join(TYPOLOGY_COLUMNS)}"))
    for column in cells.columns:
        if column not in TYPOLOGY_COLUMNS and not column.lower().startswith("note"):
            problems.append(Problem(file, 1, column, "unknown column (extra columns must start with 'note')"))
    if problems:
        return None, problems
    if cells.empty:
        return None, [Problem(file, None, None, "holds no rows; give at least one use and period")]
    out = {"use": [], "period": [], "built_from": [], "built_to": [], "space_heat_kwh_per_m2_a": [], "hot_water_kwh_per_m2_a": []}
    for index, row in cells.iterrows():
        line = int(index) + 2
        use, period = row["use"].strip(), row["period"].strip()
        if not use:
            problems.append(Problem(file, line, "use", "is blank; name the building use (for example multi_family)"))
        if not period:
            problems.append(Problem(file, line, "period", "is blank; give the period a label such as 1949-1978"))
        years = []
        for column, default in (("built_from", -math.inf), ("built_to", math.inf)):
            text = row[column].strip()
            try:
                years.append(default if not text else _number(text))
            except ValueError:
                problems.append(Problem(file, line, column, f"'{text}' is not a year; write it as 1949, or leave it blank"))
                years.append(default)
        if years[0] > years[1]:
            problems.append(Problem(file, line, "built_to", f"{years[1]:g} is before built_from {years[0]:g}"))
        values = []
        for column in ("space_heat_kwh_per_m2_a", "hot_water_kwh_per_m2_a"):
            text = row[column].strip()
            try:
                value = _number(text)
            except ValueError:
                problems.append(Problem(file, line, column, f"'{text}' is not a number [kWh/(m² a)]"))
                value = math.nan
            else:
                if not (0 <= value <= MAX_SPECIFIC_DEMAND_KWH_PER_M2_A):
                    problems.append(Problem(
                        file, line, column,
                        f"{value:g} kWh/(m² a) is outside 0..{MAX_SPECIFIC_DEMAND_KWH_PER_M2_A:g}; "
                        "give the specific demand per m² of heated floor area",
                    ))
            values.append(value)
        for key, value in zip(out, (use, period, years[0], years[1], *values)):
            out[key].append(value)
    table = pd.DataFrame(out)
    table["row"] = np.arange(2, len(table) + 2)
    seen: dict[tuple, int] = {}
    for i, (use, period) in enumerate(zip(table["use"], table["period"])):
        key = (use, period)
        if key in seen:
            problems.append(Problem(file, i + 2, "period", f"use '{use}' and period '{period}' repeat row {seen[key]}"))
        seen.setdefault(key, i + 2)
    for use, group in table.groupby("use"):
        spans = group.sort_values("built_from")
        ends, starts = spans["built_to"].to_numpy()[:-1], spans["built_from"].to_numpy()[1:]
        for row, end, start in zip(spans["row"].to_numpy()[1:], ends, starts):
            if start <= end:
                problems.append(Problem(file, int(row), "built_from", f"use '{use}': this period overlaps the one before"))
    return (None, problems) if problems else (table, [])


# ============================================================================= buildings
def heated_area_m2(heated_area, footprint_area, storeys, ratio: float = HEATED_AREA_RATIO) -> np.ndarray:
    """Heated floor area [m²]: given, else ``footprint [m²] * storeys * ratio``; NaN where neither is known.

    Parameters
    ----------
    heated_area, footprint_area, storeys : array_like
        NaN where not given.
    ratio : float
        Heated (net) floor area per gross floor area [-]; :data:`HEATED_AREA_RATIO` by default.
    """
    if not 0 < ratio <= 1:
        raise ValueError(f"ratio must be in (0, 1], got {ratio!r}")
    heated = np.asarray(heated_area, dtype=float)
    estimate = np.asarray(footprint_area, dtype=float) * np.asarray(storeys, dtype=float) * ratio
    return np.where(np.isfinite(heated), heated, estimate)


def match_typology(table: pd.DataFrame, use, construction_year=None, period=None) -> np.ndarray:
    """Row index into ``table`` for each building (-1 where nothing matches).

    A building matches on its use and either its period label or its construction year (within
    ``built_from``..``built_to``, both inclusive).
    """
    use = np.asarray(use, dtype=object)
    n = len(use)
    years = np.full(n, np.nan) if construction_year is None else np.asarray(construction_year, dtype=float)
    labels = np.full(n, "", dtype=object) if period is None else np.asarray(period, dtype=object)
    found = np.full(n, -1, dtype=int)
    uses = table["use"].to_numpy(dtype=object)
    periods = table["period"].to_numpy(dtype=object)
    lows = table["built_from"].to_numpy(dtype=float)
    highs = table["built_to"].to_numpy(dtype=float)
    for i in range(n):
        same_use = uses == use[i]
        if labels[i]:
            hit = np.flatnonzero(same_use & (periods == labels[i]))
        elif np.isfinite(years[i]):
            hit = np.flatnonzero(same_use & (lows <= years[i]) & (years[i] <= highs))
        else:
            hit = np.array([], dtype=int)
        if len(hit):
            found[i] = hit[0]
    return found


def typology_demand(table: pd.DataFrame, rows: np.ndarray, area_m2: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Space heat and hot water [MWh/a] for buildings matched to ``rows`` of ``table`` with heated area [m²].

    NaN where a building has no match (row -1) or no area.
    """
    rows = np.asarray(rows, dtype=int)
    area = np.asarray(area_m2, dtype=float)
    space = table["space_heat_kwh_per_m2_a"].to_numpy(dtype=float)
    water = table["hot_water_kwh_per_m2_a"].to_numpy(dtype=float)
    ok = rows >= 0
    q_space = np.where(ok, space[np.where(ok, rows, 0)], np.nan)
    q_water = np.where(ok, water[np.where(ok, rows, 0)], np.nan)
    return q_space * area / 1000.0, q_water * area / 1000.0


def building_demand(buildings: pd.DataFrame, table: pd.DataFrame, ratio: float = HEATED_AREA_RATIO) -> pd.DataFrame:
    """Annual demand of each building: metered where given, else from the typology.

    Parameters
    ----------
    buildings : pandas.DataFrame
        Optional columns: ``heat_demand_mwh_per_a`` (metered, NaN where not), ``use``, ``construction_year``,
        ``construction_period``, ``heated_area_m2``, ``footprint_area_m2``, ``storeys``.
    table : pandas.DataFrame
        From :func:`read_typology`.

    Returns
    -------
    pandas.DataFrame
        Same index; ``heated_area_m2``, ``space_heat_mwh_per_a``, ``hot_water_mwh_per_a``,
        ``heat_demand_mwh_per_a`` (metered or space + hot water) and ``demand_source`` (``metered``,
        ``typology`` or ``unknown`` where neither could be found).
    """
    n = len(buildings)

    def column(name, fill=np.nan, kind=float):
        if name in buildings.columns:
            return buildings[name].to_numpy(dtype=kind)
        return np.full(n, fill, dtype=kind)

    area = heated_area_m2(column("heated_area_m2"), column("footprint_area_m2"), column("storeys"), ratio)
    rows = match_typology(
        table, column("use", "", object), column("construction_year"), column("construction_period", "", object)
    )
    space, water = typology_demand(table, rows, area)
    metered = column("heat_demand_mwh_per_a")
    from_table = np.isfinite(space) & np.isfinite(water)
    use_meter = np.isfinite(metered)
    total = np.where(use_meter, metered, space + water)
    source = np.where(use_meter, "metered", np.where(from_table, "typology", "unknown"))
    return pd.DataFrame(
        {
            "heated_area_m2": area,
            "space_heat_mwh_per_a": np.where(use_meter, np.nan, space),
            "hot_water_mwh_per_a": np.where(use_meter, np.nan, water),
            "heat_demand_mwh_per_a": total,
            "demand_source": source,
        },
        index=buildings.index,
    )


# ============================================================================= screening indicators
def heat_density_mwh_per_ha_a(heat_demand_mwh_per_a, land_area_m2) -> np.ndarray:
    """Heat density [MWh/(ha a)] = annual heat demand [MWh/a] / land area [ha] (1 ha = 10 000 m²)."""
    demand = np.asarray(heat_demand_mwh_per_a, dtype=float)
    area = np.asarray(land_area_m2, dtype=float)
    if np.any(area < 0):
        raise ValueError("land_area_m2 must be >= 0")
    with np.errstate(divide="ignore", invalid="ignore"):
        return np.where(area > 0, demand / (area / 10_000.0), np.nan)


def linear_heat_density_mwh_per_m_a(heat_demand_mwh_per_a, street_length_m) -> np.ndarray:
    """Linear heat density [MWh/(m a)] = annual heat demand [MWh/a] / street (trench) length [m]; NaN without one."""
    demand = np.asarray(heat_demand_mwh_per_a, dtype=float)
    length = np.asarray(street_length_m, dtype=float)
    with np.errstate(divide="ignore", invalid="ignore"):
        return np.where(length > 0, demand / length, np.nan)


def density_class(values, classes: tuple[DensityClass, ...]) -> list[str]:
    """The class label of each value ("" for NaN)."""
    out = []
    for value in np.asarray(values, dtype=float):
        label = ""
        if np.isfinite(value):
            for c in classes:
                if c.low <= value < c.high:
                    label = c.label
                    break
        out.append(label)
    return out


def screening_table(
    district_ids, heat_demand_mwh_per_a, land_area_m2, street_length_m=None
) -> pd.DataFrame:
    """Per district: heat density and its class, linear heat density (where a street length is given) and its class."""
    n = len(district_ids)
    length = np.full(n, np.nan) if street_length_m is None else np.asarray(street_length_m, dtype=float)
    density = heat_density_mwh_per_ha_a(heat_demand_mwh_per_a, land_area_m2)
    linear = linear_heat_density_mwh_per_m_a(heat_demand_mwh_per_a, length)
    return pd.DataFrame(
        {
            "district_id": list(district_ids),
            "heat_demand_mwh_per_a": np.asarray(heat_demand_mwh_per_a, dtype=float),
            "land_area_ha": np.asarray(land_area_m2, dtype=float) / 10_000.0,
            "heat_density_mwh_per_ha_a": density,
            "heat_density_class": density_class(density, HEAT_DENSITY_CLASSES),
            "street_length_m": length,
            "linear_heat_density_mwh_per_m_a": linear,
            "linear_heat_density_class": density_class(linear, LINEAR_DENSITY_CLASSES),
        }
    )
