"""Checks of the demo city in demo_data/: the generator reproduces the committed files, and the data are a sane,
valid scenario in the layout of docs/input_format.md.

Sources named in the docstrings: RFC 7946 (GeoJSON), the OGC Simple Features model as implemented by shapely
(polygon validity), the haversine formula (Sinnott 1984), CIBSE TM41 (2006) for degree hours, IPCC 2006 for fuel
CO2 factors. Figures marked "demo requirement" come from the planning of the demo itself, not from a reference.
"""

from __future__ import annotations

import csv
import importlib.util
import json
import math
import tomllib
from pathlib import Path

import numpy as np
import pytest
import shapely
from shapely.geometry import Point, shape

DEMO = Path(__file__).resolve().parent.parent / "demo_data"
GENERATOR = DEMO / "build_demo_city.py"
NOT_DATA = {"build_demo_city.py", "README.md"}


def _generator():
    spec = importlib.util.spec_from_file_location("build_demo_city", GENERATOR)
    module = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(module)
    return module


def _rows(name: str) -> list[dict]:
    with open(DEMO / name, encoding="utf-8", newline="") as handle:
        return list(csv.DictReader(handle))


def _toml(name: str) -> dict:
    with open(DEMO / name, "rb") as handle:
        return tomllib.load(handle)


def _features() -> list[dict]:
    return json.loads((DEMO / "districts.geojson").read_text(encoding="utf-8"))["features"]


def _shapes() -> dict[str, shapely.Polygon]:
    return {f["properties"]["district_id"]: shape(f["geometry"]) for f in _features()}


def _haversine_m(lon1, lat1, lon2, lat2) -> float:
    """Great-circle distance, haversine formula (Sinnott, R. W. 1984, Virtues of the haversine, Sky and
    Telescope 68(2), 159), mean Earth radius 6371 km."""
    p1, p2 = math.radians(lat1), math.radians(lat2)
    dp, dl = p2 - p1, math.radians(lon2 - lon1)
    a = math.sin(dp / 2) ** 2 + math.cos(p1) * math.cos(p2) * math.sin(dl / 2) ** 2
    return 2 * 6_371_000.0 * math.asin(math.sqrt(a))


def _bearing_deg(lon1, lat1, lon2, lat2) -> float:
    """Initial great-circle bearing from point 1 to point 2, clockwise from north [°] (standard spherical
    trigonometry)."""
    p1, p2 = math.radians(lat1), math.radians(lat2)
    dl = math.radians(lon2 - lon1)
    y = math.sin(dl) * math.cos(p2)
    x = math.cos(p1) * math.sin(p2) - math.sin(p1) * math.cos(p2) * math.cos(dl)
    return math.degrees(math.atan2(y, x)) % 360.0


# ------------------------------------------------------------------------------------------ reproducibility
def test_generator_reproduces_committed_files_byte_for_byte(tmp_path):
    """Running the seeded generator writes exactly the committed files, no more and no fewer (demo requirement:
    the demo data are reproducible from their script)."""
    written = _generator().build(tmp_path)
    names = sorted(p.name for p in written)
    committed = sorted(p.name for p in DEMO.iterdir() if p.is_file() and p.name not in NOT_DATA)
    assert names == committed
    for name in names:
        assert (tmp_path / name).read_bytes() == (DEMO / name).read_bytes(), f"{name} differs from the generator"


def test_generator_runs_are_identical(tmp_path):
    """Two runs into different folders give identical bytes (one seeded numpy generator, fixed number formats)."""
    module = _generator()
    first = module.build(tmp_path / "a")
    module.build(tmp_path / "b")
    for path in first:
        assert path.read_bytes() == (tmp_path / "b" / path.name).read_bytes(), path.name


# ------------------------------------------------------------------------------------------ counts (demo requirement)
def test_district_count_between_8_and_15():
    """Demo requirement: 8 to 15 districts of different character."""
    assert 8 <= len(_features()) <= 15


def test_well_count_between_10_and_20():
    """Demo requirement: 10 to 20 well doublets."""
    assert 10 <= len(_rows("wells.csv")) <= 20


def test_hourly_has_8760_consecutive_hours():
    """docs/input_format.md: hourly.csv has 8760 rows (non-leap year), hour 0, 1, 2 ... without gaps."""
    hours = [int(r["hour"]) for r in _rows("hourly.csv")]
    assert hours == list(range(8760))


