#!/usr/bin/env python3
"""Write the scenario files of Kelmsvoort, the invented demo city of heatmosaic.

Usage::

    python demo_data/build_demo_city.py            # rewrite the files beside this script
    python demo_data/build_demo_city.py --out DIR  # write them to DIR instead

Kelmsvoort does not exist. Its districts, wells, buildings, weather and prices are made up, and it is placed at
open sea (about lon 4.20 E, lat 54.30 N, in the North Sea) so that it can be mistaken for no real place. The
dashboard map needs no background tiles to show it.

Everything random comes from one ``numpy.random.default_rng(SEED)`` and every number is written with a fixed
format, so two runs give byte-identical files; ``tests/test_demo_data.py`` checks that the committed files match
what this script writes. The layout of the files follows ``docs/input_format.md``.

How the city is made
--------------------
* Geometry: a 16 x 13 grid of 375 m cells (6.0 km x 4.9 km) whose lattice points are jittered at random; every
  cell gets a district letter from ``CITY_MAP`` and each district's polygon is the outline of its cells, traced
  from the cell edges. Neighbours therefore share their edges vertex for vertex and cannot overlap.
* Demand: annual heat demand = a heat density for the district's character times its area. The densities
  [MWh/(ha a), gross land area] are picked inside ranges that are common practice in heat planning (from memory):
  historic city centres 400-800, inner-city mixed and office quarters 250-450, campuses 150-300, older suburbs of
  terraced and detached houses 70-150, villa quarters 80-130, new low-energy quarters 60-120, business parks
  80-150, villages 40-90.
* Weather and prices: a synthetic hourly year (seasonal and daily cycles plus AR(1) noise, one cold spell near
  -12 °C). Cost figures of the technologies are invented inside typical literature ranges for central Europe in
  2025-2040 (from memory); see ``technologies.csv``.
"""

from __future__ import annotations

import argparse
import json
import math
from pathlib import Path

import numpy as np

SEED = 5_430_420
CITY_NAME = "Kelmsvoort (invented demo city)"
CENTRE_LON_DEG = 4.20
CENTRE_LAT_DEG = 54.30
EARTH_RADIUS_M = 6_371_000.0
CELL_M = 375.0
JITTER_SHARE = 0.18  # lattice jitter as a share of the cell size; small enough to keep every cell convex
N_HOURS = 8760

# One letter per 375 m cell, north at the top; "." is farmland, parks or the river Kelm (no district).
CITY_MAP = (
    "...NNNNNBBBBB...",
    "..NNNNNNBBBBBB..",
    ".WWNNSSSSBBBEE..",
    "WWWUUSSSSSEEEEE.",
    "WWWUUCCCCREEEEE.",
    "WWUUUCCCCRREEE..",
    ".WUUCCCCCRRQQQQ.",
    "..RRRRRRRRQQQQQQ",
    "...VVVVV..QQQQQ.",
    "...VVVVVV..QQQ..",
    "....VVV.........",
    "KK..............",
    "KKK.............",
)

