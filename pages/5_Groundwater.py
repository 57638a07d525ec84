"""Groundwater check: permit screening of every well doublet of a run, and the interference check.

Session state, besides the keys documented in :mod:`pages._support`:

``hm_groundwater``
    ``{check key: RunResult}``: interference checks solved in this session (the key holds the run's input hash,
    the reinjection window and the horizon).
``hm_plumes``
    ``{input hash: plume table}``: plume isotherms drawn for runs solved without the interference check.

Widget keys start with ``groundwater_``.
"""

from __future__ import annotations

import dataclasses

import pandas as pd
import streamlit as st
from streamlit_folium import st_folium

from engine import cautions
from pages._support.cache import cached_figure, cached_map, choices_of_run, figure_key, load_saved_run, scenario_for_files
from pages._support.describe import markdown_literal, suggested_run_name
from pages._support.tables import blanks_as_text, table_height
from pages._support.library import run_choices
from engine.outputs.figures import FIGURE_CONFIG
from engine.outputs.groundwater_maps import STATUS_COLORS, groundwater_map_figure, well_status_layer, well_year_figure
from engine.studies.permits import STATUS_LABELS, screen_wells, screening_display_table, well_year_profiles
from engine.studies.interference import interference_comparison, plume_outlines, plume_polygons, solve_with_interference
from engine.outputs.maps import district_map
from pages._support.shell import open_store, route_through_app, run_with_cancel, show_cancelled

PLAN_PAGE = "pages/1_Plan_a_run.py"
CURRENT = "current"
VIEW_AS_SOLVED = "as solved"
VIEW_CHECKED = "with interference"

state = st.session_state
route_through_app("pages/5_Groundwater.py")
st.title("Groundwater check")
st.warning(cautions.GROUNDWATER + " " + cautions.RESULTS_LINE, icon=":material/warning:")
solved = state.setdefault("hm_solved", {})
loaded = state.setdefault("hm_loaded", {})
scenarios = state.setdefault("hm_scenarios", {})
checks = state.setdefault("hm_groundwater", {})
plume_cache = state.setdefault("hm_plumes", {})
figures = state.setdefault("hm_figures", {})  # figures and maps by run and options: a second visit redraws

store = open_store()
choices = run_choices(store)
current = solved.get(state.get("hm_current"))
options = ([CURRENT] if current is not None else []) + list(choices)
if not options:
    st.info("No run yet. Solve one on the Plan a run page first.")
    st.page_link(PLAN_PAGE, label="Plan a run", icon=":material/tune:")
    st.stop()


def option_label(option) -> str:
    if option == CURRENT:
        return f"Current run: {suggested_run_name(current.result)} ({current.label})"
    return choices[option]


if state.get("groundwater_run") not in options:
    state["groundwater_run"] = options[0]
picked = st.selectbox("Run", options, format_func=option_label, key="groundwater_run")
if picked == CURRENT:
    result, files = current.result, current.files
else:
    result = load_saved_run(store, loaded, int(picked))
    files = store.load_inputs(int(picked))
scenario = scenario_for_files(scenarios, files)

if not result.solved:
    st.error(f"This run did not solve: {result.message}")
    st.stop()
if scenario is None:
    st.info("The scenario files of this run are not available, so its wells cannot be checked.")
    st.stop()
if len(scenario.wells) == 0 or result.tables.get("well_steps") is None or result.tables["well_steps"].empty:
    st.info("This run has no well doublets.")
    st.stop()

choice = choices_of_run(result)
already_checked = "interference" in result.extras
district_names = dict(zip(scenario.districts["district_id"].astype(str), scenario.districts["name"].astype(str)))

# ---------------------------------------------------------------------------------------------- settings
st.subheader("Reinjection window and interference check")
c1, c2, c3, c4 = st.columns([1, 1, 1, 1.6], vertical_alignment="bottom")
low = c1.number_input("Lowest reinjection [°C]", 0.0, 40.0, float(scenario.settings.reinjection_min_temp_c), 0.5,
                      key="groundwater_window_min",
                      help="Default 4.5 °C: common practice for open-loop systems, no source. Use the value of "
                           "your water authority.")
