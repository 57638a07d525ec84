"""One table of defaults and one rule for limits (engine.scenario.defaults, docs/input_format.md).

* The "Defaults" table and the ``scenario.toml`` example of docs/input_format.md state the values the code uses.
* The default CO2 factors are the IPCC 2006 values (Guidelines for National Greenhouse Gas Inventories, vol. 2,
  ch. 2, table 2.2: natural gas 56 100 kg CO2/TJ, gas/diesel oil 74 100 kg CO2/TJ; 1 MWh = 3.6 GJ).
* A blank connection limit of a district on the network means no limit: checked on a hand case solved through the
  reader.
* A blank boiler efficiency is refused with file, row and column; a network district with a limit of 0 kW loads
  with a warning.
"""

from __future__ import annotations

import inspect
import json
import math
import re
import shutil
import tomllib
from pathlib import Path

import numpy as np
import numpy_financial as npf
import pandas as pd
import pytest

from engine.model.solve import solve_scenario
from engine.physics.heatpump import heat_pump_cop
from engine.scenario import load_scenario, validate_command, validate_scenario
from engine.scenario.defaults import DEFAULTS, NO_LIMIT, limit_from_entry
from engine.scenario.inputs import default_cost_case

ROOT = Path(__file__).resolve().parents[1]
DOC = ROOT / "docs" / "input_format.md"
TINY = ROOT / "tests" / "fixtures" / "tiny_city"


def _doc_defaults() -> dict[tuple[str, str], object]:
    """The rows of the doc's "Defaults" table, values parsed from their text."""
    text = DOC.read_text(encoding="utf-8")
    section = text.split("\n## Defaults\n", 1)[1]
    rows = {}
    for line in section.splitlines():
        cells = [cell.strip() for cell in line.strip().strip("|").split("|")]
        if len(cells) != 4 or not cells[0].startswith("`"):
            continue
        file, field, shown = cells[0].strip("`"), cells[1].strip("`"), cells[2]
        if shown == "no limit":
            value = NO_LIMIT
        elif shown in ("true", "false"):
            value = shown == "true"
        elif shown.startswith('"'):
            value = shown.strip('"')
        else:
            value = float(shown)
        rows[(file, field)] = value
    return rows


def test_doc_defaults_table_equals_the_defaults_module():
    """Every default stated in docs/input_format.md is the one the code uses, and none is missing (the doc is
    the planner's reference; project rule: one value, one statement)."""
    documented = _doc_defaults()
    module = {(d.file, d.field): d.value for d in DEFAULTS}
    assert set(documented) == set(module)
    for place, value in module.items():
        if isinstance(value, (int, float)) and not isinstance(value, bool):
            assert documented[place] == pytest.approx(value, rel=1e-12, abs=0.0), place
        else:
            assert documented[place] == value, place


def test_doc_toml_example_states_the_defaults():
    """The scenario.toml example says "every other key takes the default shown": its [run] (but the name),
    [co2_factors] and [aquifer] values equal the defaults table."""
    example = re.search(r"## scenario\.toml.*?```toml\n(.*?)```", DOC.read_text(encoding="utf-8"), re.S).group(1)
    data = tomllib.loads(example)
    module = {(d.file, d.field): d.value for d in DEFAULTS}
    checked = 0
    for section in ("run", "co2_factors", "aquifer"):
        for key, value in data[section].items():
            if (section, key) == ("run", "name"):
                continue
            assert module[("scenario.toml", f"{section}.{key}")] == pytest.approx(value, rel=1e-12), key
            checked += 1
    assert checked >= 20


def test_default_co2_factors_are_the_ipcc_values():
    """IPCC 2006 Guidelines, vol. 2, table 2.2: 56 100 and 74 100 kg/TJ; 1 MWh = 3.6 GJ = 0.0036 TJ. The doc
    states 201.96 and 266.76 kg/MWh, as the code does (issue: 202.0 and 266.8 had been written)."""
    documented = _doc_defaults()
    assert documented[("scenario.toml", "co2_factors.gas_kg_per_mwh")] == pytest.approx(56_100 * 0.0036, rel=1e-12)
    assert documented[("scenario.toml", "co2_factors.oil_kg_per_mwh")] == pytest.approx(74_100 * 0.0036, rel=1e-12)
    loaded = load_scenario(TINY)
    if "co2_factors" not in tomllib.loads((TINY / "scenario.toml").read_text()):
        assert loaded.prices.co2_kg_per_mwh["gas"] == pytest.approx(201.96, rel=1e-12)