def test_at_least_three_cost_cases_each_described():
    """Demo requirement: at least three cost cases, among them "reference"; docs/input_format.md: each case is a
    table under [cases] with a description. Parsed with the standard library TOML parser (tomllib, TOML 1.0)."""
    cases = _toml("cost_cases.toml")["cases"]
    assert len(cases) >= 3
    assert "reference" in cases
    for name, case in cases.items():
        assert isinstance(case.get("description"), str) and len(case["description"]) > 10, name


def test_cost_cases_differ_in_what_they_override():
    """Every case but the reference changes at least one price or investment, and no two cases are the same
    (otherwise a case could not change the result)."""
    cases = _toml("cost_cases.toml")["cases"]
    bodies = [json.dumps({k: v for k, v in c.items() if k != "description"}, sort_keys=True) for c in cases.values()]
    assert len(set(bodies)) == len(bodies)
    assert all(body != "{}" for name, body in zip(cases, bodies) if name != "reference")


# ------------------------------------------------------------------------------------------ geometry
def test_polygons_follow_rfc7946():
    """RFC 7946 section 3.1.6: linear rings are closed (first position equals last) and exterior rings are
    counter-clockwise; section 3.1.1: positions are [longitude, latitude] within WGS 84 bounds."""
    for feature in _features():
        assert feature["geometry"]["type"] == "Polygon"
        ring = feature["geometry"]["coordinates"][0]
        assert ring[0] == ring[-1] and len(ring) >= 4
        assert shapely.LinearRing(ring).is_ccw
        for lon, lat in ring:
            assert -180.0 <= lon <= 180.0 and -90.0 <= lat <= 90.0


def test_polygons_valid_and_not_overlapping():
    """OGC Simple Features validity (shapely's is_valid: no self-intersection) for every district, and no two
    districts overlap: the area of their union equals the sum of their areas (to 1e-9 relative)."""
    shapes = list(_shapes().values())
    for polygon in shapes:
        assert polygon.is_valid, shapely.is_valid_reason(polygon)
    total = sum(p.area for p in shapes)
    assert shapely.union_all(shapes).area == pytest.approx(total, rel=1e-9)
    for i, a in enumerate(shapes):
        for b in shapes[i + 1:]:
            assert a.intersection(b).area < 1e-12


def test_neighbours_share_edges_vertex_for_vertex():
    """Where two districts touch, they share their border exactly: every vertex of one district that lies on
    (within 1 mm of) another district's outline is also a vertex of that outline, so there are neither gaps nor
    slivers along borders; and at least half of the districts have a neighbour sharing a border longer than 100 m."""
    shapes = _shapes()
    vertices = {k: {tuple(c) for c in p.exterior.coords} for k, p in shapes.items()}
    tolerance_deg = 1e-8  # about 1 mm
    with_long_border = set()
    for a, pa in shapes.items():
        for b, pb in shapes.items():
            if a == b:
                continue
            for vertex in vertices[a]:
                if pb.exterior.distance(Point(vertex)) < tolerance_deg:
                    assert vertex in vertices[b], f"{a} vertex {vertex} lies on {b} but is not one of its vertices"
            shared = pa.boundary.intersection(pb.boundary)
            if shared.length * 111_000 * 0.58 > 100.0:  # degrees to metres, coarse at lat 54
                with_long_border.add(a)
    assert len(with_long_border) >= len(shapes) / 2


def test_city_is_invented_place_at_sea_of_about_6_by_5_km():
    """Demo requirement: the city lies near lon 4.20 E, lat 54.30 N (open North Sea, no city there) and spans
    about 6 km x 5 km; distances by the haversine formula (Sinnott 1984)."""
    bounds = shapely.union_all(list(_shapes().values())).bounds
    west, south, east, north = bounds
    assert abs((west + east) / 2 - 4.20) < 0.05 and abs((south + north) / 2 - 54.30) < 0.05
    mid_lat = (south + north) / 2
    width = _haversine_m(west, mid_lat, east, mid_lat)
    height = _haversine_m(west, south, west, north)
    assert 5_000 <= width <= 7_500
    assert 4_000 <= height <= 6_500


