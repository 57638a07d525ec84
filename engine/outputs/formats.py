"""One number format per quantity, for the dashboard, the HTML summary and the spreadsheet.

A quantity is known by the unit in its column header (``total cost [€/a]``, ``CO2 [t/a]``): every column with
that unit shows the same number of decimals with thousands separators, wherever it is read. Units are spelt one
way (``€``, ``M€/a``, ``MWh/a``); :data:`UNIT_SPELLINGS` lists the spellings they replace.
"""

from __future__ import annotations

import math
import re

import numpy as np
import pandas as pd

DECIMALS = {
    "M€/a": 2, "k€/a": 1, "€/a": 0, "€/MWh": 1, "€/kWh": 2, "€/kW": 0, "€/t": 0, "kg/MWh": 1,
    "t/a": 0, "MWh/a": 0, "GWh/a": 1, "kW": 0, "kWh": 0, "MW": 1, "%": 1, "°C": 1, "K": 2, "m³/h": 1,
    "m³/a": 0, "m³": 0, "h": 0, "s": 1, "a": 0, "-": 2, "×": 2,
}
"""Decimals per unit (the text between the last brackets of a header)."""

UNIT_SPELLINGS = {"million EUR/a": "M€/a", "M EUR/a": "M€/a", "EUR/MWh": "€/MWh", "EUR/t": "€/t",
                  "EUR/a": "€/a", "EUR/kW": "€/kW", "EUR": "€"}
"""Other spellings of a unit -> the one used everywhere."""

_UNIT = re.compile(r"\[([^\[\]]+)\]\s*$")


def unit_of(column) -> str | None:
    """The unit in a header's last brackets (``"heat [MWh/a]"`` -> ``"MWh/a"``), or None."""
    match = _UNIT.search(str(column))
    return match.group(1).strip() if match else None


def decimals_for(column, default: int = 0) -> int:
    """Decimals a column's values are shown with (from its unit; "Δ" columns like their quantity)."""
    unit = unit_of(column)
    if unit is None:
        return default
    unit = UNIT_SPELLINGS.get(unit, unit)
    if unit in DECIMALS:
        return DECIMALS[unit]
    return DECIMALS.get(unit.split(" ")[0], default)


def format_number(value, column="", decimals: int | None = None) -> str:
    """``value`` as the reader sees it: thousands separators, the decimals of its unit, "–" for a blank."""
    if value is None or value is pd.NA:
        return "–"
    if isinstance(value, (bool, np.bool_)):
        return "yes" if value else "no"
    if not isinstance(value, (int, float, np.integer, np.floating)):
        return str(value)
    number = float(value)
    if math.isnan(number):
        return "–"
    if math.isinf(number):
        return "no limit" if number > 0 else "−∞"
    places = decimals_for(column) if decimals is None else decimals
    if isinstance(value, (int, np.integer)) and unit_of(column) is None:
        places = 0
    text = f"{number:,.{places}f}"
    return text[1:] if re.fullmatch(r"-0(\.0+)?", text) else text


def python_format(column) -> str:
    """A ``str.format`` pattern for a column (``"{:,.1f}"``), for pandas Styler in the dashboard."""
    return "{:,.%df}" % decimals_for(column)


def excel_format(column) -> str:
    """A spreadsheet number format for a column (``"#,##0.0"``)."""
    places = decimals_for(column)
    return "#,##0" + ("." + "0" * places if places else "")


def engine_column_decimals(column: str) -> int | None:
    """Decimals for an engine-style column name (``total_cost_eur_per_a``), as the spreadsheet writes it; None
    for a name without a known unit (coordinates, shares, counts keep their digits)."""
    for suffix, unit in (("_eur_per_mwh", "€/MWh"), ("_eur_per_kw", "€/kW"), ("_eur_per_t", "€/t"),
                         ("_eur_per_a", "€/a"), ("_mwh_per_a", "MWh/a"), ("_kg_per_mwh", "kg/MWh"),
                         ("_t_per_a", "t/a"), ("_m3_per_h", "m³/h"), ("_m3", "m³"), ("_kwh", "kWh"), ("_kw", "kW"),
                         ("_pct", "%"), ("_c", "°C"), ("_k", "K")):
        if column.endswith(suffix):
            return DECIMALS[unit]
    return None
