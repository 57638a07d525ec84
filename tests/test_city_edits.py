"""Editing a planner's own city on the set-up page: districts, proposed well doublets, prices, heat density.

Each editor is checked the whole way round: edit -> scenario files (pages._support.edits.scenario_files_with_edits)
-> the engine's reader -> the value edited, and for a simple change the solved cost moves as a hand calculation
says. The pure functions are tested, not Streamlit.
"""

from __future__ import annotations

import csv
import io
import json
import math
import tempfile
from pathlib import Path

import numpy as np
import pandas as pd
import pyproj
import pytest

from engine.model.solve import solve_scenario
from engine.outputs.density_map import density_legend_html, district_density, setup_map
from engine.physics.typology import HEAT_DENSITY_CLASSES, HEAT_DENSITY_SOURCE, LINEAR_DENSITY_CLASSES
from engine.scenario.folder import validate_scenario
from engine.storage.store import read_scenario_files
from pages._support.city_edits import (
    CityEdits, PriceEdits, add_well_row, changed_districts, district_problems, editable_district_table,
    new_well_problems, price_problems, read_price_upload, well_row_from_click,
)
from pages._support.edits import (
    edited_scenario, editable_technology_table, editable_well_table, files_for_setup, initial_setup,
    scenario_files_with_edits,
)
from pages._support.inputs import demo_input_set, input_set_from_files, scenario_from_files

TINY_DIR = Path(__file__).parent / "fixtures" / "tiny_city"
WGS84_GEOD = pyproj.Geod(ellps="WGS84")


def _rows(content: bytes) -> list[dict]:
    return list(csv.DictReader(io.StringIO(content.decode("utf-8-sig"))))


@pytest.fixture(scope="module")
def tiny():
    inputs = input_set_from_files(read_scenario_files(TINY_DIR), "tiny city")
    assert inputs.ok, inputs.problems
    return inputs


def _edit(inputs, district_table=None, new_wells=None, prices=None):
    s = inputs.scenario
    return scenario_files_with_edits(inputs.files, editable_technology_table(s), editable_well_table(s), s,
                                     CityEdits(district_table, new_wells, prices))


# ============================================================================= a boiler-only city
BOILER_CITY_SQUARE = 0.01  # degrees


def _square(lon0, lat0, size=BOILER_CITY_SQUARE):
    ring = [[lon0, lat0], [lon0 + size, lat0], [lon0 + size, lat0 + size], [lon0, lat0 + size], [lon0, lat0]]
    return {"type": "Polygon", "coordinates": [ring]}


def boiler_city(gas_price=50.0, demand=(4000.0, 6000.0)) -> dict[str, bytes]:
    """Two districts heated only by gas boilers (efficiency 0.9, no investment, no CO2 price)."""
    features = [
        {"type": "Feature", "properties": {"district_id": f"d{k}", "heat_demand_mwh_per_a": q, "supply_temp_c": 70.0},
         "geometry": _square(9.0 + 0.02 * k, 51.0)}
        for k, q in enumerate(demand)
    ]
    temps = 8.0 - 10.0 * np.cos(2 * np.pi * (np.arange(8760) - 400) / 8760)
    hourly = "hour,outdoor_temp_c,electricity_price_eur_per_mwh,grid_co2_kg_per_mwh,network_price_eur_per_mwh," \
             "network_co2_kg_per_mwh\n" + "".join(f"{h},{t:.2f},100,300,80,100\n" for h, t in enumerate(temps))
    return {
        "scenario.toml": (
            '[run]\nname = "Boiler town"\ntarget_year = 2040\ntypical_days = 4\n\n'
            f"[prices]\ngas_eur_per_mwh = {gas_price}  # lower heating value\noil_eur_per_mwh = 70.0\n"
            "biomass_eur_per_mwh = 40.0\nco2_eur_per_t = 0.0\n"
        ).encode(),
        "districts.geojson": json.dumps({"type": "FeatureCollection", "features": features}).encode(),
        "technologies.csv": (
            "technology_id,name,kind,carrier,efficiency,investment_eur_per_kw,fixed_om_pct_per_a,"
            "variable_om_eur_per_mwh,lifetime_a\ngas_boiler,Gas boiler,fuel_boiler,gas,0.9,0,0,0,20\n"
        ).encode(),
        "hourly.csv": hourly.encode(),
    }


