"""What every dashboard page does first: come in through app.py's navigation, and open the library.

Not a page itself (app.py lists only the numbered files in this folder).
"""

from __future__ import annotations

import streamlit as st
from streamlit.errors import StreamlitAPIException

from engine.storage.store import ScenarioStore, StoreError
from pages._support.jobs import run_cancellable


def route_through_app(page_path: str) -> None:
    """Send a page opened by its address before app.py ever ran in this server through app.py first.

    Streamlit would otherwise run the file on its own, without the navigation; app.py sets it up and comes back
    to ``page_path`` (session key ``hm_goto``).
    """
    state = st.session_state
    if state.get("hm_shell"):
        return
    state["hm_goto"] = page_path
    try:
        st.switch_page("app.py")
    except StreamlitAPIException:
        pass  # run without app.py (a test of this page alone)


def open_store() -> ScenarioStore:
    """The scenario library, or a plain message and the end of the page when it cannot be opened."""
    try:
        store = ScenarioStore()
    except StoreError as error:
        st.error(f"The library could not be opened: {error}")
        st.stop()
    if store.damage is not None:  # every read and write would be refused: say so once, plainly
        st.error(f"The library cannot be used: {store.damage}")
        store.close()
        st.stop()
    return store


def run_with_cancel(job, key: str, start_text: str = "Starting"):
    """Run ``job(progress, cancel)`` with a progress bar and a Cancel button; returns the job's value.

    Pressing Cancel (or changing any widget) reruns the page, which stops the job at its next check; the next run
    of the page shows :func:`show_cancelled` for ``key``.
    """
    state = st.session_state
    bar = st.progress(0.0, text=start_text)
    slot = st.empty()
    slot.button("Cancel", key=f"{key}_cancel", icon=":material/stop_circle:",
                help="Stops the job; nothing is saved and earlier results stay as they were.")
    state[f"{key}_running"] = True
    interrupted = []

    def show(share: float, text: str) -> None:
        try:
            bar.progress(min(max(float(share), 0.0), 1.0), text=text)
        except BaseException:  # the page is being rerun (Cancel or another widget): the job is stopped
            interrupted.append(True)
            raise

    try:
        value = run_cancellable(job, show)
    except BaseException:
        if not interrupted:  # the job itself failed: no "stopped" notice, the page reports the error
            state.pop(f"{key}_running", None)
            slot.empty()
            bar.empty()
        raise
    state.pop(f"{key}_running", None)
    slot.empty()
    bar.empty()
    return value


def show_cancelled(key: str, what: str) -> None:
    """Say so when the job under ``key`` was stopped before it finished (by Cancel or by another widget)."""
    if st.session_state.pop(f"{key}_running", False):
        st.info(f"The {what} was stopped before it finished. Nothing was saved; earlier results are unchanged.",
                icon=":material/stop_circle:")