# ------------------------------------------------------------------------------------------ demand
def test_district_demands_and_heat_densities_plausible():
    """Annual heat demand per district 5-120 GWh/a (demo requirement) and gross heat density 30-900
    MWh/(ha a), the span from villages to dense city centres (common practice, from memory). Buildings count to
    the district containing them (docs/input_format.md)."""
    shapes = _shapes()
    heat = {f["properties"]["district_id"]: f["properties"]["heat_demand_mwh_per_a"] for f in _features()}
    for row in _rows("buildings.csv"):
        point = Point(float(row["lon"]), float(row["lat"]))
        owner = [k for k, p in shapes.items() if p.contains(point)]
        assert len(owner) == 1, row["building_id"]
        heat[owner[0]] += float(row["heat_demand_mwh_per_a"])
    for district_id, polygon in shapes.items():
        lat = polygon.centroid.y
        # Local equirectangular area, good to far better than 1 % over a few km.
        area_ha = polygon.area * (6_371_000 * math.pi / 180) ** 2 * math.cos(math.radians(lat)) / 1e4
        assert 5_000 <= heat[district_id] <= 120_000, district_id
        assert 30 <= heat[district_id] / area_ha <= 900, district_id


def test_buildings_sit_inside_two_or_three_districts():
    """Demo requirement: 30-60 buildings, each strictly inside one district, spread over two or three districts
    whose own demand stays positive."""
    shapes = _shapes()
    rows = _rows("buildings.csv")
    assert 30 <= len(rows) <= 60
    owners = set()
    for row in rows:
        point = Point(float(row["lon"]), float(row["lat"]))
        owner = [k for k, p in shapes.items() if p.contains(point)]
        assert len(owner) == 1, row["building_id"]
        owners.add(owner[0])
    assert 2 <= len(owners) <= 3
    own = {f["properties"]["district_id"]: f["properties"]["heat_demand_mwh_per_a"] for f in _features()}
    assert all(own[k] > 0 for k in owners)


def _design_load_kw(annual_mwh: float, hot_water_share: float, temp: np.ndarray) -> float:
    """Space-heating peak by the heating-degree-hour method (CIBSE TM41, 2006; base 15 °C) plus hot water at
    twice its mean hourly rate (common practice, from memory)."""
    degree_hours = np.clip(15.0 - temp, 0.0, None)
    space = (1.0 - hot_water_share) * annual_mwh * 1000.0 * degree_hours.max() / degree_hours.sum()
    return space + hot_water_share * annual_mwh * 1000.0 / temp.size * 2.0


def test_existing_boilers_cover_30_to_60_percent_of_peak():
    """Demo requirement: in every district with existing boilers they cover 30-60 % of the design heat load, so
    that new capacity is needed by the target year; the design load by heating degree hours (CIBSE TM41)."""
    temp = np.array([float(r["outdoor_temp_c"]) for r in _rows("hourly.csv")])
    kinds = {r["technology_id"]: r["kind"] for r in _rows("technologies.csv")}
    existing: dict[str, float] = {}
    for row in _rows("district_technologies.csv"):
        if kinds[row["technology_id"]] == "fuel_boiler":
            existing[row["district_id"]] = existing.get(row["district_id"], 0.0) + float(row["existing_kw"])
    heat = {f["properties"]["district_id"]: f["properties"] for f in _features()}
    for row in _rows("buildings.csv"):
        point = Point(float(row["lon"]), float(row["lat"]))
        for district_id, polygon in _shapes().items():
            if polygon.contains(point):
                heat[district_id] = dict(heat[district_id])
                heat[district_id]["heat_demand_mwh_per_a"] += float(row["heat_demand_mwh_per_a"])
    with_boilers = [k for k, v in existing.items() if v > 0]
    assert len(with_boilers) >= 8
    for district_id in with_boilers:
        p = heat[district_id]
        peak = _design_load_kw(p["heat_demand_mwh_per_a"], p["hot_water_share"], temp)
        assert 0.3 <= existing[district_id] / peak <= 0.6, district_id


def test_network_substations_ruled_out_where_no_network():
    """docs/input_format.md: potential_kw 0 rules a technology out; every district without a network carries a
    network_connection row with potential 0, and every district with one has a positive connection limit."""
    kinds = {r["technology_id"]: r["kind"] for r in _rows("technologies.csv")}
    ruled_out = {
        r["district_id"]
        for r in _rows("district_technologies.csv")
        if kinds[r["technology_id"]] == "network_connection" and r["potential_kw"] == "0.0"
    }
    for feature in _features():
        p = feature["properties"]
        if p["network_available"]:
            assert p["network_connection_limit_kw"] > 0
            assert p["district_id"] not in ruled_out
        else:
            assert p["district_id"] in ruled_out


