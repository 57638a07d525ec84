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
# Titles and icons of the known pages; any other pages/*.py joins the navigation under its file name.
PAGE_TITLES = {
    PLAN_PAGE: ("Plan a run", ":material/tune:"),
    RESULTS_PAGE: ("Run results", ":material/map:"),
    COMPARE_PAGE: ("Compare runs", ":material/compare_arrows:"),
    SHARE_PAGE: ("Share", ":material/ios_share:"),
    "pages/5_Groundwater.py": ("Groundwater check", ":material/water_drop:"),
    "pages/6_Trade_offs_and_sweeps.py": ("Trade-offs and sweeps", ":material/ssid_chart:"),
    "pages/7_Heat_plan.py": ("Heat plan", ":material/event_note:"),
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

    steps = st.columns(4)
    steps[0].page_link(PLAN_PAGE, label="Plan a run", icon=":material/tune:",
                       help="Open the demo city or a bundle, choose a cost case and solve")
    steps[0].caption("Choose the inputs, the cost case and the objective; edit costs and permits; solve; save.")
    steps[1].page_link(RESULTS_PAGE, label="Run results", icon=":material/map:")
    steps[1].caption("Map, load curves, costs per district and the well table of one run.")
    steps[2].page_link(COMPARE_PAGE, label="Compare runs", icon=":material/compare_arrows:")
    steps[2].caption("Two to four saved runs against a baseline run.")
    steps[3].page_link(SHARE_PAGE, label="Share", icon=":material/ios_share:")
    steps[3].caption("HTML summary, tables, bundles and the whole library.")

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
    st.caption(f"Library file: `{where}` (set the environment variable HEATMOSAIC_STORE to use another file).")


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
    navigation.run()


main()
