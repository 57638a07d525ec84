"""Run results: key figures, map, load curves, costs and tables of one run; rename, delete, re-open, re-solve."""

from __future__ import annotations

import streamlit as st
from streamlit_folium import st_folium

from engine import cautions
from pages._support.inputs import input_set_from_files
from pages._support.edits import initial_setup
from pages._support.cache import load_saved_run, resolve_saved_run, scenario_for_files
from pages._support.describe import (
    demand_note, describe_choices, markdown_literal, resolution_note, run_kpis, suggested_run_name,
)
from pages._support.tables import (
    district_results_table, firmness_display_table, styled, supply_results_table, table_height, well_results_table,
    year_check_table,
)
from pages._support.library import run_choices
from engine.outputs.figures import (
    FIGURE_CONFIG,
    cost_breakdown_figure,
    district_supply_figure,
    load_curve_figure,
    load_duration_figure,
)
from engine.outputs.firmness import firmness_summary
from engine.outputs.maps import MEASURES, district_map
from engine.storage.store import StoreError
from engine.studies.alternatives import FIRMNESS_SLACK_PCT, run_firmness
from engine.studies.year_check import check_over_year, holds_a_plan, resolve_held_plan
from pages._support.shell import open_store, route_through_app, run_with_cancel, show_cancelled

PLAN_PAGE = "pages/1_Plan_a_run.py"
CURRENT = "current"
MEASURE_LABELS = {
    "main_supply": "Main heat supply",
    "levelised_cost_eur_per_mwh": "Levelised cost of heat [€/MWh]",
    "co2_kg_per_mwh": "CO2 per MWh of demand [kg/MWh]",
    "change_total_cost": "Change of annual cost against a baseline run [€/a]",
}
TABS = ["Map", "Load curves", "Costs", "Tables", "Full-year check", "How firm", "Manage run"]


state = st.session_state
route_through_app("pages/2_Run_results.py")
st.title("Run results")
st.caption(cautions.RESULTS_LINE)
solved = state.setdefault("hm_solved", {})
loaded = state.setdefault("hm_loaded", {})
scenarios = state.setdefault("hm_scenarios", {})
if state.get("hm_flash"):
    st.success(state.pop("hm_flash"))

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
        saved = f", saved as #{current.saved_run_id}" if current.saved_run_id is not None else ", not saved"
        return f"Current run: {suggested_run_name(current.result)} ({current.label}{saved})"
    return choices[option]


if state.get("results_run") not in options:
    state["results_run"] = options[0]
picked = st.selectbox("Run", options, format_func=option_label, key="results_run")
if picked == CURRENT:
    result, files, run_name, run_id, info = current.result, current.files, "Current run", None, None
else:
    run_id = int(picked)
    result = load_saved_run(store, loaded, run_id)
    files = store.load_inputs(run_id)
    info = store.run_info(run_id)
    run_name = info["name"]
scenario = scenario_for_files(scenarios, files)
technologies = scenario.technologies if scenario is not None else None

st.markdown(describe_choices(result))
accuracy_note = resolution_note(scenario, result)
if accuracy_note:
    st.caption(accuracy_note)
if info is not None:
    note = f" · note: {markdown_literal(info['note'])}" if info["note"] else ""
    saved = str(info["created_utc"])[:16].replace("T", " ")
    st.caption(f"Saved {saved} UTC{note} · input fingerprint {result.input_hash[:12]}",
               help="A fingerprint (SHA-256 hash) of the run's input files: two runs with the same fingerprint "
                    "were solved from the very same files.")


def numbers(table, first: int = 0, last: int | None = None) -> dict:
    """Name columns wide enough to read (the numbers are formatted by :func:`styled`)."""
    config = {}
    for name in ("district", "technology", "main supply"):
        if name in table.columns:
            config[name] = st.column_config.TextColumn(width="medium")
    return config


def show_map() -> None:
    c1, c2 = st.columns(2)
    measure = c1.selectbox("Colour the districts by", list(MEASURES), format_func=MEASURE_LABELS.get,
                           key="results_measure")
    baseline = None
    if measure == "change_total_cost":
        others = [r for r in choices if r != run_id]
        if not others:
            c2.info("Save another run to compare against it.")
            measure = "main_supply"
        else:
            base_id = c2.selectbox("Baseline run", others, format_func=choices.get, key="results_baseline")
            baseline = load_saved_run(store, loaded, base_id)
    if scenario is None:
        st.info("The scenario files of this run are not available, so the map cannot be drawn.")
    else:
        fmap = district_map(scenario, result, measure=measure, baseline=baseline, technologies=technologies)
        st_folium(fmap, height=560, use_container_width=True, returned_objects=[], key="results_map")
        st.caption(cautions.WELLS + " Click a district or a well for its figures.")
    st.plotly_chart(district_supply_figure(result, technologies), width="stretch", config=FIGURE_CONFIG)


