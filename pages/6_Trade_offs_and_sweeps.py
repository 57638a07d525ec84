"""Trade-offs and sweeps: the cost-CO2 curve, price sweeps with a tornado chart, and typical-day fidelity.

Session state, besides the keys documented in :mod:`pages._support`:

``hm_tradeoff``
    ``{request key: (trade-off table, list of RunResult)}``: curves computed in this session.
``hm_sweeps``
    ``{request key: SweepOutcome}``: sweeps run in this session (with their runs, so they can be saved).
``hm_fidelity``
    ``{fidelity key: table}``: typical-day fidelity tables read or measured in this session.

Widget keys start with ``tradeoffs_``.
"""

from __future__ import annotations

import streamlit as st


from engine import cautions
from pages._support.inputs import InputSet, demo_input_set
from pages._support.describe import markdown_literal, suggested_run_name
from engine.studies.fidelity import DEFAULT_DAY_COUNTS, cached_fidelity, fidelity_key, fidelity_note, lookup_fidelity
from engine.studies.fidelity import recommend_typical_days
from engine.storage.store import ScenarioStore, StoreError
from engine.outputs.study_figures import tornado_figure, tradeoff_figure, tradeoff_mix_figure
from engine.outputs.csvfile import csv_bytes
from engine.scenario.inputs import default_cost_case
from engine.studies.sweep import (
    PARAMETERS, default_ranges, random_samples, run_sweep, save_sweep, tasks_from_cost_cases, tasks_from_samples,
    tornado_table, tornado_tasks,
)
from engine.studies.tradeoff import tradeoff_curve_runs
from engine.outputs.labels import cost_case_label, status_label, tradeoff_point_label
from pages._support.tables import main_supply_display_table, styled, sweep_display_table, technology_names
from pages._support.shell import route_through_app, run_with_cancel, show_cancelled

state = st.session_state
route_through_app("pages/6_Trade_offs_and_sweeps.py")

st.title("Trade-offs and sweeps")
st.caption(cautions.RESULTS_LINE)

if "hm_input" not in state:
    state["hm_input"] = demo_input_set()
inputs: InputSet = state["hm_input"]
if inputs.scenario is None:
    st.error(f"{inputs.label} has problems; fix them on the Plan a run page first.")
    st.stop()
scenario = inputs.scenario
setup = state.get("hm_setup") or {}
curves = state.setdefault("hm_tradeoff", {})
sweeps = state.setdefault("hm_sweeps", {})
fidelities = state.setdefault("hm_fidelity", {})


st.markdown(f"**{markdown_literal(inputs.label)}:** {markdown_literal(scenario.settings.name)} · {len(scenario.districts)} districts")
top = st.columns([2, 1, 1])
cases = list(scenario.cost_cases)
default_case = setup.get("cost_case") or default_cost_case(cases)
cost_case = top[0].selectbox("Cost case", cases, index=cases.index(default_case) if default_case in cases else 0,
                             key="tradeoffs_cost_case", format_func=cost_case_label)
full_year = top[1].toggle("Full year", value=bool(setup.get("full_year", False)), key="tradeoffs_full_year",
                          help="Every hour of the year: far slower; typical days are usually close enough "
                               "(see the fidelity tab).")
typical_days = top[2].number_input("Typical days", 1, 366, int(setup.get("typical_days", 12) or 12),
                                   key="tradeoffs_typical_days", disabled=full_year)
days = 0 if full_year else int(typical_days)

tab_curve, tab_sweep, tab_fidelity = st.tabs(["Cost-CO2 trade-off", "Price sweep", "Typical-day fidelity"])

