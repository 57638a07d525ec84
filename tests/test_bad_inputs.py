"""The reader against the bad-input corpus (``tests/broken_inputs/make_corpus.py``).

Each case is the tiny city with one kind of damage. The contract comes from the project rules and
``docs/input_format.md``: bad input gives exit code 2 from ``python -m engine validate`` and ``solve``, and one
line per problem that names the file, the row and the column (header = row 1; GeoJSON feature numbers; TOML lines)
and says what is wrong and how to fix it, never a traceback. The valid variants (a leap year, Windows line ends,
a byte-order mark ...) return 0 from both commands; docs/input_format.md allows 8784 rows, and CR LF line ends and
a UTF-8 byte-order mark are what spreadsheets on Windows write (common practice). The corpus is built in a
temporary folder per test, so nothing generated is committed.
"""

from __future__ import annotations

import importlib.util
import json
import subprocess
import sys
from pathlib import Path

import pytest

from engine.scenario import folder as io
from engine.scenario import tables
from pages._support.inputs import input_set_from_bundle
from engine.cli import main
from engine.storage.bundle import BundleError, export_bundle
from engine.scenario.problems import Problem
from engine.model.results import RunResult
from engine.storage.store import read_scenario_files

ROOT = Path(__file__).resolve().parents[1]


def _load_corpus():
    if "make_corpus" in sys.modules:
        return sys.modules["make_corpus"]
    spec = importlib.util.spec_from_file_location("make_corpus", ROOT / "tests" / "broken_inputs" / "make_corpus.py")
    module = importlib.util.module_from_spec(spec)
    sys.modules["make_corpus"] = module  # dataclasses look their module up while the file runs
    spec.loader.exec_module(module)
    return module


corpus = _load_corpus()
CASES = corpus.CASES
BROKEN = [case for case in CASES if not case.valid]
VALID = [case for case in CASES if case.valid]

UNEXPECTED = ("Traceback", "Unexpected error", "could not be read (")
"""Text that only appears when an exception escaped a check (the last-resort guards of engine/scenario/tables.py and
engine/cli)."""


def _problem_lines(text: str, expected) -> list[str]:
    """Lines of ``text`` that report ``expected`` at its place and say what is wrong and how to fix it."""
    prefix = str(Problem(expected.file, expected.row, expected.column, ""))
    words = [word.lower() for word in expected.what + expected.hint]
    return [
        line.strip()
        for line in text.splitlines()
        if line.strip().startswith(prefix) and all(word in line.lower() for word in words)
    ]


def _no_escaped_exception(text: str) -> None:
    for marker in UNEXPECTED:
        assert marker not in text, text


# ----------------------------------------------------------------------------- the corpus itself
def test_corpus_covers_every_kind_of_damage():
    """The corpus holds the damage families listed for the hardening work, with several cases for most of them
    (project requirement), every case name once."""
    kinds = {case.kind for case in CASES}
    assert {
        "missing or extra columns",
        "wrong types",
        "units off by 1000",
        "NaN and infinity",
        "negative or absurd values",
        "hourly series",
        "duplicate ids",
        "well and building binding",
        "polygons",
        "coordinate systems",
        "encodings",
        "empty files",
        "huge files",
        "syntax",
        "line endings",
        "cost cases",
        "district technologies",
    } <= kinds
    assert len({case.name for case in CASES}) == len(CASES)
    assert len(BROKEN) >= 70 and len(VALID) >= 6


@pytest.mark.parametrize("case", CASES, ids=[case.name for case in CASES])
def test_each_case_changes_the_fixture(case, tmp_path):
    """A case that leaves the tiny city as it was would test nothing: every case changes at least one file."""
    folder = corpus.build(case, tmp_path / case.name)
    changed = [
        path.name
        for path in folder.iterdir()
        if path.stat().st_size != (corpus.TINY / path.name).stat().st_size
        or path.read_bytes() != (corpus.TINY / path.name).read_bytes()
    ]
    assert changed