# ------------------------------------------------------------------------------------------ catalogue
def test_technology_catalogue_has_all_columns_and_kinds():
    """docs/input_format.md: technologies.csv has the 15 listed columns, kinds from the listed eight, and each
    kind appears; heat pump grades within 0.35-0.6, the textbook range of real machines (from memory)."""
    expected = [
        "technology_id", "name", "kind", "carrier", "efficiency", "cop_quality_grade", "source_approach_k",
        "sink_approach_k", "investment_eur_per_kw", "fixed_om_pct_per_a", "variable_om_eur_per_mwh", "lifetime_a",
        "store_loss_pct_per_h", "store_efficiency", "store_hours",
    ]
    with open(DEMO / "technologies.csv", encoding="utf-8") as handle:
        assert handle.readline().strip().split(",") == expected
    rows = _rows("technologies.csv")
    kinds = {r["kind"] for r in rows}
    assert kinds == {
        "fuel_boiler", "electric_boiler", "air_heat_pump", "groundwater_heat_pump", "network_connection",
        "heat_store", "chiller", "groundwater_cooling",
    }
    for row in rows:
        if row["kind"].endswith("heat_pump"):
            assert 0.35 <= float(row["cop_quality_grade"]) <= 0.6
        assert float(row["investment_eur_per_kw"]) > 0 and int(row["lifetime_a"]) >= 10


def test_scenario_fuel_co2_factors_are_ipcc_defaults():
    """IPCC 2006 Guidelines, vol. 2, ch. 2, table 2.2: natural gas 56 100 kg CO2/TJ = 202.0 kg/MWh, gas/diesel
    oil 74 100 kg CO2/TJ = 266.8 kg/MWh (1 MWh = 3.6e-3 TJ)."""
    factors = _toml("scenario.toml")["co2_factors"]
    assert factors["gas_kg_per_mwh"] == pytest.approx(56_100 * 3.6e-3, abs=0.1)
    assert factors["oil_kg_per_mwh"] == pytest.approx(74_100 * 3.6e-3, abs=0.1)


# ------------------------------------------------------------------------------------------ wells
def test_wells_inside_districts_with_permits_and_spreads_in_range():
    """docs/input_format.md: a blank district_id binds a well to the district containing it, so such wells must lie
    inside one; filled ones lie in the district named. Demo requirement: permits 20-150 m³/h, spreads 3-6 K,
    both blank and filled district ids and reinjection positions occur."""
    shapes = _shapes()
    rows = _rows("wells.csv")
    for row in rows:
        point = Point(float(row["lon"]), float(row["lat"]))
        owner = [k for k, p in shapes.items() if p.contains(point)]
        assert len(owner) == 1, row["well_id"]
        if row["district_id"]:
            assert row["district_id"] == owner[0], row["well_id"]
        assert 20 <= float(row["permit_flow_m3_per_h"]) <= 150
        assert 3 <= float(row["design_spread_k"]) <= 6
    assert {bool(r["district_id"]) for r in rows} == {True, False}
    assert {bool(r["reinjection_lon"]) for r in rows} == {True, False}


def test_some_shallow_wells_limited_by_reinjection_floor_in_winter():
    """Design rule of docs/model.md section 2: for heating the usable spread is at most T_gw - T_inj,min. With the
    4.5 °C floor of scenario.toml, at least one well has a winter minimum (mean - amplitude) leaving less than its
    design spread, and most wells are 10-12 °C (common practice for shallow aquifers in central Europe, from
    memory)."""
    floor = _toml("scenario.toml")["run"]["reinjection_min_temp_c"]
    rows = _rows("wells.csv")
    limited = [
        r for r in rows
        if float(r["groundwater_temp_c"]) - float(r["groundwater_temp_amplitude_k"]) - floor
        < float(r["design_spread_k"])
    ]
    assert limited
    typical = [r for r in rows if 10.0 <= float(r["groundwater_temp_c"]) <= 12.0]
    assert len(typical) > len(rows) / 2


