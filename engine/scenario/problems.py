"""Problems found in a scenario folder, and the error that carries them.

The reader (:mod:`engine.scenario.folder`) never stops at the first bad cell: it gathers every :class:`Problem`
across all files and raises one :class:`InputError` holding them, so that a planner can fix a folder in one pass.

Each problem names the file, the place in it and what is wrong. The place is counted the way a person opening
the file sees it:

* CSV files: ``row`` counts the header as row 1 (the first data row is row 2), as a spreadsheet shows it;
  ``column`` is the column header.
* GeoJSON files: ``row`` is the feature number, counting the first feature as 1; ``column`` is the property
  name (or ``geometry``).
* TOML files: ``row`` is the line number; ``column`` is the dotted key (``run.discount_rate``).

``row`` and ``column`` are ``None`` where a problem concerns the whole file or a whole column.

A problem is an ``error`` (the folder cannot be used) or a ``warning`` (the folder loads, but something it states
cannot take effect, such as a district on the network with a connection limit of 0 kW). Only errors stop a load.
"""

from __future__ import annotations

from dataclasses import dataclass

import pandas as pd

PROBLEM_COLUMNS = ("file", "row", "column", "message")
SEVERITIES = ("error", "warning")
"""Columns of :func:`problems_frame`."""


@dataclass(frozen=True)
class Problem:
    """One thing wrong in one place of a scenario folder.

    Parameters
    ----------
    file : str
        File name inside the scenario folder (``wells.csv``), or the folder itself for folder-level problems.
    row : int or None
        Spreadsheet row (CSV, header = 1), feature number (GeoJSON, first = 1) or line (TOML).
    column : str or None
        Column header (CSV), property (GeoJSON) or dotted key (TOML).
    message : str
        What is wrong and, where it helps, how to fix it.
    severity : str, default "error"
        ``error`` or ``warning`` (see :data:`SEVERITIES`); warnings do not stop a load.
    """

    file: str
    row: int | None
    column: str | None
    message: str
    severity: str = "error"

    @property
    def is_error(self) -> bool:
        return self.severity != "warning"

    def _words(self) -> tuple[str, str]:
        name = self.file.lower()
        if name.endswith((".geojson", ".json")):
            return "feature", "property"
        if name.endswith(".toml"):
            return "line", "key"
        return "row", "column"

    def __str__(self) -> str:
        row_word, column_word = self._words()
        parts = [self.file]
        if self.row is not None:
            parts.append(f"{row_word} {self.row}")
        if self.column is not None:
            parts.append(f"{column_word} {self.column}")
        return ", ".join(parts) + ": " + ("" if self.is_error else "warning: ") + self.message


class InputError(Exception):
    """A scenario folder that cannot be used; ``problems`` lists everything wrong with it."""

    def __init__(self, problems: list[Problem]):
        self.problems = list(problems)
        super().__init__(format_problems(self.problems))

    def __str__(self) -> str:
        return format_problems(self.problems)


def format_problems(problems: list[Problem]) -> str:
    """One line per problem, ``file, row R, column C: message``."""
    return "\n".join(str(problem) for problem in problems)


def problems_frame(problems: list[Problem]) -> pd.DataFrame:
    """Problems as a table for the dashboard: columns file, row (nullable integer), column (nullable text), message.

    A problem without a row or column shows one kind of blank (``<NA>``) in both columns, whatever the mix.
    """
    frame = pd.DataFrame(
        {
            "file": pd.array([p.file for p in problems], dtype="string"),
            "row": pd.array([p.row for p in problems], dtype="Int64"),
            "column": pd.array([p.column for p in problems], dtype="string"),
            "message": pd.array([p.message for p in problems], dtype="string"),
        },
        columns=list(PROBLEM_COLUMNS),
    )
    return frame
