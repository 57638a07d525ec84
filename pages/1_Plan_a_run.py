"""Plan a run: inputs, cost case, objective, CO2 cap, time resolution, editable costs and permits; solve; save."""

from __future__ import annotations

import hashlib
import tempfile
import time
from pathlib import Path

import pandas as pd
import streamlit as st
from streamlit_folium import st_folium


from engine import cautions
from engine.outputs.labels import cost_case_label, kind_label, objective_label
from pages._support.inputs import (
    InputSet, cost_case_descriptions, demo_input_set, folder_zip_of, input_set_from_path, open_upload, problem_table,
    problems_csv, problems_for_display, warnings_frame,
)
from pages._support.edits import (
    check_edits, editable_technology_table, editable_well_table, edited_cells, edited_scenario, initial_setup,
)
from pages._support.city_edits import (
    DISTRICT_TABLE_COLUMNS, PRICE_SERIES, CityEdits, PriceEdits, add_well_row, changed_districts,
    city_edit_problems, district_demand_for_map, editable_district_table, empty_new_wells, price_table,
    read_price_upload, well_row_from_click,
)
from engine.outputs.density_map import proposed_doublets_layer, setup_map, setup_view
from engine.scenario.files import DISTRICTS_FILE
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
        if str(key).startswith(("setup_tech_", "setup_wells_", "setup_districts_", "setup_newwells_",
                                "setup_prices_")):
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
    setup["district_table"] = editable_district_table(inputs.scenario)
    setup["new_wells"] = empty_new_wells()
    setup["prices"] = PriceEdits()
    for name in ("technology_base", "well_base", "district_base", "new_wells_base", "prices_base"):
        setup.pop(name, None)
    state.pop("setup_click_note", None)
    state.pop("setup_price_problems", None)
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
        else:
            st.caption("Annual cost within about 1 % of the full year's on the demo; the heat of near-equal peak "
                       "units (electric or oil boiler) can differ by tens of percent. Confirm a chosen plan over "
                       "every hour with the Full-year check on the Run results page (about 20 s on the demo).")
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
districts_key = f"setup_districts_{token}"
new_wells_key = f"setup_newwells_{token}_{setup.get('new_wells_round', 0)}"
prices_key = f"setup_prices_{token}"
for name, maker in (("district_table", lambda: editable_district_table(scenario)), ("new_wells", empty_new_wells),
                    ("prices", PriceEdits)):
    if setup.get(name) is None:  # a set-up kept from before these editors existed
        setup[name] = maker()
# An editor's data must stay the same while it lives, or the browser drops its edits (and a click with them). It
# starts from the kept edits whenever it is new: first visit, back from another page, or after a reset.
for editor_key, base, kept in ((tech_key, "technology_base", "technology_table"), (wells_key, "well_base", "well_table"),
                               (districts_key, "district_base", "district_table"),
                               (new_wells_key, "new_wells_base", "new_wells")):
    if editor_key not in state or base not in setup:
        state.pop(editor_key, None)
        setup[base] = setup[kept]
