"""DataFrames as JSON text that reads back equal, dtypes and all (no pickle).

:func:`encode_table` records every column's dtype, so that :func:`decode_table` gives back a frame equal to the
original under ``pandas.testing.assert_frame_equal``: bool, integer and float columns (NaN, +-inf and -0.0
included), text columns in pandas' ``str`` dtype or ``object``, nullable and categorical columns, datetimes, row
indexes and column labels. Numbers are kept as their little-endian bytes in base64 (RFC 4648), which is exact and
fast; text as a list of distinct values with one code per row. The scenario store keeps its tables this way.
"""

from __future__ import annotations

import base64
import json
import math

import numpy as np
import pandas as pd

from engine.storage.errors import StoreError

TABLE_CODEC_VERSION = 1
"""Version of the payload written by :func:`encode_table`."""

MAX_TABLE_ROWS = 200_000_000
"""Most rows a payload may claim (a full year of 200 districts with ten technologies is 17.5 million)."""
MAX_EMPTY_ROWS = 1_000_000
"""Most rows a payload without columns may claim (no data in the payload backs the claim)."""


def encode_table(frame: pd.DataFrame, where: str = "table") -> str:
    """A DataFrame as JSON text that :func:`decode_table` turns back into an equal frame.

    Every column is kept with its dtype; float columns keep NaN, +inf and -inf, text columns keep the
    difference between a missing value and an empty string.

    Raises
    ------
    StoreError
        If a column has a dtype or a value the codec cannot keep (complex numbers, arbitrary Python objects).
    """
    if not isinstance(frame, pd.DataFrame):
        raise StoreError(f"{where} is a {type(frame).__name__}, not a pandas DataFrame")
    data = []
    for position in range(frame.shape[1]):
        label = frame.columns[position]
        data.append(_encode_values(frame.iloc[:, position], f"{where}, column {label!r}"))
    payload = {
        "codec": "heatmosaic-table",
        "version": TABLE_CODEC_VERSION,
        "n_rows": int(frame.shape[0]),
        "index": _encode_index(frame.index, f"{where}, row index"),
        "columns": _encode_index(frame.columns, f"{where}, column labels"),
        "data": data,
    }
    try:
        return json.dumps(payload, allow_nan=False, separators=(",", ":"))
    except (TypeError, ValueError) as exc:
        raise StoreError(f"{where} holds a value that cannot be written as JSON: {exc}") from None


def decode_table(text: str | bytes, where: str = "table") -> pd.DataFrame:
    """The DataFrame that :func:`encode_table` wrote.

    Raises
    ------
    StoreError
        If ``text`` is not such a payload.
    """
    try:
        payload = json.loads(text)
        if not isinstance(payload, dict) or payload.get("codec") != "heatmosaic-table":
            raise ValueError("not a heatmosaic table payload")
        if payload.get("version") != TABLE_CODEC_VERSION:
            raise ValueError(f"table codec version {payload.get('version')!r} is not known to this release")
        n_rows = payload["n_rows"]
        if isinstance(n_rows, bool) or not isinstance(n_rows, int) or not 0 <= n_rows <= MAX_TABLE_ROWS:
            raise ValueError(f"the row count {str(n_rows)[:40]} is not a whole number from 0 to {MAX_TABLE_ROWS:,}")
        if not isinstance(payload["data"], list):
            raise ValueError("the columns are not a list")
        if not payload["data"] and n_rows > MAX_EMPTY_ROWS:
            raise ValueError(f"a table without columns claims {n_rows:,} rows")
        columns = _decode_index(payload["columns"])
        index = _decode_index(payload["index"])
        arrays = [_decode_values(spec) for spec in payload["data"]]
        if len(arrays) != len(columns) or len(index) != n_rows or any(len(a) != n_rows for a in arrays):
            raise ValueError("the column and row counts do not agree")
        frame = pd.DataFrame(
            {i: pd.Series(a, dtype=a.dtype, copy=False) for i, a in enumerate(arrays)},
            index=pd.RangeIndex(n_rows),
        )
        frame.index = index
        frame.columns = columns
        return frame
    except StoreError:
        raise
    except (ValueError, TypeError, KeyError, IndexError, AttributeError, RecursionError, OverflowError,
            MemoryError) as exc:
        raise StoreError(f"{where} cannot be read back ({exc}); the store may be damaged") from None


_MASKED = {
    "Int8", "Int16", "Int32", "Int64", "UInt8", "UInt16", "UInt32", "UInt64", "Float32", "Float64", "boolean",
}