def show_load_curves() -> None:
    districts = result.tables["districts"]
    names = dict(zip(districts["district_id"], districts["name"]))
    c1, c2, c3 = st.columns([2, 1.2, 2])
    district = c1.selectbox("Where", [None] + list(names),
                            format_func=lambda d: "Whole city" if d is None else names[d], key="results_where")
    period = c2.radio("Period", ["year", "week"], format_func={"year": "Whole year", "week": "One week"}.get,
                      key="results_period", horizontal=True)
    week = c3.slider("Week of the year", 1, 52, 3, key="results_week", disabled=period == "year")
    quantity = "heat"
    if float(districts["cooling_demand_mwh_per_a"].sum()) > 0:
        quantity = st.radio("Quantity", ["heat", "cooling"], horizontal=True, key="results_quantity",
                            format_func=str.capitalize)
    st.plotly_chart(
        load_curve_figure(result, technologies, district_id=district, week=None if period == "year" else int(week),
                          quantity=quantity),
        width="stretch", config=FIGURE_CONFIG,
    )
    st.plotly_chart(
        load_duration_figure({run_name: result}, district_id=district, quantity=quantity, technologies=technologies),
        width="stretch", config=FIGURE_CONFIG,
    )


def show_costs() -> None:
    st.plotly_chart(cost_breakdown_figure({run_name: result}, by="district"), width="stretch", config=FIGURE_CONFIG)
    table = district_results_table(result, technologies)
    st.dataframe(styled(table), hide_index=True, width="stretch", height=table_height(table),
                 column_config=numbers(table, 2))


def show_tables() -> None:
    st.markdown("**Supply per district and technology**")
    table = supply_results_table(result, technologies)
    st.dataframe(styled(table), hide_index=True, width="stretch", height=table_height(table, 20),
                 column_config=numbers(table, 3))
    st.caption("Technologies a district neither has nor builds are left out. Heat stores: capacity in kWh, heat is "
               "discharge minus charge (their loss).")
    st.markdown("**Well doublets**")
    wells = well_results_table(result)
    if wells.empty:
        st.caption("No well doublets in this run.")
        return
    st.dataframe(styled(wells), hide_index=True, width="stretch", height=table_height(wells),
                 column_config=numbers(wells, 2, 10))
    st.caption(cautions.WELLS + " A binding limit means the permit, not the heat pump, sets the well's output.")


def show_year_check() -> None:
    if holds_a_plan(result):
        st.info("This run is a plan held over every hour of the year (a saved full-year check): its capacities "
                "are the plan's, its dispatch the full year's. Compare it with the plan on the Compare runs page.")
        return
    if int(result.settings.get("typical_days", 0) or 0) == 0:
        st.info("This run is solved over every hour of the year already: there is nothing to check.")
        return
    st.caption("Keeps this run's capacities (every unit and store it builds) and runs them hour by hour over the "
               "full year: what the plan really costs, whether any hour is left short, how the wells stand against "
               "their permits, and how much heat each technology makes where the typical days count hours in "
               "blocks. About 20 seconds on the demo city, where the full-year optimisation takes many minutes.")
    checks = state.setdefault("hm_year_checks", {})
    key = (picked if picked != CURRENT else f"current-{id(result)}", result.input_hash)
    show_cancelled("year_check_job", "full-year check")
    if key not in checks:
        if st.button("Check this plan over the full year", key="year_check_button", icon=":material/event_repeat:",
                     disabled=scenario is None):
            check = run_with_cancel(
                lambda progress, cancel: check_over_year(scenario, result, progress=progress, cancel=cancel),
                key="year_check_job",
            )
            checks.clear()  # one check at a time: a full-year run holds every hour's tables
            checks[key] = check
        if scenario is None:
            st.info("The scenario files of this run are not available, so the plan cannot be checked.")
        if key not in checks:
            return
    check = checks[key]
    if not check.solved:
        st.error(check.summary())
        return
    year = check.year
    m = st.columns(4)
    m[0].metric("Cost over the full year [M€/a]", f"{year.total_cost_eur_per_a / 1e6:,.2f}",
                f"{check.cost_difference_pct:+.2f} % against the typical days", delta_color="off")
    m[1].metric("CO2 over the full year [t/a]", f"{year.co2_t_per_a:,.0f}",
                f"{year.co2_t_per_a - result.co2_t_per_a:+,.0f} t/a", delta_color="off")
    m[2].metric("Unserved heat [MWh/a]", f"{check.unserved_heat_mwh_per_a:,.0f}")
    m[3].metric("Wells beyond a permit", f"{check.wells_beyond_permit}")
    (st.warning if check.unserved_heat_mwh_per_a > 0.5 or check.wells_beyond_permit else st.success)(
        check.summary())
    table = year_check_table(check, technologies)
    st.dataframe(styled(table), hide_index=True, width="stretch", height=table_height(table),
                 column_config=numbers(table))
    st.caption("Capacities are the plan's (heat stores in kWh, not shown). Where two supplies cost nearly the same, "
               "the heat each makes can shift by tens of percent between typical days and the full year while the "
               "cost moves by a fraction of a percent.")
    st.caption(cautions.YEAR_CHECK)
    save_year_check(year, key)