high = c2.number_input("Highest reinjection [°C]", 0.0, 40.0, float(scenario.settings.reinjection_max_temp_c), 0.5,
                       key="groundwater_window_max",
                       help="Default 20 °C: common practice for open-loop systems, no source.")
horizon = c3.number_input("Plume horizon [years]", 0.25, 30.0, 1.0, 0.25, key="groundwater_horizon",
                          help="Operating time the plumes have had to grow. One year matches the annual plan; "
                               "longer horizons give longer plumes.")
if high <= low:
    st.error(f"The highest reinjection temperature ({high:g} °C) must be above the lowest ({low:g} °C).")
    st.stop()
window_edited = (low, high) != (scenario.settings.reinjection_min_temp_c, scenario.settings.reinjection_max_temp_c)
check_key = f"{result.input_hash}|{low:g}|{high:g}|{horizon:g}"
run_check = c4.button("Run the interference check", icon=":material/water:", key="groundwater_check",
                      disabled=already_checked, type="primary",
                      help="Solve again and again with the source temperatures the neighbours' plumes cause, "
                           "until they settle (about five solves).")
if already_checked:
    st.caption("This run was solved with the interference check; its doublets are shown with interference.")
elif choice["typical_days"] == 0:
    st.caption("A full-year run: the interference check takes several minutes.")
show_cancelled("groundwater_job", "interference check")
if run_check:
    settings = dataclasses.replace(scenario.settings, reinjection_min_temp_c=low, reinjection_max_temp_c=high)
    checked_now = run_with_cancel(
        lambda progress, cancel: solve_with_interference(
            dataclasses.replace(scenario, settings=settings), cost_case=choice["cost_case"],
            objective=choice["objective"], co2_cap_t_per_a=choice["co2_cap_t_per_a"],
            typical_days=choice["typical_days"], horizon_years=horizon, workers=1,
            progress=progress, cancel=cancel,
        ),
        key="groundwater_job", start_text="Starting the interference check",
    )
    checks[check_key] = checked_now
checked = result if already_checked else checks.get(check_key)
if window_edited and checked is not None and not already_checked:
    st.caption(f"The interference check below was solved with the window {low:g} to {high:g} °C.")

shown = result
if checked is not None and not already_checked:
    view = st.radio("Show the doublets", [VIEW_CHECKED, VIEW_AS_SOLVED], horizontal=True, key="groundwater_view",
                    format_func={VIEW_CHECKED: "With interference (the check)",
                                 VIEW_AS_SOLVED: "As solved, without interference"}.get)
    shown = checked if view == VIEW_CHECKED else result

# ---------------------------------------------------------------------------------------------- screening
screening = screen_wells(shown, scenario, low, high)
counts = screening["status"].value_counts()
m = st.columns(4)
m[0].metric("Doublets", f"{len(screening)}")
m[1].metric("ok", f"{int(counts.get('ok', 0))}")
m[2].metric("At a limit", f"{int(counts.get('at_limit', 0))}")
m[3].metric("Breach", f"{int(counts.get('breach', 0))}")
if counts.get("breach", 0):
    st.error("At least one doublet exceeds a permit or the reinjection window: the inputs or the window changed "
             "after solving, or a neighbour's plume shifts its source temperature. Solve again with the new "
             "inputs, or change the doublet's design or permit.")
table = screening_display_table(screening, district_names)
table = blanks_as_text(table)  # the grid would print a blank number as "None"
status_colors = {label: STATUS_COLORS[key] for key, label in STATUS_LABELS.items()}
number_formats = {
    column: ("{:.2f}" if ("[K]" in column or "COP" in column) else "{:.1f}" if ("°C" in column or "%" in column)
             else "{:,.0f}")
    for column in table.columns if table[column].dtype.kind == "f"
}
st.dataframe(
    table.style.map(lambda value: f"color: {status_colors.get(value, 'inherit')}; font-weight: 600",
                    subset=["status"]).format(number_formats, na_rep="–"),
    hide_index=True, width="stretch", height=table_height(table),
    column_config={
        "status": st.column_config.TextColumn(help="ok / at a limit / breach of the permit or window"),
        "binding limits": st.column_config.TextColumn(width="large"),
    },
)
st.caption("“At a limit”: the permit or the window, not the heat pump, sets the doublet's output somewhere in the "
           "year; the optimum uses what the permit allows. A breach shows only against inputs changed after "
           "solving or shifted source temperatures. " + cautions.WELLS)

