"""Tests of the scenario reader (engine.scenario), its problem records (engine.scenario.problems) and geometry (engine.scenario.geometry).

The expected behaviour comes from the folder specification ``docs/input_format.md`` and the typed-input contract in
``engine/inputs.py``; geometric results are checked against textbook formulas (spherical zone area, haversine).
The tiny city is written by ``tests/fixtures/make_tiny_city.py``; its numbers are read back from its raw files
in the tests rather than restated.
"""

from __future__ import annotations

import csv
import importlib.util
import json
import math
import shutil
from pathlib import Path

import numpy as np
import pytest

from engine.scenario import geometry
from engine.scenario import folder as io
from engine.scenario import tables
from engine.scenario.files import OPTIONAL_FILES
from engine.scenario.tables import CELL_REPORT_LIMIT
from engine.scenario.well_table import WELL_COLUMNS
from engine.scenario.inputs import CostCase
from engine.scenario.problems import InputError, Problem, problems_frame

FIXTURES = Path(__file__).resolve().parent / "fixtures"
TINY = FIXTURES / "tiny_city"


def _load_generator():
    spec = importlib.util.spec_from_file_location("make_tiny_city", FIXTURES / "make_tiny_city.py")
    module = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(module)
    return module


city = _load_generator()


# ----------------------------------------------------------------------------- helpers
@pytest.fixture
def tiny(tmp_path: Path) -> Path:
    """A fresh copy of the tiny city to edit."""
    return Path(shutil.copytree(TINY, tmp_path / "tiny_city"))


@pytest.fixture(scope="module")
def scenario():
    return io.load_scenario(TINY)


def _rows(path: Path) -> list[dict]:
    with path.open(encoding="utf-8", newline="") as handle:
        return list(csv.DictReader(handle))


def _edit_cell(path: Path, sheet_row: int, column: str, value: str) -> None:
    """Set one cell, addressed as a spreadsheet shows it (header = row 1)."""
    with path.open(encoding="utf-8", newline="") as handle:
        records = list(csv.reader(handle))
    records[sheet_row - 1][records[0].index(column)] = value
    with path.open("w", encoding="utf-8", newline="") as handle:
        csv.writer(handle, lineterminator="\n").writerows(records)


def _edit_feature(path: Path, feature: int, key: str, value) -> None:
    """Set a property of feature number ``feature`` (first = 1); value None removes it."""
    data = json.loads(path.read_text(encoding="utf-8"))
    properties = data["features"][feature - 1]["properties"]
    if value is None:
        properties.pop(key, None)
    else:
        properties[key] = value
    path.write_text(json.dumps(data), encoding="utf-8")


def _replace(path: Path, old: str, new: str) -> None:
    text = path.read_text(encoding="utf-8")
    assert old in text, f"{old!r} not in {path.name}"
    path.write_text(text.replace(old, new, 1), encoding="utf-8")


def _find(problems: list[Problem], file: str, row, column, word: str) -> list[Problem]:
    return [p for p in problems if (p.file, p.row, p.column) == (file, row, column) and word in p.message]


def _haversine_m(lon1, lat1, lon2, lat2, radius=6_371_008.8):
    """Great-circle distance, haversine formula (R. W. Sinnott 1984, 'Virtues of the Haversine', Sky and
    Telescope 68(2), 159), on the GRS 80 mean-radius sphere."""
    p1, p2 = math.radians(lat1), math.radians(lat2)
    dp, dl = p2 - p1, math.radians(lon2 - lon1)
    a = math.sin(dp / 2) ** 2 + math.cos(p1) * math.cos(p2) * math.sin(dl / 2) ** 2
    return 2 * radius * math.asin(math.sqrt(a))


def _inside(bounds, lon, lat) -> bool:
    lon0, lat0, lon1, lat1 = bounds
    return lon0 <= lon <= lon1 and lat0 <= lat <= lat1


# ----------------------------------------------------------------------------- the tiny city loads
def test_fixture_files_match_their_generator(tmp_path):
    """The committed tiny city is exactly what make_tiny_city.py writes (common practice: generated fixtures are
    kept in step with their script)."""
    fresh = city.write(tmp_path / "fresh")
    for path in sorted(TINY.iterdir()):
        assert (fresh / path.name).read_bytes() == path.read_bytes(), path.name
    assert sorted(p.name for p in fresh.iterdir()) == sorted(p.name for p in TINY.iterdir())


