"""Runs in words: their choices, a default name, key figures, the time resolution's accuracy; Markdown made safe."""

from __future__ import annotations

import re

import pandas as pd

from engine.model.results import RunResult
from engine.outputs.figures import city_levelised_cost_eur_per_mwh
from engine.outputs.labels import cost_case_label, objective_label
from engine.studies.fidelity import fidelity_note, lookup_fidelity
from pages._support.cache import choices_of_run


_MARKDOWN_ACTIVE = re.compile(r"[\\`*_{}\[\]()<>#+\-.!|~$:&=\"']")


def markdown_literal(text) -> str:
    """``text`` for Streamlit's Markdown (``st.markdown``, ``st.caption``, alerts, widget labels), shown as typed.

    Every character Markdown or Streamlit's extensions could act on (links, images, emphasis, HTML, LaTeX ``$``,
    ``:icon:`` and ``:color[...]`` directives, list and heading markers) becomes a numeric character reference,
    which Markdown prints as that character and never reads as syntax. Names, notes and descriptions come from
    the planner's files, so a ``![x](http://...)`` in a run name must not fetch an image.
    """
    return _MARKDOWN_ACTIVE.sub(lambda m: f"&#{ord(m.group())};", str(text))

def resolution_note(scenario, result: RunResult) -> str:
    """What the time resolution of ``result`` costs in accuracy, from the cached typical-day fidelity table.

    The table is measured once per input set (Trade-offs and sweeps page, or ``python -m engine.studies.fidelity``);
    until then the note says where to measure it.
    """
    days = int(result.settings.get("typical_days", 0) or 0)
    if scenario is None:
        return ""
    if days == 0:
        return fidelity_note(pd.DataFrame(), 0)
    try:
        table = lookup_fidelity(scenario, result.cost_case, result.objective)
    except Exception:  # a damaged cache file only costs the note
        table = None
    note = fidelity_note(table, days) if table is not None else ""
    note = note or (
        f"Solved with {days} typical days. Their error against the full year has not been measured for these "
        "inputs yet: the Full-year check tab below runs this plan over every hour, and the Trade-offs and sweeps "
        "page measures the resolution itself once (fidelity tab)."
    )
    note += (" Where two supplies cost almost the same (on the demo the peak boilers), a technology's heat is not "
             "fixed by the model: the How firm tab gives its range.")
    if (result.settings or {}).get("stores_between_days"):
        note += (" Stores carry heat from day to day here (stores_between_days in scenario.toml): the typical "
                 "days around a cold spell are milder than its real days, so heat kept on them may not be there "
                 "when the spell comes (extreme days are held to serve themselves). Run the Full-year check before "
                 "relying on the capacities.")
    return note

def describe_choices(result: RunResult) -> str:
    """One line (Markdown) with a run's cost case, objective, CO2 cap and time resolution."""
    choice = choices_of_run(result)
    objective = "lowest CO2" if choice["objective"] == "co2" else "lowest cost"
    cap = choice["co2_cap_t_per_a"]
    days = choice["typical_days"]
    held = " · capacities held from a plan (a full-year check)" if (result.extras or {}).get("fixed_plan") else ""
    linked = (" · stores carry heat from day to day" if days and (result.settings or {}).get("stores_between_days")
              else "")
    return (
        f"Cost case **{markdown_literal(cost_case_label(choice['cost_case']))}** · objective **{objective}** · CO2 cap "
        f"{f'{cap:,.0f} t/a' if cap else 'none'} · {f'{days} typical days' if days else 'full year'}{linked}{held}"
    )

def suggested_run_name(result: RunResult) -> str:
    """A default name for saving: cost case, objective and resolution."""
    days = int(result.settings.get("typical_days", 0) or 0)
    cap = float(result.settings.get("co2_cap_t_per_a", 0) or 0)
    parts = [cost_case_label(result.cost_case), objective_label(result.objective)]
    if cap > 0:
        parts.append(f"cap {cap:,.0f} t/a")
    parts.append(f"{days} typical days" if days else "full year")
    return ", ".join(parts)

def run_kpis(result: RunResult) -> dict[str, float]:
    """City figures for the dashboard's metric tiles."""
    return {
        "total_cost_eur_per_a": result.total_cost_eur_per_a,
        "co2_t_per_a": result.co2_t_per_a,
        "heat_demand_mwh_per_a": result.heat_demand_mwh_per_a,
        "unserved_heat_mwh_per_a": result.unserved_heat_mwh_per_a,
        "levelised_cost_eur_per_mwh": city_levelised_cost_eur_per_mwh(result),
    }


def demand_note(scenario, result: RunResult) -> str:
    """Why the heat demand of a run differs from the sum of the districts' annual demand in the input files.

    The model's demand is the typical days' hourly demand times the days each stands for; the typical days are
    real days of the year, not rescaled, so their sum differs a little from the annual figure of the files (the
    full year matches it exactly). Empty when the two agree to 0.05 %.
    """
    if scenario is None or result.tables.get("districts") is None:
        return ""
    files = float(scenario.districts["heat_demand_mwh_per_a"].sum())
    model = float(result.heat_demand_mwh_per_a)
    if files <= 0 or abs(model - files) <= 5e-4 * files:
        return ""
    days = int(result.settings.get("typical_days", 0) or 0)
    why = (f"the {days} typical days each stand for the days like them and are not rescaled, so their sum "
           "differs from the annual figure; the full year matches it exactly") if days else (
        "measured hourly demand in the inputs replaces the annual figure")
    return (f"Heat demand {model:,.0f} MWh/a in this run against {files:,.0f} MWh/a in the district file "
            f"({100 * (model - files) / files:+.1f} %): {why}.")
