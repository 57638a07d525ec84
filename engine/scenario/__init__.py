"""Scenario folders: read, check and type the inputs of a run.

The public entry points are :func:`load_scenario` (a folder to a :class:`Scenario`, or one :class:`InputError`
listing every :class:`Problem`), :func:`validate_scenario` (the problems without raising) and
:func:`resolve_scenario_path` (the word ``demo`` stands for :data:`DEMO_DIR`). The modules: ``files`` (the file
names), ``kinds`` (technology kinds and carriers), ``defaults`` (values of blank cells), ``inputs`` (the typed
scenario and cost cases), ``problems``, ``geometry``, the reading primitives ``tables`` and ``cells``, one module
per file (``settings``, ``districts``, ``catalogue``, ``well_table``, ``hourly``) and ``folder`` (the folder as a
whole).
"""

from engine.scenario.folder import (
    DEMO_DIR,
    load_scenario,
    resolve_scenario_path,
    validate_command,
    validate_scenario,
)
from engine.scenario.inputs import (
    Aquifer,
    CostCase,
    EffectivePrices,
    Prices,
    Scenario,
    Settings,
    apply_cost_case,
    input_hash,
)
from engine.scenario.problems import InputError, Problem, format_problems, problems_frame

__all__ = [
    "DEMO_DIR",
    "Aquifer",
    "CostCase",
    "EffectivePrices",
    "InputError",
    "Prices",
    "Problem",
    "Scenario",
    "Settings",
    "apply_cost_case",
    "format_problems",
    "input_hash",
    "load_scenario",
    "problems_frame",
    "resolve_scenario_path",
    "validate_command",
    "validate_scenario",
]