def test_tiny_city_counts(scenario):
    """Counts follow the raw files: features of the GeoJSON, data rows of the CSVs, cases of the TOML
    (docs/input_format.md), and one row per district and technology in district_technologies (engine/inputs.py)."""
    features = json.loads((TINY / "districts.geojson").read_text(encoding="utf-8"))["features"]
    assert len(scenario.districts) == len(features) == 2
    assert len(scenario.wells) == len(_rows(TINY / "wells.csv")) == 3
    assert len(scenario.technologies) == len(_rows(TINY / "technologies.csv")) == 6
    assert scenario.n_hours == len(_rows(TINY / "hourly.csv")) == 8760
    assert list(scenario.hourly["hour"]) == list(range(8760))
    assert set(scenario.cost_cases) == {"reference", "high_co2"}
    assert len(scenario.district_technologies) == 2 * 6
    assert list(scenario.heat_demand_hourly_kw.columns) == ["riverside"]
    assert list(scenario.groundwater_temp_hourly_c.columns) == ["w2"]
    assert len(scenario.heat_demand_hourly_kw) == len(scenario.groundwater_temp_hourly_c) == 8760


def test_district_defaults_filled(scenario):
    """Blank district properties take the documented defaults: hot_water_share 0.15, network_available false,
    connection limit blank = no limit (inf), name = id (docs/input_format.md, table "Defaults")."""
    districts = scenario.districts.set_index("district_id")
    assert districts.loc["old_town", "hot_water_share"] == pytest.approx(0.15)  # null in the file
    assert districts.loc["riverside", "hot_water_share"] == pytest.approx(0.2)  # given
    assert not districts.loc["riverside", "network_available"]
    assert districts.loc["riverside", "network_connection_limit_kw"] == math.inf
    assert districts.loc["riverside", "name"] == "riverside"
    assert districts.loc["old_town", "name"] == "Old town"
    assert districts["network_available"].dtype == bool
    assert districts.loc["old_town", "geometry"]["type"] == "Polygon"


def test_technology_defaults_and_percent_units(scenario):
    """Blank technology cells take the defaults of engine/inputs.py (efficiency 1, grade 0.5, approaches 5 K and
    3 K); fixed O&M and store loss stay in percent as in the file; 'note' columns are dropped
    (docs/input_format.md; the note rule is the project's)."""
    raw = {row["technology_id"]: row for row in _rows(TINY / "technologies.csv")}
    tech = scenario.technologies.set_index("technology_id")
    assert tech.loc["air_hp", "efficiency"] == 1.0
    assert tech.loc["gw_hp", "cop_quality_grade"] == 0.5
    assert tech.loc["air_hp", "cop_quality_grade"] == float(raw["air_hp"]["cop_quality_grade"])
    assert (tech.loc["air_hp", "source_approach_k"], tech.loc["air_hp", "sink_approach_k"]) == (5.0, 3.0)
    assert (tech.loc["gw_hp", "source_approach_k"], tech.loc["gw_hp", "sink_approach_k"]) == (
        float(raw["gw_hp"]["source_approach_k"]),
        float(raw["gw_hp"]["sink_approach_k"]),
    )
    assert tech.loc["gas_boiler", "fixed_om_pct_per_a"] == float(raw["gas_boiler"]["fixed_om_pct_per_a"])
    assert tech.loc["tank", "store_loss_pct_per_h"] == float(raw["tank"]["store_loss_pct_per_h"])
    assert tech.loc["dh_connection", "name"] == "dh_connection"
    assert "note_source" not in scenario.technologies.columns
    numeric = scenario.technologies.drop(columns=["technology_id", "name", "kind", "carrier"])
    assert np.isfinite(numeric.to_numpy(dtype=float)).all()


def test_co2_factors_default_to_ipcc(scenario):
    """Without [co2_factors] the fuel factors are the IPCC 2006 defaults: natural gas 56 100 kg CO2/TJ and
    gas/diesel oil 74 100 kg CO2/TJ (IPCC 2006 Guidelines, vol. 2, ch. 2, table 2.2), 1 MWh = 0.0036 TJ."""
    assert scenario.prices.co2_kg_per_mwh["gas"] == pytest.approx(56_100 * 0.0036)
    assert scenario.prices.co2_kg_per_mwh["oil"] == pytest.approx(74_100 * 0.0036)


def test_district_technologies_filled_for_every_pair(scenario):
    """Pairs absent from district_technologies.csv get existing 0 and unlimited potential; a blank potential is
    unlimited, 0 rules a technology out; a blank existing is 0 (docs/input_format.md)."""
    table = scenario.district_technologies.set_index(["district_id", "technology_id"])
    assert table.index.is_unique
    assert table.loc[("old_town", "gas_boiler"), "existing_kw"] == 5000.0
    assert math.isinf(table.loc[("old_town", "gas_boiler"), "potential_kw"])
    assert table.loc[("old_town", "gw_hp"), "existing_kw"] == 0.0
    assert table.loc[("old_town", "gw_hp"), "potential_kw"] == 2000.0
    assert table.loc[("riverside", "dh_connection"), "potential_kw"] == 0.0
    assert table.loc[("riverside", "chiller"), "existing_kw"] == 0.0
    assert math.isinf(table.loc[("riverside", "chiller"), "potential_kw"])


