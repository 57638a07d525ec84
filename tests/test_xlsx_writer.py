"""The column-wise xlsx writer, read back by openpyxl (a reference reader of ECMA-376 workbooks)."""

from __future__ import annotations

import io
import math

import numpy as np
import openpyxl
import pandas as pd

from engine.outputs.xlsx_writer import workbook_bytes


def _read(data: bytes) -> dict[str, list[tuple]]:
    book = openpyxl.load_workbook(io.BytesIO(data), read_only=True)
    return {name: list(book[name].iter_rows(values_only=True)) for name in book.sheetnames}


def test_cells_keep_their_type_and_value():
    """Numbers round-trip exactly (shortest repr, IEEE 754 double), text is never a formula, missing is empty."""
    frame = pd.DataFrame({
        "x": [0.1, 28707292.701900233, math.nan, math.inf, -math.inf, 5e-324],
        "n": np.arange(6, dtype=np.int64),
        "b": [True, False, True, False, True, False],
        "t": ["=SUM(A1:A2)", "", "a & <b>", None, " lead", "x\x01y"],
        "o": [{"k": 1}, 2, 2.5, True, "s", [1, 2]],
    })
    sheets = _read(workbook_bytes([("one", frame), ("two & 'more'", frame.iloc[:0])], to_text=str))
    assert list(sheets) == ["one", "two & 'more'"]
    header, *rows = sheets["one"]
    assert header == ("x", "n", "b", "t", "o")
    assert [r[0] for r in rows] == [0.1, 28707292.701900233, None, "inf", "-inf", 5e-324]
    assert [r[1] for r in rows] == [0, 1, 2, 3, 4, 5]
    assert [r[2] for r in rows] == [True, False, True, False, True, False]
    assert [r[3] for r in rows] == ["=SUM(A1:A2)", None, "a & <b>", None, " lead", "xy"]
    assert [r[4] for r in rows] == ["{'k': 1}", 2, 2.5, True, "s", "[1, 2]"]
    assert sheets["two & 'more'"] == [("x", "n", "b", "t", "o")]
    book = openpyxl.load_workbook(io.BytesIO(workbook_bytes([("one", frame)])))
    assert book["one"]["D2"].data_type == "s"  # text, not a formula
