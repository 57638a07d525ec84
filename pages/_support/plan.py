"""Behind the "Heat plan" page (no Streamlit): request keys, the jobs it starts, and failures in words.

Session state of the page (besides the keys in :mod:`pages._support`):

``hm_plan_pathways``
    ``{pathway key: PathwayResult}``: pathways solved in this session (:func:`pathway_key`).
``hm_plan_designations``
    ``{designation key: Designation}``: designations computed in this session (:func:`designation_key`).
``hm_heat_plan``
    The :class:`engine.outputs.plan_report.HeatPlan` the page shows last; the Share page puts it into the HTML
    summary.
"""

from __future__ import annotations

import hashlib

from engine.outputs.plan_report import HeatPlan
from engine.progress import JobCancelled
from engine.scenario.problems import InputError
from engine.studies.designation import designate
from engine.studies.pathway import solve_pathway, year_scenario

SCENARIO_AS_GIVEN = "as_given"
"""The designation year choice that takes the scenario without the pathway's trajectories."""
PLAN_CACHE_SIZE = 4


def _key(*parts) -> str:
    return hashlib.sha256("|".join(map(str, parts)).encode()).hexdigest()[:24]


def pathway_key(input_digest: str, cost_case: str, myopic: bool, typical_days: int) -> str:
    """Key of a pathway request: the input files' digest and the page's choices."""
    return _key("pathway", input_digest, cost_case, "myopic" if myopic else "foresight", int(typical_days))


def designation_key(input_digest: str, cost_cases, typical_days: int, slack_pct: float, year) -> str:
    """Key of a designation request: the input files' digest and the page's choices."""
    return _key("designation", input_digest, ",".join(cost_cases), int(typical_days), f"{float(slack_pct):.6g}", year)


def year_label(year, target_year) -> str:
    if year == SCENARIO_AS_GIVEN:
        return f"{target_year}: the scenario as given"
    return f"{year}: as in the pathway"


def pathway_job(scenario, cost_case: str, myopic: bool, typical_days: int):
    """A job for ``run_with_cancel``: the pathway, solved in this process (no process pool in the server)."""
    def job(progress, cancel):
        return solve_pathway(scenario, myopic=myopic, cost_case=cost_case, typical_days=typical_days,
                             progress=progress, cancel=cancel, workers=1)
    return job


def designation_job(scenario, cost_cases, typical_days: int, slack_pct: float, year):
    """A job for ``run_with_cancel``: the designation of the scenario as given or of one milestone year."""
    def job(progress, cancel):
        city = scenario
        if year != SCENARIO_AS_GIVEN:
            city, _ = year_scenario(scenario, scenario.pathway, int(year))
        return designate(city, list(cost_cases), slack_pct, typical_days, workers=1, progress=progress,
                         cancel=cancel)
    return job


def failure_sentence(what: str, error: BaseException) -> str:
    """A failed job in one or two sentences for the planner (never a traceback)."""
    if isinstance(error, JobCancelled):
        return f"The {what} was stopped before it finished."
    if isinstance(error, InputError):
        problems = "; ".join(str(p) for p in error.problems[:5])
        more = f" (and {len(error.problems) - 5} more)" if len(error.problems) > 5 else ""
        return f"The {what} could not start because the inputs have problems: {problems}{more}."
    if isinstance(error, KeyError):
        return f"The {what} could not start: {error.args[0] if error.args else error}."
    text = str(error).strip() or type(error).__name__
    return f"The {what} could not be computed: {text}"


def heat_plan(scenario, pathway=None, designation=None, year=None, target_year=None) -> HeatPlan:
    """What the page shows, for the Share page's summary."""
    words = "" if designation is None or year is None else year_label(year, target_year).split(" (")[0]
    return HeatPlan(scenario, pathway, designation, words)
