"""The Streamlit entrypoint: page set-up, navigation over pages/, the shared sidebar.

Run with ``rift app``, which passes the Streamlit settings Rift needs (explorer.serving). The data folder for saved
datasets comes from the ``RIFT_DATA`` environment variable; without one the demo province
and the user's default data folder are used.
"""

from __future__ import annotations

import streamlit as st

from explorer import ui
from explorer.data.model import DataError
from explorer.present.vocabulary import APP_ICON, PAGES
from explorer.ui import show, state

__all__ = ["main"]


def main() -> None:
    """Draw the sidebar and run the chosen page, never showing a traceback."""
    # First, before the navigation: a page's material icon would otherwise become the
    # favicon, which the browser fetches from outside (see vocabulary.APP_ICON).
    st.set_page_config(page_title="Rift", page_icon=APP_ICON, layout="wide")
    pages = {
        name: st.Page(state.page_path(name), title=page.title, icon=page.icon, url_path=name)
        for name, page in PAGES.items()
    }
    current = st.navigation(list(pages.values()))
    page_name = next(name for name, page in PAGES.items() if page.title == current.title)
    try:
        catalog = ui.catalog()
        state.start(catalog)
        # Intake is where views are saved and reports made: the view keeps the last
        # analysis page, so a view file saved there reopens what was being looked at.
        if page_name != "intake":
            state.update(page=page_name)
        state.sidebar(catalog, state.panel())
    except DataError as error:
        ui.problems(error, heading="The dataset could not be opened")
        st.stop()
    except Exception as error:  # the app must still come up, with a plain message
        show.LOG.exception("while opening the view")  # the details go to the server's log
        st.error(f"Rift could not open this view ({type(error).__name__}).")
        st.stop()
    ui.show_notices()
    # Callbacks have already updated the view before this run: publish it now, so a page
    # that stops early still leaves the address bar pointing at what is on screen.
    ui.publish()
    with ui.guard(PAGES[page_name].title):
        current.run()


main()