# ------------------------------------------------------------------------------------------------ trade-off curve
with tab_curve:
    st.markdown(
        "From the least-cost plan to the least-CO2 plan: each point in between is the cheapest plan whose CO2 "
        "stays below its own level, and the cheapest plan at the CO2 price shown beside it. Click a point to see "
        "and save it.",
        help="Each point is the least-cost plan at a CO2 price chosen where the curve found so far bends most "
             "(Cohon, Church and Sheer 1979); a plan that is cheapest at a CO2 price is also the cheapest with CO2 "
             "held at its own level (the epsilon-constraint view, Haimes, Lasdon and Wismer 1971). With a network "
             "plant limit the points are solved with CO2 bounds instead.",
    )
    n_points = st.slider("Points on the curve", 2, 12, 6, key="tradeoffs_points")
    curve_key = f"{inputs.digest[:16]}|{cost_case}|{days}|{n_points}"
    show_cancelled("tradeoffs_curve_job", "trade-off curve")
    if st.button("Compute the curve", type="primary", icon=":material/show_chart:", key="tradeoffs_run_curve"):
        curves[curve_key] = run_with_cancel(
            lambda progress, cancel: tradeoff_curve_runs(scenario, cost_case, n_points, days, progress=progress,
                                                         cancel=cancel),
            key="tradeoffs_curve_job",
        )
    if curve_key not in curves:
        st.info("Each point is one solve of every district at a CO2 price; districts whose plan cannot change "
                "between two points are not solved again. The demo city at 12 typical days takes about a "
                "second per point.")
    else:
        table, results = curves[curve_key]
        points = [int(p) for p in table.loc[table["status"] == "optimal", "point"]]
        select_key = f"tradeoffs_point_{curve_key}"
        if state.get(select_key) not in points:
            state[select_key] = points[0]
        log_axis = st.checkbox("Logarithmic cost axis", key="tradeoffs_log_axis",
                               help="The last tonnes are often far dearer than the rest of the curve.")
        figure = tradeoff_figure(table, state[select_key])
        if log_axis:
            figure.update_yaxes(type="log")
        event = st.plotly_chart(figure, key=f"tradeoffs_chart_{curve_key}", on_select="rerun",
                                selection_mode="points", width="stretch")
        clicked = [p.get("point_index") for p in (event or {}).get("selection", {}).get("points", [])]
        clicked = points[clicked[0]] if clicked and clicked[0] is not None and clicked[0] < len(points) else None
        # act on a click once: afterwards the select box may move away from the clicked point
        if clicked is not None and state.get(f"tradeoffs_click_{curve_key}") != clicked:
            state[f"tradeoffs_click_{curve_key}"] = clicked
            state[select_key] = clicked
            st.rerun()
        chosen = st.selectbox("Point", points, key=select_key,
                              format_func=lambda p: f"{p}: {tradeoff_point_label(table.loc[p, 'kind'])}, "
                              f"{table.loc[p, 'co2_t_per_a']:,.0f} t/a, "
                              f"{table.loc[p, 'total_cost_eur_per_a'] / 1e6:,.2f} M€/a")
        st.plotly_chart(tradeoff_mix_figure(table, scenario.technologies), key=f"tradeoffs_mix_{curve_key}",
                        width="stretch")
        shown = table[["point", "kind", "co2_bound_t_per_a", "co2_t_per_a", "total_cost_eur_per_a",
                       "abatement_cost_eur_per_t", "co2_price_eur_per_t", "unserved_heat_mwh_per_a", "status"]].assign(
            kind=[tradeoff_point_label(k) for k in table["kind"]], status=[status_label(v) for v in table["status"]])
        st.dataframe(styled(shown, {
            "point": "Point", "kind": "Point of the curve", "co2_bound_t_per_a": "CO2 limit [t/a]",
            "co2_t_per_a": "CO2 [t/a]", "total_cost_eur_per_a": "Total cost [€/a]",
            "abatement_cost_eur_per_t": "Abatement cost [€/t]", "co2_price_eur_per_t": "At CO2 price [€/t]",
            "unserved_heat_mwh_per_a": "Unserved heat [MWh/a]",
            "status": "Status"}), hide_index=True, width="stretch", column_config={
            "Abatement cost [€/t]": st.column_config.NumberColumn(
                help="Extra total cost per tonne avoided against the previous point (the total cost already pays "
                     "the cost case's CO2 price, so this is what a tonne costs beyond it)."),
            "At CO2 price [€/t]": st.column_config.NumberColumn(
                help="The CO2 price (the cost case's, plus a surcharge) at which this plan is the least-cost one. "
                     "Blank where a point was solved with a CO2 limit instead.")})
        st.caption("Points sit where the curve bends, where each further tonne starts to cost more. The last "
                   "point is the extreme end: the least CO2 the city can reach, whatever it costs.")
        with st.form(f"tradeoffs_save_{curve_key}", border=True):
            st.markdown(f"**Save point {chosen} as a run in the library**")
            result = results[chosen]
            name = st.text_input("Name", value=f"Trade-off point {chosen}: {suggested_run_name(result)}",
                                 max_chars=120)
            note = st.text_area("Note", placeholder="Why this point ...")
            if st.form_submit_button("Save point", icon=":material/save:"):
                try:
                    with ScenarioStore() as store:
                        run_id = store.save_run(result, name, note, inputs=inputs.files, tags="trade-off")
                    st.success(f"Saved as run #{run_id}. Its objective and CO2 bound come along, so opening it "
                               "on the Plan a run page solves the same point again.")
                except StoreError as error:
                    st.error(f"The point could not be saved: {error}")