def _energy_cost(scenario) -> pd.Series:
    result = solve_scenario(scenario, "reference")
    assert result.solved, result.message
    supply = result.tables["supply"]
    return supply.groupby("district_id")["energy_eur_per_a"].sum()


def test_doubling_one_districts_demand_doubles_its_fuel_cost():
    """A boiler-only district burns demand / efficiency of gas, so its fuel cost is demand / 0.9 * price
    (hand calculation, the boiler efficiency definition on lower heating value); doubling the demand in the district
    editor doubles it and leaves the other district alone."""
    inputs = input_set_from_files(boiler_city(), "boiler town")
    assert inputs.ok, inputs.problems
    table = editable_district_table(inputs.scenario)
    table.loc[0, "heat_demand_mwh_per_a"] = 8000.0
    files = _edit(inputs, district_table=table)
    edited, problems = scenario_from_files(files)
    assert problems == []
    assert edited.districts["heat_demand_mwh_per_a"].tolist() == [8000.0, 6000.0]
    before, after = _energy_cost(inputs.scenario), _energy_cost(edited)
    assert before["d0"] == pytest.approx(4000.0 / 0.9 * 50.0, rel=1e-6)
    assert after["d0"] == pytest.approx(8000.0 / 0.9 * 50.0, rel=1e-6)
    assert after["d1"] == pytest.approx(before["d1"], rel=1e-9)


def test_a_gas_price_factor_scales_the_fuel_cost_like_the_hand_calculation():
    """Gas at 50 €/MWh times 1.3 in the price editor is 65 €/MWh in scenario.toml (its comment kept), and the fuel
    cost of 10 000 MWh/a of boiler heat at efficiency 0.9 is 10 000 / 0.9 * 65 (hand calculation)."""
    inputs = input_set_from_files(boiler_city(), "boiler town")
    files = _edit(inputs, prices=PriceEdits(factors={"gas": 1.3}))
    assert "gas_eur_per_mwh = 65.0  # lower heating value" in files["scenario.toml"].decode()
    edited, problems = scenario_from_files(files)
    assert problems == []
    assert edited.prices.gas_eur_per_mwh == pytest.approx(65.0)
    assert _energy_cost(edited).sum() == pytest.approx(10_000.0 / 0.9 * 65.0, rel=1e-6)


# ============================================================================= districts
def test_district_edits_are_read_back_by_the_reader(tiny):
    """Every editable column written into districts.geojson comes back from the reader as edited; a blank
    connection limit is no limit (the limit rule of docs/input_format.md)."""
    table = editable_district_table(tiny.scenario)
    table.loc[0, ["hot_water_share", "supply_temp_c", "hot_water_temp_c"]] = [0.2, 65.0, 58.0]
    table.loc[0, "network_connection_limit_kw"] = np.nan
    table.loc[1, "network_available"] = False
    table.loc[1, "network_connection_limit_kw"] = 0.0
    assert district_problems(tiny.scenario, table, tiny.files) == []
    files = _edit(tiny, district_table=table)
    reread, problems = scenario_from_files(files)
    assert problems == []
    got = editable_district_table(reread)
    pd.testing.assert_frame_equal(got, table)
    assert math.isinf(reread.districts["network_connection_limit_kw"].iloc[0])
    assert len(changed_districts(tiny.scenario, table)) == 5  # riverside had no network already
    untouched = _edit(tiny, district_table=editable_district_table(tiny.scenario))
    assert untouched == tiny.files  # no edit, no rewrite (common practice: saving an unchanged form)


