"""The one CSV writer for every table a person may open in a spreadsheet.

A spreadsheet program reads a CSV cell that starts with ``=``, ``+``, ``-``, ``@``, a tab or a carriage return as
a formula, so a district called ``=HYPERLINK("http://...")`` would become a live link (or worse) in the planner's
spreadsheet. The OWASP page "CSV Injection" advises prefixing such cells with an apostrophe, which spreadsheet
programs show as text. Every CSV the tool writes goes through :func:`csv_text` (the command line's tables from
``RunResult.write``, the sweep and trade-off tables, the library export's CSV copies, a bundle's result tables and
the dashboard downloads).

The rule, applied to text cells and header cells only (numbers are never touched):

* a text that starts with one of :data:`FORMULA_START`, possibly after some apostrophes, gets one more apostrophe
  in front (``=A1`` -> ``'=A1``, ``'=A1`` -> ``''=A1``; ``'plain`` is left as it is).

Because apostrophes already in front of a formula start are doubled as well, the rule can be undone exactly
(:func:`restore_text`): a reader that needs the raw text back (the bundle reader) strips one apostrophe from every
text that matches ``'+`` followed by a formula start. Round trips through such a reader are exact.

References
----------
OWASP Foundation, "CSV Injection", https://owasp.org/www-community/attacks/CSV_Injection (from memory of the page:
the characters ``= + - @``, tab and carriage return, and the leading-apostrophe remedy).
"""

from __future__ import annotations

import re

import numpy as np
import pandas as pd

FORMULA_START = ("=", "+", "-", "@", "\t", "\r")
"""First characters that make a spreadsheet program read a cell as a formula (OWASP "CSV Injection")."""

_NEEDS_GUARD = re.compile(r"'*[=+\-@\t\r]")
_GUARDED = re.compile(r"'+[=+\-@\t\r]")


def guard_text(value):
    """``value`` with the apostrophe of the rule above when it is text that needs one; anything else unchanged."""
    if isinstance(value, str) and _NEEDS_GUARD.match(value):
        return "'" + value
    return value


def restore_text(value):
    """Undo :func:`guard_text` (exact inverse on text; anything else unchanged)."""
    if isinstance(value, str) and _GUARDED.match(value):
        return value[1:]
    return value


def _is_text_column(series: pd.Series) -> bool:
    dtype = series.dtype
    return dtype == object or pd.api.types.is_string_dtype(dtype) or isinstance(dtype, pd.CategoricalDtype)


def _guard_series(series: pd.Series, undo: bool = False) -> pd.Series:
    pattern = _GUARDED if undo else _NEEDS_GUARD
    values = series.astype(object) if isinstance(series.dtype, pd.CategoricalDtype) else series
    as_object = values.to_numpy(dtype=object, na_value=None) if not isinstance(values.dtype, np.dtype) else \
        values.to_numpy()
    seen: dict[str, bool] = {}  # text repeats on every row of the hourly tables: match each distinct text once

    def needs(value) -> bool:
        if not isinstance(value, str):
            return False
        found = seen.get(value)
        if found is None:
            found = seen[value] = bool(pattern.match(value))
        return found

    mask = np.fromiter((needs(v) for v in as_object), dtype=bool, count=len(as_object))
    if not mask.any():
        return series
    out = as_object.copy()
    out[mask] = [v[1:] if undo else "'" + v for v in as_object[mask]]
    if isinstance(series.dtype, np.dtype) or isinstance(series.dtype, pd.CategoricalDtype):
        return pd.Series(out, index=series.index, name=series.name, dtype=object)
    return pd.Series(out, index=series.index, name=series.name).astype(series.dtype)


def defuse_frame(frame: pd.DataFrame) -> pd.DataFrame:
    """``frame`` with every text cell and column label guarded (:func:`guard_text`); numbers untouched.

    Index labels are guarded too when the index is written.
    """
    out = frame.copy(deep=False)
    for position in range(out.shape[1]):
        series = out.iloc[:, position]
        if _is_text_column(series):
            out.isetitem(position, _guard_series(series))
    out.columns = [guard_text(c) for c in out.columns]
    if not isinstance(out.index, pd.RangeIndex):
        if isinstance(out.index, pd.MultiIndex):
            out.index = out.index.set_levels(
                [[guard_text(v) for v in level] for level in out.index.levels], verify_integrity=False)
        else:
            out.index = pd.Index([guard_text(v) for v in out.index], name=out.index.name)
        out.index.names = [guard_text(n) for n in out.index.names]
    return out


def restore_frame(frame: pd.DataFrame) -> pd.DataFrame:
    """Undo :func:`defuse_frame` on a frame read back as text (labels and text cells)."""
    out = frame.copy(deep=False)
    for position in range(out.shape[1]):
        series = out.iloc[:, position]
        if _is_text_column(series):
            out.isetitem(position, _guard_series(series, undo=True))
    out.columns = [restore_text(c) for c in out.columns]
    return out


def csv_text(frame: pd.DataFrame, *, index: bool = False, **options) -> str:
    """``frame`` as CSV text with formula-leading text cells defused (see the module docstring).

    ``options`` go to :meth:`pandas.DataFrame.to_csv` (``lineterminator``, ``quoting``, ``float_format``...).
    """
    if not isinstance(frame, pd.DataFrame):
        raise TypeError(f"csv_text needs a DataFrame, not {type(frame).__name__}")
    return defuse_frame(frame).to_csv(index=index, **options)


def csv_bytes(frame: pd.DataFrame, *, index: bool = False, **options) -> bytes:
    """:func:`csv_text` encoded as UTF-8."""
    return csv_text(frame, index=index, **options).encode("utf-8")


