"""The district linear program: investment and dispatch of every district's heat and cooling supply.

The formulation is written out in ``docs/model.md`` (sections 3 to 6). Every quantity is a block of variables
indexed by supply unit (a technology in a district, or a heat pump bound to one well) and model step; every
constraint family is added in one bulk call (:mod:`engine.model.lp`). Power is in kW and one step is one hour, so a step's energy in kWh equals its
power; annual sums multiply by the step weights [h]. Prices are per MWh and per tonne, hence the factors 1/1000.

Two refinements over the design document:

* The well limit is written in pumped water rather than heat: the flow the heat pump needs at the largest spread
  the reinjection window allows plus the flow the cooling needs must stay within the permit,
  ``sum_units q_ext / (c_p dT_heat) + q_rej / (c_p dT_cool) <= m_dot_permit``. With one service this is exactly
  ``q <= m_dot c_p dT``; with both it never lets a well exceed its permitted flow.
* The CO2 objective is lexicographic: first minimise emissions (unserved heat counts as 10 t per MWh so that it is
  used only where nothing else can serve), then minimise cost with emissions and unserved heat held at that optimum.
  The design document's "tiny secondary cost term" depends on a weight; two stages do not.
"""

from __future__ import annotations

import time
from dataclasses import dataclass, field
from types import SimpleNamespace

import numpy as np

from engine.scenario.kinds import COOLING_KINDS, FUELS, WELL_KINDS
from engine.model.lp import INF, HighsSession, LinearProgram, LpSolution
from engine.model.prepare import PreparedRun
from engine.model.solvers import DIRECT, resolve_solver, solve_lp
from engine.physics.timeseries import HOURS_PER_DAY
from engine.units import KG_PER_T, KWH_PER_MWH, SECONDS_PER_HOUR

UNSERVED_CO2_EQUIVALENT_T_PER_MWH = 10.0
"""Weight of unserved heat in the CO2 objective: far above any real supply (fuel oil emits 0.27 t/MWh)."""


@dataclass
class SupplyUnits:
    """One row per unit that can be built and dispatched (stores excluded)."""

    district: np.ndarray  # index into prepared.district_ids
    technology_id: list
    kind: list
    well: np.ndarray  # index into prepared.well_ids, -1 if none
    existing_kw: np.ndarray
    max_new_kw: np.ndarray
    serves_cooling: np.ndarray  # bool
    # per unit and step [per kWh of output]
    electricity: np.ndarray
    fuel: np.ndarray
    network: np.ndarray
    aquifer_exchange: np.ndarray  # kWh extracted (heating) or rejected (cooling) per kWh of output
    output_upper: np.ndarray  # kW, inf where unbounded by physics
    fuel_name: list
    # heat pumps making hot water at its own temperature: electricity and aquifer exchange per kWh of hot water
    electricity_hot_water: np.ndarray | None = None
    aquifer_exchange_hot_water: np.ndarray | None = None


@dataclass
class StoreUnits:
    district: np.ndarray
    technology_id: list
    existing_kwh: np.ndarray
    max_new_kwh: np.ndarray
    loss_per_h: np.ndarray
    charge_efficiency: np.ndarray
    discharge_efficiency: np.ndarray
    hours: np.ndarray


@dataclass
class DistrictModel:
    """The LP together with the maps needed to read its solution."""

    prepared: PreparedRun
    districts: np.ndarray  # indices of the districts in this model
    lp: LinearProgram
    units: SupplyUnits
    stores: StoreUnits
    cols: dict = field(default_factory=dict)
    rows: dict = field(default_factory=dict)
    money: np.ndarray | None = None  # €/a per unit of each column
    emissions: np.ndarray | None = None  # t/a per unit of each column
    constant_fixed_om: np.ndarray | None = None  # €/a of existing capacity per unit (not a decision)
    build_s: float = 0.0


def _district_potential(prepared: PreparedRun) -> dict:
    """(existing, potential) per (district, technology), read once per prepared run.

    Decomposed runs build one LP per district from the same prepared run; walking the city's whole table for each
    of them would make the build grow with the square of the number of districts.
    """
    cached = getattr(prepared, "_potential_cache", None)
    if cached is None:
        dt = prepared.scenario.district_technologies
        cached = {
            (d, t): (float(e), float(p))
            for d, t, e, p in zip(dt["district_id"], dt["technology_id"], dt["existing_kw"], dt["potential_kw"])
        }
        prepared._potential_cache = cached
    return cached


def split_existing_over_wells(existing_kw: float, permit_flow_kg_s: np.ndarray) -> np.ndarray:
    """Existing capacity of a well-bound technology in a district, shared over the district's wells [kW].

    district_technologies.csv states existing capacity per district; a district may hold several doublets. The
    existing units are placed on the wells in proportion to their permitted flow (equal shares where no well has
    a permit flow), so that each part stays within what its well can carry as far as the permits allow.
    """
    flows = np.asarray(permit_flow_kg_s, dtype=float)
    if flows.size == 0:
        return flows
    weights = flows if flows.sum() > 0 else np.ones_like(flows)
    return float(existing_kw) * weights / weights.sum()


def _supply_rows(prepared: PreparedRun) -> tuple[list, list]:
    """The district rows (as dicts) and technology rows (as namespaces) :func:`supply_units` walks, read once
    per prepared run (pandas' row access costs about a millisecond a row, for every district LP built). Plain
    objects, so that a prepared run still pickles to the worker processes."""
    cached = getattr(prepared, "_supply_rows_cache", None)
    if cached is None:
        scenario = prepared.scenario
        columns = ["district_id", "cooling_demand_mwh_per_a", "network_available", "network_connection_limit_kw"]
        cached = (scenario.districts[columns].to_dict("records"),
                  [SimpleNamespace(**row) for row in scenario.technologies.to_dict("records")])
        prepared._supply_rows_cache = cached
    return cached


