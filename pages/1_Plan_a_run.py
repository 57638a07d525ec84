"""Plan a run: inputs, cost case, objective, CO2 cap, time resolution, editable costs and permits; solve; save."""

from __future__ import annotations

import tempfile
import time
from pathlib import Path

import streamlit as st


from engine import cautions
from engine.outputs.labels import cost_case_label, kind_label, objective_label
from pages._support.inputs import (
    InputSet, cost_case_descriptions, demo_input_set, folder_zip_of, input_set_from_path, open_upload, problem_table,
    problems_csv, problems_for_display, warnings_frame,
)
from pages._support.edits import (
    apply_edits, check_edits, editable_technology_table, editable_well_table, edited_cells, initial_setup,
    scenario_files_with_edits,
)
from pages._support.cache import SolvedRun, request_key, solve_with_cache
from pages._support.describe import demand_note, markdown_literal, run_kpis, suggested_run_name
from pages._support.tables import district_results_table, table_height
from engine.model.solvers import DIRECT, solver_choices
from engine.scenario.problems import problems_frame
from engine.storage.scenario_zip import folder_name
from engine.storage.store import ScenarioStore, StoreError
from pages._support.shell import route_through_app, run_with_cancel, show_cancelled

RESULTS_PAGE = "pages/2_Run_results.py"
OBJECTIVES = {"cost": "Lowest annual cost", "co2": "Lowest CO2 emissions"}
WIDGETS = {  # widget key -> hm_setup entry it starts from
    "setup_cost_case": "cost_case",
    "setup_objective": "objective",
    "setup_co2_cap": "co2_cap_t_per_a",
    "setup_full_year": "full_year",
    "setup_typical_days": "typical_days",
}

state = st.session_state
route_through_app("pages/1_Plan_a_run.py")


def forget_editors() -> None:
    for key in list(state.keys()):
        if str(key).startswith(("setup_tech_", "setup_wells_")):
            del state[key]


st.title("Plan a run")
st.caption(cautions.RESULTS_LINE)

if "hm_input" not in state:
    state["hm_input"] = demo_input_set()
solved = state.setdefault("hm_solved", {})
inputs: InputSet = state["hm_input"]

setup = state.get("hm_setup")
if setup is None or setup.get("digest") != inputs.digest or setup.get("fresh"):
    if setup is None or setup.get("digest") != inputs.digest:
        setup = initial_setup(inputs)
    forget_editors()  # new starting tables: editors left from an earlier visit must not keep their old state
    setup.pop("fresh", None)
    state["hm_setup"] = setup
    for widget, name in WIDGETS.items():
        state[widget] = setup[name]
else:
    for widget, name in WIDGETS.items():
        if widget not in state:
            state[widget] = setup[name]


def use_demo() -> None:
    state["hm_input"] = demo_input_set()
    state.pop("hm_refused", None)


def take(opened: InputSet) -> None:
    """Use a set that validated; a refused one is only shown, the inputs in use stay as they were."""
    if opened.ok:
        state["hm_input"] = opened
        state.pop("hm_refused", None)
        settings = opened.manifest.get("settings") if opened.manifest else None
        cost_case = opened.manifest.get("cost_case") if opened.manifest else None
        state["hm_setup"] = {**initial_setup(opened, settings, cost_case), "fresh": True}
    else:
        state["hm_refused"] = opened


def open_folder() -> None:
    take(input_set_from_path(state.get("setup_folder", "")))


def show_problems(problems, key: str) -> None:
    st.dataframe(problem_table(problems), hide_index=True, width="stretch",
                 column_config={"what is wrong": st.column_config.TextColumn(width="large"),
                                "how to fix it": st.column_config.TextColumn(width="medium")})
    st.download_button("Download problems (CSV)", problems_csv(problems), file_name="scenario_problems.csv",
                       mime="text/csv", key=key, icon=":material/download:", on_click="ignore")


def reset_tables() -> None:
    if inputs.scenario is None:
        return
    setup["technology_table"] = editable_technology_table(inputs.scenario)
    setup["well_table"] = editable_well_table(inputs.scenario)
    forget_editors()