# ----------------------------------------------------------------------------- validate
@pytest.mark.parametrize("case", BROKEN, ids=[case.name for case in BROKEN])
def test_validate_names_place_problem_and_fix(case, tmp_path, capsys):
    """``python -m engine validate DIR`` returns 2 and prints, for each damage, a line that starts with the file,
    row and column of the damage and says what is wrong and how to fix it; no exception escapes (project rules;
    row counting of docs/input_format.md)."""
    folder = corpus.build(case, tmp_path / case.name)
    code = main(["validate", str(folder)])
    captured = capsys.readouterr()
    _no_escaped_exception(captured.out + captured.err)
    assert code == 2
    for expected in case.expect:
        assert _problem_lines(captured.out, expected), f"{expected} not in:\n{captured.out}"
    assert captured.out.strip().splitlines()[-1].endswith(f"problem(s) found in {folder}")


@pytest.mark.parametrize("case", VALID, ids=[case.name for case in VALID])
def test_valid_variants_validate(case, tmp_path, capsys):
    """The valid variants print the OK line and return 0 (docs/input_format.md: 8760 or 8784 rows, UTF-8 with or
    without a byte-order mark; blank lines are skipped)."""
    folder = corpus.build(case, tmp_path / case.name)
    code = main(["validate", str(folder)])
    captured = capsys.readouterr()
    assert code == 0, captured.out
    assert captured.out.startswith("OK: 2 districts, ")


# ----------------------------------------------------------------------------- solve
@pytest.mark.parametrize("case", BROKEN, ids=[case.name for case in BROKEN])
def test_solve_refuses_broken_inputs(case, tmp_path, capsys):
    """``python -m engine solve DIR`` returns 2 for bad input, lists the same problems on stderr, writes no
    result and solves nothing (engine/cli exit codes: 2 = input errors)."""
    folder = corpus.build(case, tmp_path / case.name)
    out = tmp_path / "out"
    code = main(["solve", str(folder), "--typical-days", "2", "--out", str(out), "--quiet"])
    captured = capsys.readouterr()
    _no_escaped_exception(captured.out + captured.err)
    assert code == 2
    assert not out.exists()
    for expected in case.expect:
        assert _problem_lines(captured.err, expected), f"{expected} not in:\n{captured.err}"


@pytest.mark.parametrize("case", VALID, ids=[case.name for case in VALID])
def test_valid_variants_solve(case, tmp_path, capsys):
    """The valid variants solve to optimality with two typical days; a leap year's 8784 hours reach the summary
    (engine/cli: exit code 0 = solved; docs/input_format.md allows 8784 rows)."""
    folder = corpus.build(case, tmp_path / case.name)
    out = tmp_path / "out"
    code = main(["solve", str(folder), "--typical-days", "2", "--out", str(out), "--quiet"])
    captured = capsys.readouterr()
    _no_escaped_exception(captured.out + captured.err)
    assert code == 0, captured.err
    summary = json.loads((out / "summary.json").read_text(encoding="utf-8"))
    assert summary["status"] == "optimal"
    hours = io.load_scenario(folder).n_hours
    assert hours == (8784 if case.name == "leap_year_8784" else 8760)


# ----------------------------------------------------------------------------- the command line in a process
def test_command_line_never_shows_a_traceback(tmp_path):
    """In a separate Python process, two of the nastiest cases (a file that is not UTF-8, a file above the size
    limit) print problem lines and exit 2, and a valid variant exits 0 from ``solve`` (project rule: never a
    traceback; the in-process tests above cover every case)."""
    for name in ("utf16_with_bom", "file_above_size_limit"):
        case = corpus.case_named(name)
        folder = corpus.build(case, tmp_path / name)
        done = subprocess.run(
            [sys.executable, "-m", "engine", "validate", str(folder)],
            cwd=ROOT,
            capture_output=True,
            text=True,
            timeout=120,
        )
        _no_escaped_exception(done.stdout + done.stderr)
        assert done.returncode == 2
        for expected in case.expect:
            assert _problem_lines(done.stdout, expected), done.stdout
    folder = corpus.build(corpus.case_named("windows_line_endings"), tmp_path / "crlf")
    done = subprocess.run(
        [sys.executable, "-m", "engine", "solve", str(folder), "--typical-days", "2", "--out", str(tmp_path / "o")],
        cwd=ROOT,
        capture_output=True,
        text=True,
        timeout=300,
    )
    _no_escaped_exception(done.stdout + done.stderr)
    assert done.returncode == 0, done.stderr