def supply_units(prepared: PreparedRun, districts: np.ndarray) -> tuple[SupplyUnits, StoreUnits]:
    """List the units that may exist in ``districts`` with their per-step conversion factors."""
    district_rows, tech_rows = _supply_rows(prepared)
    pot = _district_potential(prepared)
    n_t = prepared.n_steps
    rec = {k: [] for k in SupplyUnits.__dataclass_fields__}
    srec = {k: [] for k in StoreUnits.__dataclass_fields__}
    ones = np.ones(n_t)
    zeros = np.zeros(n_t)

    def add(i, tech, well, existing, max_new, cooling, elec, fuel, net, aquifer, upper, elec_hw=None,
            aquifer_hw=None):
        rec["electricity_hot_water"].append(elec if elec_hw is None else elec_hw)
        rec["aquifer_exchange_hot_water"].append(aquifer if aquifer_hw is None else aquifer_hw)
        rec["district"].append(i)
        rec["technology_id"].append(tech.technology_id)
        rec["kind"].append(tech.kind)
        rec["well"].append(well)
        rec["existing_kw"].append(existing)
        rec["max_new_kw"].append(max_new)
        rec["serves_cooling"].append(cooling)
        rec["electricity"].append(elec)
        rec["fuel"].append(fuel)
        rec["network"].append(net)
        rec["aquifer_exchange"].append(aquifer)
        rec["output_upper"].append(upper)
        rec["fuel_name"].append(tech.carrier if tech.carrier in FUELS else "")

    for i in districts:
        d = district_rows[i]
        did = d["district_id"]
        has_cooling = d["cooling_demand_mwh_per_a"] > 0
        for tech in tech_rows:
            existing, potential = pot.get((did, tech.technology_id), (0.0, INF))
            kind = tech.kind
            if kind in COOLING_KINDS and not has_cooling:
                continue
            if kind == "network_connection":
                if not d["network_available"]:
                    continue
                potential = min(potential, float(d["network_connection_limit_kw"]))
            if potential <= 0 and existing <= 0:
                continue
            max_new = max(potential - existing, 0.0)
            if kind == "heat_store":
                eff = float(tech.store_efficiency)
                srec["district"].append(i)
                srec["technology_id"].append(tech.technology_id)
                srec["existing_kwh"].append(existing)
                srec["max_new_kwh"].append(max_new)
                srec["loss_per_h"].append(float(tech.store_loss_pct_per_h) / 100.0)
                srec["charge_efficiency"].append(np.sqrt(eff))
                srec["discharge_efficiency"].append(np.sqrt(eff))
                srec["hours"].append(float(tech.store_hours))
                continue
            if kind in WELL_KINDS:
                here = np.flatnonzero(prepared.well_district == i)
                for j, existing_j in zip(here, split_existing_over_wells(existing, prepared.well_permit_flow_kg_s[here])):
                    if kind == "groundwater_heat_pump":
                        cop = prepared.well_cop[tech.technology_id][j]
                        cop_hw = prepared.well_cop_hot_water.get(tech.technology_id, prepared.well_cop[tech.technology_id])[j]
                        usable = np.isfinite(prepared.well_flow_per_kw_heating[j])
                        add(i, tech, j, existing_j, max_new, False, 1.0 / cop, zeros, zeros, 1.0 - 1.0 / cop,
                            np.where(usable, INF, 0.0), 1.0 / cop_hw, 1.0 - 1.0 / cop_hw)
                    else:
                        eer = float(tech.efficiency)
                        usable = np.isfinite(prepared.well_flow_per_kw_cooling[j])
                        add(i, tech, j, existing_j, max_new, True, ones / eer, zeros, zeros, ones * (1.0 + 1.0 / eer),
                            np.where(usable, INF, 0.0))
                continue
            cooling = kind in COOLING_KINDS
            elec, fuel, net = zeros, zeros, zeros
            elec_hw = None
            if kind == "fuel_boiler":
                fuel = ones / float(tech.efficiency)
            elif kind == "electric_boiler" or kind == "chiller":
                elec = ones / float(tech.efficiency)
            elif kind == "air_heat_pump":
                elec = 1.0 / prepared.air_cop[tech.technology_id][i]
                elec_hw = 1.0 / prepared.air_cop_hot_water.get(tech.technology_id, prepared.air_cop[tech.technology_id])[i]
            elif kind == "network_connection":
                net = ones
            add(i, tech, -1, existing, max_new, cooling, elec, fuel, net, zeros, ones * INF, elec_hw)

    units = SupplyUnits(
        district=np.array(rec["district"], dtype=int),
        technology_id=rec["technology_id"],
        kind=rec["kind"],
        well=np.array(rec["well"], dtype=int),
        existing_kw=np.array(rec["existing_kw"], float),
        max_new_kw=np.array(rec["max_new_kw"], float),
        serves_cooling=np.array(rec["serves_cooling"], bool),
        electricity=np.array(rec["electricity"], float).reshape(-1, n_t),
        fuel=np.array(rec["fuel"], float).reshape(-1, n_t),
        network=np.array(rec["network"], float).reshape(-1, n_t),
        aquifer_exchange=np.array(rec["aquifer_exchange"], float).reshape(-1, n_t),
        output_upper=np.array(rec["output_upper"], float).reshape(-1, n_t),
        fuel_name=rec["fuel_name"],
        electricity_hot_water=np.array(rec["electricity_hot_water"], float).reshape(-1, n_t),
        aquifer_exchange_hot_water=np.array(rec["aquifer_exchange_hot_water"], float).reshape(-1, n_t),
    )
    stores = StoreUnits(
        district=np.array(srec["district"], dtype=int),
        technology_id=srec["technology_id"],
        existing_kwh=np.array(srec["existing_kwh"], float),
        max_new_kwh=np.array(srec["max_new_kwh"], float),
        loss_per_h=np.array(srec["loss_per_h"], float),
        charge_efficiency=np.array(srec["charge_efficiency"], float),
        discharge_efficiency=np.array(srec["discharge_efficiency"], float),
        hours=np.array(srec["hours"], float),
    )
    return units, stores


