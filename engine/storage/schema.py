"""Checks of JSON that arrives from outside (library and bundle manifests, table descriptions, run settings).

Python's :mod:`json` reads ``1e400`` as infinity, a 400-digit integer as a Python int, and gives whatever type the
file holds: a list where a setting belongs, text where a row count belongs. Every field of an imported document is
checked here against its schema (type, range, size) before it is used; a failure raises the caller's own error
class (``StoreError`` for libraries, ``BundleError`` for bundles) with a sentence naming the file and field.
"""

from __future__ import annotations

import json
import math
import re

MAX_TEXT_CHARS = 10_000
"""Longest name, note, message or other text field of an imported run."""
MAX_ROWS = 200_000_000
"""Most rows one imported table may claim (a full year of 200 districts with ten technologies is 17.5 million)."""
MAX_EMPTY_TABLE_ROWS = 1_000_000
"""Most rows of a table without columns (nothing in the file backs such a claim)."""
MAX_COLUMNS = 10_000
MAX_DEPTH = 64
MAX_NODES = 1_000_000
MAX_INT = 2**63 - 1
SHA256 = re.compile(r"[0-9a-f]{64}")


def loads(data: bytes | str, where: str, error: type[Exception]):
    """JSON text as Python values; ``error`` (with ``where`` in the message) for text that is not JSON or is
    nested beyond Python's recursion limit."""
    try:
        text = data.decode("utf-8") if isinstance(data, bytes) else data
        return json.loads(text)
    except (ValueError, RecursionError) as exc:
        reason = "it is nested too deeply" if isinstance(exc, RecursionError) else str(exc)
        raise error(f"{where} is not valid JSON ({reason})") from None


class Checker:
    """Field checks for one document; every failure raises ``error(f"{where}: {field} ...")``."""

    def __init__(self, where: str, error: type[Exception]):
        self.where = where
        self.error = error

    def fail(self, field: str, text: str):
        raise self.error(f"{self.where}: '{field}' {text}")

    def text(self, value, field: str, *, max_chars: int = MAX_TEXT_CHARS, optional: bool = True) -> str:
        if value is None and optional:
            return ""
        if not isinstance(value, str):
            self.fail(field, f"must be text, not {_kind(value)}")
        if len(value) > max_chars:
            self.fail(field, f"is {len(value):,} characters long; at most {max_chars:,} are allowed")
        return value

    def integer(self, value, field: str, low: int = 0, high: int = MAX_INT) -> int:
        if isinstance(value, bool) or not isinstance(value, int):
            self.fail(field, f"must be a whole number, not {_kind(value)}")
        if not low <= value <= high:
            self.fail(field, f"must be between {low:,} and {high:,}, not {_short(value)}")
        return value

    def number(self, value, field: str, low: float = -math.inf, high: float = math.inf, *,
               optional: bool = False, allow_inf: bool = False) -> float | None:
        if value is None and optional:
            return None
        if isinstance(value, bool) or not isinstance(value, (int, float)):
            self.fail(field, f"must be a number, not {_kind(value)}")
        try:
            number = float(value)
        except OverflowError:
            self.fail(field, "is a number too large to use")
        if math.isnan(number) or (math.isinf(number) and not allow_inf):
            self.fail(field, f"must be a finite number, not {_short(value)}")
        if not low <= number <= high:
            self.fail(field, f"must be between {low:g} and {high:g}, not {_short(value)}")
        return value

    def mapping(self, value, field: str, *, optional: bool = True) -> dict:
        if value is None and optional:
            return {}
        if not isinstance(value, dict):
            self.fail(field, f"must be an object, not {_kind(value)}")
        return value

    def listing(self, value, field: str, max_items: int, *, optional: bool = True) -> list:
        if value is None and optional:
            return []
        if not isinstance(value, list):
            self.fail(field, f"must be a list, not {_kind(value)}")
        if len(value) > max_items:
            self.fail(field, f"lists {len(value):,} items; at most {max_items:,} are allowed")
        return value

    def choice(self, value, field: str, choices: tuple) -> str:
        if value not in choices:
            self.fail(field, f"must be one of {', '.join(map(repr, choices))}, not {_short(value)}")
        return value

    def sha256(self, value, field: str) -> str:
        if not isinstance(value, str) or not SHA256.fullmatch(value):
            self.fail(field, "must be a SHA-256 checksum (64 hexadecimal digits)")
        return value

    def tree(self, value, field: str, *, allow_non_finite: bool = True) -> None:
        """A free-form JSON value: only JSON types, bounded depth, size, text length and integers."""
        nodes = 0
        stack = [(value, 0)]
        while stack:
            item, depth = stack.pop()
            nodes += 1
            if nodes > MAX_NODES:
                self.fail(field, f"holds more than {MAX_NODES:,} values")
            if depth > MAX_DEPTH:
                self.fail(field, f"is nested more than {MAX_DEPTH} levels deep")
            if isinstance(item, dict):
                for key, child in item.items():
                    self.text(key, f"{field} key", max_chars=1000, optional=False)
                    stack.append((child, depth + 1))
            elif isinstance(item, list):
                stack.extend((child, depth + 1) for child in item)
            elif isinstance(item, str):
                if len(item) > 1_000_000:
                    self.fail(field, "holds a text longer than 1,000,000 characters")
            elif isinstance(item, bool) or item is None:
                pass
            elif isinstance(item, int):
                if abs(item) > MAX_INT:
                    self.fail(field, f"holds the whole number {_short(item)}, too large to use")
            elif isinstance(item, float):
                if not math.isfinite(item) and not allow_non_finite:
                    self.fail(field, f"holds {item}, not a finite number")
            else:
                self.fail(field, f"holds a value of type {type(item).__name__}")