# ------------------------------------------------------------------------------------------------ 1 inputs
download_slot = None
with st.container(border=True):
    st.subheader("1 · Inputs")
    left, right = st.columns([3, 2], gap="large")
    with left:
        scenario = inputs.scenario
        if scenario is not None:
            st.markdown(f"**{markdown_literal(inputs.label)}:** {markdown_literal(scenario.settings.name)}, target year {scenario.settings.target_year}")
            st.caption(
                f"{len(scenario.districts)} districts · {len(scenario.technologies)} technologies · "
                f"{len(scenario.wells)} well doublets · {len(scenario.cost_cases)} cost cases · "
                f"{scenario.districts['heat_demand_mwh_per_a'].sum():,.0f} MWh/a heat demand"
            )
        else:
            st.markdown(f"**{markdown_literal(inputs.label)}** cannot be used:")
        if inputs.manifest:
            st.caption(
                f"Bundle written by heatmosaic {inputs.manifest.get('heatmosaic_version', '?')} on "
                f"{str(inputs.manifest.get('created_utc', '?'))[:10]}; run inside: cost case "
                f"{cost_case_label(inputs.manifest.get('cost_case', '?'))}, objective "
                f"{objective_label(inputs.manifest.get('objective', '?'))}."
            )
        download_slot = st.empty()
        warnings = warnings_frame(inputs)
        if scenario is not None and not warnings.empty:
            with st.expander(f"{len(warnings)} warning(s) about these files (they do not stop a run)"):
                show_problems(warnings, "setup_warnings_csv")
    with right:
        if inputs.label != "Demo city":
            st.button("Use the demo city instead", on_click=use_demo, icon=":material/location_city:")
        upload = st.file_uploader(
            "Open a scenario folder (.zip) or a run bundle", type=["zip"], key="setup_upload",
            help="A zip of your own scenario folder (the files of docs/input_format.md, at the top of the zip or in "
                 "one folder inside it), or a run bundle downloaded on the Share page. A whole library (.zip) is "
                 "imported on the Share page instead.",
        )
        if upload is not None and state.get("setup_upload_seen") != upload.file_id:
            state["setup_upload_seen"] = upload.file_id
            workdir = Path(tempfile.gettempdir()) / "heatmosaic-uploads"
            take(open_upload(upload.getvalue(), upload.name, workdir))
            st.rerun()
        with st.form("setup_folder_form", border=False):
            st.text_input("Or type the path of a scenario folder on this computer", key="setup_folder",
                          placeholder="/home/me/cities/my_city",
                          help="The folder that holds scenario.toml; it is read when you press Open folder.")
            st.form_submit_button("Open folder", on_click=open_folder, icon=":material/folder_open:")
    refused: InputSet | None = state.get("hm_refused")
    if refused is not None:
        kept = "the demo city" if inputs.label == "Demo city" else markdown_literal(inputs.label)
        st.error(f"**{markdown_literal(refused.label)}** was not opened: {len(refused.problems)} problem(s), all "
                 f"listed below. {refused.advice} Nothing is solved until the files validate; the page keeps "
                 f"working on {kept}.")
        show_problems(refused.problems, "setup_problems_csv")
        st.button("Dismiss", key="setup_dismiss", on_click=lambda: state.pop("hm_refused", None))
    if not inputs.problems.empty:
        st.error(f"{len(inputs.problems)} problem(s) in these inputs. {inputs.advice}")
        show_problems(inputs.problems, "setup_input_problems_csv")
if inputs.scenario is None:
    st.stop()
scenario = inputs.scenario

# ------------------------------------------------------------------------------------------------ 2 choices
with st.container(border=True):
    st.subheader("2 · Run choices")
    descriptions = cost_case_descriptions(scenario)
    c1, c2, c3 = st.columns([2, 1.3, 1.5], gap="large")
    with c1:
        cost_case = st.selectbox("Cost case", list(descriptions), key="setup_cost_case", format_func=cost_case_label)
        st.caption(markdown_literal(descriptions.get(cost_case, "")))
    with c2:
        objective = st.radio("Objective", list(OBJECTIVES), format_func=OBJECTIVES.get, key="setup_objective")
        co2_cap = st.number_input(
            "City-wide CO2 cap [t/a]", min_value=0.0, step=1000.0, format="%.0f", key="setup_co2_cap",
            help="0 means no cap. A cap ties the districts into one linear program, which takes longer to solve.",
        )
    with c3:
        full_year = st.toggle("Full year (8760 hours)", key="setup_full_year",
                              help="Off: the year is represented by typical days (much faster, close results).")
        typical_days = st.number_input("Typical days", min_value=1, max_value=366, step=1,
                                       key="setup_typical_days", disabled=full_year,
                                       help="Days chosen to stand for the whole year; more days, closer results.")
        if full_year:
            st.caption("The full year solves every hour: minutes instead of seconds for a city the size of the demo.")
    with st.expander("Advanced"):
        solvers = solver_choices()
        if state.get("setup_solver") not in solvers:  # kept in hm_setup across pages, like the other choices
            state["setup_solver"] = setup.get("solver") if setup.get("solver") in solvers else DIRECT
        solver = st.selectbox("Solver", list(solvers), format_func=solvers.get, key="setup_solver",
                              help="HiGHS direct is the fast path. Solvers through pulp (CBC always, others where "
                                   "installed and licensed) build the model one row at a time: for cross-checks "
                                   "and small runs; a pulp solve cannot be cancelled half way.")
        setup["solver"] = solver