# Only the open tab is drawn: a map drawn in a hidden tab gets no size and stays blank.
tab_year, tab_map, tab_check = st.tabs(["Over the year", "Map", "Interference check"], key="groundwater_tab",
                                       on_change="rerun")


def show_year() -> None:
    well_district = dict(zip(screening["well_id"], screening["district_id"].astype(str)))
    well_id = st.selectbox("Doublet", list(well_district), key="groundwater_well",
                           format_func=lambda w: f"{w} ({district_names.get(well_district[w], well_district[w])})")
    profiles = well_year_profiles(shown, scenario, well_ids=[well_id])
    st.plotly_chart(cached_figure(figures, figure_key("groundwater_year", {"shown": shown}, well=well_id, low=low,
                                                      high=high),
                                  lambda: well_year_figure(profiles, well_id, low, high)),
                    width="stretch", config=FIGURE_CONFIG)
    if len(shown.tables["steps"]) < len(profiles):
        st.caption("Rebuilt to the calendar year from typical days: each day shows its typical day.")

def show_map() -> None:
    c1, c2 = st.columns([1.2, 2])
    style = c2.radio("Map style", ["plain", "interactive"], horizontal=True, key="groundwater_map_style",
                     format_func={"plain": "Plain", "interactive": "Interactive with popups"}.get,
                     help="Both work offline: the interactive map's library ships with heatmosaic.")
    polygons = plume_polygons(shown)
    plumes = "own" if polygons else "none"
    if not polygons:
        draw = st.checkbox("Draw the plume isotherms of this run (takes some seconds)", key="groundwater_draw_plumes")
        if draw:
            if shown.input_hash not in plume_cache:
                with st.spinner("Drawing the 1 K and 3 K isotherms after one year"):
                    plume_cache[shown.input_hash] = plume_outlines(scenario, shown, workers=1)
            polygons = plume_polygons(dataclasses.replace(shown, tables={"plumes": plume_cache[shown.input_hash]}))
            plumes = "drawn"
    with_wells = [d for d in scenario.districts["district_id"].astype(str) if (screening["district_id"] == d).any()]
    zoom = c1.selectbox("Zoom to", [None] + with_wells, key="groundwater_zoom",
                        format_func=lambda d: "Whole city" if d is None else district_names.get(d, d),
                        disabled=style != "plain")
    if style == "plain":
        focus = None if zoom is None else list(screening.loc[screening["district_id"] == zoom, "well_id"])
        key = figure_key("groundwater_plain", {"shown": shown}, low=low, high=high, focus=focus, plumes=plumes)
        st.plotly_chart(cached_figure(figures, key, lambda: groundwater_map_figure(scenario, screening, polygons,
                                                                                   focus_well_ids=focus)),
                        width="stretch", config=FIGURE_CONFIG)
        st.caption("Filled circles: extraction wells (area ∝ annual heat), open circles: reinjection wells, both in "
                   "the doublet's status colour. Dashed: 1 K, dotted: 3 K isotherms of the reinjection plumes after "
                   "the horizon, from each doublet's annual net injection. Point at a well for its figures.")
    else:
        key = figure_key("groundwater_map", {"shown": shown}, low=low, high=high, plumes=plumes)
        fmap = cached_map(figures, key, lambda: district_map(
            scenario, shown, technologies=scenario.technologies, plume_polygons=polygons,
            extra_layers=[well_status_layer(scenario, screening)]))
        st_folium(fmap, height=580, use_container_width=True, returned_objects=[], key="groundwater_map")
        st.markdown(
            f"Ring around both wells of a doublet: <span style='color:{STATUS_COLORS['ok']}'>■ ok</span> · "
            f"<span style='color:{STATUS_COLORS['at_limit']}'>■ at a limit</span> · "
            f"<span style='color:{STATUS_COLORS['breach']}'>■ breach</span>. Dashed outlines: 1 K and 3 K "
            "isotherms of the reinjection plumes after the horizon.",
            unsafe_allow_html=True,
        )
    st.caption(cautions.GROUNDWATER)