# District characters. density: gross heat density [MWh/(ha a)]; connection: network connection limit as a share
# of the estimated peak; cooling: annual cooling as a share of annual heat; buildings: (count, share of the heat
# demand held by buildings.csv). existing: existing capacity as a share of the estimated peak. potential: the
# largest total capacity as a share of the peak, or "existing" (no new units), or 0 (ruled out). Pathway only:
# retire: the year existing plant of a technology is gone; network_from: (year the network arrives, connection
# limit as a share of the peak); neither changes the single-year scenario.
DISTRICTS = {
    "C": dict(
        district_id="old_town", name="Old Kelmsvoort", density=550.0, supply_temp_c=78.0, hot_water_share=0.15,
        network=True, connection=1.0, cooling=0.0, retire={"gas_boiler": 2040, "oil_boiler": 2035},
        existing={"gas_boiler": 0.45, "oil_boiler": 0.05},
        potential={"air_hp": 0.08, "biomass_boiler": 0.0, "oil_boiler": "existing", "heat_store_kwh": 20_000.0},
    ),
    "S": dict(
        district_id="station_quarter", name="Station Quarter", density=380.0, supply_temp_c=75.0,
        hot_water_share=0.10, network=True, connection=1.0, cooling=0.06, retire={"gas_boiler": 2035},
        existing={"gas_boiler": 0.40, "chiller": 0.30},
        potential={"air_hp": 0.12, "biomass_boiler": 0.0, "oil_boiler": 0.0},
    ),
    "R": dict(
        district_id="tannery_reach", name="Tannery Reach (riverside)", density=220.0, supply_temp_c=65.0,
        hot_water_share=0.15, network=True, connection=0.30, cooling=0.0,
        existing={"gas_boiler": 0.35, "oil_boiler": 0.05},
        potential={"biomass_boiler": 0.0, "oil_boiler": "existing"},
    ),
    "N": dict(
        district_id="larkmoss", name="Larkmoss Gardens", density=110.0, supply_temp_c=55.0, hot_water_share=0.18,
        network=False, connection=0.0, cooling=0.0, network_from=(2035, 0.6), retire={"gas_boiler": 2035},
        existing={"gas_boiler": 0.50},
        potential={"biomass_boiler": 0.10, "oil_boiler": 0.0},
    ),
    "W": dict(
        district_id="westerquill", name="Westerquill", density=80.0, supply_temp_c=50.0, hot_water_share=0.18,
        network=False, connection=0.0, cooling=0.0,
        existing={"gas_boiler": 0.40, "oil_boiler": 0.10},
        potential={"biomass_boiler": 0.15, "oil_boiler": "existing"},
    ),
    "E": dict(
        district_id="ember_lanes", name="Ember Lanes", density=100.0, supply_temp_c=60.0, hot_water_share=0.18,
        network=False, connection=0.0, cooling=0.0, network_from=(2035, 0.6), retire={"gas_boiler": 2040},
        existing={"gas_boiler": 0.45},
        potential={"biomass_boiler": 0.10, "oil_boiler": 0.0},
    ),
    "V": dict(
        district_id="corvane_villas", name="Corvane Villas", density=90.0, supply_temp_c=70.0, hot_water_share=0.12,
        network=False, connection=0.0, cooling=0.0, retire={"oil_boiler": 2035},
        existing={"oil_boiler": 0.30, "gas_boiler": 0.20},
        potential={"biomass_boiler": 0.15, "oil_boiler": "existing"},
    ),
    "Q": dict(
        district_id="rynwater", name="Rynwater New Quarter", density=90.0, supply_temp_c=35.0, hot_water_share=0.30,
        network=False, connection=0.0, cooling=0.40,
        existing={},
        potential={"gas_boiler": 0.0, "oil_boiler": 0.0, "biomass_boiler": 0.0},
    ),
    "B": dict(
        district_id="business_park", name="Kelmsvoort Business Park", density=110.0, supply_temp_c=45.0,
        hot_water_share=0.08, network=False, connection=0.0, cooling=0.30, buildings=(15, 0.70),
        existing={"gas_boiler": 0.35, "chiller": 0.30},
        potential={"biomass_boiler": 0.0, "oil_boiler": 0.0},
    ),
    "U": dict(
        district_id="campus", name="Kelmsvoort University Campus", density=180.0, supply_temp_c=60.0,
        hot_water_share=0.10, network=False, connection=0.0, cooling=0.12, buildings=(16, 0.65),
        existing={"gas_boiler": 0.50},
        potential={"biomass_boiler": 0.0, "oil_boiler": 0.0},
    ),
    "K": dict(
        district_id="ossendrup", name="Ossendrup (village)", density=80.0, supply_temp_c=55.0, hot_water_share=0.15,
        network=False, connection=0.0, cooling=0.0, buildings=(9, 0.35),
        existing={"oil_boiler": 0.40, "biomass_boiler": 0.05},
        potential={"gas_boiler": 0.0, "oil_boiler": "existing"},
    ),
}

# Aquifer: groundwater flows towards the east-south-east, roughly with the river.
AQUIFER = dict(
    flow_direction_deg=100.0,
    darcy_velocity_m_per_d=1.0,
    effective_porosity=0.2,
    saturated_thickness_m=18.0,
    longitudinal_dispersivity_m=5.0,
    transverse_dispersivity_m=0.5,
    aquifer_heat_capacity_mj_per_m3_k=2.8,
    water_heat_capacity_mj_per_m3_k=4.18,
    reinjection_offset_m=100.0,
)

