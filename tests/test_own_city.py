"""A city given in a projected CRS with its weather in an EPW file solves like the same city in WGS 84.

The tiny city (tests/fixtures/tiny_city) is written twice:

* as it is: districts.geojson in WGS 84, wells.csv and buildings.csv with lon/lat, hourly.csv with
  outdoor_temp_c;
* as a planner's GIS would hand it over: districts.geojson with the legacy `crs` member naming ETRS89 / UTM 32N
  (EPSG:25832) and coordinates in metres, wells.csv with x/y in the CRS declared by `[gis] crs`, buildings as a
  GeoPackage in EPSG:25832, and hourly.csv without outdoor_temp_c next to a weather.epw holding the same
  temperatures in the EPW layout (EnergyPlus Auxiliary Programs, EPW data dictionary: dry bulb in field 7).

Reference for the coordinates: pyproj (EPSG:4326 -> EPSG:25832 and back; PROJ's ETRS89 -> WGS 84 is the null
transformation, so the round trip returns the positions to far below a millimetre). Both folders must solve to
the same total cost, CO2 and demand (relative 1e-6).
"""

from __future__ import annotations

import json
import shutil
from pathlib import Path

import numpy as np
import pandas as pd
import pyproj
import pytest
import shapely
from shapely.geometry import Point, shape

from engine.cli import main
from engine.model.solve import solve_scenario
from engine.scenario import load_scenario, validate_scenario
from layer_files import FLAGS, HEADER, REST, write_layer

TINY = Path(__file__).resolve().parent / "fixtures" / "tiny_city"
CRS = "EPSG:25832"
TO_UTM = pyproj.Transformer.from_crs("EPSG:4326", CRS, always_xy=True)


def to_utm(xy: np.ndarray) -> np.ndarray:
    return np.column_stack(TO_UTM.transform(xy[:, 0], xy[:, 1]))


def epw_from(temps: np.ndarray) -> str:
    """An EPW file (2019, 8760 hours) whose dry bulb is ``temps``, written with two decimals as hourly.csv has."""
    lines = list(HEADER)
    stamp = pd.date_range("2019-01-01 01:00", periods=len(temps), freq="h")
    for t, value in zip(stamp, temps):
        hour = t.hour or 24
        day = t - pd.Timedelta(hours=1) if t.hour == 0 else t
        lines.append(f"2019,{day.month},{day.day},{hour},60,{FLAGS},{value:.2f},{REST}")
    return "\n".join(lines) + "\n"


def projected_copy(folder: Path) -> Path:
    shutil.copytree(TINY, folder)
    data = json.loads((TINY / "districts.geojson").read_text())
    for feature in data["features"]:
        feature["geometry"] = shapely.geometry.mapping(shapely.transform(shape(feature["geometry"]), to_utm))
    data["crs"] = {"type": "name", "properties": {"name": "urn:ogc:def:crs:EPSG::25832"}}
    (folder / "districts.geojson").write_text(json.dumps(data))

    wells = pd.read_csv(TINY / "wells.csv", dtype=str, keep_default_na=False)
    for lon, lat, x, y in (("lon", "lat", "x", "y"), ("reinjection_lon", "reinjection_lat", "reinjection_x", "reinjection_y")):
        given = wells[lon] != ""
        xs, ys = TO_UTM.transform(wells.loc[given, lon].astype(float).to_numpy(), wells.loc[given, lat].astype(float).to_numpy())
        wells[x], wells[y] = "", ""
        wells.loc[given, x] = [repr(float(v)) for v in xs]
        wells.loc[given, y] = [repr(float(v)) for v in ys]
        wells = wells.drop(columns=[lon, lat])
    wells.to_csv(folder / "wells.csv", index=False)

    buildings = pd.read_csv(TINY / "buildings.csv")
    points = [Point(TO_UTM.transform(lon, lat)) for lon, lat in zip(buildings["lon"], buildings["lat"])]
    props = [
        {"building_id": b, "heat_demand_mwh_per_a": float(h), "cooling_demand_mwh_per_a": float(c) if c == c else 0.0}
        for b, h, c in zip(buildings["building_id"], buildings["heat_demand_mwh_per_a"], buildings["cooling_demand_mwh_per_a"])
    ]
    (folder / "buildings.csv").unlink()
    write_layer(folder / "buildings.gpkg", points, props, CRS, "GPKG")

    hourly = pd.read_csv(TINY / "hourly.csv", dtype=str)
    (folder / "weather.epw").write_text(epw_from(hourly["outdoor_temp_c"].astype(float).to_numpy()))
    hourly.drop(columns=["outdoor_temp_c"]).to_csv(folder / "hourly.csv", index=False)
    toml = (TINY / "scenario.toml").read_text()
    (folder / "scenario.toml").write_text(toml + '\n[gis]\ncrs = "EPSG:25832"\n')
    return folder


