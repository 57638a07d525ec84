"""Heat plan: the pathway through the milestone years and the supply area and grade of every district.

Session state: see :mod:`pages._support.plan` (``hm_plan_pathways``, ``hm_plan_designations``, ``hm_heat_plan``).
Widget keys start with ``plan_``.
"""

from __future__ import annotations

import streamlit as st
from streamlit_folium import st_folium

from engine import cautions
from engine.outputs.figures import FIGURE_CONFIG
from engine.outputs.plan_figures import (
    AREA_LABELS,
    co2_path_figure,
    designation_legend_html,
    designation_map,
    designation_table,
    plan_capacity_figure,
    plan_cost_figure,
    plan_heat_figure,
)
from engine.scenario.inputs import default_cost_case
from engine.studies.alternatives import DEFAULT_SLACK_PCT
from pages._support.cache import remember
from pages._support.describe import markdown_literal
from engine.outputs.labels import cost_case_label
from pages._support.inputs import InputSet, demo_input_set
from pages._support.plan import (
    PLAN_CACHE_SIZE, SCENARIO_AS_GIVEN, designation_job, designation_key, failure_sentence, heat_plan, pathway_job,
    pathway_key, year_label,
)
from pages._support.shell import route_through_app, run_with_cancel, show_cancelled

state = st.session_state
route_through_app("pages/7_Heat_plan.py")
st.title("Heat plan")
st.caption(cautions.RESULTS_LINE)

if "hm_input" not in state:
    state["hm_input"] = demo_input_set()
inputs: InputSet = state["hm_input"]
if inputs.scenario is None:
    st.error(f"{inputs.label} has problems; fix them on the Plan a run page first.")
    st.stop()
scenario = inputs.scenario
pathways = state.setdefault("hm_plan_pathways", {})
designations = state.setdefault("hm_plan_designations", {})
setup = state.get("hm_setup") or {}

st.markdown(f"**{markdown_literal(inputs.label)}:** {markdown_literal(scenario.settings.name)} · "
            f"{len(scenario.districts)} districts")
st.warning(cautions.HEAT_PLAN, icon=":material/warning:")

cases = list(scenario.cost_cases)
default_case = setup.get("cost_case") or default_cost_case(cases)
milestones = list(scenario.pathway.years) if scenario.pathway is not None else []
top = st.columns([2, 2, 1, 1])
cost_case = top[0].selectbox("Cost case of the pathway", cases,
                             index=cases.index(default_case) if default_case in cases else 0, key="plan_cost_case",
                             format_func=cost_case_label)
mode = top[1].radio("Investment view", ["foresight", "myopic"], horizontal=True, key="plan_mode",
                    format_func={"foresight": "Perfect foresight", "myopic": "Myopic (year by year)"}.get,
                    help="Foresight plans all milestone years at once; myopic decides each year seeing only that "
                         "year, with plant carried forward. The difference is what foresight is worth.")
days = int(top[2].number_input("Typical days", 1, 366, 4, key="plan_typical_days",
                               help="Per milestone year. Few days are quick and fine for a first look; check "
                                    "final figures with more."))
slack = float(top[3].number_input("Cost slack [%]", 0.0, 50.0, DEFAULT_SLACK_PCT, 0.5, key="plan_slack_pct",
                                  help="The near-optimal alternatives: plans that cost at most this much more "
                                       "than the least cost."))

tab_path, tab_areas = st.tabs(["Pathway", "Supply areas"])

# ------------------------------------------------------------------------------------------------ pathway
pathway = None
with tab_path:
    if not milestones:
        st.info("This scenario has no milestone years. Add `[pathway] years = [2030, 2035, 2040]` to its "
                "scenario.toml (and optionally a pathway.csv) to plan a pathway; see docs/pathway.md.")
    else:
        p_key = pathway_key(inputs.digest, cost_case, mode == "myopic", days)
        st.markdown(f"Milestone years {', '.join(map(str, milestones))}: what is built when, the CO2 path "
                    "against the caps and the cost of each period.")
        show_cancelled("plan_pathway_job", "pathway")
        if st.button("Compute the pathway", type="primary", icon=":material/timeline:", key="plan_run_pathway"):
            try:
                result = run_with_cancel(pathway_job(scenario, cost_case, mode == "myopic", days),
                                         key="plan_pathway_job")
                if result.status == "interrupted":
                    st.info("The pathway was stopped before it finished.")
                elif not result.solved:
                    st.error(f"The pathway could not be solved: {result.message}")
                else:
                    remember(pathways, p_key, result, limit=PLAN_CACHE_SIZE)
            except Exception as error:  # a planner reads a sentence, never a traceback
                st.error(failure_sentence("pathway", error))
        pathway = pathways.get(p_key)
        if pathway is None:
            st.info("Not computed for these choices yet. The demo city at 4 typical days takes a few seconds.")
        else:
            line = (f"{'Perfect foresight' if pathway.mode == 'foresight' else 'Myopic'}, cost case "
                    f"{markdown_literal(pathway.cost_case)}: present value "
                    f"{pathway.present_value_eur / 1e6:,.1f} M€ at {pathway.base_year} (discounted to the base "
                    f"year, net of the remaining value of plant at {pathway.horizon_end}).")
            st.success(line)
            for note in pathway.notes:
                st.info(note)
            left, right = st.columns(2)
            left.plotly_chart(plan_capacity_figure(pathway, scenario.technologies), key="plan_capacity",
                              config=FIGURE_CONFIG, width="stretch")
            right.plotly_chart(plan_heat_figure(pathway, scenario.technologies), key="plan_heat",
                               config=FIGURE_CONFIG, width="stretch")
            left, right = st.columns(2)
            left.plotly_chart(co2_path_figure(pathway), key="plan_co2", config=FIGURE_CONFIG, width="stretch")
            right.plotly_chart(plan_cost_figure(pathway), key="plan_cost", config=FIGURE_CONFIG, width="stretch")
            with st.expander("Pathway tables"):
                st.dataframe(pathway.summary, hide_index=True, width="stretch")
                st.dataframe(pathway.capacity, hide_index=True, width="stretch")

