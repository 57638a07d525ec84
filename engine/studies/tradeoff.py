"""The trade-off between annual cost and CO2, and the CO2 price that meets a city-wide cap.

:func:`tradeoff_curve` traces the cost-CO2 frontier: its two end points are the least-cost run and the least-CO2
run, and every interior point is the least-cost plan with the city's CO2 held at most at its own level, placed
where the curve bends most (see :func:`tradeoff_curve_runs`). Without a city-wide row the points are decomposed
solves at a CO2 price (a plan cheapest at a CO2 price is cheapest under a cap at its own CO2); with a network
plant limit they are solved as one city LP with the CO2 bounded (epsilon-constraint method).

:func:`co2_price_for_cap` reaches the same capped optimum the other way round: it searches the CO2 price at
which the districts, each solved on its own, together stay within the cap (Lagrangian relaxation of the cap).

Both are screening tools for comparing supply strategies; an investment decision needs a detailed study.
"""

from __future__ import annotations

import dataclasses
import math
from dataclasses import dataclass, field

import numpy as np
import pandas as pd

from engine.scenario.inputs import CostCase, Scenario, default_cost_case
from engine.model.results import RunResult
from engine.model.live import LiveCityModel, LiveDistricts, PricedDistricts
from engine.model.solve import run_settings, solve_scenario
from engine.model.solvers import DIRECT, resolve_solver
from engine.progress import Cancel, Progress, no_progress

TRADEOFF_COLUMNS = (
    "point", "kind", "co2_bound_t_per_a", "co2_t_per_a", "total_cost_eur_per_a", "unserved_heat_mwh_per_a",
    "abatement_cost_eur_per_t", "co2_price_eur_per_t", "status",
)
"""Leading columns of the trade-off table; ``heat_<technology>_mwh_per_a`` columns follow."""


def _default_case(scenario: Scenario, cost_case: str | None) -> str:
    if cost_case is not None:
        if cost_case not in scenario.cost_cases:
            known = ", ".join(sorted(scenario.cost_cases))
            raise ValueError(f"cost_case '{cost_case}' is not a cost case of the scenario (known: {known})")
        return cost_case
    return default_cost_case(scenario.cost_cases)


def _row(point: int, kind: str, bound: float, result: RunResult) -> dict:
    row = {
        "point": point,
        "kind": kind,
        "co2_bound_t_per_a": bound,
        "co2_t_per_a": result.co2_t_per_a if result.solved else math.nan,
        "total_cost_eur_per_a": result.total_cost_eur_per_a if result.solved else math.nan,
        "unserved_heat_mwh_per_a": result.unserved_heat_mwh_per_a if result.solved else math.nan,
        "abatement_cost_eur_per_t": math.nan,
        "co2_price_eur_per_t": math.nan,
        "status": result.status,
    }
    if result.solved:
        for tech, mwh in result.heat_by_technology_mwh_per_a().items():
            row[f"heat_{tech}_mwh_per_a"] = mwh
    return row


