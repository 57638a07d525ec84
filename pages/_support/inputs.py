"""Input sets: the scenario files the dashboard works on, and what reading them gave.

A set comes from the demo city, an uploaded bundle or a saved run; reading never raises for bad input, the
problems come back as a table (file, row, column, message) the set-up page shows.
"""

from __future__ import annotations

import hashlib
import math
import shutil
import tempfile
from collections.abc import Mapping
from dataclasses import dataclass, field
from pathlib import Path

import pandas as pd

from engine.scenario import DEMO_DIR, load_scenario
from engine.scenario.files import REQUIRED_FILES
from engine.scenario.inputs import Scenario
from engine.scenario.problems import InputError, Problem, problems_frame
from engine.storage.bundle import BundleError, read_bundle
from engine.storage.store import StoreError, check_scenario_files, read_scenario_files


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

def input_set_from_files(files: Mapping[str, bytes], label: str, manifest: dict | None = None) -> InputSet:
    """An :class:`InputSet` from scenario files held in memory."""
    files = dict(files)
    scenario, problems = scenario_from_files(files)
    return InputSet(label, files, scenario, problems_frame(problems), dict(manifest or {}))

def demo_input_set() -> InputSet:
    """The demo city shipped with heatmosaic (``demo_data/``)."""
    files = read_scenario_files(DEMO_DIR)
    return input_set_from_files(files, "Demo city")

def input_set_from_bundle(data: bytes, workdir: str | Path, label: str = "uploaded bundle") -> InputSet:
    """Check and read an uploaded bundle (zip); problems come back in the table, never as an exception."""
    workdir = Path(workdir)
    workdir.mkdir(parents=True, exist_ok=True)
    dest = Path(tempfile.mkdtemp(prefix="bundle-", dir=workdir))
    try:
        contents = read_bundle(bytes(data), dest)
        files = read_scenario_files(contents.input_folder)
    except BundleError as exc:
        return InputSet(label, {}, None, problems_frame([Problem(label, None, None, str(exc))]), {})
    except Exception as exc:  # a damaged upload must read as a message, not a traceback
        message = f"could not be read as a bundle ({type(exc).__name__}: {exc})"
        return InputSet(label, {}, None, problems_frame([Problem(label, None, None, message)]), {})
    finally:
        shutil.rmtree(dest, ignore_errors=True)  # the files are in memory now
    missing = [name for name in REQUIRED_FILES if name not in files]
    if missing:
        problems = [
            Problem(name, None, None, "is missing from the bundle's inputs/ folder; the bundle cannot be re-solved")
            for name in missing
        ]
        return InputSet(label, files, None, problems_frame(problems), contents.manifest)
    return input_set_from_files(files, label, contents.manifest)


def problems_for_display(problems: pd.DataFrame) -> pd.DataFrame:
    """A problems table (file, row, column, message) with blank cells where a problem names no row or column."""
    out = problems.copy()
    out["row"] = ["" if pd.isna(r) else str(int(r)) for r in out["row"]]
    out["column"] = ["" if c is None or (isinstance(c, float) and math.isnan(c)) else str(c) for c in out["column"]]
    return out

def cost_case_descriptions(scenario: Scenario) -> dict[str, str]:
    """Cost case name -> description, in the order of the file."""
    return {name: case.description for name, case in scenario.cost_cases.items()}
