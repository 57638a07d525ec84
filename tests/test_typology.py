"""Typology demand and screening indicators, each against a hand calculation.

The hand calculations use only the definitions: demand [MWh/a] = specific demand [kWh/(m² a)] x heated area
[m²] / 1000; heated area = footprint x storeys x ratio; 1 ha = 10 000 m² (SI); linear heat density = demand /
street length. The shipped table's values themselves are from memory / common practice (see its note_source
column and engine.physics.typology); the tests check that they are read and applied, not that they are right.
"""

from __future__ import annotations

import math

import numpy as np
import pandas as pd
import pytest

from engine.physics import typology

TABLE_CSV = """use,period,built_from,built_to,space_heat_kwh_per_m2_a,hot_water_kwh_per_m2_a,note_source
multi_family,-1948,,1948,150,12.5,test
multi_family,1949-1978,1949,1978,140,12.5,test
multi_family,1979-,1979,,90,12.5,test
office,all,,,120,4,test
"""


@pytest.fixture
def table(tmp_path):
    path = tmp_path / "building_typology.csv"
    path.write_text(TABLE_CSV)
    frame, problems = typology.read_typology(path)
    assert problems == []
    return frame


def test_hand_calculation_for_three_buildings(table):
    """Hand calculation:
    b1 multi_family built 1960, 1200 m² heated: (140 + 12.5) x 1200 / 1000 = 183.0 MWh/a (168 + 15).
    b2 office, footprint 500 m² x 4 storeys x 0.8 = 1600 m²: (120 + 4) x 1600 / 1000 = 198.4 MWh/a.
    b3 multi_family, period label '1979-', 800 m², metered 95 MWh/a: the meter wins, 95 MWh/a.
    """
    buildings = pd.DataFrame(
        {
            "building_id": ["b1", "b2", "b3"],
            "use": ["multi_family", "office", "multi_family"],
            "construction_year": [1960, np.nan, np.nan],
            "construction_period": ["", "all", "1979-"],
            "heated_area_m2": [1200.0, np.nan, 800.0],
            "footprint_area_m2": [np.nan, 500.0, np.nan],
            "storeys": [np.nan, 4, np.nan],
            "heat_demand_mwh_per_a": [np.nan, np.nan, 95.0],
        }
    )
    out = typology.building_demand(buildings, table, ratio=0.8)
    assert out["heated_area_m2"].tolist() == pytest.approx([1200.0, 1600.0, 800.0])
    assert out.loc[0, "space_heat_mwh_per_a"] == pytest.approx(168.0)
    assert out.loc[0, "hot_water_mwh_per_a"] == pytest.approx(15.0)
    assert out["heat_demand_mwh_per_a"].tolist() == pytest.approx([183.0, 198.4, 95.0])
    assert out["demand_source"].tolist() == ["typology", "typology", "metered"]


def test_period_bounds_are_inclusive(table):
    """1948 falls in '-1948', 1949 in '1949-1978', 1979 in '1979-' (built_from and built_to both inclusive)."""
    rows = typology.match_typology(table, ["multi_family"] * 4, [1948, 1949, 1978, 1979])
    assert table["period"].iloc[rows].tolist() == ["-1948", "1949-1978", "1949-1978", "1979-"]


def test_unknown_use_or_no_area_gives_unknown(table):
    buildings = pd.DataFrame({"use": ["barn", "office"], "construction_year": [1950, 1950], "heated_area_m2": [100, np.nan]})
    out = typology.building_demand(buildings, table)
    assert out["demand_source"].tolist() == ["unknown", "unknown"]
    assert out["heat_demand_mwh_per_a"].isna().all()


def test_shipped_table_reads_and_names_a_source_on_every_row():
    frame, problems = typology.read_typology()
    assert problems == [] and len(frame) == 30
    raw = pd.read_csv(typology.DEFAULT_TYPOLOGY)
    assert raw["note_source"].str.len().gt(10).all()
    # Hot water in dwellings 12.5 kWh/(m² a), the DIN V 4701-10 standard value (from memory)
    assert (raw.loc[raw["use"].str.endswith("family"), "hot_water_kwh_per_m2_a"] == 12.5).all()
    # Newer periods need less space heat (common practice: each insulation code tightened the last)
    for _, group in frame.groupby("use"):
        assert np.all(np.diff(group.sort_values("built_from")["space_heat_kwh_per_m2_a"].to_numpy()) < 0)


def test_bad_table_names_row_and_column(tmp_path):
    path = tmp_path / "building_typology.csv"
    path.write_text(
        "use,period,built_from,built_to,space_heat_kwh_per_m2_a,hot_water_kwh_per_m2_a\n"
        "office,old,,1970,abc,4\n"
        "office,new,1960,,140000,4\n"
        "office,old,1990,1980,100,4\n"
    )
    frame, problems = typology.read_typology(path)
    assert frame is None
    places = {(p.row, p.column) for p in problems}
    assert (2, "space_heat_kwh_per_m2_a") in places  # not a number
    assert (3, "space_heat_kwh_per_m2_a") in places  # Wh slip: outside 0..1000
    assert (4, "built_to") in places and (4, "period") in places  # reversed years; repeated use and period


def test_missing_column_is_reported_on_the_header_row(tmp_path):
    path = tmp_path / "t.csv"
    path.write_text("use,period,space_heat_kwh_per_m2_a\noffice,all,100\n")
    _, problems = typology.read_typology(path)
    assert {(p.row, p.column) for p in problems} >= {(1, "built_from"), (1, "hot_water_kwh_per_m2_a")}


def test_heat_density_and_linear_density_by_hand():
    """District of 25 ha with 5000 MWh/a: 200 MWh/(ha a) (class 175-415); 4000 m of street: 1.25 MWh/(m a)."""
    table = typology.screening_table(["a", "b"], [5000.0, 600.0], [250_000.0, 100_000.0], [4000.0, math.nan])
    assert table["heat_density_mwh_per_ha_a"].tolist() == pytest.approx([200.0, 60.0])
    assert table["heat_density_class"][0].startswith("175-415")
    assert table["heat_density_class"][1].startswith("below 70")
    assert table.loc[0, "linear_heat_density_mwh_per_m_a"] == pytest.approx(1.25)
    assert table["linear_heat_density_class"][0].startswith("0.5-1.5")
    assert math.isnan(table.loc[1, "linear_heat_density_mwh_per_m_a"]) and table["linear_heat_density_class"][1] == ""


def test_heated_area_rejects_a_ratio_above_one():
    with pytest.raises(ValueError, match="ratio"):
        typology.heated_area_m2([np.nan], [100.0], [2], ratio=1.2)