def tradeoff_curve_runs(
    scenario: Scenario,
    cost_case: str | None = None,
    n_points: int = 7,
    typical_days: int | None = None,
    progress: Progress | None = None,
    cancel: Cancel | None = None,
    solver: str = DIRECT,
    workers: int | None = None,
) -> tuple[pd.DataFrame, list[RunResult]]:
    """The cost-CO2 trade-off curve and the run behind each of its points.

    Point 0 is the least-cost run (no CO2 bound); the last point is the least-CO2 run (objective ``"co2"``:
    least emissions, then least cost at those emissions); points in between minimise the cost subject to
    ``CO2 <= eps_k``. Each new point splits the segment of the curve found so far that is longest with CO2
    and cost scaled to their spans: the points gather where the curve bends (where the abatement cost changes,
    as it does at the CO2 prices where one supply gives way to another), and a steep last stretch up to the
    least-CO2 end gets points of its own instead of one long line. The table lists the points by falling CO2.
    Without a city-wide row (no network plant limit) and with HiGHS directly, the points are found by
    :func:`_priced_curve`: each is the least-cost plan at a CO2 price (``co2_price_eur_per_t``), and so the
    epsilon-constraint optimum at its own CO2 (its ``co2_bound_t_per_a``); otherwise each bound halves the
    chosen segment in CO2.

    Parameters
    ----------
    scenario : Scenario
        The city.
    cost_case : str, optional
        Cost case of every point (default: ``reference``, else the first).
    n_points : int
        Number of points, >= 2 (2 gives just the two end points).
    typical_days : int, optional
        Time resolution (None keeps the scenario's; 0 is the full year).
    progress : callable, optional
        ``progress(share, text)`` after each point.
    cancel : callable, optional
        Checked between points; when it returns True the curve stops and the points so far are returned.
    solver : str
        Solver of every point (:mod:`engine.model.solvers`; HiGHS directly by default).
    workers : int, optional
        Worker processes of the priced route (None: chosen from the size of the curve's solves; 1: none).

    Returns
    -------
    table : pandas.DataFrame
        One row per point with the columns of :data:`TRADEOFF_COLUMNS` and ``heat_<technology>_mwh_per_a``.
        ``co2_bound_t_per_a`` is NaN for the least-cost point and the reached minimum for the least-CO2 point.
        ``abatement_cost_eur_per_t`` is the extra cost per tonne avoided relative to the previous point. [€/t]
    results : list of RunResult
        The run of each point, in the order of the table.

    Raises
    ------
    ValueError
        If ``n_points`` < 2 or ``cost_case`` is unknown.

    Notes
    -----
    See :func:`_priced_curve` for the decomposed route (the default). With a network plant limit the districts
    share a constraint, so every interior point is solved as one linear
    program for the whole city. With HiGHS directly, the least-cost point and the interior points are then solves
    of that one city LP held in HiGHS (:class:`engine.model.live.LiveCityModel`): the least-cost point district
    by district (its solution and basis stacked into the city LP), each interior point from the basis of the
    point before with only the CO2 bound changed; the least-CO2 point is solved by
    :func:`engine.model.solve.solve_scenario`, district by district where the scenario allows, its two stages in
    one HiGHS model. Cost can only rise as the bound tightens: each tighter bound shrinks the feasible set of the same LP.

    References
    ----------
    .. [1] Haimes, Y. Y., Lasdon, L. S., Wismer, D. A. (1971). On a bicriterion formulation of the problems of
       integrated system identification and system optimization. IEEE Transactions on Systems, Man, and
       Cybernetics, SMC-1(3), 296-297.
    """
    if int(n_points) != n_points or n_points < 2:
        raise ValueError(f"n_points must be a whole number >= 2, got {n_points!r}")
    n_points = int(n_points)
    case = _default_case(scenario, cost_case)
    report = progress or no_progress
    stopped = cancel or (lambda: False)
    settings_cost = run_settings(scenario, "cost", 0.0, typical_days)
    settings_co2 = run_settings(scenario, "co2", 0.0, typical_days)

    if resolve_solver(solver) == DIRECT and settings_cost.network_plant_limit_kw is None:
        return _priced_curve(scenario, case, settings_cost, settings_co2, n_points, report, stopped, workers)

    # with HiGHS directly and a network plant limit (a city-wide row), the least-cost point and the bounded
    # points are re-solves of one city LP held in HiGHS (engine.model.live): only the CO2 row's bound changes
    # from point to point and each solve starts from the basis of the one before. The least-CO2 point is solved
    # by solve_scenario.
    live = LiveCityModel(scenario, case, settings_cost) if resolve_solver(solver) == DIRECT else None

    def solve_point(objective: str, bound: float | None) -> RunResult:
        if objective == "co2":
            return solve_scenario(scenario, case, settings=settings_co2, solver=solver)
        if live is not None:
            return live.solve("cost", bound)
        settings = run_settings(scenario, "cost", bound or 0.0, typical_days)
        return solve_scenario(scenario, case, settings=settings, solver=solver)

    report(0.0, "Least-cost run")
    cheapest = solve_point("cost", None)
    rows = [_row(0, "cost_optimal", math.nan, cheapest)]
    results = [cheapest]
    if not cheapest.solved or stopped():
        return _finish(rows), results
    report(1.0 / n_points, "Least-CO2 run")
    cleanest = solve_point("co2", None)
    if not cleanest.solved:
        rows.append(_row(n_points - 1, "co2_optimal", math.nan, cleanest))
        return _finish(rows), results + [cleanest]
    co2_high, co2_low = cheapest.co2_t_per_a, cleanest.co2_t_per_a
    span = co2_high - co2_low
    interior = n_points - 2 if span > 1e-9 * max(1.0, abs(co2_high)) else 0
    # (co2, cost) of the points solved so far, the two ends first; each new bound bisects (in CO2) the segment
    # that is longest once CO2 and cost are scaled to the curve's extent, so points gather where the curve
    # bends, i.e. where the abatement cost changes, instead of evenly in CO2
    known = [(co2_high, cheapest.total_cost_eur_per_a), (co2_low, cleanest.total_cost_eur_per_a)]
    capped_rows: list[tuple[float, dict, RunResult]] = []
    for k in range(1, interior + 1):
        if stopped():
            break
        bound = _next_bound(known)
        report((k + 1) / n_points, f"Least cost with CO2 <= {bound:,.0f} t/a ({k} of {interior})")
        # solve_scenario treats a cap of 0 as "no cap"; a bound that small is the least-CO2 point anyway
        capped = solve_point("cost", max(float(bound), 1e-6))
        capped_rows.append((float(bound), _row(k, "co2_bounded", float(bound), capped), capped))
        if capped.solved:
            known.append((capped.co2_t_per_a, capped.total_cost_eur_per_a))
        else:
            known.append((float(bound), math.nan))  # no further bisection next to a failed point
    for _, row, capped in sorted(capped_rows, key=lambda item: -item[0]):
        rows.append(row)
        results.append(capped)
    rows.append(_row(len(rows), "co2_optimal", co2_low, cleanest))
    results.append(cleanest)
    report(1.0, "Trade-off curve done")
    return _finish(rows), results