for widget, name in WIDGETS.items():
    setup[name] = state[widget]

# ------------------------------------------------------------------------------------------------ 3 costs and permits
token = inputs.digest[:12]
tech_key, wells_key = f"setup_tech_{token}", f"setup_wells_{token}"
# An editor's data must stay the same while it lives, or the browser drops its edits (and a click with them). It
# starts from the kept edits whenever it is new: first visit, back from another page, or after a reset.
if tech_key not in state or "technology_base" not in setup:
    state.pop(tech_key, None)
    setup["technology_base"] = setup["technology_table"]
if wells_key not in state or "well_base" not in setup:
    state.pop(wells_key, None)
    setup["well_base"] = setup["well_table"]
with st.container(border=True):
    st.subheader("3 · Technology costs and well permits")
    st.caption("Change a cell to test another assumption; the saved run keeps the values it was solved with.")
    tab_tech, tab_wells = st.tabs(["Technology costs", f"Well permits ({len(scenario.wells)})"])
    with tab_tech:
        technology_table = st.data_editor(
            setup["technology_base"].assign(kind=[kind_label(k) for k in setup["technology_base"]["kind"]]),
            key=tech_key, hide_index=True, num_rows="fixed", placeholder="–",
            width="stretch", disabled=["technology_id", "name", "kind"],
            column_order=[c for c in setup["technology_table"].columns if c != "technology_id"],
            column_config={
                "technology_id": st.column_config.TextColumn("Id", width="small"),
                "name": st.column_config.TextColumn("Technology", width=175),
                "kind": st.column_config.TextColumn("Kind", width=160),
                "investment_eur_per_kw": st.column_config.NumberColumn(
                    "Investment [€/kW or €/kWh]", min_value=0.0, format="%.0f", width=215,
                    help="Specific investment per kW of capacity; heat stores per kWh of storage."),
                "fixed_om_pct_per_a": st.column_config.NumberColumn(
                    "Fixed O&M [%/a]", min_value=0.0, max_value=100.0, format="%.2f", width=140,
                    help="Fixed operation and maintenance, % of the investment per year."),
                "variable_om_eur_per_mwh": st.column_config.NumberColumn(
                    "Var. O&M [€/MWh]", min_value=0.0, format="%.2f", width=150),
                "lifetime_a": st.column_config.NumberColumn("Lifetime [a]", min_value=1, max_value=100, format="%d",
                                                           width=105),
                "efficiency_or_grade": st.column_config.NumberColumn(
                    "Eff. or COP grade [-]", min_value=0.0, format="%.2f", width=170,
                    help="[-] Boilers: thermal efficiency; chillers and groundwater cooling: EER; heat pumps: share of "
                         "the Carnot COP reached. Blank for network connections and stores."),
            },
        )
    with tab_wells:
        if len(scenario.wells):
            st.caption("Permits are set by the water authority; changing them here is a what-if for screening.")
            well_table = st.data_editor(
                setup["well_base"], key=wells_key, hide_index=True, num_rows="fixed", placeholder="no limit",
                width="stretch", disabled=["well_id", "district_id"],
                column_config={
                    "well_id": st.column_config.TextColumn("Well doublet"),
                    "district_id": st.column_config.TextColumn("District"),
                    "permit_flow_m3_per_h": st.column_config.NumberColumn(
                        "Flow permit [m³/h]", min_value=0.0, format="%.1f"),
                    "permit_annual_volume_m3": st.column_config.NumberColumn(
                        "Annual volume permit [m³/a]", min_value=0.0, format="%.0f",
                        help="Blank means no annual limit."),
                    "design_spread_k": st.column_config.NumberColumn(
                        "Design spread [K]", min_value=0.0, format="%.1f",
                        help="Temperature difference between extraction and reinjection."),
                    "groundwater_temp_c": st.column_config.NumberColumn(
                        "Groundwater [°C]", min_value=0.0, format="%.1f",
                        help="Mean groundwater temperature at the extraction well."),
                },
            )
        else:
            well_table = setup["well_table"]
            st.info("These inputs have no well doublets.")
    setup["technology_table"], setup["well_table"] = technology_table, well_table
    edit_problems = check_edits(scenario, technology_table, well_table)
    changes = edited_cells(scenario, technology_table, well_table)
    if edit_problems:
        st.error("Some edited values cannot be used; fix them before solving.")
        st.dataframe(problems_for_display(problems_frame(edit_problems)), hide_index=True, width="stretch",
                     column_config={"message": st.column_config.TextColumn(width="large")})
    if not changes.empty:
        with st.expander(f"{len(changes)} value(s) differ from the input files"):
            st.dataframe(changes, hide_index=True, width="stretch")
        st.button("Reset to the input files", on_click=reset_tables, icon=":material/undo:")