def fixed_new_bounds(prepared: PreparedRun, units: SupplyUnits, stores: StoreUnits):
    """Bounds of the new capacities: 0 .. potential - existing, or, where ``prepared.fixed_new`` holds a plan
    (``(district_id, technology_id, well_id)`` -> new kW, kWh for stores, well_id "" off the wells), fixed at the
    plan's value clipped into those bounds; a unit the plan does not name is fixed at 0 (the plan builds none)."""
    if prepared.fixed_new is None:
        return 0.0, units.max_new_kw, 0.0, stores.max_new_kwh
    ids, wells = prepared.district_ids, list(prepared.well_ids) + [""]
    plan = prepared.fixed_new
    unit_new = np.array([plan.get((str(ids[d]), t, str(wells[w])), 0.0) for d, t, w in
                         zip(units.district, units.technology_id, units.well)], float)
    store_new = np.array([plan.get((str(ids[d]), t, ""), 0.0) for d, t in zip(stores.district, stores.technology_id)],
                         float)
    unit_new = np.clip(unit_new, 0.0, units.max_new_kw)
    store_new = np.clip(store_new, 0.0, stores.max_new_kwh)
    return unit_new, unit_new, store_new, store_new


def stores_linked(grid, technologies=None, settings=None) -> bool:
    """True when the stores of ``grid`` follow the calendar (:func:`_linked_store_rows`): the run asks for it
    (``settings.stores_between_days``; None counts as asked), the grid is typical days of 24 hourly steps (not the
    full year, whose one period is the year, the level cyclic over it) and no store of ``technologies`` (the
    scenario's table, optional) loses more than :data:`MAX_LINKED_LOSS_PER_H` per hour. Otherwise each store is
    cyclic within its typical day."""
    if settings is not None and not getattr(settings, "stores_between_days", False):
        return False
    if technologies is not None and len(technologies):
        stores = technologies[technologies["kind"] == "heat_store"]
        if len(stores) and float(stores["store_loss_pct_per_h"].max()) / 100.0 > MAX_LINKED_LOSS_PER_H:
            return False
    return bool(not grid.is_full_year and grid.n_steps == grid.n_periods * HOURS_PER_DAY
                and np.all(np.bincount(grid.period, minlength=grid.n_periods) == HOURS_PER_DAY))


EXTREME_DAYS_SERVE_THEMSELVES = True
"""Linked stores: each extreme day ends at the level it started with (no heat carried in from the days around
it, which typical days represent milder than the days of a real cold spell)."""

MAX_LINKED_LOSS_PER_H = 0.25
"""Stores losing more than this share of their heat per hour stay cyclic within each typical day: over a day
they keep less than 1e-3 of it, and keep^-(h+1) would scale the rows badly."""


def _linked_store_rows(lp: LinearProgram, grid, stores: StoreUnits, cols: dict, rows: dict, keep: np.ndarray) -> None:
    """Store rows of typical days linked in calendar order (docs/model.md section 4, constraint 8b).

    Builds on the superposition of Kotzur, L., Markewitz, P., Robinius, M. and Stolten, D. (2018). Time series
    aggregation for energy system design: Modeling seasonal storage. Applied Energy 213, 123-135: one start level
    ``B[d]`` per store and calendar day (cyclic over the year) and one level ``l[k, h]`` within each typical day
    k, the same for every day it stands for. Here ``l`` is counted in start-of-day units, so that the level at
    hour h of day d is ``keep^(h+1) (B[d] + l[k(d), h])`` with ``l[k, h] = l[k, h-1] + keep^-(h+1) (sqrt(eta)
    Q+ - Q- / sqrt(eta))``, ``l[k, -1] = 0``, and ``B[d+1] = keep^24 (B[d] + l[k(d), 23])``. The level stays in
    [0, capacity] at every hour of every calendar day exactly when ``B[d] + min_h l[k(d), h] >= 0`` and
    ``B[d] + max_h (l[k(d), h] - c_h capacity) <= capacity`` with ``c_h = keep^-(h+1) - 1``; the lowest and
    highest are columns of their own per typical day, so the rows grow with days and typical days, not hours.
    """
    n_s = len(stores.technology_id)
    period_steps = np.stack([np.flatnonzero(grid.period == p) for p in range(grid.n_periods)])  # hour order
    last = period_steps[:, -1]
    position = np.empty(grid.n_steps, dtype=int)  # hour within the typical day, 0..23
    position[period_steps.ravel()] = np.tile(np.arange(HOURS_PER_DAY), grid.n_periods)
    not_first = (position > 0).astype(float)
    decay = keep[:, None] ** (position[None, :] + 1.0)  # keep^(h+1), (stores, steps)
    prev = grid.previous_step()
    # decay * (l[h] - l[h-1]) = sqrt(eta) Q+ - Q- / sqrt(eta)
    rows["store_balance"] = lp.add_rows(
        "store_balance",
        [
            (cols["level"], decay),
            (cols["level"][:, prev], -decay * not_first[None, :]),
            (cols["charge"], -stores.charge_efficiency[:, None]),
            (cols["discharge"], 1.0 / stores.discharge_efficiency[:, None]),
        ],
        lower=0.0,
        upper=0.0,
    )
    n_days = grid.day_period.size
    day_period = np.asarray(grid.day_period, dtype=int)
    day_keep = keep[:, None] ** HOURS_PER_DAY
    following = np.r_[np.arange(1, n_days), 0]
    rows["store_day_chain"] = lp.add_rows(
        "store_day_chain",
        [
            (cols["store_day_start"][:, following], 1.0),
            (cols["store_day_start"], -day_keep),
            (cols["level"][:, last[day_period]], -day_keep),
        ],
        lower=0.0,
        upper=0.0,
    )
    extreme_days = (np.flatnonzero(np.asarray(grid.extreme_period, dtype=bool)[day_period])
                    if grid.extreme_period is not None else np.zeros(0, dtype=int))
    if EXTREME_DAYS_SERVE_THEMSELVES and extreme_days.size:
        # an extreme day ends at the level it started with: no heat carried in from the days around it
        rows["store_extreme_day"] = lp.add_rows(
            "store_extreme_day",
            [(cols["store_day_start"][:, following[extreme_days]], 1.0),
             (cols["store_day_start"][:, extreme_days], -1.0)],
            lower=0.0,
            upper=0.0,
        )
    rows["store_day_lowest"] = lp.add_rows(
        "store_day_lowest", [(cols["level"], 1.0), (cols["store_low"][:, grid.period], -1.0)], lower=0.0
    )
    headroom = 1.0 / decay - 1.0  # c_h
    rows["store_day_highest"] = lp.add_rows(
        "store_day_highest",
        [(cols["level"], 1.0), (cols["store_high"][:, grid.period], -1.0), (cols["store_new"][:, None], -headroom)],
        upper=stores.existing_kwh[:, None] * headroom,
    )
    rows["store_empty"] = lp.add_rows(
        "store_empty", [(cols["store_day_start"], 1.0), (cols["store_low"][:, day_period], 1.0)], lower=0.0
    )
    rows["store_level"] = lp.add_rows(
        "store_level",
        [(cols["store_day_start"], 1.0), (cols["store_high"][:, day_period], 1.0),
         (cols["store_new"][:, None], -1.0)],
        upper=stores.existing_kwh[:, None] * np.ones((1, n_days)),
    )