def _kind(value) -> str:
    if value is None:
        return "null"
    if isinstance(value, bool):
        return "true/false"
    if isinstance(value, (int, float)):
        return f"the number {_short(value)}"
    if isinstance(value, str):
        return f"the text {_short(value)}"
    return {list: "a list", dict: "an object"}.get(type(value), type(value).__name__)


def _short(value) -> str:
    text = repr(value)
    return text if len(text) <= 40 else text[:37] + "..."


# ====================================================================================== run settings
_SETTING_NUMBERS = {
    "discount_rate": (-1.0, 1.0),
    "value_of_unserved_heat_eur_per_mwh": (0.0, 1e9),
    "heating_base_temp_c": (-100.0, 100.0),
    "cooling_base_temp_c": (-100.0, 100.0),
    "reinjection_min_temp_c": (-100.0, 200.0),
    "reinjection_max_temp_c": (-100.0, 200.0),
}
_SETTING_LIMITS = ("co2_cap_t_per_a", "network_plant_limit_kw")  # None or inf: no limit


def check_run_settings(value, where: str, error: type[Exception], *, allow_non_finite: bool = True) -> dict:
    """The settings of an imported run (the fields of :class:`engine.scenario.inputs.Settings`), checked.

    Known fields must have their type and range (``typical_days`` a whole number from 0 to 366, ``objective``
    "cost" or "co2", limits None or a number >= 0 ...); other fields may hold any bounded JSON value.
    """
    check = Checker(where, error)
    settings = check.mapping(value, "settings")
    check.tree(settings, "settings", allow_non_finite=allow_non_finite)
    for key, item in settings.items():
        field = f"settings.{key}"
        if key == "name":
            check.text(item, field, max_chars=200)
        elif key == "objective":
            check.choice(item, field, ("cost", "co2"))
        elif key == "typical_days":
            check.integer(item, field, 0, 366)
        elif key == "target_year":
            check.integer(item, field, 1000, 3000)
        elif key == "allow_unserved_heat":
            if not isinstance(item, bool):
                check.fail(field, f"must be true or false, not {_kind(item)}")
        elif key in _SETTING_NUMBERS:
            low, high = _SETTING_NUMBERS[key]
            check.number(item, field, low, high, optional=True)
        elif key in _SETTING_LIMITS:
            check.number(item, field, 0.0, math.inf, optional=True, allow_inf=True)
    return settings


def check_number_map(value, field: str, check: Checker, *, allow_non_finite: bool = True) -> dict:
    """An object of text -> (bounded) JSON values, such as ``timings_s`` or ``model_size``."""
    mapping = check.mapping(value, field)
    check.tree(mapping, field, allow_non_finite=allow_non_finite)
    return mapping
