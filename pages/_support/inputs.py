"""Input sets: the scenario files the dashboard works on, and what reading them gave.

A set comes from the demo city, an uploaded zip (a run bundle or a plain scenario folder, told apart by content),
a folder path typed on the planner's own computer, or a saved run; reading never raises for bad input, the
problems come back as a table (file, row, column, what is wrong, how to fix it) the set-up page shows. A set that
does not validate is only shown: the page keeps working on the set it had (:func:`keep_or_replace`).

An edited bundle fails its checksums and is refused; the advice (:data:`FIX_ADVICE`) is to zip the bundle's
``inputs/`` folder, whose files are a plain scenario folder, and open that zip: a bundle vouches for the files
its run was solved from, so changed files must not pass for them.
"""

from __future__ import annotations

import hashlib
import re
import shutil
import tempfile
from collections.abc import Mapping
from dataclasses import dataclass, field
from pathlib import Path

import pandas as pd

from engine.scenario import DEMO_DIR, load_scenario
from engine.outputs.csvfile import csv_bytes
from engine.scenario.files import missing_files
from engine.scenario.inputs import Scenario
from engine.scenario.problems import InputError, Problem, problems_frame
from engine.storage.bundle import BundleError, read_bundle
from engine.storage.scenario_zip import (
    ScenarioZipError, folder_name, read_folder_path, read_folder_zip, scenario_folder_zip, zip_kind,
)
from engine.storage.store import StoreError, check_scenario_files, read_scenario_files

FIX_ADVICE = {
    "demo": "The demo files shipped with heatmosaic have problems: reinstall heatmosaic.",
    "bundle": "A bundle cannot be fixed in place: its checksums refuse any changed file. Unzip it, fix the files "
              "in its inputs/ folder, zip that folder and open the zip here: it opens as a plain scenario folder.",
    "folder_zip": "Fix them in the files of the folder, zip the folder again and open the new zip.",
    "folder_path": "Fix them in the files of the folder and press Open folder again.",
    "saved": "Download the scenario folder of this run, fix the files and open the folder zip.",
}
"""What to do about the problems of a refused set, by where it came from (:attr:`InputSet.source`)."""


@dataclass
class InputSet:
    """One set of scenario files and what reading them gave.

    Attributes
    ----------
    label : str
        Where the files came from, in the planner's words ("Demo city", "bundle city.zip", "saved run ...").
    files : dict of str to bytes
        The scenario folder's files.
    scenario : Scenario or None
        The validated scenario; None when the files have problems.
    problems : DataFrame
        file, row, column, message (empty when the files are fine).
    manifest : dict
        The bundle manifest when the files came from a bundle, else empty.
    """

    label: str
    files: dict
    scenario: Scenario | None
    problems: pd.DataFrame
    manifest: dict = field(default_factory=dict)
    source: str = "saved"
    notes: list = field(default_factory=list)
    """Warnings about the files (left out, misspelt names) as :class:`Problem` records."""

    @property
    def advice(self) -> str:
        """What to do about the problems, in the words that fit where the files came from."""
        return FIX_ADVICE.get(self.source, FIX_ADVICE["folder_zip"])

    @property
    def digest(self) -> str:
        return files_digest(self.files)

    @property
    def ok(self) -> bool:
        return self.scenario is not None

def files_digest(files: Mapping[str, bytes]) -> str:
    """SHA-256 over the file names and contents (a cheap key for a set of scenario files)."""
    digest = hashlib.sha256()
    for name in sorted(files):
        digest.update(name.encode())
        digest.update(b"\0")
        digest.update(hashlib.sha256(files[name]).digest())
    return digest.hexdigest()