CORNER_TOLERANCE = 1e-7
"""A priced solve finds no new corner of the frontier when its surcharged cost is within this share of the
segment's (the two ends cost the same there)."""


def _case_co2_price(scenario: Scenario, case: str) -> float:
    base = scenario.cost_cases[case]
    return float(scenario.prices.co2_eur_per_t if base.co2_eur_per_t is None else base.co2_eur_per_t)


def _priced_curve(scenario, case, settings_cost, settings_co2, n_points, report, stopped, workers=None):
    """The trade-off curve from decomposed solves at CO2 surcharges (the non-inferior set estimation method).

    Without a city-wide row every district LP is held in HiGHS (:class:`engine.model.live.PricedDistricts`)
    and each point is one decomposed solve at a surcharge ``lam`` on every tonne of CO2-equivalent: the
    least-cost plan at that CO2 price, and so (weighted-sum theorem) the least-cost plan with CO2 held at its
    own emissions. The surcharge of each new point is the slope of the segment it is to split (the price at
    which the segment's two ends cost the same), taken on the segment that is longest with CO2 and cost scaled
    to their spans: the solve then either finds a new corner of the frontier below the segment, or shows that
    the frontier is straight there (no plan is cheaper at that price; the segment is not split again). Every
    solve keeps the plan of a district that is the same at both ends of the segment (it is optimal at every
    price in between) and starts every other district from the basis of the end nearer in price. A curve whose
    solves together pass :data:`engine.model.solve.PARALLEL_WORK` holds its districts in one worker process per
    core for all its points (``workers`` None; 1 keeps them in this process).

    Where the frontier has fewer corners than points asked for, the rest are bounded points of the city LP
    (:class:`engine.model.live.LiveCityModel`) on the longest straight segments. Each interior point is
    recorded as bounded at its own CO2 (``co2_bound_t_per_a``), which a solve from scratch with that cap
    reproduces, with the CO2 price at which it is the least-cost plan (``co2_price_eur_per_t``: the cost case's
    price plus the surcharge).

    References
    ----------
    .. [1] Cohon, J. L., Church, R. L., Sheer, D. P. (1979). Generating multiobjective trade-offs: an algorithm
       for bicriterion problems. Water Resources Research, 15(5), 1001-1010.
    .. [2] Geoffrion, A. M. (1968). Proper efficiency and the theory of vector maximization. Journal of
       Mathematical Analysis and Applications, 22(3), 618-630.
    """
    with PricedDistricts(scenario, case, settings_cost, workers=workers, solves=n_points + 2) as held:
        return _priced_points(held, scenario, case, settings_cost, settings_co2, n_points, report, stopped)


