"""Values with numpy types as plain JSON: one rule for every file heatmosaic writes.

Run metadata, summaries, bundle manifests and library files hold numbers that come out of numpy and pandas;
:func:`json_value` turns them into the types the standard :mod:`json` module writes (RFC 8259): dicts with text
keys, lists, ``str``, ``int``, ``float``, ``bool`` and ``None``.
"""

from __future__ import annotations

import math

import numpy as np


def json_value(value, *, keep_non_finite: bool = False, where: str = "the value"):
    """``value`` with numpy scalars and arrays as plain Python values, recursively.

    Parameters
    ----------
    value : object
        dicts (keys become text), lists, tuples, numpy arrays, numbers (Python or numpy), bools, text, None.
    keep_non_finite : bool
        Keep NaN and +-inf as floats (Python's json then writes ``NaN``/``Infinity``, which only Python and
        JavaScript read back); by default they become None, as strict JSON wants.
    where : str
        Named in the error message.

    Raises
    ------
    TypeError
        For any other type, naming ``where`` and the type.
    """
    if isinstance(value, dict):
        return {str(k): json_value(v, keep_non_finite=keep_non_finite, where=where) for k, v in value.items()}
    if isinstance(value, (list, tuple)):
        return [json_value(v, keep_non_finite=keep_non_finite, where=where) for v in value]
    if isinstance(value, np.ndarray):
        return [json_value(v, keep_non_finite=keep_non_finite, where=where) for v in value.tolist()]
    if isinstance(value, (bool, np.bool_)):
        return bool(value)
    if isinstance(value, (int, np.integer)):
        return int(value)
    if isinstance(value, (float, np.floating)):
        value = float(value)
        return value if keep_non_finite or math.isfinite(value) else None
    if isinstance(value, str):
        return str(value)  # also text kinds with extra attributes, such as a plume validity note
    if value is None:
        return None
    raise TypeError(f"{where} holds a value of type {type(value).__name__} that cannot be written as JSON")
