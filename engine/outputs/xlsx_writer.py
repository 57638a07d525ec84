"""A small xlsx writer that turns whole table columns into SpreadsheetML at once.

A general spreadsheet library builds one object per cell; the demo city's tables hold about 330 000 cells, which
took it several seconds. The workbook written here is the minimal package the Office Open XML standard asks for
(ECMA-376 Part 1, sections 12 and 18: content types, the workbook, one worksheet part per sheet, a default style)
with every cell typed and no shared state between cells:

* numbers as numbers (``<c><v>..</v></c>``), written with numpy's shortest round-trip representation, so that a
  reader gets the same float back;
* booleans as booleans (``t="b"``);
* text as inline strings (``t="inlineStr"``): a text cell is never a formula, whatever it starts with;
* a missing value (None, NaN, NA) and empty text as an empty cell; infinities as the text ``inf`` and ``-inf``.

Cells carry no ``r`` reference (it is optional, section 18.3.1.4): each row lists every column in order.
"""

from __future__ import annotations

import io
import math
import re
import zipfile
from xml.sax.saxutils import escape

import numpy as np
import pandas as pd

_MAIN = "http://schemas.openxmlformats.org/spreadsheetml/2006/main"
_REL = "http://schemas.openxmlformats.org/officeDocument/2006/relationships"
_PKG_REL = "http://schemas.openxmlformats.org/package/2006/relationships"
_HEAD = '<?xml version="1.0" encoding="UTF-8" standalone="yes"?>\n'
_ILLEGAL_XML = re.compile(r"[\x00-\x08\x0b\x0c\x0e-\x1f]")
_EMPTY = "<c/>"

def _styles_xml(formats: list[str]) -> str:
    """The styles part: the default cell style, then one style per number format code (in ``formats`` order)."""
    num_fmts = "".join(f'<numFmt numFmtId="{164 + k}" formatCode="{escape(code, {chr(34): "&quot;"})}"/>'
                       for k, code in enumerate(formats))
    xfs = '<xf numFmtId="0" fontId="0" fillId="0" borderId="0" xfId="0"/>' + "".join(
        f'<xf numFmtId="{164 + k}" fontId="0" fillId="0" borderId="0" xfId="0" applyNumberFormat="1"/>'
        for k in range(len(formats)))
    return (
        f'{_HEAD}<styleSheet xmlns="{_MAIN}">'
        + (f'<numFmts count="{len(formats)}">{num_fmts}</numFmts>' if formats else "")
        + '<fonts count="1"><font><sz val="11"/><name val="Calibri"/></font></fonts>'
        '<fills count="2"><fill><patternFill patternType="none"/></fill><fill><patternFill patternType="gray125"/>'
        '</fill></fills><borders count="1"><border><left/><right/><top/><bottom/><diagonal/></border></borders>'
        '<cellStyleXfs count="1"><xf numFmtId="0" fontId="0" fillId="0" borderId="0"/></cellStyleXfs>'
        f'<cellXfs count="{len(formats) + 1}">{xfs}</cellXfs>'
        '<cellStyles count="1"><cellStyle name="Normal" xfId="0" builtinId="0"/></cellStyles></styleSheet>'
    )


def _text_cell(text: str) -> str:
    return f'<c t="inlineStr"><is><t xml:space="preserve">{escape(_ILLEGAL_XML.sub("", text))}</t></is></c>'


def _number_cells(values: np.ndarray, style: int = 0) -> list[str]:
    values = np.asarray(values, float)
    text = values.astype(str)
    finite = np.isfinite(values)
    start = f'<c s="{style}"><v>' if style else "<c><v>"
    out = np.where(finite, np.char.add(np.char.add(start, text), "</v></c>"), _EMPTY).astype(object)
    for i in np.flatnonzero(np.isinf(values)):
        out[i] = _text_cell("inf" if values[i] > 0 else "-inf")
    return out.tolist()


def _one_cell(value) -> str:
    if value is None or value is pd.NA or value is pd.NaT:
        return _EMPTY
    if isinstance(value, (bool, np.bool_)):
        return f'<c t="b"><v>{int(bool(value))}</v></c>'
    if isinstance(value, (int, np.integer)):
        return f"<c><v>{int(value)}</v></c>"
    if isinstance(value, (float, np.floating)):
        number = float(value)
        if math.isnan(number):
            return _EMPTY
        if math.isinf(number):
            return _text_cell("inf" if number > 0 else "-inf")
        return f"<c><v>{np.float64(number)!s}</v></c>"
    return _text_cell(str(value)) if value != "" else _EMPTY


