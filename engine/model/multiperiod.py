"""Several milestone years in one linear program: the district LP of each year, stacked, with new build coupling them.

Each milestone year ``k`` keeps its own district LP (:func:`engine.model.formulation.build_model` on that year's
prepared run), placed block-diagonally in one :class:`~engine.model.lp.LinearProgram`. The year's ``new`` column of a
unit now means *capacity above the existing plant still standing in that year*; coupling columns ``build[unit, b]``
are the capacity built in milestone year ``b``, and one equality row per unit and year ties them together::

    new[u, k] = sum over b <= k with y_k < y_b + lifetime  build[u, b]   (+ capacity carried from outside the LP)

Costs (all discounted to the base year ``y0`` at the scenario's discount rate ``r``, every payment at the end of
its year, with ``S(m) = sum_{j=1..m} (1+r)^-j = (1 - (1+r)^-m) / r`` (``m`` at ``r = 0``)):

* Year ``k``'s operating cost and fixed O&M [EUR/a] are weighted by ``D_k = (1+r)^-(y_k - y0) S(y_{k+1} - y_k)``,
  the present value of the years it stands for (the last year stands for ``last_period_a`` years, ending the
  horizon at ``H``).
* A build in year ``b`` of overnight cost ``I`` [EUR/kW] and lifetime ``n`` is charged once:
  ``I (1+r)^-(y_b - y0) S(min(n, H - y_b)) / S(n)``. This is the investment minus its *remaining value* at the
  horizon's end, with the remaining value taken annuity-based: the present value of the annuities
  ``a I = I / S(n)`` the plant still owes after ``H`` (rather than straight-line depreciation). Equivalently the
  charge is the plant's annuity over the years of the horizon it lives through. Crediting the remaining value
  removes the end effect by which a model without it shuns investments late in the horizon (Grinold 1983,
  "Model building techniques for the correction of end effects in multistage convex programs", Operations
  Research 31(3), 407-431; annuity and residual value as in Short, Packey & Holt 1995, "A manual for the economic
  evaluation of energy efficiency and renewable energy technologies", NREL/TP-462-5173; both cited from memory).
  With annuity-based salvage a one-year pathway is the single-year model scaled by ``D_0``, so both have the same
  optimum.

A plant counts in every milestone year that starts before its lifetime ends. Existing plant retires as the year's
prepared run says (the study sets existing capacity to zero from its retirement year on).
"""

from __future__ import annotations

import time
from dataclasses import dataclass, field

import numpy as np

from engine.model.formulation import CapacityColumns, DistrictModel, build_model, capacity_columns
from engine.model.lp import INF, LinearProgram, LpSolution
from engine.model.prepare import PreparedRun


def discount_sum(rate: float, years: float) -> float:
    """``S(m)``: present value of 1 paid at the end of each of ``m`` years [a] (``m`` need not be whole)."""
    if years <= 0:
        return 0.0
    if abs(rate) < 1e-12:
        return float(years)
    return float((1.0 - (1.0 + rate) ** (-years)) / rate)


def year_weights(years: list[int], base_year: int, horizon_end: int, rate: float) -> np.ndarray:
    """``D_k``: present value at the base year of one EUR/a over the calendar years milestone ``k`` stands for."""
    ends = list(years[1:]) + [horizon_end]
    return np.array([(1.0 + rate) ** (-(y - base_year)) * discount_sum(rate, e - y) for y, e in zip(years, ends)])


def build_charge(investment_eur, lifetime_a, build_year: int, base_year: int, horizon_end: int, rate: float):
    """Present value of a build net of its annuity-based remaining value at ``horizon_end`` [EUR per kW]."""
    lifetime = np.asarray(lifetime_a, float)
    inside = np.minimum(lifetime, horizon_end - build_year)
    share = np.array([discount_sum(rate, m) / discount_sum(rate, n) for m, n in zip(np.atleast_1d(inside),
                                                                                     np.atleast_1d(lifetime))])
    return np.asarray(investment_eur, float) * (1.0 + rate) ** (-(build_year - base_year)) * share.reshape(
        np.shape(inside))


def item_keys(model: DistrictModel) -> list[tuple]:
    """(district_id, technology_id, well_id) of every capacity column (units, then stores)."""
    prepared = model.prepared
    ids = prepared.district_ids
    keys = []
    for i, t, j in zip(model.units.district, model.units.technology_id, model.units.well):
        keys.append((ids[i], t, prepared.well_ids[j] if j >= 0 else ""))
    for i, t in zip(model.stores.district, model.stores.technology_id):
        keys.append((ids[i], t, ""))
    return keys


@dataclass
class YearBlock:
    year: int
    model: DistrictModel
    capacity: CapacityColumns
    keys: list
    col0: int
    row0: int
    weight: float  # D_k
    carried: np.ndarray  # capacity built outside this LP still standing in this year, per capacity column


@dataclass
class MultiPeriodModel:
    lp: LinearProgram
    blocks: list[YearBlock]
    base_year: int
    horizon_end: int
    rate: float
    build_col: dict = field(default_factory=dict)  # (key, block index) -> column
    build_cost: dict = field(default_factory=dict)  # (key, block index) -> EUR per kW (the objective coefficient)
    lifetime: dict = field(default_factory=dict)  # technology_id -> a
    coupling_row: dict = field(default_factory=dict)  # (key, block index) -> row of its capacity coupling
    build_s: float = 0.0

    @property
    def constant_eur(self) -> float:
        """Present value of the fixed O&M of existing plant (in the costs but not a decision)."""
        return float(sum(b.weight * b.model.constant_fixed_om.sum() for b in self.blocks))


