"""Argument checks shared by the physics functions: finite numbers and arrays, scalars back as scalars."""

from __future__ import annotations

import numpy as np


def finite_scalar(value, name: str, *, minimum: float | None = None, strictly: bool = False) -> float:
    """``value`` as a finite float (at least, or with ``strictly`` greater than, ``minimum``); ValueError naming
    ``name`` otherwise."""
    try:
        number = float(value)
    except (TypeError, ValueError):
        raise ValueError(f"{name} must be a number; got {value!r}") from None
    if not np.isfinite(number):
        raise ValueError(f"{name} must be finite; got {number}")
    if minimum is not None:
        if strictly and number <= minimum:
            raise ValueError(f"{name} must be greater than {minimum:g}; got {number:g}")
        if not strictly and number < minimum:
            raise ValueError(f"{name} must be at least {minimum:g}; got {number:g}")
    return number


def finite_array(value, name: str) -> np.ndarray:
    """``value`` as a float array with only finite entries; ValueError naming ``name`` otherwise."""
    try:
        array = np.asarray(value, dtype=float)
    except (TypeError, ValueError):
        raise ValueError(f"{name} must be numeric; got {value!r}") from None
    if not np.all(np.isfinite(array)):
        raise ValueError(f"{name} must be finite; got a NaN or infinite value")
    return array


def as_result(array: np.ndarray):
    """A 0-d array as a numpy scalar, any other array unchanged (so scalar input gives a scalar back)."""
    return array[()] if array.ndim == 0 else array