def test_cluster_of_doublets_along_the_groundwater_flow():
    """Demo requirement: at least three doublets in a line along the flow direction of [aquifer] (within 15°),
    150-300 m apart, and each explicit reinjection well of the line sits down-gradient of its extraction well,
    nearer the next doublet (bearings and distances by spherical trigonometry, haversine)."""
    flow = _toml("scenario.toml")["aquifer"]["flow_direction_deg"]
    rows = _rows("wells.csv")
    pos = {r["well_id"]: (float(r["lon"]), float(r["lat"])) for r in rows}
    nxt = {}
    for a in rows:
        for b in rows:
            if a is b:
                continue
            d = _haversine_m(*pos[a["well_id"]], *pos[b["well_id"]])
            turn = abs((_bearing_deg(*pos[a["well_id"]], *pos[b["well_id"]]) - flow + 180) % 360 - 180)
            if 150 <= d <= 300 and turn <= 15:
                nxt[a["well_id"]] = b["well_id"]
    longest = []
    for start in nxt:
        chain = [start]
        while chain[-1] in nxt and nxt[chain[-1]] not in chain:
            chain.append(nxt[chain[-1]])
        longest = max(longest, chain, key=len)
    assert len(longest) >= 3
    by_id = {r["well_id"]: r for r in rows}
    explicit = 0
    for up, down in zip(longest, longest[1:]):
        row = by_id[up]
        if row["reinjection_lon"]:
            explicit += 1
            inj = (float(row["reinjection_lon"]), float(row["reinjection_lat"]))
            assert _haversine_m(*inj, *pos[down]) < _haversine_m(*pos[up], *pos[down])
    assert explicit >= 2


def test_aquifer_section_complete_and_velocity_in_range():
    """docs/input_format.md lists nine [aquifer] keys; all are given. Demo requirement: Darcy velocity 0.5-1.5 m/d."""
    aquifer = _toml("scenario.toml")["aquifer"]
    assert set(aquifer) == {
        "flow_direction_deg", "darcy_velocity_m_per_d", "effective_porosity", "saturated_thickness_m",
        "longitudinal_dispersivity_m", "transverse_dispersivity_m", "aquifer_heat_capacity_mj_per_m3_k",
        "water_heat_capacity_mj_per_m3_k", "reinjection_offset_m",
    }
    assert 0.5 <= aquifer["darcy_velocity_m_per_d"] <= 1.5


# ------------------------------------------------------------------------------------------ hourly year
def test_hourly_weather_and_prices_have_the_intended_shape():
    """Demo requirement for the synthetic year: annual mean outdoor temperature 9-11 °C, the coldest month
    January or February, a cold spell between -15 and -10 °C; electricity mean 95-105 EUR/MWh with cheaper summer
    middays than winter evenings; grid CO2 mean 140-160 kg/MWh; network heat 75-95 EUR/MWh and 90-150 kg/MWh."""
    rows = _rows("hourly.csv")
    temp = np.array([float(r["outdoor_temp_c"]) for r in rows])
    price = np.array([float(r["electricity_price_eur_per_mwh"]) for r in rows])
    assert 9.0 <= temp.mean() <= 11.0
    monthly = temp[: 365 * 24 - 5 * 24].reshape(12, -1).mean(axis=1)
    assert int(np.argmin(monthly)) in (0, 1)
    assert -15.0 <= temp.min() <= -10.0
    assert 95.0 <= price.mean() <= 105.0
    hours = np.arange(len(rows))
    day, hod = hours // 24, hours % 24
    summer_noon = price[(day >= 160) & (day < 230) & (hod >= 11) & (hod <= 14)].mean()
    winter_evening = price[((day < 50) | (day > 330)) & (hod >= 17) & (hod <= 20)].mean()
    assert summer_noon < winter_evening - 20.0
    grid = np.array([float(r["grid_co2_kg_per_mwh"]) for r in rows])
    assert 140.0 <= grid.mean() <= 160.0
    network_price = np.array([float(r["network_price_eur_per_mwh"]) for r in rows])
    network_co2 = np.array([float(r["network_co2_kg_per_mwh"]) for r in rows])
    assert 75.0 <= network_price.min() and network_price.max() <= 95.0
    assert 90.0 <= network_co2.min() and network_co2.max() <= 150.0


# ------------------------------------------------------------------------------------------ the project loader
def test_demo_loads_without_problems():
    """The demo passes the project's own validation (engine.scenario.load_scenario) with every district, well and cost
    case it declares."""
    io = pytest.importorskip("engine.scenario")
    scenario = io.load_scenario(DEMO)
    assert len(scenario.districts) == len(_features())
    assert len(scenario.wells) == len(_rows("wells.csv"))
    assert set(scenario.cost_cases) == set(_toml("cost_cases.toml")["cases"])
    assert scenario.n_hours == 8760
