"""A plain scenario folder as one zip file, and a scenario folder named by its path: opening them and writing one.

A planner who keeps a city in a folder (docs/input_format.md) sends it as a zip, or names the folder on their own
computer. Unlike a bundle (:mod:`engine.storage.bundle`) such a zip has no manifest and no checksums: it is the
folder's files, at the top of the zip or in exactly one folder inside it (the way "compress this folder" writes
it). It arrives from outside, so it is opened through :class:`~engine.storage.safezip.CheckedZip`: path
traversal, links, zip bombs and oversized entries are refused before anything is read. Only scenario file names
(:data:`~engine.scenario.files.SCENARIO_FILES`) are read; other files are left out (with a hint when a name is
close to a scenario file's). What the files say is checked afterwards by the scenario reader, which names file,
row and column of every problem.

* :func:`zip_kind`: ``"bundle"`` or ``"folder"``, told by content (a bundle has ``manifest.json`` at its top);
* :func:`read_folder_zip`: the scenario files of a plain folder zip;
* :func:`read_folder_path`: the scenario files of a folder on this computer (or of a zip file named by path);
* :func:`scenario_folder_zip`: the bytes of a zip that :func:`read_folder_zip` opens again to the same files.
"""

from __future__ import annotations

import posixpath
import re
import tempfile
from collections.abc import Mapping
from pathlib import Path

from engine.scenario.files import SCENARIO_FILE, SCENARIO_FILES, missing_files
from engine.scenario.problems import Problem
from engine.scenario.tables import close_names
from engine.storage.safezip import DEFAULT_LIMITS, CheckedZip, ZipLimits, ZipRefused, write_checked_zip
from engine.storage.store import StoreError, check_scenario_files

BUNDLE_MANIFEST = "manifest.json"
FOLDER_ZIP_HELP = (
    "a scenario folder zip holds scenario.toml, technologies.csv, hourly.csv and one districts layer "
    "(docs/input_format.md), at the top of the zip or in one folder inside it"
)
_JUNK = re.compile(r"(^|/)(__MACOSX/|\._|\.DS_Store$|Thumbs\.db$|desktop\.ini$)", re.IGNORECASE)
"""Entries that operating systems add to a zip of a folder; passed over without a word."""


class ScenarioZipError(ZipRefused):
    """A zip or folder that cannot be opened as a scenario folder; the message says why in plain words."""


def _open(data, limits: ZipLimits) -> CheckedZip:
    # Every name is allowed here and read as bytes: the entries the scenario does not use are never read, and the
    # reader judges the text of those it does. The safety checks of CheckedZip (paths, links, sizes, ratios) all apply.
    return CheckedZip(data, lambda name: True, limits, "zip", binary=lambda name: True, archives=lambda name: True)


def zip_kind(data, limits: ZipLimits = DEFAULT_LIMITS) -> str:
    """``"bundle"`` when the zip has ``manifest.json`` at its top (a run bundle), else ``"folder"``.

    Raises
    ------
    ScenarioZipError
        If it is not a readable zip or breaks a safety limit.
    """
    try:
        with _open(data, limits) as checked:
            return "bundle" if BUNDLE_MANIFEST in checked.names else "folder"
    except ZipRefused as exc:
        raise ScenarioZipError(str(exc)) from None


def ignored_file_notes(names, where: str = "") -> list[Problem]:
    """Warnings for files left out whose name is close to a scenario file's (a likely misspelling)."""
    notes = []
    present = set(names)
    for name in sorted(present - set(SCENARIO_FILES)):
        close = [c for c in close_names(name, list(SCENARIO_FILES)) if c not in present]
        if close:
            notes.append(Problem(
                f"{where}{name}", None, None,
                f"is not a scenario file and is left out; did you mean '{close[0]}'? Rename it",
            ))
    return notes


def _scenario_prefix(names: list[str]) -> str:
    """The folder inside the zip that holds the scenario ("" for the top), or ScenarioZipError."""
    tomls = sorted(n for n in names if posixpath.basename(n) == SCENARIO_FILE)
    if not tomls:
        if any(posixpath.basename(n) in SCENARIO_FILES for n in names):
            raise ScenarioZipError(f"the zip holds no {SCENARIO_FILE}, so it is not a scenario folder: {FOLDER_ZIP_HELP}")
        raise ScenarioZipError(f"the zip holds no scenario files: {FOLDER_ZIP_HELP}")
    if len(tomls) > 1:
        folders = ", ".join(posixpath.dirname(t) + "/" if "/" in t else "(top of the zip)" for t in tomls[:5])
        raise ScenarioZipError(
            f"the zip holds {len(tomls)} scenario folders ({folders}); zip one scenario folder at a time"
        )
    toml = tomls[0]
    if toml.count("/") > 1:
        raise ScenarioZipError(
            f"its {SCENARIO_FILE} lies {toml.count('/')} folders deep ({toml}); zip the scenario folder itself, so "
            "that its files are at the top of the zip or in one folder inside it"
        )
    return posixpath.dirname(toml) + "/" if "/" in toml else ""