def test_buildings_are_added_to_the_district_containing_them(scenario):
    """Each building's demand is added to the district whose polygon contains it (docs/input_format.md). The
    expected sums are computed here from the raw files with a plain bounds test on the rectangular districts."""
    features = {
        f["properties"]["district_id"]: f["properties"]
        for f in json.loads((TINY / "districts.geojson").read_text(encoding="utf-8"))["features"]
    }
    bounds = {"old_town": city.OLD_TOWN, "riverside": city.RIVERSIDE}
    districts = scenario.districts.set_index("district_id")
    for district_id, box in bounds.items():
        inside = [b for b in _rows(TINY / "buildings.csv") if _inside(box, float(b["lon"]), float(b["lat"]))]
        assert inside, "each fixture district holds at least one building"
        heat = features[district_id]["heat_demand_mwh_per_a"] + sum(float(b["heat_demand_mwh_per_a"]) for b in inside)
        cooling = features[district_id].get("cooling_demand_mwh_per_a", 0.0) + sum(
            float(b["cooling_demand_mwh_per_a"] or 0.0) for b in inside
        )
        assert districts.loc[district_id, "heat_demand_mwh_per_a"] == pytest.approx(heat)
        assert districts.loc[district_id, "cooling_demand_mwh_per_a"] == pytest.approx(cooling)


def test_wells_bound_to_the_containing_district(scenario):
    """A blank district_id means the district containing the extraction well; a named one is kept
    (docs/input_format.md, wells.csv)."""
    raw = {row["well_id"]: row for row in _rows(TINY / "wells.csv")}
    wells = scenario.wells.set_index("well_id")
    bounds = {"old_town": city.OLD_TOWN, "riverside": city.RIVERSIDE}
    for well_id, row in raw.items():
        if row["district_id"]:
            assert wells.loc[well_id, "district_id"] == row["district_id"]
        else:
            (expected,) = [d for d, box in bounds.items() if _inside(box, float(row["lon"]), float(row["lat"]))]
            assert wells.loc[well_id, "district_id"] == expected
    assert math.isinf(wells.loc["w1", "permit_annual_volume_m3"])  # blank: no annual limit
    assert wells.loc["w3", "groundwater_temp_amplitude_k"] == 0.0


def test_blank_reinjection_goes_down_gradient(scenario):
    """A blank reinjection position lies reinjection_offset_m from the extraction well in the aquifer's flow
    direction (docs/input_format.md). Distance checked with the haversine formula (Sinnott 1984); flow to 90°
    (east) keeps the latitude and raises the longitude."""
    wells = scenario.wells.set_index("well_id")
    offset = scenario.aquifer.reinjection_offset_m
    assert scenario.aquifer.flow_direction_deg == 90.0
    for well_id in ("w1", "w3"):
        w = wells.loc[well_id]
        distance = _haversine_m(w.lon, w.lat, w.reinjection_lon, w.reinjection_lat)
        assert distance == pytest.approx(offset, abs=0.1)
        assert w.reinjection_lat == pytest.approx(w.lat, abs=1e-9)
        assert w.reinjection_lon > w.lon
    given = next(r for r in _rows(TINY / "wells.csv") if r["well_id"] == "w2")
    assert wells.loc["w2", "reinjection_lon"] == float(given["reinjection_lon"])


def test_cost_cases_read(scenario):
    """Overrides of a case are read as given; keys a case leaves out keep their neutral values
    (docs/input_format.md, cost_cases.toml; engine/inputs.py CostCase)."""
    case = scenario.cost_cases["high_co2"]
    assert case.co2_eur_per_t == 250.0
    assert case.subsidy_share == {"gw_hp": 0.4}
    assert case.investment_factor == {"air_hp": 0.9}
    assert case.oil_price_factor == 1.0
    assert scenario.cost_cases["reference"].co2_eur_per_t is None


def test_without_cost_cases_file_one_reference_case(tiny):
    """Without cost_cases.toml there is one case, 'reference' (docs/input_format.md)."""
    (tiny / "cost_cases.toml").unlink()
    scenario = io.load_scenario(tiny)
    assert scenario.cost_cases == {"reference": CostCase()}