def build_model(prepared: PreparedRun, districts=None) -> DistrictModel:
    """Build the LP for ``districts`` (indices; all by default). The city-wide limits of the settings (None for
    no limit) apply to those districts."""
    started = time.perf_counter()
    settings = prepared.settings
    if districts is None:
        districts = np.arange(len(prepared.district_ids))
    districts = np.asarray(districts, dtype=int)
    co2_cap_t_per_a = settings.co2_cap_t_per_a
    network_plant_limit_kw = settings.network_plant_limit_kw
    prices = prepared.prices
    techs = prepared.scenario.technologies.set_index("technology_id")
    units, stores = supply_units(prepared, districts)
    n_t = prepared.n_steps
    w = prepared.grid.weight_h
    n_u, n_s, n_d = len(units.technology_id), len(stores.technology_id), len(districts)
    local = {int(i): k for k, i in enumerate(districts)}  # global district index -> position in this model
    lp = LinearProgram()
    cols, rows = {}, {}

    # ---------------------------------------------------------------- variables
    new_lower, new_upper, store_lower, store_upper = fixed_new_bounds(prepared, units, stores)
    cols["new"] = lp.add_variables("new_capacity_kw", n_u, new_lower, new_upper)
    cols["out"] = lp.add_variables("output_kw", (n_u, n_t), 0.0, units.output_upper)
    cols["store_new"] = lp.add_variables("store_new_kwh", n_s, store_lower, store_upper)
    linked = stores_linked(prepared.grid, prepared.scenario.technologies, settings)
    # linked: the level within each typical day, counted from the day's start level (any sign; section 4, 8b)
    cols["level"] = lp.add_variables("store_level_kwh", (n_s, n_t), -INF if linked else 0.0)
    if linked:  # the level at the start of each calendar day; the lowest and highest level within each typical day
        cols["store_day_start"] = lp.add_variables("store_day_start_kwh", (n_s, prepared.grid.day_period.size))
        cols["store_low"] = lp.add_variables("store_day_lowest_kwh", (n_s, prepared.grid.n_periods), -INF)
        cols["store_high"] = lp.add_variables("store_day_highest_kwh", (n_s, prepared.grid.n_periods), -INF)
    cols["charge"] = lp.add_variables("store_charge_kw", (n_s, n_t))
    cols["discharge"] = lp.add_variables("store_discharge_kw", (n_s, n_t))
    unserved_upper = INF if settings.allow_unserved_heat else 0.0
    cols["unserved_heat"] = lp.add_variables("unserved_heat_kw", (n_d, n_t), 0.0, unserved_upper)
    cooling_demand = prepared.cooling_demand_kw[districts]
    cooled = np.flatnonzero(cooling_demand.sum(axis=1) > 0)
    cols["cooled"] = cooled
    cols["unserved_cooling"] = lp.add_variables("unserved_cooling_kw", (len(cooled), n_t), 0.0, unserved_upper)

    t_idx = np.arange(n_t)
    unit_local = np.array([local[int(i)] for i in units.district], dtype=int)
    store_local = np.array([local[int(i)] for i in stores.district], dtype=int)

    # ---------------------------------------------------------------- heat balance per district and step
    heat_units = np.flatnonzero(~units.serves_cooling)
    r = [unit_local[heat_units][:, None] * n_t + t_idx[None, :]]
    c = [cols["out"][heat_units]]
    v = [np.ones((len(heat_units), n_t))]
    r += [store_local[:, None] * n_t + t_idx[None, :]] * 2
    c += [cols["discharge"], cols["charge"]]
    v += [np.ones((n_s, n_t)), -np.ones((n_s, n_t))]
    r.append(np.arange(n_d)[:, None] * n_t + t_idx[None, :])
    c.append(cols["unserved_heat"])
    v.append(np.ones((n_d, n_t)))
    heat_demand = prepared.heat_demand_kw[districts]
    rows["heat_balance"] = lp.add_rows_coo(
        "heat_balance", n_d * n_t, *(np.concatenate([a.ravel() for a in x]) for x in (r, c, v)),
        lower=heat_demand.ravel(), upper=heat_demand.ravel(),
    ).reshape(n_d, n_t)

    # ---------------------------------------------------------------- hot water at its own temperature
    # A heat pump makes hot water at the hot-water temperature with its (lower) COP there: ``hot_water`` is the
    # part of its output that is hot water, paying the extra electricity per kWh. Boilers and the network
    # (supplying at or above the hot-water temperature) serve it at no extra cost; stores do not (their heat may
    # come from a heat pump at the space-heating temperature). Only districts whose hot-water temperature lies
    # above the supply temperature and that have a heat pump get these rows.
    extra_elec = units.electricity_hot_water - units.electricity  # kWh of electricity per kWh of hot water
    hw_demand = (prepared.hot_water_demand_kw[districts] if prepared.hot_water_demand_kw is not None
                 else np.zeros((n_d, n_t)))
    lifted_any = (~units.serves_cooling) & (extra_elec > 1e-12).any(axis=1)
    hw_districts = np.array(sorted({int(unit_local[u]) for u in np.flatnonzero(lifted_any)
                                    if hw_demand[unit_local[u]].sum() > 0}), dtype=int)
    lifted = np.flatnonzero(lifted_any & np.isin(unit_local, hw_districts))
    cols["hot_water_units"] = lifted
    # a unit that cannot run in a step (a well without usable spread) makes no hot water there either
    cols["hot_water"] = lp.add_variables("hot_water_kw", (len(lifted), n_t), 0.0,
                                         np.where(units.output_upper[lifted] > 0, INF, 0.0))
    if len(lifted):
        rows["hot_water_within_output"] = lp.add_rows(
            "hot_water_within_output", [(cols["hot_water"], 1.0), (cols["out"][lifted], -1.0)], upper=0.0)
        hpos = {int(k): p for p, k in enumerate(hw_districts)}
        free = np.flatnonzero((~units.serves_cooling) & ~lifted_any & np.isin(unit_local, hw_districts))
        r = [np.array([hpos[int(unit_local[u])] for u in free], int)[:, None] * n_t + t_idx[None, :],
             np.array([hpos[int(unit_local[u])] for u in lifted], int)[:, None] * n_t + t_idx[None, :],
             np.arange(len(hw_districts))[:, None] * n_t + t_idx[None, :]]
        c = [cols["out"][free], cols["hot_water"], cols["unserved_heat"][hw_districts]]
        rows["hot_water_balance"] = lp.add_rows_coo(
            "hot_water_balance", len(hw_districts) * n_t,
            *(np.concatenate([a.reshape(-1) for a in x]) for x in (r, c, [np.ones(cc.shape) for cc in c])),
            lower=hw_demand[hw_districts].ravel(),
        ).reshape(len(hw_districts), n_t)

    # ---------------------------------------------------------------- cooling balance
    cool_units = np.flatnonzero(units.serves_cooling)
    cooled_pos = {int(k): p for p, k in enumerate(cooled)}
    if len(cooled):
        cu_row = np.array([cooled_pos[int(unit_local[u])] for u in cool_units], dtype=int)
        r = [cu_row[:, None] * n_t + t_idx[None, :], np.arange(len(cooled))[:, None] * n_t + t_idx[None, :]]
        c = [cols["out"][cool_units], cols["unserved_cooling"]]
        v = [np.ones((len(cool_units), n_t)), np.ones((len(cooled), n_t))]
        demand_c = cooling_demand[cooled]
        rows["cooling_balance"] = lp.add_rows_coo(
            "cooling_balance", len(cooled) * n_t, *(np.concatenate([a.ravel() for a in x]) for x in (r, c, v)),
            lower=demand_c.ravel(), upper=demand_c.ravel(),
        ).reshape(len(cooled), n_t)

    # ---------------------------------------------------------------- capacity of every unit
    rows["capacity"] = lp.add_rows(
        "capacity",
        [(cols["out"], 1.0), (cols["new"][:, None], -1.0)],
        upper=units.existing_kw[:, None] * np.ones((1, n_t)),
    )

    # potential of well technologies is per district, shared by that district's wells
    well_units = np.flatnonzero(units.well >= 0)
    pot = _district_potential(prepared)
    groups = {}
    for u in well_units:
        groups.setdefault((int(units.district[u]), units.technology_id[u]), []).append(u)
    g_rows, g_cols, g_ub = [], [], []
    for g, ((i, tech), members) in enumerate(groups.items()):
        existing, potential = pot.get((prepared.district_ids[i], tech), (0.0, INF))
        if np.isfinite(potential):
            k = len(g_ub)
            g_rows += [k] * len(members)
            g_cols += list(cols["new"][members])
            g_ub.append(max(potential - existing, 0.0))  # new capacity on all the district's wells together
    if g_ub:
        rows["well_potential"] = lp.add_rows_coo(
            "well_potential", len(g_ub), g_rows, g_cols, np.ones(len(g_rows)), upper=np.array(g_ub)
        )

    # ---------------------------------------------------------------- stores
    if n_s:
        keep = 1.0 - stores.loss_per_h
        exist = stores.existing_kwh[:, None] * np.ones((1, n_t))
        if linked:
            _linked_store_rows(lp, prepared.grid, stores, cols, rows, keep)
        else:
            prev = prepared.grid.previous_step()
            rows["store_balance"] = lp.add_rows(
                "store_balance",
                [
                    (cols["level"], 1.0),
                    (cols["level"][:, prev], -keep[:, None]),
                    (cols["charge"], -stores.charge_efficiency[:, None]),
                    (cols["discharge"], 1.0 / stores.discharge_efficiency[:, None]),
                ],
                lower=0.0,
                upper=0.0,
            )
            rows["store_level"] = lp.add_rows(
                "store_level", [(cols["level"], 1.0), (cols["store_new"][:, None], -1.0)], upper=exist
            )
        rate = 1.0 / stores.hours[:, None]
        for name in ("charge", "discharge"):
            rows[f"store_{name}"] = lp.add_rows(
                f"store_{name}", [(cols[name], 1.0), (cols["store_new"][:, None], -rate)], upper=exist * rate
            )

    # ---------------------------------------------------------------- wells: permitted flow and annual volume
    wells_here = np.unique(units.well[well_units]) if len(well_units) else np.zeros(0, int)
    if len(wells_here):
        wpos = {int(j): p for p, j in enumerate(wells_here)}
        flow_h = np.where(np.isfinite(prepared.well_flow_per_kw_heating), prepared.well_flow_per_kw_heating, 0.0)
        flow_c = np.where(np.isfinite(prepared.well_flow_per_kw_cooling), prepared.well_flow_per_kw_cooling, 0.0)
        flow_coef = np.array(
            [
                units.aquifer_exchange[u] * (flow_c[units.well[u]] if units.serves_cooling[u] else flow_h[units.well[u]])
                for u in well_units
            ]
        )  # kg/s per kW of output, (well units, steps)
        wrow = np.array([wpos[int(units.well[u])] for u in well_units])
        # hot water made by a groundwater heat pump extracts less per kWh (more of it comes from electricity)
        hw_well = [k for k, u in enumerate(lifted) if units.well[u] >= 0]
        hw_rows = np.array([wpos[int(units.well[lifted[k]])] for k in hw_well], dtype=int)
        hw_coef = np.array([(units.aquifer_exchange_hot_water[lifted[k]] - units.aquifer_exchange[lifted[k]])
                            * flow_h[units.well[lifted[k]]] for k in hw_well]).reshape(len(hw_well), n_t)
        hw_cols = cols["hot_water"][hw_well] if hw_well else np.zeros((0, n_t), int)
        rows["well_flow"] = lp.add_rows_coo(
            "well_flow", len(wells_here) * n_t,
            np.r_[(wrow[:, None] * n_t + t_idx[None, :]).ravel(), (hw_rows[:, None] * n_t + t_idx[None, :]).ravel()],
            np.r_[cols["out"][well_units].ravel(), hw_cols.ravel()], np.r_[flow_coef.ravel(), hw_coef.ravel()],
            upper=np.repeat(prepared.well_permit_flow_kg_s[wells_here], n_t),
        ).reshape(len(wells_here), n_t)
        # a well whose flow row holds one heat pump and its hot water: the row's activity may stand in for the
        # heat pump's output at the hand-off to HiGHS (the row then is a bound; x >= 0 follows from W <= X)
        per_well = np.bincount(wrow, minlength=len(wells_here))
        pairs = [(u, k) for k, u in zip(hw_well, [lifted[k] for k in hw_well]) if per_well[wpos[int(units.well[u])]] == 1]
        if pairs:
            lp.add_flow_pairs(np.concatenate([cols["out"][u] for u, _ in pairs]),
                              np.concatenate([cols["hot_water"][k] for _, k in pairs]),
                              np.concatenate([rows["well_flow"][wpos[int(units.well[u])]] for u, _ in pairs]))
        volume = prepared.well_annual_volume_m3[wells_here]
        limited = np.flatnonzero(np.isfinite(volume))
        if len(limited):
            m3_per_kg = SECONDS_PER_HOUR / prepared.well_density_kg_per_m3  # m³ per (kg/s · h)
            sel = np.isin(wrow, limited)
            vpos = {int(p): k for k, p in enumerate(limited)}
            vrow = np.array([vpos[int(p)] for p in wrow[sel]])
            coef = flow_coef[sel] * w[None, :] * m3_per_kg[units.well[well_units][sel]]
            hsel = np.isin(hw_rows, limited)
            hvrow = np.array([vpos[int(p)] for p in hw_rows[hsel]], dtype=int)
            hcoef = hw_coef[hsel] * w[None, :] * m3_per_kg[units.well[lifted[np.array(hw_well, int)[hsel]]]] \
                if hsel.any() else np.zeros((0, n_t))
            rows["well_volume"] = lp.add_rows_coo(
                "well_volume", len(limited), np.r_[np.repeat(vrow, n_t), np.repeat(hvrow, n_t)],
                np.r_[cols["out"][well_units][sel].ravel(), hw_cols[hsel].ravel()], np.r_[coef.ravel(), hcoef.ravel()],
                upper=volume[limited],
            )
        cols["wells_here"] = wells_here

    # ---------------------------------------------------------------- city-wide network plant limit
    net_units = np.flatnonzero(np.array(units.kind) == "network_connection")
    if network_plant_limit_kw is not None and len(net_units):
        rows["network_plant"] = lp.add_rows_coo(
            "network_plant", n_t, np.tile(t_idx, len(net_units)), cols["out"][net_units].ravel(),
            np.ones(len(net_units) * n_t), upper=np.full(n_t, float(network_plant_limit_kw)),
        )

    # ---------------------------------------------------------------- money and emissions per column
    money = np.zeros(lp.n_cols)
    emis = np.zeros(lp.n_cols)
    fuel_price = np.array([prices.fuel_eur_per_mwh.get(f, 0.0) for f in units.fuel_name])
    fuel_co2 = np.array([prepared.scenario.prices.co2_kg_per_mwh.get(f, 0.0) if f else 0.0 for f in units.fuel_name])
    tech_rows = techs.loc[units.technology_id]
    var_om = tech_rows["variable_om_eur_per_mwh"].to_numpy(float)
    # t CO2 per kWh of output at each step
    unit_co2 = (
        units.fuel * fuel_co2[:, None]
        + units.electricity * prepared.grid_co2_kg_per_mwh[None, :]
        + units.network * prepared.network_co2_kg_per_mwh[None, :]
    ) / KWH_PER_MWH / KG_PER_T
    unit_energy_eur = (
        units.fuel * fuel_price[:, None]
        + units.electricity * prepared.electricity_eur_per_mwh[None, :]
        + units.network * prepared.network_eur_per_mwh[None, :]
    ) / KWH_PER_MWH
    co2_price = prices.co2_eur_per_t
    out_cols = cols["out"]
    money[out_cols] = w[None, :] * (unit_energy_eur + var_om[:, None] / KWH_PER_MWH + co2_price * unit_co2)
    emis[out_cols] = w[None, :] * unit_co2
    if len(lifted):
        extra = extra_elec[lifted]
        hw_co2 = extra * prepared.grid_co2_kg_per_mwh[None, :] / KWH_PER_MWH / KG_PER_T
        money[cols["hot_water"]] = w[None, :] * (extra * prepared.electricity_eur_per_mwh[None, :] / KWH_PER_MWH
                                                 + co2_price * hw_co2)
        emis[cols["hot_water"]] = w[None, :] * hw_co2
    annuity = np.array([prepared.annuity[t] for t in units.technology_id])
    net_inv = np.array([prices.investment_eur_per_kw[t] for t in units.technology_id])
    gross_inv = np.array([prices.gross_investment_eur_per_kw[t] for t in units.technology_id])
    fom = tech_rows["fixed_om_pct_per_a"].to_numpy(float) / 100.0
    money[cols["new"]] = annuity * net_inv + fom * gross_inv
    constant_fom = fom * gross_inv * units.existing_kw
    if n_s:
        st = techs.loc[stores.technology_id]
        s_ann = np.array([prepared.annuity[t] for t in stores.technology_id])
        s_net = np.array([prices.investment_eur_per_kw[t] for t in stores.technology_id])
        s_gross = np.array([prices.gross_investment_eur_per_kw[t] for t in stores.technology_id])
        s_fom = st["fixed_om_pct_per_a"].to_numpy(float) / 100.0
        money[cols["store_new"]] = s_ann * s_net + s_fom * s_gross
        money[cols["discharge"]] = w[None, :] * st["variable_om_eur_per_mwh"].to_numpy(float)[:, None] / KWH_PER_MWH
        constant_fom = np.concatenate([constant_fom, s_fom * s_gross * stores.existing_kwh])
    voll = settings.value_of_unserved_heat_eur_per_mwh / KWH_PER_MWH
    money[cols["unserved_heat"]] = w[None, :] * voll
    money[cols["unserved_cooling"]] = w[None, :] * voll
    # a negligible cost on store charging removes simultaneous charge and discharge without changing the optimum
    money[cols["charge"]] += w[None, :] * 1e-6

    if co2_cap_t_per_a is not None:
        nz = np.flatnonzero(emis)
        rows["co2_cap"] = lp.add_rows_coo(
            "co2_cap", 1, np.zeros(len(nz)), nz, emis[nz], upper=np.array([float(co2_cap_t_per_a)])
        )

    lp.set_objective(money)
    model = DistrictModel(prepared, districts, lp, units, stores, cols, rows, money, emis, constant_fom)
    model.build_s = time.perf_counter() - started
    return model