def _priced_points(held, scenario, case, settings_cost, settings_co2, n_points, report, stopped):
    price = _case_co2_price(scenario, case)
    report(0.0, "Least-cost run")
    low_end = held.solve(0.0)
    cheapest = held.result(low_end, settings_cost)
    rows = [_row(0, "cost_optimal", math.nan, cheapest)]
    rows[0]["co2_price_eur_per_t"] = price
    results = [cheapest]
    if not cheapest.solved or stopped():
        return _finish(rows), results
    report(1.0 / n_points, "Least-CO2 run")
    high_end = held.least_co2()
    cleanest = held.result(high_end, settings_co2)
    if not cleanest.solved:
        rows.append(_row(n_points - 1, "co2_optimal", math.nan, cleanest))
        return _finish(rows), results + [cleanest]
    span = low_end.co2_equivalent_t_per_a - high_end.co2_equivalent_t_per_a
    interior = n_points - 2 if span > 1e-9 * max(1.0, abs(low_end.co2_equivalent_t_per_a)) else 0
    # the frontier found so far, by falling CO2-equivalent: (point, run); segments between neighbours are open
    # until a priced solve shows them straight
    found: list[tuple[object, RunResult | None]] = [(low_end, cheapest), (high_end, cleanest)]
    straight: set[tuple[int, int]] = set()
    cost_span = max(abs(high_end.cost_eur_per_a - low_end.cost_eur_per_a), 1e-9)
    made, failed = 0, None
    while made < interior and not stopped():
        chosen, longest = None, -1.0
        for k in range(len(found) - 1):
            a, b = found[k][0], found[k + 1][0]
            if (id(a), id(b)) in straight:
                continue
            length = math.hypot((a.co2_equivalent_t_per_a - b.co2_equivalent_t_per_a) / span,
                                (b.cost_eur_per_a - a.cost_eur_per_a) / cost_span)
            if length > longest:
                chosen, longest = k, length
        if chosen is None:
            break
        a, b = found[chosen][0], found[chosen + 1][0]
        drop = a.co2_equivalent_t_per_a - b.co2_equivalent_t_per_a
        lam = (b.cost_eur_per_a - a.cost_eur_per_a) / drop if drop > 0 else math.nan
        if not (math.isfinite(lam) and lam > 0):
            straight.add((id(a), id(b)))
            continue
        report((made + 2) / n_points, f"Least cost at a CO2 price {price + lam:,.0f} EUR/t "
                                      f"({made + 1} of {interior})")
        point = held.solve(lam, a, b)
        if not point.solved:  # e.g. a time limit: the points found so far stand, this one is reported
            failed = held.result(point, dataclasses.replace(settings_cost, co2_cap_t_per_a=None))
            break
        segment = a.cost_eur_per_a + lam * a.co2_equivalent_t_per_a
        surcharged = point.cost_eur_per_a + lam * point.co2_equivalent_t_per_a
        if surcharged >= segment - CORNER_TOLERANCE * max(abs(segment), 1.0):
            straight.add((id(a), id(b)))
            continue
        found.insert(chosen + 1, (point, None))
        made += 1
    runs = [run if run is not None else held.result(
        point, dataclasses.replace(settings_cost, co2_cap_t_per_a=float(point.co2_t_per_a)))
        for point, run in found]
    prices = [math.nan] + [price + point.surcharge_eur_per_t for point, _ in found[1:-1]] + [math.nan]
    if failed is None and made < interior and not stopped():
        _fill_straight(scenario, case, settings_cost, runs, prices, interior - made, report)
    for k in range(1, len(runs) - 1):
        row = _row(k, "co2_bounded", float(runs[k].settings["co2_cap_t_per_a"]), runs[k])
        row["co2_price_eur_per_t"] = prices[k]
        rows.append(row)
        results.append(runs[k])
    if failed is not None:
        rows.append(_row(len(rows), "co2_bounded", math.nan, failed))
        results.append(failed)
    rows.append(_row(len(rows), "co2_optimal", high_end.co2_t_per_a, cleanest))
    results.append(cleanest)
    report(1.0, "Trade-off curve done")
    return _finish(rows), results