def scenario_from_files(files: Mapping[str, bytes]) -> tuple[Scenario | None, list[Problem]]:
    """Read scenario files (name -> bytes) through :func:`engine.scenario.load_scenario`.

    Returns the scenario and an empty list, or None and every problem found. Never raises for bad input.
    """
    try:
        files = check_scenario_files(files, "the scenario files")
    except StoreError as exc:
        return None, [Problem("scenario files", None, None, str(exc))]
    with tempfile.TemporaryDirectory(prefix="heatmosaic-inputs-") as folder:
        for name, content in files.items():
            (Path(folder) / name).write_bytes(content)
        try:
            return load_scenario(folder), []
        except InputError as error:
            return None, list(error.problems)

def input_set_from_files(
    files: Mapping[str, bytes], label: str, manifest: dict | None = None, source: str = "saved",
    notes: list | None = None,
) -> InputSet:
    """An :class:`InputSet` from scenario files held in memory."""
    files = dict(files)
    scenario, problems = scenario_from_files(files)
    return InputSet(label, files, scenario, problems_frame(problems), dict(manifest or {}), source, list(notes or []))

def refused_set(label: str, message: str, source: str, file: str | None = None) -> InputSet:
    """A set that could not be opened at all: one problem, one sentence."""
    return InputSet(label, {}, None, problems_frame([Problem(file or label, None, None, message)]), {}, source)

def demo_input_set() -> InputSet:
    """The demo city shipped with heatmosaic (``demo_data/``)."""
    files = read_scenario_files(DEMO_DIR)
    return input_set_from_files(files, "Demo city", source="demo")

def _missing_problems(files: Mapping[str, bytes], where: str) -> list[Problem]:
    layer = "give the districts as one layer (districts.geojson, districts.gpkg or districts.zip)"
    return [Problem(name, None, None, f"is missing from {where}; {layer if name.startswith('districts') else 'add it'}")
            for name in missing_files(files)]

def input_set_from_folder_zip(data: bytes, label: str) -> InputSet:
    """A plain scenario folder zip (no manifest): its files, checked by the scenario reader."""
    try:
        files, notes, _ = read_folder_zip(bytes(data))
    except ScenarioZipError as exc:
        return refused_set(label, str(exc), "folder_zip")
    missing = _missing_problems(files, "the zipped folder")
    if missing:
        return InputSet(label, files, None, problems_frame(missing + notes), {}, "folder_zip", notes)
    return input_set_from_files(files, label, source="folder_zip", notes=notes)

def input_set_from_path(text: str) -> InputSet:
    """A scenario folder on this computer named by its path (or a zip file named by its path)."""
    shown = str(text or "").strip().strip("\"'").strip()
    label = f"Folder {shown}" if shown else "Folder"
    try:
        files, notes = read_folder_path(text)
    except ScenarioZipError as exc:
        return refused_set(label, str(exc), "folder_path", shown or "folder path")
    missing = _missing_problems(files, "the folder")
    if missing:
        return InputSet(label, files, None, problems_frame(missing + notes), {}, "folder_path", notes)
    return input_set_from_files(files, label, source="folder_path", notes=notes)

def open_upload(data: bytes, name: str, workdir: str | Path) -> InputSet:
    """An uploaded zip: a run bundle when it has a manifest, else a plain scenario folder (told by content)."""
    try:
        kind = zip_kind(bytes(data))
    except ScenarioZipError as exc:
        return refused_set(f"Upload {name}", str(exc), "folder_zip", name)
    if kind == "bundle":
        return input_set_from_bundle(data, workdir, f"Bundle {name}")
    return input_set_from_folder_zip(data, f"Folder zip {name}")

def folder_zip_of(inputs: InputSet, files: Mapping[str, bytes] | None = None) -> tuple[bytes, str]:
    """The zip of a set's scenario files (``files`` when given: the files with the page's edits) and its file name;
    it opens again through :func:`open_upload` to the same input hash."""
    name = folder_name(inputs.scenario.settings.name if inputs.scenario is not None else inputs.label)
    return scenario_folder_zip(files if files is not None else inputs.files, name), f"{name}.zip"

