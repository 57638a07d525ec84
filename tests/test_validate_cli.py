"""Tests of the ``validate`` command (engine.scenario.folder.validate_command and ``python -m engine validate DIR``).

What the command must print and return is the project's command-line contract: ``OK: <n> districts, <m> wells,
<k> technologies, <h> hours`` and exit code 0, or one line per problem (``file, row R, column C: message``) and
exit code 2, never a traceback. The counts are read from the fixture's raw files.
"""

from __future__ import annotations

import csv
import importlib.util
import json
import shutil
import subprocess
import sys
from pathlib import Path

import pytest

from engine.scenario import folder as io

ROOT = Path(__file__).resolve().parents[1]
FIXTURES = Path(__file__).resolve().parent / "fixtures"
TINY = FIXTURES / "tiny_city"


def _generator():
    spec = importlib.util.spec_from_file_location("make_tiny_city", FIXTURES / "make_tiny_city.py")
    module = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(module)
    return module


def _data_rows(path: Path) -> int:
    with path.open(encoding="utf-8", newline="") as handle:
        return sum(1 for _ in csv.DictReader(handle))


def _expected_ok_line(folder: Path) -> str:
    districts = len(json.loads((folder / "districts.geojson").read_text(encoding="utf-8"))["features"])
    return (
        f"OK: {districts} districts, {_data_rows(folder / 'wells.csv')} wells, "
        f"{_data_rows(folder / 'technologies.csv')} technologies, {_data_rows(folder / 'hourly.csv')} hours"
    )


def test_valid_folder_prints_ok_and_returns_0(capsys):
    """A valid folder prints the one OK line with the counts of its files and returns 0 (CLI contract)."""
    assert io.validate_command(TINY) == 0
    out = capsys.readouterr().out
    assert out.strip() == _expected_ok_line(TINY) == "OK: 2 districts, 3 wells, 6 technologies, 8760 hours"


def test_broken_folder_prints_every_problem_and_returns_2(tmp_path, capsys):
    """A folder with errors seeded across many files prints one line per problem, each seeded error among them
    with its file, row and column, and returns 2 (CLI contract; row counting of docs/input_format.md)."""
    seeded = _generator().write_broken(tmp_path / "broken")
    assert io.validate_command(tmp_path / "broken") == 2
    lines = capsys.readouterr().out.strip().splitlines()
    problems = io.validate_scenario(tmp_path / "broken")
    assert lines[:-1] == [str(problem) for problem in problems]
    assert lines[-1].startswith(f"{len(problems)} problem(s) found")
    for file, row, column, word in seeded:
        matching = [p for p in problems if (p.file, p.row, p.column) == (file, row, column) and word in p.message]
        assert matching, f"not reported: {file}, {row}, {column}"
        assert str(matching[0]) in lines
    assert "Traceback" not in "\n".join(lines)


def test_missing_folder_returns_2_without_traceback(tmp_path, capsys):
    """A folder that does not exist is one problem line and exit code 2 (CLI contract)."""
    assert io.validate_command(tmp_path / "nowhere") == 2
    out = capsys.readouterr().out
    assert "does not exist" in out and "Traceback" not in out


def test_unexpected_exception_is_a_problem_line(tmp_path, capsys, monkeypatch):
    """Even a failure the reader did not foresee prints as a problem and returns 2 (project rule: never a
    traceback)."""
    folder = Path(shutil.copytree(TINY, tmp_path / "tiny"))

    def broken(*args, **kwargs):
        raise MemoryError("out of memory while reading")

    monkeypatch.setattr(io, "load_hourly", broken)
    assert io.validate_command(folder) == 2
    out = capsys.readouterr().out
    assert "hourly.csv: could not be read (MemoryError: out of memory while reading)" in out

    def broken_folder(*args, **kwargs):
        raise RuntimeError("unreadable folder")

    monkeypatch.setattr(io, "_read_folder", broken_folder)
    assert io.validate_command(folder) == 2
    assert "unreadable folder" in capsys.readouterr().out


def test_python_m_engine_validate(tmp_path):
    """``python -m engine validate DIR`` gives the same lines and exit codes as validate_command (CLI contract)."""
    ok = subprocess.run(
        [sys.executable, "-m", "engine", "validate", str(TINY)], cwd=ROOT, capture_output=True, text=True, timeout=120
    )
    assert ok.returncode == 0, ok.stderr
    assert ok.stdout.strip() == _expected_ok_line(TINY)
    _generator().write_broken(tmp_path / "broken")
    bad = subprocess.run(
        [sys.executable, "-m", "engine", "validate", str(tmp_path / "broken")],
        cwd=ROOT,
        capture_output=True,
        text=True,
        timeout=120,
    )
    assert bad.returncode == 2
    assert "Traceback" not in bad.stdout + bad.stderr
    expected = [str(p) for p in io.validate_scenario(tmp_path / "broken")]
    assert bad.stdout.strip().splitlines()[:-1] == expected