def _pack(values: np.ndarray) -> str:
    """Numbers as their little-endian bytes in base64 (RFC 4648): every bit survives, NaN and -0.0 included."""
    array = np.ascontiguousarray(values)
    return base64.b64encode(array.astype(array.dtype.newbyteorder("<"), copy=False).tobytes()).decode("ascii")


def _code_dtype(n_values: int) -> np.dtype:
    """The smallest signed integer type that numbers ``n_values`` distinct values and -1 for missing."""
    for candidate in (np.int8, np.int16, np.int32):
        if n_values < np.iinfo(candidate).max:
            return np.dtype(candidate)
    return np.dtype(np.int64)


def _unpack(text: str, dtype: np.dtype | str, n: int) -> np.ndarray:
    dtype = np.dtype(dtype)
    raw = base64.b64decode(text.encode("ascii"), validate=True)
    if len(raw) != n * dtype.itemsize:
        raise ValueError(f"{len(raw)} bytes do not hold {n} values of {dtype}")
    return np.frombuffer(raw, dtype=dtype.newbyteorder("<")).astype(dtype)


def _encode_object(value, where: str):
    if value is None:
        return ["none"]
    if value is pd.NA:
        return ["na"]
    if value is pd.NaT:
        return ["nat"]
    if isinstance(value, (bool, np.bool_)):
        return ["bool", bool(value)]
    if isinstance(value, (int, np.integer)):
        return ["int", int(value)]
    if isinstance(value, (float, np.floating)):
        value = float(value)
        return ["float", value if math.isfinite(value) else str(value)]
    if isinstance(value, str):
        return ["str", str(value)]
    if isinstance(value, (dict, list)):
        try:
            json.dumps(value, allow_nan=False)
        except (TypeError, ValueError) as exc:
            raise StoreError(f"{where}: a value cannot be written as JSON ({exc})") from None
        return ["json", value]
    raise StoreError(f"{where}: values of type {type(value).__name__} cannot be stored")


def _decode_object(item):
    tag = item[0]
    if tag == "none":
        return None
    if tag == "na":
        return pd.NA
    if tag == "nat":
        return pd.NaT
    if tag == "bool":
        return bool(item[1])
    if tag == "int":
        return int(item[1])
    if tag == "float":
        return float(item[1])
    if tag in ("str", "json"):
        return item[1]
    raise ValueError(f"unknown value tag {tag!r}")


def _string_dtype(storage: str, na: str) -> pd.StringDtype:
    na_value = np.nan if na == "nan" else pd.NA
    try:
        return pd.StringDtype(storage=storage, na_value=na_value)
    except ImportError:
        # A store written where pyarrow is installed, read where it is not: same values, other storage.
        return pd.StringDtype(na_value=na_value)


def _encode_values(values: pd.Series | pd.Index, where: str) -> dict:
    """One column (or one index level) as a JSON-safe dict."""
    dtype = values.dtype
    series = values if isinstance(values, pd.Series) else pd.Series(values, copy=False)
    n = len(series)
    if isinstance(dtype, np.dtype):
        kind = dtype.kind
        raw = series.to_numpy()
        if kind in "biuf":
            return {"dtype": dtype.name, "n": n, "data": _pack(raw)}
        if kind in "mM":
            return {"dtype": str(dtype), "n": n, "data": _pack(raw.view(np.int64))}
        if kind == "O":
            return {"dtype": "object", "n": n, "values": [_encode_object(v, where) for v in raw.tolist()]}
        raise StoreError(f"{where}: dtype {dtype} cannot be stored")
    if isinstance(dtype, pd.StringDtype):
        # Dictionary-encoded: district and technology ids repeat on every row of the hourly tables.
        codes, uniques = pd.factorize(series, use_na_sentinel=True)
        return {
            "dtype": "string",
            "storage": dtype.storage,
            "na": "nan" if isinstance(dtype.na_value, float) else "NA",
            "n": n,
            "uniques": [str(u) for u in uniques],
            "codes": _pack(codes.astype(_code_dtype(len(uniques)))),
            "code_dtype": _code_dtype(len(uniques)).name,
        }
    if isinstance(dtype, pd.CategoricalDtype):
        return {
            "dtype": "category",
            "ordered": bool(dtype.ordered),
            "categories": _encode_index(dtype.categories, f"{where}, categories"),
            "n": n,
            "codes": _pack(series.cat.codes.to_numpy().astype(np.int64)),
        }
    if isinstance(dtype, pd.DatetimeTZDtype):
        utc = series.dt.tz_convert("UTC").dt.tz_localize(None).to_numpy()
        return {"dtype": "datetimetz", "unit": dtype.unit, "tz": str(dtype.tz), "n": n,
                "data": _pack(utc.view(np.int64))}
    if str(dtype) in _MASKED:
        mask = series.isna().to_numpy()
        numpy_dtype = np.dtype(bool) if str(dtype) == "boolean" else np.dtype(str(dtype).lower())
        filled = series.to_numpy(dtype=numpy_dtype, na_value=numpy_dtype.type(0))
        return {"dtype": str(dtype), "n": n, "data": _pack(filled), "mask": _pack(mask)}
    raise StoreError(f"{where}: dtype {dtype} cannot be stored")