# ------------------------------------------------------------------------------------------------ price sweep
with tab_sweep:
    st.markdown("Solve many price futures at once, on this computer's cores or on a cluster of computers.",
                help="Clusters are reached through a Dask scheduler address.")
    modes = {"cases": "The scenario's cost cases", "sample": "Random mixes of prices, spread evenly",
             "tornado": "One price at a time, low and high (tornado)"}
    mode = st.radio("Runs", list(modes), format_func=modes.get, key="tradeoffs_sweep_mode", horizontal=True,
                    help="Random mixes are drawn by Latin hypercube sampling (McKay, Beckman and Conover 1979): "
                         "each price's range is cut into as many equal slices as samples, each slice used once.")
    left, right = st.columns(2)
    names = left.multiselect("Prices to vary", list(PARAMETERS), default=list(PARAMETERS),
                             format_func=lambda k: f"{PARAMETERS[k].label} ({PARAMETERS[k].low:g} to "
                             f"{PARAMETERS[k].high:g} {PARAMETERS[k].unit})",
                             key="tradeoffs_sweep_parameters", disabled=mode == "cases")
    n_samples = left.number_input("Samples", 2, 500, 8, key="tradeoffs_sweep_samples", disabled=mode != "sample")
    seed = left.number_input("Seed", 0, 10_000, 0, key="tradeoffs_sweep_seed", disabled=mode != "sample")
    scheduler = right.text_input("Cluster address (optional)", placeholder="tcp://scheduler:8786",
                                 key="tradeoffs_sweep_scheduler",
                                 help="The address of a Dask scheduler. Blank: the runs share this computer's "
                                      "cores. The cluster's workers need heatmosaic installed.").strip() or None
    keep = right.checkbox("Save every run to the library, tagged with the sweep id", key="tradeoffs_sweep_keep")
    sweep_key = f"{inputs.digest[:16]}|{cost_case}|{days}|{mode}|{','.join(names)}|{n_samples}|{seed}"
    show_cancelled("tradeoffs_sweep_job", "sweep")
    if st.button("Run the sweep", type="primary", icon=":material/grid_view:", key="tradeoffs_run_sweep",
                 disabled=mode != "cases" and not names):
        if mode == "cases":
            tasks = tasks_from_cost_cases(scenario)
        elif mode == "tornado":
            tasks = tornado_tasks(scenario, cost_case, names)
        else:
            tasks = tasks_from_samples(scenario, random_samples(default_ranges(names), int(n_samples), int(seed)),
                                       cost_case)
        try:
            outcome = run_with_cancel(
                lambda progress, cancel: run_sweep(scenario, tasks, typical_days=days, scheduler=scheduler,
                                                   keep_results=keep, progress=progress, cancel=cancel),
                key="tradeoffs_sweep_job",
            )
            sweeps[sweep_key] = outcome
            if keep:
                with ScenarioStore() as store:
                    saved = save_sweep(outcome, store, "Sweep", inputs=inputs.files)
                st.success(f"{len(saved)} runs saved to the library with sweep id {outcome.sweep_id}.")
        except (OSError, StoreError, RuntimeError, TimeoutError) as error:
            st.error(f"The sweep could not run: {error}")
    outcome = sweeps.get(sweep_key)
    if outcome is not None:
        failed = outcome.table[outcome.table["status"] != "optimal"]
        if len(failed):
            st.warning(f"{len(failed)} run(s) did not solve: {markdown_literal(', '.join(failed['name']))}")
        if mode == "tornado":
            tornado = tornado_table(outcome)
            st.plotly_chart(tornado_figure(tornado), key=f"tradeoffs_tornado_{sweep_key}", width="stretch")
            st.caption("Bars: change in the city's total annual cost when one price moves to its low or high "
                       "value, the others at the reference; labels: districts whose main supply changes.")
        st.dataframe(sweep_display_table(outcome.table, scenario), hide_index=True, width="stretch")
        with st.expander("Main supply of each district in each run"):
            st.dataframe(main_supply_display_table(outcome.main_supply, scenario), hide_index=True,
                         width="stretch")
        st.download_button("Download the sweep (CSV)", csv_bytes(outcome.table),
                           file_name="sweep.csv", mime="text/csv", key=f"tradeoffs_sweep_csv_{sweep_key}")

