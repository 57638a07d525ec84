"""Network-suitability screening per district: heat density and linear heat density with their classes.

The indicators and their class limits are those of :mod:`engine.physics.typology` (screening thresholds quoted
from memory or common practice, stated there and in docs/input_format.md, "Screening indicators"). The land area
of each district is its polygon's area (:func:`engine.scenario.geometry.area_km2`). They say whether a heat network
is worth a closer look, nothing more: a network decision needs a feasibility study by a qualified engineer.
"""

from __future__ import annotations

from typing import Mapping

import numpy as np
import pandas as pd

from engine.physics import typology
from engine.scenario import geometry
from engine.scenario.inputs import Scenario


def district_screening(scenario: Scenario, street_length_m: Mapping[str, float] | None = None) -> pd.DataFrame:
    """One row per district: annual heat demand (buildings included), land area, heat density [MWh/(ha a)] and
    its class, and, where ``street_length_m`` (or else the districts' ``street_length_m`` property) gives the
    district's street (trench) length [m], the linear heat density [MWh/(m a)] and its class. Column names as :func:`engine.physics.typology.screening_table`."""
    districts = scenario.districts
    ids = list(districts["district_id"])
    area_m2 = np.array([geometry.area_km2(g) * 1e6 for g in districts["geometry"]], dtype=float)
    if street_length_m is None and "street_length_m" in districts:
        lengths = districts["street_length_m"].to_numpy(dtype=float)
    else:
        lengths = np.array([float((street_length_m or {}).get(i, np.nan)) for i in ids], dtype=float)
    return typology.screening_table(ids, districts["heat_demand_mwh_per_a"].to_numpy(dtype=float), area_m2, lengths)