def _fill_straight(scenario, case, settings_cost, runs, prices, missing, report) -> None:
    """Points on the straight stretches of a frontier with fewer corners than points asked for: the city LP
    (:class:`engine.model.live.LiveCityModel`) with the CO2 bounded at the CO2 midpoint of the longest
    stretch (CO2 and cost scaled to their spans), one point at a time, inserted into ``runs`` and ``prices``."""
    live = LiveCityModel(scenario, case, settings_cost)
    for _ in range(missing):
        bound = _next_bound([(r.co2_t_per_a, r.total_cost_eur_per_a) for r in runs])
        report(0.95, f"Least cost with CO2 <= {bound:,.0f} t/a")
        run = live.solve("cost", max(float(bound), 1e-6))
        k = next(i for i, r in enumerate(runs) if r.co2_t_per_a < bound)
        runs.insert(k, run)
        prices.insert(k, math.nan)


def _next_bound(known: list[tuple[float, float]]) -> float:
    """The CO2 bound of the next point: the CO2 midpoint of the longest segment of the curve so far, with CO2
    and cost each scaled by their span (segments next to a failed point, cost NaN, are never split)."""
    points = sorted(known, key=lambda p: -p[0])
    co2 = np.array([p[0] for p in points], float)
    cost = np.array([p[1] for p in points], float)
    co2_span = max(float(co2.max() - co2.min()), 1e-9)
    finite = cost[np.isfinite(cost)]
    cost_span = max(float(finite.max() - finite.min()), 1e-9) if len(finite) else 1.0
    length = np.hypot(np.diff(co2) / co2_span, np.diff(cost) / cost_span)
    length = np.where(np.isfinite(length), length, -1.0)
    k = int(np.argmax(length))
    return float(0.5 * (co2[k] + co2[k + 1]))


def _finish(rows: list[dict]) -> pd.DataFrame:
    table = pd.DataFrame(rows)
    for column in TRADEOFF_COLUMNS:
        if column not in table:
            table[column] = math.nan
    heat = sorted(c for c in table.columns if c.startswith("heat_"))
    table = table[list(TRADEOFF_COLUMNS) + heat]
    table[heat] = table[heat].fillna(0.0)
    cost = table["total_cost_eur_per_a"].to_numpy(float)
    co2 = table["co2_t_per_a"].to_numpy(float)
    with np.errstate(divide="ignore", invalid="ignore"):
        abatement = np.r_[math.nan, (cost[1:] - cost[:-1]) / (co2[:-1] - co2[1:])]
    table["abatement_cost_eur_per_t"] = np.where(np.isfinite(abatement), abatement, math.nan)
    table["point"] = np.arange(len(table))
    return table