def show_check() -> None:
    if checked is None:
        st.info("Run the interference check (button above) to see how the doublets' plumes change the plan.")
    else:
        info = checked.extras["interference"]
        iterations = pd.DataFrame(info["iterations"])
        baseline = info.get("baseline") or {}
        shifts = checked.tables["wells"].set_index("well_id")["source_temp_shift_k"].astype(float)
        strongest = shifts.abs().idxmax() if len(shifts) else None
        m = st.columns(4)
        m[0].metric("Converged", "yes" if info["converged"] else "no")
        m[0].caption(f"{len(iterations)} solves in {info['seconds']:.0f} s")
        m[1].metric("Largest source shift [K]", f"{shifts.get(strongest, 0.0):+.2f}")
        if strongest is not None and abs(shifts[strongest]) > 0.005:
            m[1].caption(f"at the extraction well of {markdown_literal(strongest)}")
        if baseline:
            m[2].metric("Total cost [M€/a]", f"{checked.total_cost_eur_per_a / 1e6:,.3f}",
                        f"{(checked.total_cost_eur_per_a - baseline['total_cost_eur_per_a']) / 1e3:+,.1f} k€/a "
                        "against no interference", delta_color="inverse")
            m[3].metric("CO2 [t/a]", f"{checked.co2_t_per_a:,.0f}",
                        f"{checked.co2_t_per_a - baseline['co2_t_per_a']:+,.0f} t/a against no interference",
                        delta_color="inverse")
        if not info["converged"]:
            st.warning("The source temperatures did not settle within the iterations allowed; read the figures as "
                       "a rough range.")
        st.markdown("**Iterations** (iteration 1 is the run without interference)")
        iterations["total_cost_eur_per_a"] = iterations["total_cost_eur_per_a"].round(0)
        st.dataframe(
            iterations.rename(columns={
                "iteration": "iteration", "max_shift_k": "largest change of a source shift [K]",
                "largest_source_shift_k": "largest source shift used [K]", "relaxation": "step damping [-]",
                "status": "solver status", "total_cost_eur_per_a": "total cost [€/a]", "co2_t_per_a": "CO2 [t/a]",
                "unserved_heat_mwh_per_a": "unserved heat [MWh/a]", "seconds": "time [s]"}),
            hide_index=True, width="stretch",
            column_config={"total cost [€/a]": st.column_config.NumberColumn(format="localized"),
                           "CO2 [t/a]": st.column_config.NumberColumn(format="%.0f"),
                           "largest change of a source shift [K]": st.column_config.NumberColumn(format="%.3f"),
                           "largest source shift used [K]": st.column_config.NumberColumn(format="%.2f")},
        )
        st.markdown("**Doublets without and with interference**")
        comparison = interference_comparison(checked)
        if not comparison.empty:
            affected = comparison["source_temp_shift_k"].abs() > 0.005
            only = st.checkbox("Only doublets whose source temperature shifts", value=True,
                               key="groundwater_only_shifted")
            rows = comparison[affected] if only and affected.any() else comparison
            st.dataframe(
                rows.rename(columns={
                    "well_id": "doublet", "source_temp_shift_k": "source shift [K]",
                    "heat_mwh_per_a_without": "heat without [MWh/a]", "heat_mwh_per_a_with": "heat with [MWh/a]",
                    "seasonal_cop_without": "COP without", "seasonal_cop_with": "COP with",
                    "min_reinjection_temp_c_without": "lowest reinjection without [°C]",
                    "min_reinjection_temp_c_with": "lowest reinjection with [°C]"}).round(2),
                hide_index=True, width="stretch",
            )
        with st.expander("Method and validity notes", expanded=False):
            st.markdown(
                f"Fixed-point iteration: solve, compute each doublet's annual net injection, the transient "
                f"line-source plumes after {info['horizon_years']:g} year(s) (Kinzelbach 1987; validity discussed "
                f"by Pophillat et al. 2020), shift every extraction well's source temperature by the other "
                f"doublets' plumes and solve again, until the largest change is below {info['tolerance_k']:g} K."
            )
            for note in info["notes"]:
                st.markdown(f"- {note}")
        st.caption(cautions.GROUNDWATER)


for tab, draw in zip((tab_year, tab_map, tab_check), (show_year, show_map, show_check)):
    if tab.open:
        with tab:
            draw()