# ------------------------------------------------------------------------------------------------ fidelity
with tab_fidelity:
    st.markdown(
        "How close do typical days come to the full hourly year for these inputs? Measured once per set of "
        f"inputs ({', '.join(map(str, DEFAULT_DAY_COUNTS))} typical days against the full year) and kept next "
        "to the library."
    )
    key = fidelity_key(scenario, cost_case)
    table = fidelities.get(key)
    if table is None:
        table = lookup_fidelity(scenario, cost_case)
        if table is not None:
            fidelities[key] = table
    show_cancelled("tradeoffs_fidelity_job", "fidelity measurement")
    if st.button("Measure now" if table is None else "Measure again", key="tradeoffs_measure",
                 help="Solves the full year once: minutes for a city the size of the demo."):
        try:
            refresh = table is not None
            table = run_with_cancel(
                lambda progress, cancel: cached_fidelity(scenario, cost_case, progress=progress, refresh=refresh,
                                                         cancel=cancel),
                key="tradeoffs_fidelity_job",
            )
            fidelities[key] = table
        except (RuntimeError, ValueError) as error:
            st.error(f"The fidelity could not be measured: {error}")
    if table is None:
        st.info("Not measured for these inputs yet.")
    else:
        note = fidelity_note(table, days)
        if note:
            st.info(note)
        fewest = recommend_typical_days(table)
        st.caption(f"Fewest typical days within 1 % on cost and 10 % on capacity: {fewest}." if fewest else
                   "None of the tested numbers of typical days comes within 1 % on cost and 10 % on capacity: "
                   "check final figures over the full year.")
        columns = ["typical_days", "model_steps", "total_cost_eur_per_a", "total_cost_error_pct", "co2_t_per_a",
                   "co2_error_pct", "capacity_deviation_pct", "capacity_error_max_pct", "solve_s"]
        st.dataframe(styled(table[columns], {
            "typical_days": "Typical days (0 = full year)", "model_steps": "Model hours",
            "total_cost_eur_per_a": "Total cost [€/a]", "total_cost_error_pct": "Cost error [%]",
            "co2_t_per_a": "CO2 [t/a]", "co2_error_pct": "CO2 error [%]",
            "capacity_deviation_pct": "Capacity placed differently [%]",
            "capacity_error_max_pct": "Largest capacity error [%]", "solve_s": "Solve time [s]"}),
            hide_index=True, width="stretch")
        with st.expander("Capacity per technology"):
            tech_names = technology_names(scenario.technologies)
            store_kind = {str(t): k == "heat_store" for t, k in zip(scenario.technologies["technology_id"],
                                                                    scenario.technologies["kind"])}
            capacity = [c for c in table.columns if c.startswith("capacity_") and c.endswith("_kw")]
            st.dataframe(styled(table[["typical_days"] + capacity], {
                "typical_days": "Typical days (0 = full year)",
                **{c: f"{tech_names.get(c[9:-3], c[9:-3])} [{'kWh' if store_kind.get(c[9:-3]) else 'kW'}]"
                   for c in capacity}}),
                hide_index=True, width="stretch")