def tradeoff_curve(
    scenario: Scenario,
    cost_case: str | None = None,
    n_points: int = 7,
    typical_days: int | None = None,
    progress: Progress | None = None,
    solver: str = DIRECT,
) -> pd.DataFrame:
    """The cost-CO2 trade-off table of :func:`tradeoff_curve_runs` (without the runs)."""
    table, _ = tradeoff_curve_runs(scenario, cost_case, n_points, typical_days, progress, solver=solver)
    return table


def point_scenario(scenario: Scenario, table: pd.DataFrame, point: int) -> Scenario:
    """A copy of ``scenario`` whose run settings reproduce one point of a trade-off table.

    The least-CO2 point becomes objective ``"co2"``; a bounded point becomes objective ``"cost"`` with
    ``co2_cap_t_per_a`` set to its bound; the least-cost point keeps no cap. The copy can be solved, saved
    and shared like any scenario.

    Raises
    ------
    ValueError
        If ``point`` is not a point of ``table``.
    """
    rows = table[table["point"] == point]
    if rows.empty:
        raise ValueError(f"point {point!r} is not in the trade-off table (points 0 to {len(table) - 1})")
    row = rows.iloc[0]
    settings = scenario.settings
    if row["kind"] == "co2_optimal":
        settings = dataclasses.replace(settings, objective="co2", co2_cap_t_per_a=None)
    elif row["kind"] == "co2_bounded":
        settings = dataclasses.replace(settings, objective="cost", co2_cap_t_per_a=float(row["co2_bound_t_per_a"]))
    else:
        settings = dataclasses.replace(settings, objective="cost", co2_cap_t_per_a=None)
    return dataclasses.replace(scenario, settings=settings)


# ============================================================================================ CO2 price for a cap
@dataclass
class CapPrice:
    """The outcome of :func:`co2_price_for_cap`."""

    cap_t_per_a: float
    co2_price_eur_per_t: float
    """CO2 price at which the decomposed solution meets the cap (the case's price plus the surcharge). [€/t]"""
    surcharge_eur_per_t: float
    """Price added to the cost case's own CO2 price (the Lagrange multiplier of the cap). [€/t]"""
    co2_t_per_a: float
    """Emissions of the run at that price, <= the cap. [t/a]"""
    cost_lower_eur_per_a: float
    """Lagrangian lower bound on the capped optimum (costs at the cost case's own prices). [€/a]"""
    cost_upper_eur_per_a: float
    """Cost of a plan that meets the cap (a blend of the two runs that bracket the price). [€/a]"""
    iterations: int
    converged: bool
    result: RunResult | None = None
    """The decomposed run at the price (meets the cap); its costs include the surcharge on CO2."""
    history: list = field(default_factory=list)

    @property
    def cost_estimate_eur_per_a(self) -> float:
        """Midpoint of the bounds on the capped optimum. [€/a]"""
        return 0.5 * (self.cost_lower_eur_per_a + self.cost_upper_eur_per_a)

    @property
    def relative_gap(self) -> float:
        return (self.cost_upper_eur_per_a - self.cost_lower_eur_per_a) / max(abs(self.cost_upper_eur_per_a), 1.0)


def scenario_with_case(scenario: Scenario, case: CostCase) -> Scenario:
    """A shallow copy of ``scenario`` with ``case`` added to its cost cases (the tables are shared, not copied)."""
    cases = dict(scenario.cost_cases)
    cases[case.name] = case
    return dataclasses.replace(scenario, cost_cases=cases)