def test_district_demand_with_buildings_writes_the_polygon_part(tiny):
    """Demand in the editor is the district's total, buildings.csv included (the reader adds the buildings in);
    the polygon keeps total minus the buildings, so reading back gives the total typed."""
    scenario = tiny.scenario
    stated = {f["properties"]["district_id"]: f["properties"]["heat_demand_mwh_per_a"]
              for f in json.loads(tiny.files["districts.geojson"])["features"]}
    totals = dict(zip(scenario.districts["district_id"], scenario.districts["heat_demand_mwh_per_a"]))
    with_buildings = next(d for d in totals if totals[d] > stated[d])
    buildings = totals[with_buildings] - stated[with_buildings]
    table = editable_district_table(scenario)
    row = int(np.flatnonzero(table["district_id"] == with_buildings)[0])
    table.loc[row, "heat_demand_mwh_per_a"] = totals[with_buildings] + 1000.0
    reread, _ = scenario_from_files(_edit(tiny, district_table=table))
    assert reread.districts["heat_demand_mwh_per_a"].iloc[row] == pytest.approx(totals[with_buildings] + 1000.0)
    table.loc[row, "heat_demand_mwh_per_a"] = buildings / 2
    problems = district_problems(scenario, table, tiny.files)
    assert any(p.row == row + 1 and "buildings.csv" in p.message and p.is_error for p in problems)


@pytest.mark.parametrize("column, value, words", [
    ("supply_temp_c", 150.0, "<= 130"),
    ("hot_water_share", 1.5, "<= 1"),
    ("heat_demand_mwh_per_a", np.nan, "is blank"),
    ("heat_demand_mwh_per_a", -5.0, ">= 0"),
    ("hot_water_temp_c", "warm", "number"),
])
def test_bad_district_cells_get_the_readers_message(tiny, column, value, words):
    """The same bad value in the editor and in districts.geojson gives the same message, naming the district and
    the column (the reader's own rules, engine.scenario.districts.DISTRICT_PROPERTIES)."""
    table = editable_district_table(tiny.scenario).astype({column: object})
    table.loc[1, column] = value
    problems = district_problems(tiny.scenario, table, tiny.files)
    assert [(p.file, p.row, p.column) for p in problems if p.is_error] == [("district table", 2, column)]
    message = next(p.message for p in problems if p.is_error)
    assert message.startswith(f"district '{tiny.scenario.districts['district_id'].iloc[1]}': ") and words in message
    # the same cell in the file: the reader's message after the district label is the same text
    data = json.loads(tiny.files["districts.geojson"])
    data["features"][1]["properties"][column] = None if isinstance(value, float) and math.isnan(value) else value
    _, file_problems = scenario_from_files({**tiny.files, "districts.geojson": json.dumps(data).encode()})
    file_message = next(p.message for p in file_problems if p.column == column)
    assert file_message.split(": ", 1)[1].replace("is missing or null", "is blank") == message.split(": ", 1)[1]


def test_network_without_a_usable_limit_gets_the_validate_warning(tiny):
    """network_available with a limit of 0 kW: the warning python -m engine validate gives for the file."""
    table = editable_district_table(tiny.scenario)
    table.loc[1, "network_available"] = True
    table.loc[1, "network_connection_limit_kw"] = 0.0
    problems = district_problems(tiny.scenario, table, tiny.files)
    warnings = [p for p in problems if not p.is_error]
    assert len(warnings) == 1 and warnings[0].column == "network_connection_limit_kw" and warnings[0].row == 2
    files = _edit(tiny, district_table=table)
    reread, load_problems = scenario_from_files(files)
    assert reread is not None
    with tempfile.TemporaryDirectory() as folder:  # the check of python -m engine validate on the written folder
        for name, content in files.items():
            (Path(folder) / name).write_bytes(content)
        validated = validate_scenario(folder)
    file_warning = next(p for p in validated if p.column == "network_connection_limit_kw" and not p.is_error)
    assert file_warning.message.split(": ", 1)[1] == warnings[0].message.split(": ", 1)[1]