if download_slot is not None:  # section 1's download, filled once the edited tables of section 3 are known
    with download_slot.container():
        if edit_problems:
            st.caption("Download this scenario folder: fix the edited values first.")
        else:
            def folder_zip(tables=(technology_table, well_table), current=inputs) -> bytes:
                return folder_zip_of(current, scenario_files_with_edits(current.files, *tables, current.scenario))[0]

            st.download_button(
                "Download this scenario folder (.zip)", folder_zip,
                file_name=f"{folder_name(scenario.settings.name)}.zip", mime="application/zip",
                key="setup_download_folder", icon=":material/folder_zip:", on_click="ignore",
                help="The scenario files as now in use, with the edits made on this page; open the zip again here, "
                     "or edit its files and open it again.",
            )

# ------------------------------------------------------------------------------------------------ 4 solve
days = 0 if full_year else int(typical_days)
key = request_key(inputs.digest, technology_table, well_table, cost_case, objective, co2_cap, days)
key = key if solver == DIRECT else f"{key}-{solver}"  # another solver's answer is another run to show
with st.container(border=True):
    st.subheader("4 · Solve")
    clicked = st.button("Solve", type="primary", icon=":material/play_arrow:", disabled=bool(edit_problems),
                        key="setup_solve")
    earlier = key in solved and not clicked and state.get("setup_just_solved") != key
    run: SolvedRun | None = solved.get(key)
    show_cancelled("setup_job", "solve")
    if clicked:
        started = time.perf_counter()
        edited, edit_problems = apply_edits(scenario, technology_table, well_table)
        if edited is None:
            st.error("The edits cannot be used.")
            st.stop()
        files = scenario_files_with_edits(inputs.files, technology_table, well_table, scenario)
        run, from_cache = run_with_cancel(
            lambda progress, cancel: solve_with_cache(
                solved, key, edited, files, inputs.label, cost_case, objective, co2_cap, days,
                progress=progress, cancel=cancel, solver=solver, library=ScenarioStore,
            ),
            key="setup_job",
        )
        st.caption(("Found in this session's runs" if from_cache else "Solved")
                   + f" in {time.perf_counter() - started:.1f} s")
        if run.result.solved:
            state["hm_current"] = key
            state["setup_just_solved"] = key
    elif earlier:
        state["hm_current"] = key
        st.caption("Solved earlier in this session with these very choices: shown straight away.")
    if run is None:
        st.info("Press Solve to compute this run (the demo city takes "
                + ("several minutes for the full year; Cancel stops it)." if full_year else "a few seconds)."))
    else:
        result = run.result
        if not result.solved:
            st.error(f"The run did not solve: {result.message}")
        else:
            kpis = run_kpis(result)
            m = st.columns(4)
            m[0].metric("Total cost [M€/a]", f"{kpis['total_cost_eur_per_a'] / 1e6:,.2f}")
            m[1].metric("CO2 [t/a]", f"{kpis['co2_t_per_a']:,.0f}")
            m[2].metric("Levelised cost [€/MWh]", f"{kpis['levelised_cost_eur_per_mwh']:,.1f}")
            m[3].metric("Unserved heat [MWh/a]", f"{kpis['unserved_heat_mwh_per_a']:,.0f}")
            if kpis["unserved_heat_mwh_per_a"] > 0.5:
                st.warning(result.message)
            else:
                st.success(result.message)
            if demand_note(scenario, result):
                st.caption(demand_note(scenario, result))
            districts = district_results_table(result, scenario.technologies)[
                ["district", "main supply", "heat demand [MWh/a]", "total cost [€/a]", "levelised cost [€/MWh]",
                 "CO2 [t/a]"]
            ]
            st.dataframe(districts, hide_index=True, width="stretch", height=table_height(districts),
                         column_config={c: st.column_config.NumberColumn(format="localized")
                                        for c in districts.columns[2:]})
            st.page_link(RESULTS_PAGE, label="See the map, load curves and costs of this run", icon=":material/map:")

# ------------------------------------------------------------------------------------------------ 5 save
if run is not None and run.result.solved:
    with st.container(border=True):
        st.subheader("5 · Save to the library")
        if run.saved_run_id is not None:
            st.caption(f"This run is saved in the library as run #{run.saved_run_id}; saving again adds a copy.")
        with st.form(f"setup_save_{key[:12]}", border=False):
            name = st.text_input("Name", value=suggested_run_name(run.result), max_chars=120)
            note = st.text_area("Note", placeholder="What this run tests, where the numbers come from ...")
            if st.form_submit_button("Save run", icon=":material/save:"):
                try:
                    with ScenarioStore() as store:
                        run.saved_run_id = store.save_run(run.result, name, note, inputs=run.files)
                    st.success(f"Saved as “{markdown_literal(name.strip())}” (run #{run.saved_run_id}).")
                except StoreError as error:
                    st.error(f"The run could not be saved: {error}")
