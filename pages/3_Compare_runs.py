"""Compare runs: two to four saved runs against a baseline run, as tables, maps, load curves and costs."""

from __future__ import annotations

import streamlit as st
from streamlit_folium import st_folium

from engine import cautions
from pages._support.cache import cached_figure, cached_map, figure_key, load_saved_run, scenario_for_files
from pages._support.describe import markdown_literal
from pages._support.library import default_baseline, run_choices, unique_run_names
from engine.outputs.figures import (
    FIGURE_CONFIG,
    cost_breakdown_figure,
    difference_table,
    format_table,
    kpi_table,
    load_curve_figure,
    load_duration_figure,
    main_supply_changes,
    shared_y_range,
    supply_mix_figure,
)
from engine.outputs.maps import MEASURES, district_map, map_legend_html, shared_value_range
from pages._support.shell import open_store, route_through_app

PLAN_PAGE = "pages/1_Plan_a_run.py"
MEASURE_LABELS = {
    "main_supply": "Main heat supply",
    "levelised_cost_eur_per_mwh": "Levelised cost of heat [€/MWh]",
    "co2_kg_per_mwh": "CO2 per MWh of demand [kg/MWh]",
    "change_total_cost": "Change of annual cost against the baseline [€/a]",
}

state = st.session_state
route_through_app("pages/3_Compare_runs.py")
st.title("Compare runs")
st.caption(cautions.RESULTS_LINE)
loaded = state.setdefault("hm_loaded", {})
scenarios = state.setdefault("hm_scenarios", {})
figures = state.setdefault("hm_figures", {})  # figures and maps by runs and options: a second visit redraws

store = open_store()
choices = run_choices(store)
if len(choices) < 2:
    st.info("Save at least two runs to compare them (for example the demo city under two cost cases).")
    st.page_link(PLAN_PAGE, label="Plan a run", icon=":material/tune:")
    st.stop()

# The choice lives in hm_compare (not only in the widgets, whose state Streamlit drops on another page).
memory = state.setdefault("hm_compare", {})
wanted = state.get("compare_runs", memory.get("runs", []))
gone = [r for r in wanted if r not in choices]
if gone:
    st.warning("No longer in the library (deleted elsewhere), so left out of the comparison: "
               + ", ".join(f"run #{r}" for r in gone) + ".", icon=":material/info:")
kept = [r for r in wanted if r in choices]
state["compare_runs"] = kept if len(kept) >= 2 else (kept + [r for r in reversed(list(choices)) if r not in kept])[:2]
c1, c2 = st.columns([3, 2], gap="large")
picked = c1.multiselect("Runs to compare (2 to 4)", list(choices), format_func=choices.get, max_selections=4,
                        key="compare_runs")
memory["runs"] = list(picked)
if len(picked) < 2:
    st.info("Choose at least two runs.")
    st.stop()
names = unique_run_names({r: store.run_info(r)["name"] for r in picked})
runs = {r: load_saved_run(store, loaded, r) for r in picked}
if state.get("compare_baseline", memory.get("baseline")) in picked:
    state["compare_baseline"] = state.get("compare_baseline", memory.get("baseline"))
else:
    state["compare_baseline"] = default_baseline(runs)
baseline_id = c2.selectbox("Baseline run", picked, format_func=names.get, key="compare_baseline",
                           help="First choice: the first saved least-cost run.")
memory["baseline"] = baseline_id
baseline = names[baseline_id]
picked = [baseline_id] + [r for r in picked if r != baseline_id]  # the baseline first in tables, maps and figures
results = {names[r]: runs[r] for r in picked}
files = {r: store.load_inputs(r) for r in picked}
run_scenarios = {r: scenario_for_files(scenarios, files[r]) for r in picked}
base_scenario = run_scenarios[baseline_id]
technologies = base_scenario.technologies if base_scenario is not None else None

# ------------------------------------------------------------------------------------------------ tables
st.subheader("Key figures")
st.dataframe(cached_figure(figures, figure_key("compare_kpi", results),
                           lambda: format_table(kpi_table(results, technologies))), hide_index=True, width="stretch")
st.subheader(f"Differences against the baseline “{markdown_literal(baseline)}”")
st.caption("Positive: more than in the baseline (higher cost, more CO2, more heat from that technology).")
st.dataframe(cached_figure(figures, figure_key("compare_differences", results),
                           lambda: format_table(difference_table(results, baseline, technologies))),
             hide_index=True, width="stretch")
with st.expander("Districts whose main supply changed"):
    for name, result in results.items():
        if name == baseline:
            continue
        changes = main_supply_changes(result, results[baseline], technologies)
        st.markdown(f"**{markdown_literal(name)}**: {len(changes)} district(s)")
        if not changes.empty:
            st.dataframe(changes.drop(columns=["district_id"]).rename(columns={"name": "district"}),
                         hide_index=True, width="stretch")

