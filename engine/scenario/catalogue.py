"""The technology catalogue (``technologies.csv``) and the capacities per district
(``district_technologies.csv``)."""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pandas as pd

from engine.scenario.cells import (
    KEEP,
    MAX_FUEL_PRICE_EUR_PER_MWH,
    MAX_INVESTMENT_EUR_PER_KW,
    Column,
    blank_cells,
    check_references,
    check_unique,
    read_checked_table,
    report_rows,
)
from engine.scenario.defaults import cell_default
from engine.scenario.files import DISTRICT_TECHNOLOGIES_FILE, TECHNOLOGIES_FILE
from engine.scenario.kinds import BOILER_KINDS, CARRIERS, EER_KINDS, KIND_CARRIERS, TECHNOLOGY_KINDS
from engine.scenario.tables import Report, Table


def _tech_default(field: str):
    """The default of a blank cell of ``field`` in technologies.csv (engine.scenario.defaults)."""
    return cell_default(TECHNOLOGIES_FILE, field)


def _capacity_default(field: str):
    """The default of a blank cell of ``field`` in district_technologies.csv (engine.scenario.defaults)."""
    return cell_default(DISTRICT_TECHNOLOGIES_FILE, field)


# ============================================================================= technologies.csv
TECHNOLOGY_COLUMNS = (
    Column("technology_id", "text"),
    Column("name", "text", in_header=False, default=KEEP),
    Column("kind", "text"),
    Column("carrier", "text"),
    Column("efficiency", in_header=False, default=KEEP, low=0, low_open=True),
    Column(
        "cop_quality_grade",
        in_header=False,
        default=_tech_default("cop_quality_grade"),
        low=0,
        high=1,
        low_open=True,
    ),
    Column("source_approach_k", in_header=False, default=_tech_default("source_approach_k"), low=0, high=30),
    Column("sink_approach_k", in_header=False, default=_tech_default("sink_approach_k"), low=0, high=30),
    Column("investment_eur_per_kw", low=0, high=MAX_INVESTMENT_EUR_PER_KW),
    Column("fixed_om_pct_per_a", default=_tech_default("fixed_om_pct_per_a"), low=0, high=100),
    Column(
        "variable_om_eur_per_mwh",
        default=_tech_default("variable_om_eur_per_mwh"),
        low=0,
        high=MAX_FUEL_PRICE_EUR_PER_MWH,
    ),
    Column("lifetime_a", low=0, high=100, low_open=True),
    Column("store_loss_pct_per_h", in_header=False, default=_tech_default("store_loss_pct_per_h"), low=0, high=100),
    Column(
        "store_efficiency",
        in_header=False,
        default=_tech_default("store_efficiency"),
        low=0,
        high=1,
        low_open=True,
    ),
    Column("store_hours", in_header=False, default=KEEP, low=0, high=8784, low_open=True),
)


def _check_kind_and_carrier(report: Report, table: Table, frame: pd.DataFrame) -> None:
    kinds = frame["kind"].to_numpy(dtype=object)
    carriers = frame["carrier"].to_numpy(dtype=object)
    bad_kind = np.array([k != "" and k not in TECHNOLOGY_KINDS for k in kinds], dtype=bool)
    report_rows(
        report, table, "kind", bad_kind, lambda i: f"unknown kind '{kinds[i]}'; allowed: {', '.join(TECHNOLOGY_KINDS)}"
    )
    bad_carrier = np.array([c != "" and c not in CARRIERS for c in carriers], dtype=bool)
    report_rows(
        report,
        table,
        "carrier",
        bad_carrier,
        lambda i: f"unknown carrier '{carriers[i]}'; allowed: {', '.join(CARRIERS)}",
    )
    mismatch = np.array(
        [k in KIND_CARRIERS and c in CARRIERS and c not in KIND_CARRIERS[k] for k, c in zip(kinds, carriers)],
        dtype=bool,
    )
    report_rows(
        report,
        table,
        "carrier",
        mismatch,
        lambda i: f"a {kinds[i]} cannot run on '{carriers[i]}'; it needs {' or '.join(KIND_CARRIERS[kinds[i]])}",
    )


def _check_technology_parameters(report: Report, table: Table, frame: pd.DataFrame) -> None:
    """Ranges that depend on the kind: boiler efficiency, EER, store size."""
    kinds = frame["kind"].to_numpy(dtype=object)
    efficiency = frame["efficiency"].to_numpy(dtype=float)
    boiler = np.isin(kinds, BOILER_KINDS)
    with np.errstate(invalid="ignore"):
        bad_boiler = boiler & (efficiency > 1.2)
        eer = np.isin(kinds, EER_KINDS)
        bad_eer = eer & (efficiency > 50)
    report_rows(
        report,
        table,
        "efficiency",
        bad_boiler,
        lambda i: f"thermal efficiency of a {kinds[i]} must be > 0 and <= 1.2, got {efficiency[i]:g}",
    )
    report_rows(
        report,
        table,
        "efficiency",
        bad_eer,
        lambda i: f"EER of a {kinds[i]} must be > 0 and <= 50, got {efficiency[i]:g}",
    )
    report_rows(
        report,
        table,
        "efficiency",
        eer & blank_cells(table, "efficiency"),
        lambda i: f"is blank; the EER (> 0 and <= 50) of a {kinds[i]} is required",
    )
    report_rows(
        report,
        table,
        "efficiency",
        boiler & blank_cells(table, "efficiency"),
        lambda i: f"is blank; the thermal efficiency (> 0 and <= 1.2, e.g. 0.95) of a {kinds[i]} is required "
        "(no default exists: docs/input_format.md)",
    )
    store = kinds == "heat_store"
    hours = frame["store_hours"].to_numpy(dtype=float)
    hours_blank = blank_cells(table, "store_hours")
    report_rows(
        report,
        table,
        "store_hours",
        store & hours_blank,
        lambda i: "is blank; a heat_store needs its hours to charge at full power (> 0)",
    )
    _check_technology_minimums(report, table, frame, boiler, eer, store)
    # Kinds that do not use the column get a neutral 1 (and stores' hours 0 elsewhere): not defaults, fillers.
    frame["efficiency"] = np.where(np.isnan(efficiency) & ~eer & ~boiler, 1.0, efficiency)
    frame["store_hours"] = np.where(np.isnan(hours) & ~store, 0.0, hours)