def test_optional_files_may_be_absent(tiny):
    """Only scenario.toml, districts.geojson, technologies.csv and hourly.csv are required (docs/input_format.md)."""
    for name in OPTIONAL_FILES:
        (tiny / name).unlink(missing_ok=True)  # the tiny city has no pathway.csv
    scenario = io.load_scenario(tiny)
    assert scenario.wells.empty and list(scenario.wells.columns) == [c.name for c in WELL_COLUMNS]
    assert scenario.heat_demand_hourly_kw is None and scenario.groundwater_temp_hourly_c is None
    assert len(scenario.district_technologies) == len(scenario.districts) * len(scenario.technologies)


# ----------------------------------------------------------------------------- geography rules
def test_well_outside_every_district_is_an_error_unless_it_names_one(tiny):
    """A well outside every district with a blank district_id cannot be bound; naming its district fixes it
    (project rule on top of docs/input_format.md, wells.csv)."""
    _edit_cell(tiny / "wells.csv", 4, "lon", "11.05")  # w3, east of riverside
    problems = io.validate_scenario(tiny)
    assert _find(problems, "wells.csv", 4, "district_id", "outside every district")
    assert len(problems) == 1
    _edit_cell(tiny / "wells.csv", 4, "district_id", "riverside")
    assert io.validate_scenario(tiny) == []
    assert io.load_scenario(tiny).wells.set_index("well_id").loc["w3", "district_id"] == "riverside"


def test_building_outside_every_district_is_an_error(tiny):
    """A building that no district contains is reported on its row (project rule; docs/input_format.md says
    buildings are added to the district containing them)."""
    _edit_cell(tiny / "buildings.csv", 3, "lat", "48.2")
    problems = io.validate_scenario(tiny)
    assert _find(problems, "buildings.csv", 3, None, "outside every district")
    assert "b2" in problems[0].message


def test_network_limit_without_network_is_an_error(tiny):
    """A connection limit > 0 where no network reaches the district contradicts itself (project rule)."""
    _edit_feature(tiny / "districts.geojson", 2, "network_connection_limit_kw", 800)
    problems = io.validate_scenario(tiny)
    assert _find(problems, "districts.geojson", 2, "network_connection_limit_kw", "network_available is false")


# ----------------------------------------------------------------------------- every seeded error at once
def test_broken_copy_reports_every_seeded_error(tmp_path):
    """Errors seeded across eleven files at once are all reported, each with its file, row and column as
    docs/input_format.md counts them (header = row 1; GeoJSON feature numbers; TOML lines), and none of them
    is an unexpected failure."""
    seeded = city.write_broken(tmp_path / "broken")
    assert len(seeded) >= 10
    assert len({entry[0] for entry in seeded}) >= 8
    problems = io.validate_scenario(tmp_path / "broken")
    for file, row, column, word in seeded:
        assert _find(problems, file, row, column, word), f"not reported: {file}, {row}, {column} ({word})"
    assert not [p for p in problems if "could not be read" in p.message]
    with pytest.raises(InputError) as raised:
        io.load_scenario(tmp_path / "broken")
    assert raised.value.problems == problems
    text = str(raised.value)
    assert text.count("\n") == len(problems) - 1
    assert "wells.csv, row 2, column permit_flow_m3_per_h: must be a number >= 0, got 'abc'" in text


def cell(row, column, value):
    return lambda path: _edit_cell(path, row, column, value)


def feature(number, key, value):
    return lambda path: _edit_feature(path, number, key, value)


def text(old, new):
    return lambda path: _replace(path, old, new)