# ============================================================================= proposed doublets
def test_a_click_inside_a_district_gives_a_well_row_in_that_district(tiny):
    """A click at (11.005, 48.005), the middle of the 'old_town' square of the tiny city, proposes a doublet in
    old_town (point in polygon: shapely); defaults where engine.scenario.defaults has one, blanks elsewhere."""
    row, sentence = well_row_from_click(tiny.scenario, 11.005, 48.005)
    assert row["district_id"] == "old_town" and "Old town" in sentence
    assert (row["lon"], row["lat"]) == (11.005, 48.005)
    assert row["groundwater_temp_amplitude_k"] == 0.0
    assert math.isnan(row["permit_annual_volume_m3"])  # no annual limit
    assert all(math.isnan(row[c]) for c in ("permit_flow_m3_per_h", "design_spread_k", "groundwater_temp_c"))
    assert row["well_id"] not in set(tiny.scenario.wells["well_id"])
    second, _ = well_row_from_click(tiny.scenario, 11.006, 48.006, [row["well_id"]])
    assert second["well_id"] != row["well_id"]
    outside, why = well_row_from_click(tiny.scenario, 12.5, 47.0)
    assert outside is None and "outside every district" in why


def test_a_new_doublet_is_written_to_wells_csv_and_read_back(tiny):
    """The filled-in row reaches scenario.wells through wells.csv; its blank reinjection well lies
    reinjection_offset_m down-gradient (distance by pyproj.Geod on the WGS 84 ellipsoid)."""
    row, _ = well_row_from_click(tiny.scenario, 11.005, 48.005)
    table = add_well_row(None, row)
    assert [p.column for p in new_well_problems(tiny.scenario, table)] == [
        "permit_flow_m3_per_h", "design_spread_k", "groundwater_temp_c"]
    table.loc[0, ["permit_flow_m3_per_h", "design_spread_k", "groundwater_temp_c"]] = [35.0, 4.0, 10.8]
    assert new_well_problems(tiny.scenario, table, tiny.files) == []
    files = _edit(tiny, new_wells=table)
    reread, problems = scenario_from_files(files)
    assert problems == []
    well = reread.wells.set_index("well_id").loc[row["well_id"]]
    assert well["district_id"] == "old_town" and well["permit_flow_m3_per_h"] == 35.0
    assert math.isinf(well["permit_annual_volume_m3"])
    _, _, distance = WGS84_GEOD.inv(well["lon"], well["lat"], well["reinjection_lon"], well["reinjection_lat"])
    assert distance == pytest.approx(reread.aquifer.reinjection_offset_m, rel=5e-3)  # the reader offsets on a local plane
    assert len(reread.wells) == len(tiny.scenario.wells) + 1