TECHNOLOGY_MINIMUMS = (
    # column, which rows, smallest plausible value, what the column means (for the message)
    ("lifetime_a", "all", 1.0, "a lifetime in years (a): 20 means twenty years"),
    ("efficiency", "boiler", 0.3, "a thermal efficiency as a share (0.95, not 95 %); boilers reach 0.8 to 1.1"),
    ("efficiency", "eer", 0.5, "an EER (cooling out per electricity in); chillers reach 2 to 6"),
    ("store_efficiency", "store", 0.1, "a round-trip efficiency as a share; hot-water stores reach 0.5 to 0.98"),
    ("store_hours", "store", 0.1, "hours to charge the full store at full power; tanks take 2 to 24 h"),
)
"""Values allowed by the ranges of :data:`TECHNOLOGY_COLUMNS` but too small for any plant (typing errors or unit
slips); a divisor this small would also put coefficients near 1e300 into the LP. Typical values: common
practice."""


def _check_technology_minimums(
    report: Report, table: Table, frame: pd.DataFrame, boiler: np.ndarray, eer: np.ndarray, store: np.ndarray
) -> None:
    rows = {"all": np.ones(len(frame), dtype=bool), "boiler": boiler, "eer": eer, "store": store}
    for column, which, smallest, meaning in TECHNOLOGY_MINIMUMS:
        values = frame[column].to_numpy(dtype=float)
        with np.errstate(invalid="ignore"):
            small = rows[which] & (values > 0) & (values < smallest)
        report_rows(
            report,
            table,
            column,
            small,
            lambda i: f"{values[i]:g} is implausibly small (below {smallest:g}); the column holds {meaning}",
        )


def load_technologies(folder: Path, report: Report) -> tuple[Table, pd.DataFrame] | None:
    loaded = read_checked_table(folder, TECHNOLOGIES_FILE, TECHNOLOGY_COLUMNS, report, required=True)
    if loaded is None:
        return None
    table, frame = loaded
    if len(table) == 0:
        report(TECHNOLOGIES_FILE, None, None, "lists no technology; add one row per technology below the header")
    frame["name"] = [name or tid for name, tid in zip(frame["name"], frame["technology_id"])]
    check_unique(report, table, list(frame["technology_id"]), "technology_id", "technology_id '{}'")
    _check_kind_and_carrier(report, table, frame)
    _check_technology_parameters(report, table, frame)
    return table, frame


# ============================================================================= district_technologies.csv
DISTRICT_TECHNOLOGY_COLUMNS = (
    Column("district_id", "text"),
    Column("technology_id", "text"),
    Column("existing_kw", in_header=False, default=_capacity_default("existing_kw"), low=0),
    Column("potential_kw", in_header=False, default=_capacity_default("potential_kw"), low=0, allow_inf=True),
)


def load_district_technologies(
    folder: Path, report: Report, district_ids: list[str] | None, technology_ids: list[str] | None
) -> tuple[Table, pd.DataFrame] | None:
    loaded = read_checked_table(folder, DISTRICT_TECHNOLOGIES_FILE, DISTRICT_TECHNOLOGY_COLUMNS, report, False)
    if loaded is None:
        return None
    table, frame = loaded
    check_references(report, table, frame, "district_id", district_ids, "district")
    check_references(report, table, frame, "technology_id", technology_ids, "technology")
    pairs = list(zip(frame["district_id"], frame["technology_id"]))
    check_unique(report, table, pairs, "technology_id", "row for district '{}' and technology '{}'")
    existing = frame["existing_kw"].to_numpy(dtype=float)
    potential = frame["potential_kw"].to_numpy(dtype=float)
    with np.errstate(invalid="ignore"):
        above = existing > potential
    report_rows(
        report,
        table,
        "existing_kw",
        above,
        lambda i: f"existing capacity {existing[i]:g} is above the potential {potential[i]:g}; raise potential_kw "
        "to at least the existing capacity or lower existing_kw",
    )
    return table, frame


def full_district_technologies(
    district_ids: list[str], technology_ids: list[str], overrides: pd.DataFrame | None
) -> pd.DataFrame:
    """One row per district and technology, defaults where the file has no row."""
    index = pd.MultiIndex.from_product([district_ids, technology_ids], names=["district_id", "technology_id"])
    defaults = {column: _capacity_default(column) for column in ("existing_kw", "potential_kw")}
    full = pd.DataFrame(defaults, index=index)
    if overrides is not None and len(overrides):
        given = overrides.set_index(["district_id", "technology_id"])[["existing_kw", "potential_kw"]]
        full.loc[given.index, ["existing_kw", "potential_kw"]] = given.to_numpy(dtype=float)
    return full.reset_index().astype({"district_id": str, "technology_id": str})