def test_projected_city_with_epw_solves_like_the_wgs84_city(tmp_path):
    plain = load_scenario(TINY)
    own = load_scenario(projected_copy(tmp_path / "own_city"))
    np.testing.assert_allclose(own.hourly["outdoor_temp_c"], plain.hourly["outdoor_temp_c"], rtol=0, atol=1e-9)
    assert list(own.districts["district_id"]) == list(plain.districts["district_id"])
    np.testing.assert_allclose(own.districts["heat_demand_mwh_per_a"], plain.districts["heat_demand_mwh_per_a"], rtol=1e-12)
    np.testing.assert_allclose(own.wells[["lon", "lat"]].to_numpy(), plain.wells[["lon", "lat"]].to_numpy(), atol=1e-9)
    a = solve_scenario(plain, typical_days=4)
    b = solve_scenario(own, typical_days=4)
    assert a.solved and b.solved
    assert b.total_cost_eur_per_a == pytest.approx(a.total_cost_eur_per_a, rel=1e-6)
    assert b.co2_t_per_a == pytest.approx(a.co2_t_per_a, rel=1e-6)
    assert b.heat_demand_mwh_per_a == pytest.approx(a.heat_demand_mwh_per_a, rel=1e-6)


def plain_copy(folder: Path) -> Path:
    shutil.copytree(TINY, folder)
    return folder


def test_buildings_described_by_use_period_and_area_get_typology_demand(tmp_path):
    """Hand calculation from the shipped table: multi_family built 1960 (period 1949-1978) with 1000 m² heated
    area needs (space heat + hot water of that row) x 1000 m² / 1000 MWh/a; the other buildings keep their
    metered demand, so the district total rises by exactly that amount over the metered-only sum without b1."""
    folder = plain_copy(tmp_path / "stock")
    buildings = pd.read_csv(TINY / "buildings.csv", dtype=str, keep_default_na=False)
    buildings.loc[0, "heat_demand_mwh_per_a"] = ""
    buildings["use"] = ["multi_family", "", "", ""]
    buildings["construction_year"] = ["1960", "", "", ""]
    buildings["heated_area_m2"] = ["1000", "", "", ""]
    buildings.to_csv(folder / "buildings.csv", index=False)
    table = pd.read_csv(typology_asset())
    row = table[(table["use"] == "multi_family") & (table["period"] == "1949-1978")].iloc[0]
    expected_b1 = (row["space_heat_kwh_per_m2_a"] + row["hot_water_kwh_per_m2_a"]) * 1000 / 1000
    plain = load_scenario(TINY).districts.set_index("district_id")["heat_demand_mwh_per_a"]
    stock = load_scenario(folder).districts.set_index("district_id")["heat_demand_mwh_per_a"]
    b1 = float(pd.read_csv(TINY / "buildings.csv")["heat_demand_mwh_per_a"][0])  # metered before, in old_town
    assert stock["old_town"] == pytest.approx(plain["old_town"] - b1 + expected_b1, rel=1e-12)
    assert stock["riverside"] == pytest.approx(plain["riverside"], rel=1e-12)


def typology_asset() -> Path:
    return Path(__file__).resolve().parents[1] / "engine" / "assets" / "typology" / "building_typology.csv"


def test_building_without_demand_or_stock_is_named(tmp_path):
    folder = plain_copy(tmp_path / "nostock")
    buildings = pd.read_csv(TINY / "buildings.csv", dtype=str, keep_default_na=False)
    buildings.loc[2, "heat_demand_mwh_per_a"] = ""
    buildings["use"] = ["", "", "barn", ""]
    buildings.to_csv(folder / "buildings.csv", index=False)
    problems = validate_scenario(folder)
    assert [(p.file, p.row, p.column) for p in problems] == [("buildings.csv", 4, "heat_demand_mwh_per_a")]


def test_wells_as_a_point_layer_match_the_csv(tmp_path):
    folder = plain_copy(tmp_path / "wells_layer")
    wells = pd.read_csv(TINY / "wells.csv", dtype=str, keep_default_na=False)
    points = [Point(TO_UTM.transform(float(x), float(y))) for x, y in zip(wells["lon"], wells["lat"])]
    rest = wells.drop(columns=["lon", "lat"])
    props = [{k: (v if k in ("well_id", "district_id") else (float(v) if v else None)) for k, v in r.items()}
             for r in rest.to_dict("records")]
    (folder / "wells.csv").unlink()
    write_layer(folder / "wells.gpkg", points, props, CRS, "GPKG")
    plain, own = load_scenario(TINY).wells, load_scenario(folder).wells
    assert list(own["well_id"]) == list(plain["well_id"]) and list(own["district_id"]) == list(plain["district_id"])
    np.testing.assert_allclose(own[["lon", "lat"]].to_numpy(), plain[["lon", "lat"]].to_numpy(), atol=1e-9)
    np.testing.assert_allclose(own["permit_flow_m3_per_h"], plain["permit_flow_m3_per_h"])


