"""``python -m engine init``: a scenario folder from GIS layers, a weather file and the demo template.

Checks: the folder it writes loads with the scenario reader (the reader is the reference for "complete and
valid"); districts come out where an explicit inverse-UTM PROJ pipeline puts them; building demand matches a
hand calculation from the shipped typology table; the EPW dry bulb becomes hourly.csv's outdoor temperature;
refusals leave nothing on disk and print no traceback.
"""

from __future__ import annotations

import json

import numpy as np
import pandas as pd
import pyproj
import pytest
import shapely
from shapely.geometry import Point, Polygon

from engine.cli import main
from engine.physics import typology
from engine.scenario.init_folder import DEFAULT_SUPPLY_TEMP_C, init_scenario_folder
from engine.scenario import load_scenario
from layer_files import epw_text, temperatures, write_geojson, write_layer

TO_UTM = pyproj.Transformer.from_crs("EPSG:4326", "EPSG:25832", always_xy=True)


def utm(lon: float, lat: float) -> tuple[float, float]:
    return TO_UTM.transform(lon, lat)


def utm_square(lon0: float, lat0: float, size: float) -> Polygon:
    corners = [(lon0, lat0), (lon0 + size, lat0), (lon0 + size, lat0 + size), (lon0, lat0 + size)]
    return Polygon([utm(*c) for c in corners])


@pytest.fixture
def layers(tmp_path):
    """Two districts (GeoPackage, ETRS89 / UTM 32N) and three buildings (GeoJSON footprints with the crs member)."""
    shapes = [utm_square(11.0, 48.0, 0.01), utm_square(11.01, 48.0, 0.01)]
    props = [{"code": "Old Town", "label": "Old town", "mwh": 20000.0}, {"code": "river-1", "label": "Riverside", "mwh": 8000.0}]
    districts = write_layer(tmp_path / "districts.gpkg", shapes, props, "EPSG:25832", "GPKG")
    footprints = [utm_square(11.002, 48.002, 0.0002), utm_square(11.012, 48.004, 0.0003), utm_square(11.5, 48.5, 0.0002)]
    bprops = [
        {"building_id": "b1", "use": "multi_family", "construction_year": 1960.0, "storeys": 4.0, "heated_area_m2": None,
         "heat_demand_mwh_per_a": None},
        {"building_id": "b2", "use": "office", "construction_year": 2015.0, "storeys": None, "heated_area_m2": 2500.0,
         "heat_demand_mwh_per_a": None},
        {"building_id": "b3", "use": "office", "construction_year": 2015.0, "storeys": None, "heated_area_m2": 100.0,
         "heat_demand_mwh_per_a": 9.0},
    ]
    buildings = write_geojson(tmp_path / "buildings.geojson", footprints, bprops, "urn:ogc:def:crs:EPSG::25832")
    weather = tmp_path / "station.epw"
    weather.write_text(epw_text(2020))  # a leap year: 8784 rows
    return districts, buildings, weather, footprints


