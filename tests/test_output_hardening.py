"""Outputs that cannot mislead: no stale tables beside a failed run, no spreadsheet formulas in any CSV the tool
writes, and command-line arguments checked before any work.

The formula rule is the OWASP "CSV Injection" page's (cells starting with ``=``, ``+``, ``-``, ``@``, tab or
carriage return get a leading apostrophe); the exit codes are those of ``engine/cli/__init__.py``.
"""

from __future__ import annotations

import csv
import io
import json
import math
import shutil
import zipfile
from pathlib import Path

import pandas as pd
import pytest

from engine.cli import main
from engine.model.results import RunResult
from engine.outputs.csvfile import csv_text, defuse_frame, guard_text, restore_frame, restore_text
from engine.outputs.export import tables_csv_zip
from engine.outputs.outfolder import RECORD_NAME, publish_files
from engine.storage.bundle import export_bundle, read_bundle
from engine.storage.library import export_library
from engine.storage.store import ScenarioStore
from engine.model.solve import solve_scenario
from engine.scenario import load_scenario

TINY = Path(__file__).parent / "fixtures" / "tiny_city"
FORMULA_START = ("=", "+", "-", "@", "\t", "\r")  # OWASP "CSV Injection"
HOSTILE = ['=HYPERLINK("http://example.invalid","x")', "+1+1", "-2+3", "@SUM(A1)", "\t=1", "\r=1", "'=1"]


def _is_number(text: str) -> bool:
    try:
        float(text)
    except ValueError:
        return False
    return True


def formula_cells(data: bytes) -> list[str]:
    """Every cell of a CSV file that a spreadsheet program would read as a formula (numbers are not formulas)."""
    rows = csv.reader(io.StringIO(data.decode("utf-8"), newline=""))
    return [cell for row in rows for cell in row if cell.startswith(FORMULA_START) and not _is_number(cell)]


_SOLVED = {}


def hostile_result() -> RunResult:
    """The tiny city solved (once per session), with formula-leading text in its tables."""
    if "tiny" not in _SOLVED:
        _SOLVED["tiny"] = solve_scenario(load_scenario(TINY), typical_days=2)
    solved = _SOLVED["tiny"]
    assert solved.solved
    result = RunResult(**{**solved.__dict__, "tables": dict(solved.tables)})
    districts = result.tables["districts"].copy()
    districts["name"] = [HOSTILE[i % len(HOSTILE)] for i in range(len(districts))]
    result.tables["districts"] = districts
    supply = result.tables["supply"].copy()
    supply["technology_id"] = supply["technology_id"].astype(object)
    supply.loc[supply.index[0], "technology_id"] = "@cmd"
    result.tables["supply"] = supply
    result.tables["notes"] = pd.DataFrame({"=header": ["-x", "ok"], "value": [-1.5, 2.0]})
    return result


# ====================================================================================== the rule itself
def test_guard_follows_the_owasp_rule_and_leaves_numbers():
    """OWASP "CSV Injection": formula-leading text gets an apostrophe; numbers stay numbers."""
    for text in HOSTILE:
        assert guard_text(text).startswith("'")
    assert guard_text("Old town") == "Old town"
    assert guard_text("'plain") == "'plain"
    assert guard_text(-3.5) == -3.5
    frame = pd.DataFrame({"n": [-1, 2], "x": [-1.5, 3.0], "t": ["-1", "a"]})
    text = csv_text(frame)
    assert text.splitlines()[1] == "-1,-1.5,'-1"


def test_defusing_round_trips_exactly():
    frame = pd.DataFrame({"t": HOSTILE + ["''=a", "'", None], "s": pd.array(HOSTILE + ["a", "b", None],
                                                                            dtype="string")})
    back = restore_frame(defuse_frame(frame))
    pd.testing.assert_frame_equal(back, frame)
    for text in HOSTILE + ["''=x", "'a", "a"]:
        assert restore_text(guard_text(text)) == text


# ====================================================================================== every CSV the tool writes
def test_run_write_csvs_hold_no_formula(tmp_path):
    result = hostile_result()
    out = result.write(tmp_path / "out")
    csvs = sorted(out.glob("*.csv"))
    assert {p.stem for p in csvs} == set(result.tables)
    for path in csvs:
        assert formula_cells(path.read_bytes()) == [], path.name
    names = pd.read_csv(out / "districts.csv")["name"].tolist()
    assert names[0] == "'" + HOSTILE[0]


