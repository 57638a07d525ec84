"""Tests of engine.outputs.maps: folium and SVG district maps of the hand-built two-district result."""

from __future__ import annotations

import re

import numpy as np
import pandas as pd
import pytest
from plotly.colors import sequential

from engine.scenario.inputs import Aquifer, CostCase, Prices, Scenario, Settings
from engine.outputs.maps import district_map, district_values, svg_district_map, well_values
from engine.outputs.palette import WELL_LIMIT_BINDS_COLOR, technology_colors, to_hex
from test_figures import DISTRICTS, TECHNOLOGIES, synthetic_result, two_runs

NORTH = {"type": "Polygon", "coordinates": [[[11.00, 48.01], [11.02, 48.01], [11.02, 48.02], [11.00, 48.02],
                                             [11.00, 48.01]]]}
SOUTH = {"type": "MultiPolygon", "coordinates": [[[[11.00, 48.00], [11.02, 48.00], [11.02, 48.01], [11.00, 48.01],
                                                   [11.00, 48.00]]]]}


def synthetic_scenario(names=DISTRICTS) -> Scenario:
    """The scenario of the hand-built result: two districts (a Polygon and a MultiPolygon), two well doublets."""
    districts = pd.DataFrame({"district_id": [d for d, _ in names], "name": [n for _, n in names],
                              "heat_demand_mwh_per_a": [1.0, 1.0], "cooling_demand_mwh_per_a": [0.0, 0.0],
                              "supply_temp_c": [60.0, 60.0], "hot_water_share": [0.15, 0.15],
                              "network_available": [False, False], "network_connection_limit_kw": [0.0, 0.0],
                              "geometry": [NORTH, SOUTH]})
    wells = pd.DataFrame({"well_id": ["w-<1>", "w-2"], "district_id": ["north", "north"],
                          "lon": [11.005, 11.015], "lat": [48.015, 48.015],
                          "reinjection_lon": [11.006, 11.016], "reinjection_lat": [48.0145, 48.0145],
                          "permit_flow_m3_per_h": [50.0, 80.0], "permit_annual_volume_m3": [np.nan, 2e5],
                          "design_spread_k": [5.0, 5.0], "groundwater_temp_c": [11.0, 11.0],
                          "groundwater_temp_amplitude_k": [0.5, 0.5], "coldest_day_of_year": [80, 80]})
    return Scenario(settings=Settings(name="Synthetic <town>"), prices=Prices(), aquifer=Aquifer(),
                    districts=districts, technologies=TECHNOLOGIES.copy(),
                    district_technologies=pd.DataFrame(columns=["district_id", "technology_id", "existing_kw",
                                                                "potential_kw"]),
                    wells=wells, hourly=pd.DataFrame({"hour": np.arange(8760)}),
                    cost_cases={"reference": CostCase(), "high_co2": CostCase(name="high_co2", co2_eur_per_t=250.0)})


def result_with_wells(**kwargs):
    """The hand-built result with a wells table (object dtype, as the engine writes it): w-2 gives 4 x the heat
    of w-<1> and its flow limit binds."""
    result = synthetic_result(**kwargs)
    result.tables["wells"] = pd.DataFrame(
        {"well_id": ["w-<1>", "w-2"], "district_id": ["north", "north"], "heat_mwh_per_a": [100.0, 400.0],
         "cooling_mwh_per_a": [0.0, 0.0], "peak_flow_share": [0.4, 1.0], "min_reinjection_temp_c": [6.0, 4.5],
         "max_reinjection_temp_c": [9.0, 8.0], "flow_limit_binds": [False, True],
         "volume_limit_binds": [False, False]}, dtype=object)
    return result


def test_map_escapes_every_district_name():
    """A district named <script>alert(1)</script> appears only escaped, in popup, tooltip and nowhere raw
    (OWASP XSS prevention: HTML-encode untrusted data in HTML content, common practice)."""
    html = district_map(synthetic_scenario(), result_with_wells()).get_root().render()
    assert "<script>alert(1)</script>" not in html
    assert "&lt;script&gt;alert(1)&lt;/script&gt;" in html
    assert "North &lt;b&gt;Quarter&lt;/b&gt;" in html
    assert "w-&lt;1&gt;" in html and "Well w-<1>" not in html


def test_map_escapes_javascript_template_characters():
    """folium puts popups into JavaScript template literals: a name with a backtick and ${...} must not end the
    literal or run code (ECMAScript template literal syntax)."""
    names = (("north", "`${alert(2)}`"), ("south", "plain"))
    html = district_map(synthetic_scenario(names), synthetic_result(names=names)).get_root().render()
    assert "${alert(2)}" not in html and "`${" not in html
    assert "&#96;&#36;{alert(2)}&#96;" in html