def save_year_check(year, key) -> None:
    """Save the checked plan's full year as a run of its own, to compare with the plan and share."""
    st.markdown("**Keep the check in the library**")
    st.caption("Saves the plan's full year as a run of its own, with this run's input files: it can then be "
               "compared with the typical-day plan on the Compare runs page and shared. It is marked as a held "
               "plan, so it never stands in for an optimised full-year run of the same files.")
    kept = state.setdefault("hm_year_checks_saved", {})
    if key in kept:
        st.caption(f"This check is saved as run #{kept[key]}.")
        return
    left, right = st.columns([3, 1], vertical_alignment="bottom")
    default = f"{run_name} · plan over the full year"
    name = left.text_input("Name of the saved check", value=default[:200], max_chars=200, key="year_check_name")
    if right.button("Save the check", key="year_check_save", icon=":material/save:"):
        source = f"run #{run_id} “{run_name}”" if run_id is not None else "the current (unsaved) run"
        try:
            new_id = store.save_run(year, name, note=f"The plan of {source} held over every hour of the year.",
                                    inputs=files, tags="full-year check")
        except StoreError as error:
            st.error(str(error))
            return
        kept.clear()  # like the checks: one at a time
        kept[key] = new_id
        state["hm_flash"] = (f"Saved the full-year check as run #{new_id}. Compare it with the plan on the "
                             "Compare runs page.")
        st.rerun()


def show_firmness() -> None:
    st.caption("How firm is the split between technologies? Plans that cost at most the slack more than the "
               "least-cost plan are searched for the least and the most heat of each technology (near-optimal "
               "alternatives, docs/model.md section 8). Where a range is wide, two supplies cost almost the same "
               "there: the run's figure for that technology is one of many near-equal answers, and a small change "
               "of a price or of the time resolution can move it across the range.")
    if holds_a_plan(result):
        st.info("This run holds a plan over the full year (a saved full-year check), it was not optimised: open "
                "the plan's own run for its ranges.")
        return
    if not result.solved:
        st.info("This run has no solution, so there is no plan to range.")
        return
    if result.objective != "cost":
        st.info("This run minimises CO2; the ranges are of plans near the least cost. Solve the lowest-cost run "
                "of the same inputs and open its ranges here.")
        return
    if scenario is None:
        st.info("The scenario files of this run are not available, so the ranges cannot be computed.")
        return
    days = int(result.settings.get("typical_days", 0) or 0)
    left, right = st.columns([1, 3], vertical_alignment="bottom")
    slack = float(left.number_input(
        "Cost slack [%]", 0.0, 20.0, FIRMNESS_SLACK_PCT, 0.1, key="firmness_slack_pct",
        help="How much more than the least cost a plan may cost to count. The typical days' own cost error is "
             "about 0.2 % on the demo city; uncertain prices move the cost by far more, so try 2 to 5 % for them."))
    right.caption(f"+{slack:g} % is {slack / 100 * result.total_cost_eur_per_a / 1e3:,.0f} k€/a on this run.")
    ranges_done = state.setdefault("hm_firmness", {})
    key = (picked if picked != CURRENT else f"current-{id(result)}", result.input_hash, round(slack, 6))
    show_cancelled("firmness_job", "near-optimal ranges")
    if key not in ranges_done:
        where = (f"on this run's {days} typical days" if days else
                 "on typical days (the full year would take hours: two LPs per district and technology over "
                 "every hour)")
        if st.button("Find the ranges", key="firmness_button", icon=":material/straighten:"):
            ranges_done.clear()
            ranges_done[key] = run_with_cancel(
                lambda progress, cancel: run_firmness(scenario, result, slack, progress=progress, cancel=cancel),
                key="firmness_job")
        else:
            st.caption(f"Solved {where}: seconds per district; with a city-wide CO2 cap or network plant limit "
                       "all districts are one LP (about 1.5 minutes on the demo city).")
            return
    ranges = ranges_done[key]
    if (ranges.ranges["status"] != "optimal").any():
        st.warning("Some ranges could not be solved (status incomplete): their ends are left blank, and the city "
                   "figures of those technologies with them.")
    table = firmness_display_table(ranges, result, technologies)
    if not days:
        st.info(f"This run is over the full hourly year; the ranges were solved on {ranges.typical_days} typical "
                "days, so they bracket the typical days' least-cost plan rather than this run (on the demo city "
                "the 12-day ranges within +0.01 % held every technology's full-year heat, docs/model.md section 8).")
    st.dataframe(styled(table), hide_index=True, width="stretch", height=table_height(table),
                 column_config=numbers(table))
    st.caption(firmness_summary(table, slack))
    st.caption(cautions.FIRMNESS)


