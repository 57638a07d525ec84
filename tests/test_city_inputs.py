"""The reader's hooks for a planner's own files (engine.scenario.city_inputs).

References: pyproj (EPSG:25832 -> EPSG:4326, ETRS89 / UTM 32N taken as WGS 84 at screening level, PROJ's
null transformation); the EPW data dictionary (EnergyPlus Auxiliary Programs) for the weather file written by
tests/layer_files.py; hand calculations for the typology demand.
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import pyproj
import pytest
from shapely.geometry import Polygon

from engine.scenario import city_inputs
from layer_files import epw_text, temperatures, write_geojson, write_layer

TO_WGS = pyproj.Transformer.from_crs("EPSG:25832", "EPSG:4326", always_xy=True)


def test_scenario_crs_reads_the_gis_section(tmp_path):
    (tmp_path / "scenario.toml").write_text('[run]\nname = "x"\n[gis]\ncrs = "EPSG:25832"\n')
    assert city_inputs.scenario_crs(tmp_path) == ("EPSG:25832", [])
    (tmp_path / "scenario.toml").write_text('[gis]\ncrs = "EPSG:77777777"\n')
    crs, problems = city_inputs.scenario_crs(tmp_path)
    assert crs is None and problems[0].column == "gis.crs" and "pyproj does not know" in problems[0].message
    (tmp_path / "scenario.toml").write_text('[run]\nname = "x"\n')
    assert city_inputs.scenario_crs(tmp_path) == (None, [])


def square(x0, y0, size=500.0):
    return Polygon([(x0, y0), (x0 + size, y0), (x0 + size, y0 + size), (x0, y0 + size)])


def test_district_features_from_a_projected_layer_and_none_for_plain_geojson(tmp_path):
    write_layer(tmp_path / "districts.gpkg", [square(690_000, 5_335_000)], [{"district_id": "a"}], "EPSG:25832", "GPKG")
    features, file, problems, notes = city_inputs.district_features(tmp_path, None)
    assert problems == [] and file == "districts.gpkg" and features[0]["properties"]["district_id"] == "a"
    lon, lat = TO_WGS.transform(690_000, 5_335_000)
    assert np.allclose(features[0]["geometry"]["coordinates"][0][0], [lon, lat], atol=1e-9)
    assert "EPSG:25832" in notes[0]

    plain = tmp_path / "plain"
    plain.mkdir()
    write_geojson(plain / "districts.geojson", [Polygon([(11, 48), (11.01, 48), (11.01, 48.01)])], [{"district_id": "a"}])
    assert city_inputs.district_features(plain, "EPSG:25832")[0] is None


def test_two_district_files_are_refused(tmp_path):
    write_layer(tmp_path / "districts.gpkg", [square(690_000, 5_335_000)], [{"district_id": "a"}], "EPSG:25832", "GPKG")
    write_geojson(tmp_path / "districts.geojson", [square(690_000, 5_335_000)], [{"district_id": "a"}], "EPSG:25832")
    _, _, problems, _ = city_inputs.district_features(tmp_path, None)
    assert "in 2 files" in problems[0].message


def test_project_xy_cells_matches_pyproj_and_reports_bad_pairs():
    cells = pd.DataFrame({"well_id": ["w1", "w2", "w3"], "x": ["691000", "abc", ""], "y": ["5336000", "1", ""]})
    out, problems = city_inputs.project_xy_cells(cells, "wells.csv", [2, 3, 4], "EPSG:25832")
    lon, lat = TO_WGS.transform(691000.0, 5336000.0)
    assert float(out.loc[0, "lon"]) == pytest.approx(lon, abs=1e-12) and float(out.loc[0, "lat"]) == pytest.approx(lat, abs=1e-12)
    assert "x" not in out.columns and out.loc[2, "lon"] == ""
    assert [(p.row, p.column) for p in problems] == [(3, "x")]


def test_xy_without_declared_crs_asks_for_it():
    cells = pd.DataFrame({"x": ["691000"], "y": ["5336000"]})
    _, problems = city_inputs.project_xy_cells(cells, "buildings.csv", [2], None)
    assert "[gis] crs" in problems[0].message


def test_weather_temperature_in_file_order_and_row_mismatch(tmp_path):
    (tmp_path / "weather.epw").write_text(epw_text(2019))
    values, station, problems = city_inputs.weather_temperature(tmp_path, 8760)
    assert problems == [] and "Examplestadt" in station
    np.testing.assert_allclose(values, temperatures(8760))
    values, _, problems = city_inputs.weather_temperature(tmp_path, 8784)
    assert values is None and "8760 hours but hourly.csv has 8784" in problems[0].message


def test_typology_demand_for_buildings_by_hand(tmp_path):
    """Hand calculation with a folder's own table: 100 kWh/(m² a) + 10 x 1000 m² = 110 MWh/a; metered 50 wins."""
    (tmp_path / "building_typology.csv").write_text(
        "use,period,built_from,built_to,space_heat_kwh_per_m2_a,hot_water_kwh_per_m2_a\nhouse,all,,,100,10\n"
    )
    frame = pd.DataFrame({
        "use": ["house", "house", "shed"],
        "construction_year": [1950.0, 1950.0, np.nan],
        "heated_area_m2": [1000.0, 1000.0, np.nan],
        "heat_demand_mwh_per_a": [np.nan, 50.0, np.nan],
    })
    demand, problems = city_inputs.typology_demand_for(tmp_path, frame, "buildings.csv", [2, 3, 4])
    assert demand[:2].tolist() == pytest.approx([110.0, 50.0])
    assert [(p.row, p.column) for p in problems] == [(4, "heat_demand_mwh_per_a")]
    assert city_inputs.typology_demand_for(tmp_path, frame[["heat_demand_mwh_per_a"]], "b", [2, 3, 4]) == (None, [])