# Wells. cell: (row, col) of CITY_MAP; the extraction well goes to a random spot inside it, unless "after" names
# the up-gradient doublet of a cluster (then it goes CLUSTER_SPACING_M down-gradient of that one). own_district:
# write district_id (else blank, bound by position). reinjection_m: distance of an explicit reinjection well
# down-gradient (None: blank, the default offset applies).
CLUSTER_SPACING_M = 220.0
CLUSTER_REINJECTION_M = 90.0
WELLS = (
    # Rynwater cluster along the flow: each reinjection sits between its extraction and the next doublet's.
    dict(well_id="ryn-1", cell=(7, 11), own_district=True, reinjection_m=CLUSTER_REINJECTION_M, permit=80.0,
         volume=None, spread=5.0, temp=11.0, amplitude=0.5, coldest=80),
    dict(well_id="ryn-2", after="ryn-1", own_district=False, reinjection_m=CLUSTER_REINJECTION_M, permit=100.0,
         volume=450_000.0, spread=5.0, temp=11.0, amplitude=0.5, coldest=80),
    dict(well_id="ryn-3", after="ryn-2", own_district=True, reinjection_m=CLUSTER_REINJECTION_M, permit=100.0,
         volume=None, spread=5.0, temp=11.0, amplitude=0.5, coldest=80),
    dict(well_id="ryn-4", after="ryn-3", own_district=False, reinjection_m=None, permit=120.0,
         volume=None, spread=5.0, temp=11.0, amplitude=0.5, coldest=80),
    dict(well_id="ryn-5", cell=(9, 12), own_district=True, reinjection_m=None, permit=60.0,
         volume=None, spread=4.0, temp=11.5, amplitude=0.6, coldest=85),
    dict(well_id="bp-1", cell=(0, 10), own_district=True, reinjection_m=130.0, permit=150.0,
         volume=600_000.0, spread=6.0, temp=11.5, amplitude=0.8, coldest=95),
    dict(well_id="bp-2", cell=(1, 12), own_district=False, reinjection_m=None, permit=90.0,
         volume=None, spread=5.0, temp=11.8, amplitude=0.6, coldest=100),
    dict(well_id="bp-3", cell=(2, 10), own_district=True, reinjection_m=None, permit=60.0,
         volume=None, spread=4.0, temp=12.0, amplitude=0.4, coldest=110),
    dict(well_id="cmp-1", cell=(4, 3), own_district=False, reinjection_m=110.0, permit=120.0,
         volume=None, spread=5.0, temp=10.5, amplitude=0.6, coldest=90),
    dict(well_id="cmp-2", cell=(5, 2), own_district=True, reinjection_m=None, permit=70.0,
         volume=250_000.0, spread=4.0, temp=10.5, amplitude=0.6, coldest=90),
    dict(well_id="cmp-3", cell=(3, 4), own_district=True, reinjection_m=None, permit=110.0,
         volume=None, spread=5.0, temp=10.8, amplitude=0.5, coldest=95),
    # Shallow suburban wells: colder in late winter, so the 4.5 °C reinjection floor cuts their spread.
    dict(well_id="lark-1", cell=(0, 4), own_district=True, reinjection_m=None, permit=30.0,
         volume=None, spread=5.0, temp=9.0, amplitude=3.0, coldest=60),
    dict(well_id="lark-2", cell=(1, 6), own_district=False, reinjection_m=80.0, permit=25.0,
         volume=None, spread=5.0, temp=9.0, amplitude=3.0, coldest=60),
    dict(well_id="ember-1", cell=(4, 12), own_district=True, reinjection_m=None, permit=40.0,
         volume=None, spread=4.0, temp=9.0, amplitude=3.0, coldest=60),
    dict(well_id="wq-1", cell=(4, 1), own_district=False, reinjection_m=None, permit=20.0,
         volume=None, spread=3.0, temp=10.0, amplitude=1.0, coldest=75),
    dict(well_id="villa-1", cell=(9, 6), own_district=True, reinjection_m=100.0, permit=50.0,
         volume=None, spread=4.0, temp=10.8, amplitude=0.7, coldest=90),
)

# Technology catalogue. Cost figures: invented within typical literature ranges for central Europe 2025-2040
# (from memory); aggregated per district, so per-kW figures are those of a mix of building-sized units.
TECHNOLOGY_COLUMNS = (
    "technology_id", "name", "kind", "carrier", "efficiency", "cop_quality_grade", "source_approach_k",
    "sink_approach_k", "investment_eur_per_kw", "fixed_om_pct_per_a", "variable_om_eur_per_mwh", "lifetime_a",
    "store_loss_pct_per_h", "store_efficiency", "store_hours",
)
TECHNOLOGIES = (
    ("gas_boiler", "Gas boiler", "fuel_boiler", "gas", 0.90, None, None, None, 160.0, 1.5, 2.0, 20,
     None, None, None),
    ("oil_boiler", "Oil boiler", "fuel_boiler", "oil", 0.88, None, None, None, 250.0, 2.0, 2.5, 20,
     None, None, None),
    ("biomass_boiler", "Wood pellet boiler", "fuel_boiler", "biomass", 0.85, None, None, None, 550.0, 3.0, 4.0,
     20, None, None, None),
    ("air_hp", "Air-source heat pump", "air_heat_pump", "electricity", None, 0.40, 6.0, 3.0, 950.0, 2.5, 1.5, 18,
     None, None, None),
    ("gw_hp", "Groundwater heat pump", "groundwater_heat_pump", "electricity", None, 0.50, 4.0, 3.0, 1150.0, 2.0,
     1.5, 25, None, None, None),
    ("network", "Heat network substation", "network_connection", "network", None, None, None, None, 90.0, 2.0,
     0.5, 30, None, None, None),
    ("electric_boiler", "Electric boiler", "electric_boiler", "electricity", 0.99, None, None, None, 80.0, 1.5,
     0.5, 20, None, None, None),
    ("heat_store", "Hot-water heat store", "heat_store", "none", None, None, None, None, 25.0, 1.0, 0.0, 30,
     0.2, 0.95, 6.0),
    ("chiller", "Compression chiller", "chiller", "electricity", 3.5, None, None, None, 350.0, 2.5, 1.0, 20,
     None, None, None),
    ("gw_cooling", "Groundwater direct cooling", "groundwater_cooling", "electricity", 20.0, None, None, None,
     250.0, 2.0, 0.5, 25, None, None, None),
)

