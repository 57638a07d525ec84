"""Supply areas with a graded suitability: one designation per district, and how certain it is.

For every district :func:`designate` decides one supply area (:data:`AREAS`) and a grade from 1 (very likely
suitable) to 4 (very likely unsuitable) from three pieces of evidence the optimisation itself yields:

1. **Win share** ``w``: the share of the cost cases in which the candidate supply wins the district (carries the
   largest share of its heat). The candidate is the supply that wins most cases (ties: the first case's winner).
2. **Levelised-cost margin** ``m`` [EUR/MWh], in the first cost case (the reference): the extra cost per MWh of
   heat demand of the cheapest *other* supply, each supply forced to carry at least ``majority_share`` of the
   district's heat, over the cost with the candidate forced the same way. ``inf`` when no other supply is
   possible in the district.
3. **Near-optimal range** (:mod:`engine.studies.alternatives`, first cost case): the candidate is *firm* when the
   district's network share stays on the candidate's side of ``majority_share`` in every plan within the cost
   slack (heat network: its minimum network share >= majority_share; individual supplies: its maximum
   < majority_share).

The rule (thresholds in :class:`GradeThresholds`, editable in code or in scenario.toml ``[designation]``):

* points from ``w``: 2 if ``w >= win_share_strong``, 1 if ``w >= win_share_weak``, else 0;
* points from ``m``: 2 if ``m >= margin_strong_eur_per_mwh``, 1 if ``m >= margin_weak_eur_per_mwh``, else 0;
* 1 point when the candidate is firm;
* grade 1 with at least ``points_grade_1`` points, grade 2 with at least ``points_grade_2``, grade 3 with at least
  ``points_grade_3``, else grade 4.
* The area is the candidate's (heat network, individual heat pumps, other individual supply) for grades better
  than ``review_from_grade``; from that grade on it is "under review": the evidence does not carry a designation,
  and the grade rates the candidate.

A cost case that flips a district's winner lowers ``w`` and so can only keep or worsen the grade.

Planning practice grades such areas by judgement; this rule is a documented, repeatable starting point for that
judgement, not a substitute for it. Designations are screening-level and remain for the municipality, the network
operator and the local authorities to decide.
"""

from __future__ import annotations

import math
import time
import tomllib
from dataclasses import dataclass, fields
from pathlib import Path

import highspy
import numpy as np
import pandas as pd

from engine.model.formulation import build_model
from engine.model.prepare import prepare_run
from engine.model.solve import run_settings
from engine.model.solvers import DIRECT, resolve_solver, solve_lp
from engine.progress import JobCancelled
from engine.scenario.inputs import Scenario
from engine.scenario.problems import InputError, Problem
from engine.studies.alternatives import DEFAULT_SLACK_PCT, near_optimal_ranges
from engine.studies.sweep import run_sweep, tasks_from_cost_cases

AREAS = ("heat_network", "individual_heat_pumps", "other_individual", "under_review")
KIND_AREA = {
    "network_connection": "heat_network",
    "air_heat_pump": "individual_heat_pumps",
    "groundwater_heat_pump": "individual_heat_pumps",
    "fuel_boiler": "other_individual",
    "electric_boiler": "other_individual",
}
GRADE_NAMES = {1: "very likely suitable", 2: "likely suitable", 3: "likely unsuitable", 4: "very likely unsuitable"}
DESIGNATION_COLUMNS = ("district_id", "supply_area", "grade", "win_share", "lcoh_margin_eur_per_mwh",
                       "network_share_min", "network_share_max")


@dataclass
class GradeThresholds:
    """Thresholds of the grading rule (module docstring); scenario.toml ``[designation]`` may set any of them."""

    win_share_strong: float = 0.8
    win_share_weak: float = 0.6
    margin_strong_eur_per_mwh: float = 10.0
    margin_weak_eur_per_mwh: float = 3.0
    majority_share: float = 0.5
    points_grade_1: int = 4
    points_grade_2: int = 2
    points_grade_3: int = 1
    review_from_grade: int = 3


