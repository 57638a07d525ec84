"""One number format per quantity and one spelling per unit (engine/outputs/formats.py) and the words for codes
(engine/outputs/labels.py), checked against hand-written expectations (common practice: thousands separators,
fixed decimals per unit)."""

from __future__ import annotations

import io

import numpy as np
import pandas as pd
from openpyxl import load_workbook

from engine.outputs.export import tables_xlsx
from engine.outputs.formats import decimals_for, excel_format, format_number
from engine.outputs.labels import blank, column_label, cost_case_label, kind_label, words
from test_figures import synthetic_result  # a solved two-district run built in the test module


def test_one_format_per_unit():
    """The same unit gives the same decimals wherever it is read; blanks and infinities read as words."""
    assert format_number(28707292.702, "total cost [€/a]") == "28,707,293"
    assert format_number(92.54, "levelised cost [€/MWh]") == "92.5"
    assert format_number(73, "levelised cost [€/MWh]") == "73.0"
    assert format_number(46389.2, "Abatement cost [€/t]") == "46,389"
    assert format_number(float("nan"), "CO2 [t/a]") == "–"
    assert format_number(float("inf"), "annual volume permit [m³/a]") == "no limit"
    assert format_number(-0.2, "CO2 [t/a]") == "0"
    assert decimals_for("Δ total cost [€/a]") == decimals_for("total cost [€/a]") == 0
    assert decimals_for("cost [million EUR/a]") == decimals_for("cost [M€/a]") == 2
    assert excel_format("heat [MWh/a]") == "#,##0" and excel_format("lowest reinjection [°C]") == "#,##0.0"


def test_codes_read_as_words():
    assert words("high_co2") == "High CO2" and cost_case_label("heat_pump_subsidy") == "Heat pump subsidy"
    assert kind_label("fuel_boiler") == "Fuel boiler"
    assert column_label("gas_price_factor") == "Gas price [×]"
    assert column_label("total_cost_eur_per_a") == "Total cost [€/a]"
    assert [blank(v) for v in (None, float("nan"), "None", pd.NA, "x")] == ["–", "–", "–", "–", "x"]


def test_spreadsheet_numbers_carry_the_format_of_their_unit():
    """The xlsx cells of a small table get the number format of their column's unit (openpyxl reads it back)."""
    book = load_workbook(io.BytesIO(tables_xlsx({"a": synthetic_result()})))
    sheet = book["kpi"]
    headers = [c.value for c in sheet[1]]
    cost = sheet.cell(row=2, column=headers.index("total cost [€/a]") + 1)
    lcoh = sheet.cell(row=2, column=headers.index("levelised cost [€/MWh]") + 1)
    assert cost.number_format == "#,##0" and lcoh.number_format == "#,##0.0"
    assert isinstance(cost.value, float) and np.isfinite(cost.value)


def test_a_planners_own_name_is_kept_as_typed():
    """Only snake-case ids become words; a name with other characters is the planner's and stays literal."""
    assert cost_case_label("fossil <svg/onload=window.__pwned=1>") == "fossil <svg/onload=window.__pwned=1>"
    assert cost_case_label("Mein Fall 2") == "Mein Fall 2"
