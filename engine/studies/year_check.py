"""A typical-day plan run over every hour of the year: what it really costs, serves and pumps.

Typical days choose the capacities quickly but count the hours in blocks (docs/model.md section 8); where two
supplies cost nearly the same, the heat each makes can differ from the full year by tens of percent while the cost
barely moves. :func:`check_over_year` takes a solved run's plan (its new capacities of every unit and store), keeps
it fixed and solves the dispatch over the full hourly year (docs/model.md section 9, "A plan over the full year"):
an LP without investment decisions, so each hour is bound to the next only by the stores and the wells' annual
volumes, and it solves in seconds where the full-year design takes minutes to hours. The answer says what the plan
costs over the year against the typical days' estimate, how much heat each technology makes, whether any hour is
left short (unserved heat is always allowed in the check, so a plan too small for some hour shows up as unserved
heat instead of as an infeasible LP), and how the wells stand against their permits in every hour.

Screening-level: a plan that holds over the year on these inputs still rests on them; designs defer to licensed
engineers and permits to the water authority.
"""

from __future__ import annotations

import dataclasses
import math

import pandas as pd

from engine.model.results import RunResult
from engine.model.solve import solve_scenario
from engine.progress import Cancel, Progress
from engine.scenario.inputs import Scenario, Settings
from engine.studies.permits import screen_wells

STORE_KIND = "heat_store"


@dataclasses.dataclass
class YearCheck:
    """The plan of ``planned`` dispatched over the full year (``year``), and how the two compare."""

    planned: RunResult
    year: RunResult
    technologies: pd.DataFrame
    """Per technology: ``technology_id``, ``kind``, ``capacity_kw`` (the plan's, kWh for stores),
    ``planned_heat_mwh_per_a``, ``year_heat_mwh_per_a``, ``difference_mwh_per_a``, ``difference_pct``."""
    wells: pd.DataFrame
    """The permit screening of the wells over the full year (:func:`engine.studies.permits.screen_wells`)."""

    @property
    def solved(self) -> bool:
        return self.year.solved

    @property
    def cost_difference_pct(self) -> float:
        """The full year's cost of the plan against the typical days' estimate [%]."""
        estimate = self.planned.total_cost_eur_per_a
        return 100.0 * (self.year.total_cost_eur_per_a - estimate) / abs(estimate) if estimate else math.nan

    @property
    def unserved_heat_mwh_per_a(self) -> float:
        return float(self.year.unserved_heat_mwh_per_a)

    @property
    def wells_beyond_permit(self) -> int:
        if self.wells.empty or "status" not in self.wells.columns:
            return 0
        return int((self.wells["status"] == "breach").sum())

    def summary(self) -> str:
        """One paragraph for the planner."""
        if not self.solved:
            return f"The plan could not be run over the full year: {self.year.message}"
        year, planned = self.year, self.planned
        text = (f"Over every hour of the year the plan costs {year.total_cost_eur_per_a:,.0f} €/a, {self.cost_difference_pct:+.2f} % against the "
                f"typical days' {planned.total_cost_eur_per_a:,.0f} €/a, and emits {year.co2_t_per_a:,.0f} t/a of "
                f"CO2 (typical days {planned.co2_t_per_a:,.0f} t/a).")
        if self.unserved_heat_mwh_per_a > 0.5:
            text += (f" It leaves {self.unserved_heat_mwh_per_a:,.0f} MWh/a of heat unserved: in some hours the "
                     "capacities chosen on typical days are too small.")
        else:
            text += " It serves every hour's heat."
        shown = self.technologies[self.technologies["kind"] != STORE_KIND]
        shown = shown[shown["year_heat_mwh_per_a"].abs() + shown["planned_heat_mwh_per_a"].abs() > 0.5]
        if len(shown):
            worst = shown.loc[shown["difference_mwh_per_a"].abs().idxmax()]
            text += (f" The largest shift of heat is {worst['technology_id']}: {worst['difference_mwh_per_a']:+,.0f} "
                     f"MWh/a ({worst['difference_pct']:+.1f} %).")
        if self.wells_beyond_permit:
            text += f" {self.wells_beyond_permit} well(s) exceed a permit limit over the full year."
        return text