def test_epw_with_8759_rows_is_refused_through_the_reader(tmp_path):
    folder = plain_copy(tmp_path / "short_epw")
    hourly = pd.read_csv(TINY / "hourly.csv", dtype=str)
    (folder / "weather.epw").write_text(epw_from(hourly["outdoor_temp_c"].astype(float).to_numpy()[:-1]))
    hourly.drop(columns=["outdoor_temp_c"]).to_csv(folder / "hourly.csv", index=False)
    problems = validate_scenario(folder)
    assert len(problems) == 1 and problems[0].file == "weather.epw" and "8759" in problems[0].message


def test_hourly_column_wins_over_weather_epw(tmp_path):
    folder = plain_copy(tmp_path / "both")
    (folder / "weather.epw").write_text(epw_from(np.zeros(8760)))
    np.testing.assert_array_equal(load_scenario(folder).hourly["outdoor_temp_c"], load_scenario(TINY).hourly["outdoor_temp_c"])


def test_validate_shows_where_the_temperatures_and_coordinates_came_from(tmp_path, capsys):
    folder = projected_copy(tmp_path / "own")
    assert main(["validate", str(folder)]) == 0
    out = capsys.readouterr().out
    assert "Examplestadt" in out and "EPSG:25832" in out


def districts_gpkg(folder: Path, mutate) -> None:
    """Replace districts.geojson by a GeoPackage in EPSG:25832, after ``mutate(shapes, props)``."""
    data = json.loads((TINY / "districts.geojson").read_text())
    shapes = [shapely.transform(shape(f["geometry"]), to_utm) for f in data["features"]]
    props = [{"district_id": f["properties"]["district_id"], "heat_demand_mwh_per_a": f["properties"]["heat_demand_mwh_per_a"],
              "supply_temp_c": f["properties"]["supply_temp_c"]} for f in data["features"]]
    mutate(shapes, props)
    (folder / "districts.geojson").unlink()
    (folder / "district_technologies.csv").unlink()
    (folder / "heat_demand_hourly.csv").unlink()
    write_layer(folder / "districts.gpkg", shapes, props, CRS, "GPKG")


def test_gpkg_districts_with_a_duplicate_id_name_the_layer_and_feature(tmp_path):
    folder = plain_copy(tmp_path / "dup")
    districts_gpkg(folder, lambda shapes, props: props[1].update(district_id=props[0]["district_id"]))
    problems = [p for p in validate_scenario(folder) if p.file == "districts.gpkg"]
    assert [(p.row, p.column) for p in problems] == [(2, "district_id")]
    assert "duplicate" in problems[0].message and str(problems[0]).startswith("districts.gpkg, feature 2, field district_id")


def test_gpkg_districts_load_without_the_geojson(tmp_path):
    folder = plain_copy(tmp_path / "gpkg")
    districts_gpkg(folder, lambda shapes, props: None)
    scenario = load_scenario(folder)
    plain = load_scenario(TINY).districts
    for a, b in zip(scenario.districts["geometry"], plain["geometry"]):
        assert np.allclose(np.array(a["coordinates"][0]), np.array(b["coordinates"][0]), atol=1e-9)


@pytest.mark.filterwarnings("ignore::RuntimeWarning")  # GDAL warns when writing a point into a polygon layer
def test_mixed_geometry_in_a_districts_layer_is_refused(tmp_path):
    folder = plain_copy(tmp_path / "mixed")
    districts_gpkg(folder, lambda shapes, props: shapes.__setitem__(1, shapes[1].centroid))
    problems = validate_scenario(folder)
    assert {p.file for p in problems} == {"districts.gpkg"}
    assert any(p.row == 2 and p.column == "geometry" and "is a Point" in p.message for p in problems)
    assert any(p.row is None and "mixes geometry types" in p.message for p in problems)


def test_unknown_declared_crs_is_refused_on_its_key(tmp_path):
    folder = plain_copy(tmp_path / "badcrs")
    (folder / "scenario.toml").write_text((TINY / "scenario.toml").read_text() + '\n[gis]\ncrs = "EPSG:99999999"\n')
    problems = validate_scenario(folder)
    assert [(p.file, p.column) for p in problems] == [("scenario.toml", "gis.crs")]
    assert "pyproj does not know" in problems[0].message
