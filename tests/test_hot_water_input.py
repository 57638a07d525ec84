"""The hot-water temperature column of districts.geojson and the run key co2_within_cost_pct (docs/input_format.md).

Defaults from the one table in engine/scenario/defaults.py: 60 °C (about 60 °C at the store against legionella,
common practice; local hygiene rules decide) and 0 % (no cost bound).
"""

from __future__ import annotations

import json
import shutil
from pathlib import Path

import pytest

from engine.scenario import folder as io

TINY = Path(__file__).resolve().parent / "fixtures" / "tiny_city"


@pytest.fixture
def tiny(tmp_path: Path) -> Path:
    return Path(shutil.copytree(TINY, tmp_path / "tiny_city"))


def _set_property(path: Path, feature: int, key: str, value) -> None:
    data = json.loads(path.read_text(encoding="utf-8"))
    data["features"][feature]["properties"][key] = value
    path.write_text(json.dumps(data), encoding="utf-8")


def test_hot_water_temperature_defaults_to_60_and_is_read(tiny):
    _set_property(tiny / "districts.geojson", 1, "hot_water_temp_c", 55.0)
    scenario = io.load_scenario(tiny)
    temps = scenario.districts["hot_water_temp_c"].tolist()
    assert temps[1] == pytest.approx(55.0)
    assert all(t == pytest.approx(60.0) for k, t in enumerate(temps) if k != 1)
    assert scenario.settings.co2_within_cost_pct == 0.0


def test_implausible_hot_water_temperature_names_file_row_and_property(tiny):
    _set_property(tiny / "districts.geojson", 0, "hot_water_temp_c", 200.0)
    problems = io.validate_scenario(tiny)
    hits = [p for p in problems if p.file == "districts.geojson" and p.column == "hot_water_temp_c"]
    assert hits, problems


def test_co2_within_cost_pct_run_key(tiny):
    toml = tiny / "scenario.toml"
    text = toml.read_text(encoding="utf-8").replace("[run]\n", "[run]\nco2_within_cost_pct = 5\n", 1)
    toml.write_text(text, encoding="utf-8")
    assert io.load_scenario(tiny).settings.co2_within_cost_pct == pytest.approx(5.0)
    toml.write_text(text.replace("co2_within_cost_pct = 5", "co2_within_cost_pct = -1"), encoding="utf-8")
    problems = io.validate_scenario(tiny)
    assert any("co2_within_cost_pct" in str(p.column) for p in problems), problems
