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