def co2_price_for_cap(
    scenario: Scenario,
    cap_t_per_a: float,
    cost_case: str | None = None,
    typical_days: int | None = None,
    rel_tol: float = 1e-5,
    max_iterations: int = 40,
    first_step_eur_per_t: float = 100.0,
    max_surcharge_eur_per_t: float = 1e5,
    workers: int | None = None,
    progress: Progress | None = None,
    solver: str = DIRECT,
) -> CapPrice:
    """The CO2 price at which the districts, solved one by one, together emit no more than ``cap_t_per_a``.

    A city-wide cap couples the districts. Pricing it instead decouples them: for a surcharge ``lam >= 0`` on
    every tonne, each district minimises its own cost plus ``lam`` times its emissions, and the city's emissions
    ``E(lam)`` fall as ``lam`` rises. The search first brackets the cap (doubling ``lam`` from
    ``first_step_eur_per_t``) and then narrows the bracket; each step takes the price at which the two bracketing
    plans cost the same (the chord of the dual function), and falls back to bisection of the bracket when that
    price lies too close to an end.

    For every ``lam`` the run gives a lower bound on the capped optimum ``C*`` (LP duality)::

        L(lam) = C(x_lam) + lam * (E(x_lam) - cap) = [cost of x_lam at the surcharged price] - lam * cap <= C*

    where ``C`` is the cost at the cost case's own prices. A blend ``theta x_lo + (1 - theta) x_hi`` of the two
    bracketing plans with ``E = cap`` is feasible for the capped LP, so its cost is an upper bound. For a linear
    program the bounds meet at the right price (no duality gap); the search stops when they are within
    ``rel_tol``.

    Parameters
    ----------
    scenario : Scenario
        The city; a network plant limit (another city-wide constraint) is not allowed here.
    cap_t_per_a : float
        City-wide CO2 cap, > 0. [t/a]
    cost_case : str, optional
        Cost case whose CO2 price the surcharge adds to (default ``reference``).
    typical_days : int, optional
        Time resolution (None keeps the scenario's).
    rel_tol : float
        Relative gap between the bounds at which the search stops. [-]
    max_iterations : int
        Largest number of decomposed solves.
    first_step_eur_per_t, max_surcharge_eur_per_t : float
        First trial surcharge, and the largest one tried before the cap is declared out of reach. [€/t]
    workers : int, optional
        Worker processes for the district solves (see :func:`engine.model.solve.solve_scenario`).
    progress : callable, optional
        ``progress(share, text)`` after each solve.
    solver : str
        Solver of the district LPs (:mod:`engine.model.solvers`; HiGHS directly by default).

    Returns
    -------
    CapPrice
        With ``result`` the run at the found price; ``converged`` is False when the iteration limit was reached.

    Raises
    ------
    ValueError
        If ``cap_t_per_a`` is not > 0, the scenario has a network plant limit, or the cap cannot be met even at
        ``max_surcharge_eur_per_t`` (it lies below the least-CO2 run).
    RuntimeError
        If a district solve fails.

    References
    ----------
    .. [1] Everett, H. (1963). Generalized Lagrange multiplier method for solving problems of optimum
       allocation of resources. Operations Research, 11(3), 399-417.
    .. [2] Geoffrion, A. M. (1974). Lagrangean relaxation for integer programming. Mathematical Programming
       Study 2, 82-114 (duality of the relaxation; for linear programs the bound is exact).
    """
    if not (isinstance(cap_t_per_a, (int, float, np.floating)) and math.isfinite(cap_t_per_a) and cap_t_per_a > 0):
        raise ValueError(f"cap_t_per_a must be a number > 0, got {cap_t_per_a!r}")
    if scenario.settings.network_plant_limit_kw is not None:
        raise ValueError("co2_price_for_cap: the scenario has a network plant limit, which also couples the "
                         "districts; remove it or solve the capped LP in one piece")
    cap = float(cap_t_per_a)
    case_name = _default_case(scenario, cost_case)
    base = scenario.cost_cases[case_name]
    base_price = float(scenario.prices.co2_eur_per_t if base.co2_eur_per_t is None else base.co2_eur_per_t)
    settings = run_settings(scenario, "cost", 0.0, typical_days)
    report = progress or no_progress
    history = []

    # with HiGHS directly, the search re-solves each district's LP from its last basis with only the CO2 cost
    # changed (engine.model.live.LiveDistricts) and reads the two figures it needs from the solution; the run
    # returned is solved once more, from scratch, at the price found
    live = LiveDistricts(scenario, case_name, settings) if resolve_solver(solver) == DIRECT else None

    def full_run(surcharge: float) -> RunResult:
        case = dataclasses.replace(base, name=f"{case_name}+co2_{surcharge:.6g}", co2_eur_per_t=base_price + surcharge)
        result = solve_scenario(scenario_with_case(scenario, case), case.name, settings=settings, decompose=True,
                                workers=workers, solver=solver)
        if not result.solved:
            raise RuntimeError(f"the district solve at a CO2 surcharge of {surcharge:.6g} EUR/t failed: "
                               f"{result.message}")
        return result

    def solve_at(surcharge: float):
        if live is not None:
            result = None
            emissions, own_cost = live.emissions_and_cost(surcharge)
        else:
            result = full_run(surcharge)
            emissions = result.co2_t_per_a
            own_cost = result.total_cost_eur_per_a - surcharge * emissions
        lower = own_cost + surcharge * (emissions - cap)
        history.append({"surcharge_eur_per_t": surcharge, "co2_t_per_a": emissions, "cost_eur_per_a": own_cost,
                        "lower_bound_eur_per_a": lower})
        report(min(0.95, len(history) / max_iterations), f"CO2 surcharge {surcharge:,.2f} EUR/t: "
               f"{emissions:,.0f} t/a against a cap of {cap:,.0f} t/a")
        return result, emissions, own_cost, lower

    lo = (0.0, *solve_at(0.0))  # (surcharge, result, emissions, own cost, lower bound)
    best_lower = lo[4]
    if lo[2] <= cap:
        return CapPrice(cap, base_price, 0.0, lo[2], lo[3], lo[3], 1, True, lo[1] or full_run(0.0), history)
    hi = None
    step = float(first_step_eur_per_t)
    while hi is None:
        if len(history) >= max_iterations or step > max_surcharge_eur_per_t:
            raise ValueError(f"the cap of {cap:,.0f} t/a is not met even at a CO2 surcharge of "
                             f"{min(step, max_surcharge_eur_per_t):,.0f} EUR/t; it may lie below the least-CO2 run")
        trial = (step, *solve_at(step))
        best_lower = max(best_lower, trial[4])
        if trial[2] <= cap:
            hi = trial
        else:
            lo = trial
            step *= 2.0

    def upper_bound() -> float:
        e_lo, e_hi = lo[2], hi[2]
        theta = (cap - e_hi) / (e_lo - e_hi) if e_lo > e_hi else 0.0
        return theta * lo[3] + (1.0 - theta) * hi[3]

    upper = upper_bound()
    converged = (upper - best_lower) <= rel_tol * max(abs(upper), 1.0)
    while not converged and len(history) < max_iterations:
        width = hi[0] - lo[0]
        # price at which the two bracketing plans cost the same
        chord = (hi[3] - lo[3]) / (lo[2] - hi[2]) if lo[2] > hi[2] else math.nan
        if not (math.isfinite(chord) and lo[0] + 0.05 * width <= chord <= hi[0] - 0.05 * width):
            chord = 0.5 * (lo[0] + hi[0])
        trial = (chord, *solve_at(chord))
        best_lower = max(best_lower, trial[4])
        if trial[2] <= cap:
            hi = trial
        else:
            lo = trial
        upper = min(upper, upper_bound())
        converged = (upper - best_lower) <= rel_tol * max(abs(upper), 1.0) or width <= 1e-9 * max(hi[0], 1.0)
    report(1.0, "CO2 price found" if converged else "CO2 price search stopped at its iteration limit")
    return CapPrice(cap, base_price + hi[0], hi[0], hi[2], best_lower, upper, len(history), converged,
                    hi[1] or full_run(hi[0]), history)