def read_folder_zip(data, limits: ZipLimits = DEFAULT_LIMITS) -> tuple[dict[str, bytes], list[Problem], str]:
    """The scenario files of a plain scenario folder zip.

    Returns
    -------
    (files, notes, folder)
        ``files`` maps scenario file names to bytes; ``notes`` are warnings about files left out; ``folder`` is
        the name of the folder inside the zip ("" when the files are at its top).

    Raises
    ------
    ScenarioZipError
        With one sentence: not a readable zip, a safety limit broken (path traversal, a zip bomb ...), no or
        several scenario folders, or a bundle (open those through :mod:`engine.storage.bundle`).
    """
    try:
        with _open(data, limits) as checked:
            names = [n for n in checked.names if not _JUNK.search(n)]
            if BUNDLE_MANIFEST in names:
                raise ScenarioZipError("the zip is a run bundle (it has manifest.json), not a plain scenario folder")
            prefix = _scenario_prefix(names)
            inside = [n[len(prefix):] for n in names if n.startswith(prefix) and "/" not in n[len(prefix):]]
            files = {name: checked.read(prefix + name) for name in inside if name in SCENARIO_FILES}
    except ZipRefused as exc:
        if isinstance(exc, ScenarioZipError):
            raise
        raise ScenarioZipError(str(exc)) from None
    return files, ignored_file_notes(inside, prefix), prefix.rstrip("/")


def read_folder_path(text: str, limits: ZipLimits = DEFAULT_LIMITS) -> tuple[dict[str, bytes], list[Problem]]:
    """The scenario files of a folder on this computer, typed as a path; a path to a ``.zip`` file opens that zip
    as :func:`read_folder_zip` does.

    Raises
    ------
    ScenarioZipError
        With one sentence when the path is empty, does not exist, cannot be read or is not a scenario folder.
    """
    raw = str(text or "").strip().strip("\"'").strip()
    if not raw:
        raise ScenarioZipError("type the path of a scenario folder first")
    path = Path(raw).expanduser()
    try:
        if not path.exists():
            raise ScenarioZipError(f"there is no folder '{raw}' on this computer; check the path (copy it from the "
                                   "file manager's address bar)")
        if path.is_file():
            if path.suffix.lower() != ".zip":
                raise ScenarioZipError(f"'{raw}' is a file, not a folder; type the path of the scenario folder that "
                                       f"holds {SCENARIO_FILE}")
            files, notes, _ = read_folder_zip(path, limits)
            return files, notes
        names = sorted(p.name for p in path.iterdir() if p.is_file())
        if SCENARIO_FILE not in names:
            inner = sorted(p.name for p in path.iterdir() if p.is_dir() and (p / SCENARIO_FILE).is_file())
            hint = f"; type the path of its folder '{inner[0]}', which holds one" if len(inner) == 1 else ""
            raise ScenarioZipError(f"'{raw}' holds no {SCENARIO_FILE}, so it is not a scenario folder "
                                   f"(docs/input_format.md){hint}")
        files = {}
        total = 0
        for name in SCENARIO_FILES:
            candidate = path / name
            if candidate.is_file():
                size = candidate.stat().st_size
                total += size
                if size > limits.max_entry_bytes or total > limits.max_total_bytes:
                    raise ScenarioZipError(f"'{name}' in '{raw}' makes the folder larger than the "
                                           f"{limits.max_total_bytes // 2**20} MiB a scenario may hold")
                files[name] = candidate.read_bytes()
    except OSError as exc:
        raise ScenarioZipError(f"'{raw}' cannot be read ({exc.strerror or exc})") from None
    return files, ignored_file_notes(names)


def folder_name(text: str) -> str:
    """A safe folder name for a zip's one folder, from a scenario's name ("scenario" when nothing is left)."""
    name = re.sub(r"[^A-Za-z0-9_-]+", "_", str(text or "")).strip("_")[:60]
    return name or "scenario"


def scenario_folder_zip(files: Mapping[str, bytes], folder: str = "scenario") -> bytes:
    """A zip of scenario files in one folder ``folder``, which :func:`read_folder_zip` opens to the same files.

    Raises
    ------
    ScenarioZipError
        If a name is not a scenario file or a text file is not UTF-8, or a required file is missing.
    """
    try:
        files = check_scenario_files(files, "the scenario folder")
    except StoreError as exc:
        raise ScenarioZipError(str(exc)) from None
    missing = missing_files(files)
    if missing:
        raise ScenarioZipError(f"the scenario folder lacks {', '.join(missing)}")
    folder = folder_name(folder)
    with tempfile.TemporaryDirectory(prefix="heatmosaic-folder-") as temp:
        path = write_checked_zip(Path(temp) / "scenario.zip", [(f"{folder}/{n}", files[n]) for n in sorted(files)])
        return path.read_bytes()
