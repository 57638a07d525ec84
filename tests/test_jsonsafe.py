"""Tests of engine.jsonsafe: numpy values as plain JSON.

The judge is Python's own json module in strict mode (``allow_nan=False``, which follows RFC 8259: no NaN or
Infinity literals); what comes back from ``json.loads`` must equal the numbers that went in.
"""

from __future__ import annotations

import json
import math

import numpy as np
import pytest

from engine.jsonsafe import json_value
from engine.physics.plume import validity_notes


def test_numpy_values_round_trip_through_strict_json():
    """Every numpy scalar and array becomes a value strict json writes and reads back equal (RFC 8259)."""
    value = {
        "int": np.int64(-7), "uint": np.uint8(200), "float": np.float32(0.5), "bool": np.bool_(True),
        "array": np.array([[1.5, 2.0], [3.0, -0.25]]), "tuple": (np.int16(3), "text", None), 4: "int key",
    }
    text = json.dumps(json_value(value), allow_nan=False)
    back = json.loads(text)
    assert back == {"int": -7, "uint": 200, "float": 0.5, "bool": True, "array": [[1.5, 2.0], [3.0, -0.25]],
                    "tuple": [3, "text", None], "4": "int key"}
    assert type(back["bool"]) is bool and type(back["int"]) is int


def test_text_with_attributes_becomes_plain_text():
    """A str subclass (a plume validity note with its code) is written as its text and comes back as plain str."""
    notes = json_value({"notes": validity_notes(0.5)})["notes"]
    assert all(type(note) is str for note in notes)
    assert notes == [str(note) for note in validity_notes(0.5)]


def test_non_finite_numbers_become_null_unless_kept():
    """NaN and +-inf have no JSON literal (RFC 8259, section 6): null by default, kept as floats on request."""
    value = [np.float64("nan"), math.inf, -np.inf, 1.0]
    assert json_value(value) == [None, None, None, 1.0]
    json.dumps(json_value(value), allow_nan=False)  # strict json accepts the result
    kept = json_value(value, keep_non_finite=True)
    assert math.isnan(kept[0]) and kept[1:] == [math.inf, -math.inf, 1.0]
    with pytest.raises(ValueError):
        json.dumps(kept, allow_nan=False)  # the reason the default is null


def test_other_types_are_refused_with_where_they_are():
    """A value json cannot write is named with its type and the caller's words, not passed on silently."""
    with pytest.raises(TypeError, match="the settings holds a value of type complex"):
        json_value({"a": [1, 2 + 3j]}, where="the settings")
    with pytest.raises(TypeError, match="object"):
        json_value(object())