def test_a_new_doublet_in_a_projected_wells_csv_is_written_in_x_and_y(tiny):
    """A wells.csv in x/y of [gis] crs (EPSG:32632, UTM 32N) gets the new row in x/y too, projected with pyproj;
    reading back gives the clicked lon/lat."""
    utm = pyproj.Transformer.from_crs("EPSG:4326", "EPSG:32632", always_xy=True)
    rows = _rows(tiny.files["wells.csv"])
    out = io.StringIO()
    writer = csv.writer(out, lineterminator="\n")
    writer.writerow(["well_id", "district_id", "x", "y", "permit_flow_m3_per_h", "design_spread_k",
                     "groundwater_temp_c"])
    for r in rows:
        x, y = utm.transform(float(r["lon"]), float(r["lat"]))
        writer.writerow([r["well_id"], r["district_id"], repr(x), repr(y), r["permit_flow_m3_per_h"],
                         r["design_spread_k"], r["groundwater_temp_c"]])
    files = {**tiny.files, "wells.csv": out.getvalue().encode(),
             "scenario.toml": tiny.files["scenario.toml"] + b'\n[gis]\ncrs = "EPSG:32632"\n'}
    projected = input_set_from_files(files, "tiny city in UTM")
    assert projected.ok, projected.problems
    row, _ = well_row_from_click(projected.scenario, 11.005, 48.005)
    table = add_well_row(None, row)
    table.loc[0, ["permit_flow_m3_per_h", "design_spread_k", "groundwater_temp_c"]] = [35.0, 4.0, 10.8]
    written = _edit(projected, new_wells=table)
    last = _rows(written["wells.csv"])[-1]
    assert "lon" not in last and (float(last["x"]), float(last["y"])) == pytest.approx(utm.transform(11.005, 48.005))
    reread, problems = scenario_from_files(written)
    assert problems == []
    well = reread.wells.set_index("well_id").loc[row["well_id"]]
    assert (well["lon"], well["lat"]) == pytest.approx((11.005, 48.005), abs=1e-7)


def test_bad_new_doublets_get_the_readers_messages(tiny):
    row, _ = well_row_from_click(tiny.scenario, 11.005, 48.005)
    table = add_well_row(None, row)
    table.loc[0, ["permit_flow_m3_per_h", "design_spread_k", "groundwater_temp_c"]] = [35.0, 0.0, 55.0]
    table.loc[0, "well_id"] = "w1"  # already in wells.csv
    problems = new_well_problems(tiny.scenario, table)
    assert {p.column for p in problems} == {"design_spread_k", "groundwater_temp_c", "well_id"}
    assert all(p.file == "new well table" and p.row == 1 and p.message.startswith("well 'w1': ") for p in problems)
    with pytest.raises(Exception):
        _edit(tiny, new_wells=table)


# ============================================================================= prices
def test_an_uploaded_electricity_series_replaces_the_hourly_column(tiny):
    """An uploaded CSV (hour, electricity_price_eur_per_mwh) replaces hourly.csv's column, times the factor."""
    n = len(tiny.scenario.hourly)
    prices = 40.0 + 20.0 * np.sin(np.arange(n) / 24.0)
    upload = "hour,electricity_price_eur_per_mwh\n" + "".join(f"{h},{float(p)!r}\n" for h, p in enumerate(prices))
    values, problems = read_price_upload(upload.encode(), "tariff.csv", "electricity", n)
    assert problems == []
    edits = PriceEdits(factors={"electricity": 0.5}, uploads={"electricity": ("tariff.csv", values)})
    reread, load_problems = scenario_from_files(_edit(tiny, prices=edits))
    assert load_problems == []
    np.testing.assert_allclose(reread.hourly["electricity_price_eur_per_mwh"].to_numpy(), prices * 0.5, rtol=1e-12)
    np.testing.assert_array_equal(reread.hourly["network_price_eur_per_mwh"], tiny.scenario.hourly[
        "network_price_eur_per_mwh"])


def test_a_bad_price_upload_names_file_row_and_column(tiny):
    n = len(tiny.scenario.hourly)
    lines = ["hour,electricity_price_eur_per_mwh"] + [f"{h},50" for h in range(n)]
    lines[101] = "100,cheap"
    values, problems = read_price_upload("\n".join(lines).encode(), "tariff.csv", "electricity", n)
    assert values is None
    assert [(p.file, p.row, p.column) for p in problems] == [("tariff.csv", 102, "electricity_price_eur_per_mwh")]
    short, problems = read_price_upload(b"hour,electricity_price_eur_per_mwh\n0,50\n", "short.csv", "electricity", n)
    assert short is None and "8760" in problems[0].message and problems[0].file == "short.csv"
    _, problems = read_price_upload(b"hour,price\n0,50\n", "named.csv", "electricity", n)
    assert problems[0].column == "electricity_price_eur_per_mwh" and "missing" in problems[0].message
    assert [p.column for p in price_problems(tiny.scenario, PriceEdits(factors={"gas": -1.0}))] == ["factor"]


