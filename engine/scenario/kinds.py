"""Technology kinds, the groups the model treats alike, and the carriers each kind may draw on.

Adding a kind: add it to :data:`TECHNOLOGY_KINDS`, to the groups it belongs to and to :data:`KIND_CARRIERS`
(the reader checks ``technologies.csv`` against them), then write its conversion in
``engine/model/formulation.py``.
"""

from __future__ import annotations

TECHNOLOGY_KINDS = (
    "fuel_boiler",
    "electric_boiler",
    "air_heat_pump",
    "groundwater_heat_pump",
    "network_connection",
    "heat_store",
    "chiller",
    "groundwater_cooling",
)
"""Kinds of technology the model knows. Heat is supplied by all but ``chiller`` and ``groundwater_cooling``."""

HEAT_KINDS = ("fuel_boiler", "electric_boiler", "air_heat_pump", "groundwater_heat_pump", "network_connection")
"""Kinds that supply heat (the heat store shifts heat, it does not supply it)."""
COOLING_KINDS = ("chiller", "groundwater_cooling")
"""Kinds that supply cooling."""
WELL_KINDS = ("groundwater_heat_pump", "groundwater_cooling")
"""Kinds bound to a well doublet of ``wells.csv``."""
HEAT_PUMP_KINDS = ("air_heat_pump", "groundwater_heat_pump")
"""Kinds whose COP follows from the quality grade and the approach temperatures."""
BOILER_KINDS = ("fuel_boiler", "electric_boiler")
"""Kinds whose ``efficiency`` is a thermal efficiency."""
EER_KINDS = ("chiller", "groundwater_cooling")
"""Kinds whose ``efficiency`` is an energy efficiency ratio (cooling out per electricity in)."""
EFFICIENCY_KINDS = BOILER_KINDS + EER_KINDS
"""Kinds that need an ``efficiency`` (a blank one is an error)."""

CARRIERS = ("gas", "oil", "biomass", "electricity", "network", "none")
"""Carriers a technology may draw on (``none`` for stores)."""
FUELS = ("gas", "oil", "biomass")
"""Carriers that are fuels, with a price and a CO2 factor in ``scenario.toml``."""

KIND_CARRIERS = {
    "fuel_boiler": ("gas", "oil", "biomass"),
    "electric_boiler": ("electricity",),
    "air_heat_pump": ("electricity",),
    "groundwater_heat_pump": ("electricity",),
    "network_connection": ("network",),
    "heat_store": ("none",),
    "chiller": ("electricity",),
    "groundwater_cooling": ("electricity",),
}
"""Carriers each technology kind may draw on."""
