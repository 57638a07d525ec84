"""District screening of the tiny city against a hand calculation with pyproj's geodesic area as reference.

Hand calculation: heat density = annual heat demand [MWh/a] / (land area [m²] / 10 000); the land area of each
district is checked against pyproj.Geod (WGS 84 ellipsoid) to 0.5 % (the reader's local equirectangular area
differs from the geodesic one by far less over a 1 km square, common practice for city-sized shapes).
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pyproj
import pytest
from shapely.geometry import shape

from engine.outputs.screening import district_screening
from engine.scenario import load_scenario

TINY = Path(__file__).resolve().parent / "fixtures" / "tiny_city"


def test_heat_density_of_the_tiny_city_by_hand():
    scenario = load_scenario(TINY)
    table = district_screening(scenario, {"old_town": 2500.0})
    geod = pyproj.Geod(ellps="WGS84")
    for row, (_, district) in zip(table.itertuples(), scenario.districts.iterrows()):
        area = abs(geod.geometry_area_perimeter(shape(district["geometry"]))[0])
        assert row.land_area_ha * 10_000 == pytest.approx(area, rel=5e-3)
        assert row.heat_density_mwh_per_ha_a == pytest.approx(district["heat_demand_mwh_per_a"] / (area / 10_000), rel=5e-3)
    old = table.set_index("district_id").loc["old_town"]
    assert old["linear_heat_density_mwh_per_m_a"] == pytest.approx(old["heat_demand_mwh_per_a"] / 2500.0)
    assert old["linear_heat_density_class"] != ""
    assert np.isnan(table.set_index("district_id").loc["riverside", "linear_heat_density_mwh_per_m_a"])