def thresholds_from_folder(folder) -> GradeThresholds:
    """The ``[designation]`` table of ``folder/scenario.toml`` over the defaults; InputError on bad keys."""
    path = Path(folder) / "scenario.toml"
    try:
        data = tomllib.loads(path.read_text(encoding="utf-8"))
    except (OSError, UnicodeDecodeError, RecursionError, tomllib.TOMLDecodeError):  # the reader reports these
        return GradeThresholds()
    section = data.get("designation")
    if section is None:
        return GradeThresholds()
    known = {f.name: f for f in fields(GradeThresholds)}
    problems, values = [], {}
    for key, value in (section.items() if isinstance(section, dict) else []):
        if key not in known:
            problems.append(Problem("scenario.toml", None, f"designation.{key}",
                                    f"unknown key; known keys in [designation]: {', '.join(known)}"))
        elif isinstance(value, bool) or not isinstance(value, (int, float)) or value < 0:
            problems.append(Problem("scenario.toml", None, f"designation.{key}", f"must be a number >= 0, got {value!r}"))
        else:
            values[key] = int(value) if known[key].type in (int, "int") else float(value)
    if problems:
        raise InputError(problems)
    return GradeThresholds(**values)


@dataclass
class Evidence:
    win_share: float
    margin_eur_per_mwh: float
    firm: bool


def grade_of(evidence: Evidence, thresholds: GradeThresholds) -> tuple[int, int, str]:
    """(grade, points, how the points came about) by the documented rule."""
    t = thresholds
    w, m = evidence.win_share, evidence.margin_eur_per_mwh
    p_w = 2 if w >= t.win_share_strong else (1 if w >= t.win_share_weak else 0)
    p_m = 2 if m >= t.margin_strong_eur_per_mwh else (1 if m >= t.margin_weak_eur_per_mwh else 0)
    p_r = 1 if evidence.firm else 0
    points = p_w + p_m + p_r
    grade = 1 if points >= t.points_grade_1 else 2 if points >= t.points_grade_2 else 3 if points >= t.points_grade_3 \
        else 4
    margin = "no other supply possible" if math.isinf(m) else f"margin {m:,.1f} EUR/MWh"
    text = (f"win share {w:.2f} ({p_w} of 2 points), {margin} ({p_m} of 2), "
            f"{'firm' if evidence.firm else 'not firm'} within the cost slack ({p_r} of 1): {points} point(s), "
            f"grade {grade} ({GRADE_NAMES[grade]})")
    return grade, points, text


def area_shares(supply: pd.DataFrame) -> pd.DataFrame:
    """Heat share of each supply area per district (rows: district_id, columns: areas)."""
    heat = supply[supply["kind"].isin(list(KIND_AREA))].assign(area=lambda f: f["kind"].map(KIND_AREA))
    table = heat.pivot_table(index="district_id", columns="area", values="heat_mwh_per_a", aggfunc="sum").fillna(0.0)
    return table.reindex(columns=list(AREAS[:3]), fill_value=0.0)


def winners(result, majority_share: float) -> pd.Series:
    """The winning area of every district in one solved run ("none" where unserved heat is the largest part)."""
    shares = area_shares(result.tables["supply"])
    districts = result.tables["districts"].set_index("district_id")
    out = {}
    for d in districts.index:
        row = shares.loc[d] if d in shares.index else pd.Series(0.0, index=list(AREAS[:3]))
        out[d] = str(row.idxmax()) if row.max() > districts.loc[d, "unserved_heat_mwh_per_a"] else "none"
    return pd.Series(out)