def test_heat_pump_function_defaults_follow_the_table():
    """heat_pump_cop's default grade and approaches are the documented defaults of a blank cell, so that a
    COP computed with the function's defaults and one read from a blank catalogue row agree."""
    documented = _doc_defaults()
    parameters = inspect.signature(heat_pump_cop).parameters
    assert parameters["quality_grade"].default == documented[("technologies.csv", "cop_quality_grade")]
    assert parameters["source_approach_k"].default == documented[("technologies.csv", "source_approach_k")]
    assert parameters["sink_approach_k"].default == documented[("technologies.csv", "sink_approach_k")]


def test_city_wide_limits_are_none_for_no_limit():
    """[run] limits: absent or 0 means no limit, None in the code (docs/input_format.md, "Limits")."""
    assert limit_from_entry(None) is None
    assert limit_from_entry(0) is None
    assert limit_from_entry(1500) == 1500.0
    settings = load_scenario(TINY).settings  # the tiny city writes co2_cap_t_per_a = 0
    assert settings.co2_cap_t_per_a is None and settings.network_plant_limit_kw is None


def test_default_cost_case_rule():
    """"reference" when the scenario has it, else the first case of the file (docs/input_format.md)."""
    assert default_cost_case(["high_co2", "reference"]) == "reference"
    assert default_cost_case(["high_co2", "low_co2"]) == "high_co2"
    with pytest.raises(ValueError):
        default_cost_case([])


# ---------------------------------------------------------------------------------------------- hand case
HOURS = 8760
HALF = HOURS // 2


def _write_network_city(folder: Path) -> None:
    """One district on the network with a blank connection limit; a gas boiler and a network connection.

    Demand 1000 kW in the first half of the year, 400 kW in the second. The network is cheaper in both
    investment (50 against 100 EUR/kW) and energy (30 EUR/MWh against 40 / 0.9 = 44.4 EUR/MWh), so the optimum
    draws everything from the network (screening-curve argument)."""
    folder.mkdir()
    (folder / "scenario.toml").write_text(
        "[run]\nname = \"Network test\"\ntypical_days = 0\ndiscount_rate = 0.05\n\n"
        "[prices]\ngas_eur_per_mwh = 40.0\noil_eur_per_mwh = 75.0\nbiomass_eur_per_mwh = 45.0\nco2_eur_per_t = 0.0\n",
        encoding="utf-8",
    )
    ring = [[10.0, 50.0], [10.01, 50.0], [10.01, 50.01], [10.0, 50.01], [10.0, 50.0]]
    feature = {
        "type": "Feature",
        "properties": {
            "district_id": "A",
            "heat_demand_mwh_per_a": (1000.0 + 400.0) * HALF / 1000.0,
            "supply_temp_c": 70.0,
            "network_available": True,
            "network_connection_limit_kw": None,
        },
        "geometry": {"type": "Polygon", "coordinates": [ring]},
    }
    (folder / "districts.geojson").write_text(json.dumps({"type": "FeatureCollection", "features": [feature]}))
    pd.DataFrame(
        [
            dict(technology_id="gas", kind="fuel_boiler", carrier="gas", efficiency=0.9, investment_eur_per_kw=100.0,
                 fixed_om_pct_per_a=0.0, variable_om_eur_per_mwh=0.0, lifetime_a=20),
            dict(technology_id="net", kind="network_connection", carrier="network", efficiency=None,
                 investment_eur_per_kw=50.0, fixed_om_pct_per_a=0.0, variable_om_eur_per_mwh=0.0, lifetime_a=20),
        ]
    ).to_csv(folder / "technologies.csv", index=False)
    pd.DataFrame(
        {
            "hour": np.arange(HOURS),
            "outdoor_temp_c": 5.0,
            "electricity_price_eur_per_mwh": 100.0,
            "grid_co2_kg_per_mwh": 200.0,
            "network_price_eur_per_mwh": 30.0,
            "network_co2_kg_per_mwh": 100.0,
        }
    ).to_csv(folder / "hourly.csv", index=False)
    demand = np.where(np.arange(HOURS) < HALF, 1000.0, 400.0)
    pd.DataFrame({"hour": np.arange(HOURS), "A": demand}).to_csv(folder / "heat_demand_hourly.csv", index=False)