# ------------------------------------------------------------------------------------------------ maps
st.subheader("Maps")
measure = st.selectbox("Colour the districts by", list(MEASURES), format_func=MEASURE_LABELS.get,
                       key="compare_measure")
base = results[baseline] if measure == "change_total_cost" else None
scale = shared_value_range(None, [(run_scenarios[r], results[names[r]]) for r in picked], measure, base,
                           technologies)
if scale is not None:
    st.caption("All maps share one colour scale, so one colour means one value in every map.")
columns = st.columns(len(picked))
for column, run_id in zip(columns, picked):
    with column:
        name = names[run_id]
        st.markdown(f"**{markdown_literal(name)}**" + (" (baseline)" if run_id == baseline_id else ""))
        scenario = run_scenarios[run_id]
        if scenario is None:
            st.info("The scenario files of this run are not available.")
            continue
        # the legend below the map: side by side, a legend inside would cover the districts
        fmap = cached_map(figures, figure_key("compare_map", results, run=name, measure=measure), lambda: district_map(
            scenario, results[name], measure=measure, baseline=base, technologies=technologies, value_range=scale,
            legend_inside=False))
        st_folium(fmap, height=480, use_container_width=True, returned_objects=[], key=f"compare_map_{run_id}")
        st.html(cached_figure(figures, figure_key("compare_legend", results, run=name, measure=measure),
                              lambda: map_legend_html(scenario, results[name], measure, base, technologies, scale)))
st.caption(cautions.WELLS)

# ------------------------------------------------------------------------------------------------ load curves
st.subheader("Load curves")
solved_runs = {name: result for name, result in results.items() if result.solved}
if not solved_runs:
    st.info("None of these runs solved, so there are no load curves or costs to show.")
    st.stop()
first = solved_runs.get(baseline) or next(iter(solved_runs.values()))
district_names = dict(zip(first.tables["districts"]["district_id"], first.tables["districts"]["name"]))
c1, c2, c3, c4 = st.columns([2, 1.6, 1.2, 1.6])
district = c1.selectbox("Where", [None] + list(district_names),
                        format_func=lambda d: "Whole city" if d is None else district_names[d], key="compare_where")
layout = c2.radio("Show", ["side", "overlay"], key="compare_layout",
                  format_func={"side": "Load curves side by side", "overlay": "Duration curves overlaid"}.get)
period = c3.radio("Period", ["year", "week"], format_func={"year": "Whole year", "week": "One week"}.get,
                  key="compare_period", disabled=layout == "overlay")
week = c4.slider("Week of the year", 1, 52, 3, key="compare_week", disabled=layout == "overlay" or period == "year")
week = "year" if period == "year" else week
if layout == "side":
    columns = st.columns(min(len(solved_runs), 2))

    def side_by_side() -> dict:
        curves = {name: load_curve_figure(result, technologies, district_id=district,
                                          week=None if week == "year" else int(week))
                  for name, result in solved_runs.items()}
        shared_y_range(curves.values())  # side by side: one y range, so heights compare
        return curves

    curves = cached_figure(figures, figure_key("compare_curves", solved_runs, district=district, week=week),
                           side_by_side)
    st.caption("The load curves share one y range.")
    for k, (name, fig) in enumerate(curves.items()):
        with columns[k % len(columns)]:
            st.markdown(f"**{markdown_literal(name)}**")
            st.plotly_chart(fig, width="stretch", config=FIGURE_CONFIG, key=f"compare_curve_{k}")
else:
    st.plotly_chart(cached_figure(figures, figure_key("compare_duration", results, district=district),
                                  lambda: load_duration_figure(results, district_id=district, technologies=technologies)),
                    width="stretch", config=FIGURE_CONFIG)

# ------------------------------------------------------------------------------------------------ costs and mix
st.subheader("Costs and supply mix")
st.plotly_chart(cached_figure(figures, figure_key("compare_cost_runs", results),
                              lambda: cost_breakdown_figure(results, by="run")), width="stretch", config=FIGURE_CONFIG)
st.plotly_chart(cached_figure(figures, figure_key("compare_mix", results),
                              lambda: supply_mix_figure(results, technologies)), width="stretch", config=FIGURE_CONFIG)
with st.expander("Annual cost per district and run"):
    st.plotly_chart(cached_figure(figures, figure_key("compare_cost_districts", results),
                                  lambda: cost_breakdown_figure(results, by="district")),
                    width="stretch", config=FIGURE_CONFIG)