# One bad value per rule family: (file, edit of that file, row, column, a word the message must contain).
RULE_CASES = [
    ("districts.geojson", feature(1, "supply_temp_c", 150), 1, "supply_temp_c", "<= 130"),
    ("districts.geojson", feature(2, "hot_water_share", 1.5), 2, "hot_water_share", "<= 1"),
    ("districts.geojson", feature(1, "heat_demand_mwh_per_a", -5), 1, "heat_demand_mwh_per_a", ">= 0"),
    ("districts.geojson", feature(2, "supply_temp_c", None), 2, "supply_temp_c", "missing"),
    ("districts.geojson", feature(1, "heat_demand_kwh_per_a", 5), 1, "heat_demand_kwh_per_a", "did you mean 'heat_demand_mwh_per_a'"),
    ("districts.geojson", feature(2, "district_id", "old_town"), 2, "district_id", "duplicate"),
    ("districts.geojson", feature(2, "district_id", "river side"), 2, "district_id", "letters, digits"),
    ("districts.geojson", feature(1, "network_available", "maybe"), 1, "network_available", "true or false"),
    ("wells.csv", cell(3, "groundwater_temp_c", "45"), 3, "groundwater_temp_c", "<= 40"),
    ("wells.csv", cell(3, "groundwater_temp_c", "nan"), 3, "groundwater_temp_c", "'nan'"),
    ("wells.csv", cell(2, "lon", "inf"), 2, "lon", "finite"),
    ("wells.csv", cell(2, "permit_flow_m3_per_h", "12,5"), 2, "permit_flow_m3_per_h", "decimal mark"),
    ("wells.csv", cell(2, "permit_flow_m3_per_h", "40000"), 2, "permit_flow_m3_per_h", "litres per hour"),
    ("wells.csv", cell(2, "coldest_day_of_year", ""), 2, "coldest_day_of_year", "required"),
    ("wells.csv", cell(3, "well_id", "w1"), 3, "well_id", "duplicate"),
    ("wells.csv", cell(2, "lat", "5330000"), 2, "lon", "projected"),
    ("wells.csv", cell(2, "lat", "11.004"), 2, "district_id", "outside every district"),
    ("technologies.csv", cell(2, "efficiency", "1.5"), 2, "efficiency", "<= 1.2"),
    ("technologies.csv", cell(7, "efficiency", "60"), 7, "efficiency", "<= 50"),
    ("technologies.csv", cell(7, "efficiency", ""), 7, "efficiency", "EER"),
    ("technologies.csv", cell(3, "cop_quality_grade", "1.2"), 3, "cop_quality_grade", "<= 1"),
    ("technologies.csv", cell(3, "lifetime_a", "0"), 3, "lifetime_a", "> 0"),
    ("technologies.csv", cell(3, "kind", "heatpump"), 3, "kind", "air_heat_pump"),
    ("technologies.csv", cell(6, "carrier", "steam"), 6, "carrier", "allowed"),
    ("technologies.csv", cell(6, "carrier", "electricity"), 6, "carrier", "none"),
    ("technologies.csv", cell(6, "store_hours", ""), 6, "store_hours", "heat_store"),
    ("district_technologies.csv", cell(3, "technology_id", "gas_boiler"), 3, "technology_id", "duplicate"),
    ("district_technologies.csv", cell(3, "district_id", "harbour"), 3, "district_id", "unknown district"),
    ("district_technologies.csv", cell(2, "existing_kw", "-1"), 2, "existing_kw", ">= 0"),
    ("buildings.csv", cell(5, "building_id", "b1"), 5, "building_id", "duplicate"),
    ("heat_demand_hourly.csv", cell(1, "riverside", "riversid"), 1, "riversid", "did you mean 'riverside'"),
    ("heat_demand_hourly.csv", cell(50, "riverside", "-3"), 50, "riverside", ">= 0"),
    ("groundwater_temp_hourly.csv", cell(1, "w2", "w9"), 1, "w9", "not a known well"),
    ("hourly.csv", cell(20, "hour", "17"), 20, "hour", "repeats"),
    ("hourly.csv", cell(4000, "outdoor_temp_c", ""), 4000, "outdoor_temp_c", "required"),
    ("scenario.toml", text("discount_rate = 0.05", "discount_rate = 0.5"), 5, "run.discount_rate", "<= 0.3"),
    ("scenario.toml", text("typical_days = 4", "typical_days = -1"), 6, "run.typical_days", ">= 0"),
    ("scenario.toml", text('objective = "cost"', 'objective = "money"'), 4, "run.objective", "'cost', 'co2'"),
    ("scenario.toml", text("gas_eur_per_mwh = 60.0", "gas_eur_per_mwh = 0.06"), 16, "prices.gas_eur_per_mwh", "EUR/kWh"),
    ("scenario.toml", text("gas_eur_per_mwh = 60.0", "gas_eur_per_mwh = \"60\""), 16, "prices.gas_eur_per_mwh", "a number"),
    ("scenario.toml", text("[aquifer]", "[aquifer]\nporosity = 0.2"), 22, "aquifer.porosity", "effective_porosity"),
    ("scenario.toml", text("reinjection_max_temp_c = 20.0", "reinjection_max_temp_c = 4.0"), 13, "run.reinjection_max_temp_c", "above"),
    ("cost_cases.toml", text("gw_hp = 0.4", "gw_hp = 1.4"), 11, "cases.high_co2.subsidy_share.gw_hp", "<= 1"),
    ("cost_cases.toml", text("gas_price_factor = 1.2", "gas_price_factor = -1.2"), 7, "cases.high_co2.gas_price_factor", ">= 0"),
    ("cost_cases.toml", text("gas_price_factor = 1.2", "gas_factor = 1.2"), 7, "cases.high_co2.gas_factor", "unknown key"),
    ("cost_cases.toml", text("air_hp = 0.9", "air_heatpump = 0.9"), 14, "cases.high_co2.investment_factor.air_heatpump", "unknown technology"),
]


