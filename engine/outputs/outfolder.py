"""Output folders that never mix two runs.

A command writes its files (summary.json, tables) into an ``--out`` folder that may hold an earlier run's files. A
run that fails writes only its summary; if the earlier tables stayed beside it they would read as this run's. So
:func:`publish_files` writes every file first into a fresh hidden folder beside the target and then:

* when the target does not exist (or is an empty folder), renames the new folder into its place in one step;
* otherwise removes every file an earlier command wrote there (listed in :data:`RECORD_NAME`) and every file of
  the names the caller owns (the result tables, the study tables) that this command did not write, and moves the
  new files in. Files of other names (a planner's own notes) are left alone.

The file :data:`RECORD_NAME` lists what the last command wrote, so that the next one can remove it.
"""

from __future__ import annotations

import json
import os
import shutil
import tempfile
from collections.abc import Iterable, Mapping
from pathlib import Path

RECORD_NAME = ".heatmosaic-written.json"
"""The hidden file in an output folder that lists the files the last command wrote there."""


class OutputFolderError(OSError):
    """The output folder cannot be used (it is a file, or cannot be created)."""


def output_folder_problem(path: str | os.PathLike) -> str | None:
    """Why ``path`` cannot be an output folder (an existing file, a parent that is a file), or None."""
    path = Path(path)
    if path.exists() and not path.is_dir():
        return f"--out '{path}' names an existing file, not a folder"
    for parent in path.parents:
        if parent.exists():
            if not parent.is_dir():
                return f"--out '{path}': '{parent}' is a file, not a folder"
            if not os.access(parent, os.W_OK | os.X_OK):
                return f"--out '{path}': the folder '{parent}' cannot be written"
            break
    return None


def _previous_record(folder: Path) -> list[str]:
    try:
        names = json.loads((folder / RECORD_NAME).read_text(encoding="utf-8"))
    except (OSError, ValueError, RecursionError):
        return []
    if not isinstance(names, list):
        return []
    return [n for n in names if isinstance(n, str) and n and "/" not in n and "\\" not in n and n not in (".", "..")]


def publish_files(out_dir: str | os.PathLike, files: Mapping[str, bytes], owned: Iterable[str] = ()) -> Path:
    """Put ``files`` (name -> bytes) into the folder ``out_dir`` with no stale file of ours left beside them.

    Parameters
    ----------
    out_dir : path
        The output folder (created with its parents when missing).
    files : dict of str to bytes
        Plain file names (no folders) and their contents.
    owned : iterable of str
        Further file names this kind of command writes; one of them that is not in ``files`` is removed.

    Raises
    ------
    OutputFolderError
        If ``out_dir`` is a file or cannot be created.
    """
    out = Path(out_dir)
    problem = output_folder_problem(out)
    if problem:
        raise OutputFolderError(problem)
    for name in files:
        if not name or "/" in name or "\\" in name or name in (".", "..", RECORD_NAME):
            raise ValueError(f"output file name {name!r} is not a plain file name")
    try:
        out.parent.mkdir(parents=True, exist_ok=True)
    except OSError as exc:
        raise OutputFolderError(f"cannot create the folder of '{out}': {exc}") from None
    staging = Path(tempfile.mkdtemp(prefix=f".{out.name or 'out'}-new-", dir=out.parent))
    try:
        for name, data in files.items():
            (staging / name).write_bytes(data)
        (staging / RECORD_NAME).write_text(json.dumps(sorted(files)), encoding="utf-8")
        if not out.exists() or (out.is_dir() and not any(out.iterdir())):
            if out.exists():
                out.rmdir()
            os.replace(staging, out)
            return out
        stale = (set(_previous_record(out)) | set(owned)) - set(files)
        for name in sorted(stale):
            target = out / name
            if target.is_file() or target.is_symlink():
                target.unlink()
        for name in list(files) + [RECORD_NAME]:
            os.replace(staging / name, out / name)
        return out
    finally:
        shutil.rmtree(staging, ignore_errors=True)
