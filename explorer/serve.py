"""Start the Streamlit server once Rift's heavy modules are imported.

A session's first run would otherwise import pandas, geopandas, SciPy, Altair and Rift's
figures itself (seconds, on the planner's first page). Here they are imported, and the
demo's first page built once, before the server opens its port: the address is printed
once the first page can be drawn at once, instead of a page that then waits for imports.
``rift app`` runs ``python -m explorer.serve run APP ...`` with the arguments of
``streamlit run``.
"""

from __future__ import annotations

import logging
import sys

__all__ = ["main", "warm"]


def warm() -> None:
    """Import what every page needs; a failure here is left for the page to report.

    Besides the modules, the demo's first page is built once outside Streamlit: that
    imports what is only imported on first use (the boundary reader, SciPy's fitting
    routines) and compiles the regular expressions the figures use. Streamlit's emoji
    pattern, compiled on the first page's icon, is compiled here too.
    """
    # Rift's cached functions are declared before Streamlit's runtime exists; each
    # declaration would log that no runtime was found (it is, by the first page).
    from streamlit.runtime.caching import cache_data_api

    quiet = logging.getLogger(cache_data_api.__name__)
    level = quiet.level
    quiet.setLevel(logging.ERROR)
    try:
        import altair  # noqa: F401
        import geopandas  # noqa: F401
        import pandas  # noqa: F401
        import scipy.stats  # noqa: F401
        from streamlit import string_util

        from explorer import figures, ui  # noqa: F401
        from explorer.data import workspace  # noqa: F401 - the sidebar's first import
        from explorer.data.demo import demo_panel
        from explorer.present import charts  # noqa: F401
        from explorer.present.vocabulary import APP_ICON
        from explorer.views import ViewState

        string_util.is_emoji(APP_ICON)
        panel = demo_panel()
        view = figures.settle(ViewState(), panel)
        figures.atlas(panel, view, figures.PlainCompute(panel)).chart.to_dict()
        # Streamlit's first element of the process checks whether it runs in a REPL by
        # reading the source of every frame on the stack (a third of a second); it is not.
        from streamlit import delta_generator

        if hasattr(delta_generator, "_use_warning_has_been_displayed"):
            delta_generator._use_warning_has_been_displayed = True
    except Exception:  # noqa: BLE001 - the page itself says what went wrong
        logging.getLogger("rift").debug("warming up failed", exc_info=True)
    finally:
        quiet.setLevel(level)


def main() -> int:
    """Run ``streamlit`` with this process's arguments once the imports are warm."""
    warm()
    from streamlit.web import cli

    sys.argv = ["streamlit", *sys.argv[1:]]
    return cli.main()


if __name__ == "__main__":
    sys.exit(main())