SCENARIO_TOML = """\
# Kelmsvoort is an invented city (see README.md); every figure here is made up for the demo.
[run]
name = "{name}"
target_year = 2040
objective = "cost"
discount_rate = 0.05
typical_days = 12
value_of_unserved_heat_eur_per_mwh = 5000.0
co2_cap_t_per_a = 0.0
network_plant_limit_kw = 0.0
heating_base_temp_c = 15.0
cooling_base_temp_c = 18.0                # offices and dense new blocks have internal gains
reinjection_min_temp_c = 4.5
reinjection_max_temp_c = 20.0

[prices]
gas_eur_per_mwh = 64.0
oil_eur_per_mwh = 75.0
biomass_eur_per_mwh = 45.0
co2_eur_per_t = 100.0

[co2_factors]
# IPCC 2006 Guidelines, vol. 2, ch. 2, table 2.2 defaults
gas_kg_per_mwh = 202.0
oil_kg_per_mwh = 266.8
biomass_kg_per_mwh = 0.0

[aquifer]
{aquifer}
"""

PATHWAY_CITY_COLUMNS = ("heat_demand_factor", "gas_price_factor", "grid_co2_factor", "co2_eur_per_t",
                        "co2_cap_t_per_a")
PATHWAY_CITY = (
    # refurbishment lowers demand towards the target year; the grid decarbonises; the city's CO2 cap falls
    (2030, ["1.10", "0.90", "1.60", "60", "80000"]),
    (2035, ["1.05", "0.95", "1.25", "80", "55000"]),
    (2040, ["", "", "", "", "32000"]),
)

PATHWAY_TOML = """
[pathway]
# milestone years of the heat plan; each stands for the five years until the next (pathway.csv: trajectories)
years = [2030, 2035, 2040]
last_period_a = 5
"""

COST_CASES_TOML = """\
# Cost cases of the Kelmsvoort demo (invented figures).

[cases.reference]
description = "Prices as in scenario.toml: gas 64 EUR/MWh, CO2 100 EUR/t, electricity about 100 EUR/MWh."

[cases.high_co2]
description = "CO2 at 275 EUR/t and fossil fuels 20 % dearer: heat pumps and the network gain on boilers."
co2_eur_per_t = 275.0
gas_price_factor = 1.2
oil_price_factor = 1.2

[cases.cheap_network]
description = "The network operator cuts its heat price by 30 %: the network takes over wherever it reaches, the riverside quarter included."
network_price_factor = 0.7

[cases.heat_pump_subsidy]
description = "40 % investment subsidy on air and groundwater heat pumps, electricity 15 % cheaper."
electricity_price_factor = 0.85

[cases.heat_pump_subsidy.subsidy_share]
air_hp = 0.4
gw_hp = 0.4

[cases.fossil_lock_in]
description = "Cheap gas (-20 %) and CO2 at 50 EUR/t: existing and new gas boilers stay the cheapest heat."
co2_eur_per_t = 50.0
gas_price_factor = 0.8
"""