def test_init_writes_a_folder_that_loads(tmp_path, layers):
    districts, buildings, weather, footprints = layers
    result = init_scenario_folder(
        tmp_path / "city", districts, id_field="code", name_field="label", demand_field="mwh", weather=weather,
        buildings=buildings,
    )
    assert result.written and result.problems == []
    scenario = load_scenario(tmp_path / "city")
    frame = scenario.districts.set_index("district_id")
    assert list(frame.index) == ["Old_Town", "river-1"]
    assert frame.loc["Old_Town", "name"] == "Old town"
    assert (frame["supply_temp_c"] == DEFAULT_SUPPLY_TEMP_C).all()

    # Districts where an explicit inverse UTM (GRS 80) pipeline puts the corners: back at 11.00 / 48.00 degrees
    ring = np.array(frame.loc["Old_Town", "geometry"]["coordinates"][0])
    assert np.allclose(ring[0], [11.0, 48.0], atol=1e-9)

    # Hand calculation from the shipped table (engine/assets/typology/building_typology.csv):
    # b1 multi_family 1949-1978: (140 + 12.5) kWh/(m² a) x footprint x 4 storeys x 0.8; b2 office 2010-: (45 + 3) x 2500;
    # b3 metered 9 MWh/a; the third footprint lies outside both districts and is left out.
    table, _ = typology.read_typology()
    row = table[(table["use"] == "multi_family") & (table["period"] == "1949-1978")].iloc[0]
    office = table[(table["use"] == "office") & (table["period"] == "2010-")].iloc[0]
    geod = pyproj.Geod(ellps="WGS84")
    to_wgs = pyproj.Transformer.from_crs("EPSG:25832", "EPSG:4326", always_xy=True)
    b1_area = abs(geod.geometry_area_perimeter(shapely.transform(footprints[0], lambda xy: np.column_stack(to_wgs.transform(xy[:, 0], xy[:, 1]))))[0])
    b1 = (row["space_heat_kwh_per_m2_a"] + row["hot_water_kwh_per_m2_a"]) * b1_area * 4 * 0.8 / 1000
    b2 = (office["space_heat_kwh_per_m2_a"] + office["hot_water_kwh_per_m2_a"]) * 2500 / 1000
    written = pd.read_csv(tmp_path / "city" / "buildings.csv").set_index("building_id")
    assert list(written.index) == ["b1", "b2"]  # b3 lies outside every district: left out, and said so
    assert written.loc["b1", "heat_demand_mwh_per_a"] == pytest.approx(b1, abs=1e-3)
    assert written.loc["b2", "heat_demand_mwh_per_a"] == pytest.approx(b2, abs=1e-3)
    assert frame.loc["Old_Town", "heat_demand_mwh_per_a"] == pytest.approx(20000.0 + b1, abs=1e-3)
    assert any("outside every district" in note for note in result.assumptions)

    # Weather: the EPW dry bulb in row order; a leap year, so the template's 28 February prices repeat
    assert scenario.n_hours == 8784
    np.testing.assert_allclose(scenario.hourly["outdoor_temp_c"], temperatures(8784), atol=0.005)
    prices = scenario.hourly["electricity_price_eur_per_mwh"].to_numpy()
    np.testing.assert_array_equal(prices[1392:1416], prices[1416:1440])
    assert any("Examplestadt" in note for note in result.assumptions)
    assert (tmp_path / "city" / "weather.epw").is_file()


def test_command_line_prints_assumptions_and_exits_0(tmp_path, layers, capsys):
    districts, _, _, _ = layers
    code = main(["init", str(tmp_path / "c"), "--districts", str(districts), "--id-field", "code", "--demand-field", "mwh"])
    out = capsys.readouterr().out
    assert code == 0 and "Assumed:" in out and "EPSG:25832" in out and "it validates" in out
    assert "template" in out and "invented" in out  # the demo's weather was copied, and it says so


def test_missing_id_field_writes_nothing(tmp_path, layers, capsys):
    districts, _, _, _ = layers
    code = main(["init", str(tmp_path / "c"), "--districts", str(districts), "--id-field", "nope", "--demand-field", "mwh"])
    err = capsys.readouterr().err
    assert code == 2 and "Nothing was written" in err and "no field 'nope'" in err and "Traceback" not in err
    assert not (tmp_path / "c").exists()
    assert not [p for p in tmp_path.iterdir() if p.name.startswith(".c-")]


def test_refusals(tmp_path, layers):
    districts, _, _, _ = layers
    (tmp_path / "full").mkdir()
    (tmp_path / "full" / "x.txt").write_text("x")
    assert "not empty" in init_scenario_folder(tmp_path / "full", districts).problems[0].message
    bad_crs = init_scenario_folder(tmp_path / "a", districts, crs="EPSG:12345678")
    assert bad_crs.problems[0].file == "--crs" and not bad_crs.written
    no_demand = init_scenario_folder(tmp_path / "b", districts, id_field="code")
    assert "--demand-field" in no_demand.problems[0].message and not (tmp_path / "b").exists()
    short = tmp_path / "short.epw"
    short.write_text(epw_text(2019, drop=1))
    problems = init_scenario_folder(tmp_path / "d", districts, id_field="code", demand_field="mwh", weather=short).problems
    assert "8759" in problems[0].message and problems[0].file == "short.epw"


def test_buildings_without_any_demand_are_named(tmp_path, layers):
    districts, _, _, _ = layers
    points = [Point(*utm(11.003, 48.003))]
    layer = write_geojson(tmp_path / "b.geojson", points, [{"building_id": "x1", "use": "barn"}], "EPSG:25832")
    result = init_scenario_folder(tmp_path / "e", districts, id_field="code", buildings=layer)
    assert not result.written
    problem = result.problems[0]
    assert (problem.file, problem.row, problem.column) == ("b.geojson", 1, "heat_demand_mwh_per_a")
    assert "x1" in problem.message


def test_districts_geojson_written_is_plain_wgs84(tmp_path, layers):
    districts, _, _, _ = layers
    init_scenario_folder(tmp_path / "f", districts, id_field="code", demand_field="mwh")
    data = json.loads((tmp_path / "f" / "districts.geojson").read_text())
    assert "crs" not in data and data["features"][0]["geometry"]["type"] == "Polygon"
