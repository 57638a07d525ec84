"""Unit conversions used across the engine, each written once (SI prefixes and the calendar).

Column names carry their units (``_kw``, ``_mwh_per_a``, ``_t_per_a``); these factors convert between them.
"""

from __future__ import annotations

KWH_PER_MWH = 1000.0
"""Kilowatt hours in one megawatt hour."""
KG_PER_T = 1000.0
"""Kilograms in one tonne."""
W_PER_KW = 1000.0
"""Watts in one kilowatt."""
SECONDS_PER_HOUR = 3600.0
"""Seconds in one hour."""
HOURS_PER_COMMON_YEAR = 8760
"""Hours in a year of 365 days (a leap year has 8784)."""