# ----------------------------------------------------------------------------------------------- geometry
def _to_lon_lat(x_m: np.ndarray, y_m: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Local east/north metres about the centre to WGS 84 degrees (equirectangular, fine for a few km)."""
    lat = CENTRE_LAT_DEG + np.degrees(y_m / EARTH_RADIUS_M)
    lon = CENTRE_LON_DEG + np.degrees(x_m / (EARTH_RADIUS_M * math.cos(math.radians(CENTRE_LAT_DEG))))
    return lon, lat


def _lattice(rng: np.random.Generator) -> np.ndarray:
    """Jittered lattice points, shape (rows + 1, cols + 1, 2), metres east and north of the centre."""
    n_rows, n_cols = len(CITY_MAP), len(CITY_MAP[0])
    cols = (np.arange(n_cols + 1) - n_cols / 2.0) * CELL_M
    rows = (n_rows / 2.0 - np.arange(n_rows + 1)) * CELL_M
    x, y = np.meshgrid(cols, rows)
    jitter = rng.uniform(-JITTER_SHARE, JITTER_SHARE, size=(n_rows + 1, n_cols + 1, 2)) * CELL_M
    return np.stack([x, y], axis=-1) + jitter


def _cell_corners(row: int, col: int) -> list[tuple[int, int]]:
    """Lattice indices of a cell's corners, counter-clockwise from the south-west (x east, y north)."""
    return [(row + 1, col), (row + 1, col + 1), (row, col + 1), (row, col)]


def _check_map() -> None:
    """Reject district layouts that would give pinched outlines (two cells of one district touching at a corner)."""
    n_rows, n_cols = len(CITY_MAP), len(CITY_MAP[0])
    if any(len(line) != n_cols for line in CITY_MAP):
        raise ValueError("CITY_MAP rows differ in length")
    for r in range(n_rows - 1):
        for c in range(n_cols - 1):
            a, b = CITY_MAP[r][c], CITY_MAP[r][c + 1]
            d, e = CITY_MAP[r + 1][c], CITY_MAP[r + 1][c + 1]
            for one, other, side1, side2 in ((a, e, b, d), (b, d, a, e)):
                if one != "." and one == other and side1 != one and side2 != one:
                    raise ValueError(f"district {one} pinches at cell corner {r + 1},{c + 1}")


def _outline(letter: str) -> list[tuple[int, int]]:
    """Lattice indices of the outline of a district's cells, counter-clockwise, not closed."""
    edges = set()
    for r, line in enumerate(CITY_MAP):
        for c, cell in enumerate(line):
            if cell == letter:
                corners = _cell_corners(r, c)
                for k in range(4):
                    edges.add((corners[k], corners[(k + 1) % 4]))
    boundary = {start: end for start, end in edges if (end, start) not in edges}
    start = min(boundary)
    ring = [start]
    while True:
        nxt = boundary[ring[-1]]
        if nxt == start:
            break
        ring.append(nxt)
    if len(ring) != len(boundary):
        raise ValueError(f"district {letter} is not one simply connected block of cells")
    # Every lattice point stays, also where the outline runs straight on: the neighbour's outline has the same
    # point, so shared borders match vertex for vertex.
    return ring


def _polygon_area_m2(points: np.ndarray) -> float:
    x, y = points[:, 0], points[:, 1]
    return 0.5 * float(np.sum(x * np.roll(y, -1) - np.roll(x, -1) * y))


def _inside(point: np.ndarray, ring: np.ndarray) -> bool:
    """Ray casting: is ``point`` strictly inside the polygon ``ring`` (not closed)?"""
    x, y = point
    inside = False
    n = len(ring)
    for k in range(n):
        x1, y1 = ring[k]
        x2, y2 = ring[(k + 1) % n]
        if (y1 > y) != (y2 > y):
            x_cross = x1 + (y - y1) * (x2 - x1) / (y2 - y1)
            if x < x_cross:
                inside = not inside
    return inside


def _point_in_cell(lattice: np.ndarray, row: int, col: int, u: float, v: float) -> np.ndarray:
    """Bilinear point of a (convex) cell; u runs west to east, v south to north, both in [0, 1]."""
    sw, se, ne, nw = (lattice[i, j] for i, j in _cell_corners(row, col))
    return (1 - u) * (1 - v) * sw + u * (1 - v) * se + u * v * ne + (1 - u) * v * nw


def _offset(point: np.ndarray, distance_m: float, bearing_deg: float) -> np.ndarray:
    b = math.radians(bearing_deg)
    return point + distance_m * np.array([math.sin(b), math.cos(b)])


# ----------------------------------------------------------------------------------------------- hourly year
def _ar1(rng: np.random.Generator, n: int, phi: float, std: float) -> np.ndarray:
    """Zero-mean AR(1) series with lag-one correlation ``phi`` and stationary standard deviation ``std``."""
    shocks = rng.normal(0.0, std * math.sqrt(1.0 - phi * phi), size=n)
    out = np.empty(n)
    out[0] = rng.normal(0.0, std)
    for k in range(1, n):
        out[k] = phi * out[k - 1] + shocks[k]
    return out - out.mean()


def _hourly_year(rng: np.random.Generator) -> dict[str, np.ndarray]:
    hour = np.arange(N_HOURS)
    day = hour / 24.0
    hod = hour % 24
    weekday = (hour // 24) % 7  # day 0 is a Monday
    winter = np.cos(2 * np.pi * (day - 15.0) / 365.0)  # +1 in mid-January, -1 in mid-July
    summer = 0.5 * (1.0 - winter)  # 0 in mid-January, 1 in mid-July
    sun = np.clip(np.sin(np.pi * (hod - 6.0) / 14.0), 0.0, None) ** 2  # daylight bell, 06:00 to 20:00

    # Outdoor temperature: mean 10 °C, seasonal swing +-8.5 K, daily swing 2-4.5 K peaking at 15:00, weather
    # anomalies with a correlation time of about three days, and one cold spell at the end of January.
    daily_swing = 2.0 + 2.5 * summer
    temp = 10.0 - 8.5 * winter + daily_swing * np.cos(2 * np.pi * (hod - 15.0) / 24.0)
    temp = temp + _ar1(rng, N_HOURS, phi=math.exp(-1.0 / 72.0), std=3.0)
    spell = np.clip(np.minimum(day - 25.0, 32.0 - day), 0.0, 1.0)  # ramps in over a day, plateau days 26-31
    spell = 0.5 - 0.5 * np.cos(np.pi * spell)
    spell_temp = -12.0 + 1.5 * np.cos(2 * np.pi * (hod - 15.0) / 24.0) + rng.normal(0.0, 0.4, N_HOURS)
    temp = (1.0 - spell) * temp + spell * spell_temp

    # Electricity price: dearer in winter and on weekday mornings and evenings, solar dip at summer middays,
    # dearer still in cold hours (heat pumps), weekend discount, noise; scaled to a mean of 100 EUR/MWh.
    shape = 1.0 + 0.12 * winter
    shape = shape + 0.18 * np.exp(-0.5 * ((hod - 8.0) / 1.5) ** 2) + 0.25 * np.exp(-0.5 * ((hod - 19.0) / 2.0) ** 2)
    shape = shape - 0.55 * sun * summer - 0.08 * (weekday >= 5)
    price = 100.0 * shape + 1.5 * np.clip(5.0 - temp, 0.0, None) + _ar1(rng, N_HOURS, phi=0.9, std=12.0)
    price = price * (100.0 / price.mean())
    price = np.clip(price, 5.0, None)

    # Grid CO2 factor for 2040: mean 150 kg/MWh, more in winter and on winter evenings, less at sunny middays.
    grid = 150.0 + 40.0 * winter + 45.0 * np.clip(winter, 0.0, None) * np.exp(-0.5 * ((hod - 18.5) / 2.0) ** 2)
    grid = grid - 60.0 * sun * summer + _ar1(rng, N_HOURS, phi=0.95, std=12.0)
    grid = np.clip(grid * (150.0 / grid.mean()), 20.0, None)

    # Network heat: a monthly tariff a little dearer in winter; CO2 higher in winter when peak boilers run.
    month = np.minimum((day // (365.0 / 12.0)).astype(int), 11)
    month_mid = (month + 0.5) * 365.0 / 12.0
    network_price = 81.0 + 2.0 * np.cos(2 * np.pi * (month_mid - 15.0) / 365.0)
    network_co2 = 110.0 + 10.0 * winter + 8.0 * np.clip(winter, 0.0, None) * np.exp(
        -0.5 * ((hod - 18.0) / 2.5) ** 2
    ) + rng.normal(0.0, 2.0, N_HOURS)

    return {
        "hour": hour,
        "outdoor_temp_c": temp,
        "electricity_price_eur_per_mwh": price,
        "grid_co2_kg_per_mwh": grid,
        "network_price_eur_per_mwh": network_price,
        "network_co2_kg_per_mwh": network_co2,
    }


def _peak_kw(annual_mwh: float, hot_water_share: float, temp: np.ndarray) -> float:
    """Rough design heat load: heating degree hours (base 15 °C) for space heating plus a hot-water peak of
    twice its mean. Used only to size the existing capacities and limits of the demo."""
    degree_hours = np.clip(15.0 - temp, 0.0, None)
    space = (1.0 - hot_water_share) * annual_mwh * 1000.0 * degree_hours.max() / degree_hours.sum()
    hot_water = hot_water_share * annual_mwh * 1000.0 / N_HOURS * 2.0
    return space + hot_water


COOLING_BASE_TEMP_C = 18.0  # as written to scenario.toml


def _cooling_peak_kw(annual_mwh: float, temp: np.ndarray) -> float:
    """Rough design cooling load by cooling degree hours above ``COOLING_BASE_TEMP_C``."""
    degree_hours = np.clip(temp - COOLING_BASE_TEMP_C, 0.0, None)
    return annual_mwh * 1000.0 * degree_hours.max() / degree_hours.sum()


_STREET_M_PER_HA = 150.0


def _ring_area_m2(ring) -> float:
    """Area of a closed or open ring of plane coordinates [m] (shoelace formula)."""
    x, y = np.asarray(ring[:, 0], float), np.asarray(ring[:, 1], float)
    return 0.5 * abs(float(np.dot(x, np.roll(y, -1)) - np.dot(y, np.roll(x, -1))))


def _round_to(value: float, step: float) -> float:
    return float(step * round(value / step))


# ----------------------------------------------------------------------------------------------- writing
def _fmt(value, decimals: int) -> str:
    if value is None:
        return ""
    return f"{value:.{decimals}f}"


def _write_csv(path: Path, header: list[str], rows: list[list[str]]) -> None:
    lines = [",".join(header)] + [",".join(row) for row in rows]
    path.write_text("\n".join(lines) + "\n", encoding="utf-8", newline="\n")


def build(out_dir: Path) -> list[Path]:
    """Write every scenario file of the demo city into ``out_dir``; return the paths written (sorted)."""
    out_dir = Path(out_dir)
    out_dir.mkdir(parents=True, exist_ok=True)
    rng = np.random.default_rng(SEED)
    _check_map()
    lattice = _lattice(rng)
    hourly = _hourly_year(rng)
    temp = hourly["outdoor_temp_c"]
    written: list[Path] = []

    # -- districts: outline, area, demand
    rings_m: dict[str, np.ndarray] = {}
    records: dict[str, dict] = {}
    for letter, spec in DISTRICTS.items():
        ring = np.array([lattice[i, j] for i, j in _outline(letter)])
        area_m2 = _polygon_area_m2(ring)
        if area_m2 <= 0.0:
            raise ValueError(f"district {letter}: outline is not counter-clockwise")
        rings_m[letter] = ring
        heat = _round_to(spec["density"] * area_m2 / 1e4, 10.0)
        if not 5_000.0 <= heat <= 120_000.0:
            raise ValueError(f"district {letter}: heat demand {heat} MWh/a outside 5-120 GWh/a")
        peak = _peak_kw(heat, spec["hot_water_share"], temp)
        cooling = _round_to(spec["cooling"] * heat, 10.0)
        records[letter] = dict(heat=heat, cooling=cooling, peak_kw=peak, area_ha=area_m2 / 1e4)

    # -- buildings: points inside the cells of their district; they carry part of its demand
    building_rows = []
    for letter, spec in DISTRICTS.items():
        if "buildings" not in spec:
            continue
        count, share = spec["buildings"]
        cells = [(r, c) for r, line in enumerate(CITY_MAP) for c, cell in enumerate(line) if cell == letter]
        weights = rng.lognormal(0.0, 0.6, size=count)
        heat = np.round(weights / weights.sum() * share * records[letter]["heat"])
        has_cooling = rng.uniform(size=count) < 0.6 if records[letter]["cooling"] > 0 else np.zeros(count, bool)
        cool_weights = weights * has_cooling
        cool = np.zeros(count)
        if cool_weights.sum() > 0:
            cool = np.round(cool_weights / cool_weights.sum() * share * records[letter]["cooling"])
        for k in range(count):
            while True:
                r, c = cells[rng.integers(len(cells))]
                point = _point_in_cell(lattice, r, c, *rng.uniform(0.15, 0.85, size=2))
                if _inside(point, rings_m[letter]):
                    break
            lon, lat = _to_lon_lat(point[0], point[1])
            building_rows.append([
                f"{spec['district_id']}-b{k + 1:02d}", _fmt(float(lon), 6), _fmt(float(lat), 6),
                _fmt(float(heat[k]), 1), _fmt(float(cool[k]), 1),
            ])
        records[letter]["heat_own"] = records[letter]["heat"] - float(heat.sum())
        records[letter]["cooling_own"] = records[letter]["cooling"] - float(cool.sum())

    # -- districts.geojson
    features = []
    for letter, spec in DISTRICTS.items():
        rec = records[letter]
        lon, lat = _to_lon_lat(rings_m[letter][:, 0], rings_m[letter][:, 1])
        coords = [[round(float(a), 6), round(float(b), 6)] for a, b in zip(lon, lat)]
        coords.append(coords[0])
        limit = _round_to(spec["connection"] * rec["peak_kw"], 100.0) if spec["network"] else 0.0
        properties = {
            "district_id": spec["district_id"],
            "name": spec["name"],
            "heat_demand_mwh_per_a": round(rec.get("heat_own", rec["heat"]), 1),
            "cooling_demand_mwh_per_a": round(rec.get("cooling_own", rec["cooling"]), 1),
            "supply_temp_c": spec["supply_temp_c"],
            "hot_water_share": spec["hot_water_share"],
            "network_available": spec["network"],
            "network_connection_limit_kw": limit,
            # invented street (trench) length: about 150 m of street per hectare of land, for the linear heat
            # density screening layer
            "street_length_m": _round_to(_STREET_M_PER_HA * _ring_area_m2(rings_m[letter]) / 10_000.0, 10.0),
        }
        coord_text = ", ".join(f"[{a:.6f}, {b:.6f}]" for a, b in coords)
        features.append(
            '    {"type": "Feature", "properties": ' + json.dumps(properties, ensure_ascii=False)
            + ', "geometry": {"type": "Polygon", "coordinates": [[' + coord_text + "]]}}"
        )
    geojson = '{"type": "FeatureCollection", "features": [\n' + ",\n".join(features) + "\n]}\n"
    path = out_dir / "districts.geojson"
    path.write_text(geojson, encoding="utf-8", newline="\n")
    written.append(path)

    if building_rows:
        path = out_dir / "buildings.csv"
        _write_csv(path, ["building_id", "lon", "lat", "heat_demand_mwh_per_a", "cooling_demand_mwh_per_a"],
                   building_rows)
        written.append(path)

    # -- technologies.csv
    decimals = {"efficiency": 2, "cop_quality_grade": 2, "source_approach_k": 1, "sink_approach_k": 1,
                "investment_eur_per_kw": 1, "fixed_om_pct_per_a": 2, "variable_om_eur_per_mwh": 2,
                "store_loss_pct_per_h": 2, "store_efficiency": 2, "store_hours": 1}
    rows = []
    for tech in TECHNOLOGIES:
        row = []
        for column, value in zip(TECHNOLOGY_COLUMNS, tech):
            if column in decimals:
                row.append(_fmt(value, decimals[column]))
            else:
                row.append("" if value is None else str(value))
        rows.append(row)
    path = out_dir / "technologies.csv"
    _write_csv(path, list(TECHNOLOGY_COLUMNS), rows)
    written.append(path)

    # -- district_technologies.csv: existing boilers, potentials, no network substations where none reaches
    rows = []
    for letter, spec in DISTRICTS.items():
        rec = records[letter]
        peak = rec["peak_kw"]
        existing_kw = {}
        for tech_id, share in spec["existing"].items():
            base = _cooling_peak_kw(rec["cooling"], temp) if tech_id == "chiller" else peak
            existing_kw[tech_id] = _round_to(share * base, 10.0)
        potential_kw = {}
        for tech_id, value in spec["potential"].items():
            if tech_id == "heat_store_kwh":
                potential_kw["heat_store"] = value
            elif value == "existing":
                potential_kw[tech_id] = existing_kw.get(tech_id, 0.0)
            else:
                potential_kw[tech_id] = _round_to(value * peak, 10.0)
        if not spec["network"] and "network_from" not in spec:
            potential_kw["network"] = 0.0
        retire = spec.get("retire", {})
        for tech in TECHNOLOGIES:
            tech_id = tech[0]
            if tech_id not in existing_kw and tech_id not in potential_kw:
                continue
            rows.append([
                spec["district_id"], tech_id, _fmt(existing_kw.get(tech_id, 0.0), 1),
                _fmt(potential_kw.get(tech_id), 1), str(retire[tech_id]) if tech_id in retire else "",
            ])
    path = out_dir / "district_technologies.csv"
    _write_csv(path, ["district_id", "technology_id", "existing_kw", "potential_kw", "retirement_year"], rows)
    written.append(path)

    # -- pathway.csv: the road to the target year (the target year itself keeps the scenario's figures)
    rows = [[str(year), ""] + values for year, values in PATHWAY_CITY]
    for letter, spec in DISTRICTS.items():
        if "network_from" in spec:
            year, share = spec["network_from"]
            limit = _round_to(share * records[letter]["peak_kw"], 100.0)
            rows.append([str(year), spec["district_id"]] + [""] * len(PATHWAY_CITY_COLUMNS) + [str(year),
                                                                                                   _fmt(limit, 1)])
    path = out_dir / "pathway.csv"
    _write_csv(path, ["year", "district_id"] + list(PATHWAY_CITY_COLUMNS)
               + ["network_from_year", "network_connection_limit_kw"],
               [r + [""] * (2 + len(PATHWAY_CITY_COLUMNS) + 2 - len(r)) for r in rows])
    written.append(path)

    # -- wells.csv
    flow = AQUIFER["flow_direction_deg"]
    placed: dict[str, tuple[np.ndarray, str]] = {}  # well id -> (extraction point, district letter)
    rows = []
    for well in WELLS:
        if "after" in well:
            upstream, letter = placed[well["after"]]
            point = _offset(upstream, CLUSTER_SPACING_M, flow)
        else:
            r, c = well["cell"]
            point = _point_in_cell(lattice, r, c, *rng.uniform(0.3, 0.7, size=2))
            letter = CITY_MAP[r][c]
        if not _inside(point, rings_m[letter]):
            raise ValueError(f"well {well['well_id']} falls outside district {letter}")
        placed[well["well_id"]] = (point, letter)
        lon, lat = _to_lon_lat(point[0], point[1])
        if well["reinjection_m"] is None:
            re_lon = re_lat = ""
        else:
            re_point = _offset(point, well["reinjection_m"], flow)
            a, b = _to_lon_lat(re_point[0], re_point[1])
            re_lon, re_lat = _fmt(float(a), 6), _fmt(float(b), 6)
        rows.append([
            well["well_id"], DISTRICTS[letter]["district_id"] if well["own_district"] else "",
            _fmt(float(lon), 6), _fmt(float(lat), 6), re_lon, re_lat, _fmt(well["permit"], 1),
            _fmt(well["volume"], 0), _fmt(well["spread"], 1), _fmt(well["temp"], 2), _fmt(well["amplitude"], 2),
            str(well["coldest"]),
        ])
    path = out_dir / "wells.csv"
    _write_csv(path, [
        "well_id", "district_id", "lon", "lat", "reinjection_lon", "reinjection_lat", "permit_flow_m3_per_h",
        "permit_annual_volume_m3", "design_spread_k", "groundwater_temp_c", "groundwater_temp_amplitude_k",
        "coldest_day_of_year",
    ], rows)
    written.append(path)

    # -- hourly.csv
    columns = list(hourly)
    formats = {"hour": "{:d}", "outdoor_temp_c": "{:.2f}", "electricity_price_eur_per_mwh": "{:.2f}",
               "grid_co2_kg_per_mwh": "{:.1f}", "network_price_eur_per_mwh": "{:.2f}",
               "network_co2_kg_per_mwh": "{:.1f}"}
    rows = []
    for k in range(N_HOURS):
        rows.append([formats[c].format(int(hourly[c][k]) if c == "hour" else float(hourly[c][k])) for c in columns])
    path = out_dir / "hourly.csv"
    _write_csv(path, columns, rows)
    written.append(path)

    # -- scenario.toml and cost_cases.toml
    aquifer = "\n".join(f"{key} = {value!r}" for key, value in AQUIFER.items())
    path = out_dir / "scenario.toml"
    path.write_text(SCENARIO_TOML.format(name=CITY_NAME, aquifer=aquifer) + PATHWAY_TOML, encoding="utf-8",
                    newline="\n")
    written.append(path)
    path = out_dir / "cost_cases.toml"
    path.write_text(COST_CASES_TOML, encoding="utf-8", newline="\n")
    written.append(path)
    return sorted(written)


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description="Write the scenario files of the invented demo city.")
    parser.add_argument("--out", type=Path, default=Path(__file__).resolve().parent,
                        help="folder to write to (default: the folder of this script)")
    args = parser.parse_args(argv)
    for path in build(args.out):
        print(path)
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