def append_program(target: LinearProgram, source: LinearProgram, name: str) -> tuple[int, int]:
    """Copy ``source`` into ``target`` as a new block of columns and rows; returns (column, row) offsets."""
    col0, row0 = target.n_cols, target.n_rows
    target.add_variables(f"{name}:columns", source.n_cols, source.col_lower, source.col_upper)
    a = source.matrix().tocoo()
    target.add_rows_coo(f"{name}:rows", source.n_rows, a.row, a.col + col0, a.data,
                        lower=source.row_lower, upper=source.row_upper)
    return col0, row0


def build_multiperiod(
    prepared_years: list[PreparedRun],
    years: list[int],
    base_year: int,
    horizon_end: int,
    districts=None,
    carried: list[dict] | None = None,
) -> MultiPeriodModel:
    """Stack the district LPs of ``years`` (one prepared run each) into one LP with build columns.

    ``carried`` gives, per year, capacity built before this LP's first year that still stands [kW by key] (the
    myopic mode passes what earlier years built). City-wide limits (CO2 cap, network plant limit) are those of each
    year's settings and apply within that year.
    """
    started = time.perf_counter()
    rate = float(prepared_years[0].settings.discount_rate)
    weights = year_weights(years, base_year, horizon_end, rate)
    lp = LinearProgram()
    blocks = []
    for k, (prepared, year) in enumerate(zip(prepared_years, years)):
        model = build_model(prepared, districts)
        col0, row0 = append_program(lp, model.lp, f"year{year}")
        keys = item_keys(model)
        given = (carried[k] if carried else {}) or {}
        blocks.append(YearBlock(year, model, capacity_columns(model), keys, col0, row0, float(weights[k]),
                                np.array([float(given.get(key, 0.0)) for key in keys])))
    techs = prepared_years[0].scenario.technologies
    lifetime = dict(zip(techs["technology_id"], techs["lifetime_a"].astype(float)))
    mp = MultiPeriodModel(lp, blocks, base_year, horizon_end, rate, lifetime=lifetime)

    # build columns: one per capacity column and year
    for b, block in enumerate(blocks):
        cap = block.capacity
        cols = lp.add_variables(f"build{block.year}", len(block.keys), 0.0, cap.max_new)
        life = np.array([lifetime[t] for t in cap.technology_id])
        charge = build_charge(cap.investment_eur, life, block.year, base_year, horizon_end, rate) if len(life) else []
        for j, key in enumerate(block.keys):
            mp.build_col[(key, b)] = int(cols[j])
            mp.build_cost[(key, b)] = float(charge[j])

    # coupling rows: capacity above existing in year k = builds still within their lifetime (+ carried)
    r, c, v, rhs = [], [], [], []
    for k, block in enumerate(blocks):
        for j, key in enumerate(block.keys):
            row = len(rhs)
            mp.coupling_row[(key, k)] = lp.n_rows + row
            r.append(row), c.append(block.col0 + int(block.capacity.cols[j])), v.append(1.0)
            for b in range(k + 1):
                col = mp.build_col.get((key, b))
                if col is not None and block.year < blocks[b].year + lifetime[key[1]]:
                    r.append(row), c.append(col), v.append(-1.0)
            rhs.append(block.carried[j])
    if rhs:
        lp.add_rows_coo("capacity_coupling", len(rhs), r, c, v, lower=np.array(rhs), upper=np.array(rhs))

    # objective: weighted yearly costs with the annuity part of new capacity replaced by the build charges
    cost = np.zeros(lp.n_cols)
    for block in blocks:
        money = block.model.money.copy()
        money[block.capacity.cols] = block.capacity.fixed_om_eur_per_a
        cost[block.col0:block.col0 + len(money)] = block.weight * money
    for (key, b), col in mp.build_col.items():
        cost[col] = mp.build_cost[(key, b)]
    lp.set_objective(cost)
    mp.build_s = time.perf_counter() - started
    return mp


def year_solution(mp: MultiPeriodModel, k: int, solution: LpSolution) -> LpSolution:
    """The part of a multi-period solution that belongs to year ``k``, duals rescaled to EUR per year."""
    block = mp.blocks[k]
    n_c, n_r = block.model.lp.n_cols, block.model.lp.n_rows
    dual = None
    if solution.row_dual is not None:
        dual = solution.row_dual[block.row0:block.row0 + n_r] / max(block.weight, 1e-300)
    x = solution.x[block.col0:block.col0 + n_c]
    return LpSolution(solution.status, solution.message, float(block.model.money @ x), x, dual, solution.solve_s)


def builds(mp: MultiPeriodModel, x: np.ndarray) -> dict:
    """Capacity built per (key, block index) [kW or kWh], small negatives from the solver cut to zero."""
    return {kb: max(float(x[col]), 0.0) for kb, col in mp.build_col.items()}


__all__ = ["MultiPeriodModel", "YearBlock", "append_program", "build_charge", "build_multiperiod", "builds",
           "discount_sum", "INF", "year_solution", "year_weights"]