def test_blank_connection_limit_with_network_means_unlimited(tmp_path):
    """network_available = true and a blank limit: the district may draw any amount (issue: it got no network at
    all). Hand optimum: the network serves all 8760 h; cost = 1000 kW * 50 EUR/kW * a + 30 EUR/MWh *
    (1000 + 400) kW * 4380 h, a = capital recovery factor at 5 % over 20 a (numpy-financial pmt)."""
    folder = tmp_path / "network_city"
    _write_network_city(folder)
    assert validate_scenario(folder) == []
    scenario = load_scenario(folder)
    assert math.isinf(scenario.districts.loc[0, "network_connection_limit_kw"])
    result = solve_scenario(scenario)
    assert result.status == "optimal"
    annuity = -npf.pmt(0.05, 20, 1.0)
    hand = 1000.0 * 50.0 * annuity + 30.0 / 1000.0 * (1000.0 + 400.0) * HALF
    assert result.total_cost_eur_per_a == pytest.approx(hand, rel=1e-8)
    supply = result.tables["supply"].set_index("technology_id")
    assert supply.loc["net", "capacity_kw"] == pytest.approx(1000.0, rel=1e-7)
    assert supply.loc["net", "heat_mwh_per_a"] == pytest.approx((1000.0 + 400.0) * HALF / 1000.0, rel=1e-8)
    gas_heat = supply.loc["gas", "heat_mwh_per_a"] if "gas" in supply.index else 0.0
    assert gas_heat == pytest.approx(0.0, abs=1e-6)
    assert result.unserved_heat_mwh_per_a == pytest.approx(0.0, abs=1e-6)


# ---------------------------------------------------------------------------------------------- blanks
@pytest.fixture
def tiny(tmp_path: Path) -> Path:
    return Path(shutil.copytree(TINY, tmp_path / "tiny_city"))


def test_blank_boiler_efficiency_is_refused_with_its_place(tiny):
    """A boiler's efficiency has no default (docs/input_format.md): blank is an error on technologies.csv, the
    boiler's spreadsheet row (header = row 1), column efficiency; it no longer becomes 1.0."""
    table = pd.read_csv(tiny / "technologies.csv", dtype=str, keep_default_na=False)
    row = int(np.flatnonzero(table["kind"] == "fuel_boiler")[0])
    table.loc[row, "efficiency"] = ""
    table.to_csv(tiny / "technologies.csv", index=False)
    problems = validate_scenario(tiny)
    found = [p for p in problems if (p.file, p.row, p.column) == ("technologies.csv", row + 2, "efficiency")]
    assert found and "required" in found[0].message and found[0].is_error


def test_network_district_with_zero_limit_warns_and_loads(tiny, capsys):
    """network_available = true with a limit of 0 kW: the stated network cannot be used. Validation warns
    (severity warning) on the feature and property; the folder still loads and carries the warning, and the
    validate command prints it and exits 0."""
    path = tiny / "districts.geojson"
    data = json.loads(path.read_text(encoding="utf-8"))
    number = next(i for i, f in enumerate(data["features"], start=1) if f["properties"].get("network_available"))
    data["features"][number - 1]["properties"]["network_connection_limit_kw"] = 0
    path.write_text(json.dumps(data), encoding="utf-8")
    problems = validate_scenario(tiny)
    assert [(p.file, p.row, p.column, p.severity) for p in problems] == [
        ("districts.geojson", number, "network_connection_limit_kw", "warning")
    ]
    assert "network_available is true" in problems[0].message
    scenario = load_scenario(tiny)
    assert scenario.warnings == problems
    assert validate_command(tiny) == 0
    out = capsys.readouterr().out
    assert "warning:" in out and out.strip().splitlines()[-1].startswith("OK:")