@pytest.mark.parametrize(
    "file, edit, row, column, word", RULE_CASES, ids=[f"{c[0]}:{c[3]}:{c[4]}" for c in RULE_CASES]
)
def test_each_rule_reports_file_row_and_column(tiny, file, edit, row, column, word):
    """One bad value per rule is reported with the right file, row and column and a message that says what is
    expected (docs/input_format.md for the format; the plausibility ranges are the project's, common practice)."""
    edit(tiny / file)
    problems = io.validate_scenario(tiny)
    assert _find(problems, file, row, column, word), "\n".join(map(str, problems))


def test_kwh_written_as_mwh_gets_a_unit_hint(tiny):
    """A district demand far above any plausible total (> 10 TWh/a) or density (> 2e6 MWh/km²) says it looks like
    kWh: a factor of 1000 is the usual slip (project rule, thresholds: common practice)."""
    _edit_feature(tiny / "districts.geojson", 1, "heat_demand_mwh_per_a", 20000 * 1000)  # 20 TWh/a
    _edit_feature(tiny / "districts.geojson", 2, "heat_demand_mwh_per_a", 8000 * 1000)  # 8 TWh/a on ~0.8 km²
    problems = io.validate_scenario(tiny)
    assert _find(problems, "districts.geojson", 1, "heat_demand_mwh_per_a", "kWh instead of MWh")
    assert _find(problems, "districts.geojson", 2, "heat_demand_mwh_per_a", "per km²")


def test_hourly_files_must_match_hourly_csv(tiny):
    """heat_demand_hourly.csv must have as many rows as hourly.csv (docs/input_format.md: 'the rows follow the
    rules of hourly.csv'). hourly.csv is extended to a leap year (8784 rows) and the demand file is not."""
    path = tiny / "hourly.csv"
    lines = path.read_text(encoding="utf-8").splitlines()
    last = lines[-1].split(",")
    extra = [",".join([str(8760 + h)] + last[1:]) for h in range(24)]
    path.write_text("\n".join(lines + extra) + "\n", encoding="utf-8")
    problems = io.validate_scenario(tiny)
    assert _find(problems, "heat_demand_hourly.csv", None, None, "8784")
    assert _find(problems, "groundwater_temp_hourly.csv", None, None, "8784")


def test_rows_count_as_a_spreadsheet_shows_them(tiny):
    """A blank line still takes a row number, as in a spreadsheet, and trailing blank lines are not hours
    (docs/input_format.md: header = row 1)."""
    path = tiny / "wells.csv"
    lines = path.read_text(encoding="utf-8").splitlines()
    lines.insert(2, "")
    lines[4] = lines[4].replace(",30,", ",thirty,")  # w3 now on sheet row 5
    path.write_text("\n".join(lines) + "\n", encoding="utf-8")
    hourly = tiny / "hourly.csv"
    hourly.write_text(hourly.read_text(encoding="utf-8") + "\n\n,,,,,\n", encoding="utf-8")
    problems = io.validate_scenario(tiny)
    assert [(p.file, p.row, p.column) for p in problems] == [("wells.csv", 5, "permit_flow_m3_per_h")]


def test_bad_cells_are_summed_up_after_a_few(tiny):
    """A whole column of text gives a few located messages and one summary line, not 8760 lines (project rule:
    messages a planner can read)."""
    path = tiny / "hourly.csv"
    lines = path.read_text(encoding="utf-8").splitlines()
    lines = [lines[0]] + [line.rsplit(",", 1)[0] + ",high" for line in lines[1:]]
    path.write_text("\n".join(lines) + "\n", encoding="utf-8")
    problems = [p for p in io.validate_scenario(tiny) if p.column == "network_co2_kg_per_mwh"]
    assert len(problems) == CELL_REPORT_LIMIT + 1
    assert [p.row for p in problems[:3]] == [2, 3, 4]
    assert "8755 more rows" in problems[-1].message


# ----------------------------------------------------------------------------- file-level problems
def test_missing_required_file_with_rename_hint(tiny):
    """A missing required file is reported; a file that is only named differently is pointed out
    (docs/input_format.md lists the required files)."""
    (tiny / "districts.geojson").rename(tiny / "Districts.GeoJSON")
    (tiny / "technologies.csv").unlink()
    problems = io.validate_scenario(tiny)
    assert _find(problems, "districts.geojson", None, None, "Districts.GeoJSON")
    assert _find(problems, "technologies.csv", None, None, "required file is missing")


