"""What every dashboard page does first: come in through app.py's navigation, and open the library.

Not a page itself (app.py lists only the numbered files in this folder).
"""

from __future__ import annotations

import streamlit as st
from streamlit.errors import StreamlitAPIException

from engine.store import ScenarioStore, StoreError


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
        return ScenarioStore()
    except StoreError as error:
        st.error(f"The library could not be opened: {error}")
        st.stop()