def test_files_for_setup_carries_every_editor(tiny):
    """The files a run is saved and downloaded with carry the edits of all editors kept in hm_setup."""
    setup = initial_setup(tiny)
    setup["district_table"].loc[0, "supply_temp_c"] = 66.0
    setup["prices"].factors["oil"] = 2.0
    row, _ = well_row_from_click(tiny.scenario, 11.005, 48.005)
    setup["new_wells"] = add_well_row(None, row)
    setup["new_wells"].loc[0, ["permit_flow_m3_per_h", "design_spread_k", "groundwater_temp_c"]] = [30.0, 4.0, 11.0]
    files = files_for_setup(tiny.files, setup, tiny.scenario)
    edited, solved_files, problems = edited_scenario(
        tiny.files, tiny.scenario, setup["technology_table"], setup["well_table"],
        CityEdits.from_setup(setup))
    assert problems == [] and solved_files == files
    assert edited.districts["supply_temp_c"].iloc[0] == 66.0
    assert edited.prices.oil_eur_per_mwh == 150.0
    assert row["well_id"] in set(edited.wells["well_id"])


# ============================================================================= heat density
def test_heat_density_against_a_hand_calculation():
    """A 0.01° square at 51° N: 0.01° of latitude is 1 113 m and of longitude 1 113 m * cos(51.005°) = 700 m on a
    sphere of radius 6 371 km (hand calculation; the engine uses the WGS 84 ellipsoid, hence 0.5 %).
    4 000 MWh/a on 77.9 ha is 51.3 MWh/(ha a): the lowest class; 60 000 MWh/a is 770 MWh/(ha a): the highest."""
    inputs = input_set_from_files(boiler_city(demand=(4000.0, 60_000.0)), "boiler town")
    side = 6_371_000.0 * math.radians(BOILER_CITY_SQUARE)
    area_ha = side * side * math.cos(math.radians(51.0 + BOILER_CITY_SQUARE / 2)) / 10_000.0
    table = district_density(inputs.scenario)
    assert table["land_area_ha"].to_numpy() == pytest.approx([area_ha, area_ha], rel=5e-3)
    assert table["heat_density_mwh_per_ha_a"].to_numpy() == pytest.approx(
        [4000.0 / area_ha, 60_000.0 / area_ha], rel=5e-3)
    assert table["class_index"].tolist() == [0, len(HEAT_DENSITY_CLASSES) - 1]
    assert table["heat_density_class"].iloc[0] == HEAT_DENSITY_CLASSES[0].label
    # the edited demand moves the class before any file is written: 20 000 MWh/a is 257 MWh/(ha a)
    edited = district_density(inputs.scenario, [20_000.0, 60_000.0])
    assert edited["class_index"].iloc[0] == 2
    assert len(set(table["color"])) == 2


def test_density_legend_states_the_class_bounds_and_source(tiny):
    legend = density_legend_html()
    for c in HEAT_DENSITY_CLASSES:
        assert c.label.split(":")[0] in legend
    assert "Leitfaden" in legend and HEAT_DENSITY_SOURCE.split(";")[0] in legend
    html = setup_map(tiny.scenario).get_root().render()
    assert "Heat density" in html and "Proposed doublets" not in html


def test_the_demo_city_round_trips_without_edits():
    """No edit in any editor: the files come back byte for byte."""
    demo = demo_input_set()
    setup = initial_setup(demo)
    assert files_for_setup(demo.files, setup, demo.scenario) == demo.files