def _forced_costs_elsewhere(prepared, district: int, majority_share: float, solver: str) -> dict:
    """:func:`forced_costs` with a pulp solver: one LP per area, each from the solver's own start."""
    w = prepared.grid.weight_h
    demand_kwh = float((prepared.heat_demand_kw[district] * w).sum())
    out = {}
    for area in AREAS[:3]:
        model = build_model(prepared, np.array([district]))
        chosen = [u for u, k in enumerate(model.units.kind) if KIND_AREA.get(k) == area]
        if not chosen:
            continue
        cols = model.cols["out"][chosen].ravel()
        vals = np.broadcast_to(w, (len(chosen), len(w))).ravel()
        model.lp.add_rows_coo("area_share", 1, np.zeros(len(cols)), cols, vals,
                              lower=np.array([majority_share * demand_kwh]))
        solution = solve_lp(model.lp, solver)
        if solution.status == "optimal":
            out[area] = float(solution.objective) + float(model.constant_fixed_om.sum())
    return out


def forced_costs(prepared, district: int, majority_share: float, solver: str = DIRECT) -> tuple[dict, float]:
    """Least cost [EUR/a] of the district with each available area carrying at least ``majority_share`` of its
    heat (areas whose forcing is infeasible are left out), and the district's heat demand [MWh/a]."""
    w = prepared.grid.weight_h
    demand_kwh = float((prepared.heat_demand_kw[district] * w).sum())
    if solver != DIRECT:
        return _forced_costs_elsewhere(prepared, district, majority_share, solver), demand_kwh / 1000.0
    model = build_model(prepared, np.array([district]))
    units = model.units
    h = model.lp.to_highs()
    constant = float(model.constant_fixed_om.sum())
    rows = {}
    for area in AREAS[:3]:
        chosen = [u for u, k in enumerate(units.kind) if KIND_AREA.get(k) == area]
        if not chosen:
            continue
        cols = model.cols["out"][chosen].ravel().astype(np.int32)
        vals = np.broadcast_to(w, (len(chosen), len(w))).ravel()
        rows[area] = h.getNumRow()
        h.addRow(-highspy.kHighsInf, highspy.kHighsInf, len(cols), cols, vals.copy())
    out = {}
    for area, row in rows.items():
        h.changeRowBounds(row, majority_share * demand_kwh, highspy.kHighsInf)
        h.run()
        if h.getModelStatus() == highspy.HighsModelStatus.kOptimal:
            out[area] = float(h.getInfo().objective_function_value) + constant
        h.changeRowBounds(row, -highspy.kHighsInf, highspy.kHighsInf)
    return out, demand_kwh / 1000.0


def _check(cancel) -> None:
    if cancel is not None and cancel():
        raise JobCancelled("the designation was cancelled")


@dataclass
class Designation:
    """The designation of every district and the evidence behind it (plain tables for a page or a report)."""

    table: pd.DataFrame
    """The columns of :data:`DESIGNATION_COLUMNS`, then candidate, grade_name, points, wins, explanation."""
    cost_cases: list
    thresholds: GradeThresholds
    ranges: pd.DataFrame
    winners: pd.DataFrame  # district x cost case -> area
    timings_s: dict

    def write(self, out_dir) -> Path:
        out = Path(out_dir)
        out.mkdir(parents=True, exist_ok=True)
        self.table.to_csv(out / "designation.csv", index=False)
        self.ranges.to_csv(out / "near_optimal_ranges.csv", index=False)
        self.winners.to_csv(out / "winners.csv")
        return out