def input_set_from_bundle(data: bytes, workdir: str | Path, label: str = "uploaded bundle") -> InputSet:
    """Check and read an uploaded bundle (zip); problems come back in the table, never as an exception."""
    workdir = Path(workdir)
    workdir.mkdir(parents=True, exist_ok=True)
    dest = Path(tempfile.mkdtemp(prefix="bundle-", dir=workdir))
    try:
        contents = read_bundle(bytes(data), dest)
        files = read_scenario_files(contents.input_folder)
    except BundleError as exc:
        message = str(exc)
        if "checksum" in message:
            message += (". To open changed files, zip the bundle's inputs/ folder and open that zip as a plain "
                        "scenario folder")
        return refused_set(label, message, "bundle")
    except Exception as exc:  # a damaged upload must read as a message, not a traceback
        return refused_set(label, f"could not be read as a bundle ({type(exc).__name__}: {exc})", "bundle")
    finally:
        shutil.rmtree(dest, ignore_errors=True)  # the files are in memory now
    missing = missing_files(files)
    if missing:
        problems = [
            Problem(name, None, None, "is missing from the bundle's inputs/ folder; the bundle cannot be re-solved")
            for name in missing
        ]
        return InputSet(label, files, None, problems_frame(problems), contents.manifest, "bundle")
    return input_set_from_files(files, label, contents.manifest, source="bundle")


def problems_for_display(problems: pd.DataFrame) -> pd.DataFrame:
    """A problems table (file, row, column, message) with blank cells where a problem names no row or column."""
    out = problems.copy()
    out["row"] = ["" if pd.isna(r) else str(int(r)) for r in out["row"]]
    out["column"] = ["" if c is None or pd.isna(c) else str(c) for c in out["column"]]
    return out

PROBLEM_TABLE_COLUMNS = ("file", "row", "column", "what is wrong", "how to fix it")
_FIX_START = re.compile(
    r"(give|use|add|divide|multiply|remove|rename|keep|check|write|export|zip|type|save|fix|choose|set|make|"
    r"delete|put|open|change|replace|split|drop|enter|list|declare|reproject|convert|leave|raise|lower|"
    r"shorten|did you mean|either|one of|expected|allowed)\b", re.IGNORECASE)


def split_message(message: str) -> tuple[str, str]:
    """A problem's message as (what is wrong, how to fix it): the advice is the part after the first "; " or
    ": " that reads as one ("give ...", "rename ...", "did you mean ..."); "" when the message has none."""
    text = str(message)
    for separator in ("; ", ": "):
        head, found, tail = text.partition(separator)
        while found:
            if _FIX_START.match(tail.lstrip("('\"")):
                return head.strip(), tail.strip()
            more_head, found, tail = tail.partition(separator)
            head = head + separator + more_head
    return text, ""


def problem_table(problems: pd.DataFrame) -> pd.DataFrame:
    """Every problem in one table: file, row, column, what is wrong, how to fix it (blank where none applies)."""
    shown = problems_for_display(problems)
    parts = [split_message(m) for m in shown["message"]]
    return pd.DataFrame({
        "file": shown["file"].astype(str).to_numpy(),
        "row": shown["row"].to_numpy(),
        "column": shown["column"].to_numpy(),
        "what is wrong": [p[0] for p in parts],
        "how to fix it": [p[1] for p in parts],
    }, columns=list(PROBLEM_TABLE_COLUMNS))


def problems_csv(problems: pd.DataFrame) -> bytes:
    """The problem table as CSV through the project's writer (formula-like cells defused), UTF-8 with BOM so
    spreadsheet programs read the accents."""
    return b"\xef\xbb\xbf" + csv_bytes(problem_table(problems), index=False)


def warnings_frame(inputs: InputSet) -> pd.DataFrame:
    """The warnings of a set that loaded: left-out files and the reader's warnings."""
    warnings = list(inputs.notes) + (list(inputs.scenario.warnings) if inputs.scenario is not None else [])
    return problems_frame(warnings)


def cost_case_descriptions(scenario: Scenario) -> dict[str, str]:
    """Cost case name -> description, in the order of the file."""
    return {name: case.description for name, case in scenario.cost_cases.items()}