def _decode_values(spec: dict):
    """Inverse of :func:`_encode_values`: a numpy array or pandas extension array."""
    dtype = spec["dtype"]
    n = spec["n"]
    if isinstance(n, bool) or not isinstance(n, int) or not 0 <= n <= MAX_TABLE_ROWS:
        raise ValueError(f"the value count {str(n)[:40]} is not a whole number from 0 to {MAX_TABLE_ROWS:,}")
    if dtype == "object":
        values = spec["values"]
        if len(values) != n:
            raise ValueError("the value count does not agree")
        out = np.empty(n, dtype=object)
        for i, item in enumerate(values):
            out[i] = _decode_object(item)
        return out
    if dtype == "string":
        code_dtype = np.dtype(spec.get("code_dtype", "int64"))
        if code_dtype.kind != "i":
            raise ValueError(f"text codes of type {code_dtype} are not known")
        codes = _unpack(spec["codes"], code_dtype, n).astype(np.intp)
        uniques = pd.array(list(spec["uniques"]), dtype=_string_dtype(spec["storage"], spec["na"]))
        if len(codes) and (codes.min() < -1 or codes.max() >= len(uniques)):
            raise ValueError("text codes out of range")
        return uniques.take(codes, allow_fill=True)
    if dtype == "category":
        categories = _decode_index(spec["categories"])
        codes = _unpack(spec["codes"], np.int64, n)
        return pd.Categorical.from_codes(codes, categories=categories, ordered=bool(spec["ordered"]))
    if dtype == "datetimetz":
        naive = _unpack(spec["data"], np.int64, n).view(f"datetime64[{spec['unit']}]")
        return pd.Series(naive).dt.tz_localize("UTC").dt.tz_convert(spec["tz"]).array
    if dtype in _MASKED:
        numpy_dtype = np.dtype(bool) if dtype == "boolean" else np.dtype(dtype.lower())
        values = _unpack(spec["data"], numpy_dtype, n)
        mask = _unpack(spec["mask"], bool, n)
        if dtype == "boolean":
            return pd.arrays.BooleanArray(values, mask)
        if dtype.startswith("Float"):
            return pd.arrays.FloatingArray(values, mask)
        return pd.arrays.IntegerArray(values, mask)
    numpy_dtype = np.dtype(dtype)
    if numpy_dtype.kind in "biuf":
        return _unpack(spec["data"], numpy_dtype, n)
    if numpy_dtype.kind in "mM":
        return _unpack(spec["data"], np.int64, n).view(numpy_dtype)
    raise ValueError(f"unknown dtype {dtype!r}")


def _encode_index(index: pd.Index, where: str) -> dict:
    if isinstance(index, pd.RangeIndex):
        return {
            "kind": "range",
            "start": int(index.start),
            "stop": int(index.stop),
            "step": int(index.step),
            "name": _encode_object(index.name, where),
        }
    if isinstance(index, pd.MultiIndex):
        return {
            "kind": "multi",
            "names": [_encode_object(n, where) for n in index.names],
            "levels": [_encode_values(index.get_level_values(i), where) for i in range(index.nlevels)],
        }
    return {"kind": "values", "name": _encode_object(index.name, where), "values": _encode_values(index, where)}


def _decode_index(spec: dict) -> pd.Index:
    kind = spec["kind"]
    if kind == "range":
        bounds = (spec["start"], spec["stop"], spec["step"])
        if any(isinstance(b, bool) or not isinstance(b, int) or abs(b) > 2**62 for b in bounds):
            raise ValueError("a range index needs whole-number bounds")
        return pd.RangeIndex(*bounds, name=_decode_object(spec["name"]))
    if kind == "multi":
        levels = [_decode_values(level) for level in spec["levels"]]
        names = [_decode_object(n) for n in spec["names"]]
        return pd.MultiIndex.from_arrays([pd.Index(a, dtype=a.dtype) for a in levels], names=names)
    if kind == "values":
        values = _decode_values(spec["values"])
        return pd.Index(values, dtype=values.dtype, name=_decode_object(spec["name"]), copy=False)
    raise ValueError(f"unknown index kind {kind!r}")