def technology_comparison(planned: RunResult, year: RunResult) -> pd.DataFrame:
    """Heat per technology of the plan on typical days and over the full year (signed difference, % of the
    typical days' figure; NaN where that is zero)."""
    def by_technology(result: RunResult) -> pd.DataFrame:
        supply = result.tables["supply"]
        return supply.groupby(["technology_id", "kind"], sort=True).agg(
            capacity_kw=("capacity_kw", "sum"), heat=("heat_mwh_per_a", "sum")).reset_index()

    a, b = by_technology(planned), by_technology(year)
    table = a.merge(b, on=["technology_id", "kind"], how="outer", suffixes=("_planned", "_year")).fillna(0.0)
    table = pd.DataFrame({
        "technology_id": table["technology_id"],
        "kind": table["kind"],
        "capacity_kw": table["capacity_kw_planned"],
        "planned_heat_mwh_per_a": table["heat_planned"],
        "year_heat_mwh_per_a": table["heat_year"],
    })
    table["difference_mwh_per_a"] = table["year_heat_mwh_per_a"] - table["planned_heat_mwh_per_a"]
    base = table["planned_heat_mwh_per_a"].abs()
    table["difference_pct"] = (100.0 * table["difference_mwh_per_a"] / base).where(base > 1e-9)
    return table.sort_values("planned_heat_mwh_per_a", ascending=False, key=abs).reset_index(drop=True)


def year_settings(planned: RunResult) -> Settings:
    """The planned run's settings over the full year, with unserved heat allowed (so that a short hour shows)."""
    known = {f.name for f in dataclasses.fields(Settings)}
    values = {k: v for k, v in (planned.settings or {}).items() if k in known}
    values.update(typical_days=0, allow_unserved_heat=True)
    return Settings(**values)


def check_over_year(scenario: Scenario, planned: RunResult, workers: int | None = None,
                    progress: Progress | None = None, cancel: Cancel | None = None,
                    time_limit_s: float | None = None) -> YearCheck:
    """Run the plan of ``planned`` (solved on ``scenario``'s inputs) over the full year; see the module."""
    if not planned.solved or "supply" not in planned.tables:
        raise ValueError("only a solved run has a plan to check")
    settings = year_settings(planned)
    year = solve_scenario(scenario, planned.cost_case, settings=settings, workers=workers, progress=progress,
                          cancel=cancel, time_limit_s=time_limit_s, fixed_plan=planned.tables["supply"])
    if not year.solved:
        return YearCheck(planned, year, pd.DataFrame(), pd.DataFrame())
    wells = screen_wells(year, scenario) if len(scenario.wells) else pd.DataFrame()
    return YearCheck(planned, year, technology_comparison(planned, year), wells)


def holds_a_plan(result: RunResult) -> bool:
    """Whether ``result`` is a plan's dispatch with its new capacities held (a saved full-year check), not an
    optimum of its inputs."""
    return bool((result.extras or {}).get("fixed_plan"))


def resolve_held_plan(scenario: Scenario, held: RunResult, workers: int | None = None,
                      progress: Progress | None = None, cancel: Cancel | None = None) -> RunResult:
    """Solve a run with a held plan (:func:`holds_a_plan`) again from ``scenario``: the same settings and the
    same capacities (its own ``supply`` table), so the answer should equal ``held`` to solver precision."""
    if not holds_a_plan(held) or "supply" not in held.tables:
        raise ValueError("this run does not hold a plan")
    known = {f.name for f in dataclasses.fields(Settings)}
    settings = Settings(**{k: v for k, v in (held.settings or {}).items() if k in known})
    return solve_scenario(scenario, held.cost_case, settings=settings, workers=workers, progress=progress,
                          cancel=cancel, fixed_plan=held.tables["supply"])