def test_toml_syntax_error_names_the_line(tiny):
    """A TOML syntax error is reported with its line (TOML 1.0: a key needs '=' and a value)."""
    _replace(tiny / "scenario.toml", "typical_days = 4", "typical_days 4")
    problems = io.validate_scenario(tiny)
    assert _find(problems, "scenario.toml", 6, None, "TOML syntax error")


def test_semicolon_separated_csv(tiny):
    """A CSV written with ';' separators (spreadsheets in many European locales) is told apart from a file with
    missing columns (docs/input_format.md: comma separated, '.' decimals)."""
    path = tiny / "buildings.csv"
    path.write_text(path.read_text(encoding="utf-8").replace(",", ";"), encoding="utf-8")
    problems = io.validate_scenario(tiny)
    assert _find(problems, "buildings.csv", 1, None, "';'")
    assert len(problems) == 1


def test_empty_file_and_utf8_with_bom(tiny):
    """An empty file is a problem; a UTF-8 file with a byte-order mark (as spreadsheets save 'CSV UTF-8') is
    fine (docs/input_format.md: UTF-8)."""
    (tiny / "wells.csv").write_text("", encoding="utf-8")
    path = tiny / "buildings.csv"
    path.write_bytes(b"\xef\xbb\xbf" + path.read_bytes())
    problems = io.validate_scenario(tiny)
    assert problems == [Problem("wells.csv", None, None, "is empty")]


def test_geojson_structure_problems(tiny):
    """Not a FeatureCollection, a feature without geometry, a Point geometry, a feature without properties
    (RFC 7946 structure; docs/input_format.md: each feature a Polygon or MultiPolygon with properties)."""
    path = tiny / "districts.geojson"
    data = json.loads(path.read_text(encoding="utf-8"))
    data["features"][0]["geometry"] = None
    data["features"][1]["geometry"] = {"type": "Point", "coordinates": [11.0, 48.0]}
    data["features"].append({"type": "Feature", "geometry": data["features"][1]["geometry"]})
    path.write_text(json.dumps(data), encoding="utf-8")
    problems = io.validate_scenario(tiny)
    assert _find(problems, "districts.geojson", 1, "geometry", "no geometry")
    assert _find(problems, "districts.geojson", 2, "geometry", "got 'Point'")
    assert _find(problems, "districts.geojson", 3, None, "no properties")
    path.write_text(json.dumps({"type": "Feature", "geometry": None, "properties": {}}), encoding="utf-8")
    assert _find(io.validate_scenario(tiny), "districts.geojson", None, None, "FeatureCollection")


def test_file_size_guard(tiny, monkeypatch):
    """A file above the size limit is refused with a message instead of being read (project rule)."""
    monkeypatch.setattr(tables, "MAX_FILE_BYTES", 100_000)
    problems = io.validate_scenario(tiny)
    assert _find(problems, "hourly.csv", None, None, "larger than")
    assert not _find(problems, "wells.csv", None, None, "larger than")


def test_unexpected_failure_is_reported_on_the_file(tiny, monkeypatch):
    """An unexpected exception while reading one file becomes a problem on that file; the other files are still
    checked (project rule: never a traceback)."""

    def broken(*args, **kwargs):
        raise RuntimeError("disk hiccup")

    monkeypatch.setattr(io, "load_wells", broken)
    _edit_cell(tiny / "buildings.csv", 2, "heat_demand_mwh_per_a", "-1")
    problems = io.validate_scenario(tiny)
    assert _find(problems, "wells.csv", None, None, "disk hiccup")
    assert _find(problems, "buildings.csv", 2, "heat_demand_mwh_per_a", ">= 0")


def test_demo_word_and_missing_folder(tmp_path):
    """The word 'demo' names the shipped demo folder; a missing folder is a problem, not an exception
    (project rule)."""
    assert io.resolve_scenario_path("demo") == io.DEMO_DIR == io.REPO_ROOT / "demo_data"
    assert io.resolve_scenario_path(str(tmp_path)) == tmp_path
    problems = io.validate_scenario(tmp_path / "nowhere")
    assert len(problems) == 1 and "does not exist" in problems[0].message