def designate(
    scenario: Scenario,
    cost_cases=None,
    slack_pct: float = DEFAULT_SLACK_PCT,
    typical_days: int | None = None,
    thresholds: GradeThresholds | None = None,
    workers: int | None = None,
    scheduler=None,
    progress=None,
    cancel=None,
    solver: str = DIRECT,
) -> Designation:
    """Designate every district of ``scenario`` (see the module docstring for the rule).

    ``cost_cases``: names (default: all of the scenario's, "reference" first when present). ``cancel()`` is
    checked by the sweep, the alternatives and between the steps; once it returns True a :class:`JobCancelled`
    is raised. ``solver``: HiGHS directly (default), ``"cbc"`` or ``"pulp:NAME"`` for every LP
    (:mod:`engine.model.solvers`; an unknown name raises ``SolverChoiceError`` before anything is solved).
    """
    started = time.perf_counter()
    solver = resolve_solver(solver)
    report = progress or (lambda share, text: None)
    names = list(cost_cases) if cost_cases else list(scenario.cost_cases)
    if "reference" in names:
        names.remove("reference")
        names.insert(0, "reference")
    unknown = [n for n in names if n not in scenario.cost_cases]
    if unknown:
        raise KeyError(f"unknown cost case(s) {', '.join(unknown)} (known: {', '.join(sorted(scenario.cost_cases))})")
    if thresholds is None:
        thresholds = thresholds_from_folder(scenario.source) if scenario.source else GradeThresholds()
    t = thresholds
    report(0.02, f"Solving {len(names)} cost case(s)")
    outcome = run_sweep(scenario, tasks_from_cost_cases(scenario, names), typical_days=typical_days,
                        workers=workers, scheduler=scheduler, keep_results=True, cancel=cancel, solver=solver)
    failed = [(n, r.message) for n, r in zip(names, outcome.results) if not r.solved]
    if failed:
        raise RuntimeError(f"cost case {failed[0][0]} could not be solved: {failed[0][1]}")
    wins = pd.DataFrame({n: winners(r, t.majority_share) for n, r in zip(names, outcome.results)})
    sweep_s = time.perf_counter() - started
    _check(cancel)
    report(0.4, "Near-optimal alternatives")
    ranges = near_optimal_ranges(scenario, names[0], slack_pct, typical_days, workers=workers, scheduler=scheduler,
                                 cancel=cancel, solver=solver)
    network = ranges.district_network()
    mga_s = time.perf_counter() - started - sweep_s
    _check(cancel)
    report(0.8, "Levelised-cost margins")
    prepared = prepare_run(scenario, names[0], run_settings(scenario, typical_days=typical_days))
    rows = []
    for i, did in enumerate(prepared.district_ids):
        counts = wins.loc[did].value_counts()
        top = counts[counts == counts.max()].index
        candidate = wins.loc[did, names[0]] if wins.loc[did, names[0]] in top else str(top[0])
        win_share = float((wins.loc[did] == candidate).mean()) if candidate != "none" else 0.0
        costs, demand_mwh = forced_costs(prepared, i, t.majority_share, solver)
        others = [c for a, c in costs.items() if a != candidate]
        if candidate in costs and others:
            margin = (min(others) - costs[candidate]) / max(demand_mwh, 1e-9)
        elif candidate in costs:
            margin = math.inf
        else:
            margin = 0.0
        lo = float(network["network_share_min"].get(did, 0.0))
        hi = float(network["network_share_max"].get(did, 0.0))
        firm = lo >= t.majority_share if candidate == "heat_network" else hi < t.majority_share
        grade, points, text = grade_of(Evidence(win_share, margin, firm), t)
        area = candidate if grade < t.review_from_grade and candidate in AREAS else "under_review"
        rows.append({
            "district_id": did, "supply_area": area, "grade": grade, "win_share": win_share,
            "lcoh_margin_eur_per_mwh": margin, "network_share_min": lo, "network_share_max": hi,
            "candidate": candidate, "grade_name": GRADE_NAMES[grade], "points": points,
            "wins": "; ".join(f"{n}: {wins.loc[did, n]}" for n in names),
            "explanation": f"{candidate.replace('_', ' ')}: {text}"
                           + ("" if area != "under_review" else "; under review"),
        })
    timings = {"cost_cases": round(sweep_s, 3), "alternatives": round(mga_s, 3),
               "total": round(time.perf_counter() - started, 3)}
    report(1.0, "Done")
    return Designation(pd.DataFrame(rows), names, t, ranges.ranges, wins, timings)

__all__ = ["AREAS", "Designation", "GradeThresholds", "Evidence", "designate", "grade_of", "thresholds_from_folder"]