def column_cells(column: pd.Series, to_text=str, style: int = 0) -> list[str]:
    """The ``<c>`` elements of one column; ``to_text`` turns a value of no cell type (a dict, a date) into text;
    ``style`` is the cell style index of a float column's numbers (0: the default)."""
    if pd.api.types.is_bool_dtype(column) and not column.isna().any():
        return np.where(column.to_numpy(bool), '<c t="b"><v>1</v></c>', '<c t="b"><v>0</v></c>').tolist()
    if pd.api.types.is_integer_dtype(column) and not column.isna().any():
        return [f"<c><v>{v}</v></c>" for v in column.to_numpy(np.int64).tolist()]
    if pd.api.types.is_float_dtype(column):
        return _number_cells(column.to_numpy(float), style)
    if pd.api.types.infer_dtype(column, skipna=True) in ("string", "empty"):
        # names, ids and codes repeat down a long table: each distinct text is escaped once
        codes, uniques = pd.factorize(column, use_na_sentinel=True)
        texts = np.array([_text_cell(u) if u != "" else _EMPTY for u in uniques] + [_EMPTY], dtype=object)
        return texts[codes].tolist()
    cells = []
    for value in column.tolist():
        cell = _one_cell(value) if isinstance(value, (type(None), bool, int, float, str, np.generic)) or \
            value is pd.NA or value is pd.NaT else _text_cell(to_text(value))
        cells.append(cell)
    return cells


def sheet_xml(frame: pd.DataFrame, to_text=str, styles=None) -> str:
    """One worksheet part: a header row of the column names, then one row per row of ``frame``; ``styles`` gives
    each column's cell style index (None: all default)."""
    header = "<row>" + "".join(_text_cell(str(c)) for c in frame.columns) + "</row>"
    styles = styles or [0] * len(frame.columns)
    columns = [column_cells(frame[c], to_text, s) for c, s in zip(frame.columns, styles)]
    body = "".join("<row>" + "".join(cells) + "</row>" for cells in zip(*columns)) if columns else ""
    return f'{_HEAD}<worksheet xmlns="{_MAIN}"><sheetData>{header}{body}</sheetData></worksheet>'


def workbook_bytes(sheets: list[tuple[str, pd.DataFrame]], to_text=str, number_format=None) -> bytes:
    """The xlsx file of ``sheets`` (title, table) in order; titles must be valid and unique already.

    ``number_format(column, values)`` may give a float column's number format code (``"#,##0.0"``) or None.
    """
    n = len(sheets)
    formats: list[str] = []
    sheet_styles = []
    for _, frame in sheets:
        styles = []
        for column in frame.columns:
            code = number_format(column, frame[column]) if number_format is not None else None
            if code and code not in formats:
                formats.append(code)
            styles.append(formats.index(code) + 1 if code else 0)
        sheet_styles.append(styles)
    overrides = "".join(
        f'<Override PartName="/xl/worksheets/sheet{k}.xml" '
        'ContentType="application/vnd.openxmlformats-officedocument.spreadsheetml.worksheet+xml"/>'
        for k in range(1, n + 1)
    )
    types = (
        f'{_HEAD}<Types xmlns="http://schemas.openxmlformats.org/package/2006/content-types">'
        '<Default Extension="rels" ContentType="application/vnd.openxmlformats-package.relationships+xml"/>'
        '<Default Extension="xml" ContentType="application/xml"/>'
        '<Override PartName="/xl/workbook.xml" '
        'ContentType="application/vnd.openxmlformats-officedocument.spreadsheetml.sheet.main+xml"/>'
        '<Override PartName="/xl/styles.xml" '
        'ContentType="application/vnd.openxmlformats-officedocument.spreadsheetml.styles+xml"/>'
        f"{overrides}</Types>"
    )
    root_rels = (f'{_HEAD}<Relationships xmlns="{_PKG_REL}"><Relationship Id="rId1" '
                 f'Type="{_REL}/officeDocument" Target="xl/workbook.xml"/></Relationships>')
    sheet_list = "".join(f'<sheet name="{escape(title, {chr(34): "&quot;"})}" sheetId="{k}" r:id="rId{k}"/>'
                         for k, (title, _) in enumerate(sheets, start=1))
    workbook = f'{_HEAD}<workbook xmlns="{_MAIN}" xmlns:r="{_REL}"><sheets>{sheet_list}</sheets></workbook>'
    rels = "".join(f'<Relationship Id="rId{k}" Type="{_REL}/worksheet" Target="worksheets/sheet{k}.xml"/>'
                   for k in range(1, n + 1))
    rels += f'<Relationship Id="rId{n + 1}" Type="{_REL}/styles" Target="styles.xml"/>'
    workbook_rels = f'{_HEAD}<Relationships xmlns="{_PKG_REL}">{rels}</Relationships>'
    buffer = io.BytesIO()
    with zipfile.ZipFile(buffer, "w", zipfile.ZIP_DEFLATED, compresslevel=1) as archive:
        archive.writestr("[Content_Types].xml", types)
        archive.writestr("_rels/.rels", root_rels)
        archive.writestr("xl/workbook.xml", workbook)
        archive.writestr("xl/_rels/workbook.xml.rels", workbook_rels)
        archive.writestr("xl/styles.xml", _styles_xml(formats))
        for k, ((_, frame), styles) in enumerate(zip(sheets, sheet_styles), start=1):
            archive.writestr(f"xl/worksheets/sheet{k}.xml", sheet_xml(frame, to_text, styles))
    return buffer.getvalue()