# ----------------------------------------------------------------------------- problems
def test_problem_text_and_table():
    """Problems read 'file, row R, column C: message' (spreadsheet wording for CSV, feature/property for GeoJSON,
    line/key for TOML) and tabulate as file, row, column, message (project convention)."""
    problems = [
        Problem("wells.csv", 7, "permit_flow_m3_per_h", "must be a number >= 0, got 'abc'"),
        Problem("districts.geojson", 2, "geometry", "the polygon is not valid"),
        Problem("scenario.toml", 5, "run.discount_rate", "must be <= 0.3, got 0.5"),
        Problem("hourly.csv", None, None, "has 8759 hourly rows"),
    ]
    assert str(problems[0]) == "wells.csv, row 7, column permit_flow_m3_per_h: must be a number >= 0, got 'abc'"
    assert str(problems[1]) == "districts.geojson, feature 2, property geometry: the polygon is not valid"
    assert str(problems[2]) == "scenario.toml, line 5, key run.discount_rate: must be <= 0.3, got 0.5"
    assert str(problems[3]) == "hourly.csv: has 8759 hourly rows"
    frame = problems_frame(problems)
    assert list(frame.columns) == ["file", "row", "column", "message"]
    assert frame["row"].isna().tolist() == [False, False, False, True]
    assert frame.loc[0, "row"] == 7
    assert str(InputError(problems)).splitlines() == [str(p) for p in problems]
    assert problems_frame([]).empty


# ----------------------------------------------------------------------------- geometry
def _rectangle(lon0, lat0, lon1, lat1):
    return {"type": "Polygon", "coordinates": [[[lon0, lat0], [lon1, lat0], [lon1, lat1], [lon0, lat1], [lon0, lat0]]]}


@pytest.mark.parametrize("lat0", [0.0, 48.0, 60.0])
def test_area_matches_the_spherical_zone_formula(lat0):
    """Area of a 0.02° x 0.02° cell equals R² Δλ (sin φ2 - sin φ1) on the sphere (J. P. Snyder 1987, Map
    Projections: A Working Manual, USGS PP 1395, equal-area relations) to better than 0.01 %."""
    radius = geometry.EARTH_RADIUS_M
    lon0, lon1, lat1 = 11.0, 11.02, lat0 + 0.02
    exact = radius**2 * math.radians(lon1 - lon0) * (math.sin(math.radians(lat1)) - math.sin(math.radians(lat0)))
    assert geometry.area_km2(_rectangle(lon0, lat0, lon1, lat1)) == pytest.approx(exact / 1e6, rel=1e-4)


def test_centroid_and_containment():
    """The centroid of a rectangle is its middle (elementary geometry); a boundary point belongs to the first
    district in file order; a point outside all gets -1."""
    west, east = _rectangle(11.0, 48.0, 11.01, 48.01), _rectangle(11.01, 48.0, 11.02, 48.01)
    lon, lat = geometry.centroid_lon_lat(west)
    assert (lon, lat) == (pytest.approx(11.005), pytest.approx(48.005))
    shapes = [geometry.to_shape(west), geometry.to_shape(east)]
    found = geometry.containing_index(shapes, [11.005, 11.015, 11.01, 11.05], [48.005, 48.005, 48.005, 48.005])
    assert found.tolist() == [0, 1, 0, -1]
    assert geometry.contains(east, 11.015, 48.001) and not geometry.contains(east, 11.005, 48.001)


def test_coordinate_plausibility_messages():
    """WGS 84 limits |lon| <= 180, |lat| <= 90 (EPSG:4326); metre-sized numbers point to a projected CRS; a
    latitude beyond 90 with a longitude within it suggests swapped axes (RFC 7946: longitude first)."""
    assert geometry.coordinate_problem(11.0, 48.0) is None
    assert "projected" in geometry.coordinate_problem(690000.0, 5320000.0)
    assert "swapped" in geometry.coordinate_problem(48.0, 120.0)
    assert "outside WGS 84" in geometry.coordinate_problem(200.0, 48.0)
    square_utm = _rectangle(690000, 5320000, 690800, 5320800)
    assert "projected" in geometry.geometry_problems(square_utm)[0]
    bow_tie = {"type": "Polygon", "coordinates": [[[11, 48], [11.01, 48.01], [11.01, 48], [11, 48.01], [11, 48]]]}
    assert "Self-intersection" in geometry.geometry_problems(bow_tie)[0]
    multi = {"type": "MultiPolygon", "coordinates": [_rectangle(11, 48, 11.01, 48.01)["coordinates"]]}
    assert geometry.geometry_problems(multi) == []


def test_offset_rejects_bad_arguments():
    """offset_lon_lat names the bad argument (project convention for pure functions)."""
    with pytest.raises(ValueError, match="distance_m"):
        geometry.offset_lon_lat(11.0, 48.0, -1.0, 90.0)
    with pytest.raises(ValueError, match="lat"):
        geometry.offset_lon_lat(11.0, 90.0, 10.0, 90.0)
    lon, lat = geometry.offset_lon_lat(11.0, 48.0, 1000.0, 0.0)
    assert _haversine_m(11.0, 48.0, float(lon), float(lat)) == pytest.approx(1000.0, abs=0.01)
    assert float(lon) == 11.0