CO2_STAGE_RELATIVE_SLACK = 1e-7
"""The second CO2 stage holds emissions at most this share above the first stage's optimum ..."""
CO2_STAGE_ABSOLUTE_SLACK_T = 1e-4
"""... plus this many tonnes (so that HiGHS' feasibility tolerance cannot make the second stage infeasible)."""
UNSERVED_STAGE_ABSOLUTE_SLACK_MWH = 1e-3
"""Unserved heat in the second CO2 stage: at most 1e-7 relative plus this many MWh above the first stage's."""
ABATEMENT_STEP_SHARE = 1e-3
"""The abatement cost of the last tonnes is measured by relaxing the CO2 optimum by this share of it ..."""
ABATEMENT_STEP_MIN_T = 1.0
"""... and at least by this many tonnes [t/a]."""


def co2_stage_objective(model: DistrictModel) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """The first stage of the CO2 objective: emissions with unserved heat and cooling counted at
    :data:`UNSERVED_CO2_EQUIVALENT_T_PER_MWH`; returns (objective, unserved columns, their weights [h])."""
    w = model.prepared.grid.weight_h
    first = model.emissions.copy()
    unserved_cols = np.concatenate([model.cols["unserved_heat"].ravel(), model.cols["unserved_cooling"].ravel()])
    penalty = UNSERVED_CO2_EQUIVALENT_T_PER_MWH / KWH_PER_MWH
    unserved_weight = np.concatenate(
        [np.broadcast_to(w, model.cols["unserved_heat"].shape).ravel(),
         np.broadcast_to(w, model.cols["unserved_cooling"].shape).ravel()]
    )
    first[unserved_cols] += unserved_weight * penalty
    return first, unserved_cols, unserved_weight