district_file = DISTRICTS_FILE in inputs.files
with st.container(border=True):
    st.subheader("3 · Your city: costs, districts, wells and prices")
    st.caption("Change a cell to test another assumption; the saved run keeps the values it was solved with, and "
               "the files it is saved and downloaded with carry them.")
    tab_tech, tab_districts, tab_wells, tab_prices = st.tabs([
        "Technology costs", f"Districts ({len(scenario.districts)})",
        f"Wells ({len(scenario.wells)} + {len(setup['new_wells'])} new)", "Prices"])
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
    with tab_districts:
        if district_file:
            st.caption("Heat demand includes what buildings.csv adds to a district; the edit is written into "
                       "districts.geojson. A blank connection limit means no limit.")
            district_table = st.data_editor(
                setup["district_base"], key=districts_key, hide_index=True, num_rows="fixed", width="stretch",
                height=table_height(setup["district_base"]),
                disabled=["district_id", "name"], placeholder="no limit", column_order=list(DISTRICT_TABLE_COLUMNS[1:]),
                column_config={
                    "name": st.column_config.TextColumn("District", width=165),
                    "heat_demand_mwh_per_a": st.column_config.NumberColumn(
                        "Demand [MWh/a]", min_value=0.0, format="%.0f", width=135,
                        help="Annual heat demand, space heating and hot water, buildings included (heat_demand_mwh_per_a)."),
                    "hot_water_share": st.column_config.NumberColumn(
                        "HW share [-]", min_value=0.0, max_value=1.0, format="%.2f", width=120,
                        help="Share of the annual heat demand that is hot water, 0 to 1 (hot_water_share)."),
                    "supply_temp_c": st.column_config.NumberColumn(
                        "Heating [°C]", min_value=25.0, max_value=130.0, format="%.0f", width=115,
                        help="Space-heating supply (flow) temperature (supply_temp_c)."),
                    "hot_water_temp_c": st.column_config.NumberColumn(
                        "Hot water [°C]", min_value=30.0, max_value=95.0, format="%.0f", width=125,
                        help="Temperature hot water is made at (hot_water_temp_c)."),
                    "network_available": st.column_config.CheckboxColumn(
                        "Network", width=95, help="Whether a heat network reaches the district (network_available)."),
                    "network_connection_limit_kw": st.column_config.NumberColumn(
                        "Limit [kW]", min_value=0.0, format="%.0f", width=115,
                        help="Network connection limit: the largest heat the district may draw from the network; blank: no "
                             "limit, 0: none (network_connection_limit_kw)."),
                },
            )
        else:
            district_table = setup["district_table"]
            st.info("The districts of these inputs come from a GIS layer: edit them in your GIS and open the "
                    "folder again.")
    with tab_wells:
        st.caption(cautions.WELLS + " Changing a permit here is a what-if for screening.")
        if len(scenario.wells):
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
        st.markdown("**Proposed new doublets:** click the map below where an extraction well would stand; the "
                    "row appears here with the defaults that exist and blanks to fill in.")
        if state.get("setup_click_note"):
            st.caption(state["setup_click_note"])
        new_wells = st.data_editor(
            setup["new_wells_base"], key=new_wells_key, hide_index=True, num_rows="dynamic", width="stretch",
            placeholder="fill in",
            column_config={
                "well_id": st.column_config.TextColumn("New doublet", required=True),
                "district_id": st.column_config.SelectboxColumn(
                    "District", options=list(scenario.districts["district_id"].astype(str))),
                "lon": st.column_config.NumberColumn("Lon [°]", format="%.6f"),
                "lat": st.column_config.NumberColumn("Lat [°]", format="%.6f"),
                "permit_flow_m3_per_h": st.column_config.NumberColumn("Flow permit [m³/h]", min_value=0.0,
                                                                      format="%.1f"),
                "permit_annual_volume_m3": st.column_config.NumberColumn(
                    "Annual volume permit [m³/a]", min_value=0.0, format="%.0f", help="Blank means no annual limit."),
                "design_spread_k": st.column_config.NumberColumn("Design spread [K]", min_value=0.0, format="%.1f"),
                "groundwater_temp_c": st.column_config.NumberColumn("Groundwater [°C]", min_value=0.0,
                                                                    format="%.1f"),
                "groundwater_temp_amplitude_k": st.column_config.NumberColumn(
                    "Seasonal amplitude [K]", min_value=0.0, format="%.1f", help="0: a constant temperature."),
            },
        )
        if len(new_wells):
            st.caption("Select a row's left edge and press Delete to remove a proposed doublet; its reinjection "
                       "well goes down-gradient by the aquifer's reinjection offset.")
    with tab_prices:
        st.caption("Scale a price by a factor, or replace an hourly price by a file of your own. A cost case's "
                   "factors apply on top of these prices.")
        price_edits: PriceEdits = setup["prices"]
        if prices_key not in state or "prices_base" not in setup:  # a stable base while the editor lives
            state.pop(prices_key, None)
            setup["prices_base"] = price_table(scenario, price_edits)[
                ["series", "price", "kept in", "mean_eur_per_mwh", "factor"]]
        price_view = st.data_editor(
            setup["prices_base"], key=prices_key, hide_index=True, num_rows="fixed", width="stretch",
            disabled=["series", "price", "kept in", "mean_eur_per_mwh"], column_order=[
                "price", "kept in", "mean_eur_per_mwh", "factor"],
            column_config={
                "price": st.column_config.TextColumn("Price"),
                "kept in": st.column_config.TextColumn("Kept in", width=300),
                "mean_eur_per_mwh": st.column_config.NumberColumn("Mean in the files [€/MWh]", format="%.2f"),
                "factor": st.column_config.NumberColumn("Factor [-]", min_value=0.0, format="%.2f", step=0.05,
                                                        help="Multiplies the price; 1 keeps it."),
            },
        )
        price_edits.factors = dict(zip(price_view["series"], price_view["factor"]))
        if price_edits.changed():
            st.caption("After the edits: " + "; ".join(
                f"{row['price']} {row['new_mean_eur_per_mwh']:,.2f} €/MWh on average"
                + (f" (from {row['source']})" if row["series"] in price_edits.uploads else "")
                for row in price_table(scenario, price_edits).to_dict(orient="records")
                if row["factor"] != 1.0 or row["series"] in price_edits.uploads) + ".")
        hourly_series = {s.key: s for s in PRICE_SERIES if s.hourly}
        pick_col, file_col = st.columns([1, 2])
        with pick_col:
            series_key = st.selectbox("Hourly price to replace", list(hourly_series),
                                      format_func=lambda k: hourly_series[k].label, key="setup_price_series")
        with file_col:
            upload_key = f"setup_price_upload_{state.get('setup_price_round', 0)}"
            price_file = st.file_uploader(
                f"CSV with columns hour and {hourly_series[series_key].column}", type=["csv"], key=upload_key,
                help=f"One row per hour of the year ({len(scenario.hourly)} rows), as in hourly.csv.")
        if price_file is not None and state.get("setup_price_seen") != (price_file.file_id, series_key):
            state["setup_price_seen"] = (price_file.file_id, series_key)
            values, upload_problems = read_price_upload(price_file.getvalue(), price_file.name, series_key,
                                                        len(scenario.hourly))
            state["setup_price_problems"] = upload_problems
            if values is not None:
                price_edits.uploads[series_key] = (price_file.name, values)
            state["setup_price_round"] = state.get("setup_price_round", 0) + 1
            st.rerun()
        if state.get("setup_price_problems"):
            st.error("The uploaded prices cannot be used:")
            st.dataframe(problems_for_display(problems_frame(state["setup_price_problems"])), hide_index=True,
                         width="stretch", column_config={"message": st.column_config.TextColumn(width="large")})
        for key_up, (name_up, _values) in list(price_edits.uploads.items()):
            if st.button(f"Use hourly.csv again for {hourly_series[key_up].label.lower()} (not {name_up})",
                         key=f"setup_price_drop_{key_up}", icon=":material/undo:"):
                price_edits.uploads.pop(key_up)
                st.rerun()
    setup["technology_table"], setup["well_table"] = technology_table, well_table
    setup["district_table"], setup["new_wells"] = district_table, new_wells
    st.markdown("**Map:** districts by heat density (from the heat demand above), existing wells and proposed "
                "doublets. Click inside a district to propose a new well doublet there.")
    map_center, map_zoom = setup_view(scenario)
    # the proposed doublets go in as a layer streamlit-folium updates in place: redrawing the map on each click
    # would lose its zoom
    clicked_map = st_folium(setup_map(scenario, district_demand_for_map(scenario, district_table)), height=520,
                            use_container_width=True, returned_objects=["last_clicked"], key="setup_map",
                            feature_group_to_add=proposed_doublets_layer(new_wells),
                            center=map_center, zoom=map_zoom)
    click = (clicked_map or {}).get("last_clicked")
    if click and state.get("setup_last_click") != (click.get("lng"), click.get("lat")):
        state["setup_last_click"] = (click.get("lng"), click.get("lat"))
        row, sentence = well_row_from_click(scenario, float(click["lng"]), float(click["lat"]),
                                            new_wells["well_id"].astype(str))
        state["setup_click_note"] = sentence
        if row is not None:
            setup["new_wells"] = add_well_row(new_wells, row)
            setup.pop("new_wells_base", None)
            setup["new_wells_round"] = setup.get("new_wells_round", 0) + 1
        st.rerun()
    if state.get("setup_click_note"):
        st.caption(state["setup_click_note"] + " (Wells tab)")
    city = CityEdits.from_setup(setup)
    all_problems = check_edits(scenario, technology_table, well_table) + city_edit_problems(scenario, city,
                                                                                             inputs.files)
    edit_problems = [p for p in all_problems if p.is_error]
    edit_warnings = [p for p in all_problems if not p.is_error]
    changes = pd.concat([edited_cells(scenario, technology_table, well_table),
                         changed_districts(scenario, district_table)], ignore_index=True)
    if edit_problems:
        st.error("Some edited values cannot be used; fix them before solving.")
        st.dataframe(problems_for_display(problems_frame(edit_problems)), hide_index=True, width="stretch",
                     column_config={"message": st.column_config.TextColumn(width="large")})
    if edit_warnings:
        st.warning("\n".join(f"- {p.file}, row {p.row}, {p.column}: {p.message}" for p in edit_warnings))
    extra = [f"{len(new_wells)} proposed doublet(s)"] if len(new_wells) else []
    if price_edits.changed():
        extra.append("prices " + ", ".join(
            f"{row['price'].lower()} ×{row['factor']:g}" + (f" from {row['source']}"
                                                             if row["series"] in price_edits.uploads else "")
            for row in price_table(scenario, price_edits).to_dict(orient="records")
            if row["factor"] != 1.0 or row["series"] in price_edits.uploads))
    if not changes.empty or extra:
        with st.expander(f"{len(changes)} value(s) differ from the input files"
                         + (f"; {'; '.join(extra)}" if extra else "")):
            st.dataframe(changes, hide_index=True, width="stretch")
        st.button("Reset to the input files", on_click=reset_tables, icon=":material/undo:")

