"""Inputs the reader must refuse or report: oversized files judged from their shape before parsing, text fields
beyond their documented length, overlapping district polygons (with the overlap's area), buildings in an overlap,
ids with non-ASCII letters, and TOML nested too deeply. Limits: docs/input_format.md.

Overlap areas are checked against the equirectangular area of the square (common practice for small areas:
1 degree of latitude = 111.32 km, 1 degree of longitude = 111.32 km x cos(latitude); value from memory).
"""

from __future__ import annotations

import json
import math
import re
import shutil
from pathlib import Path

import pytest

from engine.scenario import load_scenario, validate_scenario

TINY = Path(__file__).parent / "fixtures" / "tiny_city"


@pytest.fixture
def city(tmp_path) -> Path:
    return Path(shutil.copytree(TINY, tmp_path / "city"))


def _messages(folder: Path, file: str | None = None) -> list[str]:
    return [f"{p}" for p in validate_scenario(folder) if file is None or p.file == file]


def test_a_long_hourly_file_is_refused_with_its_row_count(city):
    header = (city / "hourly.csv").read_text().splitlines()[0]
    rows = 100_000
    (city / "hourly.csv").write_text(header + "\n" + "1,5.0,60.0,400.0,75.0,160.0\n" * rows)
    messages = _messages(city, "hourly.csv")
    assert any(f"{rows} hourly rows" in m and "8760" in m for m in messages), messages


def test_a_half_hourly_file_still_gets_its_hint(city):
    lines = (city / "hourly.csv").read_text().splitlines()
    doubled = [lines[0]] + [f"{i}," + lines[1 + i // 2].split(",", 1)[1] for i in range(2 * (len(lines) - 1))]
    (city / "hourly.csv").write_text("\n".join(doubled) + "\n")
    assert any("17520 hourly rows" in m for m in _messages(city, "hourly.csv"))


def test_a_huge_scenario_name_is_refused(city):
    path = city / "scenario.toml"
    path.write_text(path.read_text().replace('name = "Tiny city"', 'name = "' + "x" * 1_000_000 + '"'))
    messages = _messages(city, "scenario.toml")
    assert any("run.name" in m and "at most 200" in m for m in messages), messages


def test_a_long_id_and_a_long_name_are_refused(city):
    path = city / "technologies.csv"
    text = path.read_text().replace("gas_boiler,Gas condensing boiler", "g" * 65 + "," + "n" * 201, 1)
    path.write_text(text)
    messages = _messages(city, "technologies.csv")
    assert any("technology_id" in m and "at most 64" in m for m in messages), messages
    assert any("'name'" in m or "name" in m and "at most 200" in m for m in messages), messages


@pytest.mark.parametrize("file, old, new", [
    ("technologies.csv", "gas_boiler,Gas", "gäs_boiler,Gas"),
    ("districts.geojson", '"district_id": "old_town"', '"district_id": "Süd"'),
])
def test_non_ascii_ids_are_refused_saying_ascii(city, file, old, new):
    path = city / file
    path.write_text(path.read_text(encoding="utf-8").replace(old, new, 1), encoding="utf-8")
    messages = [m for m in _messages(city, file) if "ASCII" in m]
    assert messages, _messages(city)
    assert any("A-Z" in m and "'_'" in m for m in messages)


def _overlapping_city(city: Path, shift_deg: float) -> None:
    path = city / "districts.geojson"
    data = json.loads(path.read_text())
    first = data["features"][0]["geometry"]["coordinates"][0]
    data["features"][1]["geometry"]["coordinates"] = [[[lon + shift_deg, lat] for lon, lat in first]]
    path.write_text(json.dumps(data))


def test_overlapping_districts_are_reported_with_their_area(city):
    _overlapping_city(city, 0.005)  # the second square slid half onto the first
    messages = [m for m in _messages(city, "districts.geojson") if "overlaps" in m]
    assert len(messages) == 1, _messages(city)
    expected_km2 = 0.005 * 0.01 * 111.32**2 * math.cos(math.radians(48.005))
    reported = float(re.search(r"by ([0-9.]+) km²", messages[0]).group(1))
    assert reported == pytest.approx(expected_km2, rel=0.01)
    assert "50%" in messages[0]


def test_districts_sharing_an_edge_do_not_overlap(city):
    assert not [m for m in _messages(city) if "overlap" in m]


def test_a_building_in_an_overlap_is_reported(city):
    _overlapping_city(city, 0.005)
    path = city / "buildings.csv"
    path.write_text(path.read_text().replace("b2,11.008,48.009", "b2,11.007,48.005", 1))
    messages = [m for m in _messages(city, "buildings.csv") if "overlap" in m]
    assert messages and "'b2'" in messages[0], _messages(city)


def test_deeply_nested_toml_is_a_plain_sentence_with_its_line(city):
    path = city / "scenario.toml"
    path.write_text(path.read_text().replace("[run]\n", "[run]\nnested = " + "[" * 5000 + "]" * 5000 + "\n", 1))
    [problem] = [p for p in validate_scenario(city) if p.file == "scenario.toml"]
    assert problem.row == 2
    assert "nested too deeply" in problem.message and "Recursion" not in problem.message


def test_the_tiny_city_still_loads(city):
    assert load_scenario(city).districts is not None