def _staged_co2(model: DistrictModel, time_limit_s, cancel, cost_limit_eur=None, solver: str = DIRECT,
                start_basis=None) -> LpSolution:
    """Least CO2 (unserved heat weighted by :data:`UNSERVED_CO2_EQUIVALENT_T_PER_MWH`), then least cost at it.

    ``start_basis`` (column statuses, row statuses of this LP; HiGHS directly only) starts the first stage there
    instead of cold, e.g. from the least-cost optimum of the same LP (a study that has solved it already).

    ``cost_limit_eur`` (the LP's cost objective, constant fixed O&M left out) bounds the cost in both stages.
    The result carries in ``info`` the CO2 optimum [t/a] and the cost saved by allowing
    ``max(ABATEMENT_STEP_MIN_T, ABATEMENT_STEP_SHARE * optimum)`` more tonnes: their quotient is the abatement
    cost of the last tonnes [EUR/t].
    """
    lp = model.lp
    if cost_limit_eur is not None:
        nz = np.flatnonzero(model.money)
        lp.add_rows_coo("cost_limit", 1, np.zeros(len(nz)), nz, model.money[nz], upper=np.array([cost_limit_eur]))
    first, unserved_cols, unserved_weight = co2_stage_objective(model)
    lp.set_objective(first)
    # with HiGHS directly the three solves share one model: the second starts from the first's optimum (a new
    # objective and two rows it already meets), the third from the second's (one bound relaxed)
    session = HighsSession(lp, time_limit_s, cancel=cancel) if resolve_solver(solver) == DIRECT else None
    if session is not None and start_basis is not None:
        session.set_basis(start_basis)

    def solve_stage() -> LpSolution:
        return session.solve() if session is not None else solve_lp(lp, solver, time_limit_s=time_limit_s,
                                                                    cancel=cancel)

    stage1 = solve_stage()
    if stage1.status != "optimal":
        return stage1
    x = stage1.x
    co2_opt = float(model.emissions @ x)
    unserved_opt = float(unserved_weight @ x[unserved_cols])
    nz = np.flatnonzero(model.emissions)
    co2_bound = co2_opt * (1 + CO2_STAGE_RELATIVE_SLACK) + CO2_STAGE_ABSOLUTE_SLACK_T
    lp.add_rows_coo("co2_optimum", 1, np.zeros(len(nz)), nz, model.emissions[nz], upper=np.array([co2_bound]))
    lp.add_rows_coo("unserved_optimum", 1, np.zeros(len(unserved_cols)), unserved_cols, unserved_weight,
                    upper=np.array([unserved_opt * (1 + CO2_STAGE_RELATIVE_SLACK) + UNSERVED_STAGE_ABSOLUTE_SLACK_MWH]))
    lp.set_objective(model.money)
    stage2 = solve_stage()
    stage2.solve_s += stage1.solve_s
    if stage2.status != "optimal":
        return stage2
    co2_at = float(model.emissions @ stage2.x)
    step = max(ABATEMENT_STEP_MIN_T, ABATEMENT_STEP_SHARE * co2_at)
    lp.set_row_upper("co2_optimum", co2_bound + step)
    relaxed = solve_stage()
    lp.set_row_upper("co2_optimum", co2_bound)
    stage2.solve_s += relaxed.solve_s
    stage2.info = {"co2_optimum_t_per_a": co2_at, "abatement_step_t_per_a": 0.0, "abatement_saving_eur_per_a": 0.0}
    if relaxed.status == "optimal":
        # the tonnes the relaxed plan actually adds (the full step where the cost falls; less where it is flat)
        stage2.info["abatement_step_t_per_a"] = max(float(model.emissions @ relaxed.x) - co2_at, 0.0) or step
        stage2.info["abatement_saving_eur_per_a"] = max(float(model.money @ stage2.x - model.money @ relaxed.x), 0.0)
    return stage2


