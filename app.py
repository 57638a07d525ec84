"""heatmosaic dashboard: plan, solve, save, compare and share heat-transition scenarios in the browser.

Start with ``streamlit run app.py``. This file sets up the navigation and draws the overview page; the other
pages live in ``pages/``. The session-state keys the pages share are documented in :mod:`pages._support`.
"""

from __future__ import annotations

from pathlib import Path

import streamlit as st

from engine.storage.store import ScenarioStore, StoreError
from engine import cautions
from pages._support.library import library_table

PLAN_PAGE = "pages/1_Plan_a_run.py"
RESULTS_PAGE = "pages/2_Run_results.py"
COMPARE_PAGE = "pages/3_Compare_runs.py"
SHARE_PAGE = "pages/4_Share.py"
GROUNDWATER_PAGE = "pages/5_Groundwater.py"
TRADEOFF_PAGE = "pages/6_Trade_offs_and_sweeps.py"
HEAT_PLAN_PAGE = "pages/7_Heat_plan.py"
# Titles and icons of the known pages; any other pages/*.py joins the navigation under its file name.
PAGE_TITLES = {
    PLAN_PAGE: ("Plan a run", ":material/tune:"),
    RESULTS_PAGE: ("Run results", ":material/map:"),
    COMPARE_PAGE: ("Compare runs", ":material/compare_arrows:"),
    SHARE_PAGE: ("Share", ":material/ios_share:"),
    GROUNDWATER_PAGE: ("Groundwater check", ":material/water_drop:"),
    TRADEOFF_PAGE: ("Trade-offs and sweeps", ":material/ssid_chart:"),
    HEAT_PLAN_PAGE: ("Heat plan", ":material/event_note:"),
}
HERE = Path(__file__).resolve().parent


def page_list() -> list[str]:
    """The page files in ``pages/``, in the order of their numbers, as paths relative to this file."""
    return sorted(p.relative_to(HERE).as_posix() for p in (HERE / "pages").glob("[0-9]*.py"))


def page_title(path: str) -> tuple[str, str]:
    if path in PAGE_TITLES:
        return PAGE_TITLES[path]
    stem = Path(path).stem.split("_", 1)[-1]
    return stem.replace("_", " "), ":material/article:"


def overview() -> None:
    st.title("heatmosaic")
    st.markdown(
        "**Which heat supply should each district of the city have in the target year?** heatmosaic finds the "
        "mix of heat-network connections, groundwater and air-source heat pumps and boilers with the lowest "
        "annual cost (or the lowest CO2) for every district, hour by hour, within the well permits and the "
        "network's reach. Keep each run in your library, compare runs side by side on maps, load curves and "
        "cost breakdowns, and share a summary with colleagues and the council."
    )
    st.warning(cautions.RESULTS, icon=":material/warning:")

    steps = st.columns(3)
    steps[0].page_link(PLAN_PAGE, label="1 · Plan a run", icon=":material/tune:",
                       help="Open the demo city or a bundle, choose a cost case and solve")
    steps[0].caption("Choose the inputs, the cost case and the objective; edit costs and permits; solve; save.")
    steps[1].page_link(RESULTS_PAGE, label="2 · Run results", icon=":material/map:")
    steps[1].caption("Map, load curves, costs per district and the well table of one run.")
    steps[2].page_link(COMPARE_PAGE, label="3 · Compare runs", icon=":material/compare_arrows:")
    steps[2].caption("Two to four saved runs against a baseline run.")
    steps = st.columns(3)
    steps[0].page_link(SHARE_PAGE, label="4 · Share", icon=":material/ios_share:")
    steps[0].caption("HTML summary, tables, bundles and the whole library.")
    steps[1].page_link(GROUNDWATER_PAGE, label="5 · Groundwater check", icon=":material/water_drop:")
    steps[1].caption("Each well doublet against its permit and the reinjection temperatures; neighbouring wells' "
                     "plumes.")
    steps[2].page_link(TRADEOFF_PAGE, label="6 · Trade-offs and sweeps", icon=":material/ssid_chart:")
    steps[2].caption("What each tonne of CO2 less costs; how prices change the plan; how close typical days come to "
                     "the full year.")
    steps = st.columns(3)
    steps[0].page_link(HEAT_PLAN_PAGE, label="7 · Heat plan", icon=":material/event_note:")
    steps[0].caption("The milestone years to the target year, and a proposed supply area with its likelihood for "
                     "every district.")

    st.subheader("Your library of saved runs")
    try:
        with ScenarioStore() as store:
            library = library_table(store)
            where = store.path
    except StoreError as error:
        st.error(f"The library could not be opened: {error}")
        return
    if library.empty:
        st.info("No saved runs yet. Start with the demo city: solve it and save the run.")
        st.page_link(PLAN_PAGE, label="Open the demo city", icon=":material/play_arrow:")
    else:
        st.dataframe(
            library.drop(columns=["run_id"]),
            hide_index=True,
            width="stretch",
            column_config={
                "total cost [M€/a]": st.column_config.NumberColumn(format="%.2f"),
                "CO2 [t/a]": st.column_config.NumberColumn(format="localized"),
            },
        )
        st.page_link(PLAN_PAGE, label="Plan another run", icon=":material/add:")
    st.caption(f"Library file: `{where}`.",
               help="Your administrator can point heatmosaic at another library file with the environment "
                    "variable HEATMOSAIC_STORE.")


def main() -> None:
    st.set_page_config(page_title="heatmosaic", page_icon="♨️", layout="wide")
    pages = [st.Page(overview, title="Overview", icon=":material/home:", default=True)]
    for path in page_list():
        title, icon = page_title(path)
        pages.append(st.Page(path, title=title, icon=icon))
    navigation = st.navigation(pages)
    st.session_state["hm_shell"] = True
    goto = st.session_state.pop("hm_goto", None)
    if goto:
        st.switch_page(goto)  # a page opened by its address before the navigation existed
    try:
        navigation.run()
    except Exception as error:  # st.stop, st.rerun and page switches are BaseExceptions and pass through
        report_page_error(error)


def report_page_error(error: Exception) -> None:
    """A sentence instead of a traceback when a page action fails; the page's widgets drawn so far stay usable."""
    what = str(error).strip() or type(error).__name__
    st.error(
        f"This step could not be completed ({type(error).__name__}: {what}). Nothing was saved by it; change a "
        "choice or open another page to go on. If it happens again, note what you did and tell your administrator.",
        icon=":material/error:",
    )


main()