# ------------------------------------------------------------------------------------------------ designation
designation, year = None, None
with tab_areas:
    st.markdown("Every district gets one supply area and a grade in four steps, from the share of cost cases its "
                "supply wins, the cost margin to the next-best supply and the range of plans within the cost "
                "slack (the rule: docs/designation.md).")
    left, right = st.columns([3, 2])
    chosen_cases = left.multiselect("Cost cases for the win share", cases, default=cases, key="plan_cost_cases",
                                  format_func=cost_case_label)
    years = [SCENARIO_AS_GIVEN] + milestones
    year = right.selectbox("Designation for", years, key="plan_year",
                           format_func=lambda y: year_label(y, scenario.settings.target_year),
                           help="The scenario as given has no pathway trajectories; a milestone year takes that "
                                "year's demand, prices, CO2 cap and network reach from the pathway.")
    d_key = designation_key(inputs.digest, chosen_cases, days, slack, year)
    show_cancelled("plan_designation_job", "designation")
    if st.button("Compute the designation", type="primary", icon=":material/map:", key="plan_run_designation",
                 disabled=not chosen_cases):
        try:
            remember(designations, d_key,
                     run_with_cancel(designation_job(scenario, chosen_cases, days, slack, year),
                                     key="plan_designation_job"), limit=PLAN_CACHE_SIZE)
        except Exception as error:  # a planner reads a sentence, never a traceback
            st.error(failure_sentence("designation", error))
    designation = designations.get(d_key)
    if not chosen_cases:
        st.info("Choose at least one cost case.")
    elif designation is None:
        st.info(f"Not computed for these choices yet: {len(chosen_cases)} cost case(s) and the near-optimal "
                "alternatives; the demo city at 4 typical days takes about half a minute.")
    else:
        map_column, legend_column = st.columns([3, 1])
        with map_column:
            st_folium(designation_map(scenario, designation, legend=False), height=560, use_container_width=True,
                      returned_objects=[], key="plan_map")
        legend_column.html("<div style='font:13px/1.45 sans-serif'>"
                           + designation_legend_html(designation.table["supply_area"]) + "</div>")
        st.caption("Colour: the supply area. Opacity and the number after the name: the grade (1 very likely "
                   "suitable to 4 very likely unsuitable). Dashed outline: under review. Hover a district for its "
                   "evidence.")
        table = designation_table(designation, scenario)
        shown = table.drop(columns=["How the grade came about"])
        st.dataframe(shown, hide_index=True, width="stretch", height=38 + 35 * len(table), column_config={
            "District": st.column_config.TextColumn(pinned=True, width="medium"),
            "Supply area": st.column_config.TextColumn(width=250),
            "Grade": st.column_config.TextColumn(width=170),
            "Network share range": st.column_config.TextColumn(
                width="medium", help="Lowest and highest network share of the district's heat among the plans "
                                     "within the cost slack (near-optimal alternatives)."),
            "Win share": st.column_config.ProgressColumn("Win share", min_value=0.0, max_value=1.0, format="%.2f",
                                                         width="small",
                                                         help="Share of the cost cases in which this supply "
                                                              "carries most of the district's heat."),
            "Margin [EUR/MWh]": st.column_config.TextColumn(
                width=120, help="Extra levelised cost of the next-best supply in the first cost case."),
        })
        with st.expander("How each grade came about", expanded=True):
            st.markdown("\n".join(f"- **{markdown_literal(name)}**: {markdown_literal(text)}"
                                   for name, text in zip(table["District"], table["How the grade came about"])))
        with st.expander("Winner in each cost case"):
            names = dict(zip(scenario.districts["district_id"], scenario.districts["name"]))
            st.dataframe(designation.winners.rename(index=names).replace(AREA_LABELS), width="stretch")

plan = heat_plan(scenario, pathway, designation, year if designation is not None else None,
                 scenario.settings.target_year)
if not plan.empty:
    state["hm_heat_plan"] = plan
    st.caption("The Share page adds this heat plan to the HTML summary.")