def test_a_saved_run_keeps_the_edited_files_and_reproduces_its_cost(tmp_path):
    """Solve a demand edit through the page's path (edited_scenario, solve_with_cache), save it, read its input
    files back from the library: the reader gives the edited demand, and solving those files again gives the
    same total cost (a run can be reproduced from what was saved)."""
    from engine.storage.store import ScenarioStore
    from pages._support.cache import solve_with_cache

    inputs = input_set_from_files(boiler_city(), "boiler town")
    setup = initial_setup(inputs)
    setup["district_table"].loc[1, "heat_demand_mwh_per_a"] = 9000.0
    edited, files, problems = edited_scenario(inputs.files, inputs.scenario, setup["technology_table"],
                                              setup["well_table"], CityEdits.from_setup(setup))
    assert problems == []
    run, _ = solve_with_cache({}, "edited", edited, files, inputs.label, "reference", "cost", 0.0, 4)
    assert run.result.solved
    with ScenarioStore(tmp_path / "store.sqlite") as store:
        run_id = store.save_run(run.result, "edited demand", inputs=run.files)
        saved = store.load_inputs(run_id)
    reread, load_problems = scenario_from_files(saved)
    assert load_problems == []
    assert reread.districts["heat_demand_mwh_per_a"].tolist() == [4000.0, 9000.0]
    again = solve_scenario(reread, "reference")
    assert again.total_cost_eur_per_a == pytest.approx(run.result.total_cost_eur_per_a, rel=1e-9)
    assert again.total_cost_eur_per_a == pytest.approx(13_000.0 / 0.9 * 50.0, rel=1e-6)


# ============================================================================= linear heat density
def _with_street_lengths(files: dict[str, bytes], lengths: dict[str, object]) -> dict[str, bytes]:
    layer = json.loads(files["districts.geojson"])
    for feature in layer["features"]:
        did = feature["properties"]["district_id"]
        if did in lengths:
            feature["properties"]["street_length_m"] = lengths[did]
    return {**files, "districts.geojson": json.dumps(layer).encode()}


def test_linear_heat_density_from_the_districts_street_length_by_hand():
    """Linear heat density = annual heat demand / street length (hand calculation): 4 000 MWh/a over 5 000 m is
    0.8 MWh/(m a), the middle class (0.5-1.5); 6 000 MWh/a with no length given has no linear density. The map
    gains the layer, off at first, and the legend names the linear classes."""
    files = _with_street_lengths(boiler_city(), {"d0": 5000})
    inputs = input_set_from_files(files, "boiler town")
    assert inputs.ok, inputs.problems
    lengths = inputs.scenario.districts["street_length_m"].to_numpy(float)
    assert lengths[0] == 5000.0 and np.isnan(lengths[1])
    table = district_density(inputs.scenario)
    assert table["linear_heat_density_mwh_per_m_a"].iloc[0] == pytest.approx(4000.0 / 5000.0)
    assert np.isnan(table["linear_heat_density_mwh_per_m_a"].iloc[1])
    assert table["linear_heat_density_class"].iloc[0] == LINEAR_DENSITY_CLASSES[1].label
    # the edited demand moves the linear class too: 10 000 MWh/a over 5 000 m is 2.0 MWh/(m a)
    edited = district_density(inputs.scenario, [10_000.0, 6000.0])
    assert edited["linear_heat_density_class"].iloc[0] == LINEAR_DENSITY_CLASSES[2].label
    html = setup_map(inputs.scenario).get_root().render()
    assert "Linear heat density" in html and LINEAR_DENSITY_CLASSES[1].label.split(":")[0] in html
    plain = setup_map(input_set_from_files(boiler_city(), "boiler town").scenario).get_root().render()
    assert "Linear heat density" not in plain


@pytest.mark.parametrize("value", [0, -10, "long"])
def test_a_bad_street_length_names_the_district_and_the_column(value):
    inputs = input_set_from_files(_with_street_lengths(boiler_city(), {"d1": value}), "boiler town")
    assert not inputs.ok
    text = " ".join(inputs.problems.astype(str).to_numpy().ravel())
    assert "street_length_m" in text and "d1" in text and "districts.geojson" in text
