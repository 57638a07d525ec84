"""The results page states what the time resolution of a run costs in accuracy (or where to measure it)."""

from __future__ import annotations

from pages._support.describe import resolution_note
from engine.scenario import DEMO_DIR, load_scenario
from engine.model.results import RunResult


def _result(days: int) -> RunResult:
    return RunResult(status="optimal", message="", cost_case="reference", objective="cost",
                     settings={"typical_days": days})


def test_full_year_needs_no_approximation():
    assert "full hourly year" in resolution_note(load_scenario(DEMO_DIR), _result(0))


def test_unmeasured_resolution_says_where_to_measure(tmp_path, monkeypatch):
    monkeypatch.setenv("HEATMOSAIC_STORE", str(tmp_path / "store.sqlite"))
    note = resolution_note(load_scenario(DEMO_DIR), _result(12))
    assert "12 typical days" in note and "not been measured" in note
    assert "How firm tab" in note  # where the technology split's range is (tests/test_firmness.py)


def test_stores_from_day_to_day_ask_for_the_full_year_check(tmp_path, monkeypatch):
    """A typical-day run whose stores carry heat from day to day says why its plan needs the full-year check
    (docs/model.md section 8: the linked demo plans left heat unserved over the hourly year)."""
    monkeypatch.setenv("HEATMOSAIC_STORE", str(tmp_path / "store.sqlite"))
    linked = RunResult(status="optimal", message="", cost_case="reference", objective="cost",
                       settings={"typical_days": 12, "stores_between_days": True})
    note = resolution_note(load_scenario(DEMO_DIR), linked)
    assert "carry heat from day to day" in note and "Full-year check" in note
    assert "day to day" not in resolution_note(load_scenario(DEMO_DIR), _result(12))