@dataclass
class CapacityColumns:
    """The new-capacity columns of a built model and what one unit of each costs.

    Units first (kW), then stores (kWh), in the order of ``model.units`` and ``model.stores``. For every column
    ``model.money[cols] == annuity * investment_eur + fixed_om_eur_per_a``.
    """

    cols: np.ndarray
    store: np.ndarray  # bool
    technology_id: list
    investment_eur: np.ndarray  # overnight, net of subsidies, per kW (kWh for stores)
    annuity: np.ndarray  # 1/a
    fixed_om_eur_per_a: np.ndarray  # per kW (kWh) and year
    existing: np.ndarray  # kW (kWh)
    max_new: np.ndarray


def capacity_columns(model: DistrictModel) -> CapacityColumns:
    """Read the new-capacity columns of ``model`` and their cost parts (for multi-period models)."""
    prepared, units, stores = model.prepared, model.units, model.stores
    prices = prepared.prices
    techs = prepared.scenario.technologies.set_index("technology_id")
    tech_ids = list(units.technology_id) + list(stores.technology_id)
    fom = techs.loc[tech_ids, "fixed_om_pct_per_a"].to_numpy(float) / 100.0 if tech_ids else np.zeros(0)
    gross = np.array([prices.gross_investment_eur_per_kw[t] for t in tech_ids], float)
    return CapacityColumns(
        cols=np.concatenate([model.cols["new"], model.cols["store_new"]]).astype(int),
        store=np.r_[np.zeros(len(units.technology_id), bool), np.ones(len(stores.technology_id), bool)],
        technology_id=tech_ids,
        investment_eur=np.array([prices.investment_eur_per_kw[t] for t in tech_ids], float),
        annuity=np.array([prepared.annuity[t] for t in tech_ids], float),
        fixed_om_eur_per_a=fom * gross,
        existing=np.r_[units.existing_kw, stores.existing_kwh],
        max_new=np.r_[units.max_new_kw, stores.max_new_kwh],
    )