def show_manage() -> None:
    if info is None:
        st.info("This run is not in the library yet; save it on the Plan a run page.")
        st.page_link(PLAN_PAGE, label="Plan a run", icon=":material/save:")
        return
    left, right = st.columns(2, gap="large")
    with left:
        st.markdown("**Rename**")
        new_name = st.text_input("New name", value=info["name"], key=f"results_rename_{run_id}")
        if st.button("Rename", key="results_rename_button"):
            try:
                store.rename_run(run_id, new_name)
                state["hm_flash"] = f"Renamed to “{markdown_literal(new_name.strip())}”."
                st.rerun()
            except StoreError as error:
                st.error(str(error))
        st.markdown("**Delete**")
        sure = st.checkbox(f"Yes, delete “{markdown_literal(info['name'])}” from the library", key=f"results_sure_{run_id}")
        if st.button("Delete run", disabled=not sure, key="results_delete", icon=":material/delete:"):
            store.delete_run(run_id)
            loaded.pop(run_id, None)
            state.pop("results_run", None)
            state["hm_flash"] = f"Deleted “{markdown_literal(info['name'])}”."
            st.rerun()
    with right:
        st.markdown("**Re-open on the Plan a run page**")
        st.caption("Puts this run's files and choices back on the Plan a run page, to change and solve again.")
        if st.button("Re-open", key="results_reopen", icon=":material/edit:", disabled=scenario is None):
            reopened = input_set_from_files(files, f"Saved run “{info['name']}”")
            state["hm_input"] = reopened
            state["hm_setup"] = {**initial_setup(reopened, result.settings, result.cost_case), "fresh": True}
            st.switch_page(PLAN_PAGE)
        st.markdown("**Re-solve**")
        st.caption("Solves the run again from its saved files; the result should match to solver precision.")
        show_cancelled("results_job", "re-solve")
        if holds_a_plan(result):
            st.caption("A held plan is solved again with the same capacities; re-opened on the Plan a run page, a "
                       "solve optimises the capacities afresh.")
        if st.button("Re-solve", key="results_resolve", icon=":material/replay:", disabled=scenario is None):
            if holds_a_plan(result):
                again = run_with_cancel(
                    lambda progress, cancel: resolve_held_plan(scenario, result, progress=progress, cancel=cancel),
                    key="results_job",
                )
            else:
                again = run_with_cancel(
                    lambda progress, cancel: resolve_saved_run(
                        solved, scenario, files, result, f"re-solve of “{info['name']}”", progress=progress,
                        cancel=cancel,
                    )[0].result,
                    key="results_job",
                )
            if again.solved:
                delta = again.total_cost_eur_per_a - result.total_cost_eur_per_a
                st.success(f"Re-solved: total cost {again.total_cost_eur_per_a:,.0f} €/a (saved "
                           f"{result.total_cost_eur_per_a:,.0f} €/a, difference {delta:,.0f} €/a).")
            else:
                st.error(f"The re-solve failed: {again.message}")


if not result.solved:
    st.error(f"This run did not solve: {result.message}")
    st.stop()
kpis = run_kpis(result)
m = st.columns(5)
m[0].metric("Total cost [M€/a]", f"{kpis['total_cost_eur_per_a'] / 1e6:,.2f}")
m[1].metric("CO2 [t/a]", f"{kpis['co2_t_per_a']:,.0f}")
m[2].metric("Heat demand [MWh/a]", f"{kpis['heat_demand_mwh_per_a']:,.0f}")
m[3].metric("Levelised cost [€/MWh]", f"{kpis['levelised_cost_eur_per_mwh']:,.1f}")
m[4].metric("Unserved heat [MWh/a]", f"{kpis['unserved_heat_mwh_per_a']:,.0f}")
if kpis["unserved_heat_mwh_per_a"] > 0.5:
    st.warning(result.message)
if demand_note(scenario, result):
    st.caption(demand_note(scenario, result))

# The tabs keep their selection across reruns (rename, re-solve ...), and only the open one is drawn.
tabs = st.tabs(TABS, key="results_tab", on_change="rerun")
for tab, draw in zip(tabs, (show_map, show_load_curves, show_costs, show_tables, show_year_check,
                                  show_firmness, show_manage)):
    if tab.open:
        with tab:
            draw()