def test_main_supply_colours_and_legend():
    """Districts take the palette colour of their main supply; the legend names them and carries the wells'
    screening caution (project rule: cautions wherever well results are shown)."""
    result = result_with_wells()
    values, legend = district_values(synthetic_scenario(), result, "main_supply")
    colors = technology_colors(TECHNOLOGIES)
    main = result.tables["districts"].set_index("district_id")["main_supply"]
    assert list(values["color"]) == [colors[main["north"]], colors[main["south"]]]
    html = district_map(synthetic_scenario(), result).get_root().render()
    for color in values["color"]:
        assert color in html
    assert "screening estimate" in html
    assert "Air heat pump" in html and "Oil &amp;amp; co boiler" not in html and "Oil &amp; co boiler" in html


def test_continuous_measure_uses_the_ends_of_the_cividis_ramp():
    """The cheapest district gets the first and the dearest the last colour of cividis (Nuñez et al. 2018;
    values from plotly.colors.sequential.Cividis, the reference library)."""
    result = synthetic_result()
    values, legend = district_values(synthetic_scenario(), result, "levelised_cost_eur_per_mwh")
    cost = result.tables["districts"]["levelised_cost_eur_per_mwh"].to_numpy()
    low, high = int(np.argmin(cost)), int(np.argmax(cost))
    assert values["color"][low] == to_hex(sequential.Cividis[0])
    assert values["color"][high] == to_hex(sequential.Cividis[-1])
    assert legend["vmin"] == pytest.approx(cost.min()) and legend["unit"] == "€/MWh"


def test_change_of_cost_is_centred_on_zero():
    """Diverging ramp: the district with the largest change gets an end colour, a district with no change the
    neutral middle of ColorBrewer RdBu, rgb(247,247,247) (Harrower & Brewer 2003, via plotly.colors)."""
    runs = two_runs()
    values, legend = district_values(synthetic_scenario(), runs["more heat pumps"], "change_total_cost",
                                     baseline=runs["reference"])
    delta = (runs["more heat pumps"].tables["districts"]["total_cost_eur_per_a"]
             - runs["reference"].tables["districts"]["total_cost_eur_per_a"]).to_numpy()
    assert delta[0] == pytest.approx(0.0) and abs(delta[1]) > 0
    assert values["color"][0] == "#F7F7F7"
    assert legend["vmax"] == pytest.approx(abs(delta[1]))
    with pytest.raises(ValueError, match="baseline"):
        district_values(synthetic_scenario(), runs["reference"], "change_total_cost")
    with pytest.raises(ValueError, match="measure"):
        district_values(synthetic_scenario(), runs["reference"], "heat")


def test_well_markers_area_scales_with_heat_and_binding_outline():
    """Marker area ∝ annual heat (radius - minimum ∝ sqrt(heat), a proportional-symbol map, common practice):
    4 x the heat gives 2 x the radius above the minimum; the binding well is outlined in vermillion."""
    wells = well_values(synthetic_scenario(), result_with_wells())
    extra = wells["radius_px"].to_numpy(float) - 4.0
    assert extra[1] / extra[0] == pytest.approx(2.0)
    assert list(wells["binds"]) == [False, True]
    html = district_map(synthetic_scenario(), result_with_wells()).get_root().render()
    assert WELL_LIMIT_BINDS_COLOR in html
    assert "permitted flow binds" in html and "4.5 to 8.0 °C" in html
    assert "Reinjection well of w-&lt;1&gt;" in html
    assert html.count("L.polyline") == 2


def test_offline_by_default_and_plume_layer():
    """tiles=False adds no tile layer (no tile server address); plume outlines go to a 'Plumes' layer, dashed."""
    scenario, result = synthetic_scenario(), result_with_wells()
    plain = district_map(scenario, result).get_root().render()
    assert "L.tileLayer" not in plain
    assert "L.tileLayer" in district_map(scenario, result, tiles=True).get_root().render()
    plume = {"well_id": "w-2", "level_k": 1.0,
             "coordinates": [(11.016, 48.0145), (11.019, 48.0140), (11.019, 48.0150), (11.016, 48.0145)]}
    html = district_map(scenario, result, plume_polygons=[plume]).get_root().render()
    assert '"Plumes"' in html and '"dashArray": "6 4"' in html
    assert re.search(r"L\.control\.layers", html)
    with pytest.raises(ValueError, match="plume_polygons"):
        district_map(scenario, result, plume_polygons=[{"well_id": "x"}])


def test_map_without_result_draws_grey_districts():
    values, legend = district_values(synthetic_scenario(), None)
    assert set(values["color"]) == {"#DDDDDD"} and legend["no_data"]
    assert "<i>No result for this district.</i>" in values["popup"][0]


def test_svg_map_is_self_contained_and_escaped():
    """The SVG map holds a path per district in its colour, no script and no external reference."""
    svg = svg_district_map(synthetic_scenario(), result_with_wells(), title="Main <supply>")
    assert "<script" not in svg and "http" not in svg
    assert svg.count("<path") == 2
    assert "&lt;script&gt;alert(1)&lt;/script&gt;" in svg and "Main &lt;supply&gt;" in svg
    values, _ = district_values(synthetic_scenario(), result_with_wells())
    for color in values["color"]:
        assert f"fill='{color}'" in svg