def solve_model(model: DistrictModel, objective: str = "cost", time_limit_s=None, cancel=None,
                solver: str = DIRECT, co2_within_cost_pct: float = 0.0, start_basis=None,
                fixed_start=None) -> LpSolution:
    """Solve for least cost, or for least CO2 and then least cost at that CO2 (lexicographic).

    ``solver`` names the solver (:mod:`engine.model.solvers`; HiGHS directly by default). With
    ``objective="co2"`` and ``co2_within_cost_pct > 0`` the CO2 is the least reachable at a cost no more than
    that many percent above the least cost of this LP (the cost optimum is solved first). ``start_basis``
    starts the first CO2 stage from a basis of this LP (see :func:`_staged_co2`; ignored for the cost objective
    and with ``co2_within_cost_pct``). ``fixed_start`` (cost objective, HiGHS): columns and values to start
    from (:func:`engine.model.solve.plan_start`).
    """
    lp = model.lp
    if objective == "cost":
        lp.set_objective(model.money)
        return solve_lp(lp, solver, time_limit_s=time_limit_s, cancel=cancel, fixed_start=fixed_start)
    if objective != "co2":
        raise ValueError(f"objective must be 'cost' or 'co2', got {objective!r}")
    limit = None
    extra_s = 0.0
    if co2_within_cost_pct and co2_within_cost_pct > 0:
        lp.set_objective(model.money)
        cheapest = solve_lp(lp, solver, time_limit_s=time_limit_s, cancel=cancel)
        if cheapest.status != "optimal":
            return cheapest
        constant = float(model.constant_fixed_om.sum())
        least = float(model.money @ cheapest.x) + constant
        limit = least * (1 + co2_within_cost_pct / 100.0) - constant + 1e-6 * abs(least)
        extra_s = cheapest.solve_s
    solution = _staged_co2(model, time_limit_s, cancel, limit, solver,
                           start_basis if limit is None else None)
    solution.solve_s += extra_s
    if limit is not None and solution.status == "optimal":
        solution.info["cost_limit_eur_per_a"] = limit + float(model.constant_fixed_om.sum())
    return solution