def test_dashboard_zip_library_and_bundle_csvs_hold_no_formula(tmp_path):
    result = hostile_result()
    with zipfile.ZipFile(io.BytesIO(tables_csv_zip({"=run": result}))) as archive:
        for name in archive.namelist():
            assert formula_cells(archive.read(name)) == [], name
    with ScenarioStore(tmp_path / "s.sqlite") as store:
        store.save_run(result, "=evil name", note="+note")
        library = export_library(store, tmp_path / "lib.zip")
    with zipfile.ZipFile(library) as archive:
        csv_names = [n for n in archive.namelist() if n.endswith(".csv")]
        assert csv_names
        for name in csv_names:
            assert formula_cells(archive.read(name)) == [], name
    bundle = export_bundle(result, {}, tmp_path / "b.zip")
    with zipfile.ZipFile(bundle) as archive:
        csv_names = [n for n in archive.namelist() if n.endswith(".csv")]
        assert len(csv_names) == len(result.tables)
        for name in csv_names:
            assert formula_cells(archive.read(name)) == [], name
    # the bundle reader undoes the defusing: the tables come back exactly
    contents = read_bundle(bundle, tmp_path / "opened")
    for name in ("districts", "supply", "notes"):  # the tables with hostile text
        pd.testing.assert_frame_equal(contents.tables[name], result.tables[name], check_dtype=False,
                                      check_column_type=False)


# ====================================================================================== stale results
def test_publish_removes_what_the_last_command_wrote(tmp_path):
    out = tmp_path / "out"
    publish_files(out, {"summary.json": b"{}", "a.csv": b"1", "b.csv": b"2"})
    (out / "my_notes.txt").write_text("mine")
    publish_files(out, {"summary.json": b"{}"})
    assert sorted(p.name for p in out.iterdir()) == sorted([RECORD_NAME, "summary.json", "my_notes.txt"])
    assert not [p for p in tmp_path.iterdir() if p.name.startswith(".out-new-")]


def test_failed_solve_into_a_used_folder_leaves_no_old_table(tmp_path, capsys):
    out = tmp_path / "out"
    args = ["solve", str(TINY), "--typical-days", "2", "--quiet", "--out", str(out)]
    assert main(args) == 0
    assert (out / "dispatch.csv").exists()
    assert main(args + ["--time-limit-s", "1e-9"]) == 3
    assert sorted(p.name for p in out.iterdir() if not p.name.startswith(".")) == ["summary.json"]
    summary = json.loads((out / "summary.json").read_text(), parse_constant=lambda c: pytest.fail(c))
    assert summary["status"] != "optimal"


def test_failed_result_write_has_strict_json(tmp_path):
    result = RunResult(status="infeasible", message="no", settings={"co2_cap_t_per_a": math.nan, "x": math.inf})
    out = result.write(tmp_path / "o")
    text = (out / "summary.json").read_text()
    assert "NaN" not in text and "Infinity" not in text
    assert json.loads(text)["settings"] == {"co2_cap_t_per_a": None, "x": None}


# ====================================================================================== arguments
@pytest.mark.parametrize("flags, words", [
    (["solve", "{tiny}", "--co2-cap-t", "nan"], "--co2-cap-t"),
    (["solve", "{tiny}", "--co2-cap-t", "inf"], "--co2-cap-t"),
    (["solve", "{tiny}", "--co2-cap-t", "-1"], "--co2-cap-t"),
    (["solve", "{tiny}", "--typical-days", "100000"], "366"),
    (["solve", "{tiny}", "--typical-days", "-3"], "--typical-days"),
    (["solve", "{tiny}", "--time-limit-s", "-1"], "--time-limit-s"),
    (["solve", "{tiny}", "--time-limit-s", "0"], "--time-limit-s"),
    (["solve", "{tiny}", "--time-limit-s", "nan"], "--time-limit-s"),
    (["solve", "{tiny}", "--horizon-years", "nan", "--interference"], "--horizon-years"),
    (["solve", "{tiny}", "--out", "{file}"], "existing file"),
    (["tradeoff", "{tiny}", "--points", "1"], "--points"),
    (["tradeoff", "{tiny}", "--points", "100000"], "--points"),
    (["tradeoff", "{tiny}", "--out", "{file}"], "existing file"),
    (["sweep", "{tiny}", "--sample", "0"], "--sample"),
    (["sweep", "{tiny}", "--sample", "10000000"], "--sample"),
    (["sweep", "{tiny}", "--sample", "2", "--workers", "0"], "--workers"),
    (["sweep", "{tiny}", "--sample", "2", "--seed", "-1"], "--seed"),
    (["sweep", "{tiny}", "--cost-cases", "all", "--out", "{file}"], "existing file"),
    (["fidelity", "{tiny}", "--days", "0,4"], "--days"),
    (["fidelity", "{tiny}", "--days", "400"], "--days"),
    (["export-lp", "{tiny}", "--out", "x.lp", "--typical-days", "999"], "--typical-days"),
])
def test_bad_arguments_exit_2_before_any_work(tmp_path, capsys, monkeypatch, flags, words):
    existing = tmp_path / "afile"
    existing.write_text("keep")

    def no_work(*args, **kwargs):
        raise AssertionError("the scenario was read before the arguments were checked")

    monkeypatch.setattr("engine.cli.common.load_scenario", no_work)
    argv = [f.format(tiny=TINY, file=existing) for f in flags]
    assert main(argv) == 2
    err = capsys.readouterr().err
    assert words in err and "Traceback" not in err
    assert existing.read_text() == "keep"