if download_slot is not None:  # section 1's download, filled once the edited tables of section 3 are known
    with download_slot.container():
        if edit_problems:
            st.caption("Download this scenario folder: fix the edited values first.")
        else:
            def folder_zip(tables=(technology_table, well_table), current=inputs, edits=city) -> bytes:
                return folder_zip_of(current, scenario_files_with_edits(current.files, *tables, current.scenario,
                                                                        edits))[0]

            st.download_button(
                "Download this scenario folder (.zip)", folder_zip,
                file_name=f"{folder_name(scenario.settings.name)}.zip", mime="application/zip",
                key="setup_download_folder", icon=":material/folder_zip:", on_click="ignore",
                help="The scenario files as now in use, with the edits made on this page; open the zip again here, "
                     "or edit its files and open it again.",
            )

# ------------------------------------------------------------------------------------------------ 4 solve
days = 0 if full_year else int(typical_days)
city_digest = hashlib.sha256(city.digest_text().encode()).hexdigest()[:16]
key = request_key(inputs.digest + city_digest, technology_table, well_table, cost_case, objective, co2_cap, days)
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
        edited, files, edit_problems = edited_scenario(inputs.files, scenario, technology_table, well_table, city)
        if edited is None:
            st.error("The edited files cannot be read back; nothing was solved.")
            st.dataframe(problems_for_display(problems_frame(edit_problems)), hide_index=True, width="stretch")
            st.stop()
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
