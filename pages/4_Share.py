"""Share: an HTML summary, the result tables, a bundle per run, and the whole library as one file."""

from __future__ import annotations

import streamlit as st


from engine import cautions
from pages._support.cache import load_saved_run, scenario_for_files
from pages._support.describe import markdown_literal
from pages._support.library import (
    bundle_bytes, firmness_for_report, import_library_bytes, library_bytes, run_choices, safe_file_name,
    unique_run_names, zip_purpose,
)
from engine.outputs.export import tables_csv_zip, tables_xlsx
from engine.outputs.report import html_report
from engine.storage.store import ScenarioStore
from pages._support.shell import open_store, route_through_app

PLAN_PAGE = "pages/1_Plan_a_run.py"

state = st.session_state
route_through_app("pages/4_Share.py")
st.title("Share")
st.caption(cautions.RESULTS_LINE)
loaded = state.setdefault("hm_loaded", {})
scenarios = state.setdefault("hm_scenarios", {})
if state.get("hm_flash"):
    st.success(state.pop("hm_flash"))
if state.get("hm_flash_error"):
    st.error(state.pop("hm_flash_error"))

store = open_store()
choices = run_choices(store)

if not choices:
    st.info("No saved runs yet. Save a run on the Plan a run page to share it.")
    st.page_link(PLAN_PAGE, label="Plan a run", icon=":material/tune:")
else:
    kept = [r for r in state.get("share_runs", []) if r in choices]
    state["share_runs"] = kept or list(choices)[:1]
    picked = st.multiselect("Runs to share", list(choices), format_func=choices.get, key="share_runs")
    if picked:
        names = unique_run_names({r: store.run_info(r)["name"] for r in picked})
        results = {names[r]: load_saved_run(store, loaded, r) for r in picked}
        first_files = store.load_inputs(picked[0])
        scenario = scenario_for_files(scenarios, first_files)
        technologies = scenario.technologies if scenario is not None else None
        stem = safe_file_name(names[picked[0]] if len(picked) == 1 else "heatmosaic_runs", "")

        with st.container(border=True):
            st.subheader("Summary for colleagues and the council")
            st.caption("One HTML file with the key figures, maps, load curves and cost breakdowns of the chosen "
                       "runs, the cautions included. It opens in any browser, also offline.")
            title = st.text_input("Title", value="Heat plan scenarios"
                                  + (f" – {scenario.settings.name}" if scenario is not None else ""),
                                  key="share_title")
            plan = state.get("hm_heat_plan")
            if plan is not None and not st.checkbox("Include the heat plan computed in this session",
                                                    value=True, key="share_heat_plan"):
                plan = None
            firmness = firmness_for_report(state.get("hm_firmness", {}), picked, names, results)
            if firmness and not st.checkbox(
                    "Include the technology ranges computed on Run results in this session (How firm): "
                    + ", ".join(firmness), value=True, key="share_firmness"):
                firmness = {}
            if scenario is None:
                st.info("The scenario files of the first run are not available, so no report can be written.")
            else:
                st.download_button(
                    "Download the HTML summary",
                    data=lambda: html_report(results, scenario, technologies, title, heat_plan=plan,
                                             firmness=firmness),
                    file_name=f"{stem}.html", mime="text/html", icon=":material/description:",
                    key="share_html", on_click="ignore",
                )

        with st.container(border=True):
            st.subheader("Result tables")
            st.caption("Every table of the chosen runs (districts, supply, wells, hourly dispatch ...), "
                       "one column naming the run.")
            c1, c2 = st.columns(2)
            c1.download_button("Spreadsheet (.xlsx)", data=lambda: tables_xlsx(results), file_name=f"{stem}.xlsx",
                               mime="application/vnd.openxmlformats-officedocument.spreadsheetml.sheet",
                               icon=":material/table:", key="share_xlsx", on_click="ignore")
            c2.download_button("CSV files (.zip)", data=lambda: tables_csv_zip(results), file_name=f"{stem}_csv.zip",
                               mime="application/zip", icon=":material/folder_zip:", key="share_csv",
                               on_click="ignore")

        with st.container(border=True):
            st.subheader("Bundles")
            st.caption("A bundle holds one run's scenario files, settings and results. A colleague opens it on "
                       "the Plan a run page and can solve it again.")
            for run_id in picked:
                result = results[names[run_id]]

                def bundle(result=result, run_id=run_id) -> bytes:
                    with ScenarioStore(store.path) as own:
                        return bundle_bytes(result, own.load_inputs(run_id))

                st.download_button(f"Bundle of “{markdown_literal(names[run_id])}”", data=bundle,
                                   file_name=safe_file_name(names[run_id], "_bundle.zip"), mime="application/zip",
                                   icon=":material/inventory_2:", key=f"share_bundle_{run_id}", on_click="ignore")

with st.container(border=True):
    st.subheader("The whole library")
    st.caption(f"Library file: `{store.path}`. Export it to move your runs to another computer or keep a copy.")
    c1, c2 = st.columns(2, gap="large")
    with c1:
        if choices:
            def library() -> bytes:
                with ScenarioStore(store.path) as own:
                    return library_bytes(own)

            st.download_button(f"Export all {len(choices)} run(s)", data=library, file_name="heatmosaic_library.zip",
                               mime="application/zip", icon=":material/download:", key="share_library",
                               on_click="ignore")
    with c2:
        upload = st.file_uploader("Import a whole library (.zip) exported from heatmosaic, to add its runs",
                                  type=["zip"], key=f"share_import_file_{state.get('share_import_round', 0)}",
                                  help="A library export holds many runs (the button on the left). A bundle of "
                                       "one run is opened on the Plan a run page instead.")
        purpose = zip_purpose(upload.getvalue()) if upload is not None else None
        if purpose == "bundle":
            st.warning("This is a run bundle (one run), not a library: open it on the Plan a run page.")
            st.page_link(PLAN_PAGE, label="Plan a run", icon=":material/tune:")
        elif purpose == "not a zip":
            st.error(f"“{markdown_literal(upload.name)}” is not a zip file, so it cannot be a library export.")
        elif upload is not None and st.button("Add its runs to the library", key="share_import",
                                              icon=":material/upload:"):
            added, error = import_library_bytes(store, upload.getvalue())
            if error:
                state["share_import_round"] = state.get("share_import_round", 0) + 1  # clear the refused file
                state["hm_flash_error"] = f"The library was not imported: {error}"
                st.rerun()
            else:
                state["hm_flash"] = f"Added {len(added)} run(s) to the library."
                st.rerun()
