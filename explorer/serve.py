"""Start the Streamlit server with Rift's heavy modules imported while it comes up.

A session's first run would otherwise import pandas, geopandas, SciPy, Altair and Rift's
figures itself (seconds, on the planner's first page). Here a background thread imports
them as soon as the server process starts, so the first page only computes its figures.
``rift app`` runs ``python -m explorer.serve run APP ...`` with the arguments of
``streamlit run``.
"""

from __future__ import annotations

import sys
import threading

__all__ = ["main", "warm"]


def warm() -> None:
    """Import what every page needs; a failure here is left for the page to report."""
    try:
        import altair  # noqa: F401
        import geopandas  # noqa: F401
        import pandas  # noqa: F401
        import scipy.stats  # noqa: F401

        from explorer import figures, ui  # noqa: F401
        from explorer.present import charts  # noqa: F401
    except Exception:  # noqa: BLE001 - the page itself says what went wrong
        return


def main() -> int:
    """Run ``streamlit`` with this process's arguments, warming the imports meanwhile."""
    threading.Thread(target=warm, name="rift-warm-up", daemon=True).start()
    from streamlit.web import cli

    sys.argv = ["streamlit", *sys.argv[1:]]
    return cli.main()


if __name__ == "__main__":
    sys.exit(main())