# ----------------------------------------------------------------------------- size limit
def test_size_limit_is_checked_before_reading(tmp_path, monkeypatch):
    """A file above the limit is refused from its size alone: the reader never reads its bytes (project rule:
    a big file gives a message rather than exhausting memory). Here the limit is lowered to 1 kB with monkeypatch
    so that a plain small file is above it."""
    folder = corpus.build(corpus.case_named("header_only_wells"), tmp_path / "small_limit")
    monkeypatch.setattr(tables, "MAX_FILE_BYTES", 1024)
    read = []
    original = Path.read_bytes

    def spy(self):
        read.append(self.name)
        return original(self)

    monkeypatch.setattr(Path, "read_bytes", spy)
    problems = io.validate_scenario(folder)
    too_big = {p.file for p in problems if "larger than the 1 kB limit" in p.message and "aggregate" in p.message}
    expected = {path.name for path in folder.iterdir() if path.stat().st_size > 1024}
    assert too_big == expected and "hourly.csv" in too_big
    assert not set(read) & too_big


# ----------------------------------------------------------------------------- the dashboard
BUNDLED = [
    corpus.case_named(name)
    for name in (
        "decimal_comma",  # a CSV layout problem with a row
        "hour_gap",  # a year-long table
        "unclosed_ring",  # GeoJSON geometry
        "quoted_number_in_toml",  # a TOML value
        "empty_technologies",  # a whole file
        "latin1_umlaut",  # cannot go into a bundle
        "nul_byte",  # refused when the bundle is read
    )
]


def _table_rows(problems) -> list[tuple]:
    rows = problems.astype(object).where(problems.notna(), None).to_dict("records")
    return [(r["file"], r["row"], r["column"], r["message"]) for r in rows]


@pytest.mark.parametrize("case", BUNDLED, ids=[case.name for case in BUNDLED])
def test_uploaded_bundle_shows_the_problems_table(case, tmp_path):
    """A bundle (zip) whose scenario files are broken reads, in the dashboard's set-up page helper, to no scenario
    and a problems table (file, row, column, message) holding the very problems the validator lists, so the page
    can show them (pages/_support/inputs.py; pages/1_Plan_a_run.py shows ``inputs.problems``). A file that is not
    UTF-8 cannot go into a bundle at all, and one with a NUL byte is refused when the bundle is read; both
    refusals name the file (engine/bundle.py)."""
    folder = corpus.build(case, tmp_path / case.name)
    files = read_scenario_files(folder)
    (damaged,) = {e.file for e in case.expect}
    result = RunResult(status="error", message="not solved", cost_case="reference")
    if case.kind == "encodings":
        with pytest.raises(BundleError, match=f"'{damaged}' is not UTF-8"):
            export_bundle(result, files, tmp_path / "bundle.zip")
        return
    bundle = export_bundle(result, files, tmp_path / "bundle.zip")
    loaded = input_set_from_bundle(bundle.read_bytes(), tmp_path / "work")
    scenario, problems, manifest = loaded.scenario, loaded.problems, loaded.manifest
    assert scenario is None
    assert list(problems.columns) == ["file", "row", "column", "message"]
    if case.name == "nul_byte":
        ((file, row, column, message),) = _table_rows(problems)
        assert f"inputs/{damaged}" in message and "NUL" in message
        return
    assert manifest["format"] == "heatmosaic-bundle"
    expected = [(p.file, p.row, p.column, p.message) for p in io.validate_scenario(folder)]
    assert _table_rows(problems) == expected
